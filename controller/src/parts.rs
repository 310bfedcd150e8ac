//! A fixed-point configuration as plain integers, and back, with no
//! floating point.
//!
//! [`Config::new`] computes the per-sample coefficients in `f64`. A Rust
//! firmware evaluates it at compile time ([`crate::config!`]); a firmware
//! that cannot (C, or a configuration received at run time on a core
//! without FPU) stores the result instead: [`Config::to_parts`] on the
//! host, [`Config::from_parts`] on the target, which only compares and
//! copies integers. Both fixed-point backends use the same parts: Q16.16
//! bits for `I16F16`, raw 16-bit values for [`Slim16`].
//!
//! ```
//! use evenkeel::{Config, Settings};
//! use fixed::types::I16F16;
//! let settings = Settings::new(0.01, 2.0, 5.0, -10.0, 10.0).with_slew_per_s(200.0);
//! let config = Config::<I16F16>::try_new(&settings)?; // on the host
//! let parts = config.to_parts(); // integers: a C initialiser, a file, a message
//! assert_eq!(Config::<I16F16>::from_parts(&parts)?, config); // on the target: the same bits
//! # Ok::<(), evenkeel::ConfigError>(())
//! ```

use fixed::types::I16F16;

use crate::config::Config;
use crate::error::{ConfigError, Setting};
use crate::layout::{Features, Layout, Slot};
use crate::q::{FixedCoef, MAX_SHIFT};
use crate::slim::{SLIM_MAX_SHIFT, Slim16, SlimCoef};

/// A stored coefficient: value = `mantissa · 2^-shift`.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
pub struct CoefParts {
    /// The mantissa (`I16F16`: any `i32`; [`Slim16`]: an `i16`).
    pub mantissa: i32,
    /// The binary point (`I16F16`: 0 to 62; [`Slim16`]: 0 to 30).
    pub shift: u8,
}

/// Every value a fixed-point [`Config`] stores, as integers.
///
/// Signals are the backend's raw bits: Q16.16 (value = bits / 65 536) for
/// `I16F16`, the raw 16-bit value for [`Slim16`]. The coefficient and
/// signal of a part that [`ConfigParts::features`] leaves off are ignored
/// (stored as zero). The integrator and feed-forward ranges are not parts:
/// they follow from the output limits.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
pub struct ConfigParts {
    /// [`Features::bits`]: the optional parts that are on.
    pub features: u8,
    /// Kp.
    pub kp: CoefParts,
    /// Setpoint weight b (with [`Features::SETPOINT_WEIGHT`]), in [0, 1].
    pub setpoint_weight: CoefParts,
    /// Ki·Ts, per sample; shift at least 16 (`I16F16`) or 15 ([`Slim16`]).
    pub ki_ts: CoefParts,
    /// Ts/Tt (with [`Features::BACK_CALCULATION`]), in (0, 1]; shift at
    /// least 16 or 14.
    pub tracking_ratio: CoefParts,
    /// Filter α = Ts/(Tf + Ts) (with [`Features::FILTER`]), in (0, 1];
    /// shift at least 16 or 15.
    pub filter_alpha: CoefParts,
    /// Largest command change per sample (with [`Features::SLEW`]), > 0.
    pub slew_step: i32,
    /// Deadband half-width (with [`Features::DEADBAND`]), ≥ 0.
    pub deadband: i32,
    /// Lowest command.
    pub output_min: i32,
    /// Highest command, above `output_min`.
    pub output_max: i32,
    /// Lowest plausible measurement.
    pub measurement_min: i32,
    /// Highest plausible measurement, above `measurement_min`.
    pub measurement_max: i32,
    /// The command of a controller at rest (after `new` and `reset`),
    /// within the output limits.
    pub rest: i32,
}

/// What a backend's number formats allow.
struct Format {
    signal_min: i32,
    signal_max: i32,
    mantissa_min: i32,
    mantissa_max: i32,
    max_shift: u32,
    /// Smallest shift of Ki·Ts and α.
    state_min_shift: u32,
    /// Smallest shift of Ts/Tt.
    ratio_min_shift: u32,
    /// A compile-time layout's shift minus this format's.
    layout_offset: u32,
}

