//! The verdict of a comparison: one check per tolerance, each with its
//! measured value, its limit (declared or derived), and on failure an
//! explanation of what the formats allow and what to change.

use super::Comparison;
use super::tolerance::{MARGIN, Tolerance};
use crate::report::format_number;

/// One pass/fail check of a comparison.
#[derive(Debug, Clone, PartialEq)]
pub struct Check {
    /// Key, as in the scenario's `[compare]` table (`max_command_diff`, …).
    pub name: &'static str,
    /// Unit of `measured` and the limit.
    pub unit: String,
    /// The measured value.
    pub measured: f64,
    /// The limit and where it comes from.
    pub tolerance: Tolerance,
    /// `measured ≤ limit`.
    pub pass: bool,
    /// Why it failed and what to change; or, when it passed, a remark
    /// worth reading (e.g. a limit cycle present in both backends).
    pub note: Option<String>,
}

fn check(name: &'static str, unit: &str, measured: f64, tolerance: Tolerance) -> Check {
    let pass = measured <= tolerance.limit;
    Check {
        name,
        unit: unit.to_owned(),
        measured,
        tolerance,
        pass,
        note: None,
    }
}

fn n(x: f64) -> String {
    format_number(Some(x))
}

/// The checks of `c` (whose `checks` field is ignored).
pub(crate) fn evaluate(c: &Comparison) -> Vec<Check> {
    let spec = &c.scenario.compare;
    let b = &c.bounds;
    // One Q16.16 measurement LSB in measurement units (2⁻¹⁶ without a
    // scaling).
    let lsb = c.measurement_lsb;
    let out_unit = c.scenario.output_unit.as_str();
    let cmd_unit = c.scenario.command_unit.as_str();
    let cmd_suffix = if cmd_unit == "1" {
        String::new()
    } else {
        format!(" {cmd_unit}")
    };
    let e_u = format!(
        "E_u = G + m·Δs + (Kp + Ki·Ts)·Q_s = {} + {} + {}·{}",
        n(b.per_sample),
        n(b.slew_drift),
        n(b.loop_gain),
        n(b.sensor_quantum)
    );
    let e_y = format!(
        "E_y = q/2 + Q_s + (G + m·Δs)/(Kp + Ki·Ts) = {} + {} + {}/{}",
        n(lsb / 2.0),
        n(b.sensor_quantum),
        n(b.per_sample + b.slew_drift),
        n(b.loop_gain)
    );
    let diff = |name, unit, measured, declared, factor: f64, e: f64, how: &str| {
        check(
            name,
            unit,
            measured,
            Tolerance::pick(declared, factor * e, format!("{} · {how}", n(factor))),
        )
    };
    let half = MARGIN / 2.0;
    let mut checks = vec![
        diff(
            "max_command_diff",
            cmd_unit,
            c.command.max_abs,
            spec.max_command_diff,
            MARGIN,
            b.command,
            &e_u,
        ),
        diff(
            "rms_command_diff",
            cmd_unit,
            c.command.rms,
            spec.rms_command_diff,
            half,
            b.command,
            &e_u,
        ),
        diff(
            "max_output_diff",
            out_unit,
            c.output.max_abs,
            spec.max_output_diff,
            MARGIN,
            b.output,
            &e_y,
        ),
        diff(
            "rms_output_diff",
            out_unit,
            c.output.rms,
            spec.rms_output_diff,
            half,
            b.output,
            &e_y,
        ),
    ];
    for ch in &mut checks {
        if ch.pass {
            continue;
        }
        let t = &ch.tolerance;
        ch.note = Some(if t.declared && t.limit < t.derived {
            format!(
                "declared {} is tighter than the {} that Q16.16 rounding can be expected to cause here ({}); at this signal scaling the fixed-point loop cannot be expected to meet it: scale the signals up (smaller units) or relax the tolerance",
                n(t.limit),
                n(t.derived),
                t.basis
            )
        } else {
            let at = match ch.name {
                "max_command_diff" => format!(" (largest at {} s)", n(c.command.time_of_max_s)),
                "max_output_diff" => format!(" (largest at {} s)", n(c.output.time_of_max_s)),
                _ => String::new(),
            };
            let branch = c.divergence.map_or_else(
                || " The controllers never took different branches: look for a quantizer or threshold outside the controller (sensor, load shift).".to_owned(),
                |d| {
                    format!(
                        " The controllers first took different branches at {} s (fixed `{}`, f64 `{}`): from there a limit, the deadband or the conditional integration decided differently, which rounding bounds do not cover.",
                        n(c.fixed.time_s.get(d.index).copied().unwrap_or(0.0)),
                        d.fixed,
                        d.float
                    )
                },
            );
            format!(
                "the difference{at} exceeds {} by a factor {}.{branch}",
                n(t.limit),
                n(ch.measured / t.limit)
            )
        });
    }

    // Limit cycle of the fixed loop that the f64 loop does not have.
    let (measured, note) = match (&c.fixed_cycle, &c.float_cycle) {
        (Some(f), None) => (
            f.amplitude,
            Some(format!(
                "fixed-point limit cycle: period {} samples ({} s), amplitude {}{cmd_suffix}; the f64 loop comes to rest",
                f.period_samples,
                n(f.period_s),
                n(f.amplitude)
            )),
        ),
        (Some(f), Some(g)) => (
            0.0,
            Some(format!(
                "an oscillation of period {} samples is present in both backends (f64: {} samples): the loop's own, not caused by fixed point",
                f.period_samples, g.period_samples
            )),
        ),
        _ => (0.0, None),
    };
    let mut lc = check(
        "max_limit_cycle_amplitude",
        cmd_unit,
        measured,
        Tolerance::pick(
            spec.max_limit_cycle_amplitude,
            b.per_sample,
            format!("G = {} (one sample's rounding)", n(b.per_sample)),
        ),
    );
    lc.note = note.map(|text| {
        if lc.pass {
            text
        } else {
            format!(
                "{text}, larger than {}: the loop hunts between Q16.16 values because its equilibrium lies between them; more fractional bits at the measurement (smaller units), a smaller Kp·q step or a deadband of a few LSB remove it",
                n(lc.tolerance.limit)
            )
        }
    });
    checks.push(lc);

    // Integrator stall.
    let mut st = match &c.stall {
        Some(s) => {
            let mut ch = check(
                "max_stall_error",
                out_unit,
                s.measured(),
                Tolerance::pick(spec.max_stall_error, lsb, format!("one LSB q = {}", n(lsb))),
            );
            if !ch.pass {
                ch.note = Some(format!(
                    "Ki·Ts = {} is below 2⁻¹⁷ = {}: a constant error smaller than {} {out_unit} ({} LSB) never moves the fixed-point integrator (FORMATS.md §3), so the fixed loop can rest with that error where f64 removes it; raise Ki·Ts (a larger Ki or Ts) or express the measurement in smaller units",
                    n(s.ki_ts),
                    n(f64::powi(2.0, -17)),
                    n(s.measured()),
                    n(s.measured() / lsb)
                ));
            }
            ch
        }
        None => {
            let mut ch = check(
                "max_stall_error",
                out_unit,
                0.0,
                Tolerance::pick(spec.max_stall_error, lsb, "one LSB q".into()),
            );
            ch.note = Some("no integral action (Ki = 0)".into());
            ch
        }
    };
    st.pass = st.measured <= st.tolerance.limit;
    checks.push(st);

    // Resolution of the format against the reference span.
    let pct = if c.reference_span > 0.0 {
        100.0 * lsb / c.reference_span
    } else {
        0.0
    };
    let mut res = check(
        "max_lsb_pct",
        "%",
        pct,
        Tolerance::pick(
            spec.max_lsb_pct,
            super::tolerance::DEFAULT_MAX_LSB_PCT,
            "0.1 % (one LSB at most a thousandth of the reference span)".into(),
        ),
    );
    if !res.pass {
        // The next power of ten at or above the shortfall.
        let factor = format!(
            "{:.0}",
            10f64.powf((pct / res.tolerance.limit).log10().ceil())
        );
        res.note = Some(format!(
            "one Q16.16 LSB ({} {out_unit}) is {} % of the reference span {} {out_unit}: the format is too coarse for signals at this scale. Express the loop in units {} times smaller (measurement values ×{}, Kp and Ki ÷{}) so that the span covers at least {} LSB",
            n(lsb),
            n(pct),
            n(c.reference_span),
            factor,
            factor,
            factor,
            n(100.0 / res.tolerance.limit)
        ));
    } else if c.reference_span == 0.0 {
        res.note = Some("the reference never changes and is 0: no scale to judge".into());
    }
    checks.push(res);
    checks
}
