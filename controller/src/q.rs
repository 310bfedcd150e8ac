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
        // The largest shift whose rounded mantissa fits 31 bits and a sign:
        // down from MAX_SHIFT, one bit of precision at a time (at most 63
        // multiplications by a power of two, all exact).
        let mut shift = MAX_SHIFT;
        loop {
            let rounded = round_half_away(value * pow2(shift));
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

    /// The coefficient `mantissa · 2^-shift` from its stored parts (what
    /// [`FixedCoef::mantissa`] and [`FixedCoef::shift`] give), with no
    /// floating point. `None` if `shift` is above [`MAX_SHIFT`].
    ///
    /// ```
    /// use evenkeel::FixedCoef;
    /// let c = FixedCoef::from_parts(3, 2).ok_or("shift too large")?;
    /// assert_eq!(c, FixedCoef::with_shift(0.75, 2).ok_or("does not fit")?);
    /// assert!(FixedCoef::from_parts(1, 63).is_none());
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub const fn from_parts(mantissa: i32, shift: u32) -> Option<Self> {
        if shift > MAX_SHIFT {
            return None;
        }
        Some(Self {
            mantissa,
            shift: shift as u8,
        })
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
        let r = arith::rounded(x.to_bits(), self.mantissa, u32::from(self.shift));
        I16F16::from_bits(r)
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
        let shift = u32::from(self.shift);
        if shift < lift {
            return coarse_scale_into(acc, x);
        }
        let product = arith::rounded_wide(x.to_bits(), self.mantissa, shift - lift);
        I32F32::from_bits(add_product(acc.to_bits(), product))
    }
}

impl FixedCoef {
    /// The same mantissa read with its binary point at `shift` (≤ 62: the
    /// shifts of a `Shape`). Used by compile-time layouts, whose
    /// configurations store every coefficient at that very shift, so the
    /// value is unchanged and the shift becomes a constant of the step.
    #[inline(always)]
    #[must_use]
    pub(crate) const fn at_shift(self, shift: u32) -> Self {
        Self {
            mantissa: self.mantissa,
            shift: shift as u8,
        }
    }

    /// `acc + round(x · self)` at Q32.32 precision without the overflow
    /// check of [`FixedCoef::scale_into`], for the controller's own state.
    ///
    /// Bound (why no check is needed): configuration gives every
    /// coefficient used this way a shift ≥ 16, so the rounded product
    /// x·m / 2^(s−16) has magnitude < 2³¹ · 2³¹ / 2⁰ = 2⁶²; the integrator and
    /// filter states the controller passes lie within ±1.5·2⁴⁸ (three output
    /// spans of at most 2³² Q16.16 LSB each, times 2¹⁶), and at most one
    /// product of magnitude up to 2⁶² plus one below 2⁴⁸ (Ts/Tt ≤ 1 on a
    /// saturated signal difference) is added before the result is clamped
    /// back, so every partial sum stays below 2⁶² + 2⁴⁹ + 2⁴⁸ < 2⁶³: the
    /// wrapping sum is exact. For other inputs the result is unspecified
    /// but never panics. The test `integrate_matches_scale_into_within_bounds`
    /// checks it against `scale_into` at the bounds.
    #[inline(always)]
    #[must_use]
    pub(crate) fn integrate(self, acc: I32F32, x: I16F16) -> I32F32 {
        let lift = ACCUM_FRAC_BITS - SIGNAL_FRAC_BITS;
        let shift = u32::from(self.shift).saturating_sub(lift);
        let product = arith::rounded_wide(x.to_bits(), self.mantissa, shift);
        I32F32::from_bits(acc.to_bits().wrapping_add(product))
    }

    /// [`FixedCoef::scale`] for a coefficient whose shift is a constant of
    /// the step (a compile-time layout's). Same result for a mantissa
    /// above `i32::MIN` (every validated configuration's; for that one the
    /// result is unspecified, never a panic); on Armv6-M the rounding half
    /// is added inside the product (see `words::mul_halves_rounding`),
    /// elsewhere it is [`FixedCoef::scale`].
    #[inline(always)]
    #[must_use]
    pub(crate) fn scale_at(self, x: I16F16) -> I16F16 {
        let r = arith::rounded_at(x.to_bits(), self.mantissa, u32::from(self.shift));
        I16F16::from_bits(r)
    }

