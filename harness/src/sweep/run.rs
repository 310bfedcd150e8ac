//! The parallel run of a sweep and the envelope of its signals.

use evenkeel::Config;
use evenkeel::fixed::types::I16F16;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use super::SweepError;
use super::merge::{Shard, fingerprint};
use super::space::{SweepPlan, design_points, variant_seed};
use crate::outcome::{BackendKind, BackendRun};
use crate::scenario::Scenario;

/// Salt of the per-variant sensor-noise seed (so it differs from the
/// stream used for random parameter draws).
const NOISE_SALT: u64 = 0x4E4F_4953_4500;

/// Sensor-noise seed of variant `index`: 63 bits, so a scenario file can
/// carry it (`scenario.seed` is a TOML integer).
#[must_use]
pub(crate) fn noise_seed(plan_seed: u64, index: usize) -> u64 {
    variant_seed(plan_seed ^ NOISE_SALT, index as u64) >> 1
}

/// Per-sample minimum and maximum of the signals over all variants run.
///
/// Min and max are exact and order-free, so shards merge into the same
/// envelope as one run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Envelope {
    /// Controller period, s (sample `k` is at `k·dt_s`).
    pub dt_s: f64,
    /// Reference (the same in every variant).
    pub reference: Vec<f64>,
    /// True plant output, lower and upper bound.
    pub output: [Vec<f64>; 2],
    /// Command.
    pub command: [Vec<f64>; 2],
    /// Plant rate (acceleration).
    pub accel: [Vec<f64>; 2],
    /// Jerk.
    pub jerk: [Vec<f64>; 2],
    /// Variants that contributed.
    pub runs: usize,
}

impl Envelope {
    fn empty(dt_s: f64, reference: Vec<f64>) -> Self {
        let n = reference.len();
        let band = || [vec![f64::INFINITY; n], vec![f64::NEG_INFINITY; n]];
        Self {
            dt_s,
            reference,
            output: band(),
            command: band(),
            accel: band(),
            jerk: band(),
            runs: 0,
        }
    }

    fn add(&mut self, run: &BackendRun) {
        let rec = &run.recording;
        let jerk = rec.jerk();
        self.runs += 1;
        for (band, x) in [
            (&mut self.output, &rec.output),
            (&mut self.command, &rec.command),
            (&mut self.accel, &rec.accel),
            (&mut self.jerk, &jerk),
        ] {
            let [lo, hi] = band;
            for ((l, h), &v) in lo.iter_mut().zip(hi.iter_mut()).zip(x) {
                if v.is_finite() {
                    *l = l.min(v);
                    *h = h.max(v);
                }
            }
        }
    }

    /// Widens `self` to cover `other` too.
    pub(crate) fn combine(&mut self, other: &Self) {
        if other.runs == 0 {
            return;
        }
        if self.runs == 0 {
            *self = other.clone();
            return;
        }
        self.runs += other.runs;
        for (a, b) in [
            (&mut self.output, &other.output),
            (&mut self.command, &other.command),
            (&mut self.accel, &other.accel),
            (&mut self.jerk, &other.jerk),
        ] {
            for (x, y) in a[0].iter_mut().zip(&b[0]) {
                *x = x.min(*y);
            }
            for (x, y) in a[1].iter_mut().zip(&b[1]) {
                *x = x.max(*y);
            }
        }
    }

    /// Replaces bounds no variant touched (±∞) by 0, so JSON can hold them.
    fn finish(&mut self) {
        for band in [
            &mut self.output,
            &mut self.command,
            &mut self.accel,
            &mut self.jerk,
        ] {
            for v in band.iter_mut().flatten() {
                if !v.is_finite() {
                    *v = 0.0;
                }
            }
        }
    }
}

/// One variant's result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct VariantResult {
    /// Index in the sweep (0-based).
    pub index: usize,
    /// Sensor-noise seed it ran with (`scenario.seed` to re-run it).
    pub seed: u64,
    /// Parameter values, in the order of [`SweepResult::params`].
    pub values: Vec<f64>,
    /// Measured value per criterion, in scenario order; `None`: undefined.
    pub measured: Vec<Option<f64>>,
    /// Pass per criterion.
    pub pass: Vec<bool>,
    /// Towed-load shifts.
    pub load_shifts: usize,
    /// Why the variant could not run (counts as failing every criterion).
    pub error: Option<String>,
}

