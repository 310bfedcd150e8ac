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
use crate::error::{ConfigError, Setting};
use crate::layout::Layout;
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
pub trait Backend: Copy + PartialOrd + Debug + 'static {
    /// Per-sample coefficient (gains, filter and tracking ratios).
    type Coef: Copy + PartialEq + Debug + 'static;
    /// Integrator and filter state, with at least the signal's precision.
    type Accum: Copy + PartialOrd + Debug + 'static;

    /// Zero signal.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// assert_eq!(<I16F16 as Backend>::ZERO, I16F16::ZERO);
    /// assert_eq!(<f32 as Backend>::ZERO, 0.0);
    /// ```
    const ZERO: Self;
    /// The signal one (1.0).
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// assert_eq!(<I16F16 as Backend>::ONE.to_bits(), 1 << 16);
    /// assert_eq!(<f64 as Backend>::ONE, 1.0);
    /// ```
    const ONE: Self;
    /// Zero accumulator.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::{I16F16, I32F32};
    /// assert_eq!(<I16F16 as Backend>::ACCUM_ZERO, I32F32::ZERO);
    /// ```
    const ACCUM_ZERO: Self::Accum;
    /// `true` if `x + y` and `x − y` never land beyond the exact result
    /// (fixed point: exact, or saturated towards it); `false` for float
    /// backends, whose sums round to nearest. The slew limiter then uses
    /// [`Backend::raise_by`] and [`Backend::lower_by`] for its bounds.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// assert!(<I16F16 as Backend>::EXACT_SUMS && !<f32 as Backend>::EXACT_SUMS);
    /// ```
    const EXACT_SUMS: bool;
    /// Short name for reports: `"fixed"`, `"f32"`, `"f64"`.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// assert_eq!([I16F16::NAME, f32::NAME, f64::NAME], ["fixed", "f32", "f64"]);
    /// ```
    const NAME: &'static str;

    /// Validate `settings` and store them in this backend's formats, for
    /// layout `L`.
    ///
    /// ```
    /// use evenkeel::{Backend, Runtime, Settings};
    /// let c = f32::configure::<Runtime>(&Settings::new(0.1, 1.0, 1.0, 0.0, 1.0))?;
    /// assert_eq!(c.output_limits(), (0.0, 1.0));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// # Errors
    /// A [`ConfigError`] naming the first setting that is invalid or does not
    /// fit this backend.
    fn configure<L: Layout>(settings: &Settings) -> Result<Config<Self, L>, ConfigError>;

    /// Check a gain given in this backend's coefficient format the way
    /// configuration checks the gains it computes: finite, non-negative,
    /// within the format's range; fixed point also needs a shift of at least
    /// `min_shift` and, when `layout_shift` is given, exactly that shift.
    ///
    /// ```
    /// use evenkeel::{Backend, ConfigError, FixedCoef, Setting};
    /// use fixed::types::I16F16;
    /// let ki_ts = FixedCoef::from_f64(0.5, 0).ok_or("does not fit")?; // shift 30
    /// assert_eq!(I16F16::check_gain(ki_ts, 16, None, Setting::Ki), Ok(()));
    /// assert_eq!(I16F16::check_gain(ki_ts, 16, Some(28), Setting::Ki), Err(ConfigError::Layout(Setting::Ki)));
    /// assert_eq!(f32::check_gain(f32::NAN, 0, None, Setting::Kp), Err(ConfigError::NotFinite(Setting::Kp)));
    /// # Ok::<(), &str>(())
    /// ```
    ///
    /// # Errors
    /// [`ConfigError::NotFinite`], [`ConfigError::Negative`],
    /// [`ConfigError::OutOfFormat`] or [`ConfigError::Layout`] for `which`.
    fn check_gain(
        c: Self::Coef,
        min_shift: u32,
        layout_shift: Option<u32>,
        which: Setting,
    ) -> Result<(), ConfigError>;

    /// `true` for a zero coefficient.
    ///
    /// ```
    /// use evenkeel::{Backend, FixedCoef};
    /// use fixed::types::I16F16;
    /// assert!(I16F16::coef_is_zero(FixedCoef::ZERO) && !f32::coef_is_zero(0.5));
    /// ```
    fn coef_is_zero(c: Self::Coef) -> bool;

    /// The coefficient as a compile-time layout reads it: for fixed point
    /// the same mantissa with its binary point at `shift` (a constant there,
    /// so every product shifts by an immediate). Configuration stores each
    /// coefficient of a layout at the layout's shift, so the value is
    /// unchanged. Float backends: `c` itself (the default).
    ///
    /// ```
    /// use evenkeel::{Backend, FixedCoef};
    /// use fixed::types::I16F16;
    /// let c = FixedCoef::with_shift(0.75, 20).ok_or("does not fit")?;
    /// assert_eq!(I16F16::coef_at_shift(c, 20), c);
    /// assert_eq!(f64::coef_at_shift(0.75, 20), 0.75);
    /// # Ok::<(), &str>(())
    /// ```
    #[inline(always)]
    fn coef_at_shift(c: Self::Coef, shift: u32) -> Self::Coef {
        let _ = shift;
        c
    }

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

    /// Two coefficients in a compile-time layout's format: fixed point at
    /// exactly `shift`, float backends as [`Backend::coef_pair`].
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// let (a, _) = I16F16::coef_pair_at(0.5, 3.0, 20).ok_or("does not fit")?;
    /// assert_eq!(a.shift(), 20);
    /// # Ok::<(), &str>(())
    /// ```
    fn coef_pair_at(a: f64, b: f64, shift: u32) -> Option<(Self::Coef, Self::Coef)>;

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
    /// `self − other` for operands whose exact difference is a signal (the
    /// caller proves it, e.g. the deadband: `e − clamp(e, −w, w)` with
    /// w ≥ 0): no saturation check. Fixed point: exact there, wrapping
    /// outside (never a panic); float backends: `self − other`.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// let (e, w) = (I16F16::from_num(3), I16F16::from_num(1));
    /// assert_eq!(Backend::sub_exact(e, w), Backend::sub(e, w));
    /// ```
    fn sub_exact(self, other: Self) -> Self;
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
    /// `acc + x · c` like [`Backend::scale_into`], for an accumulator inside
    /// the range the controller keeps its state in and a coefficient from a
    /// validated configuration. Fixed point: |acc| < 2⁶² Q32.32 LSB and a
    /// shift of at least 16 make |acc + x·c| < 2⁶³, so the sum needs no
    /// overflow check; outside that range the result is unspecified (it
    /// never panics). The default is [`Backend::scale_into`].
    ///
    /// ```
    /// use evenkeel::{Backend, FixedCoef};
    /// use fixed::types::{I16F16, I32F32};
    /// let k = FixedCoef::from_f64(1e-4, 16).ok_or("does not fit")?;
    /// let acc = I32F32::from_num(2.5);
    /// let x = I16F16::from_num(-3);
    /// assert_eq!(I16F16::integrate(acc, x, k), I16F16::scale_into(acc, x, k));
    /// # Ok::<(), &str>(())
    /// ```
    #[inline(always)]
    fn integrate(acc: Self::Accum, x: Self, c: Self::Coef) -> Self::Accum {
        Self::scale_into(acc, x, c)
    }
    /// [`Backend::scale`] for a coefficient whose shift is a constant of
    /// the step (a compile-time layout's, see [`Backend::coef_at_shift`]):
    /// the same result, computed the way that is cheapest with that shift
    /// known (Q16.16 on Armv6-M: the rounding half is added inside the
    /// product). Fixed point: the same result for every coefficient whose
    /// mantissa is above `i32::MIN` (validated configurations store only
    /// non-negative ones); for that one mantissa the result is unspecified
    /// (it never panics). The default is [`Backend::scale`].
    ///
    /// ```
    /// use evenkeel::{Backend, FixedCoef};
    /// use fixed::types::I16F16;
    /// let c = FixedCoef::with_shift(0.7, 29).ok_or("does not fit")?;
    /// let x = I16F16::from_bits(-12_345_679);
    /// assert_eq!(I16F16::scale_at(x, c), x.scale(c));
    /// # Ok::<(), &str>(())
    /// ```
    #[inline(always)]
    fn scale_at(self, c: Self::Coef) -> Self {
        self.scale(c)
    }
    /// [`Backend::integrate`] for a coefficient whose shift is a constant
    /// of the step (see [`Backend::scale_at`]): the same result. The
    /// default is [`Backend::integrate`].
    ///
    /// ```
    /// use evenkeel::{Backend, FixedCoef};
    /// use fixed::types::{I16F16, I32F32};
    /// let k = FixedCoef::with_shift(0.05, 35).ok_or("does not fit")?;
    /// let (acc, x) = (I32F32::from_num(-2.5), I16F16::from_num(3.75));
    /// assert_eq!(I16F16::integrate_at(acc, x, k), I16F16::integrate(acc, x, k));
    /// # Ok::<(), &str>(())
    /// ```
    #[inline(always)]
    fn integrate_at(acc: Self::Accum, x: Self, c: Self::Coef) -> Self::Accum {
        Self::integrate(acc, x, c)
    }
    /// `lo ≤ self ≤ hi`, for `lo ≤ hi` (the measurement range check of a
    /// compile-time layout's step; for `lo > hi` the result is unspecified).
    /// Q16.16 compares the distances from `lo` without sign (one
    /// subtraction and one comparison per value, the range's width computed
    /// once); the default compares both bounds.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::I16F16;
    /// let (lo, hi) = (I16F16::from_num(-100), I16F16::from_num(100));
    /// for x in [I16F16::MIN, I16F16::from_num(-100.001), lo, I16F16::ZERO, hi, I16F16::MAX] {
    ///     assert_eq!(x.inside(lo, hi), x >= lo && x <= hi);
    /// }
    /// assert!(2.5_f32.inside(0.0, 2.5) && !2.6_f32.inside(0.0, 2.5));
    /// ```
    #[inline(always)]
    fn inside(self, lo: Self, hi: Self) -> bool {
        self >= lo && self <= hi
    }
    /// [`Backend::inside`] for the step of a [`crate::frozen!`] layout,
    /// whose bounds are constants: the same result (for `lo ≤ hi`). The
    /// 16-bit format compares the distance from `lo` in 32 bits without
    /// sign (one subtraction and one comparison per value); the default is
    /// [`Backend::inside`].
    ///
    /// ```
    /// use evenkeel::{Backend, Slim16};
    /// let (lo, hi) = (Slim16::from_raw(-30_720), Slim16::from_raw(30_720));
    /// for x in [i16::MIN, -30_721, -30_720, 0, 30_720, 30_721, i16::MAX] {
    ///     let x = Slim16::from_raw(x);
    ///     assert_eq!(x.inside_frozen(lo, hi), x >= lo && x <= hi);
    /// }
    /// ```
    #[inline(always)]
    fn inside_frozen(self, lo: Self, hi: Self) -> bool {
        self.inside(lo, hi)
    }
    /// The largest value not above `self + step`, for `step ≥ 0`: the
    /// slew limiter's upper bound, which must never be further from `self`
    /// than the stored step (float rounding of `self + step` alone can be,
    /// by up to half a unit in the last place).
    ///
    /// ```
    /// use evenkeel::Backend;
    /// // 1e6 + 0.04 rounds to 1e6 + 0.0625 in f32; the bound stays at or below it.
    /// let up = Backend::raise_by(1.0e6_f32, 0.04);
    /// assert!(f64::from(up) - 1.0e6 <= 0.04);
    /// assert_eq!(Backend::raise_by(1.0_f64, 0.25), 1.25);
    /// ```
    fn raise_by(self, step: Self) -> Self;
    /// The smallest value not below `self − step`, for `step ≥ 0`.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// let down = Backend::lower_by(-1.0e6_f32, 0.04);
    /// assert!(f64::from(down) + 1.0e6 >= -0.04);
    /// ```
    fn lower_by(self, step: Self) -> Self;
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
    /// [`Backend::narrow`] of an accumulator inside the range the
    /// controller keeps its state in (the integrator within its range, the
    /// filter state within the signal range): 16-bit format |acc| < 2³⁰
    /// state LSB, where the rounding half can be added before the shift
    /// without wrapping; outside that range the result is unspecified (it
    /// never panics). The default is [`Backend::narrow`].
    ///
    /// ```
    /// use evenkeel::{Backend, Slim16};
    /// for acc in [4095, 4096, -4096, -4097, 805_298_176, -805_298_176] {
    ///     assert_eq!(Slim16::narrow_state(acc), Slim16::narrow(acc));
    /// }
    /// ```
    #[inline(always)]
    fn narrow_state(acc: Self::Accum) -> Self {
        Self::narrow(acc)
    }
    /// The configuration a [`crate::frozen!`] layout `L` fixes for this
    /// backend, or `None` (every other layout, and the float backends).
    ///
    /// ```
    /// use evenkeel::{Backend, Runtime, Settings, Slim16};
    /// evenkeel::frozen!(Fan: Slim16 = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0));
    /// assert_eq!(Slim16::frozen::<Fan>(), Some(&Fan::CONFIG));
    /// assert_eq!(Slim16::frozen::<Runtime>(), None);
    /// assert_eq!(f32::frozen::<Fan>(), None);
    /// ```
    #[inline(always)]
    fn frozen<L: Layout>() -> Option<&'static Config<Self, L>> {
        None
    }
    /// Under a [`crate::frozen!`] layout whose configuration proves it at
    /// compile time, the error `r − y_f` and the sum `P + I` of a step with
    /// the zero feed-forward, computed without the intermediate
    /// saturations of the format: `(e, v, sign)`. The step's hold test
    /// reads the sign of `sign`, which is that of the step's own `e`; `e`
    /// is the step's own `e` whenever `r − y_f` lies within the format
    /// (else, on some targets, its wrapped value, which a step that does
    /// not engage never reads, as it holds its integrator; an engage takes
    /// its own `e`). `v` lies on the same side of each output limit as the
    /// step's own sum (equal to it whenever that is within the limits).
    /// Every other layout, and any configuration the proof does not
    /// cover: `None` (the step computes all three itself). `integral` is
    /// the integrator state, within its range or zero. The default is
    /// `None`.
    ///
    /// ```
    /// use evenkeel::{Backend, Runtime, Settings, Slim16};
    /// evenkeel::frozen!(Fan: Slim16 = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0));
    /// let (r, y) = (Slim16::from_raw(60), Slim16::from_raw(20));
    /// let (e, v, sign) = Slim16::frozen_sum::<Fan>(r, y, 0).unwrap();
    /// assert_eq!((e, v), (Slim16::from_raw(40), Slim16::from_raw(40)));
    /// assert!(sign > Slim16::from_raw(0));
    /// assert_eq!(Slim16::frozen_sum::<Runtime>(r, y, 0), None);
    /// ```
    #[inline(always)]
    fn frozen_sum<L: Layout>(
        r: Self,
        y_f: Self,
        integral: Self::Accum,
    ) -> Option<(Self, Self, Self)> {
        let _ = (r, y_f, integral);
        None
    }
    /// Whether, under a [`crate::frozen!`] layout whose configuration
    /// proves it at compile time, the integrator updated by a step that
    /// took [`Backend::frozen_sum`] (an engage step too) always lies within its
    /// range (so that its clamp can be left out). The default is `false`.
    ///
    /// ```
    /// use evenkeel::{Backend, Runtime, Settings, Slim16};
    /// evenkeel::frozen!(Fan: Slim16 = Settings::new(0.01, 1.0, 0.5, 0.0, 100.0));
    /// assert!(Slim16::frozen_integral_stays::<Fan>());
    /// // Twice the integral gain: an engage that leaves the integrator at
    /// // its lowest, then the largest increment, could pass its top.
    /// evenkeel::frozen!(Fast: Slim16 = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0));
    /// assert!(!Slim16::frozen_integral_stays::<Fast>());
    /// assert!(!Slim16::frozen_integral_stays::<Runtime>());
    /// ```
    #[inline(always)]
    fn frozen_integral_stays<L: Layout>() -> bool {
        false
    }
    /// `acc` clamped into `[lo, hi]` (`lo ≤ hi`): the integrator's clamp.
    /// The default compares the accumulators; Q16.16 first compares only
    /// their upper 32 bits, which decides every value whose integer part
    /// lies strictly between those of the limits (the common case: one
    /// 32-bit comparison per side instead of a 64-bit one), and falls back
    /// to the full comparison otherwise. Same result either way.
    ///
    /// ```
    /// use evenkeel::Backend;
    /// use fixed::types::{I16F16, I32F32};
    /// let (lo, hi) = (I32F32::from_num(-3.25), I32F32::from_num(3.25));
    /// for x in [-4.0, -3.25, -3.2, 0.0, 3.0, 3.2, 3.25, 3.3, 1e6] {
    ///     let x = I32F32::from_num(x);
    ///     assert_eq!(I16F16::clamp_state(x, lo, hi), x.clamp(lo, hi));
    /// }
    /// ```
    #[inline]
    fn clamp_state(acc: Self::Accum, lo: Self::Accum, hi: Self::Accum) -> Self::Accum {
        if acc > hi {
            hi
        } else if acc < lo {
            lo
        } else {
            acc
        }
    }
    /// The signal of a whole count `c` (an ADC reading) in raw units:
    /// exact where the format holds it, else saturated.
    ///
    /// ```
    /// use evenkeel::{Backend, Slim16};
    /// use fixed::types::I16F16;
    /// assert_eq!(I16F16::from_counts(812), I16F16::from_num(812));
    /// assert_eq!(Slim16::from_counts(812).raw(), 812);
    /// assert_eq!(Slim16::from_counts(70_000), Slim16::MAX);
    /// assert_eq!(f32::from_counts(-3), -3.0);
    /// ```
    fn from_counts(c: i32) -> Self;
    /// The signal as a whole count (what a PWM compare register takes):
    /// nearest, ties toward +∞, saturated to `i32`.
    ///
    /// ```
    /// use evenkeel::{Backend, Slim16};
    /// use fixed::types::I16F16;
    /// assert_eq!(I16F16::from_num(811.5).to_counts(), 812);
    /// assert_eq!(I16F16::from_num(-811.5).to_counts(), -811);
    /// assert_eq!(Slim16::from_raw(812).to_counts(), 812);
    /// assert_eq!(Backend::to_counts(2.5_f64), 3);
    /// ```
    fn to_counts(self) -> i32;
    /// Linear interpolation `lo + (hi − lo)·frac`, `frac` in [0, 1].
    ///
    /// ```
    /// use evenkeel::Backend;
    /// assert_eq!(f32::coef_lerp(1.0, 3.0, 0.25), 1.5);
    /// ```
    fn coef_lerp(lo: Self::Coef, hi: Self::Coef, frac: Self) -> Self::Coef;
    /// The gain schedule's interpolation fraction of `at` in the segment
    /// that starts at `from` and whose width's inverse is `inverse_width`
    /// (from [`Backend::schedule_inverse`]): `(at − from) · inverse_width`,
    /// clamped to [0, one], where one is what [`Backend::coef_lerp`] takes
    /// as the whole step (`1` for the floats and Q16.16, raw 2¹⁴ for
    /// [`crate::Slim16`]). The fixed backends take the difference exactly
    /// (it does not saturate however wide the segment).
    ///
    /// ```
    /// use evenkeel::{Backend, Slim16};
    /// let inverse = Slim16::schedule_inverse(Slim16::from_raw(100), Slim16::from_raw(300), 200.0)
    ///     .ok_or("does not fit")?;
    /// let at = |x| Slim16::schedule_fraction(Slim16::from_raw(x), Slim16::from_raw(100), inverse).raw();
    /// assert_eq!((at(50), at(150), at(300), at(900)), (0, 4_096, 16_384, 16_384));
    /// assert_eq!(f64::schedule_fraction(2.0, 1.0, 0.25), 0.25);
    /// # Ok::<(), &str>(())
    /// ```
    fn schedule_fraction(at: Self, from: Self, inverse_width: Self::Coef) -> Self {
        let raw = at.sub(from).scale(inverse_width);
        if raw < Self::ZERO {
            Self::ZERO
        } else if raw > Self::ONE {
            Self::ONE
        } else {
            raw
        }
    }
    /// The coefficient [`Backend::schedule_fraction`] multiplies by, for a
    /// segment from `from` to `to` (the breakpoints in this backend) whose
    /// written width is `width`; `None` if it does not fit. Floats and
    /// Q16.16: `1 / width`, nearest; [`crate::Slim16`]: `2¹⁴ / (to − from)`
    /// rounded up, so the fraction reaches its one exactly at `to`.
    fn schedule_inverse(from: Self, to: Self, width: f64) -> Option<Self::Coef> {
        let _ = (from, to);
        Self::coef_pair(1.0 / width, 1.0 / width, 0).map(|(c, _)| c)
    }
}

