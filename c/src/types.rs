//! The plain-data structs and constants C passes in and gets back.
//!
//! Every struct here is `repr(C)` and valid for any bit pattern (integers
//! and `double`s only; a flag is a `uint8_t` or `uint32_t` where any
//! non-zero value means yes), so reading one from C can never produce an
//! invalid Rust value.

use evenkeel::fixed::types::I16F16;
use evenkeel::{AntiWindup, CoefParts, ConfigParts, Scale, Scaling, Settings, Slim16, Status};

use crate::codes::{EKC_ERR_FORMAT, EkcCode};

/// Q16.16 one: a signal of `EkcLoop` is `value · EKC_ONE` (`int32_t`).
pub const EKC_ONE: i32 = 1 << 16;

/// `EkcCoefficients.format` of the Q16.16 backend (`EkcLoop`).
pub const EKC_FORMAT_Q16_16: u32 = 1;
/// `EkcCoefficients.format` of the 16-bit backend (`EkcSlimLoop`).
pub const EKC_FORMAT_SLIM16: u32 = 2;

/// `EkcCoefficients.features`: measurement low-pass.
pub const EKC_FEATURE_FILTER: u32 = 1 << 0;
/// `EkcCoefficients.features`: error deadband.
pub const EKC_FEATURE_DEADBAND: u32 = 1 << 1;
/// `EkcCoefficients.features`: setpoint weight b ≠ 1.
pub const EKC_FEATURE_SETPOINT_WEIGHT: u32 = 1 << 2;
/// `EkcCoefficients.features`: slew limiter.
pub const EKC_FEATURE_SLEW: u32 = 1 << 3;
/// `EkcCoefficients.features`: back-calculation anti-windup (otherwise
/// conditional integration).
pub const EKC_FEATURE_BACK_CALCULATION: u32 = 1 << 4;

/// `EkcSettings.parts`: `slew_per_s` is given.
pub const EKC_PART_SLEW: u32 = 1 << 0;
/// `EkcSettings.parts`: `filter_time_s` is given.
pub const EKC_PART_FILTER: u32 = 1 << 1;
/// `EkcSettings.parts`: `deadband` is given.
pub const EKC_PART_DEADBAND: u32 = 1 << 2;
/// `EkcSettings.parts`: back-calculation with `tracking_time_s` (otherwise
/// conditional integration).
pub const EKC_PART_BACK_CALCULATION: u32 = 1 << 3;

/// Status bit: the command was clamped to `output_max`.
pub const EKC_STATUS_CLAMP_HIGH: u16 = 1 << 0;
/// Status bit: the command was clamped to `output_min`.
pub const EKC_STATUS_CLAMP_LOW: u16 = 1 << 1;
/// Status bit: the slew limiter shortened the command change.
pub const EKC_STATUS_SLEW: u16 = 1 << 2;
/// Status bit: the applied value differed from the last command.
pub const EKC_STATUS_DOWNSTREAM: u16 = 1 << 3;
/// Status bit: conditional integration held the integrator.
pub const EKC_STATUS_INTEGRATOR_HELD: u16 = 1 << 4;
/// Status bit: the error was inside the deadband.
pub const EKC_STATUS_DEADBAND: u16 = 1 << 5;
/// Status bit: the controller tracked an external actuator value.
pub const EKC_STATUS_TRACKING: u16 = 1 << 6;
/// Status bit: this step engaged the controller bumplessly.
pub const EKC_STATUS_ENGAGED: u16 = 1 << 7;
/// Status bit (fault): a non-finite input (float backends only; never set
/// here).
pub const EKC_STATUS_NON_FINITE: u16 = 1 << 8;
/// Status bit (fault): the measurement was outside its range and clamped.
pub const EKC_STATUS_MEASUREMENT_RANGE: u16 = 1 << 9;
/// Status bit (fault): the setpoint was outside the measurement range and
/// clamped.
pub const EKC_STATUS_SETPOINT_RANGE: u16 = 1 << 10;