impl VariantResult {
    /// `true` when every criterion passed.
    #[must_use]
    pub fn passed(&self) -> bool {
        self.error.is_none() && self.pass.iter().all(|&p| p)
    }
}

/// A criterion as recorded in a result file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CriterionRecord {
    /// Metric key.
    pub metric: String,
    /// `max` or `min`.
    pub bound: String,
    /// The limit.
    pub limit: f64,
    /// Where the limit comes from.
    pub source: Option<String>,
}

/// The result of a sweep or of one shard of it; what `--save` writes and
/// `merge` reads.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SweepResult {
    /// Scenario name.
    pub scenario: String,
    /// Scenario source (file path).
    pub source: String,
    /// [`fingerprint`] of the scenario: shards of different scenarios do
    /// not merge.
    pub fingerprint: String,
    /// Backend name (`fixed`, `f32`, `f64`).
    pub backend: String,
    /// Method name.
    pub method: String,
    /// Seed of the sweep.
    pub seed: u64,
    /// Variants of the whole sweep.
    pub total: usize,
    /// `(i, n)` for a shard, `None` for a whole sweep.
    pub shard: Option<(usize, usize)>,
    /// Uncertain parameter keys, in file order.
    pub params: Vec<String>,
    /// Criteria in scenario order.
    pub criteria: Vec<CriterionRecord>,
    /// The variants run, in index order.
    pub variants: Vec<VariantResult>,
    /// Envelope over the variants run.
    pub envelope: Envelope,
}

/// Largest mismatch, as a fraction of the output range, between the
/// file's `initial_command` and the nominal plant's equilibrium command for
/// which the file counts as "starting in steady state".
const EQUILIBRIUM_TOLERANCE: f64 = 0.02;

/// `scenario` with the parameter values `point` and sensor-noise seed
/// `seed` put in, without uncertainty: one variant.
///
/// A file that starts in steady state (its `initial_command` holds
/// `initial_output` for the nominal plant, within 2 % of the output range)
/// starts every variant in its own steady state: the initial command is
/// re-solved for the variant's plant. Otherwise a variant with, say, a
/// lighter rotor would start accelerating at t = 0, a jump that no loop
/// caused.
#[must_use]
pub fn apply_variant(scenario: &Scenario, point: &[f64], seed: u64) -> Scenario {
    let mut s = scenario.clone();
    for (u, &v) in scenario.uncertainty.iter().zip(point) {
        u.param.set(&mut s, v);
    }
    s.seed = seed;
    s.uncertainty.clear();
    s.sweep = None;
    if let Some(u0) = scenario.setup.initial_command {
        let y0 = scenario.initial_output;
        let span = scenario.controller.output_max - scenario.controller.output_min;
        let nominal = crate::design::equilibrium_command(scenario, y0, 0.0);
        if nominal.is_some_and(|n| (n - u0).abs() <= EQUILIBRIUM_TOLERANCE * span)
            && let Some(u) = crate::design::equilibrium_command(&s, y0, 0.0)
        {
            s.setup.initial_command = Some(u.clamp(
                scenario.controller.output_min,
                scenario.controller.output_max,
            ));
        }
    }
    s
}

