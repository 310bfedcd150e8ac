//! A validated configuration stored in one backend's number formats.

use core::marker::PhantomData;

use fixed::types::{I16F16, I32F32};

use crate::backend::Backend;
use crate::error::{ConfigError, Setting};
use crate::layout::{Features, Layout, Runtime, Shape, Slot};
use crate::q::{self, COEF_REL_TOLERANCE, FixedCoef};
use crate::settings::{PerSample, Settings};

/// Largest relative error of the stored slew step (fixed point): 1 %.
///
/// ```
/// use evenkeel::{Config, ConfigError, Setting, Settings, SLEW_REL_TOLERANCE};
/// use fixed::types::I16F16;
/// assert_eq!(SLEW_REL_TOLERANCE, 0.01);
/// // 0.02 /s at Ts = 1 ms is 2e-5 per sample = 1.31 LSB → 1 LSB: 24 % off.
/// let s = Settings::new(0.001, 1.0, 1.0, 0.0, 1.0).with_slew_per_s(0.02);
/// assert_eq!(Config::<I16F16>::try_new(&s), Err(ConfigError::TooFine(Setting::Slew)));
/// ```
pub const SLEW_REL_TOLERANCE: f64 = 0.01;

/// Per-sample coefficients and limits of one controller, in backend `B`'s
/// formats. Built once from [`Settings`]; `Copy`, so a firmware can keep
/// several (e.g. per operating mode) in flash.
///
/// `L` says where the structure is decided: [`Runtime`] (the default) lets
/// each configuration choose its features and fixed-point formats; a
/// compile-time [`Layout`] fixes them, and every configuration of that
/// layout must have them ([`ConfigError::Layout`] otherwise).
///
/// A `const` configuration is checked by the compiler: see [`crate::config!`].
///
/// ```
/// use evenkeel::{Config, Settings};
/// use fixed::types::I16F16;
/// let settings = Settings::new(0.01, 1.5, 3.0, 0.0, 100.0).with_slew_per_s(50.0);
/// let fixed = Config::<I16F16>::try_new(&settings)?;
/// let float = Config::<f32>::try_new(&settings)?;
/// assert_eq!(fixed.slew_step().map(|s| s.to_num::<f64>()), Some(0.5));
/// assert_eq!(float.slew_step(), Some(0.5));
/// # Ok::<(), evenkeel::ConfigError>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Config<B: Backend, L: Layout = Runtime> {
    /// Optional parts that are on; the coefficient or signal of a part that
    /// is off is zero and never read.
    pub(crate) features: Features,
    pub(crate) kp: B::Coef,
    pub(crate) setpoint_weight: B::Coef,
    pub(crate) ki_ts: B::Coef,
    pub(crate) tracking_ratio: B::Coef,
    pub(crate) filter_alpha: B::Coef,
    pub(crate) slew_step: B,
    pub(crate) deadband: B,
    pub(crate) output_min: B,
    pub(crate) output_max: B,
    pub(crate) feed_forward_min: B,
    pub(crate) feed_forward_max: B,
    /// A zero feed-forward clamped into its range (what `step`, which has
    /// none, adds), so that `step` does not clamp a constant.
    pub(crate) feed_forward_zero: B,
    pub(crate) integral_min: B::Accum,
    pub(crate) integral_max: B::Accum,
    pub(crate) measurement_min: B,
    pub(crate) measurement_max: B,
    /// Zero clamped into the output limits: the command of a controller at
    /// rest.
    pub(crate) rest: B,
    pub(crate) layout: PhantomData<L>,
}

impl<B: Backend, L: Layout> Config<B, L> {
    /// Validate `settings` and store them in `B`'s formats.
    ///
    /// ```
    /// use evenkeel::{Config, ConfigError, Setting, Settings};
    /// use fixed::types::I16F16;
    /// let s = Settings::new(0.01, 1.0, 1.0, 0.0, 40_000.0);
    /// let float = Config::<f32>::try_new(&s)?;
    /// assert_eq!(float.output_limits(), (0.0, 40_000.0));
    /// // 40 000 is outside Q16.16 (±32 768).
    /// assert_eq!(Config::<I16F16>::try_new(&s), Err(ConfigError::OutOfFormat(Setting::OutputMax)));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// # Errors
    /// The first invalid setting, or one that does not fit `B`.
    pub fn try_new(settings: &Settings) -> Result<Self, ConfigError> {
        B::configure::<L>(settings)
    }

