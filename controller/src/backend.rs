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
///
/// ```
/// use evenkeel::Backend;
/// use fixed::types::I16F16;
/// // One generic routine, each backend's own overflow rule.
/// fn twice<B: Backend>(x: f64) -> f64 {
///     let v = B::from_f64(x);
///     v.add(v).to_f64()
/// }
/// assert_eq!(twice::<f32>(20_000.0), 40_000.0);
/// assert_eq!(twice::<I16F16>(20_000.0), I16F16::MAX.to_num::<f64>()); // saturates
/// ```
pub trait Backend: Copy + PartialOrd + Debug {
    /// Per-sample coefficient (gains, filter and tracking ratios).
    type Coef: Copy + PartialEq + Debug;
    /// Integrator and filter state, with at least the signal's precision.
    type Accum: Copy + PartialOrd + Debug;

    /// Zero signal.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// assert_eq!(<I16F16 as Backend>::ZERO, I16F16::ZERO);
    /// assert_eq!(<f32 as Backend>::ZERO, 0.0);
    /// ```
    const ZERO: Self;
    /// Short name for reports: `"fixed"`, `"f32"`, `"f64"`.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// assert_eq!([I16F16::NAME, f32::NAME, f64::NAME], ["fixed", "f32", "f64"]);
    /// ```
    const NAME: &'static str;

    /// Validate `settings` and store them in this backend's formats.
    ///
    /// ```
    /// use evenkeel::{Backend, Settings};
    /// let c = f32::configure(&Settings::new(0.1, 1.0, 1.0, 0.0, 1.0))?;
    /// assert_eq!(c.output_limits(), (0.0, 1.0));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// # Errors
    /// A [`ConfigError`] naming the first setting that is invalid or does not
    /// fit this backend.
    fn configure(settings: &Settings) -> Result<Config<Self>, ConfigError>;

    /// Two coefficients with a common scale (needed to interpolate between
    /// them); `min_shift` as for [`FixedCoef::from_f64`]. `None` if either
    /// does not fit.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// let (a, b) = I16F16::coef_pair(0.5, 3.0, 0).ok_or("does not fit")?;
    /// assert_eq!((a.shift(), b.shift()), (29, 29)); // the coarser natural shift (3.0's)
    /// assert_eq!((a.to_f64(), b.to_f64()), (0.5, 3.0));
    /// # Ok::<(), &str>(())
    /// ```
    fn coef_pair(a: f64, b: f64, min_shift: u32) -> Option<(Self::Coef, Self::Coef)>;

    /// Nearest signal to `x` (host-side conversion; saturates, NaN stays NaN
    /// for float backends and becomes 0 for fixed).
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// // I16F16: nearest, ties to even (1.5 LSB → 2, 2.5 LSB → 2), saturating.
    /// assert_eq!(I16F16::from_f64(1.5 / 65_536.0).to_bits(), 2);
    /// assert_eq!(I16F16::from_f64(2.5 / 65_536.0).to_bits(), 2);
    /// assert_eq!(I16F16::from_f64(1.0e6), I16F16::MAX);
    /// assert_eq!(I16F16::from_f64(f64::NAN), I16F16::ZERO);
    /// assert!(f32::from_f64(f64::NAN).is_nan());
    /// ```
    fn from_f64(x: f64) -> Self;
    /// The signal as `f64` (exact for all three backends).
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// assert_eq!(I16F16::from_bits(1).to_f64(), 1.0 / 65_536.0);
    /// ```
    fn to_f64(self) -> f64;
    /// The coefficient as `f64` (exact for all three backends).
    ///
    /// ```
    /// use evenkeel::{Backend, FixedCoef};
    /// use fixed::types::I16F16;
    /// let c = FixedCoef::with_shift(0.1, 20).ok_or("does not fit")?;
    /// assert_eq!(I16F16::coef_to_f64(c), 104_858.0 / 1_048_576.0); // as stored, not 0.1
    /// # Ok::<(), &str>(())
    /// ```
    fn coef_to_f64(c: Self::Coef) -> f64;

