//! Fixed-point building blocks: the scaled coefficient and round-to-nearest
//! products.
//!
//! # Numeric contract
//!
//! * Signals are Q16.16 (`I16F16`, an `i32`): range −32768 to
//!   32767.999 984 7, one LSB = 2⁻¹⁶ ≈ 1.53e-5.
//! * Accumulators (integrator, filter state) are Q32.32 (`I32F32`, an `i64`):
//!   one LSB = 2⁻³² ≈ 2.3e-10 signal units, so increments far below one signal
//!   LSB still add up.
//! * A coefficient is a 32-bit mantissa with its own binary point:
//!   value = `mantissa · 2^-shift`, `shift` in `0..=62`, chosen at
//!   configuration so that the mantissa uses 30 or 31 bits. Relative error of
//!   a stored coefficient: at most 2⁻³¹ for values from 2⁻³² up to 2³⁰
//!   ([`COEF_REL_TOLERANCE`] is what configuration enforces).
//! * Products are exact in `i64` (|product| ≤ 2⁶²) and then rounded to
//!   nearest with ties toward +∞ (`floor(p / 2^s + 1/2)`), then saturated to
//!   the destination format. Additions saturate. Nothing wraps, nothing
//!   panics, nothing divides.

use fixed::types::{I16F16, I32F32};

/// Largest relative error a configuration accepts when it stores a gain as a
/// [`FixedCoef`] (2⁻²⁰ ≈ 9.5e-7).
///
/// ```
/// use evenkeel::{FixedCoef, q::COEF_REL_TOLERANCE};
/// assert_eq!(1.0 / COEF_REL_TOLERANCE, 1_048_576.0); // 2⁻²⁰
/// let c = FixedCoef::from_f64(0.3, 0).ok_or("does not fit")?;
/// assert!((c.to_f64() - 0.3).abs() <= 0.3 * COEF_REL_TOLERANCE);
/// # Ok::<(), &str>(())
/// ```
pub const COEF_REL_TOLERANCE: f64 = 1.0 / 1_048_576.0;

/// Fractional bits of a signal (Q16.16).
///
/// ```
/// use evenkeel::q::SIGNAL_FRAC_BITS;
/// use fixed::types::I16F16;
/// assert_eq!(I16F16::ONE.to_bits(), 1 << SIGNAL_FRAC_BITS); // one LSB = 2⁻¹⁶
/// ```
pub const SIGNAL_FRAC_BITS: u32 = 16;

/// Fractional bits of an accumulator (Q32.32).
///
/// ```
/// use evenkeel::q::{ACCUM_FRAC_BITS, signal_to_accum};
/// use fixed::types::I16F16;
/// assert_eq!(signal_to_accum(I16F16::ONE).to_bits(), 1 << ACCUM_FRAC_BITS); // one LSB = 2⁻³²
/// ```
pub const ACCUM_FRAC_BITS: u32 = 32;

/// Largest coefficient shift.
///
/// ```
/// use evenkeel::{FixedCoef, q::MAX_SHIFT};
/// // 1e-12 · 2⁶² ≈ 4.6e6 is far below 2³¹: the shift is capped at 62.
/// let tiny = FixedCoef::from_f64(1e-12, 0).ok_or("does not fit")?;
/// assert_eq!(tiny.shift(), MAX_SHIFT);
/// assert!(FixedCoef::with_shift(0.0, MAX_SHIFT + 1).is_none());
/// # Ok::<(), &str>(())
/// ```
pub const MAX_SHIFT: u32 = 62;

/// A coefficient for the fixed-point backend: `mantissa · 2^-shift`.
///
/// Build it with [`FixedCoef::from_f64`] (exact power-of-two scaling and one
/// round-to-nearest, so the same on every target).
///
/// ```
/// use evenkeel::FixedCoef;
/// let c = FixedCoef::from_f64(0.1, 0).ok_or("does not fit")?;
/// assert!((c.to_f64() - 0.1).abs() < 1e-9);
/// # Ok::<(), &str>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct FixedCoef {
    mantissa: i32,
    shift: u8,
}

