//! Why a metric has no value: every "undefined" in a report carries one
//! of these reasons.

use std::fmt;

/// Why a metric has no value for a run.
///
/// An undefined metric fails its criterion, except where the metric does
/// not apply to the run at all and so cannot be violated
/// ([`Undefined::passes`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum Undefined {
    /// The reference has no step (it never changes value).
    NoStep,
    /// The output never reached 10 % of the step: the loop never moved.
    NeverMoved,
    /// The output never reached 90 % of the step before the step's
    /// segment ended.
    NotReached,
    /// The output was outside the settling band at the end of the step's
    /// segment: it never entered the band for good before the end.
    NotSettled,
    /// No output limits to judge saturation against.
    NoLimits,
    /// The run has no samples.
    Empty,
    /// The scenario injects no faults.
    NoFaults,
    /// The only faults are payload changes: no return from a sensor or
    /// actuator fault to judge (a payload change is judged by
    /// `fault_recovery_s`). Not applicable, so it passes.
    OnlyPayload,
    /// No error band: the reference has no step to size it.
    NoBand,
    /// The output was not back within the band before the next fault or
    /// the end of the run.
    NotRecovered,
    /// A fault was still active at the end of the run, so there was no
    /// recovery to measure.
    FaultAtEnd,
    /// The value is not a finite number (the run diverged).
    NotFinite,
    /// The reference has no ramp (in the part judged).
    NoRamp,
    /// No disturbance changes (in the part judged).
    NoDisturbance,
}

impl Undefined {
    /// Every reason.
    pub const ALL: [Self; 14] = [
        Self::NoStep,
        Self::NeverMoved,
        Self::NotReached,
        Self::NotSettled,
        Self::NoLimits,
        Self::Empty,
        Self::NoFaults,
        Self::OnlyPayload,
        Self::NoBand,
        Self::NotRecovered,
        Self::FaultAtEnd,
        Self::NotFinite,
        Self::NoRamp,
        Self::NoDisturbance,
    ];

    /// The reason in words, as the reports print it.
    #[must_use]
    pub const fn reason(self) -> &'static str {
        match self {
            Self::NoStep => "not applicable: the reference never changes (no step)",
            Self::NeverMoved => "the output never moved (never reached 10 % of the step)",
            Self::NotReached => {
                "the output never reached 90 % of the step before the step's segment ended"
            }
            Self::NotSettled => {
                "the output never entered the band for good before the step's segment ended"
            }
            Self::NoLimits => "not applicable: no output limits",
            Self::Empty => "the run has no samples",
            Self::NoFaults => "not applicable: the scenario injects no faults",
            Self::OnlyPayload => {
                "not applicable: only payload changes, no return from a sensor or actuator fault (passes)"
            }
            Self::NoBand => "no error band: the reference has no step to size it",
            Self::NotRecovered => {
                "the output was not back within the band before the next fault or the end"
            }
            Self::FaultAtEnd => "a fault was still active at the end of the run",
            Self::NotFinite => "not a finite number: the run diverged",
            Self::NoRamp => "the reference has no ramp here (no ramp tracking to judge)",
            Self::NoDisturbance => "no disturbance changes here (no rejection to judge)",
        }
    }

    /// A short key for machine-readable reports (`never_moved`, …).
    #[must_use]
    pub const fn key(self) -> &'static str {
        match self {
            Self::NoStep => "no_step",
            Self::NeverMoved => "never_moved",
            Self::NotReached => "not_reached",
            Self::NotSettled => "not_settled",
            Self::NoLimits => "no_limits",
            Self::Empty => "empty",
            Self::NoFaults => "no_faults",
            Self::OnlyPayload => "only_payload",
            Self::NoBand => "no_band",
            Self::NotRecovered => "not_recovered",
            Self::FaultAtEnd => "fault_at_end",
            Self::NotFinite => "not_finite",
            Self::NoRamp => "no_ramp",
            Self::NoDisturbance => "no_disturbance",
        }
    }

    /// The reason whose [`Undefined::key`] is `key`.
    #[must_use]
    pub fn from_key(key: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|u| u.key() == key)
    }

    /// `true` when a criterion on a metric undefined for this reason
    /// passes: the metric does not apply and cannot be violated.
    #[must_use]
    pub const fn passes(self) -> bool {
        matches!(self, Self::OnlyPayload)
    }
}

impl fmt::Display for Undefined {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.reason())
    }
}
