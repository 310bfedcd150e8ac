//! Reports of a [`Comparison`]: readable table, JSON, JUnit XML and a CSV of
//! both trajectories. Every report but the CSV carries [`CAUTION`].

use std::fmt::Write;

use serde_json::{Value, json as j};

use super::{Comparison, LimitCycle, SixteenBit, Stall};
use crate::report::{CAUTION, Failure, JunitXml, format_number};

fn n(x: f64) -> String {
    format_number(Some(x))
}

/// ` UNIT`, or nothing for the dimensionless unit `1`.
fn unit(u: &str) -> String {
    if u == "1" {
        String::new()
    } else {
        format!(" {u}")
    }
}

fn cycle_text(c: Option<&LimitCycle>, unit: &str) -> String {
    c.map_or_else(
        || "no limit cycle".to_owned(),
        |c| {
            format!(
                "limit cycle, period {} samples ({} s), amplitude {}{unit}",
                c.period_samples,
                n(c.period_s),
                n(c.amplitude)
            )
        },
    )
}

/// The readable report of one comparison.
#[must_use]
pub fn table(c: &Comparison) -> String {
    let s = &c.scenario;
    let (yu, uu) = (unit(&s.output_unit), unit(&s.command_unit));
    let mut o = String::new();
    let _ = writeln!(
        o,
        "compare {} ({}): fixed Q16.16 against f64, {} samples of {} s",
        s.name,
        s.source,
        c.fixed.time_s.len(),
        n(c.fixed.dt_s)
    );
    let _ = writeln!(
        o,
        "  {:<22} {:>12} {:>10} {:>12}",
        "difference fixed − f64", "largest", "at (s)", "RMS"
    );
    for (what, d) in [
        (format!("command ({})", s.command_unit), &c.command),
        (format!("output ({})", s.output_unit), &c.output),
    ] {
        let _ = writeln!(
            o,
            "  {what:<22} {:>12} {:>10} {:>12}",
            n(d.max_abs),
            n(d.time_of_max_s),
            n(d.rms)
        );
    }
    match c.divergence {
        Some(d) => {
            let _ = writeln!(
                o,
                "  first branch difference at {} s: fixed `{}`, f64 `{}`",
                n(c.fixed.time_s.get(d.index).copied().unwrap_or(0.0)),
                d.fixed,
                d.float
            );
        }
        None => {
            let _ = writeln!(
                o,
                "  the controllers took the same branches at every sample"
            );
        }
    }
    let t = |k: usize| c.fixed.time_s.get(k).copied().unwrap_or(0.0);
    let _ = writeln!(
        o,
        "  steady state, {}–{} s:",
        n(t(c.window.start)),
        n(t(c.window.end.saturating_sub(1)))
    );
    for (name, cycle, ripple) in [
        ("fixed", c.fixed_cycle.as_ref(), c.fixed_ripple),
        ("f64", c.float_cycle.as_ref(), c.float_ripple),
    ] {
        let _ = writeln!(
            o,
            "    {name:<5} {}; ripple ±{}{uu} (command), ±{}{yu} (output)",
            cycle_text(cycle, &uu),
            n(ripple.command),
            n(ripple.output)
        );
    }
    let _ = writeln!(
        o,
        "    expected quantization limit-cycle amplitude ≤ G = {}{uu} (one sample's rounding, FORMATS.md §4)",
        n(c.bounds.per_sample)
    );
    stall_line(&mut o, "  ", c.stall.as_ref(), &yu);
    sixteen_section(&mut o, c, &yu, &uu);
    let _ = writeln!(
        o,
        "  {:<16} {:<16} {:>12} {:>12} {:>22} {:>10}",
        "coefficient", "", "exact", "stored", "as", "rel. error"
    );
    for r in &c.coefficients {
        let _ = writeln!(
            o,
            "  {:<16} {:<16} {:>12} {:>12} {:>22} {:>10}",
            r.name,
            r.meaning,
            n(r.exact),
            n(r.stored),
            r.representation,
            n(r.rel_error)
        );
    }
    let _ = writeln!(
        o,
        "  {:<26} {:>12} {:>12}  {:<8} verdict",
        "check", "measured", "limit", "limit is"
    );
    for ch in &c.checks {
        let _ = writeln!(
            o,
            "  {:<26} {:>12} {:>12}  {:<8} {}",
            ch.name,
            n(ch.measured),
            n(ch.tolerance.limit),
            if ch.tolerance.declared {
                "declared"
            } else {
                "derived"
            },
            if ch.pass { "pass" } else { "FAIL" }
        );
        if let Some(note) = &ch.note {
            let _ = writeln!(o, "      {note}");
        }
    }
    let failed = c.checks.iter().filter(|ch| !ch.pass).count();
    let _ = writeln!(
        o,
        "  {}  ({} of {} checks met)",
        if failed == 0 { "PASS" } else { "FAIL" },
        c.checks.len() - failed,
        c.checks.len()
    );
    let _ = writeln!(
        o,
        "  derived limits: see docs/SCENARIO.md `[compare]`; G = {} per sample from the Q16.16 formats",
        n(c.bounds.per_sample)
    );
    let _ = writeln!(o, "  {CAUTION}");
    o
}