impl FixedCoef {
    /// The coefficient zero.
    ///
    /// ```
    /// use evenkeel::FixedCoef;
    /// use fixed::types::I16F16;
    /// assert_eq!(FixedCoef::ZERO.to_f64(), 0.0);
    /// assert_eq!(FixedCoef::ZERO.scale(I16F16::MAX), I16F16::ZERO);
    /// ```
    pub const ZERO: Self = Self {
        mantissa: 0,
        shift: 0,
    };

    /// Nearest coefficient to `value` whose shift is at least `min_shift`,
    /// with the largest shift (most precision) that keeps the mantissa in 31
    /// bits. `None` if `value` is not finite or needs a shift below
    /// `min_shift` (too large). Rounds to nearest, ties away from zero.
    ///
    /// ```
    /// use evenkeel::FixedCoef;
    /// let c = FixedCoef::from_f64(1500.0, 0).ok_or("too large")?;
    /// assert_eq!(c.to_f64(), 1500.0);
    /// assert!(FixedCoef::from_f64(f64::NAN, 0).is_none());
    /// assert!(FixedCoef::from_f64(40_000.0, 16).is_none());
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub const fn from_f64(value: f64, min_shift: u32) -> Option<Self> {
        if !value.is_finite() || min_shift > MAX_SHIFT {
            return None;
        }
        if value == 0.0 {
            return Some(Self {
                mantissa: 0,
                shift: min_shift as u8,
            });
        }
        let magnitude = if value < 0.0 { -value } else { value };
        // Largest shift with |value|·2^shift < 2^31, capped at MAX_SHIFT.
        let mut shift = MAX_SHIFT;
        loop {
            if magnitude * pow2(shift) < 2_147_483_648.0 || shift == 0 {
                break;
            }
            shift -= 1;
        }
        loop {
            let scaled = value * pow2(shift);
            let rounded = round_half_away(scaled);
            if rounded > -2_147_483_648.0 && rounded < 2_147_483_648.0 {
                if shift < min_shift {
                    return None;
                }
                return Some(Self {
                    mantissa: rounded as i32,
                    shift: shift as u8,
                });
            }
            if shift == 0 {
                return None;
            }
            // Rounding carried into bit 31: one bit less precision.
            shift -= 1;
        }
    }

    /// Nearest coefficient to `value` with exactly this `shift`. `None` if the
    /// mantissa does not fit 31 bits or `value` is not finite.
    ///
    /// Rounds to nearest, ties away from zero.
    ///
    /// ```
    /// use evenkeel::FixedCoef;
    /// let c = FixedCoef::with_shift(0.75, 2).ok_or("does not fit")?;
    /// assert_eq!((c.mantissa(), c.shift()), (3, 2));
    /// // ±0.625 · 2² = ±2.5 → ±3 (ties away from zero)
    /// assert_eq!(FixedCoef::with_shift(0.625, 2).map(FixedCoef::mantissa), Some(3));
    /// assert_eq!(FixedCoef::with_shift(-0.625, 2).map(FixedCoef::mantissa), Some(-3));
    /// assert!(FixedCoef::with_shift(1.0, 31).is_none()); // mantissa 2³¹ does not fit
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub const fn with_shift(value: f64, shift: u32) -> Option<Self> {
        if !value.is_finite() || shift > MAX_SHIFT {
            return None;
        }
        let rounded = round_half_away(value * pow2(shift));
        if rounded > -2_147_483_648.0 && rounded < 2_147_483_648.0 {
            Some(Self {
                mantissa: rounded as i32,
                shift: shift as u8,
            })
        } else {
            None
        }
    }

