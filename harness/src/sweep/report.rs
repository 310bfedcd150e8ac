//! Sweep reports: per criterion the pass fraction, the worst value and the
//! variant that produced it; as a table, JSON and JUnit; and the worst
//! variant as a scenario file that `evenkeel check` runs alone.

use std::fmt::Write;

use serde_json::{Value, json as j};

use super::run::{CriterionRecord, SweepResult};
use super::space::Param;
use super::stream::SweepHeader;
use super::tally::{Tally, VariantPoint};
use crate::files::printable;
use crate::report::{CAUTION, Failure, JunitXml, format_number};
use crate::scenario::Scenario;
use crate::undefined::Undefined;

/// One criterion over all variants.
#[derive(Debug, Clone, PartialEq)]
pub struct CriterionSummary {
    /// The criterion.
    pub criterion: CriterionRecord,
    /// Variants that met it.
    pub passed: usize,
    /// Variants run.
    pub total: usize,
    /// Worst measured value (largest for `max`, smallest for `min`);
    /// `None` if it was undefined in the worst variant.
    pub worst: Option<f64>,
    /// Why the worst value is undefined, when it is.
    pub worst_reason: Option<Undefined>,
    /// Index of the variant with the worst value (lowest index on ties).
    pub worst_index: usize,
}

impl CriterionSummary {
    /// Fraction of variants that met the criterion.
    #[must_use]
    pub fn pass_fraction(&self) -> f64 {
        if self.total == 0 {
            return 0.0;
        }
        // Counts are far below 2^53.
        #[allow(clippy::cast_precision_loss)]
        let f = self.passed as f64 / self.total as f64;
        f
    }
}

/// The summary of a sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepSummary {
    /// Per criterion, in scenario order.
    pub criteria: Vec<CriterionSummary>,
    /// Variants that met every criterion.
    pub passed: usize,
    /// Variants run.
    pub total: usize,
    /// The variant furthest beyond (or closest to) its limits: largest
    /// relative excess over all criteria; undefined metrics count as worst.
    pub worst_index: Option<usize>,
}

impl SweepSummary {
    /// `true` when every variant met every criterion.
    #[must_use]
    pub fn all_passed(&self) -> bool {
        self.total > 0 && self.passed == self.total
    }
}

/// The tally of every variant of `result`.
#[must_use]
pub fn tally(result: &SweepResult) -> Tally {
    let mut t = Tally::new(&result.criteria);
    result.variants.iter().for_each(|v| t.add(v));
    t
}

/// The summary of a tally.
#[must_use]
pub fn summary_of(tally: &Tally) -> SweepSummary {
    SweepSummary {
        criteria: tally
            .criteria
            .iter()
            .map(|c| CriterionSummary {
                criterion: c.criterion.clone(),
                passed: c.passed,
                total: c.total,
                worst: c.worst.as_ref().and_then(|w| w.measured),
                worst_reason: c
                    .worst
                    .as_ref()
                    .and_then(|w| w.reason.as_deref())
                    .and_then(Undefined::from_key),
                worst_index: c.worst.as_ref().map_or(0, |w| w.variant.index),
            })
            .collect(),
        passed: tally.passed,
        total: tally.total,
        worst_index: tally.worst.as_ref().map(|w| w.variant.index),
    }
}

/// Aggregates `result`.
#[must_use]
pub fn summarise(result: &SweepResult) -> SweepSummary {
    summary_of(&tally(result))
}

fn params_text(params: &[String], v: &VariantPoint) -> String {
    let mut s: Vec<String> = params
        .iter()
        .zip(&v.values)
        .map(|(k, x)| format!("{k}={}", format_number(Some(*x))))
        .collect();
    s.push(format!("seed={}", v.seed));
    s.join(" ")
}

/// The worst variant of criterion `k`, if any variant ran.
fn worst_of(t: &Tally, k: usize) -> Option<&VariantPoint> {
    t.criteria.get(k)?.worst.as_ref().map(|w| &w.variant)
}

