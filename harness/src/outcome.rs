//! Results of running a scenario: per backend, the recording, its metrics
//! and the verdict of every criterion.

use std::fmt;

use std::ops::Range;

use crate::criteria::{Scope, Verdict};
use crate::metrics::{
    MetricOptions, Metrics, MetricsError, Saturation, Step, Trace, compute, disturbance_rejection,
    peak_error, sample_time_s,
};
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
    /// the saturation limits are the controller's output limits. A
    /// criterion of a segment or a window ([`Scope`]) is judged on the
    /// metrics of that part of the run alone.
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
        let band = opts.disturbance_band.or(whole.error_band);
        let n = rec.time_s.len();
        let mut metrics = part(scenario, &rec, 0..n, change, &whole, band)?;
        metrics.faults = crate::fault::assess(&rec, whole.error_band);
        let mut scoped: Vec<(Scope, Metrics)> = Vec::new();
        for c in &scenario.criteria {
            if c.scope == Scope::Run || scoped.iter().any(|(s, _)| *s == c.scope) {
                continue;
            }
            let at = |t: f64| sample_at(&rec, t).min(n);
            let pieces = || scenario.setup.reference.pieces();
            let m = match c.scope {
                Scope::Run => continue,
                Scope::Segment(i) => {
                    let Some(p) = pieces().nth(i) else { continue };
                    let step = (p.to != p.from).then_some((p.start_s, p.end_s(), p.from, p.to));
                    part(
                        scenario,
                        &rec,
                        at(p.start_s)..at(p.end_s()),
                        step,
                        &whole,
                        band,
                    )?
                }
                Scope::Window {
                    start_s,
                    end_s,
                    band: own,
                    ..
                } => {
                    let step = pieces()
                        .find(|p| p.to != p.from && p.start_s >= start_s && p.start_s < end_s)
                        .map(|p| (p.start_s, p.end_s().min(end_s), p.from, p.to));
                    part(
                        scenario,
                        &rec,
                        at(start_s)..at(end_s),
                        step,
                        &whole,
                        own.or(band),
                    )?
                }
            };
            scoped.push((c.scope, m));
        }
        let verdicts = scenario
            .criteria
            .iter()
            .map(|c| {
                let m = scoped
                    .iter()
                    .find(|(s, _)| *s == c.scope)
                    .map_or(&metrics, |(_, m)| m);
                c.evaluate(m)
            })
            .collect();
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

/// The first sample at or after `t_s` (within a billionth of a period).
fn sample_at(rec: &Recording, t_s: f64) -> usize {
    rec.time_s.partition_point(|&t| t < t_s - 1e-9 * rec.dt_s)
}

/// The metrics of samples `range` of `rec` (times from the start of the
/// run): every metric of [`compute`] over the range, the step metrics
/// over `step` (`start_s`, `end_s`, `from`, `to`) clipped to the range,
/// the ramp-tracking error over the samples in a reference ramp, and the
/// disturbance rejection after each change of a `[disturbance]` profile
/// in the range, judged against `band`.
fn part(
    scenario: &Scenario,
    rec: &Recording,
    range: Range<usize>,
    step: Option<(f64, f64, f64, f64)>,
    whole: &MetricOptions,
    band: Option<f64>,
) -> Result<Metrics, RunError> {
    let (first, end) = (range.start, range.end.max(range.start));
    let slice = |a: usize, b: usize| Trace {
        dt_s: rec.dt_s,
        reference: &rec.reference[a..b],
        output: &rec.output[a..b],
        command: &rec.command[a..b],
        accel: &rec.accel[a..b],
    };
    let mut metrics = compute(&slice(first, end), whole)?;
    metrics.at_s = metrics.at_s.offset(first, rec.dt_s);
    if let Some((start_s, end_s, from, to)) = step {
        let a = sample_at(rec, start_s).clamp(first, end);
        let b = sample_at(rec, end_s).clamp(a, end);
        if a < b {
            let m = compute(
                &slice(a, b),
                &MetricOptions {
                    step: Some(Step {
                        start_index: 0,
                        from,
                        to,
                    }),
                    saturation: None,
                    error_band: None,
                    ..*whole
                },
            )?;
            metrics.rise_time_s = m.rise_time_s;
            metrics.settling_time_s = m.settling_time_s;
            metrics.overshoot_pct = m.overshoot_pct;
            metrics.undefined.rise_time_s = m.undefined.rise_time_s;
            metrics.undefined.settling_time_s = m.undefined.settling_time_s;
            metrics.undefined.overshoot_pct = m.undefined.overshoot_pct;
            metrics.at_s.overshoot_pct = m.at_s.offset(a, rec.dt_s).overshoot_pct;
        }
    }
    let (r, y) = (&rec.reference[first..end], &rec.output[first..end]);
    // Samples inside a reference ramp (its end included).
    let mut in_ramp = vec![false; end - first];
    let mut changes_at = Vec::new();
    for p in scenario.setup.reference.pieces() {
        if p.to == p.from {
            continue;
        }
        changes_at.push(sample_at(rec, p.start_s));
        if p.ramp_s > 0.0 {
            let a = sample_at(rec, p.start_s).clamp(first, end);
            let b = rec
                .time_s
                .partition_point(|&t| t <= p.hold_start_s() + 1e-9 * rec.dt_s)
                .clamp(a, end);
            in_ramp[a - first..b - first].fill(true);
        }
    }
    if let Some((e, k)) = peak_error(r, y, Some(&in_ramp)) {
        metrics.ramp_tracking_error_peak = Some(e);
        metrics.at_s.ramp_tracking_error_peak = Some(sample_time_s(first + k, rec.dt_s));
        metrics.undefined.ramp_tracking_error_peak = None;
    }
    // Disturbance changes in the range, each judged until the next
    // reference change or the end of the range.
    let d = &scenario.setup.disturbances;
    let mut starts: Vec<usize> = [&d.grade_pct, &d.force_n, &d.load, &d.gain_factor]
        .into_iter()
        .flat_map(|profile| profile.pieces().filter(|p| p.to != p.from))
        .map(|p| sample_at(rec, p.start_s))
        .filter(|k| (first..end).contains(k))
        .collect();
    starts.sort_unstable();
    changes_at.sort_unstable();
    let mut episodes: Vec<(usize, usize)> = Vec::new();
    for k in starts {
        if episodes.last().is_some_and(|&(_, until)| k < until) {
            continue; // inside the episode of an earlier change
        }
        let until = changes_at
            .get(changes_at.partition_point(|&c| c <= k))
            .copied()
            .unwrap_or(end)
            .min(end);
        episodes.push((k, until));
    }
    let relative: Vec<(usize, usize)> = episodes
        .iter()
        .map(|&(a, b)| (a - first, b - first))
        .collect();
    if let Some(rej) = disturbance_rejection(r, y, rec.dt_s, &relative, band) {
        let t = |k: usize| Some(sample_time_s(first + k, rec.dt_s));
        metrics.disturbance_peak_deviation = Some(rej.peak.0);
        metrics.at_s.disturbance_peak_deviation = t(rej.peak.1);
        metrics.undefined.disturbance_peak_deviation = None;
        metrics.disturbance_recovery_s = rej.recovery.map(|(s, _)| s);
        metrics.at_s.disturbance_recovery_s = rej.recovery.and_then(|(_, k)| t(k));
        metrics.undefined.disturbance_recovery_s = rej.recovery_undefined;
    }
    Ok(metrics)
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
