//! Fault injection: broken sensors, overridden or worn actuators, sudden
//! payload changes, injected into the closed loop of [`crate::sim`], and
//! the checks that the controller kept its promises through them.
//!
//! | kind (`[[fault]] kind`) | what the harness does while active | expected behaviour of the loop |
//! |---|---|---|
//! | `non_finite` | the reading is NaN | float backends: the controller holds its last command and raises `non_finite`, state untouched; fixed point has no NaN, so the harness models the firmware's guard (reading refused before conversion, last command held, no controller flag) |
//! | `stuck` | the reading is `value` | nothing flags it (a plausible constant); the command stays within limits and slew, anti-windup stops windup at the limits; recovery after the fault |
//! | `dropout` | the reading holds the last value before the window | as `stuck` |
//! | `spike` | `value` is added to the reading | inside the measurement range: passes (filtered if a filter is set), the command moves at most one slew step per sample; outside: flagged `measurement_range` and clamped |
//! | `out_of_range` | the reading is `value` (outside the measurement range) | flagged `measurement_range` on every sample, clamped into the range; the command stays bounded |
//! | `actuator_override` | the actuator applies `value` whatever is commanded | the applied value is reported back; `downstream` flagged; anti-windup holds (conditional integration) or tracks (back-calculation) the integrator; bumpless return |
//! | `actuator_clip` | the actuator applies at most [`min`, `max`] | as `actuator_override` while the clip acts |
//! | `payload_change` | the plant's command gain is multiplied by `value` | no flag; the loop re-converges (integral action) within the recovery time |
//!
//! Sample-period jitter is not injected: the controller has no
//! variable-period step (its coefficients `Ki·Ts`, `Ts/Tt`, `R·Ts`, `α` are
//! computed once for a fixed `Ts`), so a firmware must call it from a
//! fixed-rate timer.
//!
//! Checks ([`FaultMetrics`]): commands within limits and slew at every
//! sample (in the backend's own numbers), fault flags raised exactly at the
//! samples where the injected values call for them, recovery to the
//! reference within a time after each fault clears, and no kick on return
//! (the jump between the actuator's last value and the first command after
//! the fault, and the overshoot past the reference afterwards).

use evenkeel::Status;
use evenkeel::monitor::{Diagnostics, MonitorSettings};

use crate::profile::Windows;
use crate::sim::Recording;
use crate::undefined::Undefined;

/// What goes wrong.
#[derive(Debug, Clone, Copy, PartialEq)]
#[non_exhaustive]
pub enum FaultKind {
    /// The reading is NaN.
    NonFinite,
    /// The reading is stuck at this value.
    Stuck(f64),
    /// The reading holds the last value before the fault.
    Dropout,
    /// This offset is added to the reading.
    Spike(f64),
    /// The reading is this value (meant to lie outside the measurement range).
    OutOfRange(f64),
    /// The actuator applies this value whatever is commanded.
    ActuatorOverride(f64),
    /// The actuator applies the command clipped into `[min, max]`.
    ActuatorClip {
        /// Lowest value the actuator delivers.
        min: f64,
        /// Highest value the actuator delivers.
        max: f64,
    },
    /// The plant's command gain is multiplied by this factor.
    PayloadChange(f64),
}

impl FaultKind {
    /// The name used in scenario files.
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::NonFinite => "non_finite",
            Self::Stuck(_) => "stuck",
            Self::Dropout => "dropout",
            Self::Spike(_) => "spike",
            Self::OutOfRange(_) => "out_of_range",
            Self::ActuatorOverride(_) => "actuator_override",
            Self::ActuatorClip { .. } => "actuator_clip",
            Self::PayloadChange(_) => "payload_change",
        }
    }

    /// `true` for faults between controller and plant.
    #[must_use]
    pub const fn is_actuator(self) -> bool {
        matches!(self, Self::ActuatorOverride(_) | Self::ActuatorClip { .. })
    }
}

/// One fault over a time window `[start_s, start_s + duration_s)`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Fault {
    /// What goes wrong.
    pub kind: FaultKind,
    /// Start, s.
    pub start_s: f64,
    /// Length, s.
    pub duration_s: f64,
}