    /// The optional parts this configuration has.
    ///
    /// ```
    /// use evenkeel::{Config, Features, Settings};
    /// let c = Config::<f64>::try_new(&Settings::new(0.1, 1.0, 1.0, 0.0, 1.0).with_deadband(0.1))?;
    /// assert_eq!(c.features(), Features::DEADBAND);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn features(&self) -> Features {
        self.features
    }

    /// Command limits `(min, max)` as stored: each written limit rounded
    /// inward to the backend's grid (fixed point: the Q16.16 value at or
    /// inside it; `f32`: the nearest `f32` at or inside it), so no command
    /// ever leaves the range the settings give.
    ///
    /// ```
    /// use evenkeel::{Config, Settings};
    /// use fixed::types::I16F16;
    /// let c = Config::<I16F16>::try_new(&Settings::new(0.1, 1.0, 0.0, -0.8, 0.8))?;
    /// let (lo, hi) = c.output_limits();
    /// assert!(lo.to_num::<f64>() >= -0.8 && hi.to_num::<f64>() <= 0.8);
    /// assert_eq!((lo.to_bits(), hi.to_bits()), (-52_428, 52_428)); // 0.8 · 2¹⁶ = 52 428.8
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// ```
    /// let c = evenkeel::Config::<f64>::try_new(&evenkeel::Settings::new(0.1, 1.0, 0.0, -2.0, 3.0))?;
    /// assert_eq!(c.output_limits(), (-2.0, 3.0));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn output_limits(&self) -> (B, B) {
        (self.output_min, self.output_max)
    }

    /// Largest command change per sample, if slew limiting is on.
    ///
    /// Fixed point: R·Ts rounded to the nearest Q16.16 value, accepted only within
    /// [`SLEW_REL_TOLERANCE`].
    ///
    /// ```
    /// use evenkeel::{Config, Settings};
    /// use fixed::types::I16F16;
    /// let s = Settings::new(0.01, 1.0, 1.0, 0.0, 10.0);
    /// assert_eq!(Config::<I16F16>::try_new(&s)?.slew_step(), None);
    /// // 1 /s · 0.01 s = 0.01 = 655.36 LSB → 655 LSB.
    /// let c = Config::<I16F16>::try_new(&s.with_slew_per_s(1.0))?;
    /// assert_eq!(c.slew_step().map(I16F16::to_bits), Some(655));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn slew_step(&self) -> Option<B> {
        self.features
            .contains(Features::SLEW)
            .then_some(self.slew_step)
    }

    /// Stored Kp.
    ///
    /// Fixed point: a [`FixedCoef`] within relative error 2⁻²⁰ ([`COEF_REL_TOLERANCE`]).
    ///
    /// ```
    /// use evenkeel::{Config, Settings, q::COEF_REL_TOLERANCE};
    /// use fixed::types::I16F16;
    /// let c = Config::<I16F16>::try_new(&Settings::new(0.01, 0.1, 1.0, 0.0, 10.0))?;
    /// assert!((c.kp().to_f64() - 0.1).abs() <= 0.1 * COEF_REL_TOLERANCE);
    /// assert_eq!(Config::<f32>::try_new(&Settings::new(0.01, 0.1, 1.0, 0.0, 10.0))?.kp(), 0.1);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn kp(&self) -> B::Coef {
        self.kp
    }

    /// Stored Ki·Ts.
    ///
    /// Fixed point: relative error ≤ 2⁻²⁰, shift ≥ 16 (so it is applied at Q32.32
    /// precision).
    ///
    /// ```
    /// use evenkeel::{Config, Settings, q::COEF_REL_TOLERANCE};
    /// use fixed::types::I16F16;
    /// // Ki = 5 /s, Ts = 10 ms: Ki·Ts = 0.05 per sample.
    /// let c = Config::<I16F16>::try_new(&Settings::new(0.01, 1.0, 5.0, 0.0, 10.0))?;
    /// assert!((c.ki_ts().to_f64() - 0.05).abs() <= 0.05 * COEF_REL_TOLERANCE);
    /// assert!(c.ki_ts().shift() >= 16);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn ki_ts(&self) -> B::Coef {
        self.ki_ts
    }

    /// Stored Ts/Tt (back-calculation only).
    ///
    /// ```
    /// use evenkeel::{AntiWindup, Config, Settings};
    /// let s = Settings::new(0.01, 1.0, 1.0, 0.0, 1.0);
    /// assert_eq!(Config::<f64>::try_new(&s)?.tracking_ratio(), None);
    /// let bc = s.with_anti_windup(AntiWindup::BackCalculation { tracking_time_s: 0.5 });
    /// assert_eq!(Config::<f64>::try_new(&bc)?.tracking_ratio(), Some(0.02)); // 0.01 / 0.5
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn tracking_ratio(&self) -> Option<B::Coef> {
        self.features
            .contains(Features::BACK_CALCULATION)
            .then_some(self.tracking_ratio)
    }

    /// Stored filter coefficient α.
    ///
    /// α = Ts/(Tf + Ts) (backward Euler).
    ///
    /// ```
    /// use evenkeel::{Config, Settings};
    /// use fixed::types::I16F16;
    /// let s = Settings::new(0.25, 1.0, 1.0, 0.0, 1.0).with_filter_time_s(0.75);
    /// let c = Config::<I16F16>::try_new(&s)?;
    /// assert_eq!(c.filter_alpha().map(|a| a.to_f64()), Some(0.25)); // 0.25 / (0.75 + 0.25)
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn filter_alpha(&self) -> Option<B::Coef> {
        self.features
            .contains(Features::FILTER)
            .then_some(self.filter_alpha)
    }

    /// Stored setpoint weight (`None` when it is exactly 1).
    ///
    /// ```
    /// use evenkeel::{Config, Settings};
    /// let s = Settings::new(0.01, 1.0, 1.0, 0.0, 1.0);
    /// assert_eq!(Config::<f32>::try_new(&s)?.setpoint_weight(), None); // b = 1: no multiply
    /// let weighted = s.with_setpoint_weight(0.5);
    /// assert_eq!(Config::<f32>::try_new(&weighted)?.setpoint_weight(), Some(0.5));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn setpoint_weight(&self) -> Option<B::Coef> {
        self.features
            .contains(Features::SETPOINT_WEIGHT)
            .then_some(self.setpoint_weight)
    }

    /// Stored deadband half-width.
    ///
    /// Fixed point: rounded to the nearest Q16.16 value.
    ///
    /// ```
    /// use evenkeel::{Config, Settings};
    /// use fixed::types::I16F16;
    /// let s = Settings::new(0.01, 1.0, 1.0, 0.0, 1.0).with_deadband(0.1);
    /// // 0.1 · 2¹⁶ = 6553.6 → 6554 LSB
    /// assert_eq!(Config::<I16F16>::try_new(&s)?.deadband().map(I16F16::to_bits), Some(6554));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn deadband(&self) -> Option<B> {
        self.features
            .contains(Features::DEADBAND)
            .then_some(self.deadband)
    }

    /// Plausible measurement range `(min, max)`.
    ///
    /// ```
    /// use evenkeel::{Config, Settings};
    /// let s = Settings::new(0.01, 1.0, 1.0, 0.0, 1.0);
    /// assert_eq!(Config::<f64>::try_new(&s)?.measurement_range(), (-30_000.0, 30_000.0));
    /// let narrow = s.with_measurement_range(0.0, 500.0);
    /// assert_eq!(Config::<f64>::try_new(&narrow)?.measurement_range(), (0.0, 500.0));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn measurement_range(&self) -> (B, B) {
        (self.measurement_min, self.measurement_max)
    }

    /// The same configuration with new proportional and per-sample integral
    /// coefficients, checked like [`Config::try_new`] checks the gains it
    /// computes: each must be finite and non-negative, not both zero, within
    /// the backend's range (fixed point: Ki·Ts with a shift of at least 16,
    /// i.e. below 2¹⁵; `f32` ≤ 1e12, `f64` ≤ 1e150), and, under a
    /// compile-time layout, in the layout's format (the same shift).
    ///
    /// `ki_ts` is per sample (Ki·Ts), not per second.
    ///
    /// ```
    /// use evenkeel::{Config, ConfigError, Setting, Settings};
    /// let c = Config::<f64>::try_new(&Settings::new(0.1, 1.0, 2.0, -1.0, 1.0))?;
    /// let g = c.with_gains(3.0, 0.5)?;
    /// assert_eq!((g.kp(), g.ki_ts()), (3.0, 0.5));
    /// assert_eq!(g.output_limits(), c.output_limits()); // everything else kept
    /// assert_eq!(c.with_gains(f64::NAN, 0.5), Err(ConfigError::NotFinite(Setting::Kp)));
    /// assert_eq!(c.with_gains(1.0, -0.5), Err(ConfigError::Negative(Setting::Ki)));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// # Errors
    /// The first gain that is not valid, or [`ConfigError::NoAction`].
    pub fn with_gains(self, kp: B::Coef, ki_ts: B::Coef) -> Result<Self, ConfigError> {
        // A frozen layout has one configuration, its own.
        if crate::layout::is_frozen::<L>() {
            return Err(ConfigError::Layout(Setting::Kp));
        }
        let shape = L::SHAPE;
        B::check_gain(kp, 0, shape.and_then(|s| s.shift(Slot::Kp)), Setting::Kp)?;
        B::check_gain(
            ki_ts,
            16,
            shape.and_then(|s| s.shift(Slot::KiTs)),
            Setting::Ki,
        )?;
        if B::coef_is_zero(kp) && B::coef_is_zero(ki_ts) {
            return Err(ConfigError::NoAction);
        }
        Ok(self.with_gains_unchecked(kp, ki_ts))
    }

    /// [`Config::with_gains`] for gains known to be valid (interpolated
    /// between two validated schedule rows of the same format).
    #[inline]
    #[must_use]
    pub(crate) fn with_gains_unchecked(mut self, kp: B::Coef, ki_ts: B::Coef) -> Self {
        self.kp = kp;
        self.ki_ts = ki_ts;
        self
    }
}