fn stall_line(o: &mut String, indent: &str, stall: Option<&Stall>, yu: &str) {
    match stall {
        Some(st) => {
            let _ = writeln!(
                o,
                "{indent}integrator stall: Ki·Ts = {}; smallest error that moves it: bound {}{yu}, measured {} (+) / {} (−){}",
                n(st.ki_ts),
                n(st.bound),
                n(st.measured_positive),
                n(st.measured_negative),
                st.samples_per_lsb.map_or_else(String::new, |k| format!(
                    "; at one LSB of error the command moves one LSB every {} samples",
                    n(k)
                ))
            );
        }
        None => {
            let _ = writeln!(o, "{indent}integrator stall: no integral action");
        }
    }
}

/// The 16-bit backend beside Q16.16 (shown, not judged).
fn sixteen_section(o: &mut String, c: &Comparison, yu: &str, uu: &str) {
    let x: &SixteenBit = match &c.sixteen {
        Ok(x) => x,
        Err(e) => {
            let _ = writeln!(
                o,
                "  16-bit (slim16, shown, not judged): refused by the backend: {e}"
            );
            return;
        }
    };
    let _ = writeln!(
        o,
        "  16-bit (slim16, shown, not judged): measurement LSB {}{yu} ({} raw per unit), command LSB {}{uu} ({} raw per unit)",
        n(x.measurement_lsb),
        n(x.scaling.measurement.per_unit),
        n(x.command_lsb),
        n(x.scaling.command.per_unit)
    );
    let s = &c.scenario;
    let _ = writeln!(
        o,
        "    {:<20} {:>12} {:>10} {:>12}",
        "difference 16-bit − f64", "largest", "at (s)", "RMS"
    );
    for (what, d) in [
        (format!("command ({})", s.command_unit), &x.command),
        (format!("output ({})", s.output_unit), &x.output),
    ] {
        let _ = writeln!(
            o,
            "    {what:<22} {:>12} {:>10} {:>12}",
            n(d.max_abs),
            n(d.time_of_max_s),
            n(d.rms)
        );
    }
    match x.divergence {
        Some(d) => {
            let _ = writeln!(
                o,
                "    first branch difference at {} s: 16-bit `{}`, f64 `{}`",
                n(x.recording.time_s.get(d.index).copied().unwrap_or(0.0)),
                d.fixed,
                d.float
            );
        }
        None => {
            let _ = writeln!(o, "    the same branches as f64 at every sample");
        }
    }
    let _ = writeln!(
        o,
        "    steady state: {}; ripple ±{}{uu} (command), ±{}{yu} (output); expected quantization limit-cycle amplitude ≤ G = {}{uu} = {} LSB (FORMATS.md §8)",
        cycle_text(x.cycle.as_ref(), uu),
        n(x.ripple.command),
        n(x.ripple.output),
        n(x.bounds.per_sample),
        n(x.bounds.per_sample / x.command_lsb)
    );
    stall_line(o, "    ", x.stall.as_ref(), yu);
}

fn stall_json(s: Option<&Stall>) -> Value {
    s.map_or(Value::Null, |s| {
        j!({
            "ki_ts": s.ki_ts,
            "bound": s.bound,
            "measured_positive": number(s.measured_positive),
            "measured_negative": number(s.measured_negative),
            "samples_per_lsb": s.samples_per_lsb,
        })
    })
}

