//! Compile-time configuration: which optional parts a controller has and,
//! for fixed point, where each coefficient's binary point sits.
//!
//! A [`Config`](crate::Config) normally decides both at run time: every
//! step then asks the configuration whether the filter is on and shifts each
//! product by the coefficient's own `shift`. A [`Layout`] fixes them when the
//! firmware is compiled. The step then contains only the parts the layout
//! has, and every shift is an immediate operand. Gains and limits stay
//! run-time values: a layout fixes formats, not numbers, so bumpless
//! re-tuning keeps working as long as the new gains fit the layout's
//! formats (see [`Shape::covering`]).
//!
//! ```
//! use evenkeel::{Config, Controller, Settings};
//! use fixed::types::I16F16;
//!
//! const SETTINGS: Settings = Settings::new(0.01, 2.0, 5.0, -10.0, 10.0).with_slew_per_s(200.0);
//! // A zero-sized type that carries the shape of SETTINGS (checked by the compiler).
//! evenkeel::layout!(pub Speed = SETTINGS);
//! const CONFIG: Config<I16F16, Speed> = evenkeel::config!(I16F16, Speed, SETTINGS);
//!
//! let mut fast: Controller<I16F16, Speed> = Controller::new(CONFIG);
//! let mut same = Controller::new(evenkeel::config!(I16F16, SETTINGS)); // run-time layout
//! let (r, y) = (I16F16::from_num(3), I16F16::from_num(1.25));
//! assert_eq!(fast.step(r, y), same.step(r, y)); // the same bits
//! ```

use core::fmt::Debug;

use crate::config::fixed_coef;
use crate::error::{ConfigError, Setting};
use crate::q::MAX_SHIFT;
use crate::settings::{PerSample, Settings};

/// The optional parts of a controller, as a set.
///
/// ```
/// use evenkeel::{AntiWindup, Features, Settings};
/// let s = Settings::new(0.01, 1.0, 1.0, 0.0, 1.0).with_slew_per_s(5.0);
/// let f = Features::of(&s.per_sample()?);
/// assert!(f.contains(Features::SLEW) && !f.contains(Features::FILTER));
/// assert_eq!(f, Features::SLEW);
/// # Ok::<(), evenkeel::ConfigError>(())
/// ```
#[derive(Clone, Copy, PartialEq, Eq, Hash, Default)]
pub struct Features(u8);

impl Features {
    /// No optional part: Kp, Ki, clamp, conditional integration.
    ///
    /// ```
    /// assert_eq!(evenkeel::Features::NONE.bits(), 0);
    /// ```
    pub const NONE: Self = Self(0);
    /// Measurement low-pass.
    ///
    /// ```
    /// assert_eq!(evenkeel::Features::FILTER.bits(), 1 << 0);
    /// ```
    pub const FILTER: Self = Self(1 << 0);
    /// Error deadband.
    ///
    /// ```
    /// assert_eq!(evenkeel::Features::DEADBAND.bits(), 1 << 1);
    /// ```
    pub const DEADBAND: Self = Self(1 << 1);
    /// Setpoint weight b ≠ 1.
    ///
    /// ```
    /// assert_eq!(evenkeel::Features::SETPOINT_WEIGHT.bits(), 1 << 2);
    /// ```
    pub const SETPOINT_WEIGHT: Self = Self(1 << 2);
    /// Slew limiter.
    ///
    /// ```
    /// assert_eq!(evenkeel::Features::SLEW.bits(), 1 << 3);
    /// ```
    pub const SLEW: Self = Self(1 << 3);
    /// Back-calculation anti-windup (otherwise conditional integration).
    ///
    /// ```
    /// assert_eq!(evenkeel::Features::BACK_CALCULATION.bits(), 1 << 4);
    /// ```
    pub const BACK_CALCULATION: Self = Self(1 << 4);

