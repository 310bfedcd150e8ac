//! The readable result table.

use std::fmt::Write;

use super::CAUTION;
use crate::outcome::Outcome;

/// A number for humans: 4 significant digits, scientific notation outside
/// [0.001, 100000), `undefined` for `None`.
///
/// ```
/// use evenkeel_harness::report::format_number;
/// assert_eq!(format_number(Some(3.14159)), "3.142");
/// assert_eq!(format_number(Some(0.0)), "0");
/// assert_eq!(format_number(Some(2.5e-5)), "2.500e-5");
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
    let a = x.abs();
    if !(1e-3..1e5).contains(&a) {
        return format!("{x:.3e}");
    }
    // Digits after the point for 4 significant digits; a < 1e5 so this is 0..=6.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let decimals = (3 - a.log10().floor() as i32).max(0) as usize;
    format!("{x:.decimals$}")
}

/// One table per scenario and backend: criterion, limit, measured value,
/// verdict (with the reason when the value is undefined); a summary line;
/// the caution.
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
        let _ = writeln!(
            out,
            "    {:<24} {:>14} {:>12}  verdict",
            "criterion", "limit", "measured"
        );
        for v in &run.verdicts {
            let c = &v.criterion;
            let limit = format!("{} {}", c.bound.symbol(), format_number(Some(c.limit)));
            let why = v
                .undefined
                .map_or_else(String::new, |u| format!("  ({})", u.reason()));
            let _ = writeln!(
                out,
                "    {:<24} {:>14} {:>12}  {}{why}",
                c.metric.name(),
                limit,
                format_number(v.measured),
                if v.pass { "pass" } else { "FAIL" }
            );
        }
    }
    let _ = writeln!(out, "  {CAUTION}");
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers() {
        let cases = [
            (123.456, "123.5"),
            (-0.5, "-0.5000"),
            (99999.0, "99999"),
            (1e5, "1.000e5"),
            (0.001, "0.001000"),
        ];
        for (x, want) in cases {
            assert_eq!(format_number(Some(x)), want);
        }
    }
}