/// A worst value for humans: the number, or `undefined (reason)`.
fn worst_text(c: &CriterionSummary) -> String {
    match (c.worst, c.worst_reason) {
        (None, Some(u)) => format!("undefined ({})", u.reason()),
        (w, _) => format_number(w),
    }
}

/// The readable report: plan, per-criterion pass fraction and worst value
/// with the variant that produced it, the caution.
#[must_use]
pub fn table(result: &SweepResult) -> String {
    table_of(&result.header(), &tally(result))
}

/// [`table`] of a sweep given by its header and tally.
#[must_use]
pub fn table_of(h: &SweepHeader, t: &Tally) -> String {
    let summary = summary_of(t);
    let mut out = String::new();
    let _ = writeln!(
        out,
        "sweep {} ({})",
        printable(&h.scenario),
        printable(&h.source)
    );
    let shard = h
        .shard
        .map_or_else(String::new, |(i, n)| format!(", shard {i}/{n}"));
    let _ = writeln!(
        out,
        "  backend {}, method {}, seed {}, {} of {} variants{shard}; parameters: {}",
        h.backend,
        h.method,
        h.seed,
        t.total,
        h.total,
        if h.params.is_empty() {
            "none".to_owned()
        } else {
            h.params.join(", ")
        }
    );
    let _ = writeln!(
        out,
        "  {}  ({} of {} variants met every criterion)",
        if summary.all_passed() { "PASS" } else { "FAIL" },
        summary.passed,
        summary.total
    );
    let _ = writeln!(
        out,
        "    {:<24} {:>14} {:>8} {:>12}  worst variant",
        "criterion", "limit", "pass %", "worst"
    );
    for (k, c) in summary.criteria.iter().enumerate() {
        let r = &c.criterion;
        let symbol = if r.bound == "min" { ">=" } else { "<=" };
        let limit = format!("{symbol} {}", format_number(Some(r.limit)));
        let who = worst_of(t, k).map_or_else(String::new, |v| {
            format!("#{} {}", v.index, params_text(&h.params, v))
        });
        let _ = writeln!(
            out,
            "    {:<24} {:>14} {:>8.2} {:>12}  {who}",
            r.metric,
            limit,
            100.0 * c.pass_fraction(),
            worst_text(c)
        );
    }
    if t.errors > 0 {
        let first = t.first_error.as_ref().map_or_else(String::new, |(i, e)| {
            format!("; first, #{i}: {}", printable(e))
        });
        let _ = writeln!(
            out,
            "  {} variants could not run (counted as failing){first}",
            t.errors
        );
    }
    let _ = writeln!(out, "  {CAUTION}");
    out
}

fn number(x: Option<f64>) -> Value {
    x.filter(|v| v.is_finite()).map_or(Value::Null, Value::from)
}

fn variant_json(params: &[String], v: &VariantPoint) -> Value {
    let map: serde_json::Map<String, Value> = params
        .iter()
        .zip(&v.values)
        .map(|(k, x)| (k.clone(), Value::from(*x)))
        .collect();
    j!({ "index": v.index, "seed": v.seed, "params": map, "passed": v.passed })
}

/// The sweep report as JSON:
///
/// ```text
/// { "caution", "scenario", "source", "backend", "method", "seed", "total",
///   "passed": bool, "variants_passed": n, "variants_failed_to_run": n, "params": [..],
///   "worst": { "index", "seed", "params": {..}, "passed" } | null,
///   "criteria": [ { "name", "bound", "limit", "source", "pass_fraction",
///                   "passed", "worst": number|null, "worst_undefined": key|null,
///                   "worst_reason": text|null,
///                   "worst_variant": { "index", "seed", "params", "passed" } } ] }
/// ```
#[must_use]
pub fn json(result: &SweepResult) -> Value {
    json_of(&result.header(), &tally(result))
}

