//! Sweep reports: per criterion the pass fraction, the worst value and the
//! variant that produced it; as a table, JSON and JUnit; and the worst
//! variant as a scenario file that `evenkeel check` runs alone.

use std::fmt::Write;

use serde_json::{Value, json as j};

use super::run::{CriterionRecord, SweepResult, VariantResult};
use super::space::Param;
use crate::report::{CAUTION, Failure, JunitXml, format_number};
use crate::scenario::Scenario;

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

/// The summary of a [`SweepResult`].
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

/// How far `measured` lies beyond `c`'s limit, relative to the limit
/// (negative: inside). Undefined is +∞.
fn excess(c: &CriterionRecord, measured: Option<f64>) -> f64 {
    let Some(m) = measured else {
        return f64::INFINITY;
    };
    let scale = c.limit.abs().max(1e-12);
    if c.bound == "min" {
        (c.limit - m) / scale
    } else {
        (m - c.limit) / scale
    }
}

/// Aggregates `result` in index order.
#[must_use]
pub fn summarise(result: &SweepResult) -> SweepSummary {
    let criteria = result
        .criteria
        .iter()
        .enumerate()
        .map(|(k, c)| {
            let mut worst: Option<(f64, &VariantResult)> = None;
            let mut passed = 0;
            for v in &result.variants {
                if v.error.is_none() && v.pass.get(k).copied().unwrap_or(false) {
                    passed += 1;
                }
                let e = excess(c, v.measured.get(k).copied().flatten());
                if worst.is_none_or(|(w, _)| e > w) {
                    worst = Some((e, v));
                }
            }
            CriterionSummary {
                criterion: c.clone(),
                passed,
                total: result.variants.len(),
                worst: worst.and_then(|(_, v)| v.measured.get(k).copied().flatten()),
                worst_index: worst.map_or(0, |(_, v)| v.index),
            }
        })
        .collect();
    let mut worst: Option<(f64, usize)> = None;
    for v in &result.variants {
        let e = result
            .criteria
            .iter()
            .enumerate()
            .map(|(k, c)| excess(c, v.measured.get(k).copied().flatten()))
            .fold(f64::NEG_INFINITY, f64::max);
        if worst.is_none_or(|(w, _)| e > w) {
            worst = Some((e, v.index));
        }
    }
    SweepSummary {
        criteria,
        passed: result.variants.iter().filter(|v| v.passed()).count(),
        total: result.variants.len(),
        worst_index: worst.map(|(_, i)| i),
    }
}

fn variant(result: &SweepResult, index: usize) -> Option<&VariantResult> {
    result.variants.iter().find(|v| v.index == index)
}

fn params_text(result: &SweepResult, v: &VariantResult) -> String {
    let mut s: Vec<String> = result
        .params
        .iter()
        .zip(&v.values)
        .map(|(k, x)| format!("{k}={}", format_number(Some(*x))))
        .collect();
    s.push(format!("seed={}", v.seed));
    s.join(" ")
}