    /// The features `p` turns on.
    ///
    /// ```
    /// use evenkeel::{Features, Settings};
    /// let p = Settings::new(0.01, 1.0, 1.0, 0.0, 1.0).with_deadband(0.1).per_sample()?;
    /// assert_eq!(Features::of(&p), Features::DEADBAND);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn of(p: &PerSample) -> Self {
        let mut bits = 0;
        if p.filter_alpha.is_some() {
            bits |= Self::FILTER.0;
        }
        if p.deadband.is_some() {
            bits |= Self::DEADBAND.0;
        }
        if p.setpoint_weight.is_some() {
            bits |= Self::SETPOINT_WEIGHT.0;
        }
        if p.slew_step.is_some() {
            bits |= Self::SLEW.0;
        }
        if p.tracking_ratio.is_some() {
            bits |= Self::BACK_CALCULATION.0;
        }
        Self(bits)
    }

    /// `true` if every feature of `other` is in `self`.
    ///
    /// ```
    /// use evenkeel::Features;
    /// let f = Features::FILTER.with(Features::SLEW);
    /// assert!(f.contains(Features::SLEW) && !f.contains(Features::DEADBAND));
    /// ```
    #[inline(always)]
    #[must_use]
    pub const fn contains(self, other: Self) -> bool {
        self.0 & other.0 == other.0
    }

    /// The union of two sets.
    ///
    /// ```
    /// use evenkeel::Features;
    /// assert_eq!(Features::FILTER.with(Features::SLEW).bits(), 0b1001);
    /// ```
    #[must_use]
    pub const fn with(self, other: Self) -> Self {
        Self(self.0 | other.0)
    }

    /// The raw bits (bit n is the n-th constant above).
    ///
    /// ```
    /// assert_eq!(evenkeel::Features::BACK_CALCULATION.bits(), 16);
    /// ```
    #[must_use]
    pub const fn bits(self) -> u8 {
        self.0
    }

    /// The set with these raw bits (the caller checks for unknown bits).
    pub(crate) const fn from_bits(bits: u8) -> Self {
        Self(bits)
    }

    const NAMES: [(Self, &'static str); 5] = [
        (Self::FILTER, "filter"),
        (Self::DEADBAND, "deadband"),
        (Self::SETPOINT_WEIGHT, "setpoint_weight"),
        (Self::SLEW, "slew"),
        (Self::BACK_CALCULATION, "back_calculation"),
    ];

    /// Each feature's name, in bit order.
    ///
    /// ```
    /// use evenkeel::Features;
    /// assert!(Features::SLEW.with(Features::FILTER).names().eq(["filter", "slew"]));
    /// ```
    pub fn names(self) -> impl Iterator<Item = &'static str> {
        Self::NAMES
            .into_iter()
            .filter(move |(f, _)| self.contains(*f))
            .map(|(_, name)| name)
    }
}

impl Debug for Features {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str("Features(")?;
        let mut first = true;
        for name in self.names() {
            if !first {
                f.write_str("|")?;
            }
            f.write_str(name)?;
            first = false;
        }
        if first {
            f.write_str("-")?;
        }
        f.write_str(")")
    }
}

/// Which coefficient a shift belongs to.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Slot {
    Kp,
    SetpointWeight,
    KiTs,
    TrackingRatio,
    FilterAlpha,
}

/// What a [`Layout`] fixes at compile time: the features, and the shift of
/// each fixed-point coefficient (value = mantissa · 2^-shift, see
/// [`FixedCoef`](crate::FixedCoef)). Float backends use only the features.
///
/// A shift that belongs to a feature the shape does not have is unused.
///
/// ```
/// use evenkeel::{Features, Settings, Shape};
/// const S: Shape = match Shape::of(&Settings::new(0.01, 2.0, 5.0, -10.0, 10.0)) {
///     Ok(s) => s,
///     Err(_) => panic!("invalid settings"),
/// };
/// assert_eq!(S.features(), Features::NONE);
/// assert_eq!((S.kp_shift(), S.ki_ts_shift()), (Some(29), Some(35))); // 2.0 · 2²⁹ = 2³⁰; 0.05 · 2³⁵ ≈ 1.7e9
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Shape {
    // Private: every constructor keeps each shift within 0..=62, and those
    // of Ki·Ts, Ts/Tt and α at 16 or more (the bounds the step relies on).
    features: Features,
    kp_shift: u8,
    setpoint_weight_shift: u8,
    ki_ts_shift: u8,
    tracking_ratio_shift: u8,
    filter_alpha_shift: u8,
}

