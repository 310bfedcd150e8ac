//! Where the firmware's numbers meet the physical loop: the controller
//! works in raw units (`evenkeel::Scaling`: ADC counts, PWM counts or a
//! per-loop 16-bit scale), the plant and the reports in physical units.
//!
//! [`Boundary`] converts exactly as a firmware would: the setpoint is
//! `setpoint · per_unit + offset` rounded into the backend, the measurement
//! is what the ADC reads ([`evenkeel::Scaling::adc_reading`]: nearest whole
//! count, clipped to `0 ..= 2^bits − 1`), and the command reaches the
//! actuator as the compare value the firmware writes
//! ([`evenkeel::Backend::to_counts`]) when the command is in counts. With
//! [`evenkeel::Scaling::NONE`] every conversion is the identity, bit for
//! bit.
//!
//! ```
//! use evenkeel::{Backend, Scale, Scaling, Slim16};
//! use evenkeel_harness::boundary::Boundary;
//! // 12-bit ADC, 409.5 counts per bar and 410 at 0 bar; PWM 10 counts per %.
//! let b = Boundary::new(Scaling::NONE.with_adc(12, Scale::new(409.5, 410.0)).with_pwm(Scale::new(10.0, 0.0)));
//! let y: Slim16 = b.measurement(3.0); // 3 · 409.5 + 410 = 1638.5 → 1639 counts
//! assert_eq!(y.raw(), 1639);
//! assert_eq!(b.measured(y), (1639.0 - 410.0) / 409.5);
//! assert_eq!(b.drive(Slim16::from_raw(412)), 41.2); // % duty the actuator gets
//! ```

use evenkeel::{Backend, Scaling};

/// Conversions between physical values and one backend's raw units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Boundary {
    scaling: Scaling,
    identity: bool,
}

impl Boundary {
    /// The boundary of a controller configured with `scaling`.
    #[must_use]
    pub fn new(scaling: Scaling) -> Self {
        Self {
            scaling,
            identity: scaling.is_none(),
        }
    }

    /// `true` for `Scaling::NONE` (raw = physical).
    #[must_use]
    pub const fn is_identity(&self) -> bool {
        self.identity
    }

    /// The scaling.
    #[must_use]
    pub const fn scaling(&self) -> Scaling {
        self.scaling
    }

    /// The setpoint `r` (measurement units) as the firmware passes it.
    #[must_use]
    pub fn setpoint<B: Backend>(&self, r: f64) -> B {
        if self.identity {
            B::from_f64(r)
        } else {
            B::from_f64(self.scaling.measurement.raw(r))
        }
    }

    /// The reading of a sensor whose (physical) output is `y`: ADC counts
    /// when the measurement is in counts. NaN stays NaN (fixed point: the
    /// firmware's guard, see `sim`).
    #[must_use]
    pub fn measurement<B: Backend>(&self, y: f64) -> B {
        if self.identity {
            B::from_f64(y)
        } else {
            B::from_f64(self.scaling.adc_reading(y))
        }
    }

    /// The physical value of a measurement the controller received.
    #[must_use]
    pub fn measured<B: Backend>(&self, y: B) -> f64 {
        if self.identity {
            y.to_f64()
        } else {
            self.scaling.measurement.physical(y.to_f64())
        }
    }

    /// An actuator value `u` (command units) as the controller receives it
    /// (applied value, tracked value, engage value): the nearest count when
    /// the command is in counts.
    #[must_use]
    pub fn command<B: Backend>(&self, u: f64) -> B {
        if self.identity {
            return B::from_f64(u);
        }
        let raw = self.scaling.command.raw(u);
        if self.scaling.command_counts && raw.is_finite() {
            // Whole counts; |raw| beyond i32 saturates in the backend anyway.
            #[allow(clippy::cast_possible_truncation)]
            let counts = raw.round().clamp(-2_147_483_648.0, 2_147_483_647.0) as i32;
            B::from_counts(counts)
        } else {
            B::from_f64(raw)
        }
    }

    /// The physical value of the controller's command `u` (what the
    /// recording shows).
    #[must_use]
    pub fn commanded<B: Backend>(&self, u: B) -> f64 {
        if self.identity {
            u.to_f64()
        } else {
            self.scaling.command.physical(u.to_f64())
        }
    }

    /// What the actuator is driven with when the firmware writes the
    /// command `u`: the compare value `u.to_counts()` when the command is
    /// in counts, in command units.
    #[must_use]
    pub fn drive<B: Backend>(&self, u: B) -> f64 {
        if self.identity {
            u.to_f64()
        } else if self.scaling.command_counts {
            self.scaling.command.physical(f64::from(u.to_counts()))
        } else {
            self.scaling.command.physical(u.to_f64())
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use evenkeel::fixed::types::I16F16;
    use evenkeel::{Scale, Slim16};

    #[test]
    fn identity_is_bit_for_bit() {
        let b = Boundary::new(Scaling::NONE);
        for x in [-0.0, 0.1, -3.75, 1e-7] {
            assert_eq!(b.setpoint::<f64>(x).to_bits(), x.to_bits());
            assert_eq!(b.measurement::<I16F16>(x), I16F16::from_f64(x));
            assert_eq!(b.drive(b.command::<f64>(x)).to_bits(), x.to_bits());
        }
    }

    #[test]
    fn counts_round_as_the_firmware_does() {
        // Worked by hand: 1.04 % · 10 = 10.4 counts → 10; the actuator gets
        // 10 / 10 = 1.0 %; −0.1 bar · 409.5 + 410 = 369.05 → 369 counts.
        let b = Boundary::new(
            Scaling::NONE
                .with_adc(12, Scale::new(409.5, 410.0))
                .with_pwm(Scale::new(10.0, 0.0)),
        );
        assert_eq!(b.command::<Slim16>(1.04).raw(), 10);
        assert_eq!(b.command::<I16F16>(1.04), I16F16::from_num(10));
        assert_eq!(b.measurement::<Slim16>(-0.1).raw(), 369);
        assert_eq!(b.measurement::<Slim16>(-5.0).raw(), 0); // below the ADC's range
        assert_eq!(b.measurement::<Slim16>(50.0).raw(), 4095);
        // A Q16.16 command of 10.5 counts is written as 11 (ties toward +∞).
        assert_eq!(b.drive(I16F16::from_num(10.5)), 1.1);
        assert_eq!(b.commanded(I16F16::from_num(10.5)), 1.05);
    }
}
