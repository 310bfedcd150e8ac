//! Raw units: signals in ADC or PWM counts, or on a per-loop scale.
//!
//! Settings are written in physical units. A [`Scaling`] says how the
//! firmware's raw numbers relate to them, one affine map for the
//! measurement side (setpoint, measurement, deadband, measurement range)
//! and one for the command side (limits, slew, feed-forward, applied value,
//! command):
//!
//! `raw = physical · per_unit + offset`
//!
//! Configuration turns the settings into raw units once (in
//! [`crate::Settings::per_sample`], + − × only), so the step is the same
//! step: the firmware passes the ADC reading and writes the returned value
//! to the compare register without converting either.
//!
//! ```
//! use evenkeel::{Scale, Scaling, Settings};
//! // 12-bit ADC, 4095 counts for 10 bar, 410 counts at 0 bar (a 4–20 mA
//! // input); PWM compare register 0..1000 for 0..100 % duty.
//! let scaling = Scaling::NONE
//!     .with_adc(12, Scale::new(409.5, 410.0))
//!     .with_pwm(Scale::new(10.0, 0.0));
//! let s = Settings::new(0.001, 2.0, 5.0, 0.0, 100.0).with_scaling(scaling);
//! let p = s.per_sample()?;
//! assert_eq!((p.output_min, p.output_max), (0.0, 1000.0)); // counts
//! assert_eq!(p.kp, 2.0 * 10.0 / 409.5); // counts out per count in
//! assert_eq!((p.measurement_min, p.measurement_max), (0.0, 4095.0)); // the ADC's range
//! # Ok::<(), evenkeel::ConfigError>(())
//! ```

use crate::error::{ConfigError, Setting};

/// One affine map `raw = physical · per_unit + offset`.
///
/// ```
/// use evenkeel::Scale;
/// let adc = Scale::new(409.5, 410.0);
/// assert_eq!(adc.raw(10.0), 4505.0);
/// assert_eq!(adc.physical(410.0), 0.0);
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Scale {
    /// Raw units (counts, LSB) per physical unit; finite and > 0.
    pub per_unit: f64,
    /// Raw value of physical zero; finite.
    pub offset: f64,
}

impl Scale {
    /// Raw = physical (the default).
    ///
    /// ```
    /// assert_eq!(evenkeel::Scale::UNIT.raw(3.5), 3.5);
    /// ```
    pub const UNIT: Self = Self {
        per_unit: 1.0,
        offset: 0.0,
    };

    /// `raw = physical · per_unit + offset`.
    ///
    /// ```
    /// let pwm = evenkeel::Scale::new(40.0, 0.0); // 4000 counts for 100 %
    /// assert_eq!(pwm.raw(12.5), 500.0);
    /// ```
    #[must_use]
    pub const fn new(per_unit: f64, offset: f64) -> Self {
        Self { per_unit, offset }
    }

    /// `true` for [`Scale::UNIT`].
    ///
    /// ```
    /// assert!(evenkeel::Scale::UNIT.is_unit() && !evenkeel::Scale::new(2.0, 0.0).is_unit());
    /// ```
    #[must_use]
    pub const fn is_unit(&self) -> bool {
        self.per_unit == 1.0 && self.offset == 0.0
    }

    /// The raw value of `physical` (one multiply, one add; not rounded).
    ///
    /// ```
    /// assert_eq!(evenkeel::Scale::new(4.0, -2.0).raw(1.5), 4.0);
    /// ```
    #[must_use]
    pub const fn raw(&self, physical: f64) -> f64 {
        physical * self.per_unit + self.offset
    }

    /// The raw size of a physical difference (no offset).
    ///
    /// ```
    /// assert_eq!(evenkeel::Scale::new(4.0, -2.0).raw_span(1.5), 6.0);
    /// ```
    #[must_use]
    pub const fn raw_span(&self, physical: f64) -> f64 {
        physical * self.per_unit
    }

    /// The physical value of `raw`.
    ///
    /// ```
    /// assert_eq!(evenkeel::Scale::new(4.0, -2.0).physical(4.0), 1.5);
    /// ```
    #[must_use]
    pub const fn physical(&self, raw: f64) -> f64 {
        (raw - self.offset) / self.per_unit
    }