impl Shape {
    /// The shape of `settings`: their features, and for each coefficient the
    /// shift a run-time [`Config`](crate::Config) would choose for it (so a
    /// configuration in this shape from the same settings has the same bits).
    /// A zero gain fixes no format: its shift is the largest allowed (62),
    /// and [`Shape::covering`] with the gains you will re-tune to lowers it.
    ///
    /// ```
    /// use evenkeel::{AntiWindup, Features, Settings, Shape};
    /// let s = Settings::new(0.01, 2.0, 5.0, -10.0, 10.0)
    ///     .with_anti_windup(AntiWindup::BackCalculation { tracking_time_s: 0.1 });
    /// let shape = Shape::of(&s)?;
    /// assert_eq!(shape.features(), Features::BACK_CALCULATION);
    /// assert_eq!(shape.tracking_ratio_shift(), 34); // Ts/Tt = 0.1: 0.1 · 2³⁴ ≈ 1.7e9 < 2³¹
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// # Errors
    /// As [`Config::<I16F16>::new`](crate::Config::new): the settings must be a
    /// valid fixed-point configuration.
    pub const fn of(settings: &Settings) -> Result<Self, ConfigError> {
        let p = match settings.per_sample() {
            Ok(p) => p,
            Err(e) => return Err(e),
        };
        // Validates every fixed-point rule (formats, limits, slew step).
        if let Err(e) = crate::Config::<fixed::types::I16F16>::new(settings) {
            return Err(e);
        }
        let kp = match natural_shift(p.kp, 0, Setting::Kp) {
            Ok(s) => s,
            Err(e) => return Err(e),
        };
        let ki_ts = match natural_shift(p.ki_ts, 16, Setting::Ki) {
            Ok(s) => s,
            Err(e) => return Err(e),
        };
        let setpoint_weight = match optional_shift(p.setpoint_weight, 0, Setting::SetpointWeight) {
            Ok(s) => s,
            Err(e) => return Err(e),
        };
        let tracking_ratio = match optional_shift(p.tracking_ratio, 16, Setting::TrackingTime) {
            Ok(s) => s,
            Err(e) => return Err(e),
        };
        let filter_alpha = match optional_shift(p.filter_alpha, 16, Setting::FilterTime) {
            Ok(s) => s,
            Err(e) => return Err(e),
        };
        Ok(Self {
            features: Features::of(&p),
            kp_shift: kp,
            setpoint_weight_shift: setpoint_weight,
            ki_ts_shift: ki_ts,
            tracking_ratio_shift: tracking_ratio,
            filter_alpha_shift: filter_alpha,
        })
    }