impl Fault {
    /// `true` at `t_s` inside the window.
    #[must_use]
    pub fn active(&self, t_s: f64) -> bool {
        t_s >= self.start_s && t_s < self.start_s + self.duration_s
    }
}

/// Applies faults sample by sample (keeps the value a dropout holds).
///
/// The faults active at the time of the last [`Injector::sensor`] call are
/// kept by [`Windows`] (a list that moves with time), so a run of `n`
/// samples over `m` faults costs `O(n·a + m log m)` with `a` faults
/// active at once, not `O(n·m)`. Faults act in file order, as written.
#[derive(Debug, Clone)]
pub struct Injector<'a> {
    faults: &'a [Fault],
    last_reading: f64,
    held: Vec<Option<f64>>,
    windows: Windows,
}

impl<'a> Injector<'a> {
    /// An injector for `faults`.
    #[must_use]
    pub fn new(faults: &'a [Fault]) -> Self {
        Self {
            faults,
            last_reading: 0.0,
            held: vec![None; faults.len()],
            windows: Windows::new(faults.iter().map(|f| (f.start_s, f.duration_s))),
        }
    }

    /// The faults active at `t_s`, in file order: from the window list
    /// when it is at `t_s`, else by a scan.
    fn each_active(&self, t_s: f64, mut f: impl FnMut(&Fault)) {
        match self.windows.active_if_at(t_s) {
            Some(active) => active.iter().for_each(|&i| f(&self.faults[i])),
            None => self.faults.iter().filter(|x| x.active(t_s)).for_each(f),
        }
    }

    /// `true` if a sensor or actuator fault is active at `t_s`.
    #[must_use]
    pub fn any_active(&self, t_s: f64) -> bool {
        let mut any = false;
        self.each_active(t_s, |f| {
            any |= !matches!(f.kind, FaultKind::PayloadChange(_))
        });
        any
    }

    /// `true` if a payload change is in force at `t_s`.
    #[must_use]
    pub fn payload_changed(&self, t_s: f64) -> bool {
        let mut any = false;
        self.each_active(t_s, |f| {
            any |= matches!(f.kind, FaultKind::PayloadChange(_))
        });
        any
    }

    /// `true` if the scenario has an actuator fault (the harness then
    /// reports the applied value back to the controller, as a firmware
    /// reading back its actuator would).
    #[must_use]
    pub fn has_actuator_faults(&self) -> bool {
        self.faults.iter().any(|f| f.kind.is_actuator())
    }

    /// The reading the controller gets at `t_s` instead of `reading`.
    pub fn sensor(&mut self, t_s: f64, reading: f64) -> f64 {
        let held = &mut self.held;
        let active = self.windows.active_at(t_s, |i| held[i] = None);
        let mut out = reading;
        for &i in active {
            let held = &mut self.held[i];
            out = match self.faults[i].kind {
                FaultKind::NonFinite => f64::NAN,
                FaultKind::Stuck(v) | FaultKind::OutOfRange(v) => v,
                FaultKind::Dropout => *held.get_or_insert(self.last_reading),
                FaultKind::Spike(offset) => out + offset,
                _ => out,
            };
        }
        if out.is_finite() {
            self.last_reading = out;
        }
        out
    }

    /// What the actuator applies at `t_s` when `drive` is commanded.
    #[must_use]
    pub fn actuator(&self, t_s: f64, drive: f64) -> f64 {
        let mut u = drive;
        self.each_active(t_s, |f| {
            u = match f.kind {
                FaultKind::ActuatorOverride(v) => v,
                FaultKind::ActuatorClip { min, max } => u.clamp(min, max),
                _ => u,
            };
        });
        u
    }

    /// Factor on the plant's command gain at `t_s`.
    #[must_use]
    pub fn gain_factor(&self, t_s: f64) -> f64 {
        let mut g = 1.0;
        self.each_active(t_s, |f| {
            if let FaultKind::PayloadChange(k) = f.kind {
                g *= k;
            }
        });
        g
    }
}