/// [`json`] of a sweep given by its header and tally.
#[must_use]
pub fn json_of(h: &SweepHeader, t: &Tally) -> Value {
    let summary = summary_of(t);
    let criteria: Vec<Value> = summary
        .criteria
        .iter()
        .enumerate()
        .map(|(k, c)| {
            let r = &c.criterion;
            j!({
                "name": r.metric,
                "bound": r.bound,
                "limit": r.limit,
                "source": r.source,
                "pass_fraction": c.pass_fraction(),
                "passed": c.passed,
                "worst": number(c.worst),
                "worst_undefined": c.worst_reason.map(Undefined::key),
                "worst_reason": c.worst_reason.map(Undefined::reason),
                "worst_variant": worst_of(t, k).map(|v| variant_json(&h.params, v)),
            })
        })
        .collect();
    j!({
        "caution": CAUTION,
        "scenario": h.scenario,
        "source": h.source,
        "backend": h.backend,
        "method": h.method,
        "seed": h.seed,
        "total": h.total,
        "shard": h.shard.map(|(i, n)| format!("{i}/{n}")),
        "passed": summary.all_passed(),
        "variants_passed": summary.passed,
        "variants_failed_to_run": t.errors,
        "params": h.params,
        "worst": t.worst.as_ref().map(|w| variant_json(&h.params, &w.variant)),
        "criteria": criteria,
    })
}

/// JUnit XML: one test suite for the sweep, one test case per criterion,
/// failing with the pass fraction and the worst variant.
#[must_use]
pub fn junit(result: &SweepResult) -> String {
    junit_of(&result.header(), &tally(result))
}

/// [`junit`] of a sweep given by its header and tally.
#[must_use]
pub fn junit_of(h: &SweepHeader, t: &Tally) -> String {
    let summary = summary_of(t);
    let failures = summary
        .criteria
        .iter()
        .filter(|c| c.passed < c.total || c.total == 0)
        .count();
    let n = summary.criteria.len();
    let mut x = JunitXml::new("evenkeel sweep", n, failures);
    let suite = format!("{} [{} sweep, {}]", h.scenario, h.method, h.backend);
    x.open_suite(&suite, n, failures, None);
    let class = format!("{}.sweep", h.scenario);
    for (k, c) in summary.criteria.iter().enumerate() {
        let r = &c.criterion;
        let symbol = if r.bound == "min" { ">=" } else { "<=" };
        let required = format!("{} {symbol} {}", r.metric, format_number(Some(r.limit)));
        let who = worst_of(t, k).map_or_else(String::new, |v| {
            format!(" at variant #{} ({})", v.index, params_text(&h.params, v))
        });
        let msg = format!(
            "{} of {} variants met {required}; worst {}{who}",
            c.passed,
            c.total,
            worst_text(c)
        );
        let passed = c.total > 0 && c.passed == c.total;
        let failure = (!passed).then(|| Failure::new("criterion", &msg));
        let mut props = vec![
            ("metric", r.metric.clone()),
            ("bound", r.bound.clone()),
            ("limit", r.limit.to_string()),
            ("pass_fraction", c.pass_fraction().to_string()),
        ];
        if let Some(w) = c.worst.filter(|w| w.is_finite()) {
            props.push(("worst", w.to_string()));
        }
        if let Some(v) = worst_of(t, k) {
            props.push(("worst_variant", v.index.to_string()));
        }
        if let Some(source) = &r.source {
            props.push(("source", source.clone()));
        }
        x.case_with(
            &class,
            &format!("{} {}", r.metric, r.bound),
            &props,
            failure,
        );
    }
    x.close_suite();
    x.finish()
}

/// `scenario` with the values of variant `index` of `result` put in (and
/// its sensor-noise seed), without uncertainty: what that variant ran.
#[must_use]
pub fn variant_scenario(
    scenario: &Scenario,
    result: &SweepResult,
    index: usize,
) -> Option<Scenario> {
    let v = result.variants.iter().find(|v| v.index == index)?;
    Some(super::run::apply_variant(scenario, &v.values, v.seed))
}

/// The scenario file `text` (of `scenario`) rewritten to variant `index`
/// of `result`: see [`variant_toml_of`].
///
/// # Errors
/// A message if `text` is not TOML or the variant does not exist.
pub fn variant_toml(
    text: &str,
    scenario: &Scenario,
    result: &SweepResult,
    index: usize,
) -> Result<String, String> {
    let v = result
        .variants
        .iter()
        .find(|v| v.index == index)
        .ok_or_else(|| format!("no variant #{index} in the result"))?;
    let point = VariantPoint {
        index: v.index,
        seed: v.seed,
        values: v.values.clone(),
        passed: v.passed(),
    };
    variant_toml_of(text, scenario, &result.header(), &point)
}