    /// A shape that also holds the gains of `other`: each shift is the
    /// smaller of the two (room for the larger value). Use it for the
    /// configurations a firmware will re-tune to, e.g. every row of a gain
    /// schedule.
    ///
    /// Where `other`'s shift is smaller, a configuration of the first
    /// settings in this shape stores its gains with fewer bits than a
    /// run-time configuration would (it is refused if that costs more than
    /// the 2⁻²⁰ relative precision a configuration promises).
    ///
    /// ```
    /// use evenkeel::{Settings, Shape};
    /// let slow = Settings::new(0.01, 2.0, 5.0, -10.0, 10.0);
    /// let fast = Settings::new(0.01, 40.0, 5.0, -10.0, 10.0);
    /// let shape = Shape::of(&slow)?.covering(&fast)?;
    /// assert_eq!(shape.kp_shift(), Some(25)); // 40 · 2²⁵ ≈ 1.3e9 < 2³¹
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// # Errors
    /// `other`'s own error, or [`ConfigError::Layout`] if it has other
    /// features.
    pub const fn covering(self, other: &Settings) -> Result<Self, ConfigError> {
        let o = match Self::of(other) {
            Ok(o) => o,
            Err(e) => return Err(e),
        };
        if o.features.0 != self.features.0 {
            return Err(ConfigError::Layout(Setting::Features));
        }
        Ok(Self {
            features: self.features,
            kp_shift: min(self.kp_shift, o.kp_shift),
            setpoint_weight_shift: min(self.setpoint_weight_shift, o.setpoint_weight_shift),
            ki_ts_shift: min(self.ki_ts_shift, o.ki_ts_shift),
            tracking_ratio_shift: min(self.tracking_ratio_shift, o.tracking_ratio_shift),
            filter_alpha_shift: min(self.filter_alpha_shift, o.filter_alpha_shift),
        })
    }

    /// A shape for gains up to `kp_max` and a per-second integral gain up
    /// to `ki_max_per_s` at period `period_s` (the same formula as
    /// configuration: Ki·Ts): lowers the Kp and Ki·Ts shifts where needed.
    ///
    /// ```
    /// use evenkeel::{Settings, Shape};
    /// let shape = Shape::of(&Settings::new(0.01, 2.0, 5.0, -10.0, 10.0))?.with_gain_room(100.0, 50.0, 0.01)?;
    /// assert_eq!((shape.kp_shift(), shape.ki_ts_shift()), (Some(24), Some(31)));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// # Errors
    /// [`ConfigError::OutOfFormat`] if a maximum does not fit at all,
    /// [`ConfigError::NotFinite`] or [`ConfigError::Negative`] for a bad
    /// maximum.
    pub const fn with_gain_room(
        self,
        kp_max: f64,
        ki_max_per_s: f64,
        period_s: f64,
    ) -> Result<Self, ConfigError> {
        let kp = match natural_shift(kp_max, 0, Setting::Kp) {
            Ok(s) => s,
            Err(e) => return Err(e),
        };
        let ki = match natural_shift(ki_max_per_s * period_s, 16, Setting::Ki) {
            Ok(s) => s,
            Err(e) => return Err(e),
        };
        Ok(Self {
            kp_shift: min(self.kp_shift, kp),
            ki_ts_shift: min(self.ki_ts_shift, ki),
            ..self
        })
    }

