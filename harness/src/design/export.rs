//! `design --json` and `--junit`: the proposal, the feasibility verdicts,
//! the derivation, the margins per corner and the verification per
//! criterion, for CI.

use serde_json::{Map, Value, json as j};

use super::edit::{DesignedValue, designed_values};
use super::{Severity, Tuned, point_label, verdict};
use crate::report::{CAUTION, Failure, HtmlPage, JunitXml, format_number};
use crate::scenario::Scenario;

fn number(x: f64) -> Value {
    if x.is_finite() {
        j!(x)
    } else if x.is_nan() {
        Value::Null
    } else if x > 0.0 {
        j!("inf")
    } else {
        j!("-inf")
    }
}

fn settings(c: &evenkeel::Settings) -> Value {
    let mut out = Map::new();
    out.insert("period_s".into(), j!(c.period_s));
    for (key, v) in designed_values(c) {
        out.insert(
            key.into(),
            match v {
                Some(DesignedValue::Number(x)) => j!(x),
                Some(DesignedValue::Text(t)) => j!(t),
                None => Value::Null,
            },
        );
    }
    Value::Object(out)
}

/// The JSON document of `design`:
///
/// ```text
/// { "caution", "scenario", "source", "passed", "verdict", "method", "backend",
///   "notices": [..], "feasibility": { "feasible", "corners", "holds",
///     "findings": [ { "severity", "criterion", "corner", "time_s", "needed", "limit", "message", "remedy" } ] },
///   "proposal": { controller keys }, "start": { controller keys }, "derivation": [..],
///   "search": { "searched", "rounds", "iterations", "candidates", "runs", "stop", "working_set", "knobs",
///               "start_worst_margin", "final_worst_margin" },
///   "sample": { "variants", "passing", "seed", "count" },
///   "criteria": [ { "name", "bound", "limit", "source", "worst_margin", "worst_value", "failing",
///                   "binding": { "index", "origin", "values": {..}, "seed" } } ],
///   "constraints": [ { "name", "bound", "limit", "worst", "margin", "corner" } ],
///   "corners": [ { "corner", "values": {..}, "gain_factor", "operating_output", "gain_margin",
///                  "phase_margin_deg", "gain_crossover_rad_s", "delay_margin_s", "ms", "mt",
///                  "min_damping", "bandwidth_rad_s", "stable" } ],
///   "fixed_point": { "accepted", "error", "coefficients": [ { "name", "wanted", "stored", "tolerance", "ok" } ] },
///   "formats": { "needed": "slim16" | "fixed" | null,
///                "each": [ { "backend", "label", "refused", "measurement_lsb", "command_lsb", "stall_error",
///                            "resolution", "allowed", "allowed_basis", "gain_error", "limit_cycle_lsb", "fits" } ] } }
/// ```
///
/// Infinite values are the strings `"inf"`/`"-inf"`, undefined ones `null`.
#[must_use]
pub fn json(s: &Scenario, t: &Tuned) -> Value {
    let findings: Vec<Value> = t
        .feasibility
        .findings
        .iter()
        .map(|f| {
            j!({
                "severity": f.severity.name(),
                "criterion": f.criterion.map(|c| c.name()),
                "corner": f.corner,
                "time_s": f.time_s,
                "needed": f.needed.map(number),
                "limit": f.limit,
                "message": f.message,
                "remedy": f.remedy,
            })
        })
        .collect();
    let values = |v: &[f64]| -> Value {
        let mut m = Map::new();
        for (u, x) in s.uncertainty.iter().zip(v) {
            m.insert(u.param.key().into(), j!(x));
        }
        Value::Object(m)
    };
    let (criteria, sample) = t.verification.as_ref().map_or_else(
        || (Vec::new(), Value::Null),
        |v| {
            let criteria = v
                .criteria
                .iter()
                .map(|c| {
                    let p = &v.points[c.binding];
                    j!({
                        "name": c.criterion.label(),
                        "bound": c.criterion.bound.name(),
                        "limit": c.criterion.limit,
                        "source": c.criterion.source,
                        "worst_margin": number(c.worst_margin),
                        "worst_value": c.worst_value.map(number),
                        "failing": c.failing,
                        "binding": {
                            "index": c.binding,
                            "origin": p.origin.name(),
                            "values": values(&p.values),
                            "label": point_label(s, &p.values),
                            "seed": p.seed,
                        },
                    })
                })
                .collect();
            let sample = j!({
                "variants": v.variants.len(),
                "passing": v.passing(),
                "seed": t.options.seed,
                "count": t.options.count,
            });
            (criteria, sample)
        },
    );
    let constraints: Vec<Value> = t
        .constraints
        .iter()
        .map(|c| {
            j!({
                "name": c.name,
                "bound": c.bound.name(),
                "limit": c.limit,
                "worst": number(c.worst),
                "margin": number(c.margin),
                "corner": c.corner,
            })
        })
        .collect();
    let corners: Vec<Value> = t
        .corners
        .iter()
        .map(|r| {
            let g = &r.margins;
            let mut vals = Map::new();
            for (k, x) in &r.corner.values {
                vals.insert((*k).into(), j!(x));
            }
            j!({
                "corner": r.corner.label(),
                "values": vals,
                "gain_factor": r.corner.gain_factor,
                "operating_output": r.corner.operating_output,
                "gain_margin": number(g.gain_margin),
                "phase_margin_deg": number(g.phase_margin_deg),
                "gain_crossover_rad_s": number(g.gain_crossover_rad_s),
                "delay_margin_s": number(g.delay_margin_s),
                "ms": number(g.sensitivity_peak),
                "mt": number(g.complementary_peak),
                "min_damping": number(g.min_damping),
                "bandwidth_rad_s": number(g.bandwidth_rad_s),
                "stable": g.stable(),
            })
        })
        .collect();
    let coefficients: Vec<Value> = t
        .fixed
        .coefficients
        .iter()
        .map(|k| {
            j!({
                "name": k.name,
                "wanted": k.wanted,
                "stored": k.stored,
                "tolerance": k.tolerance,
                "ok": k.relative_error() <= k.tolerance,
            })
        })
        .collect();
    let log = &t.search;
    j!({
        "caution": CAUTION,
        "scenario": s.name,
        "source": s.source,
        "passed": t.passed(),
        "verdict": verdict(t),
        "method": t.start.method.name(),
        "started_from": match t.started_from {
            super::StartPoint::Analytic => "analytic",
            super::StartPoint::AsWritten => "as_written",
        },
        "analytic": settings(&t.start.settings),
        "backend": t.options.backend.name(),
        "notices": t.notices,
        "feasibility": {
            "feasible": t.feasibility.feasible(),
            "corners": t.feasibility.corners,
            "holds": t.feasibility.holds,
            "findings": findings,
        },
        "proposal": settings(&t.settings),

        "derivation": t.start.derivation,
        "search": {
            "searched": log.searched,
            "rounds": log.rounds,
            "iterations": log.iterations,
            "candidates": log.candidates,
            "runs": log.runs,
            "stop": log.stop.map(|s| s.name()),
            "working_set": log.working_set,
            "knobs": log.knobs,
            "start_worst_margin": number(log.start_worst),
            "final_worst_margin": number(log.final_worst),
        },
        "sample": sample,
        "criteria": criteria,
        "constraints": constraints,
        "corners": corners,
        "fixed_point": {
            "accepted": t.fixed.accepted.is_ok(),
            "error": t.fixed.accepted.as_ref().err().map(ToString::to_string),
            "coefficients": coefficients,
        },
        "formats": formats_json(s, t),
    })
}