    /// The stored value as `f64` (exact).
    ///
    /// ```
    /// use evenkeel::FixedCoef;
    /// // 0.1 · 2²⁰ = 104 857.6 → mantissa 104 858; the stored value comes back exactly.
    /// let c = FixedCoef::with_shift(0.1, 20).ok_or("does not fit")?;
    /// assert_eq!(c.to_f64(), 104_858.0 / 1_048_576.0);
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub const fn to_f64(self) -> f64 {
        self.mantissa as f64 / pow2(self.shift as u32)
    }

    /// The raw mantissa.
    ///
    /// ```
    /// use evenkeel::FixedCoef;
    /// // 0.5 gets the largest shift that keeps the mantissa below 2³¹.
    /// let half = FixedCoef::from_f64(0.5, 0).ok_or("does not fit")?;
    /// assert_eq!(half.mantissa(), 1 << 30);
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub const fn mantissa(self) -> i32 {
        self.mantissa
    }

    /// The binary point position: value = mantissa · 2^-shift.
    ///
    /// ```
    /// use evenkeel::FixedCoef;
    /// // 1500 · 2²⁰ ≈ 1.57e9 < 2³¹ ≤ 1500 · 2²¹: shift 20.
    /// let c = FixedCoef::from_f64(1500.0, 0).ok_or("does not fit")?;
    /// assert_eq!((c.shift(), c.mantissa()), (20, 1500 << 20));
    /// assert!(FixedCoef::from_f64(1500.0, 21).is_none()); // needs a shift below 21
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub const fn shift(self) -> u32 {
        self.shift as u32
    }

    /// `self + (other − self)·frac` with `frac` a Q16.16 fraction in [0, 1];
    /// both ends must share one shift (the schedule builder ensures it),
    /// otherwise `self` is returned. Rounds to nearest, saturates.
    ///
    /// ```
    /// use evenkeel::FixedCoef;
    /// use fixed::types::I16F16;
    /// let lo = FixedCoef::with_shift(1.0, 28).ok_or("does not fit")?;
    /// let hi = FixedCoef::with_shift(3.0, 28).ok_or("does not fit")?;
    /// assert_eq!(lo.lerp(hi, I16F16::from_num(0.25)).to_f64(), 1.5);
    /// let other = FixedCoef::with_shift(3.0, 20).ok_or("does not fit")?;
    /// assert_eq!(lo.lerp(other, I16F16::from_num(0.5)), lo); // shifts differ
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub fn lerp(self, other: Self, frac: I16F16) -> Self {
        if self.shift != other.shift {
            return self;
        }
        let span = i64::from(other.mantissa).saturating_sub(i64::from(self.mantissa));
        // |span| < 2^32 and |frac| ≤ 2^31, so the product fits in i64.
        let step = round_shift(span.saturating_mul(i64::from(frac.to_bits())), 16);
        let mantissa = saturate_i32(i64::from(self.mantissa).saturating_add(step));
        Self {
            mantissa,
            shift: self.shift,
        }
    }

    /// `round(x · self)` as a Q16.16 signal, saturated.
    ///
    /// ```
    /// use evenkeel::FixedCoef;
    /// use fixed::types::I16F16;
    /// let half = FixedCoef::from_f64(0.5, 0).ok_or("does not fit")?;
    /// // ±3 LSB · 0.5 = ±1.5 LSB → 2 and −1 (ties toward +∞)
    /// assert_eq!(half.scale(I16F16::from_bits(3)).to_bits(), 2);
    /// assert_eq!(half.scale(I16F16::from_bits(-3)).to_bits(), -1);
    /// let big = FixedCoef::from_f64(1000.0, 0).ok_or("does not fit")?;
    /// assert_eq!(big.scale(I16F16::MAX), I16F16::MAX); // saturates
    /// # Ok::<(), &str>(())
    /// ```
    #[inline]
    #[must_use]
    pub fn scale(self, x: I16F16) -> I16F16 {
        I16F16::from_bits(saturate_i32(self.product(x.to_bits(), 0)))
    }

