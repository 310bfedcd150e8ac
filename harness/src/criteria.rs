//! Pass/fail criteria: a limit on one metric, evaluated into a verdict.

use std::fmt;

use crate::metrics::Metrics;
use crate::undefined::Undefined;

/// One metric of [`Metrics`], by its serialised key.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum MetricKey {
    /// `rise_time_s`
    RiseTime,
    /// `settling_time_s`
    SettlingTime,
    /// `overshoot_pct`
    Overshoot,
    /// `steady_state_error`
    SteadyStateError,
    /// `iae`
    Iae,
    /// `ise`
    Ise,
    /// `tracking_error_peak`
    TrackingErrorPeak,
    /// `tracking_error_rms`
    TrackingErrorRms,
    /// `ramp_tracking_error_peak`
    RampTrackingErrorPeak,
    /// `peak_command`
    PeakCommand,
    /// `command_total_variation`
    CommandTotalVariation,
    /// `peak_slew_per_s`
    PeakSlew,
    /// `peak_accel`
    PeakAccel,
    /// `peak_jerk`
    PeakJerk,
    /// `time_saturated_s`
    TimeSaturated,
    /// `disturbance_peak_deviation`
    DisturbancePeakDeviation,
    /// `disturbance_recovery_s`
    DisturbanceRecovery,
    /// `limit_violations` ([`crate::fault::FaultMetrics`])
    LimitViolations,
    /// `fault_flag_errors`
    FaultFlagErrors,
    /// `fault_recovery_s`
    FaultRecovery,
    /// `fault_return_jump`
    FaultReturnJump,
    /// `fault_overshoot`
    FaultOvershoot,
}

impl MetricKey {
    /// Every key, in report order.
    pub const ALL: [Self; 22] = [
        Self::RiseTime,
        Self::SettlingTime,
        Self::Overshoot,
        Self::SteadyStateError,
        Self::Iae,
        Self::Ise,
        Self::TrackingErrorPeak,
        Self::TrackingErrorRms,
        Self::RampTrackingErrorPeak,
        Self::PeakCommand,
        Self::CommandTotalVariation,
        Self::PeakSlew,
        Self::PeakAccel,
        Self::PeakJerk,
        Self::TimeSaturated,
        Self::DisturbancePeakDeviation,
        Self::DisturbanceRecovery,
        Self::LimitViolations,
        Self::FaultFlagErrors,
        Self::FaultRecovery,
        Self::FaultReturnJump,
        Self::FaultOvershoot,
    ];

    /// The key as written in scenario files and JSON.
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::RiseTime => "rise_time_s",
            Self::SettlingTime => "settling_time_s",
            Self::Overshoot => "overshoot_pct",
            Self::SteadyStateError => "steady_state_error",
            Self::Iae => "iae",
            Self::Ise => "ise",
            Self::TrackingErrorPeak => "tracking_error_peak",
            Self::TrackingErrorRms => "tracking_error_rms",
            Self::RampTrackingErrorPeak => "ramp_tracking_error_peak",
            Self::PeakCommand => "peak_command",
            Self::CommandTotalVariation => "command_total_variation",
            Self::PeakSlew => "peak_slew_per_s",
            Self::PeakAccel => "peak_accel",
            Self::PeakJerk => "peak_jerk",
            Self::TimeSaturated => "time_saturated_s",
            Self::DisturbancePeakDeviation => "disturbance_peak_deviation",
            Self::DisturbanceRecovery => "disturbance_recovery_s",
            Self::LimitViolations => "limit_violations",
            Self::FaultFlagErrors => "fault_flag_errors",
            Self::FaultRecovery => "fault_recovery_s",
            Self::FaultReturnJump => "fault_return_jump",
            Self::FaultOvershoot => "fault_overshoot",
        }
    }

    /// The key named `name`, if any.
    #[must_use]
    pub fn from_name(name: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|k| k.name() == name)
    }

    /// The metric's value; `None` when it is undefined for the trace.
    #[must_use]
    pub fn value(self, m: &Metrics) -> Option<f64> {
        match self {
            Self::RiseTime => m.rise_time_s,
            Self::SettlingTime => m.settling_time_s,
            Self::Overshoot => m.overshoot_pct,
            Self::SteadyStateError => m.steady_state_error,
            Self::Iae => Some(m.iae),
            Self::Ise => Some(m.ise),
            Self::TrackingErrorPeak => m.tracking_error_peak,
            Self::TrackingErrorRms => m.tracking_error_rms,
            Self::RampTrackingErrorPeak => m.ramp_tracking_error_peak,
            Self::PeakCommand => Some(m.peak_command),
            Self::CommandTotalVariation => Some(m.command_total_variation),
            Self::PeakSlew => Some(m.peak_slew_per_s),
            Self::PeakAccel => Some(m.peak_accel),
            Self::PeakJerk => Some(m.peak_jerk),
            Self::TimeSaturated => m.time_saturated_s,
            Self::DisturbancePeakDeviation => m.disturbance_peak_deviation,
            Self::DisturbanceRecovery => m.disturbance_recovery_s,
            Self::LimitViolations => m.faults.limit_violations,
            Self::FaultFlagErrors => m.faults.fault_flag_errors,
            Self::FaultRecovery => m.faults.fault_recovery_s,
            Self::FaultReturnJump => m.faults.fault_return_jump,
            Self::FaultOvershoot => m.faults.fault_overshoot,
        }
    }
}