/// Physical-unit settings (`ekc_settings_init` fills the defaults).
/// Converting them needs `double` arithmetic: on a core without FPU, load
/// precomputed `EkcCoefficients` instead.
#[repr(C)]
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct EkcSettings {
    /// Sample period Ts, seconds, > 0.
    pub period_s: f64,
    /// Proportional gain, ≥ 0.
    pub kp: f64,
    /// Integral gain, per second, ≥ 0 (not both zero with `kp`).
    pub ki_per_s: f64,
    /// Setpoint weight b of the proportional part, in [0, 1] (1: none).
    pub setpoint_weight: f64,
    /// Lowest command.
    pub output_min: f64,
    /// Highest command, above `output_min`.
    pub output_max: f64,
    /// Lowest plausible measurement (default −30 000).
    pub measurement_min: f64,
    /// Highest plausible measurement (default 30 000).
    pub measurement_max: f64,
    /// Which optional settings below are given: `EKC_PART_…` bits.
    pub parts: u32,
    /// Slew limit, command units per second, > 0 (`EKC_PART_SLEW`).
    pub slew_per_s: f64,
    /// Measurement filter time constant, seconds, > 0 (`EKC_PART_FILTER`).
    pub filter_time_s: f64,
    /// Error deadband half-width, ≥ 0 (`EKC_PART_DEADBAND`).
    pub deadband: f64,
    /// Back-calculation tracking time Tt, seconds, ≥ `period_s`
    /// (`EKC_PART_BACK_CALCULATION`).
    pub tracking_time_s: f64,
    /// Raw measurement units per physical unit (default 1).
    pub measurement_per_unit: f64,
    /// Raw measurement value at physical zero (default 0).
    pub measurement_offset: f64,
    /// ADC resolution in bits of the raw measurement (0: not an ADC).
    pub measurement_bits: u32,
    /// Raw command units per physical unit (default 1).
    pub command_per_unit: f64,
    /// Raw command value at physical zero (default 0).
    pub command_offset: f64,
    /// Non-zero: the actuator takes whole counts (a PWM compare value).
    pub command_counts: u32,
}

impl EkcSettings {
    /// The settings in the controller's terms.
    #[must_use]
    pub fn to_settings(&self) -> Settings {
        let given = |bit: u32, v: f64| (self.parts & bit != 0).then_some(v);
        let bits = u8::try_from(self.measurement_bits).unwrap_or(u8::MAX);
        Settings {
            period_s: self.period_s,
            kp: self.kp,
            ki_per_s: self.ki_per_s,
            setpoint_weight: self.setpoint_weight,
            output_min: self.output_min,
            output_max: self.output_max,
            slew_per_s: given(EKC_PART_SLEW, self.slew_per_s),
            filter_time_s: given(EKC_PART_FILTER, self.filter_time_s),
            deadband: given(EKC_PART_DEADBAND, self.deadband),
            anti_windup: match given(EKC_PART_BACK_CALCULATION, self.tracking_time_s) {
                Some(tracking_time_s) => AntiWindup::BackCalculation { tracking_time_s },
                None => AntiWindup::ConditionalIntegration,
            },
            measurement_min: self.measurement_min,
            measurement_max: self.measurement_max,
            scaling: Scaling {
                measurement: Scale::new(self.measurement_per_unit, self.measurement_offset),
                measurement_bits: bits,
                command: Scale::new(self.command_per_unit, self.command_offset),
                command_counts: self.command_counts != 0,
            },
        }
    }

    /// The C settings of `s`.
    #[must_use]
    pub fn from_settings(s: &Settings) -> Self {
        let mut parts = 0;
        let mut part = |bit: u32, v: Option<f64>| {
            if v.is_some() {
                parts |= bit;
            }
            v.unwrap_or(0.0)
        };
        let slew_per_s = part(EKC_PART_SLEW, s.slew_per_s);
        let filter_time_s = part(EKC_PART_FILTER, s.filter_time_s);
        let deadband = part(EKC_PART_DEADBAND, s.deadband);
        let tracking_time_s = part(
            EKC_PART_BACK_CALCULATION,
            match s.anti_windup {
                AntiWindup::BackCalculation { tracking_time_s } => Some(tracking_time_s),
                AntiWindup::ConditionalIntegration => None,
            },
        );
        Self {
            period_s: s.period_s,
            kp: s.kp,
            ki_per_s: s.ki_per_s,
            setpoint_weight: s.setpoint_weight,
            output_min: s.output_min,
            output_max: s.output_max,
            measurement_min: s.measurement_min,
            measurement_max: s.measurement_max,
            parts,
            slew_per_s,
            filter_time_s,
            deadband,
            tracking_time_s,
            measurement_per_unit: s.scaling.measurement.per_unit,
            measurement_offset: s.scaling.measurement.offset,
            measurement_bits: u32::from(s.scaling.measurement_bits),
            command_per_unit: s.scaling.command.per_unit,
            command_offset: s.scaling.command.offset,
            command_counts: u32::from(s.scaling.command_counts),
        }
    }
}

