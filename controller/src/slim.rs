//! The 16-bit fixed-point backend: [`Slim16`] signals, [`SlimCoef`]
//! coefficients, a 32-bit state.
//!
//! # Numeric contract
//!
//! * A signal is an `i16` raw value, −32 768 … 32 767; its physical value is
//!   set by the loop's [`crate::Scaling`] (`raw = physical · per_unit +
//!   offset`), so the 16 bits cover this loop's range, not a fixed one.
//! * Integrator and filter state: `i32` with [`SLIM_STATE_FRAC_BITS`] = 13
//!   extra fraction bits (one state LSB = 2⁻¹³ signal LSB).
//! * A coefficient is a 16-bit mantissa with its own binary point: value =
//!   `mantissa · 2^-shift`, shift 0 … 30, normalised to 15 bits (relative
//!   error ≤ 2⁻¹⁵; configuration refuses more than [`SLIM_COEF_REL_TOLERANCE`]
//!   = 2⁻¹⁴).
//! * Every product is one 16 × 16 → 32-bit multiply (exact, |p| < 2³⁰),
//!   rounded to nearest with ties toward +∞ (`floor(p / 2^s + 1/2)`) and
//!   saturated to the destination. Sums of signals saturate. Nothing
//!   divides, loops or panics.

use crate::backend::Backend;
use crate::config::Config;
use crate::controller::WIDE_ERROR_TRUNCATED;
use crate::error::{ConfigError, Setting};
use crate::layout::Layout;
use crate::settings::Settings;

/// Extra fraction bits of the integrator and filter state.
///
/// ```
/// use evenkeel::{Backend, Slim16, slim::SLIM_STATE_FRAC_BITS};
/// assert_eq!(Slim16::from_raw(1).widen(), 1 << SLIM_STATE_FRAC_BITS);
/// ```
pub const SLIM_STATE_FRAC_BITS: u32 = 13;

/// Largest coefficient shift (a product is below 2³⁰).
///
/// ```
/// use evenkeel::{SlimCoef, slim::SLIM_MAX_SHIFT};
/// assert_eq!(SlimCoef::from_f64(1e-9, 0).map(SlimCoef::shift), Some(SLIM_MAX_SHIFT));
/// ```
pub const SLIM_MAX_SHIFT: u32 = 30;

/// Largest relative error of a stored gain (2⁻¹⁴ ≈ 6.1e-5).
///
/// ```
/// use evenkeel::{SlimCoef, slim::SLIM_COEF_REL_TOLERANCE};
/// let c = SlimCoef::from_f64(0.3, 0).ok_or("does not fit")?;
/// assert!((c.to_f64() - 0.3).abs() <= 0.3 * SLIM_COEF_REL_TOLERANCE);
/// # Ok::<(), &str>(())
/// ```
pub const SLIM_COEF_REL_TOLERANCE: f64 = 1.0 / 16_384.0;

/// Fraction bits of a gain schedule's interpolation fraction.
const FRACTION_BITS: u32 = 14;

/// A gain schedule's whole step as a raw fraction (`SlimCoef::lerp`,
/// `Backend::schedule_fraction`): 2¹⁴, so the fraction's resolution is
/// 2⁻¹⁴ of a segment.
///
/// ```
/// use evenkeel::{Slim16, SlimCoef, slim::SLIM_FRACTION_ONE};
/// let (lo, hi) = (SlimCoef::with_shift(0.5, 14).ok_or("")?, SlimCoef::with_shift(1.5, 14).ok_or("")?);
/// assert_eq!(lo.lerp(hi, Slim16::from_raw(SLIM_FRACTION_ONE)), hi);
/// # Ok::<(), &str>(())
/// ```
pub const SLIM_FRACTION_ONE: i16 = 1 << FRACTION_BITS;

/// Smallest shift of a coefficient added into the state (Ki·Ts, α: value
/// below 1).
const STATE_COEF_MIN_SHIFT: u32 = 15;
/// Smallest shift of Ts/Tt (≤ 1; 1 itself is 2¹⁴ · 2⁻¹⁴).
const RATIO_MIN_SHIFT: u32 = 14;

/// A 16-bit signal in the loop's raw units (see [`crate::Scaling`]).
///
/// ```
/// use evenkeel::{Backend, Slim16};
/// let x = Slim16::from_raw(30_000);
/// assert_eq!(x.add(x), Slim16::MAX); // saturates
/// assert_eq!(x.raw(), 30_000);
/// ```
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, PartialOrd, Ord, Hash)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Slim16(i16);

impl Slim16 {
    /// Raw zero.
    ///
    /// ```
    /// assert_eq!(evenkeel::Slim16::ZERO.raw(), 0);
    /// ```
    pub const ZERO: Self = Self(0);
    /// −32 768.
    ///
    /// ```
    /// assert_eq!(evenkeel::Slim16::MIN.raw(), i16::MIN);
    /// ```
    pub const MIN: Self = Self(i16::MIN);
    /// 32 767.
    ///
    /// ```
    /// assert_eq!(evenkeel::Slim16::MAX.raw(), i16::MAX);
    /// ```
    pub const MAX: Self = Self(i16::MAX);

    /// The signal whose raw value is `raw` (an ADC reading, a count).
    ///
    /// ```
    /// assert_eq!(evenkeel::Slim16::from_raw(-7).raw(), -7);
    /// ```
    #[must_use]
    pub const fn from_raw(raw: i16) -> Self {
        Self(raw)
    }

    /// The raw value (what a compare register takes).
    ///
    /// ```
    /// assert_eq!(evenkeel::Slim16::from_raw(812).raw(), 812);
    /// ```
    #[must_use]
    pub const fn raw(self) -> i16 {
        self.0
    }
}

/// A coefficient of the 16-bit backend: `mantissa · 2^-shift`.
///
/// ```
/// use evenkeel::SlimCoef;
/// let c = SlimCoef::from_f64(0.1, 0).ok_or("does not fit")?;
/// assert_eq!((c.mantissa(), c.shift()), (26_214, 18)); // 0.1 · 2¹⁸ = 26 214.4
/// # Ok::<(), &str>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SlimCoef {
    mantissa: i16,
    shift: u8,
}

impl SlimCoef {
    /// Zero.
    ///
    /// ```
    /// assert_eq!(evenkeel::SlimCoef::ZERO.to_f64(), 0.0);
    /// ```
    pub const ZERO: Self = Self {
        mantissa: 0,
        shift: 0,
    };

    /// Nearest coefficient to `value` with the largest shift (at most 30,
    /// at least `min_shift`) whose mantissa fits 15 bits and a sign. Rounds
    /// to nearest, ties away from zero. `None` if not finite or too large.
    ///
    /// ```
    /// use evenkeel::SlimCoef;
    /// assert_eq!(SlimCoef::from_f64(2.0, 0).map(|c| (c.mantissa(), c.shift())), Some((16_384, 13)));
    /// assert!(SlimCoef::from_f64(40_000.0, 0).is_none());
    /// assert!(SlimCoef::from_f64(2.0, 15).is_none()); // would need shift 13
    /// ```
    #[must_use]
    pub const fn from_f64(value: f64, min_shift: u32) -> Option<Self> {
        if !value.is_finite() || min_shift > SLIM_MAX_SHIFT {
            return None;
        }
        if value == 0.0 {
            return Some(Self {
                mantissa: 0,
                shift: min_shift as u8,
            });
        }
        let mut shift = SLIM_MAX_SHIFT;
        loop {
            if let Some(c) = Self::with_shift(value, shift) {
                return if shift < min_shift { None } else { Some(c) };
            }
            if shift == 0 {
                return None;
            }
            shift -= 1;
        }
    }

    /// Nearest coefficient to `value` at exactly `shift` (≤ 30); `None` if
    /// the mantissa does not fit (−32 767 … 32 767) or `value` is not finite.
    ///
    /// ```
    /// use evenkeel::SlimCoef;
    /// assert_eq!(SlimCoef::with_shift(0.625, 2).map(SlimCoef::mantissa), Some(3)); // 2.5 → 3
    /// assert!(SlimCoef::with_shift(1.0, 15).is_none()); // 32 768
    /// ```
    #[must_use]
    pub const fn with_shift(value: f64, shift: u32) -> Option<Self> {
        if !value.is_finite() || shift > SLIM_MAX_SHIFT {
            return None;
        }
        let rounded = crate::scaling::round_half_away(value * (1u64 << shift) as f64);
        if rounded > -32_768.0 && rounded < 32_768.0 {
            Some(Self {
                mantissa: rounded as i16,
                shift: shift as u8,
            })
        } else {
            None
        }
    }