/// Per-sample fault columns of a [`Recording`].
#[derive(Debug, Clone, PartialEq, Default)]
pub struct FaultTrace {
    /// A sensor or actuator fault was active at the sample.
    pub active: Vec<bool>,
    /// A payload change was in force at the sample.
    pub payload: Vec<bool>,
    /// Fault flags the injected values call for ([`CHECKED_FLAGS`]).
    pub expected: Vec<Status>,
    /// The command left the stored output limits or moved by more than the
    /// stored slew step (outside engage and tracking steps).
    pub limit_violation: Vec<bool>,
    /// Flags of the on-target loop monitor ([`evenkeel::monitor`]).
    pub monitor: Vec<Diagnostics>,
    /// The monitor settings used.
    pub monitor_settings: Option<MonitorSettings>,
}

/// The status flags compared against [`FaultTrace::expected`].
pub const CHECKED_FLAGS: [Status; 4] = [
    Status::NON_FINITE,
    Status::MEASUREMENT_RANGE,
    Status::SETPOINT_RANGE,
    Status::DOWNSTREAM,
];

/// The checked flags of `s`.
#[must_use]
pub fn checked(s: Status) -> Status {
    CHECKED_FLAGS
        .into_iter()
        .filter(|f| s.contains(*f))
        .fold(Status::NONE, |a, f| a | f)
}

/// The fault metrics of a run (see the module docs). Keys as in scenario
/// files.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct FaultMetrics {
    /// `limit_violations`: samples whose command left the stored output
    /// limits or moved by more than the stored slew step (count).
    pub limit_violations: Option<f64>,
    /// `fault_flag_errors`: samples whose fault flags (non_finite,
    /// measurement_range, setpoint_range, downstream) differ from what the
    /// injected values call for (count; engage and tracking steps are not
    /// judged on `downstream`).
    pub fault_flag_errors: Option<f64>,
    /// `fault_recovery_s`: the longest time, over the faults, from the end
    /// of a sensor or actuator fault (or from the onset and from the end of
    /// a payload change, both sudden changes of the plant) until the true
    /// output is back within the error band of the reference for good
    /// (until the next fault or the end); `None` without faults, without a
    /// band, when a fault is never recovered from, or when a sensor or
    /// actuator fault is still active at the end of the run.
    pub fault_recovery_s: Option<f64>,
    /// `fault_return_jump`: the largest jump, over the sensor and actuator
    /// faults, from the actuator's last value in a fault to the first
    /// command after it (command units).
    pub fault_return_jump: Option<f64>,
    /// `fault_overshoot`: the largest excursion of the true output past the
    /// reference after a sensor or actuator fault ends, on the far side from
    /// the error it left (or, if the fault left the output within the band,
    /// either way), measurement units. A payload change is a disturbance,
    /// judged by the recovery time only.
    pub fault_overshoot: Option<f64>,
    /// When the worst value of each occurred.
    pub at_s: FaultTimes,
    /// Why each of the above is `None`, when it is.
    pub undefined: FaultReasons,
}

/// When the worst value of each fault metric occurred, s from the start
/// of the run; `None` where the metric has no value or nothing to point at.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct FaultTimes {
    /// The first sample that left the limits or the slew step.
    pub limit_violations: Option<f64>,
    /// The first sample whose flags differ from what was called for.
    pub fault_flag_errors: Option<f64>,
    /// The start of the longest recovery (the end of its fault, or the
    /// onset or end of its payload change).
    pub fault_recovery_s: Option<f64>,
    /// The first command after the fault with the largest return jump.
    pub fault_return_jump: Option<f64>,
    /// The sample of the largest excursion past the reference.
    pub fault_overshoot: Option<f64>,
}

/// Why the fault metrics of [`FaultMetrics`] are undefined.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct FaultReasons {
    /// For [`FaultMetrics::fault_recovery_s`].
    pub fault_recovery_s: Option<Undefined>,
    /// For [`FaultMetrics::fault_return_jump`].
    pub fault_return_jump: Option<Undefined>,
    /// For [`FaultMetrics::fault_overshoot`].
    pub fault_overshoot: Option<Undefined>,
}