    /// The optional parts the step contains.
    ///
    /// ```
    /// use evenkeel::{Features, Settings, Shape};
    /// let shape = Shape::of(&Settings::new(0.01, 1.0, 1.0, 0.0, 1.0).with_slew_per_s(5.0))?;
    /// assert_eq!(shape.features(), Features::SLEW);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn features(&self) -> Features {
        self.features
    }
    /// Shift of Kp; `None` if its format is left to run time
    /// ([`Shape::with_run_time_gain_formats`]).
    ///
    /// ```
    /// use evenkeel::{Settings, Shape};
    /// let shape = Shape::of(&Settings::new(0.01, 1.0, 1.0, 0.0, 1.0))?;
    /// assert_eq!(shape.kp_shift(), Some(30));
    /// assert_eq!(shape.with_run_time_gain_formats().kp_shift(), None);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn kp_shift(&self) -> Option<u32> {
        fixed_shift(self.kp_shift)
    }
    /// Shift of the setpoint weight b (62 when the shape has none).
    ///
    /// ```
    /// use evenkeel::{Settings, Shape};
    /// let s = Settings::new(0.01, 1.0, 1.0, 0.0, 1.0).with_setpoint_weight(0.5);
    /// assert_eq!(Shape::of(&s)?.setpoint_weight_shift(), 31);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn setpoint_weight_shift(&self) -> u32 {
        self.setpoint_weight_shift as u32
    }
    /// Shift of Ki·Ts (at least 16); `None` if its format is left to run
    /// time.
    ///
    /// ```
    /// use evenkeel::{Settings, Shape};
    /// assert_eq!(Shape::of(&Settings::new(0.01, 1.0, 1.0, 0.0, 1.0))?.ki_ts_shift(), Some(37));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn ki_ts_shift(&self) -> Option<u32> {
        fixed_shift(self.ki_ts_shift)
    }

    /// The same shape with the formats of Kp and Ki·Ts left to each
    /// configuration, as in a run-time configuration: for firmware that
    /// re-tunes or schedules across gains whose natural shifts differ and
    /// needs the run-time configuration's bits for each of them. The
    /// features and the other shifts stay fixed.
    ///
    /// ```
    /// use evenkeel::{Settings, Shape};
    /// let shape = Shape::of(&Settings::new(0.01, 1.0, 1.0, 0.0, 1.0))?.with_run_time_gain_formats();
    /// assert_eq!((shape.kp_shift(), shape.ki_ts_shift()), (None, None));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn with_run_time_gain_formats(self) -> Self {
        Self {
            kp_shift: RUN_TIME,
            ki_ts_shift: RUN_TIME,
            ..self
        }
    }
    /// Shift of Ts/Tt (at least 16; 62 without back-calculation).
    ///
    /// ```
    /// use evenkeel::{Settings, Shape};
    /// assert_eq!(Shape::of(&Settings::new(0.01, 1.0, 1.0, 0.0, 1.0))?.tracking_ratio_shift(), 62);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn tracking_ratio_shift(&self) -> u32 {
        self.tracking_ratio_shift as u32
    }
    /// Shift of the filter coefficient α (at least 16; 62 without filter).
    ///
    /// ```
    /// use evenkeel::{Settings, Shape};
    /// let s = Settings::new(0.01, 1.0, 1.0, 0.0, 1.0).with_filter_time_s(0.03);
    /// assert_eq!(Shape::of(&s)?.filter_alpha_shift(), 32); // α = 0.25
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn filter_alpha_shift(&self) -> u32 {
        self.filter_alpha_shift as u32
    }

    /// The slot's shift, or `None` when its format is left to run time.
    #[inline(always)]
    pub(crate) const fn shift(&self, slot: Slot) -> Option<u32> {
        fixed_shift(match slot {
            Slot::Kp => self.kp_shift,
            Slot::SetpointWeight => self.setpoint_weight_shift,
            Slot::KiTs => self.ki_ts_shift,
            Slot::TrackingRatio => self.tracking_ratio_shift,
            Slot::FilterAlpha => self.filter_alpha_shift,
        })
    }
}

/// A shift that is left to run time (above every real shift, so `min`
/// keeps it only when both sides leave it).
const RUN_TIME: u8 = u8::MAX;

const fn fixed_shift(s: u8) -> Option<u32> {
    if s == RUN_TIME { None } else { Some(s as u32) }
}

const fn min(a: u8, b: u8) -> u8 {
    if a < b { a } else { b }
}

/// The shift a run-time configuration gives `value` (checked like one);
/// zero takes the largest shift.
const fn natural_shift(value: f64, min_shift: u32, which: Setting) -> Result<u8, ConfigError> {
    if !value.is_finite() {
        return Err(ConfigError::NotFinite(which));
    }
    if value < 0.0 {
        return Err(ConfigError::Negative(which));
    }
    if value == 0.0 {
        return Ok(MAX_SHIFT as u8);
    }
    match fixed_coef(value, min_shift, which) {
        Ok(c) => Ok(c.shift() as u8),
        Err(e) => Err(e),
    }
}

const fn optional_shift(
    value: Option<f64>,
    min_shift: u32,
    which: Setting,
) -> Result<u8, ConfigError> {
    match value {
        Some(v) => natural_shift(v, min_shift, which),
        None => Ok(MAX_SHIFT as u8),
    }
}