    /// The coefficient `mantissa · 2^-shift` from its stored parts, with no
    /// floating point. `None` if `shift` is above [`SLIM_MAX_SHIFT`].
    ///
    /// ```
    /// use evenkeel::SlimCoef;
    /// let c = SlimCoef::from_parts(26_214, 18).ok_or("shift too large")?;
    /// assert_eq!(c, SlimCoef::from_f64(0.1, 0).ok_or("does not fit")?);
    /// assert!(SlimCoef::from_parts(1, 31).is_none());
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub const fn from_parts(mantissa: i16, shift: u32) -> Option<Self> {
        if shift > SLIM_MAX_SHIFT {
            return None;
        }
        Some(Self {
            mantissa,
            shift: shift as u8,
        })
    }

    /// The stored value (exact).
    ///
    /// ```
    /// assert_eq!(evenkeel::SlimCoef::with_shift(0.1, 10).map(|c| c.to_f64()), Some(102.0 / 1024.0));
    /// ```
    #[must_use]
    pub const fn to_f64(self) -> f64 {
        self.mantissa as f64 / (1u64 << self.shift) as f64
    }

    /// The mantissa.
    ///
    /// ```
    /// assert_eq!(evenkeel::SlimCoef::with_shift(0.5, 4).map(|c| c.mantissa()), Some(8));
    /// ```
    #[must_use]
    pub const fn mantissa(self) -> i16 {
        self.mantissa
    }

    /// The binary point: value = mantissa · 2^-shift.
    ///
    /// ```
    /// assert_eq!(evenkeel::SlimCoef::with_shift(0.5, 4).map(|c| c.shift()), Some(4));
    /// ```
    #[must_use]
    pub const fn shift(self) -> u32 {
        self.shift as u32
    }

    /// `round(x · self)` as a signal: nearest, ties toward +∞, saturated.
    ///
    /// ```
    /// use evenkeel::{Slim16, SlimCoef};
    /// let half = SlimCoef::from_f64(0.5, 0).ok_or("does not fit")?;
    /// assert_eq!(half.scale(Slim16::from_raw(3)).raw(), 2); // 1.5 → 2
    /// assert_eq!(half.scale(Slim16::from_raw(-3)).raw(), -1); // −1.5 → −1
    /// let big = SlimCoef::from_f64(300.0, 0).ok_or("does not fit")?;
    /// assert_eq!(big.scale(Slim16::from_raw(200)), Slim16::MAX);
    /// # Ok::<(), &str>(())
    /// ```
    #[inline(always)]
    #[must_use]
    pub fn scale(self, x: Slim16) -> Slim16 {
        Slim16(saturate_i16(round_half_added(
            product(x, self.mantissa),
            u32::from(self.shift),
        )))
    }

    /// `acc + round(x · self)` at state precision (2⁻¹³ LSB), saturated.
    /// A shift below 13 (never produced by configuration for these
    /// coefficients) saturates the product.
    ///
    /// ```
    /// use evenkeel::{Slim16, SlimCoef};
    /// let k = SlimCoef::from_f64(1e-3, 15).ok_or("does not fit")?;
    /// // 1e-3 · 1 LSB = 8.19 state LSB → 8: kept, though far below one signal LSB.
    /// assert_eq!(k.scale_into(0, Slim16::from_raw(1)), 8);
    /// # Ok::<(), &str>(())
    /// ```
    #[inline]
    #[must_use]
    pub fn scale_into(self, acc: i32, x: Slim16) -> i32 {
        let shift = u32::from(self.shift);
        if shift < SLIM_STATE_FRAC_BITS {
            let p = match product(x, self.mantissa) {
                0 => 0,
                1.. => i32::MAX,
                _ => -i32::MAX,
            };
            return acc.saturating_add(p);
        }
        acc.saturating_add(round_half_added(
            product(x, self.mantissa),
            shift - SLIM_STATE_FRAC_BITS,
        ))
    }

    /// `acc + round(x · self)` for the controller's own state, without the
    /// overflow check of [`SlimCoef::scale_into`].
    ///
    /// Bound: configuration gives Ki·Ts and α a shift ≥ 15 and Ts/Tt one
    /// ≥ 14, so |x · m| < 2¹⁵ · 2¹⁵ = 2³⁰ is shifted right by at least 1
    /// (at most 2²⁹ state LSB) for Ts/Tt and by at least 2 (2²⁸) for the
    /// others; the integrator stays within three output spans (|I| ≤ 98 303
    /// signal LSB < 2²⁷ · 2⁻¹³… i.e. < 8.06e8 state LSB) and the filter
    /// state within the signal range (< 2²⁸); at most two products are
    /// added before the integrator is clamped again: every partial sum is
    /// below 8.06e8 + 2²⁸ + 2²⁹ < 1.62e9 < 2³¹, so the wrapping sum is
    /// exact. For other inputs the result is unspecified (never a panic).
    #[inline(always)]
    #[must_use]
    pub(crate) fn integrate(self, acc: i32, x: Slim16) -> i32 {
        let shift = u32::from(self.shift).saturating_sub(SLIM_STATE_FRAC_BITS);
        acc.wrapping_add(round_half_added(product(x, self.mantissa), shift))
    }

    #[inline(always)]
    pub(crate) const fn at_shift(self, shift: u32) -> Self {
        Self {
            mantissa: self.mantissa,
            shift: shift as u8,
        }
    }

    /// `self + (other − self) · frac` on the mantissas, `frac` in raw
    /// units of 2⁻¹⁴ (0 … [`SLIM_FRACTION_ONE`] = 16 384, the whole step);
    /// both ends must share a shift, otherwise `self`. Nearest, ties toward
    /// +∞, saturating. `frac` = 16 384 gives `other` exactly.
    ///
    /// ```
    /// use evenkeel::{Slim16, SlimCoef};
    /// let (lo, hi) = (SlimCoef::with_shift(1.0, 12).ok_or("")?, SlimCoef::with_shift(3.0, 12).ok_or("")?);
    /// assert_eq!(lo.lerp(hi, Slim16::from_raw(8_192)).to_f64(), 2.0);
    /// assert_eq!(lo.lerp(hi, Slim16::from_raw(16_384)), hi);
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub fn lerp(self, other: Self, frac: Slim16) -> Self {
        if self.shift != other.shift {
            return self;
        }
        let span = i32::from(other.mantissa) - i32::from(self.mantissa);
        let step = round_shift(span.saturating_mul(i32::from(frac.0)), FRACTION_BITS);
        Self {
            mantissa: saturate_i16(i32::from(self.mantissa).saturating_add(step)),
            shift: self.shift,
        }
    }

    /// The coefficient a gain schedule's fraction is taken with for a
    /// segment from `from` to `to` (raw): `2¹⁴ / (to − from)` rounded up,
    /// at the largest shift that keeps the mantissa within 15 bits. Rounded
    /// up, so `(to − from) · c` reaches [`SLIM_FRACTION_ONE`] (the fraction
    /// is exactly one at `to`); relative excess below 2⁻¹⁴. Integer
    /// arithmetic only. `None` unless `from < to`.
    ///
    /// ```
    /// use evenkeel::{Slim16, SlimCoef};
    /// let c = SlimCoef::fraction_inverse(Slim16::from_raw(0), Slim16::from_raw(3)).ok_or("")?;
    /// assert_eq!((c.mantissa(), c.shift()), (21_846, 2)); // ⌈2¹⁶ / 3⌉ · 2⁻² = 5 461.5
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub const fn fraction_inverse(from: Slim16, to: Slim16) -> Option<Self> {
        let width = to.0 as i64 - from.0 as i64;
        if width <= 0 {
            return None;
        }
        let mut shift = SLIM_MAX_SHIFT;
        loop {
            let whole = 1_i64 << (FRACTION_BITS + shift);
            let mantissa = match (whole + width - 1).checked_div(width) {
                Some(m) => m,
                None => return None,
            };
            if mantissa <= i16::MAX as i64 {
                return Some(Self {
                    mantissa: mantissa as i16,
                    shift: shift as u8,
                });
            }
            if shift == 0 {
                return None;
            }
            shift -= 1;
        }
    }
}