/// Fault episodes: `(first, end)` sample ranges where a fault was active
/// (overlapping or adjacent windows merged).
#[must_use]
pub fn episodes(active: &[bool]) -> Vec<(usize, usize)> {
    let mut out = Vec::new();
    let mut start = None;
    for (i, &a) in active.iter().enumerate() {
        match (a, start) {
            (true, None) => start = Some(i),
            (false, Some(s)) => {
                out.push((s, i));
                start = None;
            }
            _ => {}
        }
    }
    if let Some(s) = start {
        out.push((s, active.len()));
    }
    out
}

/// Computes [`FaultMetrics`] of `rec`; `band` is the absolute error band
/// for the recovery time (`None`: recovery undefined).
#[must_use]
pub fn assess(rec: &Recording, band: Option<f64>) -> FaultMetrics {
    let f = &rec.faults;
    #[allow(clippy::cast_precision_loss)] // counts far below 2^53
    let count = |n: usize| n as f64;
    let at = |k: usize| crate::metrics::sample_time_s(k, rec.dt_s);
    let violations = f.limit_violation.iter().filter(|v| **v).count();
    let first_violation = f.limit_violation.iter().position(|v| *v);
    let flag_error: Vec<bool> = rec
        .status
        .iter()
        .zip(&f.expected)
        .map(|(s, want)| {
            let mut got = checked(*s);
            let mut want = *want;
            if s.contains(Status::ENGAGED) {
                // Engage sets the last command to the actuator's value
                // before the downstream comparison: not judged there.
                got = Status::from_bits(got.bits() & !Status::DOWNSTREAM.bits());
                want = Status::from_bits(want.bits() & !Status::DOWNSTREAM.bits());
            }
            got != want
        })
        .collect();
    let flag_errors = flag_error.iter().filter(|e| **e).count();
    let mut m = FaultMetrics {
        limit_violations: Some(count(violations)),
        fault_flag_errors: Some(count(flag_errors)),
        at_s: FaultTimes {
            limit_violations: first_violation.map(at),
            fault_flag_errors: flag_error.iter().position(|e| *e).map(at),
            ..FaultTimes::default()
        },
        ..FaultMetrics::default()
    };
    let eps = episodes(&f.active);
    let loads = episodes(&f.payload);
    if eps.is_empty() && loads.is_empty() {
        m.undefined = FaultReasons {
            fault_recovery_s: Some(Undefined::NoFaults),
            fault_return_jump: Some(Undefined::NoFaults),
            fault_overshoot: Some(Undefined::NoFaults),
        };
        return m;
    }
    let n = rec.time_s.len();
    // Where a disturbance begins: a fault, or either edge of a payload change.
    let mut starts: Vec<usize> = eps.iter().map(|e| e.0).collect();
    starts.extend(loads.iter().flat_map(|&(s, e)| [s, e]));
    starts.sort_unstable();
    // A sensor or actuator fault still active at the last sample never
    // ended: there is no recovery to measure (a payload change in force
    // at the end is judged from its onset).
    let fault_at_end = eps.iter().any(|e| e.1 >= n);
    // Events to recover from: (sample, judge the return for a kick).
    let mut events: Vec<(usize, bool)> = eps.iter().map(|e| (e.1, true)).collect();
    events.extend(loads.iter().flat_map(|&(s, e)| [(s, false), (e, false)]));
    events.retain(|e| e.0 < n);
    events.sort_unstable();
    let (mut recovery, mut jump, mut overshoot) = (Some(0.0_f64), 0.0_f64, 0.0_f64);
    let mut recovery_why = if band.is_none() {
        Some(Undefined::NoBand)
    } else if fault_at_end {
        recovery = None;
        Some(Undefined::FaultAtEnd)
    } else {
        None
    };
    let mut kicks = false;
    // Samples of the worst recovery start, return jump and overshoot.
    let (mut recovery_at, mut jump_at, mut overshoot_at) = (None, None, None);
    for &(end, kick) in &events {
        // The next disturbance after `end` (bisection over the sorted starts).
        let until = starts
            .get(starts.partition_point(|&s| s <= end))
            .copied()
            .unwrap_or(n);
        let err = |k: usize| rec.reference[k] - rec.output[k];
        if kick {
            if end > 0 {
                let j = (rec.command[end] - rec.applied[end - 1]).abs();
                if jump_at.is_none() || j > jump {
                    (jump, jump_at) = (j, Some(end));
                }
            }
            let e0 = err(end);
            let far_side = band.is_some_and(|b| e0.abs() > b);
            for k in end..until {
                let e = err(k);
                let past = if far_side { -e0.signum() * e } else { e.abs() };
                if overshoot_at.is_none() || past > overshoot {
                    (overshoot, overshoot_at) = (overshoot.max(past), Some(k));
                }
            }
            kicks = true;
        }
        recovery = match (recovery, band) {
            (Some(worst), Some(b)) => {
                // First sample from which the error stays within the band.
                let last_out = (end..until).rev().find(|&k| err(k).abs() > b);
                let back = last_out.map_or(end, |k| k + 1);
                #[allow(clippy::cast_precision_loss)]
                let t = (back - end) as f64 * rec.dt_s;
                let back_in_time = back < until;
                if !back_in_time {
                    recovery_why = Some(Undefined::NotRecovered);
                }
                if back_in_time && (recovery_at.is_none() || t > worst) {
                    recovery_at = Some(end);
                }
                back_in_time.then_some(worst.max(t))
            }
            _ => None,
        };
    }
    if recovery.is_none() && recovery_why.is_none() {
        recovery_why = Some(Undefined::NotRecovered);
    }
    let kick_why = if kicks {
        None
    } else if eps.is_empty() {
        Some(Undefined::OnlyPayload)
    } else {
        // Every sensor or actuator fault lasts to the end.
        Some(Undefined::FaultAtEnd)
    };
    m.undefined = FaultReasons {
        fault_recovery_s: recovery_why,
        fault_return_jump: kick_why,
        fault_overshoot: kick_why,
    };
    m.fault_recovery_s = recovery;
    m.at_s.fault_recovery_s = recovery.and(recovery_at).map(at);
    if kicks {
        m.at_s.fault_return_jump = jump_at.map(at);
        m.at_s.fault_overshoot = overshoot_at.filter(|_| overshoot > 0.0).map(at);
        m.fault_return_jump = Some(jump);
        m.fault_overshoot = Some(overshoot);
    }
    m
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn episodes_merge_adjacent_windows() {
        let a = [false, true, true, false, false, true, true];
        assert_eq!(episodes(&a), vec![(1, 3), (5, 7)]);
        assert!(episodes(&[false; 4]).is_empty());
    }

    #[test]
    fn injector_applies_each_kind() {
        let faults = [
            Fault {
                kind: FaultKind::Dropout,
                start_s: 1.0,
                duration_s: 1.0,
            },
            Fault {
                kind: FaultKind::Spike(5.0),
                start_s: 3.0,
                duration_s: 0.5,
            },
            Fault {
                kind: FaultKind::ActuatorClip { min: 0.0, max: 0.5 },
                start_s: 4.0,
                duration_s: 1.0,
            },
            Fault {
                kind: FaultKind::PayloadChange(0.5),
                start_s: 4.0,
                duration_s: 1.0,
            },
            Fault {
                kind: FaultKind::NonFinite,
                start_s: 6.0,
                duration_s: 1.0,
            },
        ];
        let mut inj = Injector::new(&faults);
        assert_eq!(inj.sensor(0.5, 7.0), 7.0);
        assert_eq!(inj.sensor(1.0, 8.0), 7.0); // holds the last reading
        assert_eq!(inj.sensor(1.5, 9.0), 7.0);
        assert_eq!(inj.sensor(2.0, 9.0), 9.0);
        assert_eq!(inj.sensor(3.0, 1.0), 6.0);
        assert!(inj.sensor(6.5, 1.0).is_nan());
        assert_eq!(inj.actuator(4.5, 0.8), 0.5);
        assert_eq!(inj.actuator(5.0, 0.8), 0.8);
        assert_eq!(inj.gain_factor(4.2), 0.5);
        assert_eq!(inj.gain_factor(3.9), 1.0);
        assert!(inj.has_actuator_faults() && inj.any_active(6.0) && !inj.any_active(5.5));
    }
}