/// Where a controller's structure is decided: at run time ([`Runtime`]) or
/// when compiling (a type made by [`crate::layout!`]).
///
/// ```
/// use evenkeel::{Layout, Runtime};
/// assert!(Runtime::SHAPE.is_none());
/// evenkeel::layout!(Pump = evenkeel::Settings::new(0.1, 1.0, 1.0, 0.0, 1.0));
/// assert!(Pump::SHAPE.is_some());
/// ```
pub trait Layout: Copy + Debug + PartialEq + 'static {
    /// The compile-time shape, or `None` when the configuration decides.
    const SHAPE: Option<Shape>;
    /// The whole Q16.16 configuration, when a [`crate::frozen!`] layout
    /// fixes it at compile time; `None` (the default) otherwise. Set it
    /// only through that macro.
    const FROZEN_Q16: Option<crate::Config<fixed::types::I16F16, Self>> = None;
    /// The whole 16-bit configuration, when a [`crate::frozen!`] layout
    /// fixes it at compile time; `None` (the default) otherwise. Set it
    /// only through that macro.
    const FROZEN_SLIM16: Option<crate::Config<crate::Slim16, Self>> = None;
}

/// Whether `L` fixes the whole configuration ([`crate::frozen!`]).
#[inline(always)]
pub(crate) const fn is_frozen<L: Layout>() -> bool {
    L::FROZEN_Q16.is_some() || L::FROZEN_SLIM16.is_some()
}

/// Everything decided by the run-time [`Config`](crate::Config): the
/// default layout.
///
/// ```
/// use evenkeel::{Config, Runtime, Settings};
/// let c: Config<f32, Runtime> = Config::try_new(&Settings::new(0.1, 1.0, 1.0, 0.0, 1.0))?;
/// # Ok::<(), evenkeel::ConfigError>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub struct Runtime;

impl Layout for Runtime {
    const SHAPE: Option<Shape> = None;
}

/// The features a step has: the layout's, or the configuration's.
#[inline(always)]
pub(crate) const fn features<L: Layout>(runtime: Features) -> Features {
    match L::SHAPE {
        Some(s) => s.features,
        None => runtime,
    }
}

/// Declare a [`Layout`]: a zero-sized type whose shape is that of the given
/// settings (or any `Shape` expression), evaluated by the compiler; invalid
/// settings do not compile.
///
/// ```
/// use evenkeel::{Config, Controller, Settings, Shape};
/// use fixed::types::I16F16;
/// const BASE: Settings = Settings::new(0.001, 0.8, 12.0, 0.0, 24.0);
/// // Shape of BASE, with room to re-tune Kp up to 5 and Ki up to 100 /s.
/// evenkeel::layout!(pub(crate) Valve: match Shape::of(&BASE) {
///     Ok(s) => s.with_gain_room(5.0, 100.0, 0.001),
///     Err(e) => Err(e),
/// });
/// let pi: Controller<I16F16, Valve> = Controller::new(evenkeel::config!(I16F16, Valve, BASE));
/// ```
///
/// ```compile_fail,E0080
/// // Negative period: no such layout.
/// evenkeel::layout!(Bad = evenkeel::Settings::new(-0.1, 1.0, 1.0, 0.0, 1.0));
/// let _ = <Bad as evenkeel::Layout>::SHAPE;
/// ```
#[macro_export]
macro_rules! layout {
    ($vis:vis $name:ident = $settings:expr) => {
        $crate::layout!($vis $name: $crate::Shape::of(&$settings));
    };
    ($vis:vis $name:ident : $shape:expr) => {
        /// A compile-time controller layout (see `evenkeel::Layout`).
        #[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
        $vis struct $name;
        impl $crate::Layout for $name {
            const SHAPE: ::core::option::Option<$crate::Shape> = match $shape {
                Ok(shape) => ::core::option::Option::Some(shape),
                // Evaluated by the compiler only: invalid settings stop the build.
                Err(error) => panic!("{}", $crate::ConfigError::summary(error)),
            };
        }
    };
}