/// The exact product of a signal and a mantissa (one `muls` / `smulbb`).
#[inline(always)]
fn product(x: Slim16, m: i16) -> i32 {
    i32::from(x.0) * i32::from(m)
}

/// `floor(p / 2^s + 1/2)` for |p| ≤ 2³⁰ and s ≤ 30 (the sum cannot wrap).
/// `floor(p / 2^s)` plus bit s − 1 of p: the same, without the sum.
#[inline(always)]
fn round_shift(p: i32, s: u32) -> i32 {
    if s == 0 {
        p
    } else {
        let s = s & 31;
        (p >> s) + ((p >> (s - 1)) & 1)
    }
}

/// [`round_shift`] for |p| ≤ 2³⁰ (every product of two `i16`, and the
/// controller's own state): the half added first, `(p + 2^(s−1)) >> s`,
/// which is `floor(p / 2^s + 1/2)` by definition and cannot wrap there
/// (|p| + 2²⁹ < 2³¹). Two instructions where `round_shift` takes four on
/// Armv6-M (`asrs`, `lsls` and `lsrs` for the bit, `adds`), and fewer
/// live registers between the products on Armv7-M (measured by
/// `boards/run`). Wider values (any `i32`): `round_shift`.
#[inline(always)]
fn round_half_added(p: i32, s: u32) -> i32 {
    if s == 0 {
        p
    } else {
        let s = s & 31;
        p.wrapping_add(1 << (s - 1)) >> s
    }
}

/// Saturate into `i16` (one `ssat` on Armv7-M).
#[inline(always)]
fn saturate_i16(x: i32) -> i16 {
    x.clamp(i32::from(i16::MIN), i32::from(i16::MAX)) as i16
}

/// Nearest raw value, ties to even, saturating; NaN gives zero.
pub(crate) const fn raw_nearest_even(x: f64) -> i16 {
    if x.is_nan() {
        return 0;
    }
    if x >= 32_767.0 {
        return i16::MAX;
    }
    if x <= -32_768.0 {
        return i16::MIN;
    }
    let whole = x as i32; // toward zero
    let frac = x - whole as f64;
    let r = if frac > 0.5 || (frac == 0.5 && whole % 2 != 0) {
        whole + 1
    } else if frac < -0.5 || (frac == -0.5 && whole % 2 != 0) {
        whole - 1
    } else {
        whole
    };
    r as i16
}

impl Backend for Slim16 {
    type Coef = SlimCoef;
    type Accum = i32;
    const ZERO: Self = Self(0);
    /// One raw unit (the signal's own LSB: its physical size is the
    /// scaling's).
    const ONE: Self = Self(1);
    const ACCUM_ZERO: i32 = 0;
    const EXACT_SUMS: bool = true;
    const NAME: &'static str = "slim16";

    fn configure<L: Layout>(settings: &Settings) -> Result<Config<Self, L>, ConfigError> {
        Config::<Slim16, L>::new(settings)
    }
    fn check_gain(
        c: SlimCoef,
        min_shift: u32,
        layout_shift: Option<u32>,
        which: Setting,
    ) -> Result<(), ConfigError> {
        if c.mantissa < 0 {
            return Err(ConfigError::Negative(which));
        }
        // `min_shift` and `layout_shift` are the Q16.16 figures (16 for a
        // per-sample integral gain; the layout's 32-bit shift): this format
        // keeps 16 bits fewer, and a per-sample integral gain below 1.
        let own_min = if min_shift >= 16 {
            STATE_COEF_MIN_SHIFT
        } else {
            0
        };
        match layout_shift {
            Some(s) if c.shift() + 16 != s => Err(ConfigError::Layout(which)),
            _ if c.shift() < own_min => Err(ConfigError::OutOfFormat(which)),
            _ => Ok(()),
        }
    }
    fn coef_is_zero(c: SlimCoef) -> bool {
        c.mantissa == 0
    }
    #[inline(always)]
    fn coef_at_shift(c: SlimCoef, shift: u32) -> SlimCoef {
        // A layout's shifts are those of the 32-bit mantissas; this format
        // stores the same value 16 bits coarser.
        c.at_shift(shift.saturating_sub(16))
    }
    fn coef_pair(a: f64, b: f64, min_shift: u32) -> Option<(SlimCoef, SlimCoef)> {
        coef_pair(a, b, min_shift)
    }
    fn coef_pair_at(a: f64, b: f64, shift: u32) -> Option<(SlimCoef, SlimCoef)> {
        coef_pair_at(a, b, shift)
    }
    fn from_f64(x: f64) -> Self {
        Self(raw_nearest_even(x))
    }
    fn to_f64(self) -> f64 {
        f64::from(self.0)
    }
    fn coef_to_f64(c: SlimCoef) -> f64 {
        c.to_f64()
    }
    #[inline(always)]
    fn is_finite(self) -> bool {
        true
    }
    #[inline(always)]
    fn add(self, other: Self) -> Self {
        Self(self.0.saturating_add(other.0))
    }
    #[inline(always)]
    fn sub(self, other: Self) -> Self {
        Self(self.0.saturating_sub(other.0))
    }
    #[inline(always)]
    fn sub_exact(self, other: Self) -> Self {
        Self(self.0.wrapping_sub(other.0))
    }
    #[inline(always)]
    fn scale(self, c: SlimCoef) -> Self {
        c.scale(self)
    }
    #[inline(always)]
    fn scale_into(acc: i32, x: Self, c: SlimCoef) -> i32 {
        c.scale_into(acc, x)
    }
    #[inline(always)]
    fn integrate(acc: i32, x: Self, c: SlimCoef) -> i32 {
        c.integrate(acc, x)
    }
    /// `(x − lo) mod 2³² ≤ hi − lo` unsigned, in 32 bits: for `lo ≤ hi`
    /// exactly `lo ≤ x ≤ hi` (below `lo` the difference wraps above 2³¹).
    #[inline(always)]
    fn inside_frozen(self, lo: Self, hi: Self) -> bool {
        let lo = i32::from(lo.0);
        (i32::from(self.0).wrapping_sub(lo) as u32) <= (i32::from(hi.0).wrapping_sub(lo) as u32)
    }
    #[inline(always)]
    fn raise_by(self, step: Self) -> Self {
        self.add(step)
    }
    #[inline(always)]
    fn lower_by(self, step: Self) -> Self {
        self.sub(step)
    }
    #[inline(always)]
    fn accumulate(acc: i32, x: Self) -> i32 {
        acc.saturating_add(x.widen())
    }
    #[inline(always)]
    fn deplete(acc: i32, x: Self) -> i32 {
        acc.saturating_sub(x.widen())
    }
    #[inline(always)]
    fn widen(self) -> i32 {
        i32::from(self.0) << SLIM_STATE_FRAC_BITS
    }
    #[inline(always)]
    fn narrow(acc: i32) -> Self {
        Self(saturate_i16(round_shift(acc, SLIM_STATE_FRAC_BITS)))
    }
    /// |acc| < 2³⁰: the integrator stays within three output spans
    /// (< 8.06e8 state LSB) and the filter state within the signal range
    /// (< 2²⁸), see `SlimCoef::integrate`.
    #[inline(always)]
    fn frozen<L: Layout>() -> Option<&'static Config<Self, L>> {
        const { &L::FROZEN_SLIM16 }.as_ref()
    }
    /// The proof is `slim::wide_sums_hold` (crate-private), evaluated once per layout at
    /// compile time; with it, `e = sat(r − y_f)` and
    /// `v = sat(Kp·(r − y_f) + I + ff)` in `i32` with one saturation each,
    /// instead of the saturations after the difference, the product, the
    /// narrowing of `I` and the sum.
    #[inline(always)]
    fn frozen_sum<L: Layout>(r: Self, y_f: Self, integral: i32) -> Option<(Self, Self, Self)> {
        if !const {
            match &L::FROZEN_SLIM16 {
                Some(c) => wide_sums_hold(c),
                None => false,
            }
        } {
            return None;
        }
        let c = const { &L::FROZEN_SLIM16 }.as_ref()?;
        Some(wide_sum(c, r, y_f, integral, WIDE_ERROR_TRUNCATED))
    }
    /// The proof is `slim::integral_stays` (crate-private), evaluated once per layout at
    /// compile time.
    #[inline(always)]
    fn frozen_integral_stays<L: Layout>() -> bool {
        const {
            match &L::FROZEN_SLIM16 {
                Some(c) => integral_stays(c),
                None => false,
            }
        }
    }
    #[inline(always)]
    fn narrow_state(acc: i32) -> Self {
        Self(saturate_i16(round_half_added(acc, SLIM_STATE_FRAC_BITS)))
    }
    fn from_counts(c: i32) -> Self {
        Self(saturate_i16(c))
    }
    #[inline(always)]
    fn to_counts(self) -> i32 {
        i32::from(self.0)
    }
    fn coef_lerp(lo: SlimCoef, hi: SlimCoef, frac: Self) -> SlimCoef {
        lo.lerp(hi, frac)
    }
    /// `(at − from) · c` in units of 2⁻¹⁴, clamped to [0, 2¹⁴]: the
    /// difference exact in `i32` (|at − from| ≤ 65 535, and 65 535 · 32 767
    /// < 2³¹, so the product is exact too), nearest, ties toward +∞.
    fn schedule_fraction(at: Self, from: Self, c: SlimCoef) -> Self {
        let d = i32::from(at.0) - i32::from(from.0);
        let f = round_shift(d.saturating_mul(i32::from(c.mantissa)), u32::from(c.shift));
        Self(clamp_i32(f, 0, i32::from(SLIM_FRACTION_ONE)) as i16)
    }
    fn schedule_inverse(from: Self, to: Self, _width: f64) -> Option<SlimCoef> {
        SlimCoef::fraction_inverse(from, to)
    }
}