    /// `acc + round(x · self)` with the product rounded at Q32.32 precision,
    /// saturated. `self.shift()` must be at least 16 (configuration ensures
    /// it for every coefficient used this way); smaller shifts saturate.
    ///
    /// ```
    /// use evenkeel::FixedCoef;
    /// use fixed::types::{I16F16, I32F32};
    /// let k = FixedCoef::from_f64(1e-4, 16).ok_or("does not fit")?;
    /// // 1e-4 · 1 LSB = 6.55 Q32.32 LSB → 7: kept, although far below one signal LSB.
    /// let acc = k.scale_into(I32F32::ZERO, I16F16::from_bits(1));
    /// assert_eq!(acc.to_bits(), 7);
    /// assert_eq!(k.scale(I16F16::from_bits(1)), I16F16::ZERO); // lost at Q16.16
    /// # Ok::<(), &str>(())
    /// ```
    #[inline]
    #[must_use]
    pub fn scale_into(self, acc: I32F32, x: I16F16) -> I32F32 {
        let lift = ACCUM_FRAC_BITS - SIGNAL_FRAC_BITS;
        let product = if u32::from(self.shift) >= lift {
            self.product(x.to_bits(), lift)
        } else {
            // Not produced by configuration; keep the promise of no wrap.
            i64::from(x.to_bits().signum()) * i64::MAX
        };
        I32F32::from_bits(acc.to_bits().saturating_add(product))
    }

    /// `round(x · mantissa / 2^(shift − lift))`; `lift ≤ shift`.
    ///
    /// Branch-free: `shift ≤ 62` is an invariant of the type (every
    /// constructor enforces it), so `s = shift − lift` is in 0..=62,
    /// `half = 2^s / 2` is 0 for `s = 0`, the product is exact
    /// (|x · mantissa| ≤ 2^31 · 2^31 = 2^62) and `product + half` stays
    /// below 2^62 + 2^61 < 2^63: the wrapping operations never wrap.
    #[inline]
    fn product(self, x: i32, lift: u32) -> i64 {
        let exact = i64::from(x).wrapping_mul(i64::from(self.mantissa));
        let s = u32::from(self.shift).saturating_sub(lift) & 63;
        let half = (1i64 << s) >> 1;
        exact.wrapping_add(half) >> s
    }
}

/// `floor(p / 2^s + 1/2)`: round to nearest, ties toward +∞, for
/// `s ≤ 62` and `|p| ≤ 2^62` (then `p + half` cannot overflow); larger inputs
/// saturate instead of wrapping.
///
/// ```
/// use evenkeel::q::round_shift;
/// assert_eq!(round_shift(5, 1), 3); // 2.5 → 3
/// assert_eq!(round_shift(-5, 1), -2); // −2.5 → −2: ties toward +∞
/// assert_eq!(round_shift(-7, 2), -2); // −1.75 → −2
/// assert!(round_shift(i64::MAX, 1) > 0); // saturates, no wrap
/// ```
#[inline]
#[must_use]
pub const fn round_shift(p: i64, s: u32) -> i64 {
    if s == 0 {
        return p;
    }
    let s = if s > 62 { 62 } else { s };
    let half = 1i64 << (s - 1);
    p.saturating_add(half) >> s
}

/// Saturate an `i64` into `i32`.
///
/// ```
/// use evenkeel::q::saturate_i32;
/// assert_eq!(saturate_i32(-5), -5);
/// assert_eq!(saturate_i32(1 << 40), i32::MAX);
/// assert_eq!(saturate_i32(-(1 << 40)), i32::MIN);
/// ```
#[inline]
#[must_use]
pub const fn saturate_i32(x: i64) -> i32 {
    // Compiles to two conditional moves.
    let clamped = if x > i32::MAX as i64 {
        i32::MAX as i64
    } else {
        x
    };
    let clamped = if clamped < i32::MIN as i64 {
        i32::MIN as i64
    } else {
        clamped
    };
    clamped as i32
}