impl MetricKey {
    /// When the metric's worst value occurred, s from the start of the
    /// run; `None` for a metric that is not a worst value at one instant
    /// (a time, an integral, a mean) or that has no value.
    #[must_use]
    pub fn at_s(self, m: &Metrics) -> Option<f64> {
        let t = &m.at_s;
        let f = &m.faults.at_s;
        match self {
            Self::Overshoot => t.overshoot_pct,
            Self::PeakCommand => t.peak_command,
            Self::PeakSlew => t.peak_slew_per_s,
            Self::PeakAccel => t.peak_accel,
            Self::PeakJerk => t.peak_jerk,
            Self::TrackingErrorPeak => t.tracking_error_peak,
            Self::RampTrackingErrorPeak => t.ramp_tracking_error_peak,
            Self::DisturbancePeakDeviation => t.disturbance_peak_deviation,
            Self::DisturbanceRecovery => t.disturbance_recovery_s,
            Self::LimitViolations => f.limit_violations,
            Self::FaultFlagErrors => f.fault_flag_errors,
            Self::FaultRecovery => f.fault_recovery_s,
            Self::FaultReturnJump => f.fault_return_jump,
            Self::FaultOvershoot => f.fault_overshoot,
            _ => None,
        }
        .filter(|_| self.value(m).is_some())
    }

    /// `true` for the fault checks ([`crate::fault::FaultMetrics`]), which
    /// judge the whole run and cannot be given to one segment or window.
    #[must_use]
    pub const fn is_fault_check(self) -> bool {
        matches!(
            self,
            Self::LimitViolations
                | Self::FaultFlagErrors
                | Self::FaultRecovery
                | Self::FaultReturnJump
                | Self::FaultOvershoot
        )
    }

    /// The metric's unit in a loop whose output is in `output_unit` and
    /// command in `command_unit` (`scenario.output_unit`, `command_unit`).
    ///
    /// ```
    /// use evenkeel_harness::criteria::MetricKey;
    /// assert_eq!(MetricKey::PeakJerk.unit("m/s", "1"), "m/s³");
    /// assert_eq!(MetricKey::Ise.unit("degC", "1"), "degC²·s");
    /// assert_eq!(MetricKey::PeakSlew.unit("m/s", "%"), "%/s");
    /// assert_eq!(MetricKey::LimitViolations.unit("m/s", "1"), "samples");
    /// ```
    #[must_use]
    pub fn unit(self, output_unit: &str, command_unit: &str) -> String {
        let y = output_unit;
        match self {
            Self::RiseTime
            | Self::SettlingTime
            | Self::TimeSaturated
            | Self::DisturbanceRecovery
            | Self::FaultRecovery => "s".to_owned(),
            Self::Overshoot => "%".to_owned(),
            Self::SteadyStateError
            | Self::TrackingErrorPeak
            | Self::TrackingErrorRms
            | Self::RampTrackingErrorPeak
            | Self::DisturbancePeakDeviation
            | Self::FaultOvershoot => y.to_owned(),
            Self::Iae => times_second(y),
            Self::Ise => times_second(&squared(y)),
            Self::PeakCommand | Self::CommandTotalVariation | Self::FaultReturnJump => {
                command_unit.to_owned()
            }
            Self::PeakSlew => per_second(command_unit),
            Self::PeakAccel => per_second(y),
            Self::PeakJerk => per_second(&per_second(y)),
            Self::LimitViolations | Self::FaultFlagErrors => "samples".to_owned(),
        }
    }
}

