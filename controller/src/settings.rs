//! Controller settings in physical units, and their validation.
//!
//! [`Settings`] is what an engineer writes down: gains, limits, rates and time
//! constants in SI units. [`Settings::per_sample`] validates them and turns
//! them once into per-sample coefficients with + − × ÷ only (IEEE-754
//! correctly rounded, therefore identical on every target); each backend then
//! stores those in its own number format (see [`crate::Config`]).

use crate::error::{ConfigError, Setting};
use crate::scaling::Scaling;

/// How the integrator is kept from winding up while the command is limited.
///
/// Both variants treat every limiter alike: the output clamp, the slew
/// limiter, and a downstream limit reported through
/// [`crate::Input::applied`].
///
/// ```
/// use evenkeel::{AntiWindup, Settings};
/// let s = Settings::new(0.01, 1.0, 1.0, 0.0, 1.0);
/// assert_eq!(s.anti_windup, AntiWindup::ConditionalIntegration); // the default
/// let bc = s.with_anti_windup(AntiWindup::BackCalculation { tracking_time_s: 1.0 });
/// assert_eq!(bc.per_sample()?.tracking_ratio, Some(0.01)); // Ts/Tt
/// # Ok::<(), evenkeel::ConfigError>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum AntiWindup {
    /// Back-calculation (Åström & Hägglund, *Advanced PID Control*, 2006,
    /// §3.5, from memory): `I += Ki·Ts·e + (Ts/Tt)·(u − v)`. The tracking
    /// ratio Ts/Tt must lie in (0, 1].
    BackCalculation {
        /// Tracking time constant Tt in seconds.
        tracking_time_s: f64,
    },
    /// Conditional integration (clamping): the integrator stops while the
    /// command is limited and the error would push it further into the
    /// limit.
    ConditionalIntegration,
}

/// Controller settings in physical units.
///
/// Build with [`Settings::new`] (or [`Settings::from_integral_time`]) and the
/// `with_*` methods; all are `const fn`, so a whole configuration can be a
/// `const` (see [`crate::Config`]).
///
/// ```
/// use evenkeel::{AntiWindup, Settings};
/// let s = Settings::new(0.01, 2.0, 0.5, -10.0, 10.0)
///     .with_slew_per_s(20.0)
///     .with_filter_time_s(0.05)
///     .with_anti_windup(AntiWindup::BackCalculation { tracking_time_s: 1.0 });
/// let c = s.per_sample()?;
/// assert_eq!(c.ki_ts, 0.5 * 0.01);
/// # Ok::<(), evenkeel::ConfigError>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Settings {
    /// Sample period Ts in seconds, > 0.
    pub period_s: f64,
    /// Proportional gain Kp (command units per measurement unit), ≥ 0.
    pub kp: f64,
    /// Integral gain Ki in command units per (measurement unit · second), ≥ 0.
    pub ki_per_s: f64,
    /// Setpoint weight b of the proportional part `Kp·(b·r − y)`, in [0, 1].
    pub setpoint_weight: f64,
    /// Lowest command.
    pub output_min: f64,
    /// Highest command, > `output_min`.
    pub output_max: f64,
    /// Largest command rate in command units per second; `None`: no slew limit.
    pub slew_per_s: Option<f64>,
    /// Time constant of the first-order measurement low-pass in seconds;
    /// `None`: unfiltered.
    pub filter_time_s: Option<f64>,
    /// Error deadband half-width in measurement units; `None`: no deadband.
    pub deadband: Option<f64>,
    /// Anti-windup method.
    pub anti_windup: AntiWindup,
    /// Lowest plausible measurement; readings below raise
    /// [`crate::Status::MEASUREMENT_RANGE`] and are clamped.
    pub measurement_min: f64,
    /// Highest plausible measurement.
    pub measurement_max: f64,
    /// Raw units of the firmware's numbers (ADC and PWM counts, or a
    /// per-loop scale); [`Scaling::NONE`]: raw = physical.
    pub scaling: Scaling,
}