fn sixteen_json(c: &Comparison) -> Value {
    let x = match &c.sixteen {
        Ok(x) => x,
        Err(e) => return j!({ "judged": false, "refused": e }),
    };
    let diff = |d: &super::DiffStats| j!({ "max_abs": d.max_abs, "time_of_max_s": d.time_of_max_s, "rms": d.rms });
    j!({
        "judged": false,
        "refused": Value::Null,
        "measurement_per_unit": x.scaling.measurement.per_unit,
        "measurement_offset": x.scaling.measurement.offset,
        "command_per_unit": x.scaling.command.per_unit,
        "command_offset": x.scaling.command.offset,
        "measurement_lsb": x.measurement_lsb,
        "command_lsb": x.command_lsb,
        "command": diff(&x.command),
        "output": diff(&x.output),
        "first_branch_difference": x.divergence.map_or(Value::Null, |d| j!({
            "time_s": x.recording.time_s.get(d.index).copied().unwrap_or(0.0),
            "slim16": d.fixed.to_string(),
            "f64": d.float.to_string(),
        })),
        "limit_cycle": cycle_json(x.cycle.as_ref()),
        "ripple_command": x.ripple.command,
        "ripple_output": x.ripple.output,
        "expected_amplitude": x.bounds.per_sample,
        "expected_amplitude_lsb": x.bounds.per_sample / x.command_lsb,
        "stall": stall_json(x.stall.as_ref()),
    })
}

fn number(x: f64) -> Value {
    if x.is_finite() {
        Value::from(x)
    } else {
        Value::Null
    }
}

fn cycle_json(c: Option<&LimitCycle>) -> Value {
    c.map_or(Value::Null, |c| {
        j!({
            "period_samples": c.period_samples,
            "period_s": c.period_s,
            "amplitude": c.amplitude,
            "correlation": c.correlation,
        })
    })
}

/// All comparisons as one JSON document:
///
/// ```text
/// { "caution", "passed",
///   "comparisons": [ { "name", "source", "passed",
///     "command": { "max_abs", "time_of_max_s", "rms" }, "output": { … },
///     "first_branch_difference": { "time_s", "fixed", "f64" } | null,
///     "steady_state": { "start_s", "end_s", "expected_amplitude",
///        "fixed": { "limit_cycle": {…}|null, "ripple_command", "ripple_output" }, "f64": { … } },
///     "stall": { "ki_ts", "bound", "measured_positive", "measured_negative", "samples_per_lsb" } | null,
///     "slim16": { "judged": false, "refused": null | "why",
///        "measurement_per_unit", "measurement_offset", "command_per_unit", "command_offset",
///        "measurement_lsb", "command_lsb", "command": {…}, "output": {…},
///        "first_branch_difference", "limit_cycle", "ripple_command", "ripple_output",
///        "expected_amplitude", "expected_amplitude_lsb", "stall": {…} | null },
///     "bounds": { "per_sample", "slew_drift", "sensor_quantum", "loop_gain", "command", "output" },
///     "coefficients": [ { "name", "meaning", "exact", "stored", "representation", "abs_error", "rel_error", "accepted" } ],
///     "checks": [ { "name", "unit", "measured", "limit", "declared", "derived", "basis", "pass", "note", "source" } ] } ] }
/// ```
#[must_use]
pub fn json(comparisons: &[Comparison]) -> Value {
    let items: Vec<Value> = comparisons
        .iter()
        .map(|c| {
            let t = |k: usize| c.fixed.time_s.get(k).copied().unwrap_or(0.0);
            let diff = |d: &super::DiffStats| {
                j!({ "max_abs": d.max_abs, "time_of_max_s": d.time_of_max_s, "rms": d.rms })
            };
            let side = |cycle: Option<&LimitCycle>, r: super::Ripple| {
                j!({ "limit_cycle": cycle_json(cycle), "ripple_command": r.command, "ripple_output": r.output })
            };
            let source = c.scenario.compare.source.clone();
            j!({
                "name": c.scenario.name,
                "source": c.scenario.source,
                "passed": c.passed(),
                "command": diff(&c.command),
                "output": diff(&c.output),
                "first_branch_difference": c.divergence.map_or(Value::Null, |d| j!({
                    "time_s": t(d.index),
                    "fixed": d.fixed.to_string(),
                    "f64": d.float.to_string(),
                })),
                "steady_state": {
                    "start_s": t(c.window.start),
                    "end_s": t(c.window.end.saturating_sub(1)),
                    "expected_amplitude": c.bounds.per_sample,
                    "fixed": side(c.fixed_cycle.as_ref(), c.fixed_ripple),
                    "f64": side(c.float_cycle.as_ref(), c.float_ripple),
                },
                "stall": stall_json(c.stall.as_ref()),
                "slim16": sixteen_json(c),
                "bounds": {
                    "per_sample": c.bounds.per_sample,
                    "slew_drift": c.bounds.slew_drift,
                    "sensor_quantum": c.bounds.sensor_quantum,
                    "loop_gain": c.bounds.loop_gain,
                    "command": c.bounds.command,
                    "output": c.bounds.output,
                },
                "coefficients": c.coefficients.iter().map(|r| j!({
                    "name": r.name,
                    "meaning": r.meaning,
                    "exact": r.exact,
                    "stored": r.stored,
                    "representation": r.representation,
                    "abs_error": r.abs_error,
                    "rel_error": number(r.rel_error),
                    "accepted": r.accepted,
                })).collect::<Vec<_>>(),
                "checks": c.checks.iter().map(|ch| j!({
                    "name": ch.name,
                    "unit": ch.unit,
                    "measured": number(ch.measured),
                    "limit": ch.tolerance.limit,
                    "declared": ch.tolerance.declared,
                    "derived": ch.tolerance.derived,
                    "basis": ch.tolerance.basis,
                    "pass": ch.pass,
                    "note": ch.note,
                    "source": if ch.tolerance.declared { source.clone() } else { None },
                })).collect::<Vec<_>>(),
            })
        })
        .collect();
    j!({
        "caution": CAUTION,
        "passed": comparisons.iter().all(Comparison::passed),
        "comparisons": items,
    })
}