/// Round a Q32.32 accumulator to the nearest Q16.16 signal (ties toward +∞),
/// saturating.
///
/// ```
/// use evenkeel::q::accum_to_signal;
/// use fixed::types::{I16F16, I32F32};
/// // 0x8000 Q32.32 LSB is half a Q16.16 LSB: ±½ → 1 and 0 (ties toward +∞).
/// assert_eq!(accum_to_signal(I32F32::from_bits(0x8000)).to_bits(), 1);
/// assert_eq!(accum_to_signal(I32F32::from_bits(-0x8000)).to_bits(), 0);
/// assert_eq!(accum_to_signal(I32F32::from_num(1e6)), I16F16::MAX); // saturates
/// ```
#[inline]
#[must_use]
pub fn accum_to_signal(acc: I32F32) -> I16F16 {
    I16F16::from_bits(saturate_i32(round_shift(acc.to_bits(), 16)))
}

/// Widen a Q16.16 signal into a Q32.32 accumulator (exact).
///
/// ```
/// use evenkeel::q::{accum_to_signal, signal_to_accum};
/// use fixed::types::I16F16;
/// assert_eq!(signal_to_accum(I16F16::from_bits(1)).to_bits(), 1 << 16);
/// let x = I16F16::from_num(-2.25);
/// assert_eq!(accum_to_signal(signal_to_accum(x)), x); // round trip is exact
/// ```
#[inline]
#[must_use]
pub fn signal_to_accum(x: I16F16) -> I32F32 {
    I32F32::from_bits(i64::from(x.to_bits()) << 16)
}

/// Nearest Q16.16 value to `value` (ties away from zero), or `None` if it is
/// not finite or outside the Q16.16 range.
///
/// ```
/// use evenkeel::q::signal_from_f64;
/// use fixed::types::I16F16;
/// assert_eq!(signal_from_f64(1.5).map(I16F16::to_bits), Some(98_304));
/// // ±½ LSB → ±1 LSB (ties away from zero)
/// assert_eq!(signal_from_f64(0.5 / 65_536.0).map(I16F16::to_bits), Some(1));
/// assert_eq!(signal_from_f64(-0.5 / 65_536.0).map(I16F16::to_bits), Some(-1));
/// assert_eq!(signal_from_f64(32_768.0), None); // out of range
/// ```
#[must_use]
pub const fn signal_from_f64(value: f64) -> Option<I16F16> {
    if !value.is_finite() {
        return None;
    }
    let rounded = round_half_away(value * 65_536.0);
    if rounded >= -2_147_483_648.0 && rounded <= 2_147_483_647.0 {
        Some(I16F16::from_bits(rounded as i32))
    } else {
        None
    }
}

/// 2^n for n in 0..=62, exact.
const fn pow2(n: u32) -> f64 {
    (1u64 << n) as f64
}