const FIXED: Format = Format {
    signal_min: i32::MIN,
    signal_max: i32::MAX,
    mantissa_min: i32::MIN,
    mantissa_max: i32::MAX,
    max_shift: MAX_SHIFT,
    state_min_shift: 16,
    ratio_min_shift: 16,
    layout_offset: 0,
};

const SLIM: Format = Format {
    signal_min: i16::MIN as i32,
    signal_max: i16::MAX as i32,
    mantissa_min: i16::MIN as i32,
    mantissa_max: i16::MAX as i32,
    max_shift: SLIM_MAX_SHIFT,
    state_min_shift: 15,
    ratio_min_shift: 14,
    layout_offset: 16,
};

/// Parts that passed every check; those of parts that are off are zero.
struct Checked {
    features: Features,
    /// Kp, setpoint weight, Ki·Ts, Ts/Tt, α: (mantissa, shift).
    coefs: [(i32, u32); 5],
    /// Slew step, deadband, measurement min and max, rest.
    signals: [i32; 5],
    output_min: i32,
    output_max: i32,
}

/// `mantissa · 2^-shift` ≤ 1 (exact: shift ≤ 62).
fn at_most_one(c: (i32, u32)) -> bool {
    i64::from(c.0) <= 1_i64 << c.1
}

/// A coefficient in the format (shift, mantissa range, layout); the
/// caller checks its sign and range.
fn coef<L: Layout>(
    c: CoefParts,
    f: &Format,
    min_shift: u32,
    slot: Slot,
    which: Setting,
) -> Result<(i32, u32), ConfigError> {
    let shift = u32::from(c.shift);
    if shift > f.max_shift
        || shift < min_shift
        || c.mantissa < f.mantissa_min
        || c.mantissa > f.mantissa_max
    {
        return Err(ConfigError::OutOfFormat(which));
    }
    if let Some(layout) = L::SHAPE.and_then(|s| s.shift(slot))
        && layout.checked_sub(f.layout_offset) != Some(shift)
    {
        return Err(ConfigError::Layout(which));
    }
    Ok((c.mantissa, shift))
}

fn check<L: Layout>(p: &ConfigParts, f: &Format) -> Result<Checked, ConfigError> {
    let all = Features::FILTER
        .with(Features::DEADBAND)
        .with(Features::SETPOINT_WEIGHT)
        .with(Features::SLEW)
        .with(Features::BACK_CALCULATION);
    if p.features & !all.bits() != 0 {
        return Err(ConfigError::OutOfFormat(Setting::Features));
    }
    let features = Features::from_bits(p.features);
    if let Some(shape) = L::SHAPE
        && shape.features() != features
    {
        return Err(ConfigError::Layout(Setting::Features));
    }
    let on = |x: Features| features.contains(x);

    let kp = coef::<L>(p.kp, f, 0, Slot::Kp, Setting::Kp)?;
    if kp.0 < 0 {
        return Err(ConfigError::Negative(Setting::Kp));
    }
    let ki_ts = coef::<L>(p.ki_ts, f, f.state_min_shift, Slot::KiTs, Setting::Ki)?;
    if ki_ts.0 < 0 {
        return Err(ConfigError::Negative(Setting::Ki));
    }
    if kp.0 == 0 && ki_ts.0 == 0 {
        return Err(ConfigError::NoAction);
    }
    let mut weight = (0, 0);
    if on(Features::SETPOINT_WEIGHT) {
        weight = coef::<L>(
            p.setpoint_weight,
            f,
            0,
            Slot::SetpointWeight,
            Setting::SetpointWeight,
        )?;
        if weight.0 < 0 || !at_most_one(weight) {
            return Err(ConfigError::SetpointWeightOutOfRange);
        }
    }
    let mut ratio = (0, 0);
    if on(Features::BACK_CALCULATION) {
        ratio = coef::<L>(
            p.tracking_ratio,
            f,
            f.ratio_min_shift,
            Slot::TrackingRatio,
            Setting::TrackingTime,
        )?;
        if ratio.0 <= 0 || !at_most_one(ratio) {
            return Err(ConfigError::TrackingRatioOutOfRange);
        }
    }
    let mut alpha = (0, 0);
    if on(Features::FILTER) {
        alpha = coef::<L>(
            p.filter_alpha,
            f,
            f.state_min_shift,
            Slot::FilterAlpha,
            Setting::FilterTime,
        )?;
        if alpha.0 <= 0 {
            return Err(ConfigError::NotPositive(Setting::FilterTime));
        }
        if !at_most_one(alpha) {
            return Err(ConfigError::OutOfFormat(Setting::FilterTime));
        }
    }

    let signal = |x: i32, which: Setting| {
        if x < f.signal_min || x > f.signal_max {
            Err(ConfigError::OutOfFormat(which))
        } else {
            Ok(x)
        }
    };
    let mut slew = 0;
    if on(Features::SLEW) {
        slew = signal(p.slew_step, Setting::Slew)?;
        if slew <= 0 {
            return Err(ConfigError::NotPositive(Setting::Slew));
        }
    }
    let mut deadband = 0;
    if on(Features::DEADBAND) {
        deadband = signal(p.deadband, Setting::Deadband)?;
        if deadband < 0 {
            return Err(ConfigError::Negative(Setting::Deadband));
        }
    }
    let output_min = signal(p.output_min, Setting::OutputMin)?;
    let output_max = signal(p.output_max, Setting::OutputMax)?;
    if output_min >= output_max {
        return Err(ConfigError::Inverted(Setting::OutputMax));
    }
    let measurement_min = signal(p.measurement_min, Setting::MeasurementMin)?;
    let measurement_max = signal(p.measurement_max, Setting::MeasurementMax)?;
    if measurement_min >= measurement_max {
        return Err(ConfigError::Inverted(Setting::MeasurementMax));
    }
    if p.rest < output_min || p.rest > output_max {
        return Err(ConfigError::OutOfFormat(Setting::CommandScale));
    }
    Ok(Checked {
        features,
        coefs: [kp, weight, ki_ts, ratio, alpha],
        signals: [slew, deadband, measurement_min, measurement_max, p.rest],
        output_min,
        output_max,
    })
}

