//! Machine-readable results.

use serde_json::{Map, Value, json as j};

use super::CAUTION;
use crate::criteria::MetricKey;
use crate::outcome::Outcome;

/// All outcomes as one JSON document:
///
/// ```text
/// { "caution": "...", "passed": bool,
///   "scenarios": [ { "name", "source", "passed",
///     "runs": [ { "backend", "passed", "load_shifts",
///       "metrics": { "rise_time_s": number|null, … one per metric key },
///       "at_s": { "peak_jerk": number, … one per metric whose worst value has a time },
///       "undefined": { "rise_time_s": "reason", … one per undefined metric },
///       "criteria": [ { "name", "bound", "limit", "unit", "measured", "at_s": number|null,
///                       "pass", "undefined": key|null, "reason": text|null, "source" } ] } ] } ] }
/// ```
///
/// `metrics` has exactly the keys of [`MetricKey::ALL`]; an undefined
/// metric is `null` there and has its reason in `undefined`. `at_s` is
/// when the worst value occurred (s from the start of the run); `unit`
/// comes from the scenario's `output_unit` and `command_unit`.
#[must_use]
pub fn json(outcomes: &[Outcome]) -> Value {
    let scenarios: Vec<Value> = outcomes
        .iter()
        .map(|o| {
            let runs: Vec<Value> = o
                .runs
                .iter()
                .map(|r| {
                    let mut metrics = Map::new();
                    let mut undefined = Map::new();
                    let mut at_s = Map::new();
                    for k in MetricKey::ALL {
                        metrics.insert(k.name().into(), number(k.value(&r.metrics)));
                        if let Some(t) = k.at_s(&r.metrics) {
                            at_s.insert(k.name().into(), Value::from(t));
                        }
                        if let Some(u) = k.undefined(&r.metrics) {
                            undefined.insert(k.name().into(), Value::from(u.reason()));
                        }
                    }
                    let criteria: Vec<Value> = r
                        .verdicts
                        .iter()
                        .map(|v| {
                            j!({
                                "name": v.criterion.metric.name(),
                                "label": v.criterion.label(),
                                "bound": v.criterion.bound.name(),
                                "limit": v.criterion.limit,
                                "unit": v.criterion.metric.unit(&o.scenario.output_unit, &o.scenario.command_unit),
                                "measured": number(v.measured),
                                "at_s": number(v.at_s),
                                "pass": v.pass,
                                "undefined": v.undefined.map(|u| u.key()),
                                "reason": v.undefined.map(|u| u.reason()),
                                "source": v.criterion.source,
                            })
                        })
                        .collect();
                    j!({
                        "backend": r.backend,
                        "passed": r.passed(),
                        "load_shifts": r.recording.load_shifts,
                        "metrics": metrics,
                        "at_s": at_s,
                        "undefined": undefined,
                        "criteria": criteria,
                    })
                })
                .collect();
            j!({
                "name": o.scenario.name,
                "source": o.scenario.source,
                "passed": o.passed(),
                "runs": runs,
            })
        })
        .collect();
    j!({
        "caution": CAUTION,
        "passed": outcomes.iter().all(Outcome::passed),
        "scenarios": scenarios,
    })
}

/// A finite number, or `null` (JSON has no NaN or infinity).
fn number(x: Option<f64>) -> Value {
    x.filter(|v| v.is_finite()).map_or(Value::Null, Value::from)
}