/// The scenario file `text` (of `scenario`) rewritten to the variant
/// `v` of the sweep `h`: the parameter values put in, `scenario.seed` set
/// to the variant's noise seed, the initial command as the variant ran
/// it, `[uncertainty]` and `[sweep]` removed. `evenkeel check` on it
/// re-runs that single variant. (Comments are not kept.)
///
/// # Errors
/// A message if `text` is not TOML.
pub fn variant_toml_of(
    text: &str,
    scenario: &Scenario,
    h: &SweepHeader,
    v: &VariantPoint,
) -> Result<String, String> {
    let index = v.index;
    let ran = super::run::apply_variant(scenario, &v.values, v.seed);
    let mut doc: toml::Table = toml::from_str(text).map_err(|e| e.to_string())?;
    doc.remove("uncertainty");
    doc.remove("sweep");
    for (key, &x) in h.params.iter().zip(&v.values) {
        let param = Param::from_key(key).ok_or_else(|| format!("unknown parameter `{key}`"))?;
        let (path, name): (&[&str], &str) = match param {
            Param::ActuatorTauS => (&["actuator"], "tau_s"),
            Param::SensorNoiseStd => (&["sensor"], "noise_std"),
            Param::GradeScale => (&["disturbance", "grade_pct"], ""),
            Param::LoadScale => (&["disturbance", "load"], ""),
            p => (&["plant"], p.key()),
        };
        let mut t: &mut toml::Table = &mut doc;
        for part in path {
            t = t
                .entry((*part).to_owned())
                .or_insert_with(|| toml::Value::Table(toml::Table::new()))
                .as_table_mut()
                .ok_or_else(|| format!("`{part}` is not a table"))?;
        }
        if name.is_empty() {
            scale_profile(t, x);
        } else {
            t.insert(name.to_owned(), toml::Value::Float(x));
        }
    }
    if let (Some(u), Some(c)) = (
        ran.setup.initial_command,
        doc.get_mut("controller")
            .and_then(toml::Value::as_table_mut),
    ) {
        c.insert("initial_command".into(), toml::Value::Float(u));
    }
    let meta = doc
        .get_mut("scenario")
        .and_then(toml::Value::as_table_mut)
        .ok_or("no [scenario] table")?;
    meta.insert(
        "seed".into(),
        toml::Value::Integer(i64::try_from(v.seed).map_err(|e| e.to_string())?),
    );
    let name = meta
        .get("name")
        .and_then(toml::Value::as_str)
        .unwrap_or("scenario")
        .to_owned();
    meta.insert(
        "name".into(),
        toml::Value::String(format!("{name}-variant-{index}")),
    );
    let head = format!(
        "# Variant #{index} of the {} sweep of `{}` ({}), written by `evenkeel sweep`.\n# {}\n\n",
        h.method,
        printable(&h.scenario).replace('\n', " "),
        params_text(&h.params, v),
        CAUTION
    );
    Ok(head + &toml::to_string(&doc).map_err(|e| e.to_string())?)
}

/// Multiplies a profile table (`initial`, `segments[].to`) by `factor`.
fn scale_profile(t: &mut toml::Table, factor: f64) {
    let as_f = |v: &toml::Value| {
        v.as_float().or_else(|| {
            v.as_integer().map(|i| {
                #[allow(clippy::cast_precision_loss)]
                let f = i as f64;
                f
            })
        })
    };
    if let Some(x) = t.get("initial").and_then(as_f) {
        t.insert("initial".into(), toml::Value::Float(x * factor));
    }
    if let Some(segments) = t.get_mut("segments").and_then(toml::Value::as_array_mut) {
        for s in segments.iter_mut().filter_map(toml::Value::as_table_mut) {
            if let Some(x) = s.get("to").and_then(as_f) {
                s.insert("to".into(), toml::Value::Float(x * factor));
            }
        }
    }
}