/// JUnit XML: one test suite per scenario (`NAME [fixed vs f64]`), one test
/// case per check.
#[must_use]
pub fn junit(comparisons: &[Comparison]) -> String {
    let tests: usize = comparisons.iter().map(|c| c.checks.len()).sum();
    let failures: usize = comparisons
        .iter()
        .map(|c| c.checks.iter().filter(|ch| !ch.pass).count())
        .sum();
    let mut x = JunitXml::new("evenkeel compare", tests, failures);
    for c in comparisons {
        let name = &c.scenario.name;
        let failed = c.checks.iter().filter(|ch| !ch.pass).count();
        x.open_suite(
            &format!("{name} [fixed vs f64]"),
            c.checks.len(),
            failed,
            Some(&c.scenario.source),
        );
        for ch in &c.checks {
            let limit = format!("<= {}", n(ch.tolerance.limit));
            let msg = format!(
                "{} measured {} {}, required {limit} ({})",
                ch.name,
                n(ch.measured),
                ch.unit,
                if ch.tolerance.declared {
                    "declared"
                } else {
                    "derived from the formats"
                }
            );
            let failure = (!ch.pass).then(|| {
                Failure::new("back-to-back", &msg).with_text(ch.note.as_deref().unwrap_or(&msg))
            });
            let mut props = vec![
                ("limit", ch.tolerance.limit.to_string()),
                ("unit", ch.unit.clone()),
                (
                    "basis",
                    if ch.tolerance.declared {
                        "declared".to_owned()
                    } else {
                        "derived".to_owned()
                    },
                ),
            ];
            if ch.measured.is_finite() {
                props.push(("measured", ch.measured.to_string()));
            }
            if let (true, Some(source)) = (ch.tolerance.declared, &c.scenario.compare.source) {
                props.push(("source", source.clone()));
            }
            x.case_with(&format!("{name}.compare"), ch.name, &props, failure);
        }
        x.close_suite();
    }
    x.finish()
}

/// Both trajectories and their differences as CSV, one row per sample:
/// `t_s,reference,output_fixed,output_f64,output_diff,command_fixed,command_f64,command_diff`.
#[must_use]
pub fn trace_csv(c: &Comparison) -> String {
    let (a, b) = (&c.fixed, &c.float);
    let mut s = String::from(
        "t_s,reference,output_fixed,output_f64,output_diff,command_fixed,command_f64,command_diff\n",
    );
    for k in 0..a.time_s.len().min(b.time_s.len()) {
        let _ = writeln!(
            s,
            "{},{},{},{},{},{},{},{}",
            a.time_s[k],
            a.reference[k],
            a.output[k],
            b.output[k],
            a.output[k] - b.output[k],
            a.command[k],
            b.command[k],
            a.command[k] - b.command[k]
        );
    }
    s
}