/// Which fixed format the loop handed over needs (`design::format_fits`).
fn formats_json(s: &Scenario, t: &Tuned) -> Value {
    let fits = super::format_fits(s, &t.settings);
    let each: Vec<Value> = fits
        .iter()
        .map(|f| {
            j!({
                "backend": f.backend.name(),
                "label": f.label,
                "refused": f.refused,
                "measurement_lsb": number(f.measurement_lsb),
                "command_lsb": number(f.command_lsb),
                "stall_error": f.stall_error.map(number),
                "resolution": number(f.resolution),
                "allowed": number(f.allowed.0),
                "allowed_basis": f.allowed.1,
                "gain_error": number(f.gain_error),
                "limit_cycle_lsb": number(f.limit_cycle_lsb),
                "fits": f.fits(),
            })
        })
        .collect();
    j!({
        "needed": super::needed(&fits).map(|f| f.backend.name()),
        "each": each,
    })
}

/// The JUnit XML of `design`: one suite, test cases `feasibility`, one per
/// criterion (`criterion NAME`), one per constraint (`constraint NAME`)
/// and `fixed_point`. Names carry no limits, so a CI history survives a
/// changed limit.
#[must_use]
pub fn junit(s: &Scenario, t: &Tuned) -> String {
    let mut cases: Vec<(String, Option<(String, String)>)> = Vec::new();
    let infeasible: Vec<&str> = t
        .feasibility
        .findings
        .iter()
        .filter(|f| f.severity == Severity::Infeasible)
        .map(|f| f.message.as_str())
        .collect();
    cases.push((
        "feasibility".into(),
        (!infeasible.is_empty()).then(|| {
            (
                format!(
                    "{} criterion(s) cannot be met by any controller",
                    infeasible.len()
                ),
                infeasible.join("\n"),
            )
        }),
    ));
    if let Some(v) = &t.verification {
        for c in &v.criteria {
            let p = &v.points[c.binding];
            let msg = format!(
                "{}: worst {} (required {} {}), margin {:.3}, {} of {} variants fail; binding variant #{} ({}) {}",
                c.criterion.label(),
                format_number(c.worst_value),
                c.criterion.bound.symbol(),
                format_number(Some(c.criterion.limit)),
                c.worst_margin,
                c.failing,
                v.variants.len(),
                c.binding,
                p.origin.name(),
                point_label(s, &p.values)
            );
            cases.push((
                format!("criterion {}", c.criterion.label()),
                (c.worst_margin < 0.0).then(|| (msg.clone(), msg)),
            ));
        }
    }
    for k in &t.constraints {
        let msg = format!(
            "{} worst {} against {} {} at {}",
            k.name,
            format_number(Some(k.worst)),
            k.bound.symbol(),
            format_number(Some(k.limit)),
            k.corner
        );
        cases.push((
            format!("constraint {}", k.name),
            (k.margin < 0.0).then(|| (msg.clone(), msg)),
        ));
    }
    cases.push((
        "fixed_point".into(),
        (!t.fixed.holds()).then(|| {
            let m = t.fixed.accepted.as_ref().err().map_or_else(
                || "a stored coefficient is outside its tolerance".to_owned(),
                ToString::to_string,
            );
            (m.clone(), m)
        }),
    ));
    let failures = cases.iter().filter(|c| c.1.is_some()).count();
    let mut x = JunitXml::new("evenkeel design", cases.len(), failures);
    x.open_suite(
        &format!("design {} [{}]", s.name, t.options.backend.name()),
        cases.len(),
        failures,
        Some(&s.source),
    );
    let class = format!("{}.design", s.name);
    for (name, failure) in &cases {
        let f = failure
            .as_ref()
            .map(|(m, text)| Failure::new("design", m).with_text(text));
        x.case(&class, name, f);
    }
    x.close_suite();
    x.finish()
}