    /// [`FixedCoef::integrate`] for a coefficient whose shift is a constant
    /// of the step (see [`FixedCoef::scale_at`]). Same result.
    #[inline(always)]
    #[must_use]
    pub(crate) fn integrate_at(self, acc: I32F32, x: I16F16) -> I32F32 {
        let lift = ACCUM_FRAC_BITS - SIGNAL_FRAC_BITS;
        let shift = u32::from(self.shift).saturating_sub(lift);
        let product = arith::rounded_wide_at(x.to_bits(), self.mantissa, shift);
        I32F32::from_bits(acc.to_bits().wrapping_add(product))
    }
}

// The rounded product floor(x · m / 2^s + 1/2) of a coefficient and a
// signal, and the rounding of an accumulator to a signal, twice: in 32-bit
// words for 32-bit targets, in native 64-bit arithmetic for 64-bit hosts.
// Both compute exactly the `round_shift` contract (the test
// `word_products_match_the_64_bit_definition` checks both against it).
#[cfg(target_pointer_width = "64")]
use native as arith;
#[cfg(not(target_pointer_width = "64"))]
use words as arith;

/// 64-bit hosts: one multiply, one add, one shift.
#[cfg_attr(not(target_pointer_width = "64"), allow(dead_code))]
mod native {
    /// floor(x · m / 2^s + 1/2) saturated into `i32`, `s ≤ 62`.
    #[inline(always)]
    pub(super) fn rounded(x: i32, m: i32, s: u32) -> i32 {
        super::saturate_i32(rounded_wide(x, m, s))
    }

    /// floor(x · m / 2^s + 1/2), `s ≤ 62`: |x · m| < 2⁶² and the half is at
    /// most 2⁶¹, so nothing wraps.
    #[inline(always)]
    pub(super) fn rounded_wide(x: i32, m: i32, s: u32) -> i64 {
        let s = s & 63;
        let half = (1i64 << s) >> 1;
        i64::from(x).wrapping_mul(i64::from(m)).wrapping_add(half) >> s
    }

    /// floor(acc / 2¹⁶ + 1/2) saturated into `i32` (|acc / 2¹⁶| < 2⁴⁷: the
    /// sum cannot wrap).
    #[inline(always)]
    pub(super) fn narrow_accum(acc: i64) -> i32 {
        super::saturate_i32((acc >> 16) + ((acc >> 15) & 1))
    }

    /// [`rounded`] (the host has one way to compute it).
    #[inline(always)]
    pub(super) fn rounded_at(x: i32, m: i32, s: u32) -> i32 {
        rounded(x, m, s)
    }

    /// [`rounded_wide`].
    #[inline(always)]
    pub(super) fn rounded_wide_at(x: i32, m: i32, s: u32) -> i64 {
        rounded_wide(x, m, s)
    }
}

/// 32-bit targets: `shift ≤ 62` is an invariant of `FixedCoef` (every
/// constructor enforces it) and |mantissa| < 2³¹, so the exact product
/// P = x · mantissa satisfies |P| < 2⁶², i.e. its high word lies in
/// [−2³⁰, 2³⁰]. Only 32-bit shifts by amounts below 32 are used: on a 32-bit
/// core a 64-bit shift by a run-time amount costs a dozen instructions (or a
/// library call on Armv6-M).
#[cfg_attr(target_pointer_width = "64", allow(dead_code))]
mod words {
    /// floor(x · m / 2^s + 1/2) saturated into `i32`, `s ≤ 62`.
    #[inline(always)]
    pub(super) fn rounded(x: i32, m: i32, s: u32) -> i32 {
        let (lo, hi) = mul_wide(x, m);
        if s >= 32 {
            round_high(lo, hi, s - 32)
        } else {
            let (lo, hi) = round_low(lo, hi, s);
            narrow_words(lo, hi)
        }
    }

    /// floor(x · m / 2^s + 1/2), `s ≤ 62`.
    #[inline(always)]
    pub(super) fn rounded_wide(x: i32, m: i32, s: u32) -> i64 {
        let (lo, hi) = mul_wide(x, m);
        if s >= 32 {
            i64::from(round_high(lo, hi, s - 32))
        } else {
            let (lo, hi) = round_low(lo, hi, s);
            (i64::from(hi) << 32) | i64::from(lo)
        }
    }

    /// [`rounded`] for a shift `s` that is a constant where it is inlined
    /// (a compile-time layout's step): on Armv6-M [`rounded_folded`], which
    /// folds the rounding half into the product; elsewhere [`rounded`].
    #[inline(always)]
    pub(super) fn rounded_at(x: i32, m: i32, s: u32) -> i32 {
        if cfg!(all(target_arch = "arm", not(target_has_atomic = "32"))) {
            rounded_folded(x, m, s)
        } else {
            rounded(x, m, s)
        }
    }

