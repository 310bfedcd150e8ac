//! The numeric backends: one trait, three implementations.
//!
//! The control algorithm ([`crate::Controller`]) is written once against
//! [`Backend`]; `f32`, `f64` and [`I16F16`] (Q16.16 fixed point) implement it.
//! A backend decides how numbers are stored and how the few operations the
//! algorithm needs round and saturate; it never changes the algorithm.
//!
//! | backend | signal | accumulator | coefficient | rounding | overflow |
//! |---|---|---|---|---|---|
//! | `I16F16` | Q16.16 | Q32.32 | [`FixedCoef`] | nearest, ties to +∞ | saturates |
//! | `f32` | f32 | f32 | f32 | IEEE nearest-even | ranges bounded at configuration |
//! | `f64` | f64 | f64 | f64 | IEEE nearest-even | ranges bounded at configuration |

use core::fmt::Debug;

use fixed::types::{I16F16, I32F32};

use crate::config::Config;
use crate::error::ConfigError;
use crate::q::{self, FixedCoef};
use crate::settings::Settings;

/// Arithmetic the controller needs from a number type.
///
/// Implemented for `f32`, `f64` and `I16F16`. A new backend implements these
/// operations with its own rounding and overflow rules and documents them;
/// see `DEVELOPERS.md`.
pub trait Backend: Copy + PartialOrd + Debug {
    /// Per-sample coefficient (gains, filter and tracking ratios).
    type Coef: Copy + PartialEq + Debug;
    /// Integrator and filter state, with at least the signal's precision.
    type Accum: Copy + PartialOrd + Debug;

    /// Zero signal.
    const ZERO: Self;
    /// Short name for reports: `"fixed"`, `"f32"`, `"f64"`.
    const NAME: &'static str;

    /// Validate `settings` and store them in this backend's formats.
    ///
    /// # Errors
    /// A [`ConfigError`] naming the first setting that is invalid or does not
    /// fit this backend.
    fn configure(settings: &Settings) -> Result<Config<Self>, ConfigError>;

    /// Two coefficients with a common scale (needed to interpolate between
    /// them); `min_shift` as for [`FixedCoef::from_f64`]. `None` if either
    /// does not fit.
    fn coef_pair(a: f64, b: f64, min_shift: u32) -> Option<(Self::Coef, Self::Coef)>;

    /// Nearest signal to `x` (host-side conversion; saturates, NaN stays NaN
    /// for float backends and becomes 0 for fixed).
    fn from_f64(x: f64) -> Self;
    /// The signal as `f64` (exact for all three backends).
    fn to_f64(self) -> f64;
    /// The coefficient as `f64` (exact for all three backends).
    fn coef_to_f64(c: Self::Coef) -> f64;

    /// `false` for NaN and ±∞.
    fn is_finite(self) -> bool;
    /// `self + other`, saturating where the format can overflow.
    fn add(self, other: Self) -> Self;
    /// `self − other`, saturating where the format can overflow.
    fn sub(self, other: Self) -> Self;
    /// `self · c`, rounded to a signal.
    fn scale(self, c: Self::Coef) -> Self;
    /// `acc + x · c`, rounded at accumulator precision.
    fn scale_into(acc: Self::Accum, x: Self, c: Self::Coef) -> Self::Accum;
    /// `acc + x`.
    fn accumulate(acc: Self::Accum, x: Self) -> Self::Accum;
    /// `acc − x`.
    fn deplete(acc: Self::Accum, x: Self) -> Self::Accum;
    /// The signal at accumulator precision (exact).
    fn widen(self) -> Self::Accum;
    /// The accumulator rounded to a signal.
    fn narrow(acc: Self::Accum) -> Self;
    /// Linear interpolation `lo + (hi − lo)·frac`, `frac` in [0, 1].
    fn coef_lerp(lo: Self::Coef, hi: Self::Coef, frac: Self) -> Self::Coef;
}

impl Backend for I16F16 {
    type Coef = FixedCoef;
    type Accum = I32F32;
    const ZERO: Self = I16F16::ZERO;
    const NAME: &'static str = "fixed";