/// The settings each coefficient of [`Checked::coefs`] reports in errors.
const COEF_SETTINGS: [Setting; 5] = [
    Setting::Kp,
    Setting::SetpointWeight,
    Setting::Ki,
    Setting::TrackingTime,
    Setting::FilterTime,
];

fn coef_parts(mantissa: i32, shift: u32) -> CoefParts {
    CoefParts {
        mantissa,
        // Every stored shift is at most 62.
        shift: u8::try_from(shift).unwrap_or(u8::MAX),
    }
}

impl<L: Layout> Config<I16F16, L> {
    /// The configuration stored in `parts`, checked with integer
    /// comparisons only (no floating point, no division): a C firmware's
    /// `const` configuration, or one computed elsewhere by
    /// [`Config::to_parts`]. The same parts give the same bits as the
    /// configuration they came from.
    ///
    /// ```
    /// use evenkeel::{Config, ConfigError, Setting, Settings};
    /// use fixed::types::I16F16;
    /// let c = Config::<I16F16>::try_new(&Settings::new(0.01, 2.0, 5.0, -10.0, 10.0))?;
    /// let mut parts = c.to_parts();
    /// assert_eq!(Config::<I16F16>::from_parts(&parts)?, c);
    /// parts.output_max = parts.output_min; // an empty output range
    /// assert_eq!(Config::<I16F16>::from_parts(&parts), Err(ConfigError::Inverted(Setting::OutputMax)));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// # Errors
    /// The first part that is outside its format or range, as the
    /// [`ConfigError`] the same mistake in [`crate::Settings`] gives where
    /// there is one: [`ConfigError::OutOfFormat`] for a shift or value the
    /// format cannot hold (and for a rest command outside the limits,
    /// [`Setting::CommandScale`]), [`ConfigError::Negative`],
    /// [`ConfigError::NotPositive`], [`ConfigError::NoAction`],
    /// [`ConfigError::Inverted`], [`ConfigError::SetpointWeightOutOfRange`],
    /// [`ConfigError::TrackingRatioOutOfRange`], and under a compile-time
    /// layout [`ConfigError::Layout`] for other features or shifts.
    pub fn from_parts(parts: &ConfigParts) -> Result<Self, ConfigError> {
        // A frozen layout has one configuration, its own.
        if crate::layout::is_frozen::<L>() {
            return Err(ConfigError::Layout(Setting::Features));
        }
        let c = check::<L>(parts, &FIXED)?;
        let mut coefs = [FixedCoef::ZERO; 5];
        for ((slot, &(mantissa, shift)), which) in coefs.iter_mut().zip(&c.coefs).zip(COEF_SETTINGS)
        {
            *slot =
                FixedCoef::from_parts(mantissa, shift).ok_or(ConfigError::OutOfFormat(which))?;
        }
        Ok(Self::assemble(
            c.features,
            coefs,
            c.signals.map(I16F16::from_bits),
            I16F16::from_bits(c.output_min),
            I16F16::from_bits(c.output_max),
        ))
    }