/// Declare a *frozen* layout: a zero-sized type that fixes the whole
/// configuration at compile time (features, shifts, gains, limits, ranges
/// and scaling), for `I16F16` or `Slim16` (written as these bare names;
/// the float backends have no frozen form).
///
/// The step then reads every setting as a constant: each gain is a
/// multiplication by an immediate, each limit a comparison with one, and
/// no configuration is loaded from memory. The bits are those of the
/// run-time configuration made from the same settings (checked by
/// `controller/tests/layout.rs` and on every core by `boards/run`). The
/// macro also defines `NAME::CONFIG`, the one configuration of this
/// layout, for [`crate::Controller::new`]; every other way to make one
/// ([`crate::Config::try_new`], [`crate::Config::from_parts`],
/// [`crate::Config::with_gains`]) is refused with
/// [`crate::ConfigError::Layout`], and `retune` and `schedule` do not
/// compile for it: a frozen controller cannot run with other settings.
/// Engage, track and reset work as usual. Invalid settings stop the build.
///
/// ```
/// use evenkeel::{Controller, Settings, Slim16};
/// const PUMP: Settings = Settings::new(0.001, 0.8, 12.0, 0.0, 24.0);
/// evenkeel::frozen!(pub PumpLoop: Slim16 = PUMP);
/// let mut pi = Controller::new(PumpLoop::CONFIG);
/// let mut same = Controller::new(evenkeel::config!(Slim16, PUMP)); // run-time configuration
/// let out = pi.step(Slim16::from_raw(3), Slim16::from_raw(1));
/// assert_eq!(out.command, Slim16::from_raw(2)); // P = 0.8 · 2 = 1.6 rounds to 2; I starts at 0
/// assert_eq!(out, same.step(Slim16::from_raw(3), Slim16::from_raw(1)));
/// // The only configuration of a frozen layout is its own.
/// assert!(evenkeel::Config::<Slim16, PumpLoop>::try_new(&PUMP).is_err());
/// ```
///
/// ```compile_fail,E0080
/// use evenkeel::{Controller, Settings, Slim16};
/// evenkeel::frozen!(Fan: Slim16 = Settings::new(0.001, 0.8, 12.0, 0.0, 24.0));
/// let mut pi = Controller::new(Fan::CONFIG);
/// pi.retune(Fan::CONFIG); // a frozen configuration cannot be re-tuned
/// ```
#[macro_export]
macro_rules! frozen {
    ($vis:vis $name:ident : I16F16 = $settings:expr) => {
        $crate::frozen!(@make $vis $name, $crate::fixed::types::I16F16, FROZEN_Q16, $settings);
    };
    ($vis:vis $name:ident : Slim16 = $settings:expr) => {
        $crate::frozen!(@make $vis $name, $crate::Slim16, FROZEN_SLIM16, $settings);
    };
    (@make $vis:vis $name:ident, $backend:ty, $slot:ident, $settings:expr) => {
        /// A frozen controller layout: the whole configuration fixed at
        /// compile time (see `evenkeel::frozen!`).
        #[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
        $vis struct $name;
        impl $name {
            /// The one configuration of this layout.
            $vis const CONFIG: $crate::Config<$backend, $name> =
                match $crate::Config::<$backend, $name>::freeze(&$settings) {
                    Ok(config) => config,
                    // Evaluated by the compiler only: invalid settings stop the build.
                    Err(error) => panic!("{}", error.summary()),
                };
        }
        impl $crate::Layout for $name {
            const SHAPE: ::core::option::Option<$crate::Shape> = match $crate::Shape::of(&$settings) {
                Ok(shape) => ::core::option::Option::Some(shape),
                // Evaluated by the compiler only: invalid settings stop the build.
                Err(error) => panic!("{}", $crate::ConfigError::summary(error)),
            };
            const $slot: ::core::option::Option<$crate::Config<$backend, $name>> =
                ::core::option::Option::Some($name::CONFIG);
        }
    };
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::settings::AntiWindup;

    const FULL: Settings = Settings::new(0.01, 2.0, 5.0, -10.0, 10.0)
        .with_slew_per_s(200.0)
        .with_filter_time_s(0.02)
        .with_deadband(0.01)
        .with_setpoint_weight(0.7)
        .with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: 0.1,
        });

    #[test]
    fn shape_takes_the_runtime_shifts() {
        let shape = Shape::of(&FULL).expect("valid");
        let c = crate::Config::<fixed::types::I16F16>::new(&FULL).expect("valid");
        assert_eq!(u32::from(shape.kp_shift), c.kp().shift());
        assert_eq!(u32::from(shape.ki_ts_shift), c.ki_ts().shift());
        let shift = |x: Option<crate::FixedCoef>| x.map(crate::FixedCoef::shift);
        assert_eq!(
            Some(u32::from(shape.setpoint_weight_shift)),
            shift(c.setpoint_weight())
        );
        assert_eq!(
            Some(u32::from(shape.tracking_ratio_shift)),
            shift(c.tracking_ratio())
        );
        assert_eq!(
            Some(u32::from(shape.filter_alpha_shift)),
            shift(c.filter_alpha())
        );
        let all = Features::FILTER
            .with(Features::DEADBAND)
            .with(Features::SETPOINT_WEIGHT)
            .with(Features::SLEW)
            .with(Features::BACK_CALCULATION);
        assert_eq!(shape.features, all);
    }

    #[test]
    fn covering_needs_the_same_features() {
        let shape = Shape::of(&FULL).expect("valid");
        let plain = Settings::new(0.01, 2.0, 5.0, -10.0, 10.0);
        assert_eq!(
            shape.covering(&plain),
            Err(ConfigError::Layout(Setting::Features))
        );
        let stronger = Settings { kp: 300.0, ..FULL };
        let wide = shape.covering(&stronger).expect("same features");
        assert_eq!(wide.kp_shift, 22); // 300 · 2²² ≈ 1.26e9
        assert_eq!(wide.ki_ts_shift, shape.ki_ts_shift);
    }

    #[test]
    fn zero_gain_takes_the_largest_shift() {
        let s = Settings::new(0.01, 0.0, 5.0, -1.0, 1.0);
        assert_eq!(Shape::of(&s).map(|s| s.kp_shift), Ok(62));
        let bad = Settings::new(0.01, 1.0, 5.0, 1.0, -1.0);
        assert_eq!(
            Shape::of(&bad),
            Err(ConfigError::Inverted(Setting::OutputMax))
        );
    }

    #[test]
    fn gain_room_rejects_bad_maxima() {
        let shape = Shape::of(&FULL).expect("valid");
        assert_eq!(
            shape.with_gain_room(f64::NAN, 1.0, 0.01),
            Err(ConfigError::NotFinite(Setting::Kp))
        );
        assert_eq!(
            shape.with_gain_room(1.0, -1.0, 0.01),
            Err(ConfigError::Negative(Setting::Ki))
        );
        assert_eq!(
            shape.with_gain_room(3.0e9, 1.0, 0.01),
            Err(ConfigError::OutOfFormat(Setting::Kp))
        );
        // Smaller maxima never raise a shift.
        assert_eq!(shape.with_gain_room(0.001, 0.001, 0.01), Ok(shape));
    }

    #[test]
    fn feature_names_in_bit_order() {
        extern crate std;
        let f = Features::BACK_CALCULATION.with(Features::FILTER);
        assert_eq!(std::format!("{f:?}"), "Features(filter|back_calculation)");
        assert_eq!(std::format!("{:?}", Features::NONE), "Features(-)");
    }
}