/// Settings turned into per-sample values (f64), ready to be stored in a
/// backend's number format.
///
/// ```
/// use evenkeel::Settings;
/// let p = Settings::new(0.5, 2.0, 3.0, -1.0, 1.0).with_slew_per_s(4.0).per_sample()?;
/// assert_eq!((p.kp, p.ki_ts, p.slew_step), (2.0, 1.5, Some(2.0)));
/// // Integrator range: output range widened by its span (2) on each side.
/// assert_eq!((p.integral_min, p.integral_max), (-3.0, 3.0));
/// # Ok::<(), evenkeel::ConfigError>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PerSample {
    /// Kp.
    pub kp: f64,
    /// Setpoint weight b; `None` when b = 1 (the multiply is skipped).
    pub setpoint_weight: Option<f64>,
    /// Ki·Ts.
    pub ki_ts: f64,
    /// Ts/Tt for back-calculation; `None` for conditional integration.
    pub tracking_ratio: Option<f64>,
    /// Filter coefficient α = Ts/(Tf + Ts) (backward Euler); `None`: no filter.
    pub filter_alpha: Option<f64>,
    /// Largest command change per sample R·Ts; `None`: no slew limit.
    pub slew_step: Option<f64>,
    /// Deadband half-width.
    pub deadband: Option<f64>,
    /// Command limits.
    pub output_min: f64,
    /// Command limits.
    pub output_max: f64,
    /// Integrator range: output range widened by its span on both sides,
    /// so a feed-forward of up to one span can be corrected.
    pub integral_min: f64,
    /// Integrator range, upper end.
    pub integral_max: f64,
    /// Measurement range.
    pub measurement_min: f64,
    /// Measurement range.
    pub measurement_max: f64,
    /// The command of physical zero (the command scale's offset): the
    /// command of a controller at rest, clamped into the limits. (The
    /// integrator starts at raw zero; with a command offset, `engage` the
    /// actuator's value to start bumplessly.)
    pub command_zero: f64,
}

impl Settings {
    /// Settings with the given period, gains and output limits; no slew
    /// limit, filter or deadband; setpoint weight 1; conditional integration;
    /// measurement range ±30 000 (inside the Q16.16 range).
    ///
    /// ```
    /// use evenkeel::{AntiWindup, Settings};
    /// let s = Settings::new(0.01, 2.0, 1.0, -5.0, 5.0);
    /// assert_eq!((s.setpoint_weight, s.slew_per_s, s.deadband), (1.0, None, None));
    /// assert_eq!(s.anti_windup, AntiWindup::ConditionalIntegration);
    /// assert_eq!((s.measurement_min, s.measurement_max), (-30_000.0, 30_000.0));
    /// ```
    #[must_use]
    pub const fn new(
        period_s: f64,
        kp: f64,
        ki_per_s: f64,
        output_min: f64,
        output_max: f64,
    ) -> Self {
        Self {
            period_s,
            kp,
            ki_per_s,
            setpoint_weight: 1.0,
            output_min,
            output_max,
            slew_per_s: None,
            filter_time_s: None,
            deadband: None,
            anti_windup: AntiWindup::ConditionalIntegration,
            measurement_min: -30_000.0,
            measurement_max: 30_000.0,
            scaling: Scaling::NONE,
        }
    }