impl Backend for I16F16 {
    type Coef = FixedCoef;
    type Accum = I32F32;
    const ZERO: Self = I16F16::ZERO;
    const ONE: Self = I16F16::ONE;
    const ACCUM_ZERO: I32F32 = I32F32::ZERO;
    const EXACT_SUMS: bool = true;
    const NAME: &'static str = "fixed";

    fn configure<L: Layout>(settings: &Settings) -> Result<Config<Self, L>, ConfigError> {
        Config::<I16F16, L>::new(settings)
    }
    fn check_gain(
        c: FixedCoef,
        min_shift: u32,
        layout_shift: Option<u32>,
        which: Setting,
    ) -> Result<(), ConfigError> {
        if c.mantissa() < 0 {
            return Err(ConfigError::Negative(which));
        }
        match layout_shift {
            Some(s) if c.shift() != s => Err(ConfigError::Layout(which)),
            _ if c.shift() < min_shift => Err(ConfigError::OutOfFormat(which)),
            _ => Ok(()),
        }
    }
    fn coef_is_zero(c: FixedCoef) -> bool {
        c.mantissa() == 0
    }
    #[inline(always)]
    fn coef_at_shift(c: FixedCoef, shift: u32) -> FixedCoef {
        c.at_shift(shift)
    }
    fn coef_pair(a: f64, b: f64, min_shift: u32) -> Option<(FixedCoef, FixedCoef)> {
        q::coef_pair(a, b, min_shift)
    }
    fn coef_pair_at(a: f64, b: f64, shift: u32) -> Option<(FixedCoef, FixedCoef)> {
        q::coef_pair_at(a, b, shift)
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
    #[inline(always)]
    fn sub_exact(self, other: Self) -> Self {
        self.wrapping_sub(other)
    }
    #[inline]
    fn scale(self, c: FixedCoef) -> Self {
        c.scale(self)
    }
    #[inline]
    fn scale_into(acc: I32F32, x: Self, c: FixedCoef) -> I32F32 {
        c.scale_into(acc, x)
    }
    #[inline(always)]
    fn integrate(acc: I32F32, x: Self, c: FixedCoef) -> I32F32 {
        c.integrate(acc, x)
    }
    #[inline(always)]
    fn inside(self, lo: Self, hi: Self) -> bool {
        // For lo ≤ hi: x − lo (exact, modulo 2³²) lies in [0, hi − lo]
        // exactly when lo ≤ x ≤ hi.
        let from_lo = self.to_bits().wrapping_sub(lo.to_bits()) as u32;
        from_lo <= hi.to_bits().wrapping_sub(lo.to_bits()) as u32
    }
    #[inline(always)]
    fn scale_at(self, c: FixedCoef) -> Self {
        c.scale_at(self)
    }
    #[inline(always)]
    fn integrate_at(acc: I32F32, x: Self, c: FixedCoef) -> I32F32 {
        c.integrate_at(acc, x)
    }
    #[inline(always)]
    fn raise_by(self, step: Self) -> Self {
        self.saturating_add(step)
    }
    #[inline(always)]
    fn lower_by(self, step: Self) -> Self {
        self.saturating_sub(step)
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
    #[inline(always)]
    fn frozen<L: Layout>() -> Option<&'static Config<Self, L>> {
        const { &L::FROZEN_Q16 }.as_ref()
    }
    #[inline(always)]
    fn clamp_state(acc: I32F32, lo: I32F32, hi: I32F32) -> I32F32 {
        // Upper halves (arithmetic shift: the integer part, rounded down).
        // If lo's < acc's < hi's, then lo < acc < hi: lo < (lo_h + 1)·2³²
        // ≤ acc_h·2³² ≤ acc < (acc_h + 1)·2³² ≤ hi_h·2³² ≤ hi.
        let upper = |x: I32F32| (x.to_bits() >> 32) as i32;
        let a = upper(acc);
        if a > upper(lo) && a < upper(hi) {
            acc
        } else if acc > hi {
            hi
        } else if acc < lo {
            lo
        } else {
            acc
        }
    }
    fn from_counts(c: i32) -> Self {
        I16F16::from_bits(q::saturate_i32(i64::from(c) << 16))
    }
    #[inline]
    fn to_counts(self) -> i32 {
        let bits = self.to_bits();
        (bits >> 16) + ((bits >> 15) & 1)
    }
    fn coef_lerp(lo: FixedCoef, hi: FixedCoef, frac: Self) -> FixedCoef {
        lo.lerp(hi, frac)
    }
    fn schedule_fraction(at: Self, from: Self, inverse_width: FixedCoef) -> Self {
        q::schedule_fraction(at, from, inverse_width)
    }
}

macro_rules! float_backend {
    ($t:ty, $name:literal, $limit:expr) => {
        impl Backend for $t {
            type Coef = $t;
            type Accum = $t;
            const ZERO: Self = 0.0;
            const ONE: Self = 1.0;
            const ACCUM_ZERO: $t = 0.0;
            const EXACT_SUMS: bool = false;
            const NAME: &'static str = $name;

            fn configure<L: Layout>(settings: &Settings) -> Result<Config<Self, L>, ConfigError> {
                Config::<$t, L>::new(settings)
            }
            fn check_gain(
                c: $t,
                _min_shift: u32,
                _layout_shift: Option<u32>,
                which: Setting,
            ) -> Result<(), ConfigError> {
                if !c.is_finite() {
                    Err(ConfigError::NotFinite(which))
                } else if c < 0.0 {
                    Err(ConfigError::Negative(which))
                } else if f64::from(c) > $limit {
                    Err(ConfigError::OutOfFormat(which))
                } else {
                    Ok(())
                }
            }
            fn coef_is_zero(c: $t) -> bool {
                c == 0.0
            }
            fn coef_pair(a: f64, b: f64, _min_shift: u32) -> Option<($t, $t)> {
                (a.is_finite() && b.is_finite()).then_some((a as $t, b as $t))
            }
            fn coef_pair_at(a: f64, b: f64, _shift: u32) -> Option<($t, $t)> {
                Self::coef_pair(a, b, 0)
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
            #[inline(always)]
            fn sub_exact(self, other: Self) -> Self {
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
            fn raise_by(self, step: Self) -> Self {
                // s + t = self + step exactly (TwoSum, Knuth; common
                // practice): t < 0 means s rounded above the exact sum.
                let s = self + step;
                let t = two_sum_error!(self, step, s);
                if t < 0.0 { s.next_down() } else { s }
            }
            #[inline]
            fn lower_by(self, step: Self) -> Self {
                let s = self - step;
                let t = two_sum_error!(self, -step, s);
                if t > 0.0 { s.next_up() } else { s }
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
            fn from_counts(c: i32) -> Self {
                c as $t
            }
            fn to_counts(self) -> i32 {
                // floor(x + 1/2) by truncation (no `floor` in core);
                // saturating casts, NaN gives 0.
                let y = self + 0.5;
                let t = y as i32;
                if (t as $t) > y {
                    t.saturating_sub(1)
                } else {
                    t
                }
            }
            fn coef_lerp(lo: $t, hi: $t, frac: Self) -> $t {
                lo + (hi - lo) * frac
            }
        }
    };
}

/// The rounding error t of `s = fl(a + b)`, so that s + t = a + b exactly
/// (TwoSum, six operations, no branch; exact in round-to-nearest without
/// overflow, which configuration bounds rule out).
macro_rules! two_sum_error {
    ($a:expr, $b:expr, $s:expr) => {{
        let (a, b, s) = ($a, $b, $s);
        let bb = s - a;
        (a - (s - bb)) + (b - bb)
    }};
}

float_backend!(f32, "f32", 1.0e12);
float_backend!(f64, "f64", 1.0e150);