/// Two 16-bit coefficients with one shift, so that they can be
/// interpolated (`Backend::coef_pair`): the finer natural shift that holds
/// both, at least 15 if `min_shift` (the Q16.16 figure, as in
/// `Backend::check_gain`) is 16 or more; a zero takes the other's.
pub(crate) const fn coef_pair(a: f64, b: f64, min_shift: u32) -> Option<(SlimCoef, SlimCoef)> {
    let min_shift = if min_shift >= 16 {
        STATE_COEF_MIN_SHIFT
    } else {
        0
    };
    let (Some(ca), Some(cb)) = (
        SlimCoef::from_f64(a, min_shift),
        SlimCoef::from_f64(b, min_shift),
    ) else {
        return None;
    };
    let shift = crate::q::common_shift(a, b, ca.shift as u32, cb.shift as u32, min_shift);
    coef_pair_at(a, b, shift + 16)
}

/// Two 16-bit coefficients at the layout's shift `shift` (the Q16.16
/// figure) less 16.
pub(crate) const fn coef_pair_at(a: f64, b: f64, shift: u32) -> Option<(SlimCoef, SlimCoef)> {
    if shift < 16 {
        return None;
    }
    match (
        SlimCoef::with_shift(a, shift - 16),
        SlimCoef::with_shift(b, shift - 16),
    ) {
        (Some(x), Some(y)) => Some((x, y)),
        _ => None,
    }
}

/// Unwrap a `Result` inside a `const fn`.
macro_rules! attempt {
    ($e:expr) => {
        match $e {
            Ok(v) => v,
            Err(e) => return Err(e),
        }
    };
}

impl<L: Layout> Config<Slim16, L> {
    /// 16-bit configuration, usable in `const` context. The settings'
    /// [`crate::Scaling`] decides the raw units; every signal must fit
    /// −32 768 … 32 767 raw, Kp (raw per raw) 32 767, Ki·Ts (raw per raw
    /// and sample) below 1, each gain within 2⁻¹⁴ relative
    /// ([`SLIM_COEF_REL_TOLERANCE`]); the slew step within 1 % (so at
    /// least 50 raw units). Output limits are rounded inward. Under a
    /// compile-time layout each gain is stored at the layout's shift less
    /// 16.
    ///
    /// ```
    /// use evenkeel::{Config, Scale, Scaling, Settings, Slim16};
    /// let s = Settings::new(0.001, 2.0, 50.0, 0.0, 100.0)
    ///     .with_scaling(Scaling::NONE.with_adc(12, Scale::new(409.5, 0.0)).with_pwm(Scale::new(10.0, 0.0)));
    /// let c = Config::<Slim16>::new(&s)?;
    /// assert_eq!(c.output_limits(), (Slim16::from_raw(0), Slim16::from_raw(1000)));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// # Errors
    /// As [`Settings::per_sample`], plus [`ConfigError::OutOfFormat`],
    /// [`ConfigError::TooFine`] and [`ConfigError::Layout`] (also for any
    /// layout made by [`crate::frozen!`], whose one configuration is its
    /// `CONFIG`).
    pub const fn new(settings: &Settings) -> Result<Self, ConfigError> {
        if crate::layout::is_frozen::<L>() {
            return Err(ConfigError::Layout(Setting::Features));
        }
        Self::freeze(settings)
    }

    /// [`Config::new`] without the refusal of frozen layouts: what
    /// [`crate::frozen!`] builds its configuration with. Not for direct use.
    ///
    /// # Errors
    /// As [`Config::new`].
    #[doc(hidden)]
    pub const fn freeze(settings: &Settings) -> Result<Self, ConfigError> {
        let p = attempt!(settings.per_sample());
        let features = crate::layout::Features::of(&p);
        let shape = L::SHAPE;
        if let Some(s) = shape
            && s.features().bits() != features.bits()
        {
            return Err(ConfigError::Layout(Setting::Features));
        }
        use crate::layout::Slot;
        let kp = attempt!(gain(shape, Slot::Kp, p.kp, 0, Setting::Kp));
        let setpoint_weight = attempt!(optional(
            shape,
            Slot::SetpointWeight,
            p.setpoint_weight,
            0,
            Setting::SetpointWeight
        ));
        let ki_ts = attempt!(gain(
            shape,
            Slot::KiTs,
            p.ki_ts,
            STATE_COEF_MIN_SHIFT,
            Setting::Ki
        ));
        let tracking_ratio = attempt!(optional(
            shape,
            Slot::TrackingRatio,
            p.tracking_ratio,
            RATIO_MIN_SHIFT,
            Setting::TrackingTime
        ));
        let filter_alpha = attempt!(optional(
            shape,
            Slot::FilterAlpha,
            p.filter_alpha,
            STATE_COEF_MIN_SHIFT,
            Setting::FilterTime
        ));
        let slew_step = match p.slew_step {
            Some(s) => {
                // Rounded down: the command never moves faster than
                // written (one raw LSB is coarse here).
                let q = attempt!(limit(s, false, Setting::Slew));
                let err = q.0 as f64 - s;
                if q.0 <= 0
                    || err > crate::SLEW_REL_TOLERANCE * s
                    || -err > crate::SLEW_REL_TOLERANCE * s
                {
                    return Err(ConfigError::TooFine(Setting::Slew));
                }
                q
            }
            None => Slim16::ZERO,
        };
        let deadband = match p.deadband {
            Some(w) => attempt!(signal(w, Setting::Deadband)),
            None => Slim16::ZERO,
        };
        let output_min = attempt!(limit(p.output_min, true, Setting::OutputMin));
        let output_max = attempt!(limit(p.output_max, false, Setting::OutputMax));
        if output_min.0 >= output_max.0 {
            return Err(ConfigError::Inverted(Setting::OutputMax));
        }
        let measurement_min = attempt!(signal(p.measurement_min, Setting::MeasurementMin));
        let measurement_max = attempt!(signal(p.measurement_max, Setting::MeasurementMax));
        if measurement_min.0 >= measurement_max.0 {
            return Err(ConfigError::Inverted(Setting::MeasurementMax));
        }
        let zero = attempt!(signal(p.command_zero, Setting::CommandScale));
        let rest =
            Slim16(clamp_i32(zero.0 as i32, output_min.0 as i32, output_max.0 as i32) as i16);
        let coefs = [kp, setpoint_weight, ki_ts, tracking_ratio, filter_alpha];
        let signals = [slew_step, deadband, measurement_min, measurement_max, rest];
        Ok(Self::assemble(
            features, coefs, signals, output_min, output_max,
        ))
    }