    const fn check(&self, which: Setting) -> Result<(), ConfigError> {
        if !self.per_unit.is_finite() || !self.offset.is_finite() {
            return Err(ConfigError::NotFinite(which));
        }
        if self.per_unit <= 0.0 {
            return Err(ConfigError::NotPositive(which));
        }
        Ok(())
    }
}

/// How the firmware's raw numbers relate to the physical settings.
///
/// [`Scaling::NONE`] (the default) means raw = physical. A backend with
/// 16-bit signals ([`crate::Slim16`]) needs a scale that makes the loop's
/// range cover the 16 bits ([`Scaling::covering`]).
///
/// ```
/// use evenkeel::{Scale, Scaling};
/// let s = Scaling::NONE.with_adc(10, Scale::new(102.3, 0.0));
/// assert_eq!(s.measurement_bits, 10);
/// assert!(!s.command_counts);
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Scaling {
    /// Setpoint, measurement, deadband and measurement range.
    pub measurement: Scale,
    /// ADC resolution: readings are whole counts `0 ..= 2^bits − 1`, and
    /// the measurement range is cut to that; 0: not an ADC (any raw value).
    pub measurement_bits: u8,
    /// Command, its limits and slew step, feed-forward (a change: no
    /// offset) and the applied value.
    pub command: Scale,
    /// `true`: the actuator takes whole counts (a PWM compare value); the
    /// firmware writes [`crate::Backend::to_counts`] of the command.
    pub command_counts: bool,
}

impl Default for Scaling {
    fn default() -> Self {
        Self::NONE
    }
}

impl Scaling {
    /// Raw = physical on both sides.
    ///
    /// ```
    /// assert!(evenkeel::Scaling::NONE.is_none());
    /// ```
    pub const NONE: Self = Self {
        measurement: Scale::UNIT,
        measurement_bits: 0,
        command: Scale::UNIT,
        command_counts: false,
    };

    /// `true` for [`Scaling::NONE`].
    ///
    /// ```
    /// use evenkeel::{Scale, Scaling};
    /// assert!(!Scaling::NONE.with_command(Scale::new(2.0, 0.0)).is_none());
    /// ```
    #[must_use]
    pub const fn is_none(&self) -> bool {
        self.measurement.is_unit()
            && self.command.is_unit()
            && self.measurement_bits == 0
            && !self.command_counts
    }

    /// The measurement read by a `bits`-bit ADC with `scale` (counts per
    /// unit, counts at zero).
    ///
    /// ```
    /// use evenkeel::{Scale, Scaling};
    /// let s = Scaling::NONE.with_adc(12, Scale::new(409.5, 0.0));
    /// assert_eq!((s.measurement_bits, s.measurement.per_unit), (12, 409.5));
    /// ```
    #[must_use]
    pub const fn with_adc(mut self, bits: u8, scale: Scale) -> Self {
        self.measurement = scale;
        self.measurement_bits = bits;
        self
    }

    /// The command written to a counter (PWM compare value) with `scale`.
    ///
    /// ```
    /// use evenkeel::{Scale, Scaling};
    /// assert!(Scaling::NONE.with_pwm(Scale::new(40.0, 0.0)).command_counts);
    /// ```
    #[must_use]
    pub const fn with_pwm(mut self, scale: Scale) -> Self {
        self.command = scale;
        self.command_counts = true;
        self
    }

    /// Measurement side on `scale`, not counts.
    ///
    /// ```
    /// use evenkeel::{Scale, Scaling};
    /// assert_eq!(Scaling::NONE.with_measurement(Scale::new(1024.0, 0.0)).measurement_bits, 0);
    /// ```
    #[must_use]
    pub const fn with_measurement(mut self, scale: Scale) -> Self {
        self.measurement = scale;
        self.measurement_bits = 0;
        self
    }

    /// Command side on `scale`, not counts.
    ///
    /// ```
    /// use evenkeel::{Scale, Scaling};
    /// assert!(!Scaling::NONE.with_command(Scale::new(1024.0, 0.0)).command_counts);
    /// ```
    #[must_use]
    pub const fn with_command(mut self, scale: Scale) -> Self {
        self.command = scale;
        self.command_counts = false;
        self
    }

