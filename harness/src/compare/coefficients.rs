//! Coefficient quantization: every configured per-sample value next to the
//! value the fixed-point backend stores, and their relative error.

use evenkeel::fixed::types::I16F16;
use evenkeel::q::COEF_REL_TOLERANCE;
use evenkeel::{Config, ConfigError, FixedCoef, Settings};

/// One row of the quantization table.
#[derive(Debug, Clone, PartialEq)]
pub struct CoefRow {
    /// Key in reports (`kp`, `ki_ts`, `filter_alpha`, …).
    pub name: &'static str,
    /// What it is, in the settings' terms (`Ki·Ts`, `α = Ts/(Tf+Ts)`).
    pub meaning: &'static str,
    /// Exact per-sample value (`Settings::per_sample`, f64).
    pub exact: f64,
    /// Value stored by the fixed-point configuration (exact as f64).
    pub stored: f64,
    /// How it is stored: `mantissa·2^-shift` or `N LSB` (Q16.16).
    pub representation: String,
    /// `stored − exact`.
    pub abs_error: f64,
    /// `|stored − exact| / |exact|` (0 when both are 0).
    pub rel_error: f64,
    /// What configuration accepts for this row.
    pub accepted: &'static str,
}

/// The table for `settings`: Kp, setpoint weight, Ki·Ts, Ts/Tt, filter α,
/// slew step, deadband and the output limits, each only when configured.
///
/// ```
/// use evenkeel::Settings;
/// use evenkeel_harness::compare::coefficient_table;
/// let rows = coefficient_table(&Settings::new(0.01, 3.0, 0.2, -1.0, 1.0).with_slew_per_s(0.35))?;
/// let ki = rows.iter().find(|r| r.name == "ki_ts").ok_or("no row")?;
/// assert_eq!(ki.exact, 0.2 * 0.01);
/// assert!(ki.rel_error < 1e-9);
/// let slew = rows.iter().find(|r| r.name == "slew_step").ok_or("no row")?;
/// assert_eq!(slew.representation, "229 LSB"); // 0.0035 · 2¹⁶ = 229.4
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
///
/// # Errors
/// The [`ConfigError`] when the fixed-point backend refuses the settings.
pub fn coefficient_table(settings: &Settings) -> Result<Vec<CoefRow>, ConfigError> {
    let p = settings.per_sample()?;
    let c = Config::<I16F16>::try_new(settings)?;
    let coef_ok = "rel ≤ 2⁻²⁰";
    let signal_ok = "abs ≤ q/2";
    let mut rows = vec![row("kp", "Kp", p.kp, c.kp(), coef_ok)];
    if let (Some(exact), Some(stored)) = (p.setpoint_weight, c.setpoint_weight()) {
        rows.push(row("setpoint_weight", "b", exact, stored, coef_ok));
    }
    rows.push(row("ki_ts", "Ki·Ts", p.ki_ts, c.ki_ts(), coef_ok));
    if let (Some(exact), Some(stored)) = (p.tracking_ratio, c.tracking_ratio()) {
        rows.push(row("tracking_ratio", "Ts/Tt", exact, stored, coef_ok));
    }
    if let (Some(exact), Some(stored)) = (p.filter_alpha, c.filter_alpha()) {
        rows.push(row(
            "filter_alpha",
            "α = Ts/(Tf+Ts)",
            exact,
            stored,
            coef_ok,
        ));
    }
    if let (Some(exact), Some(stored)) = (p.slew_step, c.slew_step()) {
        // SLEW_REL_TOLERANCE: 1 %.
        rows.push(row("slew_step", "R·Ts", exact, stored, "rel ≤ 1 %"));
    }
    if let (Some(exact), Some(stored)) = (p.deadband, c.deadband()) {
        rows.push(row("deadband", "deadband", exact, stored, signal_ok));
    }
    let (lo, hi) = c.output_limits();
    rows.push(row("output_min", "u_min", p.output_min, lo, signal_ok));
    rows.push(row("output_max", "u_max", p.output_max, hi, signal_ok));
    Ok(rows)
}

/// Whether every coefficient row is within [`COEF_REL_TOLERANCE`] (what
/// configuration guarantees; a regression check).
#[must_use]
pub fn coefficients_within_contract(rows: &[CoefRow]) -> bool {
    rows.iter()
        .filter(|r| r.representation.contains('·'))
        .all(|r| r.rel_error <= COEF_REL_TOLERANCE)
}

/// A value as the fixed-point backend stores it: its exact `f64` value and
/// how it is written in the table.
trait Stored {
    fn value(&self) -> f64;
    fn representation(&self) -> String;
}

/// A coefficient: `mantissa·2^-shift`.
impl Stored for FixedCoef {
    fn value(&self) -> f64 {
        self.to_f64()
    }
    fn representation(&self) -> String {
        format!("{}·2^-{}", self.mantissa(), self.shift())
    }
}

/// A signal-scale value (Q16.16): `N LSB`.
impl Stored for I16F16 {
    fn value(&self) -> f64 {
        self.to_num::<f64>()
    }
    fn representation(&self) -> String {
        format!("{} LSB", self.to_bits())
    }
}

/// The row of `stored` next to `exact`; the relative error is infinite
/// when `exact` is 0 and `stored` is not.
fn row(
    name: &'static str,
    meaning: &'static str,
    exact: f64,
    stored: impl Stored,
    accepted: &'static str,
) -> CoefRow {
    let (representation, stored) = (stored.representation(), stored.value());
    let abs_error = stored - exact;
    let rel_error = if exact == 0.0 {
        if stored == 0.0 { 0.0 } else { f64::INFINITY }
    } else {
        (abs_error / exact).abs()
    };
    CoefRow {
        name,
        meaning,
        exact,
        stored,
        representation,
        abs_error,
        rel_error,
        accepted,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use evenkeel::AntiWindup;

    #[test]
    fn every_configured_value_has_a_row_within_the_contract() {
        let s = Settings::new(0.01, 0.3, 0.7, -2.0, 3.5)
            .with_setpoint_weight(0.6)
            .with_filter_time_s(0.07)
            .with_deadband(0.001)
            .with_slew_per_s(5.0)
            .with_anti_windup(AntiWindup::BackCalculation {
                tracking_time_s: 0.3,
            });
        let rows = coefficient_table(&s).unwrap();
        let names: Vec<_> = rows.iter().map(|r| r.name).collect();
        assert_eq!(
            names,
            [
                "kp",
                "setpoint_weight",
                "ki_ts",
                "tracking_ratio",
                "filter_alpha",
                "slew_step",
                "deadband",
                "output_min",
                "output_max"
            ]
        );
        assert!(coefficients_within_contract(&rows));
        for r in &rows {
            if r.representation.ends_with("LSB") {
                assert!(r.abs_error.abs() <= 0.5 / 65_536.0, "{r:?}");
            }
        }
        // A minimal configuration: gains and limits only.
        let rows = coefficient_table(&Settings::new(0.01, 1.0, 1.0, 0.0, 1.0)).unwrap();
        assert_eq!(rows.len(), 4);
    }
}