/// The HTML report of `design`: verdict, what design changed that the user
/// wrote, feasibility findings, the proposal, the per-criterion margins
/// and constraints as tables, the design plot (`svg`, if drawn) and the
/// full text report.
#[must_use]
pub fn html(s: &Scenario, t: &Tuned, svg: Option<&str>) -> String {
    let mut p = HtmlPage::new(&format!("evenkeel design: {}", s.name), Some(t.passed()));
    p.verdict(t.passed(), &verdict(t));
    for n in &t.notices {
        p.paragraph(&format!("NOTICE: {n}"));
    }
    p.heading(2, "Feasibility");
    if t.feasibility.findings.is_empty() {
        p.paragraph("feasible: no finding");
    } else {
        let rows: Vec<Vec<String>> = t
            .feasibility
            .findings
            .iter()
            .map(|f| {
                vec![
                    f.criterion.map_or("-".into(), |c| c.name().to_owned()),
                    if f.severity == Severity::Infeasible {
                        "FAIL".into()
                    } else {
                        "warning".into()
                    },
                    f.message.clone(),
                    f.remedy.clone().unwrap_or_default(),
                ]
            })
            .collect();
        p.table(
            &["criterion", "verdict", "finding", "would make it feasible"],
            &rows,
        );
    }
    p.heading(2, "Proposal");
    let rows: Vec<Vec<String>> = designed_values(&t.settings)
        .into_iter()
        .map(|(k, v)| {
            vec![
                k.to_owned(),
                match v {
                    Some(DesignedValue::Number(x)) => format_number(Some(x)),
                    Some(DesignedValue::Text(x)) => x.to_owned(),
                    None => "none".into(),
                },
            ]
        })
        .collect();
    p.table(&["[controller] key", "value"], &rows);
    if let Some(v) = &t.verification {
        p.heading(2, "Verification over the sample");
        let rows: Vec<Vec<String>> = v
            .criteria
            .iter()
            .map(|c| {
                let pt = &v.points[c.binding];
                vec![
                    c.criterion.label(),
                    format!(
                        "{} {}",
                        c.criterion.bound.symbol(),
                        format_number(Some(c.criterion.limit))
                    ),
                    format_number(c.worst_value),
                    format!("{:+.3}", c.worst_margin),
                    if c.worst_margin >= 0.0 {
                        "pass".into()
                    } else {
                        "FAIL".into()
                    },
                    format!("{}/{}", c.failing, v.variants.len()),
                    format!(
                        "#{} {} {}",
                        c.binding,
                        pt.origin.name(),
                        point_label(s, &pt.values)
                    ),
                ]
            })
            .collect();
        p.table(
            &[
                "criterion",
                "limit",
                "worst",
                "margin",
                "verdict",
                "failing",
                "binding variant",
            ],
            &rows,
        );
    }
    p.heading(2, "Robustness constraints");
    let rows: Vec<Vec<String>> = t
        .constraints
        .iter()
        .map(|k| {
            vec![
                k.name.to_owned(),
                format!("{} {}", k.bound.symbol(), format_number(Some(k.limit))),
                format_number(Some(k.worst)),
                format!("{:+.3}", k.margin),
                if k.margin >= 0.0 {
                    "pass".into()
                } else {
                    "FAIL".into()
                },
                k.corner.clone(),
            ]
        })
        .collect();
    p.table(
        &[
            "constraint",
            "limit",
            "worst",
            "margin",
            "verdict",
            "corner",
        ],
        &rows,
    );
    if let Some(svg) = svg {
        p.heading(2, "Loop at every corner, speed trade-off");
        p.svg(
            svg,
            "frequency responses (magnitude, phase), Nyquist curves with the Ms circle, and the speed trade-off",
        );
    }
    p.heading(2, "Full report");
    p.preformatted(&super::report(s, t));
    p.finish()
}
