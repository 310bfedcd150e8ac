//! The scenario file as written: TOML tables with spans, before validation.
//!
//! Every table denies unknown keys. Numbers are `Spanned` so that
//! validation can point at the offending value. Plant parameters live in
//! one flat `[plant]` table (with a `model` key) so that a later version can
//! let any of them become a range without changing the layout.

use serde::Deserialize;
use toml::Spanned;

pub(crate) type Num = Spanned<f64>;
pub(crate) type Int = Spanned<i64>;
pub(crate) type Text = Spanned<String>;

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawScenario {
    pub scenario: RawMeta,
    pub controller: RawController,
    /// Raw units of measurement and command (ADC and PWM counts).
    pub scaling: Option<RawScaling>,
    pub plant: RawPlant,
    pub actuator: Option<RawActuator>,
    pub sensor: Option<RawSensor>,
    pub reference: RawProfile,
    pub disturbance: Option<RawDisturbance>,
    #[serde(rename = "override", default)]
    pub overrides: Vec<RawOverride>,
    pub load_shift: Option<RawLoadShift>,
    pub metrics: Option<RawMetricOptions>,
    pub criteria: RawCriteria,
    /// Parameter ranges for `evenkeel sweep` / `design` (`uncertainty.rs`).
    pub uncertainty: Option<super::uncertainty::RawUncertainty>,
    /// Sweep method, size and seed (`uncertainty.rs`).
    pub sweep: Option<super::uncertainty::RawSweep>,
    /// Injected faults (`faults.rs`).
    #[serde(rename = "fault", default)]
    pub faults: Vec<super::faults::RawFault>,
    /// Loop-monitor settings (`faults.rs`).
    pub monitor: Option<super::faults::RawMonitor>,
    /// Tolerances of `evenkeel compare` (fixed against f64).
    pub compare: Option<RawCompare>,
    /// What `evenkeel design` may change (`design_table.rs`).
    pub design: Option<super::design_table::RawDesign>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawMeta {
    pub name: Text,
    pub description: Option<Text>,
    pub duration_s: Num,
    pub seed: Option<Int>,
    pub output_unit: Option<Text>,
    pub command_unit: Option<Text>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawController {
    pub period_s: Num,
    pub kp: Num,
    pub ki_per_s: Num,
    pub output_min: Num,
    pub output_max: Num,
    pub slew_per_s: Option<Num>,
    pub filter_time_s: Option<Num>,
    pub deadband: Option<Num>,
    pub setpoint_weight: Option<Num>,
    pub anti_windup: Option<Text>,
    pub tracking_time_s: Option<Num>,
    pub measurement_min: Option<Num>,
    pub measurement_max: Option<Num>,
    pub initial_command: Option<Num>,
}

/// `[scaling]`: `raw = physical · per_unit + offset` on each side.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawScaling {
    pub measurement_per_unit: Option<Num>,
    pub measurement_offset: Option<Num>,
    pub adc_bits: Option<Int>,
    pub command_per_unit: Option<Num>,
    pub command_offset: Option<Num>,
    pub command_counts: Option<Spanned<bool>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawPlant {
    pub model: Text,
    pub initial_output: Option<Num>,
    // integrator, first_order_lag
    pub gain: Option<Num>,
    pub tau_s: Option<Num>,
    pub dead_time_s: Option<Num>,
    // vehicle
    pub mass_kg: Option<Num>,
    pub actuator_gain_n: Option<Num>,
    pub crr: Option<Num>,
    pub air_density_kg_m3: Option<Num>,
    pub cda_m2: Option<Num>,
    pub creep_speed_m_s: Option<Num>,
    // rotor
    pub inertia_kg_m2: Option<Num>,
    pub torque_gain_n_m: Option<Num>,
    pub viscous_n_m_s: Option<Num>,
    pub drag_n_m_s2: Option<Num>,
    // vehicle, rotor
    pub substeps: Option<Int>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawActuator {
    pub tau_s: Option<Num>,
    pub min: Num,
    pub max: Num,
    pub substeps: Option<Int>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawSensor {
    pub noise_std: Option<Num>,
    pub quantum: Option<Num>,
    pub delay_samples: Option<Int>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawProfile {
    pub initial: Option<Num>,
    #[serde(default)]
    pub segments: Vec<RawSegment>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawSegment {
    pub to: Option<Num>,
    pub ramp_s: Option<Num>,
    pub hold_s: Option<Num>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawDisturbance {
    pub grade_pct: Option<RawProfile>,
    pub force_n: Option<RawProfile>,
    pub load: Option<RawProfile>,
    pub gain_factor: Option<RawProfile>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawOverride {
    pub start_s: Num,
    pub duration_s: Num,
    pub command: Num,
    pub ramp_s: Option<Num>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawLoadShift {
    pub accel_threshold_m_s2: Num,
    pub jerk_threshold_m_s3: Num,
    pub force_n: Num,
    pub duration_s: Num,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawMetricOptions {
    pub settling_band: Option<Num>,
    pub steady_window_s: Option<Num>,
    pub disturbance_band: Option<Num>,
}

/// One limit; `max`, `min` or both.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawLimit {
    pub max: Option<Num>,
    pub min: Option<Num>,
    pub source: Option<Text>,
}

/// A table of one optional limit per metric key (the keys of `Metrics`),
/// with `extra` fields of its own; `entries` lists the limits in report
/// order.
macro_rules! criteria_table {
    ($(#[$doc:meta])* $name:ident { $($(#[$m:meta])* $extra:ident : $ty:ty),* $(,)? }) => {
        $(#[$doc])*
        #[derive(Debug, Deserialize)]
        #[serde(deny_unknown_fields)]
        pub(crate) struct $name {
            $($(#[$m])* pub $extra: $ty,)*
            pub rise_time_s: Option<Spanned<RawLimit>>,
            pub settling_time_s: Option<Spanned<RawLimit>>,
            pub overshoot_pct: Option<Spanned<RawLimit>>,
            pub steady_state_error: Option<Spanned<RawLimit>>,
            pub iae: Option<Spanned<RawLimit>>,
            pub ise: Option<Spanned<RawLimit>>,
            pub tracking_error_peak: Option<Spanned<RawLimit>>,
            pub tracking_error_rms: Option<Spanned<RawLimit>>,
            pub ramp_tracking_error_peak: Option<Spanned<RawLimit>>,
            pub peak_command: Option<Spanned<RawLimit>>,
            pub command_total_variation: Option<Spanned<RawLimit>>,
            pub peak_slew_per_s: Option<Spanned<RawLimit>>,
            pub peak_accel: Option<Spanned<RawLimit>>,
            pub peak_jerk: Option<Spanned<RawLimit>>,
            pub time_saturated_s: Option<Spanned<RawLimit>>,
            pub disturbance_peak_deviation: Option<Spanned<RawLimit>>,
            pub disturbance_recovery_s: Option<Spanned<RawLimit>>,
            pub limit_violations: Option<Spanned<RawLimit>>,
            pub fault_flag_errors: Option<Spanned<RawLimit>>,
            pub fault_recovery_s: Option<Spanned<RawLimit>>,
            pub fault_return_jump: Option<Spanned<RawLimit>>,
            pub fault_overshoot: Option<Spanned<RawLimit>>,
        }

        impl $name {
            /// `(key, limit)` in report order.
            pub fn entries(&self) -> [(&'static str, Option<&Spanned<RawLimit>>); 22] {
                [
                    ("rise_time_s", self.rise_time_s.as_ref()),
                    ("settling_time_s", self.settling_time_s.as_ref()),
                    ("overshoot_pct", self.overshoot_pct.as_ref()),
                    ("steady_state_error", self.steady_state_error.as_ref()),
                    ("iae", self.iae.as_ref()),
                    ("ise", self.ise.as_ref()),
                    ("tracking_error_peak", self.tracking_error_peak.as_ref()),
                    ("tracking_error_rms", self.tracking_error_rms.as_ref()),
                    ("ramp_tracking_error_peak", self.ramp_tracking_error_peak.as_ref()),
                    ("peak_command", self.peak_command.as_ref()),
                    ("command_total_variation", self.command_total_variation.as_ref()),
                    ("peak_slew_per_s", self.peak_slew_per_s.as_ref()),
                    ("peak_accel", self.peak_accel.as_ref()),
                    ("peak_jerk", self.peak_jerk.as_ref()),
                    ("time_saturated_s", self.time_saturated_s.as_ref()),
                    ("disturbance_peak_deviation", self.disturbance_peak_deviation.as_ref()),
                    ("disturbance_recovery_s", self.disturbance_recovery_s.as_ref()),
                    ("limit_violations", self.limit_violations.as_ref()),
                    ("fault_flag_errors", self.fault_flag_errors.as_ref()),
                    ("fault_recovery_s", self.fault_recovery_s.as_ref()),
                    ("fault_return_jump", self.fault_return_jump.as_ref()),
                    ("fault_overshoot", self.fault_overshoot.as_ref()),
                ]
            }
        }
    };
}

criteria_table! {
    /// `[criteria]`: limits over the whole run, then the segments and
    /// windows judged on their own.
    RawCriteria {
        /// `[[criteria.segment]]`
        #[serde(default)]
        segment: Vec<RawSegmentCriteria>,
        /// `[[criteria.window]]`
        #[serde(default)]
        window: Vec<RawWindowCriteria>,
    }
}

criteria_table! {
    /// `[[criteria.segment]]`: limits on reference segment `index` alone.
    RawSegmentCriteria {
        /// 0-based, as `reference.segments[index]`.
        index: Int,
    }
}

criteria_table! {
    /// `[[criteria.window]]`: limits on the time window `[start_s, end_s)`.
    RawWindowCriteria {
        /// Start, s.
        start_s: Num,
        /// End, s.
        end_s: Num,
        /// Error band of `disturbance_recovery_s`, measurement units.
        band: Option<Num>,
    }
}

/// `[compare]`: tolerances of the back-to-back comparison.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawCompare {
    pub max_command_diff: Option<Num>,
    pub rms_command_diff: Option<Num>,
    pub max_output_diff: Option<Num>,
    pub rms_output_diff: Option<Num>,
    pub max_limit_cycle_amplitude: Option<Num>,
    pub max_stall_error: Option<Num>,
    pub max_lsb_pct: Option<Num>,
    pub steady_window_s: Option<Num>,
    pub source: Option<Text>,
}