    /// The configuration of checked parts; the integrator and feed-forward
    /// ranges follow from the output limits. `coefs`: Kp, setpoint weight,
    /// Ki·Ts, Ts/Tt, α; `signals`: slew step, deadband, measurement min and
    /// max, the command at rest (within the output limits).
    pub(crate) const fn assemble(
        features: crate::layout::Features,
        coefs: [SlimCoef; 5],
        signals: [Slim16; 5],
        output_min: Slim16,
        output_max: Slim16,
    ) -> Self {
        let [kp, setpoint_weight, ki_ts, tracking_ratio, filter_alpha] = coefs;
        let [slew_step, deadband, measurement_min, measurement_max, rest] = signals;
        // Integrator and feed-forward range: the output range widened by
        // its span on both sides (|bounds| ≤ 98 303 raw, so the state's
        // bits stay below 8.06e8: the bound `SlimCoef::integrate` uses).
        let lo = output_min.0 as i32;
        let hi = output_max.0 as i32;
        let span = hi - lo;
        let ff_lo = lo - span;
        let ff_hi = hi + span;
        Self {
            features,
            kp,
            setpoint_weight,
            ki_ts,
            tracking_ratio,
            filter_alpha,
            slew_step,
            deadband,
            output_min,
            output_max,
            feed_forward_min: Slim16(clamp_i32(ff_lo, -32_768, 32_767) as i16),
            feed_forward_max: Slim16(clamp_i32(ff_hi, -32_768, 32_767) as i16),
            feed_forward_zero: Slim16(clamp_i32(clamp_i32(0, ff_lo, ff_hi), -32_768, 32_767) as i16),
            integral_min: ff_lo << SLIM_STATE_FRAC_BITS,
            integral_max: ff_hi << SLIM_STATE_FRAC_BITS,
            measurement_min,
            measurement_max,
            rest,
            layout: core::marker::PhantomData,
        }
    }
}

/// Whether, for the configuration `c`, a step with the zero feed-forward
/// may compute `e = r − y_f` and `v = P + I + ff` in `i32` and saturate
/// each once ([`Backend::frozen_sum`]) with the same command, status and
/// state as the step's own 16-bit chain `e = r ⊖ y_f`, `P = sat(Kp·e)`,
/// `v = (P ⊕ sat(I)) ⊕ ff` (⊖, ⊕: saturating).
///
/// Only conditional integration without deadband and setpoint weight (the
/// step then reads `e` for the integrator's product and the sign of the
/// hold test, and `v` only through its comparisons with the output
/// limits and the command). `e`: the wide difference saturated once is
/// the chain's `e` exactly. `v`: if no saturation of the chain acts, both
/// are the exact sum. If one acts upward, take the first that does:
/// (a) `r − y_f` > 32 767, (b) Kp·e > 32 767, (c) P + I > 32 767, (d) the
/// last sum > 32 767. For (d) both give 32 767. For (a)–(c) the proof
/// requires both above `output_max`, from the lower bound of each after
/// that event (each step of both chains is monotone in every operand, Kp
/// ≥ 0): chain (a) `((sat(Kp·32 767) ⊕ I_lo) ⊕ ff`, wide `Kp·32 768 + I_lo +
/// ff`; (b) `(32 767 ⊕ I_lo) ⊕ ff`, `32 768 + I_lo + ff`; (c) `32 767 ⊕
/// ff`, `32 768 + ff`, where `I_lo` is the least rounded integrator (its
/// range and zero, the value before the first step) and `ff` the clamped
/// zero feed-forward. Then both commands are `output_max` with the same
/// flag, both sums exceed every command the slew limit can give, so the
/// hold test decides alike, and the error is positive: the integrator is
/// held, and never sees a saturated error. The same, mirrored, downward.
/// An event that the measurement range, Kp and the integrator range rule
/// out is not required. Also: |r − y_f| · Kp + ½ and the wide sum fit
/// `i32`, and the rounded integrator fits 16 bits without saturation.
pub(crate) const fn wide_sums_hold<L: Layout>(c: &Config<Slim16, L>) -> bool {
    use crate::layout::Features;
    let f = c.features;
    if f.contains(Features::DEADBAND)
        || f.contains(Features::SETPOINT_WEIGHT)
        || f.contains(Features::BACK_CALCULATION)
        || c.kp.mantissa < 0
    {
        return false;
    }
    const MIN: i64 = -32_768;
    const MAX: i64 = 32_767;
    let m = c.kp.mantissa as i64;
    let s = c.kp.shift as u32;
    let half = if s == 0 { 0 } else { 1i64 << (s - 1) };
    let (omin, omax) = (c.output_min.0 as i64, c.output_max.0 as i64);
    let ff = c.feed_forward_zero.0 as i64;
    let (rlo, rhi) = (c.measurement_min.0 as i64, c.measurement_max.0 as i64);
    // The filtered measurement is any 16-bit value; the plain one lies in
    // the measurement range.
    let (ylo, yhi) = if f.contains(Features::FILTER) {
        (MIN, MAX)
    } else {
        (rlo, rhi)
    };
    let (elo, ehi) = (rlo - yhi, rhi - ylo);
    let emag = if -elo > ehi { -elo } else { ehi };
    if emag * m + half > i32::MAX as i64 || ((emag * m + half) >> s) + 65_537 > i32::MAX as i64 {
        return false;
    }
    // The integrator, rounded: its range and zero.
    let acc_lo = if (c.integral_min as i64) < 0 {
        c.integral_min as i64
    } else {
        0
    };
    let acc_hi = if (c.integral_max as i64) > 0 {
        c.integral_max as i64
    } else {
        0
    };
    let narrow = 1i64 << (SLIM_STATE_FRAC_BITS - 1);
    let (ilo, ihi) = (
        (acc_lo + narrow) >> SLIM_STATE_FRAC_BITS,
        (acc_hi + narrow) >> SLIM_STATE_FRAC_BITS,
    );
    if ilo < MIN || ihi > MAX || acc_lo <= -(1 << 30) || acc_hi >= 1 << 30 {
        return false;
    }
    // Upward events: (a) possible if `ehi` > MAX, (b) if Kp·e can pass MAX
    // for an unsaturated e, (c) if P + I can.
    let p_hi = sat(prod(if ehi < MAX { ehi } else { MAX }, m, s, half));
    if ehi > MAX
        && !(sat(sat(sat(prod(MAX, m, s, half)) + ilo) + ff) > omax
            && prod(MAX + 1, m, s, half) + ilo + ff > omax)
    {
        return false;
    }
    if prod(if ehi < MAX { ehi } else { MAX }, m, s, half) > MAX
        && !(sat(sat(MAX + ilo) + ff) > omax && MAX + 1 + ilo + ff > omax)
    {
        return false;
    }
    if p_hi + ihi > MAX && !(sat(MAX + ff) > omax && MAX + 1 + ff > omax) {
        return false;
    }
    // Downward, mirrored.
    let p_lo = sat(prod(if elo > MIN { elo } else { MIN }, m, s, half));
    if elo < MIN
        && !(sat(sat(sat(prod(MIN, m, s, half)) + ihi) + ff) < omin
            && prod(MIN - 1, m, s, half) + ihi + ff < omin)
    {
        return false;
    }
    if prod(if elo > MIN { elo } else { MIN }, m, s, half) < MIN
        && !(sat(sat(MIN + ihi) + ff) < omin && MIN - 1 + ihi + ff < omin)
    {
        return false;
    }
    if p_lo + ilo < MIN && !(sat(MIN + ff) < omin && MIN - 1 + ff < omin) {
        return false;
    }
    true
}

