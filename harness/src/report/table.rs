//! The readable result table.

use std::fmt::Write;

use super::CAUTION;
use crate::outcome::Outcome;

/// Significant digits of [`format_number`].
pub const SIGNIFICANT_DIGITS: usize = 4;

/// A number for humans, the one format of every table: 4 significant
/// digits with trailing zeros trimmed (a whole number keeps all of its
/// digits below 10⁶), scientific notation outside [0.001, 1000000),
/// `undefined` for `None`.
///
/// ```
/// use evenkeel_harness::report::format_number;
/// assert_eq!(format_number(Some(3.14159)), "3.142");
/// assert_eq!(format_number(Some(12.0)), "12");
/// assert_eq!(format_number(Some(1500.0)), "1500");
/// assert_eq!(format_number(Some(0.0)), "0");
/// assert_eq!(format_number(Some(2.61e-4)), "2.61e-4");
/// assert_eq!(format_number(Some(2.5e7)), "2.5e7");
/// assert_eq!(format_number(None), "undefined");
/// ```
#[must_use]
pub fn format_number(x: Option<f64>) -> String {
    let Some(x) = x else {
        return "undefined".into();
    };
    if x == 0.0 {
        return "0".into();
    }
    if !x.is_finite() {
        return format!("{x}");
    }
    let a = x.abs();
    if !(1e-3..1e6).contains(&a) {
        let text = format!("{x:.prec$e}", prec = SIGNIFICANT_DIGITS - 1);
        return match text.split_once('e') {
            Some((mantissa, exponent)) => format!("{}e{exponent}", trim_zeros(mantissa)),
            None => text,
        };
    }
    // Digits after the point for 4 significant digits; a < 1e6 so this is 0..=6.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let decimals = (3 - a.log10().floor() as i32).max(0) as usize;
    trim_zeros(&format!("{x:.decimals$}")).to_owned()
}

/// `1.500` → `1.5`, `2.000` → `2`; text without a point is kept.
fn trim_zeros(text: &str) -> &str {
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.')
    } else {
        text
    }
}

/// One table per scenario and backend: criterion, limit, measured value,
/// its unit (from the scenario's `output_unit` and `command_unit`), when
/// the worst value occurred, verdict (with the reason when the value is
/// undefined); the caution. Every number in [`format_number`]'s format.
#[must_use]
pub fn table(outcome: &Outcome) -> String {
    let s = &outcome.scenario;
    let mut out = String::new();
    let _ = writeln!(out, "scenario {} ({})", s.name, s.source);
    for run in &outcome.runs {
        let failed = run.verdicts.iter().filter(|v| !v.pass).count();
        let _ = writeln!(
            out,
            "  backend {:<5}  {}  ({} of {} criteria met{})",
            run.backend,
            if failed == 0 { "PASS" } else { "FAIL" },
            run.verdicts.len() - failed,
            run.verdicts.len(),
            if run.recording.load_shifts > 0 {
                format!(", {} towed-load shifts", run.recording.load_shifts)
            } else {
                String::new()
            }
        );
        let rows: Vec<[String; 5]> = run
            .verdicts
            .iter()
            .map(|v| {
                let c = &v.criterion;
                [
                    c.label(),
                    format!("{} {}", c.bound.symbol(), format_number(Some(c.limit))),
                    format_number(v.measured),
                    c.metric.unit(&s.output_unit, &s.command_unit),
                    v.at_s
                        .map_or_else(|| "-".to_owned(), |t| format_number(Some(t))),
                ]
            })
            .collect();
        let width = |k: usize, least: usize| {
            rows.iter()
                .map(|r| r[k].chars().count())
                .fold(least, usize::max)
        };
        let (w0, w3) = (width(0, 24), width(3, 4));
        let _ = writeln!(
            out,
            "    {:<w0$} {:>14} {:>12}  {:<w3$} {:>8}  verdict",
            "criterion", "limit", "measured", "unit", "at (s)"
        );
        for (v, r) in run.verdicts.iter().zip(&rows) {
            let why = v
                .undefined
                .map_or_else(String::new, |u| format!("  ({})", u.reason()));
            let _ = writeln!(
                out,
                "    {:<w0$} {:>14} {:>12}  {:<w3$} {:>8}  {}{why}",
                r[0],
                r[1],
                r[2],
                r[3],
                r[4],
                if v.pass { "pass" } else { "FAIL" }
            );
        }
    }
    let _ = writeln!(out, "  {CAUTION}");
    out
}

/// The line under the tables of several scenarios: how many passed on
/// every backend, which failed (with their failing backends), and the
/// criteria met over all runs.
///
/// ```
/// use evenkeel_harness::{report::summary, Scenario};
/// let outcome = Scenario::demo()?.run_all()?;
/// let line = summary(&[outcome.clone(), outcome]);
/// assert!(line.starts_with("summary: 2 scenarios, 2 passed, 0 failed;"), "{line}");
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
#[must_use]
pub fn summary(outcomes: &[Outcome]) -> String {
    let passed = outcomes.iter().filter(|o| o.passed()).count();
    let failed: Vec<String> = outcomes
        .iter()
        .filter(|o| !o.passed())
        .map(|o| {
            let backends: Vec<&str> = o
                .runs
                .iter()
                .filter(|r| !r.passed())
                .map(|r| r.backend)
                .collect();
            format!("{} ({})", o.scenario.name, backends.join(", "))
        })
        .collect();
    let runs = outcomes.iter().flat_map(|o| o.runs.iter());
    let criteria: usize = runs.clone().map(|r| r.verdicts.len()).sum();
    let met: usize = runs
        .clone()
        .map(|r| r.verdicts.iter().filter(|v| v.pass).count())
        .sum();
    let listed = if failed.is_empty() {
        String::new()
    } else {
        format!(": {}", failed.join(", "))
    };
    format!(
        "summary: {} scenarios, {passed} passed, {} failed{listed}; {met} of {criteria} criteria met over {} runs\n",
        outcomes.len(),
        failed.len(),
        runs.count()
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers() {
        // (input, expected): g-style with 4 significant digits, zeros trimmed.
        let cases = [
            (123.456, "123.5"),
            (-0.5, "-0.5"),
            (99999.0, "99999"),
            (123_456.0, "123456"),
            (1e6, "1e6"),
            (1e5, "100000"),
            (0.001, "0.001"),
            (0.000_999_9, "9.999e-4"),
            (0.013_000_000_000_000_001, "0.013"),
            (9.999_96, "10"),
            (-2.5e-9, "-2.5e-9"),
            (f64::INFINITY, "inf"),
        ];
        for (x, want) in cases {
            assert_eq!(format_number(Some(x)), want, "{x}");
        }
    }
}