    /// [`rounded_wide`] for a constant shift (see [`rounded_at`]).
    #[inline(always)]
    pub(super) fn rounded_wide_at(x: i32, m: i32, s: u32) -> i64 {
        if cfg!(all(target_arch = "arm", not(target_has_atomic = "32"))) {
            rounded_wide_folded(x, m, s)
        } else {
            rounded_wide(x, m, s)
        }
    }

    /// [`rounded`] from [`mul_halves_rounding`]: P + 2^(s−1) in words,
    /// then only shifts (for s ≥ 32 the high word alone).
    #[inline(always)]
    pub(super) fn rounded_folded(x: i32, m: i32, s: u32) -> i32 {
        let (lo, hi) = mul_halves_rounding(x, m, s);
        if s >= 32 {
            // floor((P + half) / 2^s) = hi >> (s − 32): the low word is
            // below 2³² ≤ 2^s. |P + half| < 2⁶³, so it fits `i32`.
            hi >> ((s - 32) & 31)
        } else if s == 31 {
            // No saturation: |x| ≤ 2³¹ and |m| ≤ 2³¹ − 1 give
            // |P| ≤ 2⁶² − 2³¹, so the result lies in [−2³¹ + 1, 2³¹ − 1].
            ((lo >> 31) | ((hi as u32) << 1)) as i32
        } else {
            let (lo, hi) = shift_words(lo, hi, s);
            narrow_words(lo, hi)
        }
    }

    /// [`rounded_wide`] from [`mul_halves_rounding`].
    #[inline(always)]
    pub(super) fn rounded_wide_folded(x: i32, m: i32, s: u32) -> i64 {
        let (lo, hi) = mul_halves_rounding(x, m, s);
        if s >= 32 {
            i64::from(hi >> ((s - 32) & 31))
        } else {
            let (lo, hi) = shift_words(lo, hi, s);
            (i64::from(hi) << 32) | i64::from(lo)
        }
    }

    /// floor(V / 2^s) for V = hi·2³² + lo, s ≤ 31, as (low word, high word).
    #[inline(always)]
    fn shift_words(lo: u32, hi: i32, s: u32) -> (u32, i32) {
        let s = s & 31;
        // (hi << 1) << (31 − s) is hi << (32 − s), also for s = 0.
        let lo = (lo >> s) | (((hi as u32) << 1) << (31 - s));
        (lo, hi >> s)
    }