/// A stored coefficient: value = `mantissa · 2^-shift`.
#[repr(C)]
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct EkcCoef {
    /// The mantissa (16-bit format: within `int16_t`).
    pub mantissa: i32,
    /// The binary point (Q16.16: 0 to 62; 16-bit format: 0 to 30).
    pub shift: u8,
}

/// A configuration as precomputed integers: what `ekc_compute` gives and
/// `ekc_load` takes. `evenkeel design --c-out` and `evenkeel c-config`
/// write one as a `const` initialiser, so that a firmware configures with
/// no floating-point code. Signals are raw: Q16.16 bits for `EkcLoop`,
/// `int16_t` values for `EkcSlimLoop`. The coefficient and signal of a
/// feature that is off are ignored.
#[repr(C)]
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct EkcCoefficients {
    /// `EKC_FORMAT_Q16_16` or `EKC_FORMAT_SLIM16`: which loop type takes it.
    pub format: u32,
    /// `EKC_FEATURE_…` bits: the optional parts that are on.
    pub features: u32,
    /// Kp.
    pub kp: EkcCoef,
    /// Setpoint weight b, in [0, 1] (`EKC_FEATURE_SETPOINT_WEIGHT`).
    pub setpoint_weight: EkcCoef,
    /// Ki·Ts, per sample (shift ≥ 16; 16-bit format ≥ 15).
    pub ki_ts: EkcCoef,
    /// Ts/Tt, in (0, 1] (`EKC_FEATURE_BACK_CALCULATION`; shift ≥ 16, or 14).
    pub tracking_ratio: EkcCoef,
    /// Filter α = Ts/(Tf + Ts), in (0, 1] (`EKC_FEATURE_FILTER`; shift ≥
    /// 16, or 15).
    pub filter_alpha: EkcCoef,
    /// Largest command change per sample, > 0 (`EKC_FEATURE_SLEW`).
    pub slew_step: i32,
    /// Deadband half-width, ≥ 0 (`EKC_FEATURE_DEADBAND`).
    pub deadband: i32,
    /// Lowest command.
    pub output_min: i32,
    /// Highest command, above `output_min`.
    pub output_max: i32,
    /// Lowest plausible measurement.
    pub measurement_min: i32,
    /// Highest plausible measurement, above `measurement_min`.
    pub measurement_max: i32,
    /// Command at rest (after load and reset), within the output limits.
    pub rest: i32,
}

impl EkcCoefficients {
    /// The C form of `parts` in `format`.
    #[must_use]
    pub fn from_parts(format: u32, p: &ConfigParts) -> Self {
        let c = |x: CoefParts| EkcCoef {
            mantissa: x.mantissa,
            shift: x.shift,
        };
        Self {
            format,
            features: u32::from(p.features),
            kp: c(p.kp),
            setpoint_weight: c(p.setpoint_weight),
            ki_ts: c(p.ki_ts),
            tracking_ratio: c(p.tracking_ratio),
            filter_alpha: c(p.filter_alpha),
            slew_step: p.slew_step,
            deadband: p.deadband,
            output_min: p.output_min,
            output_max: p.output_max,
            measurement_min: p.measurement_min,
            measurement_max: p.measurement_max,
            rest: p.rest,
        }
    }