/// Unwrap a `Result` inside a `const fn` (no `?` there).
macro_rules! attempt {
    ($e:expr) => {
        match $e {
            Ok(v) => v,
            Err(e) => return Err(e),
        }
    };
}

impl<L: Layout> Config<I16F16, L> {
    /// Fixed-point configuration, usable in `const` context.
    ///
    /// Gains are stored as [`FixedCoef`] with relative error ≤ 2⁻²⁰
    /// (checked); Ki·Ts, Ts/Tt and the filter α must be below 32 768
    /// (always true for α and Ts/Tt); slew step and deadband are rounded to
    /// the nearest Q16.16 value (the slew step must come within 1 %); the
    /// output limits are rounded inward (`output_min` up, `output_max` down),
    /// so the command never leaves the range written in the settings.
    /// Under a compile-time layout each gain is stored at the layout's shift.
    ///
    /// ```
    /// use evenkeel::{Config, ConfigError, Settings};
    /// use fixed::types::I16F16;
    /// const C: Result<Config<I16F16>, ConfigError> =
    ///     Config::<I16F16>::new(&Settings::new(0.01, 2.0, 1.0, 0.0, 5.0));
    /// let c = C?;
    /// assert_eq!(c.kp().to_f64(), 2.0); // powers of two are stored exactly
    /// assert_eq!(c.output_limits(), (I16F16::ZERO, I16F16::from_num(5)));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// # Errors
    /// As [`Settings::per_sample`], plus [`ConfigError::OutOfFormat`],
    /// [`ConfigError::TooFine`] and, under a compile-time layout,
    /// [`ConfigError::Layout`] (also for any layout made by
    /// [`crate::frozen!`], whose one configuration is its `CONFIG`).
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
        let p: PerSample = attempt!(settings.per_sample());
        let features = Features::of(&p);
        let shape = L::SHAPE;
        if let Some(s) = shape
            && s.features().bits() != features.bits()
        {
            return Err(ConfigError::Layout(Setting::Features));
        }
        let kp = attempt!(layout_coef(shape, Slot::Kp, p.kp, 0, Setting::Kp));
        let setpoint_weight = attempt!(optional_coef(
            shape,
            Slot::SetpointWeight,
            p.setpoint_weight,
            0,
            Setting::SetpointWeight
        ));
        let ki_ts = attempt!(layout_coef(shape, Slot::KiTs, p.ki_ts, 16, Setting::Ki));
        let tracking_ratio = attempt!(optional_coef(
            shape,
            Slot::TrackingRatio,
            p.tracking_ratio,
            16,
            Setting::TrackingTime
        ));
        let filter_alpha = attempt!(optional_coef(
            shape,
            Slot::FilterAlpha,
            p.filter_alpha,
            16,
            Setting::FilterTime
        ));
        let slew_step = match p.slew_step {
            Some(s) => {
                let q = attempt!(fixed_signal(s, Setting::Slew));
                let err = q.to_bits() as f64 / 65_536.0 - s;
                if q.to_bits() <= 0 || err > SLEW_REL_TOLERANCE * s || -err > SLEW_REL_TOLERANCE * s
                {
                    return Err(ConfigError::TooFine(Setting::Slew));
                }
                q
            }
            None => I16F16::ZERO,
        };
        let deadband = match p.deadband {
            Some(w) => attempt!(fixed_signal(w, Setting::Deadband)),
            None => I16F16::ZERO,
        };
        let output_min = attempt!(fixed_limit(p.output_min, Inward::Up, Setting::OutputMin));
        let output_max = attempt!(fixed_limit(p.output_max, Inward::Down, Setting::OutputMax));
        if output_min.to_bits() >= output_max.to_bits() {
            return Err(ConfigError::Inverted(Setting::OutputMax));
        }
        let measurement_min = attempt!(fixed_signal(p.measurement_min, Setting::MeasurementMin));
        let measurement_max = attempt!(fixed_signal(p.measurement_max, Setting::MeasurementMax));
        if measurement_min.to_bits() >= measurement_max.to_bits() {
            return Err(ConfigError::Inverted(Setting::MeasurementMax));
        }
        let zero = attempt!(fixed_signal(p.command_zero, Setting::CommandScale));
        let rest = if output_min.to_bits() > zero.to_bits() {
            output_min
        } else if output_max.to_bits() < zero.to_bits() {
            output_max
        } else {
            zero
        };
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
        features: Features,
        coefs: [FixedCoef; 5],
        signals: [I16F16; 5],
        output_min: I16F16,
        output_max: I16F16,
    ) -> Self {
        let [kp, setpoint_weight, ki_ts, tracking_ratio, filter_alpha] = coefs;
        let [slew_step, deadband, measurement_min, measurement_max, rest] = signals;
        // Integrator and feed-forward range: the output range widened by its
        // span on both sides. Exact in i64; |bounds| < 3·2³¹ Q16.16 LSB, so
        // the integrator's Q32.32 bits stay below 1.5·2⁴⁸ in magnitude (the
        // bound the step's unchecked sums rely on, see `controller.rs`).
        let lo = output_min.to_bits() as i64;
        let hi = output_max.to_bits() as i64;
        let span = hi - lo;
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
            feed_forward_min: I16F16::from_bits(q::saturate_i32(lo - span)),
            feed_forward_max: I16F16::from_bits(q::saturate_i32(hi + span)),
            feed_forward_zero: I16F16::from_bits(q::saturate_i32(if lo - span > 0 {
                lo - span
            } else if hi + span < 0 {
                hi + span
            } else {
                0
            })),
            integral_min: I32F32::from_bits((lo - span) << 16),
            integral_max: I32F32::from_bits((hi + span) << 16),
            measurement_min,
            measurement_max,
            rest,
            layout: PhantomData,
        }
    }
}