    /// Every stored value as integers (see [`ConfigParts`]); exact.
    ///
    /// ```
    /// use evenkeel::{Config, Settings};
    /// use fixed::types::I16F16;
    /// let p = Config::<I16F16>::try_new(&Settings::new(0.01, 0.5, 0.0, -1.0, 1.0))?.to_parts();
    /// assert_eq!((p.kp.mantissa, p.kp.shift), (1 << 30, 31)); // 0.5 = 2³⁰ · 2⁻³¹
    /// assert_eq!((p.output_min, p.output_max), (-65_536, 65_536)); // ±1.0 in Q16.16
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub fn to_parts(&self) -> ConfigParts {
        let c = |x: FixedCoef| coef_parts(x.mantissa(), x.shift());
        ConfigParts {
            features: self.features.bits(),
            kp: c(self.kp),
            setpoint_weight: c(self.setpoint_weight),
            ki_ts: c(self.ki_ts),
            tracking_ratio: c(self.tracking_ratio),
            filter_alpha: c(self.filter_alpha),
            slew_step: self.slew_step.to_bits(),
            deadband: self.deadband.to_bits(),
            output_min: self.output_min.to_bits(),
            output_max: self.output_max.to_bits(),
            measurement_min: self.measurement_min.to_bits(),
            measurement_max: self.measurement_max.to_bits(),
            rest: self.rest.to_bits(),
        }
    }
}

impl<L: Layout> Config<Slim16, L> {
    /// The 16-bit configuration stored in `parts` (mantissas and signals
    /// must fit `i16`), checked with integer comparisons only; see
    /// [`Config::<I16F16>::from_parts`](Config::from_parts).
    ///
    /// ```
    /// use evenkeel::{Config, ConfigError, Scale, Scaling, Setting, Settings, Slim16};
    /// let s = Settings::new(0.001, 2.0, 50.0, 0.0, 100.0)
    ///     .with_scaling(Scaling::NONE.with_adc(12, Scale::new(40.95, 0.0)).with_pwm(Scale::new(10.0, 0.0)));
    /// let c = Config::<Slim16>::try_new(&s)?;
    /// let mut parts = c.to_parts();
    /// assert_eq!(Config::<Slim16>::from_parts(&parts)?, c);
    /// parts.output_max = 40_000; // not a 16-bit value
    /// assert_eq!(Config::<Slim16>::from_parts(&parts), Err(ConfigError::OutOfFormat(Setting::OutputMax)));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// # Errors
    /// As [`Config::<I16F16>::from_parts`](Config::from_parts), with the
    /// 16-bit format's ranges.
    pub fn from_parts(parts: &ConfigParts) -> Result<Self, ConfigError> {
        // A frozen layout has one configuration, its own.
        if crate::layout::is_frozen::<L>() {
            return Err(ConfigError::Layout(Setting::Features));
        }
        let c = check::<L>(parts, &SLIM)?;
        let mut coefs = [SlimCoef::ZERO; 5];
        for ((slot, &(mantissa, shift)), which) in coefs.iter_mut().zip(&c.coefs).zip(COEF_SETTINGS)
        {
            let mantissa = i16::try_from(mantissa).map_err(|_| ConfigError::OutOfFormat(which))?;
            *slot = SlimCoef::from_parts(mantissa, shift).ok_or(ConfigError::OutOfFormat(which))?;
        }
        let mut signals = [Slim16::ZERO; 5];
        for (slot, &x) in signals.iter_mut().zip(&c.signals) {
            *slot = Slim16::from_raw(
                i16::try_from(x).map_err(|_| ConfigError::OutOfFormat(Setting::CommandScale))?,
            );
        }
        let limit = |x: i32, which| {
            i16::try_from(x)
                .map(Slim16::from_raw)
                .map_err(|_| ConfigError::OutOfFormat(which))
        };
        Ok(Self::assemble(
            c.features,
            coefs,
            signals,
            limit(c.output_min, Setting::OutputMin)?,
            limit(c.output_max, Setting::OutputMax)?,
        ))
    }