/// Round to nearest, ties away from zero, for |x| < 2^62 (exact in f64:
/// the fraction of a value that large is computed without error).
const fn round_half_away(x: f64) -> f64 {
    if !(x > -4.0e18 && x < 4.0e18) {
        return x;
    }
    let whole = x as i64 as f64;
    let frac = x - whole;
    if frac >= 0.5 {
        whole + 1.0
    } else if frac <= -0.5 {
        whole - 1.0
    } else {
        whole
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_shift_table() {
        // (p, s, expected floor(p/2^s + 1/2)), worked by hand.
        let table: [(i64, u32, i64); 8] = [
            (5, 1, 3),   // 2.5 → 3 (tie toward +∞)
            (-5, 1, -2), // −2.5 → −2 (tie toward +∞)
            (7, 2, 2),   // 1.75 → 2
            (-7, 2, -2), // −1.75 → −2
            (6, 2, 2),   // 1.5 → 2
            (1, 1, 1),   // 0.5 → 1
            (-1, 1, 0),  // −0.5 → 0
            (123, 0, 123),
        ];
        for (p, s, want) in table {
            assert_eq!(round_shift(p, s), want, "p={p} s={s}");
        }
    }

    #[test]
    fn round_shift_extremes_do_not_wrap() {
        assert_eq!(round_shift(1 << 62, 62), 1);
        assert_eq!(round_shift(-(1 << 62), 62), -1);
        assert!(round_shift(i64::MAX, 1) > 0);
        assert!(round_shift(i64::MIN, 1) < 0);
    }

    #[test]
    fn coefficient_keeps_31_bits() {
        for value in [1e-9, 3.0e-4, 0.1, 0.999_999, 1.0, 1234.5678, 2.0e9, -0.37] {
            let c = FixedCoef::from_f64(value, 0).expect("fits");
            let rel = ((c.to_f64() - value) / value).abs();
            assert!(rel <= COEF_REL_TOLERANCE / 256.0, "{value}: rel {rel}");
            assert!(c.mantissa().unsigned_abs() >= 1 << 29, "{value} underuses");
        }
    }

    #[test]
    fn coefficient_rejects_what_does_not_fit() {
        assert!(FixedCoef::from_f64(f64::INFINITY, 0).is_none());
        assert!(FixedCoef::from_f64(3.0e9, 0).is_none());
        assert!(FixedCoef::from_f64(40_000.0, 16).is_none());
        assert!(FixedCoef::from_f64(30_000.0, 16).is_some());
    }

    #[test]
    fn rounding_carry_reduces_shift() {
        // 2^31 − 0.4 rounds up to 2^31 at shift 0: must not fit.
        assert!(FixedCoef::from_f64(2_147_483_647.6, 0).is_none());
        // Just below 1.0 with the maximum shift for 1.0-range values.
        let c = FixedCoef::from_f64(1.0 - 1e-12, 0).expect("fits");
        assert!((c.to_f64() - 1.0).abs() < 1e-9);
    }

    #[test]
    fn scale_rounds_to_nearest() {
        let half = FixedCoef::from_f64(0.5, 0).expect("fits");
        // 3 LSB · 0.5 = 1.5 LSB → 2 LSB; −3 LSB · 0.5 = −1.5 → −1 (ties to +∞).
        assert_eq!(half.scale(I16F16::from_bits(3)).to_bits(), 2);
        assert_eq!(half.scale(I16F16::from_bits(-3)).to_bits(), -1);
    }

    #[test]
    fn scale_saturates() {
        let big = FixedCoef::from_f64(1000.0, 0).expect("fits");
        assert_eq!(big.scale(I16F16::MAX), I16F16::MAX);
        assert_eq!(big.scale(I16F16::MIN), I16F16::MIN);
    }

    #[test]
    fn tiny_increments_accumulate() {
        // 1e-4 · 1 LSB = 1e-4 · 2^16 Q32.32 LSB ≈ 6.55 → rounds to 7.
        let k = FixedCoef::from_f64(1e-4, 16).expect("fits");
        let acc = k.scale_into(I32F32::ZERO, I16F16::from_bits(1));
        assert_eq!(acc.to_bits(), 7);
    }

    #[test]
    fn signal_conversion() {
        assert_eq!(signal_from_f64(1.5).map(I16F16::to_bits), Some(98_304));
        assert_eq!(signal_from_f64(-32_768.0), Some(I16F16::MIN));
        assert_eq!(signal_from_f64(32_768.0), None);
        assert_eq!(signal_from_f64(f64::NAN), None);
        let acc = signal_to_accum(I16F16::from_num(-2.25));
        assert_eq!(accum_to_signal(acc), I16F16::from_num(-2.25));
    }

    #[test]
    fn lerp_midpoint() {
        let lo = FixedCoef::with_shift(1.0, 28).expect("fits");
        let hi = FixedCoef::with_shift(3.0, 28).expect("fits");
        let mid = lo.lerp(hi, I16F16::from_num(0.5));
        assert_eq!(mid.to_f64(), 2.0);
        assert_eq!(lo.lerp(hi, I16F16::ZERO), lo);
        assert_eq!(lo.lerp(hi, I16F16::ONE), hi);
    }
}