    /// The exact sum `x · m + 2^(s−1)` (zero added for s = 0), `s ≤ 62`, as
    /// (low word, high word): [`mul_halves`] with the rounding half added to
    /// one of its four partial products, where it cannot overflow it, instead
    /// of a 64-bit add afterwards. With x_lo, m_lo < 2¹⁶ and |x_hi|, |m_hi| ≤
    /// 2¹⁵: low ≤ (2¹⁶ − 1)² = 2³² − 2¹⁷ + 1 takes 2^(s−1) ≤ 2¹⁶ (s ≤ 17);
    /// cross_a = x_lo·m_hi ≤ 65 535 · 32 767 = 2³¹ − 98 303 takes
    /// 2^(s−17) ≤ 2¹⁶ (18 ≤ s ≤ 33); |high| ≤ 2³⁰ takes 2^(s−33) ≤ 2²⁹
    /// (s ≥ 34). The sum of the parts is then P + 2^(s−1) exactly, and
    /// |P| < 2⁶², 2^(s−1) ≤ 2⁶¹: nothing wraps. Compiled everywhere so that
    /// the host tests check it; only Armv6-M uses it.
    #[cfg_attr(
        not(all(target_arch = "arm", not(target_has_atomic = "32"))),
        allow(dead_code)
    )]
    #[inline(always)]
    pub(super) fn mul_halves_rounding(x: i32, m: i32, s: u32) -> (u32, i32) {
        let (x_lo, x_hi) = (x & 0xffff, x >> 16);
        let (m_lo, m_hi) = (m & 0xffff, m >> 16);
        let mut low = (x_lo as u32).wrapping_mul(m_lo as u32);
        let mut high = x_hi.wrapping_mul(m_hi);
        let mut cross_a = x_lo.wrapping_mul(m_hi);
        let cross_b = x_hi.wrapping_mul(m_lo);
        if s == 0 {
        } else if s <= 17 {
            low = low.wrapping_add(1 << ((s - 1) & 31));
        } else if s <= 33 {
            cross_a = cross_a.wrapping_add(1 << ((s - 17) & 31));
        } else {
            high = high.wrapping_add(1 << ((s - 33) & 31));
        }
        // As in `mul_halves`.
        let (lo, carry_a) = low.overflowing_add((cross_a as u32) << 16);
        let (lo, carry_b) = lo.overflowing_add((cross_b as u32) << 16);
        let hi = high
            .wrapping_add(cross_a >> 16)
            .wrapping_add(cross_b >> 16)
            .wrapping_add(i32::from(carry_a))
            .wrapping_add(i32::from(carry_b));
        (lo, hi)
    }

    /// floor(acc / 2¹⁶ + 1/2) saturated into `i32`: floor(acc / 2¹⁶) plus bit
    /// 15 of acc, in 32-bit words (a 64-bit `round_shift` costs about twice as
    /// much on Cortex-M).
    #[inline(always)]
    pub(super) fn narrow_accum(acc: i64) -> i32 {
        let (lo, hi) = (acc as u32, (acc >> 32) as i32);
        let floor = ((lo >> 16) | ((hi as u32) << 16)) as i32;
        let round = ((lo >> 15) & 1) as i32;
        // floor(acc / 2¹⁶) fits i32 exactly when hi fits i16.
        if i32::from(hi as i16) == hi {
            floor.saturating_add(round)
        } else if hi < 0 {
            i32::MIN
        } else {
            i32::MAX
        }
    }

    /// The exact product `x · m` as (low word, high word).
    #[cfg(not(all(target_arch = "arm", not(target_has_atomic = "32"))))]
    #[inline(always)]
    pub(super) fn mul_wide(x: i32, m: i32) -> (u32, i32) {
        // One `smull` on Armv7-M.
        let p = i64::from(x).wrapping_mul(i64::from(m));
        (p as u32, (p >> 32) as i32)
    }

    /// The exact product `x · m` as (low word, high word), on Armv6-M
    /// (Cortex-M0/M0+/M1, recognised by its lack of 32-bit atomics), which
    /// has no 32 × 32 → 64-bit multiply: LLVM would call the 64 × 64-bit
    /// `__aeabi_lmul` (about 45 instructions with the call); [`mul_halves`]
    /// is about 20, inline.
    #[cfg(all(target_arch = "arm", not(target_has_atomic = "32")))]
    #[inline(always)]
    pub(super) fn mul_wide(x: i32, m: i32) -> (u32, i32) {
        mul_halves(x, m)
    }

    /// The exact product `x · m` as (low word, high word), from four 16 × 16-bit
    /// multiplies. Compiled everywhere so that the host tests check it
    /// (`word_products_match_the_64_bit_definition`); only Armv6-M uses it.
    #[cfg_attr(
        not(all(target_arch = "arm", not(target_has_atomic = "32"))),
        allow(dead_code)
    )]
    #[inline(always)]
    pub(super) fn mul_halves(x: i32, m: i32) -> (u32, i32) {
        let (x_lo, x_hi) = (x & 0xffff, x >> 16);
        let (m_lo, m_hi) = (m & 0xffff, m >> 16);
        // x = x_hi·2¹⁶ + x_lo with 0 ≤ x_lo < 2¹⁶ and |x_hi| ≤ 2¹⁵ (same for m):
        // low·low < 2³² (unsigned), |cross terms| < 2³¹, |high·high| ≤ 2³⁰.
        let low = (x_lo as u32).wrapping_mul(m_lo as u32);
        let high = x_hi.wrapping_mul(m_hi);
        let cross_a = x_lo.wrapping_mul(m_hi);
        let cross_b = x_hi.wrapping_mul(m_lo);
        // P = high·2³² + (cross_a + cross_b)·2¹⁶ + low; each cross term is
        // added as (its low half << 16) into the low word, carry and its high
        // half into the high word. |P| < 2⁶³: nothing wraps. (Written with
        // 64-bit sums instead, this costs Armv6-M 16 more instructions per
        // step: measured with boards/run.)
        let (lo, carry_a) = low.overflowing_add((cross_a as u32) << 16);
        let (lo, carry_b) = lo.overflowing_add((cross_b as u32) << 16);
        let hi = high
            .wrapping_add(cross_a >> 16)
            .wrapping_add(cross_b >> 16)
            .wrapping_add(i32::from(carry_a))
            .wrapping_add(i32::from(carry_b));
        (lo, hi)
    }

    /// floor(P / 2^(32 + t) + 1/2) for P = hi·2³² + lo with |P| < 2⁶², t ≤ 30.
    /// The result always fits `i32`.
    #[inline(always)]
    pub(super) fn round_high(lo: u32, hi: i32, t: u32) -> i32 {
        // q = floor(P / 2³¹), |q| < 2³¹ because |P| < 2⁶².
        let q = hi.wrapping_shl(1) | (lo >> 31) as i32;
        // floor((P + 2^(31+t)) / 2^(32+t)) = floor((floor(q / 2^t) + 1) / 2).
        let w = q >> (t & 31);
        (w >> 1) + (w & 1)
    }

    /// floor(P / 2^s + 1/2) for P = hi·2³² + lo with |P| < 2⁶², s ≤ 31, as
    /// (low word, high word).
    #[inline(always)]
    pub(super) fn round_low(lo: u32, hi: i32, s: u32) -> (u32, i32) {
        let s = s & 31;
        let half = (1u32 << s) >> 1; // 2^(s−1), or 0 for s = 0
        // One 64-bit add (`adds`/`adc` on Armv7-M): |P| < 2⁶², so adding
        // at most 2³⁰ cannot wrap.
        let sum = ((i64::from(hi) << 32) | i64::from(lo)).wrapping_add(i64::from(half));
        let (lo, hi) = (sum as u32, (sum >> 32) as i32);
        // (hi << 1) << (31 − s) is hi << (32 − s), also for s = 0.
        let lo = (lo >> s) | (((hi as u32) << 1) << (31 - s));
        (lo, hi >> s)
    }

    /// The 64-bit value hi·2³² + lo saturated into `i32`.
    #[inline(always)]
    pub(super) fn narrow_words(lo: u32, hi: i32) -> i32 {
        let lo = lo as i32;
        if hi == lo >> 31 {
            lo
        } else if hi < 0 {
            i32::MIN
        } else {
            i32::MAX
        }
    }
}