/// A coefficient at the layout's shift, or at its natural shift (run time).
const fn layout_coef(
    shape: Option<Shape>,
    slot: Slot,
    value: f64,
    min_shift: u32,
    which: Setting,
) -> Result<FixedCoef, ConfigError> {
    match shape {
        Some(s) => match s.shift(slot) {
            Some(shift) => fixed_coef_at(value, shift, which),
            None => fixed_coef(value, min_shift, which),
        },
        None => fixed_coef(value, min_shift, which),
    }
}

/// [`layout_coef`] of an optional part; zero when it is off.
const fn optional_coef(
    shape: Option<Shape>,
    slot: Slot,
    value: Option<f64>,
    min_shift: u32,
    which: Setting,
) -> Result<FixedCoef, ConfigError> {
    match value {
        Some(v) => layout_coef(shape, slot, v, min_shift, which),
        None => Ok(FixedCoef::ZERO),
    }
}

/// Nearest coefficient at its natural shift (at least `min_shift`), within
/// [`COEF_REL_TOLERANCE`].
pub(crate) const fn fixed_coef(
    value: f64,
    min_shift: u32,
    which: Setting,
) -> Result<FixedCoef, ConfigError> {
    let Some(c) = FixedCoef::from_f64(value, min_shift) else {
        return Err(ConfigError::OutOfFormat(which));
    };
    within_tolerance(c, value, which)
}