/// Whether for `c` (with [`wide_sums_hold`]) a step with the zero
/// feed-forward `ff` and no engage that integrates leaves the integrator
/// within `[integral_min, integral_max]`, so that its clamp cannot act.
///
/// Integrating with `e > 0` means the step did not hold: its sum `v` is not
/// above `output_max` (the command is at most `output_max`, and not below
/// `v`), and by [`wide_sums_hold`] then neither is the wide sum `P + I16 +
/// ff`, with `e` unsaturated. In state LSB (2⁻¹³), with `I` the state and
/// `I16 = floor((I + 4096) / 8192)` its rounding: `I ≤ 8192·I16 + 4095`,
/// `P ≥ Kp·e − ½`, the integrator's increment at most `Ki·Ts·e·8192 + ½`.
/// So the new state is at most `8192·(output_max − ff) + 8191.5 + e·(Ki·Ts
/// − Kp)·8192`, and with `Ki·Ts ≤ Kp` (raw per raw; compared exactly on
/// the mantissas) at most `8192·(output_max − ff + 1) − 1`, which the
/// proof requires within `integral_max`. The same, mirrored, for `e < 0`
/// and `integral_min` (`8192·(output_min − ff − 1)`). With `e > 0` the
/// state only grows and with `e < 0` only falls (the rounded increment
/// has the sign of `e`, or is zero), from a value within the range or
/// zero (before the first step): the proof requires zero within it.
///
/// An engage step sets the state to `X = 8192·(target − P − ff)` clamped,
/// with `target` within the output limits, and integrates any `e` (its
/// command equals its sum). With `e > 0` and `X` not below the range, the
/// new state is at most `X` plus the increment: below
/// `8192·(target − ff) + 4096.5` if `P` is unsaturated (as above), below
/// `8192·(target − ff) + ½` if `P` is 32 767 (Ki·Ts < 1, so the increment
/// is below 8192·e ≤ 8192·32 767); within the bound above either way. With `X` below the
/// range the state starts at `integral_min` and the proof requires
/// `integral_min` plus the largest increment (at e = 32 767) within the
/// range. Mirrored for `e < 0`.
pub(crate) const fn integral_stays<L: Layout>(c: &Config<Slim16, L>) -> bool {
    if !wide_sums_hold(c) || c.ki_ts.mantissa < 0 || (c.ki_ts.shift as u32) < SLIM_STATE_FRAC_BITS {
        return false;
    }
    let (m, s) = (c.kp.mantissa as i128, c.kp.shift as u32);
    let (k, sk) = (c.ki_ts.mantissa as i128, c.ki_ts.shift as u32);
    // Ki·Ts ≤ Kp: k / 2^sk ≤ m / 2^s.
    if k << s > m << sk {
        return false;
    }
    let (imin, imax) = (c.integral_min as i64, c.integral_max as i64);
    let ff = c.feed_forward_zero.0 as i64;
    let (omin, omax) = (c.output_min.0 as i64, c.output_max.0 as i64);
    // The increment's extremes, at e = 32 767 and e = −32 768.
    let sk_state = sk - SLIM_STATE_FRAC_BITS;
    let half = if sk_state == 0 {
        0
    } else {
        1i128 << (sk_state - 1)
    };
    let ki_max = ((32_767 * k + half) >> sk_state) as i64;
    let ki_min = ((-32_768 * k + half) >> sk_state) as i64;
    imin <= 0
        && imax >= 0
        && 8192 * (omax - ff + 1) - 1 <= imax
        && 8192 * (omin - ff - 1) >= imin
        && imin + ki_max <= imax
        && imax + ki_min >= imin
}

/// `(e, sat(Kp·(r − y_f) + I + ff), sign)` in `i32` for the zero
/// feed-forward `ff` of `c`: [`Backend::frozen_sum`] once
/// [`wide_sums_hold`] holds for `c`. Not `truncated`: `e = sat(r − y_f)`
/// and `sign = e`. `truncated`: `e` is `r − y_f` truncated to 16 bits and
/// `sign` is −1, 0 or 1, the sign of `r − y_f` (and of `sat(r − y_f)`),
/// which the step's hold test reads instead of `e`'s.
///
/// The truncated `e` is the saturated one whenever `r − y_f` lies within
/// 16 bits, and a step without engage reads it only then: by
/// [`wide_sums_hold`] (event (a)), `r − y_f > 32 767` puts the step's sum
/// `v` above `output_max` (the first saturation that acts upward is (a)
/// itself, so the proof's bound applies); the command is at most
/// `output_max` (the slew limit only tightens it), so `u < v`, `held_high`
/// holds whatever the downstream difference, and with `sign` positive the
/// step holds the integrator; the held path reads no `e` (the first
/// step's clamp of a held integrator neither). Mirrored below −32 768.
/// The filter does not matter: the proof takes every 16-bit filtered
/// value. An engage step sets `v` to its target, so `u = v` and it may
/// integrate: the step then takes its own saturated `e` and its sign
/// (computed there, like `P`). The other readers of `e` (back-calculation,
/// deadband, setpoint weight) are excluded by the proof.
///
/// No sum or product here wraps then:
/// the proof bounds |r − y_f| · Kp + ½ and |P| + 2¹⁶ + 1 below 2³¹, and
/// |integral| < 2³⁰. For other configurations the result is unspecified
/// (never a panic).
#[inline(always)]
fn wide_sum<L: Layout>(
    c: &Config<Slim16, L>,
    r: Slim16,
    y_f: Slim16,
    integral: i32,
    truncated: bool,
) -> (Slim16, Slim16, Slim16) {
    let e = i32::from(r.0).wrapping_sub(i32::from(y_f.0));
    let p = round_half_added(
        e.wrapping_mul(i32::from(c.kp.mantissa)),
        u32::from(c.kp.shift),
    );
    let i = round_half_added(integral, SLIM_STATE_FRAC_BITS);
    let v = p
        .wrapping_add(i)
        .wrapping_add(i32::from(c.feed_forward_zero.0));
    let v = Slim16(saturate_i16(v));
    if truncated {
        // Truncation, not saturation (see above).
        (Slim16(e as i16), v, Slim16(clamp_i32(e, -1, 1) as i16))
    } else {
        let e = Slim16(saturate_i16(e));
        (e, v, e)
    }
}

/// `floor((x · m + half) / 2^s)`, exact in `i64` for |x| ≤ 2¹⁷.
const fn prod(x: i64, m: i64, s: u32, half: i64) -> i64 {
    (x * m + half) >> s
}

/// Saturated to 16 bits.
const fn sat(x: i64) -> i64 {
    if x < -32_768 {
        -32_768
    } else if x > 32_767 {
        32_767
    } else {
        x
    }
}

const fn clamp_i32(x: i32, lo: i32, hi: i32) -> i32 {
    if x < lo {
        lo
    } else if x > hi {
        hi
    } else {
        x
    }
}

/// A gain at the layout's shift (less 16) or its natural one.
const fn gain(
    shape: Option<crate::Shape>,
    slot: crate::layout::Slot,
    value: f64,
    min_shift: u32,
    which: Setting,
) -> Result<SlimCoef, ConfigError> {
    let layout_shift = match shape {
        Some(s) => s.shift(slot),
        None => None,
    };
    let c = match layout_shift {
        Some(shift) => {
            if shift < 16 + min_shift {
                return Err(ConfigError::Layout(which));
            }
            match SlimCoef::with_shift(value, shift - 16) {
                Some(c) => c,
                None => {
                    return Err(if value.is_finite() {
                        ConfigError::Layout(which)
                    } else {
                        ConfigError::NotFinite(which)
                    });
                }
            }
        }
        None => match SlimCoef::from_f64(value, min_shift) {
            Some(c) => c,
            None => return Err(ConfigError::OutOfFormat(which)),
        },
    };
    if value == 0.0 {
        return Ok(c);
    }
    let err = c.to_f64() - value;
    let bound = SLIM_COEF_REL_TOLERANCE * if value < 0.0 { -value } else { value };
    if err > bound || -err > bound {
        return Err(match layout_shift {
            Some(_) => ConfigError::Layout(which),
            None => ConfigError::TooFine(which),
        });
    }
    Ok(c)
}

const fn optional(
    shape: Option<crate::Shape>,
    slot: crate::layout::Slot,
    value: Option<f64>,
    min_shift: u32,
    which: Setting,
) -> Result<SlimCoef, ConfigError> {
    match value {
        Some(v) => gain(shape, slot, v, min_shift, which),
        None => Ok(SlimCoef::ZERO),
    }
}