fn run_one(
    scenario: &Scenario,
    backend: BackendKind,
    point: &[f64],
    index: usize,
    plan_seed: u64,
) -> (VariantResult, Option<BackendRun>) {
    let seed = noise_seed(plan_seed, index);
    let s = apply_variant(scenario, point, seed);
    let run = match backend {
        BackendKind::Fixed => s.run::<I16F16>(),
        BackendKind::F32 => s.run::<f32>(),
        BackendKind::F64 => s.run::<f64>(),
    };
    let n = scenario.criteria.len();
    match run {
        Ok(run) => (
            VariantResult {
                index,
                seed,
                values: point.to_vec(),
                measured: run.verdicts.iter().map(|v| v.measured).collect(),
                pass: run.verdicts.iter().map(|v| v.pass).collect(),
                load_shifts: run.recording.load_shifts,
                error: None,
            },
            Some(run),
        ),
        Err(e) => (
            VariantResult {
                index,
                seed,
                values: point.to_vec(),
                measured: vec![None; n],
                pass: vec![false; n],
                load_shifts: 0,
                error: Some(e.to_string()),
            },
            None,
        ),
    }
}

/// Runs the variants of `scenario.uncertainty` chosen by `plan` (all of
/// them, or the slice of `shard`) on `backend`, in parallel on the rayon
/// thread pool; `progress` is called with 1 after each variant.
///
/// The result depends only on the scenario, the plan, the backend and the
/// shard: variants are built from `(seed, index)` and collected in index
/// order, and the envelope is a min/max.
///
/// # Errors
/// [`SweepError::TooLarge`] for an oversized design, [`SweepError::Run`]
/// if the backend refuses the controller settings.
pub fn run(
    scenario: &Scenario,
    plan: &SweepPlan,
    backend: BackendKind,
    shard: Option<Shard>,
    progress: &(dyn Fn(u64) + Sync),
) -> Result<SweepResult, SweepError> {
    let total = plan
        .variants(scenario.uncertainty.len())
        .ok_or(SweepError::TooLarge)?;
    // Settings the backend refuses fail every variant alike: say so once.
    let refused = |backend_name, error| crate::RunError::Config {
        backend: backend_name,
        error,
    };
    match backend {
        BackendKind::Fixed => Config::<I16F16>::try_new(&scenario.controller)
            .map(drop)
            .map_err(|e| refused("fixed", e))?,
        BackendKind::F32 => Config::<f32>::try_new(&scenario.controller)
            .map(drop)
            .map_err(|e| refused("f32", e))?,
        BackendKind::F64 => Config::<f64>::try_new(&scenario.controller)
            .map(drop)
            .map_err(|e| refused("f64", e))?,
    }
    let points = design_points(&scenario.uncertainty, plan, total);
    let range = shard.map_or(0..total, |s| s.range(total));
    let reference = {
        let ts = scenario.controller.period_s;
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        let n = (scenario.setup.duration_s / ts).round().max(1.0) as usize;
        #[allow(clippy::cast_precision_loss)]
        (0..n)
            .map(|k| scenario.setup.reference.at(k as f64 * ts))
            .collect::<Vec<_>>()
    };
    let empty = || Envelope::empty(scenario.controller.period_s, reference.clone());
    let (mut variants, mut envelope) = range
        .into_par_iter()
        .fold(
            || (Vec::new(), empty()),
            |(mut list, mut env), i| {
                let (v, run) = run_one(scenario, backend, &points[i], i, plan.seed);
                if let Some(run) = &run {
                    env.add(run);
                }
                list.push(v);
                progress(1);
                (list, env)
            },
        )
        .reduce(
            || (Vec::new(), empty()),
            |(mut a, mut ea), (b, eb)| {
                a.extend(b);
                ea.combine(&eb);
                (a, ea)
            },
        );
    variants.sort_by_key(|v| v.index);
    envelope.finish();
    Ok(SweepResult {
        scenario: scenario.name.clone(),
        source: scenario.source.clone(),
        fingerprint: fingerprint(scenario),
        backend: backend.name().to_owned(),
        method: plan.method.name().to_owned(),
        seed: plan.seed,
        total,
        shard: shard.map(|s| (s.index, s.count)),
        params: scenario
            .uncertainty
            .iter()
            .map(|u| u.param.key().to_owned())
            .collect(),
        criteria: scenario
            .criteria
            .iter()
            .map(|c| CriterionRecord {
                metric: c.metric.name().to_owned(),
                bound: c.bound.name().to_owned(),
                limit: c.limit,
                source: c.source.clone(),
            })
            .collect(),
        variants,
        envelope,
    })
}