/// Nearest coefficient at exactly `shift`, within [`COEF_REL_TOLERANCE`]
/// (a layout's format).
const fn fixed_coef_at(value: f64, shift: u32, which: Setting) -> Result<FixedCoef, ConfigError> {
    let Some(c) = FixedCoef::with_shift(value, shift) else {
        return Err(if value.is_finite() {
            ConfigError::Layout(which)
        } else {
            ConfigError::NotFinite(which)
        });
    };
    match within_tolerance(c, value, which) {
        Ok(c) => Ok(c),
        // Representable, but the layout's format is too coarse for it.
        Err(_) => Err(ConfigError::Layout(which)),
    }
}

const fn within_tolerance(
    c: FixedCoef,
    value: f64,
    which: Setting,
) -> Result<FixedCoef, ConfigError> {
    let err = c.to_f64() - value;
    let bound = COEF_REL_TOLERANCE * if value < 0.0 { -value } else { value };
    if err > bound || -err > bound {
        return Err(ConfigError::TooFine(which));
    }
    Ok(c)
}

const fn fixed_signal(value: f64, which: Setting) -> Result<I16F16, ConfigError> {
    match q::signal_from_f64(value) {
        Some(v) => Ok(v),
        None => Err(ConfigError::OutOfFormat(which)),
    }
}

/// Which way a limit is rounded: towards the inside of the output range.
#[derive(Clone, Copy)]
enum Inward {
    Up,
    Down,
}