/// The readable report: plan, per-criterion pass fraction and worst value
/// with the variant that produced it, the caution.
#[must_use]
pub fn table(result: &SweepResult) -> String {
    let summary = summarise(result);
    let mut out = String::new();
    let _ = writeln!(out, "sweep {} ({})", result.scenario, result.source);
    let shard = result
        .shard
        .map_or_else(String::new, |(i, n)| format!(", shard {i}/{n}"));
    let _ = writeln!(
        out,
        "  backend {}, method {}, seed {}, {} of {} variants{shard}; parameters: {}",
        result.backend,
        result.method,
        result.seed,
        result.variants.len(),
        result.total,
        if result.params.is_empty() {
            "none".to_owned()
        } else {
            result.params.join(", ")
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
    for c in &summary.criteria {
        let r = &c.criterion;
        let symbol = if r.bound == "min" { ">=" } else { "<=" };
        let limit = format!("{symbol} {}", format_number(Some(r.limit)));
        let who = variant(result, c.worst_index).map_or_else(String::new, |v| {
            format!("#{} {}", v.index, params_text(result, v))
        });
        let _ = writeln!(
            out,
            "    {:<24} {:>14} {:>8.2} {:>12}  {who}",
            r.metric,
            limit,
            100.0 * c.pass_fraction(),
            format_number(c.worst)
        );
    }
    let errors = result.variants.iter().filter(|v| v.error.is_some()).count();
    if errors > 0 {
        let _ = writeln!(
            out,
            "  {errors} variants could not run (counted as failing)"
        );
    }
    let _ = writeln!(out, "  {CAUTION}");
    out
}

fn number(x: Option<f64>) -> Value {
    x.filter(|v| v.is_finite()).map_or(Value::Null, Value::from)
}

fn variant_json(result: &SweepResult, v: &VariantResult) -> Value {
    let params: serde_json::Map<String, Value> = result
        .params
        .iter()
        .zip(&v.values)
        .map(|(k, x)| (k.clone(), Value::from(*x)))
        .collect();
    j!({ "index": v.index, "seed": v.seed, "params": params, "passed": v.passed() })
}

/// The sweep report as JSON:
///
/// ```text
/// { "caution", "scenario", "source", "backend", "method", "seed", "total",
///   "passed": bool, "variants_passed": n, "params": [..],
///   "worst": { "index", "seed", "params": {..}, "passed" } | null,
///   "criteria": [ { "name", "bound", "limit", "source", "pass_fraction",
///                   "passed", "worst": number|null,
///                   "worst_variant": { "index", "seed", "params", "passed" } } ] }
/// ```
#[must_use]
pub fn json(result: &SweepResult) -> Value {
    let summary = summarise(result);
    let criteria: Vec<Value> = summary
        .criteria
        .iter()
        .map(|c| {
            let r = &c.criterion;
            j!({
                "name": r.metric,
                "bound": r.bound,
                "limit": r.limit,
                "source": r.source,
                "pass_fraction": c.pass_fraction(),
                "passed": c.passed,
                "worst": number(c.worst),
                "worst_variant": variant(result, c.worst_index).map(|v| variant_json(result, v)),
            })
        })
        .collect();
    j!({
        "caution": CAUTION,
        "scenario": result.scenario,
        "source": result.source,
        "backend": result.backend,
        "method": result.method,
        "seed": result.seed,
        "total": result.total,
        "shard": result.shard.map(|(i, n)| format!("{i}/{n}")),
        "passed": summary.all_passed(),
        "variants_passed": summary.passed,
        "params": result.params,
        "worst": summary.worst_index.and_then(|i| variant(result, i)).map(|v| variant_json(result, v)),
        "criteria": criteria,
    })
}

/// JUnit XML: one test suite for the sweep, one test case per criterion,
/// failing with the pass fraction and the worst variant.
#[must_use]
pub fn junit(result: &SweepResult) -> String {
    let summary = summarise(result);
    let failures = summary
        .criteria
        .iter()
        .filter(|c| c.passed < c.total || c.total == 0)
        .count();
    let n = summary.criteria.len();
    let mut x = JunitXml::new("evenkeel sweep", n, failures);
    let suite = format!(
        "{} [{} sweep, {}]",
        result.scenario, result.method, result.backend
    );
    x.open_suite(&suite, n, failures, None);
    let class = format!("{}.sweep", result.scenario);
    for c in &summary.criteria {
        let r = &c.criterion;
        let symbol = if r.bound == "min" { ">=" } else { "<=" };
        let name = format!("{} {symbol} {}", r.metric, format_number(Some(r.limit)));
        let who = variant(result, c.worst_index).map_or_else(String::new, |v| {
            format!(" at variant #{} ({})", v.index, params_text(result, v))
        });
        let msg = format!(
            "{} of {} variants met {name}; worst {}{who}",
            c.passed,
            c.total,
            format_number(c.worst)
        );
        let passed = c.total > 0 && c.passed == c.total;
        let failure = (!passed).then(|| Failure::new("criterion", &msg));
        x.case(&class, &name, failure);
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
    let v = variant(result, index)?;
    Some(super::run::apply_variant(scenario, &v.values, v.seed))
}

/// The scenario file `text` (of `scenario`) rewritten to variant `index`
/// of `result`: the parameter values put in, `scenario.seed` set to the
/// variant's noise seed, the initial command as the variant ran it,
/// `[uncertainty]` and `[sweep]` removed. `evenkeel check` on it
/// re-runs that single variant. (Comments are not kept.)
///
/// # Errors
/// A message if `text` is not TOML or the variant does not exist.
pub fn variant_toml(
    text: &str,
    scenario: &Scenario,
    result: &SweepResult,
    index: usize,
) -> Result<String, String> {
    let v = variant(result, index).ok_or_else(|| format!("no variant #{index} in the result"))?;
    let ran = super::run::apply_variant(scenario, &v.values, v.seed);
    let mut doc: toml::Table = toml::from_str(text).map_err(|e| e.to_string())?;
    doc.remove("uncertainty");
    doc.remove("sweep");
    for (key, &x) in result.params.iter().zip(&v.values) {
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
        result.method,
        result.scenario,
        params_text(result, v),
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