/// `unit` per second: `m/s` → `m/s²` → `m/s³`, `rad/s` → `rad/s²`, `kPa`
/// → `kPa/s` → `kPa/s²`, `1` → `1/s`.
///
/// ```
/// use evenkeel_harness::criteria::per_second;
/// assert_eq!(per_second("m/s"), "m/s²");
/// assert_eq!(per_second(&per_second("kPa")), "kPa/s²");
/// ```
#[must_use]
pub fn per_second(unit: &str) -> String {
    for (from, to) in [("/s", "/s²"), ("/s²", "/s³"), ("/s³", "/s⁴")] {
        if let Some(stem) = unit.strip_suffix(from) {
            return format!("{stem}{to}");
        }
    }
    format!("{unit}/s")
}

/// `unit` squared: `degC` → `degC²`, `m/s` → `(m/s)²`, `1` → `1`.
fn squared(unit: &str) -> String {
    if unit == "1" {
        "1".to_owned()
    } else if unit.chars().all(char::is_alphanumeric) {
        format!("{unit}²")
    } else {
        format!("({unit})²")
    }
}

/// `unit` times a second: `m` → `m·s`, `1` → `s`.
fn times_second(unit: &str) -> String {
    if unit == "1" {
        "s".to_owned()
    } else {
        format!("{unit}·s")
    }
}

impl MetricKey {
    /// Why the metric is undefined for `m`, when [`MetricKey::value`] is
    /// `None` or not a finite number.
    #[must_use]
    pub fn undefined(self, m: &Metrics) -> Option<Undefined> {
        let why = match self {
            Self::RiseTime => m.undefined.rise_time_s,
            Self::SettlingTime => m.undefined.settling_time_s,
            Self::Overshoot => m.undefined.overshoot_pct,
            Self::SteadyStateError => m.undefined.steady_state_error,
            Self::TimeSaturated => m.undefined.time_saturated_s,
            Self::TrackingErrorPeak => m.undefined.tracking_error_peak,
            Self::TrackingErrorRms => m.undefined.tracking_error_rms,
            Self::RampTrackingErrorPeak => m.undefined.ramp_tracking_error_peak,
            Self::DisturbancePeakDeviation => m.undefined.disturbance_peak_deviation,
            Self::DisturbanceRecovery => m.undefined.disturbance_recovery_s,
            Self::FaultRecovery => m.faults.undefined.fault_recovery_s,
            Self::FaultReturnJump => m.faults.undefined.fault_return_jump,
            Self::FaultOvershoot => m.faults.undefined.fault_overshoot,
            _ => None,
        };
        match self.value(m) {
            Some(v) if v.is_nan() => Some(Undefined::NotFinite),
            Some(_) => None,
            None => Some(why.unwrap_or(Undefined::Empty)),
        }
    }
}

impl fmt::Display for MetricKey {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// Which side of the limit passes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Bound {
    /// Passes when `measured ≤ limit`.
    Max,
    /// Passes when `measured ≥ limit`.
    Min,
}

impl Bound {
    /// `"max"` or `"min"`.
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::Max => "max",
            Self::Min => "min",
        }
    }

    /// `"<="` or `">="`.
    #[must_use]
    pub const fn symbol(self) -> &'static str {
        match self {
            Self::Max => "<=",
            Self::Min => ">=",
        }
    }
}

/// What part of the run a criterion judges.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum Scope {
    /// The whole run (`[criteria]`); the step metrics refer to the first
    /// reference segment that changes the value.
    #[default]
    Run,
    /// Reference segment `index` (0-based, as `reference.segments[index]`),
    /// from its start to the end of its hold (`[[criteria.segment]]`); the
    /// step metrics refer to its change.
    Segment(usize),
    /// The time window `[start_s, end_s)` (`[[criteria.window]]`, the
    /// `index`-th in the file); the step metrics refer to the first
    /// reference change that starts inside it.
    Window {
        /// Position among the scenario's windows.
        index: usize,
        /// Start, s.
        start_s: f64,
        /// End, s (exclusive).
        end_s: f64,
        /// Error band of `disturbance_recovery_s` in this window,
        /// measurement units; `None`: the run's.
        band: Option<f64>,
    },
}

