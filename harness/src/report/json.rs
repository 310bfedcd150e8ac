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
///       "metrics": { "rise_time_s": number|null, … 17 keys },
///       "undefined": { "rise_time_s": "reason", … one per undefined metric },
///       "criteria": [ { "name", "bound", "limit", "measured", "pass",
///                       "undefined": key|null, "reason": text|null, "source" } ] } ] } ] }
/// ```
///
/// `metrics` has exactly the keys of [`MetricKey::ALL`]; an undefined
/// metric is `null` there and has its reason in `undefined`.
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
                    for k in MetricKey::ALL {
                        metrics.insert(k.name().into(), number(k.value(&r.metrics)));
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
                                "bound": v.criterion.bound.name(),
                                "limit": v.criterion.limit,
                                "measured": number(v.measured),
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