    /// Every stored value as integers (see [`ConfigParts`]); exact.
    ///
    /// ```
    /// use evenkeel::{Config, Scale, Scaling, Settings, Slim16};
    /// let s = Settings::new(0.01, 0.5, 0.0, -1.0, 1.0)
    ///     .with_scaling(Scaling::NONE.with_measurement(Scale::new(512.0, 0.0)).with_command(Scale::new(512.0, 0.0)))
    ///     .with_measurement_range(-60.0, 60.0);
    /// let p = Config::<Slim16>::try_new(&s)?.to_parts();
    /// assert_eq!((p.kp.mantissa, p.kp.shift), (1 << 14, 15)); // 0.5 = 2¹⁴ · 2⁻¹⁵
    /// assert_eq!((p.output_min, p.output_max), (-512, 512));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub fn to_parts(&self) -> ConfigParts {
        let c = |x: SlimCoef| coef_parts(i32::from(x.mantissa()), x.shift());
        ConfigParts {
            features: self.features.bits(),
            kp: c(self.kp),
            setpoint_weight: c(self.setpoint_weight),
            ki_ts: c(self.ki_ts),
            tracking_ratio: c(self.tracking_ratio),
            filter_alpha: c(self.filter_alpha),
            slew_step: i32::from(self.slew_step.raw()),
            deadband: i32::from(self.deadband.raw()),
            output_min: i32::from(self.output_min.raw()),
            output_max: i32::from(self.output_max.raw()),
            measurement_min: i32::from(self.measurement_min.raw()),
            measurement_max: i32::from(self.measurement_max.raw()),
            rest: i32::from(self.rest.raw()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{AntiWindup, Scale, Scaling, Settings};

    const FULL: Settings = Settings::new(0.01, 2.0, 5.0, -10.0, 10.0)
        .with_slew_per_s(200.0)
        .with_filter_time_s(0.02)
        .with_deadband(0.01)
        .with_setpoint_weight(0.7)
        .with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: 0.1,
        })
        .with_measurement_range(-100.0, 100.0);

    const fn slim(s: Settings) -> Settings {
        s.with_measurement_range(-60.0, 60.0).with_scaling(
            Scaling::NONE
                .with_measurement(Scale::new(512.0, 0.0))
                .with_command(Scale::new(512.0, 0.0)),
        )
    }

    fn cases() -> [Settings; 6] {
        [
            FULL,
            Settings::new(0.01, 2.0, 5.0, -10.0, 10.0),
            Settings::new(0.001, 0.0, 40.0, 0.0, 24.0).with_slew_per_s(480.0),
            Settings::new(0.5, 0.001, 0.25, 0.0, 0.9).with_filter_time_s(2.0),
            Settings::new(0.01, 12.5, 0.0, 2.0, 5.0).with_deadband(0.0),
            Settings::new(0.02, 1.0, 1.0, -3.0, -1.0).with_setpoint_weight(0.0),
        ]
    }

    #[test]
    fn parts_round_trip_on_both_backends() {
        for s in cases() {
            let c = Config::<I16F16>::try_new(&s).unwrap();
            assert_eq!(Config::<I16F16>::from_parts(&c.to_parts()), Ok(c), "{s:?}");
            let s = slim(s);
            let c = Config::<Slim16>::try_new(&s).unwrap();
            assert_eq!(Config::<Slim16>::from_parts(&c.to_parts()), Ok(c), "{s:?}");
        }
    }