    /// The controller's parts, if these are of `format`.
    ///
    /// # Errors
    /// `EKC_ERR_FORMAT` for another format; unknown feature bits give the
    /// controller's own error when the parts are checked.
    pub fn to_parts(&self, format: u32) -> Result<ConfigParts, EkcCode> {
        if self.format != format {
            return Err(EKC_ERR_FORMAT);
        }
        let c = |x: EkcCoef| CoefParts {
            mantissa: x.mantissa,
            shift: x.shift,
        };
        Ok(ConfigParts {
            // Bits above 7 become bit 7, which is no feature either.
            features: u8::try_from(self.features).unwrap_or(u8::MAX),
            kp: c(self.kp),
            setpoint_weight: c(self.setpoint_weight),
            ki_ts: c(self.ki_ts),
            tracking_ratio: c(self.tracking_ratio),
            filter_alpha: c(self.filter_alpha),
            slew_step: self.slew_step,
            deadband: self.deadband,
            output_min: self.output_min,
            output_max: self.output_max,
            measurement_min: self.measurement_min,
            measurement_max: self.measurement_max,
            rest: self.rest,
        })
    }
}

/// The optional inputs of one `ekc_step_with` or `ekc_track` (Q16.16
/// bits); setpoint and measurement are arguments of their own.
/// `EKC_NO_EXTRA` is the one with none of them.
#[repr(C)]
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct EkcExtra {
    /// Feed-forward added before the limits (0 if unused).
    pub feed_forward: i32,
    /// What the actuator applied of the previous command (read only when
    /// `has_applied` is non-zero).
    pub applied: i32,
    /// Non-zero: `applied` is known.
    pub has_applied: u8,
}

/// What a step returns (`ekc_step`, `ekc_step_with`, `ekc_track` and
/// their 16-bit twins): code, status and command packed in one 64-bit
/// integer, which the Arm calling convention returns in r0:r1 (no
/// out-pointer to check and write). Bits 0 to 31: the command, an
/// `int32_t` (an `EkcSlimLoop`'s `int16_t` command sign-extended); bits
/// 32 to 47: the `EKC_STATUS_…` bits; bits 48 to 63: the `EkcCode`
/// (every code fits 16 bits). A refused step has command and status 0.
/// Read it with `ekc_result_code`, `ekc_result_command` (or
/// `ekc_slim_result_command`) and `ekc_result_status`.
pub type EkcStepResult = u64;

/// Bit position of the status in an `EkcStepResult`.
pub const EKC_RESULT_STATUS_SHIFT: u32 = 32;
/// Bit position of the code in an `EkcStepResult`.
pub const EKC_RESULT_CODE_SHIFT: u32 = 48;

/// The result of a step that ran: `command` (the raw signal as an `i32`)
/// and `status`, code `EKC_OK`.
#[inline(always)]
#[must_use]
pub const fn step_result(command: i32, status: u16) -> EkcStepResult {
    // EKC_OK is 0: nothing to add above the status.
    (command.cast_unsigned() as u64) | ((status as u64) << EKC_RESULT_STATUS_SHIFT)
}

/// The result of a refused step: `code` alone.
#[must_use]
pub const fn refused_result(code: EkcCode) -> EkcStepResult {
    // Every code is in 0..=0xffff (`codes`: call errors 1 to 15,
    // configuration errors below 0x1000), so it fills bits 48 to 63 only.
    ((code as u16) as u64) << EKC_RESULT_CODE_SHIFT
}

/// The code of a step result (what `ekc_result_code` does in C).
#[must_use]
pub const fn result_code(r: EkcStepResult) -> EkcCode {
    (r >> EKC_RESULT_CODE_SHIFT) as EkcCode
}

/// The command of a step result (what `ekc_result_command` does in C).
#[must_use]
pub const fn result_command(r: EkcStepResult) -> i32 {
    (r as u32).cast_signed()
}

/// The status bits of a step result (what `ekc_result_status` does in C).
#[must_use]
pub const fn result_status(r: EkcStepResult) -> u16 {
    (r >> EKC_RESULT_STATUS_SHIFT) as u16
}

/// No optional inputs: what `ekc_step` passes to `ekc_step_with`.
pub const EKC_NO_EXTRA: EkcExtra = EkcExtra {
    feed_forward: 0,
    applied: 0,
    has_applied: 0,
};

/// No optional inputs: what `ekc_slim_step` passes to `ekc_slim_step_with`.
pub const EKC_SLIM_NO_EXTRA: EkcSlimExtra = EkcSlimExtra {
    feed_forward: 0,
    applied: 0,
    has_applied: 0,
};