    /// The firmware's numbers in raw units: every value of the step
    /// (setpoint, measurement, command, limits, …) is then `physical ·
    /// per_unit + offset` of its side, and the gains are converted to raw
    /// units per raw unit. See [`Scaling`].
    ///
    /// ```
    /// use evenkeel::{Scale, Scaling, Settings};
    /// let s = Settings::new(0.01, 0.5, 1.0, 0.0, 1.0)
    ///     .with_scaling(Scaling::NONE.with_pwm(Scale::new(1000.0, 0.0)));
    /// assert_eq!(s.per_sample()?.output_max, 1000.0);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn with_scaling(mut self, scaling: Scaling) -> Self {
        self.scaling = scaling;
        self
    }

    /// Like [`Settings::new`] with the integral time Ti in seconds instead of
    /// Ki (Ki = Kp/Ti). A non-positive Ti gives Ki = NaN (never ±∞, whatever
    /// Kp is), which validation rejects.
    ///
    /// ```
    /// let s = evenkeel::Settings::from_integral_time(0.1, 4.0, 2.0, 0.0, 100.0);
    /// assert_eq!(s.ki_per_s, 2.0);
    /// ```
    #[must_use]
    pub const fn from_integral_time(
        period_s: f64,
        kp: f64,
        integral_time_s: f64,
        output_min: f64,
        output_max: f64,
    ) -> Self {
        let ki = if integral_time_s > 0.0 {
            kp / integral_time_s
        } else {
            f64::NAN
        };
        Self::new(period_s, kp, ki, output_min, output_max)
    }

    /// Set the setpoint weight b.
    ///
    /// ```
    /// use evenkeel::{ConfigError, Settings};
    /// let s = Settings::new(0.01, 2.0, 1.0, -5.0, 5.0);
    /// assert_eq!(s.with_setpoint_weight(0.5).per_sample()?.setpoint_weight, Some(0.5));
    /// let bad = s.with_setpoint_weight(1.5);
    /// assert_eq!(bad.per_sample(), Err(ConfigError::SetpointWeightOutOfRange));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn with_setpoint_weight(mut self, b: f64) -> Self {
        self.setpoint_weight = b;
        self
    }

    /// Limit the command rate to `rate` units per second.
    ///
    /// ```
    /// use evenkeel::Settings;
    /// let s = Settings::new(0.5, 2.0, 1.0, -5.0, 5.0).with_slew_per_s(3.0);
    /// assert_eq!(s.per_sample()?.slew_step, Some(1.5)); // R·Ts per sample
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn with_slew_per_s(mut self, rate: f64) -> Self {
        self.slew_per_s = Some(rate);
        self
    }

    /// Filter the measurement with a first-order low-pass of time constant
    /// `tf` seconds.
    ///
    /// ```
    /// use evenkeel::Settings;
    /// let s = Settings::new(0.01, 2.0, 1.0, -5.0, 5.0).with_filter_time_s(0.03);
    /// let alpha = s.per_sample()?.filter_alpha.unwrap_or(0.0);
    /// assert!((alpha - 0.25).abs() < 1e-15); // α = Ts/(Tf + Ts) = 0.01/0.04
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn with_filter_time_s(mut self, tf: f64) -> Self {
        self.filter_time_s = Some(tf);
        self
    }

    /// Ignore errors smaller than `width` (continuous deadband: the error is
    /// shrunk by `width` towards zero).
    ///
    /// ```
    /// use evenkeel::{Config, Controller, Settings, Status};
    /// let s = Settings::new(0.1, 1.0, 0.0, -10.0, 10.0).with_deadband(0.25);
    /// let mut pi = Controller::new(Config::<f64>::try_new(&s)?);
    /// assert_eq!(pi.step(1.0, 0.0).command, 0.75); // error 1 shrunk by 0.25
    /// assert!(pi.step(0.1, 0.0).status.contains(Status::DEADBAND));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn with_deadband(mut self, width: f64) -> Self {
        self.deadband = Some(width);
        self
    }

    /// Choose the anti-windup method.
    ///
    /// ```
    /// use evenkeel::{AntiWindup, ConfigError, Settings};
    /// let s = Settings::new(0.01, 2.0, 1.0, -5.0, 5.0);
    /// // Tt shorter than Ts: Ts/Tt = 10 is outside (0, 1].
    /// let bad = s.with_anti_windup(AntiWindup::BackCalculation { tracking_time_s: 0.001 });
    /// assert_eq!(bad.per_sample(), Err(ConfigError::TrackingRatioOutOfRange));
    /// ```
    #[must_use]
    pub const fn with_anti_windup(mut self, method: AntiWindup) -> Self {
        self.anti_windup = method;
        self
    }

    /// Set the plausible measurement range.
    ///
    /// ```
    /// use evenkeel::{Config, Controller, Settings, Status};
    /// let s = Settings::new(0.1, 1.0, 0.0, -10.0, 10.0).with_measurement_range(0.0, 5.0);
    /// let mut pi = Controller::new(Config::<f64>::try_new(&s)?);
    /// let out = pi.step(2.0, 7.0); // 7 is clamped to 5
    /// assert_eq!(out.command, -3.0);
    /// assert!(out.status.is_fault() && out.status.contains(Status::MEASUREMENT_RANGE));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn with_measurement_range(mut self, min: f64, max: f64) -> Self {
        self.measurement_min = min;
        self.measurement_max = max;
        self
    }

    /// Validate and compute per-sample values. Backend-independent checks
    /// only; backends add their own range checks ([`crate::Config`]).
    ///
    /// ```
    /// use evenkeel::{ConfigError, Settings};
    /// let p = Settings::new(0.01, 2.0, 4.0, 0.0, 10.0).per_sample()?;
    /// assert_eq!(p.ki_ts, 4.0 * 0.01); // one IEEE product: the same on every target
    /// let idle = Settings::new(0.01, 0.0, 0.0, 0.0, 1.0);
    /// assert_eq!(idle.per_sample(), Err(ConfigError::NoAction));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// # Errors
    /// The first violated rule, as a [`ConfigError`].
    pub const fn per_sample(&self) -> Result<PerSample, ConfigError> {
        let ts = self.period_s;
        if !ts.is_finite() {
            return Err(ConfigError::NotFinite(Setting::Period));
        }
        if ts <= 0.0 {
            return Err(ConfigError::NotPositive(Setting::Period));
        }
        if let Err(e) = non_negative(self.kp, Setting::Kp) {
            return Err(e);
        }
        if let Err(e) = non_negative(self.ki_per_s, Setting::Ki) {
            return Err(e);
        }
        if self.kp == 0.0 && self.ki_per_s == 0.0 {
            return Err(ConfigError::NoAction);
        }
        let b = self.setpoint_weight;
        if !b.is_finite() {
            return Err(ConfigError::NotFinite(Setting::SetpointWeight));
        }
        if b < 0.0 || b > 1.0 {
            return Err(ConfigError::SetpointWeightOutOfRange);
        }
        if !self.output_min.is_finite() {
            return Err(ConfigError::NotFinite(Setting::OutputMin));
        }
        if !self.output_max.is_finite() {
            return Err(ConfigError::NotFinite(Setting::OutputMax));
        }
        if self.output_min >= self.output_max {
            return Err(ConfigError::Inverted(Setting::OutputMax));
        }
        if !self.measurement_min.is_finite() {
            return Err(ConfigError::NotFinite(Setting::MeasurementMin));
        }
        if !self.measurement_max.is_finite() {
            return Err(ConfigError::NotFinite(Setting::MeasurementMax));
        }
        if self.measurement_min >= self.measurement_max {
            return Err(ConfigError::Inverted(Setting::MeasurementMax));
        }
        let slew_step = match self.slew_per_s {
            None => None,
            Some(rate) => match positive(rate, Setting::Slew) {
                Ok(rate) => Some(rate * ts),
                Err(e) => return Err(e),
            },
        };
        let filter_alpha = match self.filter_time_s {
            None => None,
            Some(tf) => match positive(tf, Setting::FilterTime) {
                Ok(tf) => Some(ts / (tf + ts)),
                Err(e) => return Err(e),
            },
        };
        let deadband = match self.deadband {
            None => None,
            Some(w) => match non_negative(w, Setting::Deadband) {
                Ok(w) => Some(w),
                Err(e) => return Err(e),
            },
        };
        let tracking_ratio = match self.anti_windup {
            AntiWindup::ConditionalIntegration => None,
            AntiWindup::BackCalculation { tracking_time_s } => {
                if !tracking_time_s.is_finite() {
                    return Err(ConfigError::NotFinite(Setting::TrackingTime));
                }
                if tracking_time_s <= 0.0 {
                    return Err(ConfigError::TrackingRatioOutOfRange);
                }
                let ratio = ts / tracking_time_s;
                if !(ratio > 0.0 && ratio <= 1.0) {
                    return Err(ConfigError::TrackingRatioOutOfRange);
                }
                Some(ratio)
            }
        };
        if let Err(e) = self.scaling.check() {
            return Err(e);
        }
        let raw = Self::raw_units(
            PerSample {
                kp: self.kp,
                setpoint_weight: if b == 1.0 { None } else { Some(b) },
                ki_ts: self.ki_per_s * ts,
                tracking_ratio,
                filter_alpha,
                slew_step,
                deadband,
                output_min: self.output_min,
                output_max: self.output_max,
                integral_min: 0.0,
                integral_max: 0.0,
                measurement_min: self.measurement_min,
                measurement_max: self.measurement_max,
                command_zero: 0.0,
            },
            &self.scaling,
        );
        let p = match raw {
            Ok(p) => p,
            Err(e) => return Err(e),
        };
        let span = p.output_max - p.output_min;
        Ok(PerSample {
            integral_min: p.output_min - span,
            integral_max: p.output_max + span,
            ..p
        })
    }

    /// `p` (physical) in the raw units of `scaling`. The identity leaves
    /// every value as it is (bit for bit).
    const fn raw_units(p: PerSample, scaling: &Scaling) -> Result<PerSample, ConfigError> {
        if scaling.is_none() {
            return Ok(p);
        }
        let (m, c) = (scaling.measurement, scaling.command);
        if p.setpoint_weight.is_some() && m.offset != 0.0 {
            return Err(ConfigError::WeightedOffset);
        }
        // Gains: command raw units per measurement raw unit.
        let gain = c.per_unit / m.per_unit;
        let mut measurement_min = m.raw(p.measurement_min);
        let mut measurement_max = m.raw(p.measurement_max);
        if let Some(top) = scaling.adc_max() {
            if measurement_min < 0.0 {
                measurement_min = 0.0;
            }
            if measurement_max > top {
                measurement_max = top;
            }
            if measurement_min >= measurement_max {
                return Err(ConfigError::Inverted(Setting::MeasurementMax));
            }
        }
        Ok(PerSample {
            kp: p.kp * gain,
            setpoint_weight: p.setpoint_weight,
            ki_ts: p.ki_ts * gain,
            tracking_ratio: p.tracking_ratio,
            filter_alpha: p.filter_alpha,
            slew_step: match p.slew_step {
                Some(s) => Some(c.raw_span(s)),
                None => None,
            },
            deadband: match p.deadband {
                Some(w) => Some(m.raw_span(w)),
                None => None,
            },
            output_min: c.raw(p.output_min),
            output_max: c.raw(p.output_max),
            integral_min: p.integral_min,
            integral_max: p.integral_max,
            measurement_min,
            measurement_max,
            command_zero: c.offset,
        })
    }
}