    /// `false` for NaN and ±∞.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// assert!(!Backend::is_finite(f32::INFINITY));
    /// assert!(Backend::is_finite(I16F16::MAX)); // fixed point is always finite
    /// ```
    fn is_finite(self) -> bool;
    /// `self + other`, saturating where the format can overflow.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// assert_eq!(Backend::add(I16F16::MAX, I16F16::ONE), I16F16::MAX);
    /// assert_eq!(Backend::add(1.5_f32, 2.0), 3.5);
    /// ```
    fn add(self, other: Self) -> Self;
    /// `self − other`, saturating where the format can overflow.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// assert_eq!(Backend::sub(I16F16::MIN, I16F16::ONE), I16F16::MIN);
    /// assert_eq!(Backend::sub(1.5_f64, 2.0), -0.5);
    /// ```
    fn sub(self, other: Self) -> Self;
    /// `self · c`, rounded to a signal.
    ///
    /// Fixed point: nearest, ties toward +∞, saturating.
    ///
    /// ```
    /// use evenkeel::{Backend, FixedCoef};
    /// use fixed::types::I16F16;
    /// let half = FixedCoef::from_f64(0.5, 0).ok_or("does not fit")?;
    /// assert_eq!(I16F16::from_bits(-3).scale(half).to_bits(), -1); // −1.5 LSB → −1
    /// assert_eq!(Backend::scale(3.0_f32, 0.5), 1.5);
    /// # Ok::<(), &str>(())
    /// ```
    fn scale(self, c: Self::Coef) -> Self;
    /// `acc + x · c`, rounded at accumulator precision.
    ///
    /// ```
    /// use evenkeel::{Backend, FixedCoef};
    /// use fixed::types::{I16F16, I32F32};
    /// let k = FixedCoef::from_f64(1e-4, 16).ok_or("does not fit")?;
    /// // 1e-4 · 1 LSB = 6.55 Q32.32 LSB → 7
    /// assert_eq!(I16F16::scale_into(I32F32::ZERO, I16F16::from_bits(1), k).to_bits(), 7);
    /// # Ok::<(), &str>(())
    /// ```
    fn scale_into(acc: Self::Accum, x: Self, c: Self::Coef) -> Self::Accum;
    /// `acc + x`.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::{I16F16, I32F32};
    /// let acc = I16F16::accumulate(I32F32::from_bits(1), I16F16::from_bits(1));
    /// assert_eq!(acc.to_bits(), (1 << 16) + 1); // exact
    /// ```
    fn accumulate(acc: Self::Accum, x: Self) -> Self::Accum;
    /// `acc − x`.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::{I16F16, I32F32};
    /// assert_eq!(I16F16::deplete(I32F32::ZERO, I16F16::ONE), I32F32::from_num(-1));
    /// assert_eq!(I16F16::deplete(I32F32::MIN, I16F16::ONE), I32F32::MIN); // saturates
    /// ```
    fn deplete(acc: Self::Accum, x: Self) -> Self::Accum;
    /// The signal at accumulator precision (exact).
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// assert_eq!(I16F16::from_bits(1).widen().to_bits(), 1 << 16);
    /// assert_eq!(0.1_f32.widen(), 0.1_f32); // float: identity
    /// ```
    fn widen(self) -> Self::Accum;
    /// The accumulator rounded to a signal.
    ///
    /// Fixed point: nearest, ties toward +∞, saturating.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::{I16F16, I32F32};
    /// // ±½ LSB → 1 and 0
    /// assert_eq!(I16F16::narrow(I32F32::from_bits(0x8000)).to_bits(), 1);
    /// assert_eq!(I16F16::narrow(I32F32::from_bits(-0x8000)).to_bits(), 0);
    /// ```
    fn narrow(acc: Self::Accum) -> Self;
    /// Linear interpolation `lo + (hi − lo)·frac`, `frac` in [0, 1].
    ///
    /// ```
    /// use evenkeel::Backend;
    /// assert_eq!(f32::coef_lerp(1.0, 3.0, 0.25), 1.5);
    /// ```
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