    crate::layout!(FullLayout = FULL);
    crate::layout!(SlimLayout = slim(FULL));

    #[test]
    fn parts_round_trip_under_a_layout() {
        let c = Config::<I16F16, FullLayout>::new(&FULL).unwrap();
        assert_eq!(
            Config::<I16F16, FullLayout>::from_parts(&c.to_parts()),
            Ok(c)
        );
        let c = Config::<Slim16, SlimLayout>::new(&slim(FULL)).unwrap();
        assert_eq!(
            Config::<Slim16, SlimLayout>::from_parts(&c.to_parts()),
            Ok(c)
        );
        // Another shift than the layout's.
        let mut p = c.to_parts();
        p.kp.shift -= 1;
        p.kp.mantissa /= 2;
        assert_eq!(
            Config::<Slim16, SlimLayout>::from_parts(&p),
            Err(ConfigError::Layout(Setting::Kp))
        );
        // Another set of features.
        let mut p = Config::<I16F16, FullLayout>::new(&FULL).unwrap().to_parts();
        p.features &= !Features::SLEW.bits();
        assert_eq!(
            Config::<I16F16, FullLayout>::from_parts(&p),
            Err(ConfigError::Layout(Setting::Features))
        );
    }

    /// The parts of the `minimal` loop, worked by hand: Kp = 2 = 2³⁰ · 2⁻²⁹
    /// (the largest shift with a mantissa below 2³¹); Ki·Ts = 5 · 0.01 =
    /// 0.05, 0.05 · 2³⁵ = 1 717 986 918.4 → 1 717 986 918 at shift 35
    /// (0.05 · 2³⁶ would pass 2³¹); ±10 · 2¹⁶ = ±655 360; the default
    /// measurement range ±30 000 · 2¹⁶ = ±1 966 080 000; at rest 0.
    #[test]
    fn parts_of_a_loop_worked_by_hand() {
        let c = Config::<I16F16>::try_new(&Settings::new(0.01, 2.0, 5.0, -10.0, 10.0)).unwrap();
        let zero = CoefParts::default();
        assert_eq!(
            c.to_parts(),
            ConfigParts {
                features: 0,
                kp: CoefParts {
                    mantissa: 1 << 30,
                    shift: 29
                },
                setpoint_weight: zero,
                ki_ts: CoefParts {
                    mantissa: 1_717_986_918,
                    shift: 35
                },
                tracking_ratio: zero,
                filter_alpha: zero,
                slew_step: 0,
                deadband: 0,
                output_min: -655_360,
                output_max: 655_360,
                measurement_min: -1_966_080_000,
                measurement_max: 1_966_080_000,
                rest: 0,
            }
        );
    }

    #[test]
    fn parts_of_features_that_are_off_are_ignored() {
        let c = Config::<I16F16>::try_new(&Settings::new(0.01, 2.0, 5.0, -10.0, 10.0)).unwrap();
        let mut p = c.to_parts();
        p.slew_step = -5;
        p.deadband = -5;
        p.filter_alpha.shift = 200;
        p.setpoint_weight.mantissa = -1;
        p.tracking_ratio.mantissa = 0;
        assert_eq!(Config::<I16F16>::from_parts(&p), Ok(c));
    }