/// An output limit on the Q16.16 grid, rounded towards the inside of the
/// range: `ceil` for the lower limit, `floor` for the upper one.
const fn fixed_limit(value: f64, way: Inward, which: Setting) -> Result<I16F16, ConfigError> {
    let Some(v) = q::signal_from_f64(value) else {
        return Err(ConfigError::OutOfFormat(which));
    };
    // v is the nearest grid value (within half an LSB, so within ±1 LSB of
    // the inward one); the comparison in f64 is exact (both sides are
    // multiples of 2⁻¹⁶ or the written value).
    let stored = v.to_bits() as f64 / 65_536.0;
    let bits = match way {
        Inward::Up if stored < value => v.to_bits() as i64 + 1,
        Inward::Down if stored > value => v.to_bits() as i64 - 1,
        _ => v.to_bits() as i64,
    };
    if bits > i32::MAX as i64 || bits < i32::MIN as i64 {
        return Err(ConfigError::OutOfFormat(which));
    }
    Ok(I16F16::from_bits(bits as i32))
}

macro_rules! float_config {
    ($t:ty, $limit:expr, $doc:literal) => {
        impl<L: Layout> Config<$t, L> {
            #[doc = $doc]
            ///
            /// The output limits are rounded inward to the format's grid;
            /// the slew step must be at least the command's resolution
            /// (one unit in the last place) at the larger output limit, so
            /// that the slew limiter can move the command everywhere in the
            /// range ([`ConfigError::TooFine`] for the slew otherwise).
            ///
            /// ```
            /// use evenkeel::{Config, ConfigError, Setting, Settings};
            /// let s = Settings::new(0.01, 2.0, 1.0, 0.0, 5.0);
            /// // Ki·Ts = 0.01 rounded once (IEEE nearest) into each format.
            /// assert_eq!(Config::<f32>::new(&s)?.ki_ts(), 0.01_f32);
            /// assert_eq!(Config::<f64>::new(&s)?.ki_ts(), 0.01_f64);
            /// let huge = Settings::new(0.01, 2.0e12, 1.0, 0.0, 5.0); // Kp above 1e12
            /// assert_eq!(Config::<f32>::new(&huge), Err(ConfigError::OutOfFormat(Setting::Kp)));
            /// # Ok::<(), evenkeel::ConfigError>(())
            /// ```
            ///
            /// # Errors
            /// As [`Settings::per_sample`], plus [`ConfigError::OutOfFormat`]
            /// for magnitudes beyond the backend's safe range,
            /// [`ConfigError::TooFine`] for gains that would lose more than
            /// 2⁻²⁰ relative precision (subnormal numbers) and for a slew
            /// step below the resolution at the limits, and
            /// [`ConfigError::Layout`] for features other than a compile-time
            /// layout's.
            pub const fn new(settings: &Settings) -> Result<Self, ConfigError> {
                const LIMIT: f64 = $limit;
                if crate::layout::is_frozen::<L>() {
                    return Err(ConfigError::Layout(Setting::Features));
                }
                let p: PerSample = attempt!(settings.per_sample());
                let features = Features::of(&p);
                if let Some(s) = L::SHAPE
                    && s.features().bits() != features.bits()
                {
                    return Err(ConfigError::Layout(Setting::Features));
                }
                macro_rules! coef {
                    ($v:expr, $w:expr) => {{
                        let v: f64 = $v;
                        let mag = if v < 0.0 { -v } else { v };
                        if mag > LIMIT {
                            return Err(ConfigError::OutOfFormat($w));
                        }
                        let stored = v as $t;
                        let err = stored as f64 - v;
                        if err > COEF_REL_TOLERANCE * mag || -err > COEF_REL_TOLERANCE * mag {
                            return Err(ConfigError::TooFine($w));
                        }
                        stored
                    }};
                }
                macro_rules! signal {
                    ($v:expr, $w:expr) => {{
                        let v: f64 = $v;
                        if v > LIMIT || v < -LIMIT {
                            return Err(ConfigError::OutOfFormat($w));
                        }
                        v as $t
                    }};
                }
                let kp = coef!(p.kp, Setting::Kp);
                let setpoint_weight = match p.setpoint_weight {
                    Some(b) => coef!(b, Setting::SetpointWeight),
                    None => 0.0,
                };
                let ki_ts = coef!(p.ki_ts, Setting::Ki);
                let tracking_ratio = match p.tracking_ratio {
                    Some(r) => coef!(r, Setting::TrackingTime),
                    None => 0.0,
                };
                let filter_alpha = match p.filter_alpha {
                    Some(a) => coef!(a, Setting::FilterTime),
                    None => 0.0,
                };
                let deadband = match p.deadband {
                    Some(w) => signal!(w, Setting::Deadband),
                    None => 0.0,
                };
                let mut output_min = signal!(p.output_min, Setting::OutputMin);
                if (output_min as f64) < p.output_min {
                    output_min = output_min.next_up();
                }
                let mut output_max = signal!(p.output_max, Setting::OutputMax);
                if (output_max as f64) > p.output_max {
                    output_max = output_max.next_down();
                }
                if output_min >= output_max {
                    return Err(ConfigError::Inverted(Setting::OutputMax));
                }
                let slew_step = match p.slew_step {
                    Some(s) => {
                        let step = coef!(s, Setting::Slew);
                        // One unit in the last place at the larger limit:
                        // the coarsest resolution a command can have.
                        let top = output_min.abs().max(output_max.abs());
                        if step < top.next_up() - top {
                            return Err(ConfigError::TooFine(Setting::Slew));
                        }
                        step
                    }
                    None => 0.0,
                };
                let measurement_min = signal!(p.measurement_min, Setting::MeasurementMin);
                let measurement_max = signal!(p.measurement_max, Setting::MeasurementMax);
                if measurement_min >= measurement_max {
                    return Err(ConfigError::Inverted(Setting::MeasurementMax));
                }
                let integral_min = p.integral_min as $t;
                let integral_max = p.integral_max as $t;
                let zero = p.command_zero as $t;
                let rest = if output_min > zero {
                    output_min
                } else if output_max < zero {
                    output_max
                } else {
                    zero
                };
                Ok(Self {
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
                    feed_forward_min: integral_min,
                    feed_forward_max: integral_max,
                    feed_forward_zero: if integral_min > 0.0 {
                        integral_min
                    } else if integral_max < 0.0 {
                        integral_max
                    } else {
                        0.0
                    },
                    integral_min,
                    integral_max,
                    measurement_min,
                    measurement_max,
                    rest,
                    layout: PhantomData,
                })
            }
        }
    };
}