    /// Power-of-two scales (exact, no offset) that put the measurement
    /// range `[meas_min, meas_max]` and the output range `[out_min,
    /// out_max]` within ±2¹⁴ raw: the largest `2^k` with `max|x| · 2^k ≤
    /// 16 384`, for `k` in −20 ..= 20. A 16-bit signal then keeps one bit
    /// of headroom (an error `r − y` of two in-range values still fits).
    ///
    /// ```
    /// use evenkeel::Scaling;
    /// // 0..6 m/s and −1..1: 2^11 = 2048 LSB per m/s (6 · 2048 = 12 288), 2^14 per unit.
    /// let s = Scaling::covering(0.0, 6.0, -1.0, 1.0);
    /// assert_eq!((s.measurement.per_unit, s.command.per_unit), (2048.0, 16_384.0));
    /// ```
    #[must_use]
    pub const fn covering(meas_min: f64, meas_max: f64, out_min: f64, out_max: f64) -> Self {
        Self {
            measurement: Scale::new(power_of_two_for(meas_min, meas_max), 0.0),
            measurement_bits: 0,
            command: Scale::new(power_of_two_for(out_min, out_max), 0.0),
            command_counts: false,
        }
    }

    pub(crate) const fn check(&self) -> Result<(), ConfigError> {
        if let Err(e) = self.measurement.check(Setting::MeasurementScale) {
            return Err(e);
        }
        if let Err(e) = self.command.check(Setting::CommandScale) {
            return Err(e);
        }
        if self.measurement_bits > 31 {
            return Err(ConfigError::OutOfFormat(Setting::MeasurementScale));
        }
        Ok(())
    }

    /// Highest ADC reading, if the measurement is in counts.
    ///
    /// ```
    /// use evenkeel::{Scale, Scaling};
    /// assert_eq!(Scaling::NONE.with_adc(12, Scale::UNIT).adc_max(), Some(4095.0));
    /// assert_eq!(Scaling::NONE.adc_max(), None);
    /// ```
    #[must_use]
    pub const fn adc_max(&self) -> Option<f64> {
        if self.measurement_bits == 0 {
            None
        } else {
            Some(((1u64 << self.measurement_bits) - 1) as f64)
        }
    }

    /// What an ADC with this scaling reads for the physical value `y`:
    /// the nearest whole count (ties away from zero) within `0 ..=
    /// 2^bits − 1`; without ADC bits, the raw value unrounded. Host-side
    /// (the harness's sensor model quantises with it).
    ///
    /// ```
    /// use evenkeel::{Scale, Scaling};
    /// let s = Scaling::NONE.with_adc(12, Scale::new(409.5, 410.0));
    /// assert_eq!(s.adc_reading(1.0), 820.0); // 819.5 → 820
    /// assert_eq!(s.adc_reading(-5.0), 0.0); // below the range: clipped
    /// assert_eq!(s.adc_reading(20.0), 4095.0);
    /// ```
    #[must_use]
    pub const fn adc_reading(&self, y: f64) -> f64 {
        let raw = self.measurement.raw(y);
        match self.adc_max() {
            None => raw,
            Some(top) => {
                let counts = round_half_away(raw);
                if counts < 0.0 {
                    0.0
                } else if counts > top {
                    top
                } else {
                    counts
                }
            }
        }
    }
}

/// The largest `2^k`, −20 ≤ k ≤ 20, with `max(|lo|, |hi|) · 2^k ≤ 2¹⁴`.
const fn power_of_two_for(lo: f64, hi: f64) -> f64 {
    let a = if lo < 0.0 { -lo } else { lo };
    let b = if hi < 0.0 { -hi } else { hi };
    let m = if a > b { a } else { b };
    let mut k: i32 = 20;
    let mut p = 1_048_576.0;
    while k > -20 && m * p > 16_384.0 {
        k -= 1;
        p /= 2.0;
    }
    p
}

/// Nearest integer, ties away from zero, for |x| < 2⁶² (exact in f64).
pub(crate) const fn round_half_away(x: f64) -> f64 {
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