const fn non_negative(x: f64, which: Setting) -> Result<f64, ConfigError> {
    if !x.is_finite() {
        Err(ConfigError::NotFinite(which))
    } else if x < 0.0 {
        Err(ConfigError::Negative(which))
    } else {
        Ok(x)
    }
}

const fn positive(x: f64, which: Setting) -> Result<f64, ConfigError> {
    if !x.is_finite() {
        Err(ConfigError::NotFinite(which))
    } else if x <= 0.0 {
        Err(ConfigError::NotPositive(which))
    } else {
        Ok(x)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const BASE: Settings = Settings::new(0.01, 2.0, 1.0, -5.0, 5.0);

    #[test]
    fn coefficients_from_physical_units() {
        let s = BASE
            .with_slew_per_s(10.0)
            .with_filter_time_s(0.09)
            .with_anti_windup(AntiWindup::BackCalculation {
                tracking_time_s: 0.5,
            });
        let p = s.per_sample().expect("valid");
        assert_eq!(p.ki_ts, 0.01);
        assert_eq!(p.slew_step, Some(0.1));
        // α = Ts/(Tf+Ts) = 0.01/0.1 (backward Euler, common practice).
        assert!((p.filter_alpha.expect("on") - 0.1).abs() < 1e-15);
        assert_eq!(p.tracking_ratio, Some(0.02));
        assert_eq!(p.integral_min, -15.0);
        assert_eq!(p.integral_max, 15.0);
        assert_eq!(p.setpoint_weight, None);
    }

    #[test]
    fn rejects_each_rule() {
        let cases: [(Settings, ConfigError); 12] = [
            (
                Settings {
                    period_s: 0.0,
                    ..BASE
                },
                ConfigError::NotPositive(Setting::Period),
            ),
            (
                Settings {
                    period_s: f64::NAN,
                    ..BASE
                },
                ConfigError::NotFinite(Setting::Period),
            ),
            (
                Settings { kp: -1.0, ..BASE },
                ConfigError::Negative(Setting::Kp),
            ),
            (
                Settings {
                    ki_per_s: f64::INFINITY,
                    ..BASE
                },
                ConfigError::NotFinite(Setting::Ki),
            ),
            (
                Settings {
                    kp: 0.0,
                    ki_per_s: 0.0,
                    ..BASE
                },
                ConfigError::NoAction,
            ),
            (
                BASE.with_setpoint_weight(1.5),
                ConfigError::SetpointWeightOutOfRange,
            ),
            (
                Settings {
                    output_min: 5.0,
                    ..BASE
                },
                ConfigError::Inverted(Setting::OutputMax),
            ),
            (
                BASE.with_measurement_range(1.0, 1.0),
                ConfigError::Inverted(Setting::MeasurementMax),
            ),
            (
                BASE.with_slew_per_s(0.0),
                ConfigError::NotPositive(Setting::Slew),
            ),
            (
                BASE.with_filter_time_s(-1.0),
                ConfigError::NotPositive(Setting::FilterTime),
            ),
            (
                BASE.with_deadband(-0.1),
                ConfigError::Negative(Setting::Deadband),
            ),
            (
                BASE.with_anti_windup(AntiWindup::BackCalculation {
                    tracking_time_s: 0.001,
                }),
                ConfigError::TrackingRatioOutOfRange,
            ),
        ];
        for (settings, want) in cases {
            assert_eq!(settings.per_sample(), Err(want), "{settings:?}");
        }
    }

    /// Every non-finite setting is named in the error, each on its own.
    #[test]
    fn names_each_non_finite_setting() {
        let nan = f64::NAN;
        let cases: [(Settings, Setting); 10] = [
            (Settings { kp: nan, ..BASE }, Setting::Kp),
            (BASE.with_setpoint_weight(nan), Setting::SetpointWeight),
            (
                Settings {
                    output_min: nan,
                    ..BASE
                },
                Setting::OutputMin,
            ),
            (
                Settings {
                    output_max: f64::INFINITY,
                    ..BASE
                },
                Setting::OutputMax,
            ),
            (
                BASE.with_measurement_range(nan, 1.0),
                Setting::MeasurementMin,
            ),
            (
                BASE.with_measurement_range(0.0, nan),
                Setting::MeasurementMax,
            ),
            (BASE.with_slew_per_s(f64::INFINITY), Setting::Slew),
            (BASE.with_filter_time_s(nan), Setting::FilterTime),
            (BASE.with_deadband(nan), Setting::Deadband),
            (
                BASE.with_anti_windup(AntiWindup::BackCalculation {
                    tracking_time_s: nan,
                }),
                Setting::TrackingTime,
            ),
        ];
        for (settings, which) in cases {
            assert_eq!(
                settings.per_sample(),
                Err(ConfigError::NotFinite(which)),
                "{which:?}"
            );
        }
    }

    /// The edges of each rule that must still be accepted: P only, I only,
    /// b at both ends of [0, 1], a zero deadband.
    #[test]
    fn accepts_the_edges() {
        let p_only = Settings {
            ki_per_s: 0.0,
            ..BASE
        }
        .per_sample();
        assert_eq!(p_only.map(|p| (p.kp, p.ki_ts)), Ok((2.0, 0.0)));
        let i_only = Settings { kp: 0.0, ..BASE }.per_sample();
        assert_eq!(i_only.map(|p| (p.kp, p.ki_ts)), Ok((0.0, 0.01)));
        let b0 = BASE.with_setpoint_weight(0.0).per_sample();
        assert_eq!(b0.map(|p| p.setpoint_weight), Ok(Some(0.0)));
        let b_half = BASE.with_setpoint_weight(0.5).per_sample();
        assert_eq!(b_half.map(|p| p.setpoint_weight), Ok(Some(0.5)));
        let b1 = BASE.with_setpoint_weight(1.0).per_sample();
        assert_eq!(b1.map(|p| p.setpoint_weight), Ok(None));
        assert_eq!(
            BASE.with_setpoint_weight(-0.1).per_sample(),
            Err(ConfigError::SetpointWeightOutOfRange)
        );
        let no_band = BASE.with_deadband(0.0).per_sample();
        assert_eq!(no_band.map(|p| p.deadband), Ok(Some(0.0)));
        let range = BASE.with_measurement_range(-2.0, 7.0).per_sample();
        assert_eq!(
            range.map(|p| (p.measurement_min, p.measurement_max)),
            Ok((-2.0, 7.0))
        );
        assert_eq!(
            BASE.with_measurement_range(3.0, -3.0).per_sample(),
            Err(ConfigError::Inverted(Setting::MeasurementMax))
        );
    }

    /// A tracking time so long that Ts/Tt underflows to zero would leave the
    /// back-calculation with no effect: refused, like a ratio above one.
    #[test]
    fn tracking_ratio_zero_is_refused() {
        let s = Settings {
            period_s: 1e-300,
            ..BASE
        }
        .with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: 1e300,
        });
        assert_eq!(s.per_sample(), Err(ConfigError::TrackingRatioOutOfRange));
        let zero = BASE.with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: 0.0,
        });
        assert_eq!(zero.per_sample(), Err(ConfigError::TrackingRatioOutOfRange));
    }

    #[test]
    fn tracking_ratio_one_is_accepted() {
        let s = BASE.with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: 0.01,
        });
        assert_eq!(s.per_sample().map(|p| p.tracking_ratio), Ok(Some(1.0)));
    }

    #[test]
    fn integral_time_form() {
        let s = Settings::from_integral_time(0.01, 3.0, 1.5, 0.0, 1.0);
        assert_eq!(s.ki_per_s, 2.0);
        let bad = Settings::from_integral_time(0.01, 3.0, 0.0, 0.0, 1.0);
        assert!(bad.ki_per_s.is_nan());
        assert!(
            Settings::from_integral_time(0.01, 3.0, -2.0, 0.0, 1.0)
                .ki_per_s
                .is_nan()
        );
        assert_eq!(bad.per_sample(), Err(ConfigError::NotFinite(Setting::Ki)));
    }
}
