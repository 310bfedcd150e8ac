//! The 16-bit backend (`Slim16`) beside Q16.16: the same scenario run a
//! third time, its difference from `f64`, its limit cycles and its
//! integrator stall bound, in physical units.
//!
//! The 16-bit integrator adds `round(Ki·Ts · n · 2¹³)` state LSB for an
//! error of `n` raw LSB (`Ki·Ts` in raw units per raw unit and sample,
//! FORMATS.md §8), which is zero while `Ki·Ts · n · 2¹³ < ½`. Hence the
//! smallest error that moves it:
//!
//! `e_min = max(1, ⌈2⁻¹⁴ / (Ki·Ts)⌉)` raw LSB, ÷ the measurement's per-unit
//! scale in physical units.

use evenkeel::{Backend, Config, Scaling, Slim16, SlimCoef};

use super::stall::Stall;
use super::{DiffStats, Divergence, FormatBounds, LimitCycle, Ripple};
use crate::sim::Recording;

/// The 16-bit run of a comparison.
#[derive(Debug, Clone, PartialEq)]
pub struct SixteenBit {
    /// The scaling it ran with (the scenario's `[scaling]`, or the
    /// power-of-two scales the harness picked).
    pub scaling: Scaling,
    /// One measurement LSB, measurement units.
    pub measurement_lsb: f64,
    /// One command LSB, command units.
    pub command_lsb: f64,
    /// The run.
    pub recording: Recording,
    /// Command difference, 16-bit − f64.
    pub command: DiffStats,
    /// True plant output difference, 16-bit − f64.
    pub output: DiffStats,
    /// First sample with different controller status, if any.
    pub divergence: Option<Divergence>,
    /// Limit cycle of the command in the steady-state window.
    pub cycle: Option<LimitCycle>,
    /// Ripple in the steady-state window.
    pub ripple: Ripple,
    /// Integrator stall, physical units (`None` without integral action).
    pub stall: Option<Stall>,
    /// Rounding bounds from the 16-bit formats, physical units.
    pub bounds: FormatBounds,
}

/// Stall analysis of a 16-bit configuration whose measurement has
/// `per_unit` raw LSB per unit; `Stall::ki_ts` is the stored Ki·Ts in raw
/// units, every error in measurement units.
///
/// ```
/// use evenkeel::{Config, Settings, Slim16};
/// use evenkeel_harness::compare::stall_16;
/// // Ki·Ts = 1e-3 raw/raw: stored 16 777 · 2⁻²⁴, one LSB adds 8 state LSB.
/// let c = Config::<Slim16>::try_new(&Settings::new(0.01, 0.0, 0.1, -100.0, 100.0))?;
/// let s = stall_16(&c, 1.0).ok_or("no integrator")?;
/// assert_eq!((s.bound, s.measured()), (1.0, 1.0));
/// assert_eq!(s.samples_per_lsb, Some(1024.0)); // 8192 / 8
/// // Ki·Ts = 2e-5 < 2⁻¹⁴: errors below ⌈6.1e-5 / 2e-5⌉ = 4 LSB are lost.
/// let c = Config::<Slim16>::try_new(&Settings::new(0.01, 0.0, 2e-3, -100.0, 100.0))?;
/// let s = stall_16(&c, 1.0).ok_or("no integrator")?;
/// assert_eq!(s.bound, 4.0);
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
#[must_use]
pub fn stall_16(config: &Config<Slim16>, per_unit: f64) -> Option<Stall> {
    let coef = config.ki_ts();
    let ki_ts = coef.to_f64();
    if ki_ts <= 0.0 {
        return None;
    }
    let lsb = 1.0 / per_unit;
    let lsbs = (f64::powi(2.0, -14) / ki_ts).ceil().max(1.0);
    let one = increment(coef, 1);
    Some(Stall {
        ki_ts,
        bound: lsbs * lsb,
        measured_positive: smallest_moving(coef, 1) * lsb,
        measured_negative: smallest_moving(coef, -1) * lsb,
        samples_per_lsb: (one != 0).then(|| 8192.0 / f64::from(one.unsigned_abs())),
    })
}

/// State LSB added by one integration step with error `n` raw LSB.
fn increment(coef: SlimCoef, n: i16) -> i32 {
    Slim16::scale_into(0, Slim16::from_raw(n), coef)
}

/// Smallest `|n|` (raw LSB) with the given sign that moves the state;
/// `∞` if none within 16 bits does. Monotone in `n`: bisect.
fn smallest_moving(coef: SlimCoef, sign: i16) -> f64 {
    let moves = |n: i16| increment(coef, sign * n) != 0;
    if !moves(i16::MAX) {
        return f64::INFINITY;
    }
    let (mut lo, mut hi) = (0_i16, i16::MAX);
    while hi - lo > 1 {
        let mid = lo + (hi - lo) / 2;
        if moves(mid) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    f64::from(hi)
}

#[cfg(test)]
mod tests {
    use super::*;
    use evenkeel::Settings;

    #[test]
    fn formula_matches_the_arithmetic_over_many_gains() {
        // Ki·Ts from 1e-7 to 0.9 raw/raw: the measured smallest error
        // equals the formula up to the one-LSB tie on negative errors.
        let mut ki = 1e-5;
        while ki < 90.0 {
            let Ok(c) = Config::<Slim16>::try_new(&Settings::new(0.01, 0.0, ki, -100.0, 100.0))
            else {
                ki *= 1.37;
                continue;
            };
            let r = stall_16(&c, 1.0).expect("integral action");
            assert_eq!(r.measured_positive, r.bound, "Ki = {ki}");
            let extra = r.measured_negative - r.bound;
            assert!(extra == 0.0 || extra == 1.0, "Ki = {ki}: {extra}");
            ki *= 1.37;
        }
    }
}