/// Nearest raw value (ties away from zero), or out of format.
const fn signal(value: f64, which: Setting) -> Result<Slim16, ConfigError> {
    if !value.is_finite() {
        return Err(ConfigError::NotFinite(which));
    }
    let r = crate::scaling::round_half_away(value);
    if r >= -32_768.0 && r <= 32_767.0 {
        Ok(Slim16(r as i16))
    } else {
        Err(ConfigError::OutOfFormat(which))
    }
}

/// An output limit rounded inward: up for the lower one, down for the
/// upper one.
const fn limit(value: f64, lower: bool, which: Setting) -> Result<Slim16, ConfigError> {
    let v = attempt!(signal(value, which));
    let stored = v.0 as f64;
    let r = if lower && stored < value {
        v.0 as i32 + 1
    } else if !lower && stored > value {
        v.0 as i32 - 1
    } else {
        v.0 as i32
    };
    if r < -32_768 || r > 32_767 {
        return Err(ConfigError::OutOfFormat(which));
    }
    Ok(Slim16(r as i16))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_shift_table() {
        // (p, s, floor(p/2^s + 1/2)), worked by hand.
        for (p, s, want) in [
            (5, 1, 3),
            (-5, 1, -2),
            (7, 2, 2),
            (-7, 2, -2),
            (6, 2, 2),
            (1, 1, 1),
            (-1, 1, 0),
            (123, 0, 123),
            (1 << 30, 30, 1),
            (-(1 << 30), 30, -1),
        ] {
            assert_eq!(round_shift(p, s), want, "p={p} s={s}");
        }
    }

    #[test]
    fn half_added_rounding_is_round_shift_for_every_product() {
        // Every shift; the extreme products and states and a dense walk
        // over |p| ≤ 2³⁰: the value of floor(p / 2^s + 1/2) (exact in
        // i64) and of `round_shift`.
        let mut checked = 0u32;
        for s in 0..=SLIM_MAX_SHIFT {
            let edges = [
                1 << 30,
                (1 << 30) - 1,
                -(1 << 30),
                -(1 << 30) + 1,
                i32::from(i16::MAX) * i32::from(i16::MIN),
                805_298_176,
                -805_298_176,
                0,
                1,
                -1,
            ];
            let walk = (-(1i32 << 30)..=(1 << 30)).step_by(65_521);
            for p in edges.into_iter().chain(walk) {
                let half = if s == 0 { 0 } else { 1i64 << (s - 1) };
                let want = (i64::from(p) + half) >> s;
                assert_eq!(i64::from(round_half_added(p, s)), want, "p={p} s={s}");
                assert_eq!(round_half_added(p, s), round_shift(p, s), "p={p} s={s}");
                checked += 1;
            }
        }
        assert!(checked > 1_000_000);
        // The state's narrowing agrees with `narrow` on the state range.
        for acc in (-805_298_176..=805_298_176).step_by(4_093) {
            assert_eq!(Slim16::narrow_state(acc), Slim16::narrow(acc), "acc={acc}");
        }
    }

    /// The step's own chain: `(e, v)` with every 16-bit saturation.
    fn chain(c: &Config<Slim16>, r: Slim16, y: Slim16, acc: i32) -> (Slim16, Slim16) {
        let e = r.sub(y);
        let v =
            c.kp.scale(e)
                .add(Slim16::narrow_state(acc))
                .add(c.feed_forward_zero);
        (e, v)
    }

    /// Where `v` falls against the output limits: above, below, or within
    /// (then the value itself).
    fn side(c: &Config<Slim16>, v: Slim16) -> (i8, i16) {
        if v > c.output_max {
            (1, 0)
        } else if v < c.output_min {
            (-1, 0)
        } else {
            (0, v.0)
        }
    }

    /// A grid configuration of the two proofs' tests: `kp`, `ki`, output
    /// `lo … hi`, measurement range ±60, `scaling`, with or without filter;
    /// `None` if the format refuses it.
    fn grid_config(
        kp: f64,
        ki: f64,
        lo: f64,
        hi: f64,
        scaling: crate::Scaling,
        filter: bool,
    ) -> Option<Config<Slim16>> {
        let mut s = Settings::new(0.01, kp, ki, lo, hi)
            .with_measurement_range(-60.0, 60.0)
            .with_scaling(scaling);
        if filter {
            s = s.with_filter_time_s(0.02);
        }
        Config::<Slim16>::new(&s).ok()
    }

    /// The raw ranges of the setpoint (the measurement range) and of the
    /// filtered measurement (any 16-bit value with a filter).
    fn input_ranges(c: &Config<Slim16>, filter: bool) -> ((i16, i16), (i16, i16)) {
        let m = (c.measurement_min.0, c.measurement_max.0);
        (m, if filter { (i16::MIN, i16::MAX) } else { m })
    }

    /// About `points` values evenly over `lo … hi`, with both edges, their
    /// neighbours and −1, 0, 1 where they lie inside.
    fn edge_grid(lo: i16, hi: i16, points: i32) -> impl Iterator<Item = Slim16> {
        let (lo, hi) = (i32::from(lo), i32::from(hi));
        let step = ((hi - lo) / points).max(1) as usize;
        (lo..=hi)
            .step_by(step)
            .chain([lo, lo + 1, -1, 0, 1, hi - 1, hi])
            .filter(move |x| (lo..=hi).contains(x))
            .map(|x| Slim16(x as i16))
    }

    /// Integrator states at and near both ends of the range, and around zero.
    fn edge_states(c: &Config<Slim16>) -> [i32; 7] {
        let (lo, hi) = (c.integral_min, c.integral_max);
        [lo, lo + 4095, -4097, 0, 4096, hi - 4096, hi]
    }

    #[test]
    fn wide_sums_match_the_chain_wherever_proved() {
        // Configurations around the proof's edges: Kp across the minimal
        // workload's threshold (0.625 raw per raw: sat(Kp·32 767) − 15 360
        // must pass 5 120) and beyond 1 (P itself saturates), limits up to
        // the format's edge, narrow and wide measurement ranges, with and
        // without filter. For each one the proof accepts, every input on a
        // grid with the edges (setpoint, measurement, the integrator's range
        // and zero) must give the chain's `e`, and `v` on the same side of
        // the limits (equal within them); for some it refuses, some input
        // must not (the proof is needed there).
        let scalings = [
            crate::Scaling::covering(-60.0, 60.0, -10.0, 10.0),
            crate::Scaling::covering(-60.0, 60.0, -60.0, 60.0),
            crate::Scaling::covering(-10.0, 10.0, -10.0, 10.0),
        ];
        let (mut proved, mut refused, mut refused_observable) = (0, 0, 0);
        let mut truncated_differ = 0usize;
        for kp in [
            0.03, 0.05, 0.07, 0.1, 0.12, 0.2, 0.6, 0.62, 0.625, 0.626, 0.63, 0.7, 1.0, 1.01, 2.0,
            3.9, 20.0,
        ] {
            for (lo, hi) in [
                (-10.0, 10.0),
                (0.0, 10.0),
                (-10.0, 2.0),
                (-59.9, 59.9),
                (8.0, 10.0),
                (-10.0, -8.0),
                (-3.0, 3.0),
            ] {
                for scaling in scalings {
                    for filter in [false, true] {
                        let Some(c) = grid_config(kp, 5.0, lo, hi, scaling, filter) else {
                            continue;
                        };
                        let holds = wide_sums_hold(&c);
                        let ((mlo, mhi), (ylo, yhi)) = input_ranges(&c, filter);
                        let grid = |lo, hi| edge_grid(lo, hi, 41);
                        let accs = edge_states(&c);
                        let mut differs = false;
                        for r in grid(mlo, mhi) {
                            for y in grid(ylo, yhi) {
                                for acc in accs {
                                    let (e, v) = chain(&c, r, y, acc);
                                    let (e_w, v_w, sign_w) = wide_sum(&c, r, y, acc, false);
                                    let same =
                                        e == e_w && sign_w == e && side(&c, v) == side(&c, v_w);
                                    assert!(
                                        same || !holds,
                                        "kp={kp} lo={lo} hi={hi} r={r:?} y={y:?} acc={acc}: {v:?} {v_w:?}"
                                    );
                                    differs |= !same;
                                    // Truncated: the same sum, the sign of
                                    // `e`, and `e` itself unless the step
                                    // holds (the sum beyond the limit on
                                    // `e`'s side).
                                    let (e_t, v_t, sign_t) = wide_sum(&c, r, y, acc, true);
                                    let sign = e.0.signum();
                                    let held = side(&c, v).0 == sign as i8 && sign != 0;
                                    let same_t =
                                        v_t == v_w && sign_t.0 == sign && (e_t == e || held);
                                    assert!(
                                        same_t || !holds,
                                        "kp={kp} lo={lo} hi={hi} r={r:?} y={y:?} acc={acc}: {e:?} {e_t:?} {sign_t:?}"
                                    );
                                    truncated_differ += usize::from(holds && e_t != e);
                                }
                            }
                        }
                        if holds {
                            proved += 1;
                        } else {
                            refused += 1;
                            refused_observable += usize::from(differs);
                        }
                    }
                }
            }
        }
        assert!(
            proved >= 20 && refused >= 20 && refused_observable >= 5 && truncated_differ > 0,
            "proved {proved}, refused {refused}, of which observable {refused_observable}, \
             truncated {truncated_differ}"
        );
    }

    #[test]
    fn frozen_range_check_is_the_two_comparisons() {
        // Every 16-bit value against bounds at and near the format's edges.
        let bounds = [
            (i16::MIN, i16::MAX),
            (i16::MIN, i16::MIN + 1),
            (-30_720, 30_720),
            (-1, 0),
            (0, 0),
            (7, 9),
            (i16::MAX - 1, i16::MAX),
        ];
        for (lo, hi) in bounds {
            let (lo, hi) = (Slim16(lo), Slim16(hi));
            for x in i16::MIN..=i16::MAX {
                let x = Slim16(x);
                assert_eq!(
                    x.inside_frozen(lo, hi),
                    x >= lo && x <= hi,
                    "{x:?} {lo:?} {hi:?}"
                );
            }
        }
    }

    #[test]
    fn the_integrator_stays_in_range_wherever_proved() {
        // The step's integrator path with every 16-bit saturation (no slew,
        // no downstream input: both only hold the integrator more often), on
        // and off an engage: for each configuration the proof accepts, the
        // integrated state must lie within its range for every input and
        // state on a grid with the edges; for some it refuses, it must not.
        let scalings = [
            crate::Scaling::covering(-60.0, 60.0, -10.0, 10.0),
            crate::Scaling::covering(-60.0, 60.0, -60.0, 60.0),
            crate::Scaling::NONE
                .with_measurement(crate::Scale::new(512.0, 0.0))
                .with_command(crate::Scale::new(512.0, 0.0)),
        ];
        let (mut proved, mut refused, mut refused_observable) = (0, 0, 0);
        for kp in [0.01, 0.03, 0.1, 0.15, 0.3, 0.62, 0.63, 1.0, 2.0, 20.0] {
            for ki in [5.0, 50.0, 90.0] {
                for (lo, hi) in [
                    (-10.0, 10.0),
                    (0.0, 10.0),
                    (-10.0, 2.0),
                    (8.0, 10.0),
                    (-10.0, -8.0),
                    (-3.0, 3.0),
                ] {
                    for scaling in scalings {
                        for filter in [false, true] {
                            let Some(c) = grid_config(kp, ki, lo, hi, scaling, filter) else {
                                continue;
                            };
                            let stays = integral_stays(&c);
                            let ((mlo, mhi), (ylo, yhi)) = input_ranges(&c, filter);
                            let grid = |lo, hi| edge_grid(lo, hi, 19);
                            let (imin, imax) = (c.integral_min, c.integral_max);
                            let accs = edge_states(&c);
                            let (omin, omax) = (c.output_min, c.output_max);
                            let mid = Slim16(((i32::from(omin.0) + i32::from(omax.0)) / 2) as i16);
                            let engages = [None, Some(omin), Some(mid), Some(omax)];
                            let ff = c.feed_forward_zero;
                            let mut outside = false;
                            for r in grid(mlo, mhi) {
                                for y in grid(ylo, yhi) {
                                    let e = r.sub(y);
                                    let p = c.kp.scale(e);
                                    for acc in accs {
                                        for engage in engages {
                                            let (acc, v) = match engage {
                                                Some(t) => {
                                                    let x = Slim16::deplete(
                                                        Slim16::deplete(t.widen(), p),
                                                        ff,
                                                    );
                                                    (x.clamp(imin, imax), t)
                                                }
                                                None => {
                                                    (acc, p.add(Slim16::narrow_state(acc)).add(ff))
                                                }
                                            };
                                            let u = v.clamp(omin, omax);
                                            let held = (u < v && e > Slim16::ZERO)
                                                || (u > v && e < Slim16::ZERO);
                                            if held {
                                                continue;
                                            }
                                            let new = c.ki_ts.integrate(acc, e);
                                            let inside = (imin..=imax).contains(&new);
                                            assert!(
                                                inside || !stays,
                                                "kp={kp} ki={ki} lo={lo} hi={hi} r={r:?} y={y:?} acc={acc} engage={engage:?}: {new}"
                                            );
                                            outside |= !inside;
                                        }
                                    }
                                }
                            }
                            if stays {
                                proved += 1;
                            } else {
                                refused += 1;
                                refused_observable += usize::from(outside);
                            }
                        }
                    }
                }
            }
        }
        assert!(
            proved >= 20 && refused >= 20 && refused_observable >= 5,
            "proved {proved}, refused {refused}, of which observable {refused_observable}"
        );
    }

    #[test]
    fn narrow_rounds_and_saturates() {
        let half = 1 << (SLIM_STATE_FRAC_BITS - 1);
        assert_eq!(Slim16::narrow(half).raw(), 1);
        assert_eq!(Slim16::narrow(-half).raw(), 0);
        assert_eq!(Slim16::narrow(i32::MAX), Slim16::MAX);
        assert_eq!(Slim16::narrow(i32::MIN), Slim16::MIN);
    }

    #[test]
    fn integrate_matches_scale_into_within_bounds() {
        let ki = SlimCoef::from_f64(0.999, 15).expect("fits");
        let ratio = SlimCoef::from_f64(1.0, 14).expect("fits");
        for acc in [-805_298_176, -1, 0, 805_298_176] {
            for x in [i16::MIN, -1, 0, 1, i16::MAX] {
                let x = Slim16(x);
                let a = ki.integrate(acc, x);
                assert_eq!(a, ki.scale_into(acc, x));
                assert_eq!(ratio.integrate(a, x), ratio.scale_into(a, x));
            }
        }
    }

    #[test]
    fn sub_lsb_integral_increments_accumulate() {
        // Ki·Ts = 1e-3 raw per raw and sample is stored as 16 777 · 2⁻²⁴;
        // an error of 1 LSB adds round(16 777 / 2¹¹) = round(8.19) = 8
        // state LSB per step; the command reaches 1 LSB once I ≥ ½ LSB =
        // 4096 state LSB, after 512 updates, at step 513 (ideal
        // arithmetic: 500 updates).
        let s = Settings::new(0.01, 0.0, 0.1, -100.0, 100.0);
        let mut pi = crate::Controller::new(Config::<Slim16>::new(&s).expect("valid"));
        assert_eq!(
            (pi.config().ki_ts().mantissa(), pi.config().ki_ts().shift()),
            (16_777, 24)
        );
        let first = (1..=1000).find(|_| pi.step(Slim16(1), Slim16(0)).command != Slim16(0));
        assert_eq!(first, Some(513));
    }

    #[test]
    fn identity_settings_in_raw_units() {
        // 16-bit ADC counts do not fit: 65 535 > 32 767.
        let s = Settings::new(0.01, 1.0, 1.0, 0.0, 1000.0)
            .with_scaling(crate::Scaling::NONE.with_adc(16, crate::Scale::new(1000.0, 0.0)));
        assert_eq!(
            Config::<Slim16>::new(&s),
            Err(ConfigError::OutOfFormat(Setting::MeasurementMax))
        );
    }
}