/// `acc + product`, saturating, for |product| < 2⁶² (every rounded product
/// is). If also |acc| ≤ 2⁶² (top two bits equal; always so for the
/// controller's integrator and filter state) the plain sum cannot wrap, and
/// the 64-bit saturating add (about ten instructions on Armv7-M, fourteen on
/// Armv6-M) is only needed otherwise.
#[inline(always)]
fn add_product(acc: i64, product: i64) -> i64 {
    if (acc >> 62) == (acc >> 63) {
        acc.wrapping_add(product)
    } else {
        saturating_sum(acc, product)
    }
}

#[cold]
#[inline(never)]
fn saturating_sum(acc: i64, product: i64) -> i64 {
    acc.saturating_add(product)
}

/// `scale_into` for a coefficient with a shift below 16 (not produced by
/// configuration): the product counts as ±∞, so the sum saturates and
/// nothing wraps.
#[cold]
#[inline(never)]
fn coarse_scale_into(acc: I32F32, x: I16F16) -> I32F32 {
    let product = match x.to_bits() {
        0 => 0,
        1.. => i64::MAX,
        _ => -i64::MAX,
    };
    I32F32::from_bits(acc.to_bits().saturating_add(product))
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
    I16F16::from_bits(arith::narrow_accum(acc.to_bits()))
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

/// Nearest Q16.16 value to `value` with ties to even, saturating at the
/// Q16.16 range; NaN gives zero (the same as `I16F16::saturating_from_num`,
/// usable in `const` context).
///
/// ```
/// use evenkeel::q::signal_nearest_even;
/// use fixed::types::I16F16;
/// assert_eq!(signal_nearest_even(1.5 / 65_536.0).to_bits(), 2);
/// assert_eq!(signal_nearest_even(2.5 / 65_536.0).to_bits(), 2); // tie to even
/// assert_eq!(signal_nearest_even(-2.5 / 65_536.0).to_bits(), -2);
/// assert_eq!(signal_nearest_even(1.0e9), I16F16::MAX);
/// assert_eq!(signal_nearest_even(f64::NAN), I16F16::ZERO);
/// ```
#[must_use]
pub const fn signal_nearest_even(value: f64) -> I16F16 {
    if value.is_nan() {
        return I16F16::ZERO;
    }
    let scaled = value * 65_536.0;
    if scaled >= 2_147_483_647.0 {
        return I16F16::MAX;
    }
    if scaled <= -2_147_483_648.0 {
        return I16F16::MIN;
    }
    // |scaled| < 2³¹: the fraction is exact in f64.
    let whole = scaled as i64; // toward zero
    let frac = scaled - whole as f64;
    let rounded = if frac > 0.5 || (frac == 0.5 && whole % 2 != 0) {
        whole + 1
    } else if frac < -0.5 || (frac == -0.5 && whole % 2 != 0) {
        whole - 1
    } else {
        whole
    };
    I16F16::from_bits(saturate_i32(rounded))
}

/// The gain schedule's interpolation fraction (`Backend::schedule_fraction`
/// for `I16F16`): `(at − from) · c`, nearest, ties toward +∞, clamped to
/// [0, 1]. The difference is exact: |at − from| < 2³² and |mantissa| < 2³¹,
/// so the product fits in `i64`. Wherever the difference fits Q16.16 this
/// is the saturating `(at − from).scale(c)` clamped; a segment wider than
/// 32 768 no longer saturates it.
///
/// ```
/// use evenkeel::{Backend, FixedCoef};
/// use fixed::types::I16F16;
/// let c = FixedCoef::from_f64(1.0 / 60_000.0, 0).ok_or("does not fit")?;
/// let (from, at) = (I16F16::from_num(-30_000), I16F16::from_num(10_000));
/// let frac = I16F16::schedule_fraction(at, from, c);
/// assert!((frac.to_num::<f64>() - 40_000.0 / 60_000.0).abs() < 1e-4);
/// # Ok::<(), &str>(())
/// ```
#[must_use]
pub(crate) fn schedule_fraction(at: I16F16, from: I16F16, c: FixedCoef) -> I16F16 {
    let d = i64::from(at.to_bits()).wrapping_sub(i64::from(from.to_bits()));
    let f = round_shift(d.saturating_mul(i64::from(c.mantissa)), u32::from(c.shift));
    let one = 1_i64 << SIGNAL_FRAC_BITS;
    let f = if f < 0 {
        0
    } else if f > one {
        one
    } else {
        f
    };
    I16F16::from_bits(saturate_i32(f))
}

/// Two coefficients with one shift, so that they can be interpolated: the
/// finer of their natural shifts that holds both (the smaller one), at
/// least `min_shift`; a zero takes the other's. `None` if either does not
/// fit.
///
/// ```
/// use evenkeel::q::coef_pair;
/// let (a, b) = coef_pair(0.5, 3.0, 0).ok_or("does not fit")?;
/// assert_eq!((a.shift(), b.shift()), (29, 29));
/// # Ok::<(), &str>(())
/// ```
#[must_use]
pub const fn coef_pair(a: f64, b: f64, min_shift: u32) -> Option<(FixedCoef, FixedCoef)> {
    let (Some(ca), Some(cb)) = (
        FixedCoef::from_f64(a, min_shift),
        FixedCoef::from_f64(b, min_shift),
    ) else {
        return None;
    };
    let shift = common_shift(a, b, ca.shift as u32, cb.shift as u32, min_shift);
    match (
        FixedCoef::with_shift(a, shift),
        FixedCoef::with_shift(b, shift),
    ) {
        (Some(x), Some(y)) => Some((x, y)),
        _ => None,
    }
}

/// The shift a pair of coefficients shares, from their natural shifts `sa`
/// and `sb`: the smaller (finer that holds both), a zero's taken from the
/// other, `min_shift` for two zeros. Both fixed formats' pairs use it.
pub(crate) const fn common_shift(a: f64, b: f64, sa: u32, sb: u32, min_shift: u32) -> u32 {
    match (a != 0.0, b != 0.0) {
        (true, true) => {
            if sa < sb {
                sa
            } else {
                sb
            }
        }
        (true, false) => sa,
        (false, true) => sb,
        (false, false) => min_shift,
    }
}

/// Two coefficients at exactly `shift` (a compile-time layout's format).
/// `None` if either does not fit.
///
/// ```
/// use evenkeel::q::coef_pair_at;
/// let (a, b) = coef_pair_at(0.5, 3.0, 20).ok_or("does not fit")?;
/// assert_eq!((a.mantissa(), b.mantissa()), (1 << 19, 3 << 20));
/// # Ok::<(), &str>(())
/// ```
#[must_use]
pub const fn coef_pair_at(a: f64, b: f64, shift: u32) -> Option<(FixedCoef, FixedCoef)> {
    match (
        FixedCoef::with_shift(a, shift),
        FixedCoef::with_shift(b, shift),
    ) {
        (Some(x), Some(y)) => Some((x, y)),
        _ => None,
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

    /// Shifts beyond the contract (s > 62) act as 62: no shift overflow.
    #[test]
    fn round_shift_clamps_large_shifts() {
        for s in [63, 64, 65, 200, u32::MAX] {
            assert_eq!(round_shift(1 << 62, s), 1, "s={s}");
            assert_eq!(round_shift(-(3 << 61), s), -1, "s={s}");
        }
    }

    /// Conversions round to nearest with ties away from zero, not toward
    /// zero (the `as` cast alone would truncate).
    #[test]
    fn conversions_round_ties_away() {
        for (value, shift, want) in [
            (0.625, 2, 3), // 2.5
            (-0.625, 2, -3),
            (0.6, 2, 2), // 2.4
            (0.7, 2, 3), // 2.8
            (-0.7, 2, -3),
        ] {
            let got = FixedCoef::with_shift(value, shift).map(FixedCoef::mantissa);
            assert_eq!(got, Some(want), "{value}·2^{shift}");
        }
        let lsb = 1.0 / 65_536.0;
        assert_eq!(signal_from_f64(0.5 * lsb).map(I16F16::to_bits), Some(1));
        assert_eq!(signal_from_f64(-0.5 * lsb).map(I16F16::to_bits), Some(-1));
        assert_eq!(signal_from_f64(0.49 * lsb).map(I16F16::to_bits), Some(0));
        assert_eq!(signal_from_f64(2.75 * lsb).map(I16F16::to_bits), Some(3));
    }

    #[test]
    fn round_shift_extremes_do_not_wrap() {
        assert_eq!(round_shift(1 << 62, 62), 1);
        assert_eq!(round_shift(-(1 << 62), 62), -1);
        assert!(round_shift(i64::MAX, 1) > 0);
        assert!(round_shift(i64::MIN, 1) < 0);
    }

    /// The 32-bit-word products against the 64-bit definition
    /// (`round_shift` then saturation), on edge values and a
    /// pseudo-random sweep of every shift.
    #[test]
    fn unsigned_range_check_matches_the_comparisons() {
        use crate::Backend;
        let edges = [
            i32::MIN,
            i32::MIN + 1,
            -65_536,
            -2,
            -1,
            0,
            1,
            2,
            65_536,
            i32::MAX - 1,
            i32::MAX,
        ];
        let mut seed: u32 = 0x2545_F491;
        let mut next = move || {
            seed ^= seed << 13;
            seed ^= seed >> 17;
            seed ^= seed << 5;
            seed as i32 >> (seed % 31)
        };
        let mut values = [0i32; 24];
        for v in &mut values {
            *v = next();
        }
        let mut all = [0i32; 35];
        for (slot, &v) in all.iter_mut().zip(edges.iter().chain(values.iter())) {
            *slot = v;
        }
        for &lo in &all {
            for &hi in all.iter().filter(|&&hi| hi >= lo) {
                let (l, h) = (I16F16::from_bits(lo), I16F16::from_bits(hi));
                for &x in all
                    .iter()
                    .chain([lo, hi, lo.wrapping_sub(1), hi.wrapping_add(1)].iter())
                {
                    let x = I16F16::from_bits(x);
                    assert_eq!(x.inside(l, h), x >= l && x <= h, "{x:?} in [{l:?}, {h:?}]");
                }
            }
        }
    }

    #[test]
    fn word_products_match_the_64_bit_definition() {
        let mut seed: u64 = 0x9E37_79B9_7F4A_7C15;
        let mut next = move || {
            seed = seed
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            (seed >> 32) as u32
        };
        let edges = [
            i32::MIN,
            i32::MIN + 1,
            -65_537,
            -65_536,
            -32_768,
            -3,
            -1,
            0,
            1,
            3,
            32_767,
            32_768,
            65_536,
            i32::MAX - 1,
            i32::MAX,
        ];
        let mantissas = [
            -(i32::MAX),
            -(1 << 30),
            -3,
            -1,
            0,
            1,
            3,
            1 << 29,
            1 << 30,
            i32::MAX,
        ];
        for shift in 0..=MAX_SHIFT {
            let mut values: [i32; 40] = [0; 40];
            for v in &mut values {
                *v = next() as i32 >> (next() % 32);
            }
            for &m in mantissas.iter().chain(values.iter()) {
                let m = if m == i32::MIN { -(i32::MAX) } else { m };
                let c = FixedCoef {
                    mantissa: m,
                    shift: shift as u8,
                };
                for &x in edges.iter().chain(values.iter()) {
                    let p = i64::from(x) * i64::from(m);
                    let (lo, hi) = words::mul_halves(x, m);
                    assert_eq!((i64::from(hi) << 32) | i64::from(lo), p, "halves {x}·{m}");
                    let want = saturate_i32(round_shift(p, shift));
                    assert_eq!(words::rounded(x, m, shift), want, "words {x}·{m}>>{shift}");
                    assert_eq!(
                        native::rounded(x, m, shift),
                        want,
                        "native {x}·{m}>>{shift}"
                    );
                    let half = if shift == 0 { 0 } else { 1i64 << (shift - 1) };
                    let (lo, hi) = words::mul_halves_rounding(x, m, shift);
                    assert_eq!(
                        (i64::from(hi) << 32) | i64::from(lo),
                        p + half,
                        "folded {x}·{m}+½ at {shift}"
                    );
                    assert_eq!(
                        words::rounded_folded(x, m, shift),
                        want,
                        "folded {x}·{m}>>{shift}"
                    );
                    assert_eq!(words::rounded_at(x, m, shift), want);
                    assert_eq!(c.scale_at(I16F16::from_bits(x)).to_bits(), want);
                    if shift >= 16 {
                        let want = round_shift(p, shift - 16);
                        assert_eq!(
                            words::rounded_wide_folded(x, m, shift - 16),
                            want,
                            "folded wide {x}·{m}>>{shift}−16"
                        );
                        assert_eq!(words::rounded_wide_at(x, m, shift - 16), want);
                        assert_eq!(words::rounded_wide(x, m, shift - 16), want);
                        assert_eq!(native::rounded_wide(x, m, shift - 16), want);
                    }
                    assert_eq!(
                        c.scale(I16F16::from_bits(x)).to_bits(),
                        want,
                        "{x}·{m}>>{shift}"
                    );
                    for acc in [0, -7, 1 << 40, i64::MAX - 3, i64::MIN + 3] {
                        let want = if shift >= 16 {
                            acc.saturating_add(round_shift(p, shift - 16))
                        } else {
                            acc.saturating_add(i64::from(x.signum()) * i64::MAX)
                        };
                        let got = c.scale_into(I32F32::from_bits(acc), I16F16::from_bits(x));
                        assert_eq!(got.to_bits(), want, "{acc} + {x}·{m}>>{shift}−16");
                        let (acc, x) = (I32F32::from_bits(acc), I16F16::from_bits(x));
                        assert_eq!(c.integrate_at(acc, x), c.integrate(acc, x));
                    }
                }
            }
        }
        let mut accs = [
            i64::MIN,
            i64::MIN + 1,
            -(1 << 47) - 1,
            -(1 << 47),
            -(1 << 47) + 0x8000,
            -0x8001,
            -0x8000,
            -1,
            0,
            0x7fff,
            0x8000,
            (1 << 47) - 0x8001,
            (1 << 47) - 0x8000,
            (1 << 47) - 1,
            1 << 47,
            i64::MAX,
        ]
        .to_vec();
        for _ in 0..10_000 {
            accs.push((i64::from(next()) << 32 | i64::from(next())) >> (next() % 64));
        }
        for acc in accs {
            let want = saturate_i32(round_shift(acc, 16));
            assert_eq!(words::narrow_accum(acc), want, "words {acc}");
            assert_eq!(native::narrow_accum(acc), want, "native {acc}");
            assert_eq!(
                accum_to_signal(I32F32::from_bits(acc)).to_bits(),
                want,
                "{acc}"
            );
        }
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
        // Zero takes the requested shift, which must itself be valid.
        assert_eq!(FixedCoef::from_f64(0.0, 62).map(FixedCoef::shift), Some(62));
        assert!(FixedCoef::from_f64(0.0, 63).is_none());
    }

    /// The mantissa range is (−2³¹, 2³¹): −2³¹ itself is refused so that
    /// |mantissa| < 2³¹ holds for the product bounds.
    #[test]
    fn exact_shift_edges() {
        assert_eq!(
            FixedCoef::with_shift(0.0, MAX_SHIFT).map(FixedCoef::shift),
            Some(MAX_SHIFT)
        );
        assert!(FixedCoef::with_shift(0.0, MAX_SHIFT + 1).is_none());
        assert!(FixedCoef::with_shift(f64::NAN, 0).is_none());
        assert!(FixedCoef::with_shift(f64::NEG_INFINITY, 0).is_none());
        assert!(FixedCoef::with_shift(1.0, 31).is_none()); // 2³¹
        assert!(FixedCoef::with_shift(-1.0, 31).is_none()); // −2³¹
        assert!(FixedCoef::with_shift(3.0e9, 0).is_none());
        assert!(FixedCoef::with_shift(-3.0e9, 0).is_none());
        let top = FixedCoef::with_shift(2_147_483_647.0, 0).map(FixedCoef::mantissa);
        assert_eq!(top, Some(i32::MAX));
        let bottom = FixedCoef::with_shift(-2_147_483_647.0, 0).map(FixedCoef::mantissa);
        assert_eq!(bottom, Some(-i32::MAX));
        // −1 · 2³⁰ just fits; from_f64 picks the same representation.
        let minus_one = FixedCoef::with_shift(-1.0, 30);
        assert_eq!(minus_one.map(FixedCoef::mantissa), Some(-(1 << 30)));
        assert_eq!(FixedCoef::from_f64(-1.0, 0), minus_one);
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