float_config!(
    f32,
    1.0e12,
    "`f32` configuration, usable in `const` context. Every gain and signal magnitude must be ≤ 1e12, so no intermediate result of a step can overflow."
);
float_config!(
    f64,
    1.0e150,
    "`f64` configuration, usable in `const` context. Every gain and signal magnitude must be ≤ 1e150, so no intermediate result of a step can overflow."
);

/// A configuration evaluated at compile time; an invalid one is a compile
/// error.
///
/// ```
/// use evenkeel::{Config, Settings};
/// use fixed::types::I16F16;
/// const SETTINGS: Settings = Settings::new(0.001, 0.8, 12.0, 0.0, 24.0).with_slew_per_s(480.0);
/// const CONFIG: Config<I16F16> = evenkeel::config!(I16F16, SETTINGS);
/// assert_eq!(CONFIG.output_limits().1, I16F16::from_num(24));
/// ```
///
/// A negative period does not compile:
///
/// ```compile_fail,E0080
/// use evenkeel::{Config, Settings};
/// use fixed::types::I16F16;
/// const BAD: Config<I16F16> = evenkeel::config!(I16F16, Settings::new(-0.001, 0.8, 12.0, 0.0, 24.0));
/// ```
///
/// With a compile-time layout as the second argument, the configuration
/// must also fit the layout:
///
/// ```compile_fail,E0080
/// use evenkeel::{Config, Settings};
/// use fixed::types::I16F16;
/// const BASE: Settings = Settings::new(0.001, 0.8, 12.0, 0.0, 24.0);
/// evenkeel::layout!(Valve = BASE);
/// // The layout has no slew limiter.
/// const BAD: Config<I16F16, Valve> = evenkeel::config!(I16F16, Valve, BASE.with_slew_per_s(5.0));
/// ```
///
/// Nor does a gain too large for Q16.16 fixed point:
///
/// ```compile_fail,E0080
/// use evenkeel::{Config, Settings};
/// use fixed::types::I16F16;
/// const BAD: Config<I16F16> = evenkeel::config!(I16F16, Settings::new(0.001, 0.8, 12.0, 0.0, 40_000.0));
/// ```
#[macro_export]
macro_rules! config {
    ($backend:ty, $settings:expr) => {
        $crate::config!($backend, $crate::Runtime, $settings)
    };
    ($backend:ty, $layout:ty, $settings:expr) => {
        const {
            match $crate::Config::<$backend, $layout>::new(&$settings) {
                Ok(config) => config,
                // Evaluated by the compiler only (inside `const { }`): an
                // invalid configuration stops the build; no panic path
                // reaches the firmware.
                Err(error) => panic!("{}", error.summary()),
            }
        }
    };
}