    fn configure(settings: &Settings) -> Result<Config<Self>, ConfigError> {
        Config::<I16F16>::new(settings)
    }
    fn coef_pair(a: f64, b: f64, min_shift: u32) -> Option<(FixedCoef, FixedCoef)> {
        // Zero fits any shift: let the other value choose.
        let natural =
            |x: f64| FixedCoef::from_f64(x, min_shift).map(|c| (x != 0.0).then_some(c.shift()));
        let shift = match (natural(a)?, natural(b)?) {
            (Some(sa), Some(sb)) => sa.min(sb),
            (Some(s), None) | (None, Some(s)) => s,
            (None, None) => min_shift,
        };
        Some((
            FixedCoef::with_shift(a, shift)?,
            FixedCoef::with_shift(b, shift)?,
        ))
    }
    fn from_f64(x: f64) -> Self {
        I16F16::saturating_from_num(if x.is_nan() { 0.0 } else { x })
    }
    fn to_f64(self) -> f64 {
        self.to_num()
    }
    fn coef_to_f64(c: FixedCoef) -> f64 {
        c.to_f64()
    }
    #[inline]
    fn is_finite(self) -> bool {
        true
    }
    #[inline]
    fn add(self, other: Self) -> Self {
        self.saturating_add(other)
    }
    #[inline]
    fn sub(self, other: Self) -> Self {
        self.saturating_sub(other)
    }
    #[inline]
    fn scale(self, c: FixedCoef) -> Self {
        c.scale(self)
    }
    #[inline]
    fn scale_into(acc: I32F32, x: Self, c: FixedCoef) -> I32F32 {
        c.scale_into(acc, x)
    }
    #[inline]
    fn accumulate(acc: I32F32, x: Self) -> I32F32 {
        acc.saturating_add(q::signal_to_accum(x))
    }
    #[inline]
    fn deplete(acc: I32F32, x: Self) -> I32F32 {
        acc.saturating_sub(q::signal_to_accum(x))
    }
    #[inline]
    fn widen(self) -> I32F32 {
        q::signal_to_accum(self)
    }
    #[inline]
    fn narrow(acc: I32F32) -> Self {
        q::accum_to_signal(acc)
    }
    fn coef_lerp(lo: FixedCoef, hi: FixedCoef, frac: Self) -> FixedCoef {
        lo.lerp(hi, frac)
    }
}

macro_rules! float_backend {
    ($t:ty, $name:literal) => {
        impl Backend for $t {
            type Coef = $t;
            type Accum = $t;
            const ZERO: Self = 0.0;
            const NAME: &'static str = $name;

            fn configure(settings: &Settings) -> Result<Config<Self>, ConfigError> {
                Config::<$t>::new(settings)
            }
            fn coef_pair(a: f64, b: f64, _min_shift: u32) -> Option<($t, $t)> {
                (a.is_finite() && b.is_finite()).then_some((a as $t, b as $t))
            }
            fn from_f64(x: f64) -> Self {
                x as $t
            }
            fn to_f64(self) -> f64 {
                f64::from(self)
            }
            fn coef_to_f64(c: $t) -> f64 {
                f64::from(c)
            }
            #[inline]
            fn is_finite(self) -> bool {
                <$t>::is_finite(self)
            }
            #[inline]
            fn add(self, other: Self) -> Self {
                self + other
            }
            #[inline]
            fn sub(self, other: Self) -> Self {
                self - other
            }
            #[inline]
            fn scale(self, c: $t) -> Self {
                self * c
            }
            #[inline]
            fn scale_into(acc: $t, x: Self, c: $t) -> $t {
                acc + x * c
            }
            #[inline]
            fn accumulate(acc: $t, x: Self) -> $t {
                acc + x
            }
            #[inline]
            fn deplete(acc: $t, x: Self) -> $t {
                acc - x
            }
            #[inline]
            fn widen(self) -> $t {
                self
            }
            #[inline]
            fn narrow(acc: $t) -> Self {
                acc
            }
            fn coef_lerp(lo: $t, hi: $t, frac: Self) -> $t {
                lo + (hi - lo) * frac
            }
        }
    };
}

float_backend!(f32, "f32");
float_backend!(f64, "f64");
