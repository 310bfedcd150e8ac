//! Results of running a scenario: per backend, the recording, its metrics
//! and the verdict of every criterion.

use std::fmt;

use crate::criteria::{Verdict, evaluate};
use crate::metrics::{MetricOptions, Metrics, MetricsError, Saturation, Step, Trace, compute};
use crate::plant::ParamError;
use crate::scenario::Scenario;
use crate::sim::Recording;

/// A numeric backend of the controller.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum BackendKind {
    /// Q16.16 fixed point (`I16F16`).
    Fixed,
    /// 16-bit fixed point (`evenkeel::Slim16`) on the scenario's
    /// `[scaling]`, or on a power-of-two scale the harness picks
    /// ([`crate::Scenario::settings_on`]).
    Slim16,
    /// `f32`.
    F32,
    /// `f64`.
    F64,
}

impl BackendKind {
    /// All four, in report order.
    pub const ALL: [Self; 4] = [Self::Fixed, Self::Slim16, Self::F32, Self::F64];

    /// `fixed`, `slim16`, `f32` or `f64` (as `evenkeel::Backend::NAME`).
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::Fixed => "fixed",
            Self::Slim16 => "slim16",
            Self::F32 => "f32",
            Self::F64 => "f64",
        }
    }

    /// `true` for the two fixed-point backends.
    #[must_use]
    pub const fn is_fixed(self) -> bool {
        matches!(self, Self::Fixed | Self::Slim16)
    }

    /// The backend called `name`.
    #[must_use]
    pub fn from_name(name: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|b| b.name() == name)
    }
}

/// Why a scenario could not be run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum RunError {
    /// The backend refused the controller settings.
    #[error("controller settings refused by the {backend} backend: {error}")]
    Config {
        /// Backend name.
        backend: &'static str,
        /// The controller's reason.
        error: evenkeel::ConfigError,
    },
    /// The backend refused the controller settings; `location` names the
    /// file, line, column and key of the setting in the scenario file.
    #[error("{location}")]
    Refused {
        /// Backend name.
        backend: &'static str,
        /// The controller's reason.
        error: evenkeel::ConfigError,
        /// Where the setting is written, with the message.
        location: Box<crate::scenario::ScenarioError>,
    },
    /// The plant's state stopped being a finite number: the model is
    /// meaningless for these values (or the loop drove it there).
    #[error(
        "the plant's {state} is {value} at t = {time_s} s on the {backend} backend: the run is meaningless from there (check the plant parameters, plant.substeps and the output limits)"
    )]
    NonFinite {
        /// Backend name.
        backend: &'static str,
        /// The state (with its unit) or `output`.
        state: String,
        /// Its value (NaN or infinite).
        value: f64,
        /// When, s.
        time_s: f64,
    },
    /// A plant, actuator or sensor parameter is out of range.
    #[error("{0}")]
    Param(#[from] ParamError),
    /// The metrics could not be computed.
    #[error("{0}")]
    Metrics(#[from] MetricsError),
}

/// One backend's run of a scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct BackendRun {
    /// Backend name.
    pub backend: &'static str,
    /// The time series.
    pub recording: Recording,
    /// All metrics.
    pub metrics: Metrics,
    /// One verdict per criterion, in scenario order.
    pub verdicts: Vec<Verdict>,
}

impl BackendRun {
    /// Computes the metrics of `rec` as `scenario` defines them and
    /// evaluates its criteria.
    ///
    /// Step-response metrics (rise, settling, overshoot) refer to the first
    /// segment of the reference that changes it, and are computed over that
    /// segment only (its ramp and hold), so that later segments do not
    /// count as "leaving the band". All other metrics cover the whole run;
    /// the saturation limits are the controller's output limits.
    ///
    /// # Errors
    /// [`RunError::Metrics`] if the recording is unusable.
    pub fn assess(scenario: &Scenario, rec: Recording) -> Result<Self, RunError> {
        let opts = &scenario.metric_options;
        let (lo, hi) = (
            scenario.controller.output_min,
            scenario.controller.output_max,
        );
        let change = scenario.setup.reference.first_change();
        // Two raw LSB of the stored limit (rounded inward by at most one)
        // plus relative slack: Q16.16 or 16-bit, in command units.
        let kind = BackendKind::from_name(rec.backend).unwrap_or(BackendKind::Fixed);
        let raw_lsb = if kind == BackendKind::Slim16 {
            1.0
        } else {
            f64::powi(2.0, -16)
        };
        let per_unit = scenario.settings_on(kind).scaling.command.per_unit;
        let saturation = Saturation {
            min: lo,
            max: hi,
            tolerance: (hi - lo) * 1e-6 + 2.0 * raw_lsb / per_unit,
        };
        let whole = MetricOptions {
            step: None,
            settling_band: opts.settling_band,
            steady_window_s: opts.steady_window_s,
            saturation: Some(saturation),
            error_band: change
                .map(|(_, _, from, to)| opts.settling_band * (to - from).abs())
                .filter(|b| *b > 0.0),
        };
        let mut metrics = compute(&rec.trace(), &whole)?;
        metrics.faults = crate::fault::assess(&rec, whole.error_band);
        if let Some((start_s, end_s, from, to)) = change {
            let n = rec.time_s.len();
            let first = rec
                .time_s
                .partition_point(|&t| t < start_s - 1e-9 * rec.dt_s);
            let end = rec.time_s.partition_point(|&t| t < end_s - 1e-9 * rec.dt_s);
            if first < end && end <= n {
                let window = Trace {
                    dt_s: rec.dt_s,
                    reference: &rec.reference[first..end],
                    output: &rec.output[first..end],
                    command: &rec.command[first..end],
                    accel: &rec.accel[first..end],
                };
                let step = Step {
                    start_index: 0,
                    from,
                    to,
                };
                let m = compute(
                    &window,
                    &MetricOptions {
                        step: Some(step),
                        saturation: None,
                        error_band: None,
                        ..whole
                    },
                )?;
                metrics.rise_time_s = m.rise_time_s;
                metrics.settling_time_s = m.settling_time_s;
                metrics.overshoot_pct = m.overshoot_pct;
                metrics.undefined.rise_time_s = m.undefined.rise_time_s;
                metrics.undefined.settling_time_s = m.undefined.settling_time_s;
                metrics.undefined.overshoot_pct = m.undefined.overshoot_pct;
            }
        }
        let verdicts = evaluate(&scenario.criteria, &metrics);
        Ok(Self {
            backend: rec.backend,
            recording: rec,
            metrics,
            verdicts,
        })
    }

    /// `true` when every criterion passes.
    #[must_use]
    pub fn passed(&self) -> bool {
        self.verdicts.iter().all(|v| v.pass)
    }
}

/// A scenario and its runs on one or more backends.
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    /// The scenario as run.
    pub scenario: Scenario,
    /// One run per backend.
    pub runs: Vec<BackendRun>,
}

impl Outcome {
    /// `true` when every criterion passes on every backend.
    #[must_use]
    pub fn passed(&self) -> bool {
        self.runs.iter().all(BackendRun::passed)
    }

    /// Panics with the result table unless everything passed; for use in
    /// `cargo test`.
    ///
    /// # Panics
    /// When a criterion fails on any backend.
    #[allow(clippy::panic)]
    pub fn assert_pass(&self) {
        if !self.passed() {
            panic!("scenario `{}` failed:\n{self}", self.scenario.name);
        }
    }
}

impl fmt::Display for Outcome {
    /// The readable table of [`crate::report::table`].
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&crate::report::table(self))
    }
}