impl Scope {
    /// `""`, `segment[I].` or `window[I].`: the prefix of a criterion's label.
    #[must_use]
    pub fn prefix(&self) -> String {
        match self {
            Self::Run => String::new(),
            Self::Segment(i) => format!("segment[{i}]."),
            Self::Window { index, .. } => format!("window[{index}]."),
        }
    }
}

/// A limit on one metric.
#[derive(Debug, Clone, PartialEq)]
pub struct Criterion {
    /// The metric.
    pub metric: MetricKey,
    /// What part of the run it judges.
    pub scope: Scope,
    /// Upper or lower limit.
    pub bound: Bound,
    /// The limit, in the metric's unit.
    pub limit: f64,
    /// Where the limit comes from (a standard, common practice, …).
    pub source: Option<String>,
}

impl Criterion {
    /// `metric ≤ limit`.
    #[must_use]
    pub fn max(metric: MetricKey, limit: f64) -> Self {
        Self {
            metric,
            scope: Scope::Run,
            bound: Bound::Max,
            limit,
            source: None,
        }
    }

    /// `metric ≥ limit`.
    #[must_use]
    pub fn min(metric: MetricKey, limit: f64) -> Self {
        Self {
            bound: Bound::Min,
            ..Self::max(metric, limit)
        }
    }

    /// Evaluates against `metrics`. An undefined metric (e.g. a settling
    /// time when the output never settles) fails.
    ///
    /// ```
    /// use evenkeel_harness::criteria::{Criterion, MetricKey};
    /// use evenkeel_harness::metrics::{compute, MetricOptions, Trace};
    /// let (r, y, zero) = ([1.0; 3], [1.0, 1.2, 1.0], [0.0; 3]);
    /// let trace = Trace { dt_s: 0.1, reference: &r, output: &y, command: &zero, accel: &zero };
    /// let m = compute(&trace, &MetricOptions::default())?;
    /// let v = Criterion::max(MetricKey::Iae, 0.05).evaluate(&m);
    /// assert!(v.pass); // IAE = 0.1 s · 0.2 = 0.02
    /// # Ok::<(), evenkeel_harness::metrics::MetricsError>(())
    /// ```
    #[must_use]
    pub fn evaluate(&self, metrics: &Metrics) -> Verdict {
        let undefined = self.metric.undefined(metrics);
        let measured = self.metric.value(metrics).filter(|_| undefined.is_none());
        Verdict {
            criterion: self.clone(),
            at_s: self.metric.at_s(metrics).filter(|_| measured.is_some()),
            measured,
            pass: self.passes(measured, undefined),
            undefined,
        }
    }

    /// Whether `measured` meets the limit; an undefined value (`None`)
    /// fails unless its reason says the metric does not apply
    /// ([`Undefined::passes`]). This is the one rule every verdict uses,
    /// `merge` included.
    ///
    /// ```
    /// use evenkeel_harness::criteria::{Criterion, MetricKey};
    /// use evenkeel_harness::undefined::Undefined;
    /// let c = Criterion::max(MetricKey::FaultReturnJump, 0.1);
    /// assert!(c.passes(Some(0.05), None));
    /// assert!(!c.passes(None, Some(Undefined::NotRecovered)));
    /// assert!(c.passes(None, Some(Undefined::OnlyPayload)));
    /// ```
    #[must_use]
    pub fn passes(&self, measured: Option<f64>, undefined: Option<Undefined>) -> bool {
        match measured {
            Some(m) if !m.is_nan() => match self.bound {
                Bound::Max => m <= self.limit,
                Bound::Min => m >= self.limit,
            },
            _ => undefined.is_some_and(Undefined::passes),
        }
    }
}

impl Criterion {
    /// The criterion's name in reports: the metric key, prefixed by its
    /// scope (`segment[2].settling_time_s`, `window[0].tracking_error_peak`).
    ///
    /// ```
    /// use evenkeel_harness::criteria::{Criterion, MetricKey, Scope};
    /// let mut c = Criterion::max(MetricKey::SettlingTime, 3.0);
    /// assert_eq!(c.label(), "settling_time_s");
    /// c.scope = Scope::Segment(2);
    /// assert_eq!(c.label(), "segment[2].settling_time_s");
    /// ```
    #[must_use]
    pub fn label(&self) -> String {
        format!("{}{}", self.scope.prefix(), self.metric.name())
    }

