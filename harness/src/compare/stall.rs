//! Integrator stall: the smallest constant error that still moves the
//! fixed-point integrator, from the formats and measured on the
//! controller's own arithmetic.
//!
//! The integrator adds `Ki·Ts·e` per sample at Q32.32 precision, rounded to
//! nearest with ties toward +∞ (`FORMATS.md` §3). Errors are multiples of
//! one signal LSB q = 2⁻¹⁶, so an error of `n` LSB adds
//! `round(Ki·Ts · n · 2¹⁶)` accumulator LSB, which is zero while
//! `Ki·Ts · n · 2¹⁶ < ½`. Hence the smallest error that moves it:
//!
//! `e_min = max(1, ⌈2⁻¹⁷ / (Ki·Ts)⌉) · q`  (≥ the continuous `2⁻³³ / (Ki·Ts)`),
//!
//! one LSB unless `Ki·Ts < 2⁻¹⁷ ≈ 7.6e-6`. A negative error that lands
//! exactly on a tie needs one LSB more (ties round toward +∞). Below
//! `e_min` the fixed loop can rest with a steady error that the `f64` loop
//! removes.

use evenkeel::fixed::types::{I16F16, I32F32};
use evenkeel::{Backend, Config, FixedCoef};

/// One Q16.16 LSB.
pub const LSB: f64 = 1.0 / 65_536.0;

/// Stall analysis of one fixed-point configuration.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stall {
    /// Ki·Ts as stored (exact value of the fixed coefficient).
    pub ki_ts: f64,
    /// `e_min` from the formula above, signal units.
    pub bound: f64,
    /// Smallest positive error (a multiple of q) that changes the
    /// integrator in one step of the controller's arithmetic.
    pub measured_positive: f64,
    /// The same for negative errors (magnitude).
    pub measured_negative: f64,
    /// At an error of one LSB: samples until the integrator has moved by
    /// one signal LSB (`2¹⁶ / increment`); `None` if one LSB does not move
    /// it at all.
    pub samples_per_lsb: Option<f64>,
}

impl Stall {
    /// The larger of the two measured values (the worse sign).
    #[must_use]
    pub fn measured(&self) -> f64 {
        self.measured_positive.max(self.measured_negative)
    }
}

/// Stall analysis of `config`; `None` without integral action (Ki = 0).
///
/// ```
/// use evenkeel::{Config, Settings};
/// use evenkeel_harness::compare::{stall, LSB};
/// use evenkeel::fixed::types::I16F16;
/// // Ki·Ts = 1e-4: one LSB moves it (by 7 accumulator LSB per sample).
/// let c = Config::<I16F16>::try_new(&Settings::new(0.01, 1.0, 0.01, -1.0, 1.0))?;
/// let s = stall(&c).ok_or("no integrator")?;
/// assert_eq!((s.bound, s.measured()), (LSB, LSB));
/// // Ki·Ts = 2e-6 < 2⁻¹⁷: errors up to 3 LSB are lost.
/// let c = Config::<I16F16>::try_new(&Settings::new(0.01, 1.0, 2e-4, -1.0, 1.0))?;
/// let s = stall(&c).ok_or("no integrator")?;
/// assert_eq!(s.bound, 4.0 * LSB); // ⌈2⁻¹⁷ / 2e-6⌉ = ⌈3.81⌉
/// assert_eq!(s.measured(), s.bound);
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
#[must_use]
pub fn stall(config: &Config<I16F16>) -> Option<Stall> {
    let coef = config.ki_ts();
    let ki_ts = coef.to_f64();
    if ki_ts <= 0.0 {
        return None;
    }
    let lsbs = (f64::powi(2.0, -17) / ki_ts).ceil().max(1.0);
    let one = increment(coef, 1);
    Some(Stall {
        ki_ts,
        bound: lsbs * LSB,
        measured_positive: smallest_moving(coef, 1),
        measured_negative: smallest_moving(coef, -1),
        #[allow(clippy::cast_precision_loss)] // |increment| < 2^53
        samples_per_lsb: (one != 0).then(|| 65_536.0 / one.unsigned_abs() as f64),
    })
}

/// Accumulator LSB added by one integration step with error `n` LSB.
fn increment(coef: FixedCoef, n: i32) -> i64 {
    I16F16::scale_into(I32F32::ZERO, I16F16::from_bits(n), coef).to_bits()
}

/// Smallest `|n|·q` with the given sign that moves the accumulator
/// (`∞` if none does). `increment` is monotone in `n`, so: double, then
/// bisect.
fn smallest_moving(coef: FixedCoef, sign: i32) -> f64 {
    let moves = |n: i32| increment(coef, sign * n) != 0;
    let mut hi = 1_i32;
    while !moves(hi) {
        if hi >= i32::MAX / 2 {
            return f64::INFINITY;
        }
        hi *= 2;
    }
    let mut lo = hi / 2; // does not move (or 0)
    while hi - lo > 1 {
        let mid = lo + (hi - lo) / 2;
        if moves(mid) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    f64::from(hi) * LSB
}

#[cfg(test)]
mod tests {
    use super::*;
    use evenkeel::Settings;

    #[test]
    fn formula_matches_the_arithmetic_over_many_gains() {
        // Ki·Ts from 1e-9 to 10: the measured smallest error never differs
        // from the formula by more than the one-LSB tie on negative errors.
        let mut ki_ts = 1e-9;
        while ki_ts < 10.0 {
            let s = Settings::new(1.0, 1.0, ki_ts, -1.0, 1.0);
            let c = Config::<I16F16>::try_new(&s).unwrap();
            let r = stall(&c).unwrap();
            assert_eq!(r.measured_positive, r.bound, "Ki·Ts = {ki_ts}");
            let extra = r.measured_negative - r.bound;
            assert!(extra == 0.0 || extra == LSB, "Ki·Ts = {ki_ts}");
            ki_ts *= 1.37;
        }
    }

    #[test]
    fn exact_tie_needs_one_more_lsb_for_negative_errors() {
        // Ki·Ts = 2⁻¹⁷ exactly: +1 LSB gives ½ accumulator LSB → 1; −1 LSB
        // gives −½ → 0 (ties toward +∞).
        let c = Config::<I16F16>::try_new(&Settings::new(1.0, 1.0, f64::powi(2.0, -17), -1.0, 1.0))
            .unwrap();
        let r = stall(&c).unwrap();
        assert_eq!((r.measured_positive, r.measured_negative), (LSB, 2.0 * LSB));
        assert_eq!(r.samples_per_lsb, Some(65_536.0));
    }

    #[test]
    fn no_integrator_no_stall() {
        let c = Config::<I16F16>::try_new(&Settings::new(0.01, 1.0, 0.0, -1.0, 1.0)).unwrap();
        assert_eq!(stall(&c), None);
    }
}