impl ConfigError {
    /// A fixed one-line description (usable in `const` context, where
    /// `Display` is not).
    ///
    /// ```
    /// use evenkeel::{ConfigError, Setting};
    /// const TEXT: &str = ConfigError::NoAction.summary();
    /// assert_eq!(TEXT, "evenkeel configuration: kp and ki are both zero");
    /// let e = ConfigError::NotPositive(Setting::Period);
    /// assert_eq!(e.summary(), "evenkeel configuration: a setting that must be > 0 is not");
    /// ```
    #[must_use]
    pub const fn summary(self) -> &'static str {
        match self {
            Self::NotFinite(_) => "evenkeel configuration: a setting is not a finite number",
            Self::NotPositive(_) => "evenkeel configuration: a setting that must be > 0 is not",
            Self::Negative(_) => "evenkeel configuration: a setting that must be >= 0 is negative",
            Self::Inverted(_) => {
                "evenkeel configuration: a range has its maximum not above its minimum"
            }
            Self::NoAction => "evenkeel configuration: kp and ki are both zero",
            Self::SetpointWeightOutOfRange => {
                "evenkeel configuration: setpoint weight outside [0, 1]"
            }
            Self::TrackingRatioOutOfRange => "evenkeel configuration: Ts/Tt outside (0, 1]",
            Self::OutOfFormat(_) => {
                "evenkeel configuration: a value does not fit the number format"
            }
            Self::TooFine(_) => {
                "evenkeel configuration: a value is too small for the number format's precision"
            }
            Self::Schedule => "evenkeel configuration: invalid gain schedule",
            Self::Layout(_) => "evenkeel configuration: does not fit the compile-time layout",
            Self::WeightedOffset => {
                "evenkeel configuration: setpoint weight with a measurement offset"
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fixed_rejects_out_of_format() {
        let big = Settings::new(0.01, 1.0, 1.0, 0.0, 40_000.0);
        assert_eq!(
            Config::<I16F16>::new(&big),
            Err(ConfigError::OutOfFormat(Setting::OutputMax))
        );
        // Ki·Ts = 4e4 does not fit below 2^15.
        let fast = Settings::new(1.0, 1.0, 40_000.0, 0.0, 1.0);
        assert_eq!(
            Config::<I16F16>::new(&fast),
            Err(ConfigError::OutOfFormat(Setting::Ki))
        );
        let huge_gain = Settings::new(0.01, 3.0e9, 1.0, 0.0, 1.0);
        assert_eq!(
            Config::<I16F16>::new(&huge_gain),
            Err(ConfigError::OutOfFormat(Setting::Kp))
        );
    }

    #[test]
    fn fixed_rejects_too_fine() {
        // Slew step 2e-5 per sample is about 1.3 LSB: error far above 1 %.
        let s = Settings::new(0.001, 1.0, 1.0, 0.0, 1.0).with_slew_per_s(0.02);
        assert_eq!(
            Config::<I16F16>::new(&s),
            Err(ConfigError::TooFine(Setting::Slew))
        );
        // Ki·Ts = 1e-15 → mantissa ≈ 4612 at shift 62: relative error ≈ 1e-4 > 2^-20.
        let s = Settings::new(1e-6, 1.0, 1e-9, 0.0, 1.0);
        assert_eq!(
            Config::<I16F16>::new(&s),
            Err(ConfigError::TooFine(Setting::Ki))
        );
    }

    #[test]
    fn float_backends_bound_magnitudes() {
        let s = Settings::new(0.01, 2.0e12, 1.0, 0.0, 1.0);
        assert_eq!(
            Config::<f32>::new(&s),
            Err(ConfigError::OutOfFormat(Setting::Kp))
        );
        assert!(Config::<f64>::new(&s).is_ok());
        let s = Settings::new(0.01, 1.0, 1.0, 0.0, 1.0e200);
        assert_eq!(
            Config::<f64>::new(&s),
            Err(ConfigError::OutOfFormat(Setting::OutputMax))
        );
    }

    #[test]
    fn fixed_coefficients_are_close() {
        let s = Settings::new(0.01, 123.456, 7.89, -100.0, 100.0);
        let c = Config::<I16F16>::new(&s).expect("valid");
        let rel = |stored: f64, want: f64| ((stored - want) / want).abs();
        assert!(rel(c.kp().to_f64(), 123.456) < COEF_REL_TOLERANCE);
        assert!(rel(c.ki_ts().to_f64(), 0.0789) < COEF_REL_TOLERANCE);
        assert_eq!(c.integral_min.to_num::<f64>(), -300.0);
        assert_eq!(c.integral_max.to_num::<f64>(), 300.0);
    }

    #[test]
    fn rounding_can_collapse_limits() {
        let s = Settings::new(0.01, 1.0, 1.0, 0.0, 1e-6);
        assert_eq!(
            Config::<I16F16>::new(&s),
            Err(ConfigError::Inverted(Setting::OutputMax))
        );
    }
}