    /// The normalised margin of `measured` against this criterion: the
    /// distance to the limit as a fraction of the limit (of 1 when the
    /// limit is 0), positive on the passing side, so that criteria of
    /// different units compare. `≥ 0` exactly when the criterion passes;
    /// a value of exactly 0 against a limit of 0 (a count that must be
    /// zero) gives 1, the most there is; an undefined metric gives
    /// [`UNDEFINED_MARGIN`].
    ///
    /// ```
    /// use evenkeel_harness::criteria::{Criterion, MetricKey, UNDEFINED_MARGIN};
    /// let c = Criterion::max(MetricKey::SettlingTime, 10.0);
    /// assert_eq!(c.margin(Some(8.0)), 0.2);   // 2 s of 10 to spare
    /// assert_eq!(c.margin(Some(12.5)), -0.25);
    /// assert_eq!(c.margin(None), UNDEFINED_MARGIN);
    /// let floor = Criterion::min(MetricKey::Iae, 0.0);
    /// assert_eq!(floor.margin(Some(0.5)), 0.5);
    /// let none = Criterion::max(MetricKey::LimitViolations, 0.0);
    /// assert_eq!(none.margin(Some(0.0)), 1.0);
    /// assert_eq!(none.margin(Some(2.0)), -2.0);
    /// ```
    #[must_use]
    pub fn margin(&self, measured: Option<f64>) -> f64 {
        let Some(x) = measured else {
            return UNDEFINED_MARGIN;
        };
        if x.is_nan() {
            return UNDEFINED_MARGIN;
        }
        if self.limit == 0.0 && x == 0.0 {
            // A count that must be zero and is: nothing better exists.
            return 1.0;
        }
        let scale = if self.limit == 0.0 {
            1.0
        } else {
            self.limit.abs()
        };
        match self.bound {
            Bound::Max => (self.limit - x) / scale,
            Bound::Min => (x - self.limit) / scale,
        }
    }
}

/// Margin of an undefined metric (e.g. a settling time when the output
/// never settles): as bad as a measurement at twice the limit.
pub const UNDEFINED_MARGIN: f64 = -1.0;

/// A criterion with its measured value and result.
#[derive(Debug, Clone, PartialEq)]
pub struct Verdict {
    /// What was required.
    pub criterion: Criterion,
    /// What was measured; `None` if the metric is undefined for the run.
    pub measured: Option<f64>,
    /// When the measured worst value occurred, s ([`MetricKey::at_s`]).
    pub at_s: Option<f64>,
    /// `true` when the requirement is met.
    pub pass: bool,
    /// Why the metric is undefined, when it is.
    pub undefined: Option<Undefined>,
}

/// Evaluates every criterion.
#[must_use]
pub fn evaluate(criteria: &[Criterion], metrics: &Metrics) -> Vec<Verdict> {
    criteria.iter().map(|c| c.evaluate(metrics)).collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::metrics::{MetricOptions, Trace, compute};

    fn metrics() -> Metrics {
        let r = [0.0, 1.0, 1.0, 1.0];
        let y = [0.0, 0.5, 1.1, 1.0];
        let u = [0.0, 2.0, 0.5, 1.0];
        let a = [0.0; 4];
        let trace = Trace {
            dt_s: 0.1,
            reference: &r,
            output: &y,
            command: &u,
            accel: &a,
        };
        compute(&trace, &MetricOptions::default()).unwrap()
    }

    #[test]
    fn bounds_and_undefined_metrics() {
        let m = metrics();
        assert!(
            Criterion::max(MetricKey::PeakCommand, 2.0)
                .evaluate(&m)
                .pass
        );
        assert!(
            !Criterion::max(MetricKey::PeakCommand, 1.9)
                .evaluate(&m)
                .pass
        );
        assert!(
            Criterion::min(MetricKey::PeakCommand, 2.0)
                .evaluate(&m)
                .pass
        );
        // No step given: overshoot is undefined and fails.
        let v = Criterion::max(MetricKey::Overshoot, 100.0).evaluate(&m);
        assert_eq!((v.measured, v.pass), (None, false));
    }

    #[test]
    fn names_round_trip() {
        for k in MetricKey::ALL {
            assert_eq!(MetricKey::from_name(k.name()), Some(k));
        }
        assert_eq!(MetricKey::from_name("nope"), None);
    }
}