    #[test]
    fn every_check_of_the_parts() {
        let good = Config::<I16F16>::try_new(&FULL).unwrap().to_parts();
        type Edit = fn(&mut ConfigParts);
        let table: [(Edit, ConfigError); 23] = [
            (
                |p| p.features |= 1 << 5,
                ConfigError::OutOfFormat(Setting::Features),
            ),
            (|p| p.kp.shift = 63, ConfigError::OutOfFormat(Setting::Kp)),
            (|p| p.kp.mantissa = -1, ConfigError::Negative(Setting::Kp)),
            (
                |p| p.ki_ts.shift = 15,
                ConfigError::OutOfFormat(Setting::Ki),
            ),
            (
                |p| p.ki_ts.mantissa = -1,
                ConfigError::Negative(Setting::Ki),
            ),
            (
                |p| {
                    p.kp.mantissa = 0;
                    p.ki_ts.mantissa = 0;
                },
                ConfigError::NoAction,
            ),
            (
                |p| p.setpoint_weight.shift = 63,
                ConfigError::OutOfFormat(Setting::SetpointWeight),
            ),
            (
                |p| p.setpoint_weight.mantissa = -1,
                ConfigError::SetpointWeightOutOfRange,
            ),
            (
                |p| {
                    p.setpoint_weight = CoefParts {
                        mantissa: 5,
                        shift: 2,
                    }
                },
                ConfigError::SetpointWeightOutOfRange,
            ),
            (
                |p| p.tracking_ratio.shift = 15,
                ConfigError::OutOfFormat(Setting::TrackingTime),
            ),
            (
                |p| p.tracking_ratio.mantissa = 0,
                ConfigError::TrackingRatioOutOfRange,
            ),
            (
                |p| {
                    p.tracking_ratio = CoefParts {
                        mantissa: (1 << 16) + 1,
                        shift: 16,
                    }
                },
                ConfigError::TrackingRatioOutOfRange,
            ),
            (
                |p| p.filter_alpha.shift = 63,
                ConfigError::OutOfFormat(Setting::FilterTime),
            ),
            (
                |p| p.filter_alpha.mantissa = 0,
                ConfigError::NotPositive(Setting::FilterTime),
            ),
            (
                |p| {
                    p.filter_alpha = CoefParts {
                        mantissa: (1 << 16) + 1,
                        shift: 16,
                    }
                },
                ConfigError::OutOfFormat(Setting::FilterTime),
            ),
            (|p| p.slew_step = 0, ConfigError::NotPositive(Setting::Slew)),
            (
                |p| p.deadband = -1,
                ConfigError::Negative(Setting::Deadband),
            ),
            (
                |p| p.output_max = p.output_min,
                ConfigError::Inverted(Setting::OutputMax),
            ),
            (
                |p| p.measurement_min = p.measurement_max + 1,
                ConfigError::Inverted(Setting::MeasurementMax),
            ),
            (
                |p| p.rest = p.output_max + 1,
                ConfigError::OutOfFormat(Setting::CommandScale),
            ),
            (
                |p| p.rest = p.output_min - 1,
                ConfigError::OutOfFormat(Setting::CommandScale),
            ),
            (
                |p| p.ki_ts.shift = 63,
                ConfigError::OutOfFormat(Setting::Ki),
            ),
            (
                |p| p.tracking_ratio.shift = 63,
                ConfigError::OutOfFormat(Setting::TrackingTime),
            ),
        ];
        for (i, (edit, want)) in table.into_iter().enumerate() {
            let mut p = good;
            edit(&mut p);
            assert_eq!(Config::<I16F16>::from_parts(&p), Err(want), "row {i}");
        }
    }

    #[test]
    fn slim_parts_must_fit_16_bits() {
        let good = Config::<Slim16>::try_new(&slim(FULL)).unwrap().to_parts();
        type Edit = fn(&mut ConfigParts);
        let table: [(Edit, ConfigError); 6] = [
            (
                |p| p.kp.mantissa = 40_000,
                ConfigError::OutOfFormat(Setting::Kp),
            ),
            (|p| p.kp.shift = 31, ConfigError::OutOfFormat(Setting::Kp)),
            (
                |p| p.ki_ts.shift = 14,
                ConfigError::OutOfFormat(Setting::Ki),
            ),
            (
                |p| p.tracking_ratio.shift = 13,
                ConfigError::OutOfFormat(Setting::TrackingTime),
            ),
            (
                |p| p.measurement_max = 32_768,
                ConfigError::OutOfFormat(Setting::MeasurementMax),
            ),
            (
                |p| p.slew_step = -40_000,
                ConfigError::OutOfFormat(Setting::Slew),
            ),
        ];
        for (i, (edit, want)) in table.into_iter().enumerate() {
            let mut p = good;
            edit(&mut p);
            assert_eq!(Config::<Slim16>::from_parts(&p), Err(want), "row {i}");
        }
        // The smallest shifts this format allows are accepted.
        let mut p = good;
        p.tracking_ratio = CoefParts {
            mantissa: 1 << 14,
            shift: 14,
        };
        assert!(Config::<Slim16>::from_parts(&p).is_ok());
    }
}
