//! Configuration errors.

use core::fmt;

/// Names one setting of [`crate::Settings`] in an error.
///
/// ```
/// use evenkeel::{ConfigError, Setting, Settings};
/// let negative_kp = Settings::new(0.01, -1.0, 1.0, 0.0, 1.0);
/// assert_eq!(negative_kp.per_sample(), Err(ConfigError::Negative(Setting::Kp)));
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Setting {
    /// `period_s`.
    Period,
    /// `kp`.
    Kp,
    /// `ki_per_s`.
    Ki,
    /// `setpoint_weight`.
    SetpointWeight,
    /// `output_min`.
    OutputMin,
    /// `output_max`.
    OutputMax,
    /// `slew_per_s`.
    Slew,
    /// `filter_time_s`.
    FilterTime,
    /// `deadband`.
    Deadband,
    /// `tracking_time_s` of back-calculation.
    TrackingTime,
    /// `measurement_min`.
    MeasurementMin,
    /// `measurement_max`.
    MeasurementMax,
    /// A gain-schedule breakpoint.
    Breakpoint,
    /// The set of optional parts (filter, deadband, setpoint weight, slew
    /// limit, back-calculation).
    Features,
    /// The measurement side of the [`crate::Scaling`].
    MeasurementScale,
    /// The command side of the [`crate::Scaling`].
    CommandScale,
}

impl Setting {
    /// The field name, as in [`crate::Settings`].
    ///
    /// ```
    /// use evenkeel::Setting;
    /// assert_eq!(Setting::Ki.name(), "ki_per_s");
    /// assert_eq!(Setting::Slew.name(), "slew_per_s");
    /// ```
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::Period => "period_s",
            Self::Kp => "kp",
            Self::Ki => "ki_per_s",
            Self::SetpointWeight => "setpoint_weight",
            Self::OutputMin => "output_min",
            Self::OutputMax => "output_max",
            Self::Slew => "slew_per_s",
            Self::FilterTime => "filter_time_s",
            Self::Deadband => "deadband",
            Self::TrackingTime => "tracking_time_s",
            Self::MeasurementMin => "measurement_min",
            Self::MeasurementMax => "measurement_max",
            Self::Breakpoint => "schedule breakpoint",
            Self::Features => "features",
            Self::MeasurementScale => "scaling.measurement",
            Self::CommandScale => "scaling.command",
        }
    }
}

/// Why a configuration was refused.
///
/// ```
/// use evenkeel::{Config, ConfigError, Settings, Setting};
/// let bad = Settings::new(0.0, 1.0, 1.0, 0.0, 1.0);
/// let err = Config::<f32>::try_new(&bad).unwrap_err();
/// assert_eq!(err, ConfigError::NotPositive(Setting::Period));
/// assert_eq!(err.to_string(), "period_s must be greater than zero");
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum ConfigError {
    /// A value is NaN or infinite.
    NotFinite(Setting),
    /// A value must be > 0.
    NotPositive(Setting),
    /// A value must be ≥ 0.
    Negative(Setting),
    /// The upper end of a range is not above the lower end.
    Inverted(Setting),
    /// Both Kp and Ki are zero.
    NoAction,
    /// Setpoint weight outside [0, 1].
    SetpointWeightOutOfRange,
    /// Ts/Tt outside (0, 1].
    TrackingRatioOutOfRange,
    /// A value does not fit the backend's number format.
    OutOfFormat(Setting),
    /// A value fits but would be stored with more relative error than the
    /// backend promises (fixed point: 2⁻²⁰ for gains, 1 % for the slew step).
    TooFine(Setting),
    /// Gain-schedule breakpoints are not strictly increasing, or the table
    /// is empty or full (a schedule reports which row in its own
    /// [`crate::ScheduleError`]).
    Schedule,
    /// The setting does not fit the compile-time [`crate::Layout`]: another
    /// set of features ([`Setting::Features`]), or a gain that the layout's
    /// fixed-point format cannot hold within 2⁻²⁰ relative.
    Layout(Setting),
    /// A setpoint weight b ≠ 1 with a measurement offset: `b·r − y` in raw
    /// units would carry `(1 − b)·offset`.
    WeightedOffset,
}

impl fmt::Display for ConfigError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match *self {
            Self::NotFinite(s) => write!(f, "{} must be a finite number", s.name()),
            Self::NotPositive(s) => write!(f, "{} must be greater than zero", s.name()),
            Self::Negative(s) => write!(f, "{} must be zero or positive", s.name()),
            Self::Inverted(Setting::OutputMax) => {
                f.write_str("output_max must be greater than output_min")
            }
            Self::Inverted(Setting::MeasurementMax) => {
                f.write_str("measurement_max must be greater than measurement_min")
            }
            Self::Inverted(s) => write!(f, "{} is below the lower end of its range", s.name()),
            Self::NoAction => f.write_str("kp and ki_per_s are both zero: the controller would do nothing"),
            Self::SetpointWeightOutOfRange => f.write_str("setpoint_weight must lie in [0, 1]"),
            Self::TrackingRatioOutOfRange => {
                f.write_str("period_s / tracking_time_s must lie in (0, 1]: tracking_time_s must be at least period_s")
            }
            Self::OutOfFormat(s) => write!(
                f,
                "{} does not fit the backend's number format (Q16.16 signals: ±32767; fixed gains: below 2^31, per-sample integral and tracking gains below 32768)",
                s.name()
            ),
            Self::TooFine(Setting::Slew) => f.write_str(
                "slew_per_s · period_s is too small for the command's resolution (fixed point: within 1 %, i.e. at least 50 LSB; float: at least one unit in the last place at the larger output limit)",
            ),
            Self::TooFine(s) => write!(
                f,
                "{} is too small to be stored precisely in the backend's number format (fixed gains: relative error ≤ 2^-20)",
                s.name()
            ),
            Self::Schedule => f.write_str(
                "gain schedule breakpoints must be strictly increasing and fit the table capacity",
            ),
            Self::Layout(Setting::Features) => f.write_str(
                "the settings turn on other features (filter, deadband, setpoint weight, slew, back-calculation) than the compile-time layout has",
            ),
            Self::WeightedOffset => f.write_str(
                "setpoint_weight below 1 needs a measurement scale without offset (b·r − y in raw units would carry (1 − b)·offset)",
            ),
            Self::Layout(s) => write!(
                f,
                "{} does not fit the compile-time layout's fixed-point format (too large for its shift, or too coarse to hold it within 2^-20 relative)",
                s.name()
            ),
        }
    }
}

impl core::error::Error for ConfigError {}