/// The optional inputs of one `ekc_slim_step_with` or `ekc_slim_track`
/// (raw 16-bit); see `EkcExtra`.
#[repr(C)]
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct EkcSlimExtra {
    /// Feed-forward added before the limits (0 if unused).
    pub feed_forward: i16,
    /// What the actuator applied of the previous command (read only when
    /// `has_applied` is non-zero).
    pub applied: i16,
    /// Non-zero: `applied` is known.
    pub has_applied: u8,
}

/// The controller's input of a Q16.16 step.
#[inline(always)]
pub(crate) fn fixed_input(
    setpoint: i32,
    measurement: i32,
    e: &EkcExtra,
) -> evenkeel::Input<I16F16> {
    let q = I16F16::from_bits;
    let input =
        evenkeel::Input::new(q(setpoint), q(measurement)).with_feed_forward(q(e.feed_forward));
    if e.has_applied != 0 {
        input.with_applied(q(e.applied))
    } else {
        input
    }
}

/// The controller's input of a 16-bit step.
#[inline(always)]
pub(crate) fn slim_input(
    setpoint: i16,
    measurement: i16,
    e: &EkcSlimExtra,
) -> evenkeel::Input<Slim16> {
    let q = Slim16::from_raw;
    let input =
        evenkeel::Input::new(q(setpoint), q(measurement)).with_feed_forward(q(e.feed_forward));
    if e.has_applied != 0 {
        input.with_applied(q(e.applied))
    } else {
        input
    }
}

/// Status bits of the header, with their names in the controller.
pub const STATUS_BITS: [(u16, Status); 11] = [
    (EKC_STATUS_CLAMP_HIGH, Status::CLAMP_HIGH),
    (EKC_STATUS_CLAMP_LOW, Status::CLAMP_LOW),
    (EKC_STATUS_SLEW, Status::SLEW),
    (EKC_STATUS_DOWNSTREAM, Status::DOWNSTREAM),
    (EKC_STATUS_INTEGRATOR_HELD, Status::INTEGRATOR_HELD),
    (EKC_STATUS_DEADBAND, Status::DEADBAND),
    (EKC_STATUS_TRACKING, Status::TRACKING),
    (EKC_STATUS_ENGAGED, Status::ENGAGED),
    (EKC_STATUS_NON_FINITE, Status::NON_FINITE),
    (EKC_STATUS_MEASUREMENT_RANGE, Status::MEASUREMENT_RANGE),
    (EKC_STATUS_SETPOINT_RANGE, Status::SETPOINT_RANGE),
];

#[cfg(test)]
mod tests {
    use super::*;
    use evenkeel::Features;

    #[test]
    fn status_bits_are_the_controllers() {
        let mut all = 0;
        for (bits, status) in STATUS_BITS {
            assert_eq!(bits, status.bits());
            all |= bits;
        }
        assert_eq!(Status::from_bits(all).bits(), all);
        assert_eq!(Status::from_bits(u16::MAX).bits(), all); // no flag missing
    }

    #[test]
    fn feature_bits_are_the_controllers() {
        for (bit, f) in [
            (EKC_FEATURE_FILTER, Features::FILTER),
            (EKC_FEATURE_DEADBAND, Features::DEADBAND),
            (EKC_FEATURE_SETPOINT_WEIGHT, Features::SETPOINT_WEIGHT),
            (EKC_FEATURE_SLEW, Features::SLEW),
            (EKC_FEATURE_BACK_CALCULATION, Features::BACK_CALCULATION),
        ] {
            assert_eq!(bit, u32::from(f.bits()));
        }
    }

    #[test]
    fn settings_round_trip() {
        let s = Settings::new(0.01, 2.0, 5.0, -10.0, 10.0)
            .with_slew_per_s(200.0)
            .with_deadband(0.0)
            .with_anti_windup(AntiWindup::BackCalculation {
                tracking_time_s: 0.1,
            })
            .with_scaling(Scaling::NONE.with_adc(12, Scale::new(409.5, 3.0)));
        assert_eq!(EkcSettings::from_settings(&s).to_settings(), s);
        let plain = Settings::new(0.5, 1.0, 0.0, 0.0, 1.0);
        let c = EkcSettings::from_settings(&plain);
        assert_eq!(c.parts, 0);
        assert_eq!(c.to_settings(), plain);
    }
}
