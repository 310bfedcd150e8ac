//! One variant of a sweep, and the results kept for sweeps that fit in
//! memory.

use serde::{Deserialize, Serialize};

use super::SweepError;
use super::envelope::Envelope;
use super::merge::Shard;
use super::space::{SweepPlan, variant_seed};
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

/// One variant's result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
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
    /// Per criterion, why its measured value is undefined
    /// ([`Undefined::key`](crate::undefined::Undefined::key)), when it is.
    #[serde(default)]
    pub reasons: Vec<Option<String>>,
    /// Towed-load shifts.
    pub load_shifts: usize,
    /// Why the variant could not run (counts as failing every criterion).
    pub error: Option<String>,
}

impl VariantResult {
    /// Why criterion `k`'s value is undefined (its key), when it is.
    #[must_use]
    pub fn reason(&self, k: usize) -> Option<String> {
        self.reasons.get(k).cloned().flatten()
    }

    /// `true` when every criterion passed.
    #[must_use]
    pub fn passed(&self) -> bool {
        self.error.is_none() && self.pass.iter().all(|&p| p)
    }
}

/// A criterion as recorded in a result file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
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
#[serde(deny_unknown_fields)]
pub struct SweepResult {
    /// Scenario name.
    pub scenario: String,
    /// Scenario source (file path).
    pub source: String,
    /// [`fingerprint`](super::fingerprint) of the scenario: shards of different scenarios do
    /// not merge.
    pub fingerprint: String,
    /// Backend name (`fixed`, `f32`, `f64`).
    pub backend: String,
    /// Method name.
    pub method: String,
    /// Seed of the sweep.
    pub seed: u64,
    /// Values per parameter (grid).
    pub levels: usize,
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

impl SweepResult {
    /// What the sweep was, without its variants.
    #[must_use]
    pub fn header(&self) -> super::SweepHeader {
        super::SweepHeader {
            format: super::HEADER_FORMAT.to_owned(),
            caution: crate::CAUTION.to_owned(),
            scenario: self.scenario.clone(),
            source: self.source.clone(),
            fingerprint: self.fingerprint.clone(),
            backend: self.backend.clone(),
            method: self.method.clone(),
            seed: self.seed,
            levels: self.levels,
            total: self.total,
            shard: self.shard,
            params: self.params.clone(),
            criteria: self.criteria.clone(),
        }
    }
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

pub(crate) fn run_one(
    scenario: &Scenario,
    backend: BackendKind,
    point: &[f64],
    index: usize,
    plan_seed: u64,
) -> (VariantResult, Option<BackendRun>) {
    let seed = noise_seed(plan_seed, index);
    let s = apply_variant(scenario, point, seed);
    let run = s.run_kind(backend);
    let n = scenario.criteria.len();
    match run {
        Ok(run) => (
            VariantResult {
                index,
                seed,
                values: point.to_vec(),
                measured: run.verdicts.iter().map(|v| v.measured).collect(),
                pass: run.verdicts.iter().map(|v| v.pass).collect(),
                reasons: run
                    .verdicts
                    .iter()
                    .map(|v| v.undefined.map(|u| u.key().to_owned()))
                    .collect(),
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
                reasons: vec![None; n],
                load_shifts: 0,
                error: Some(e.to_string()),
            },
            None,
        ),
    }
}

/// Runs the variants of `scenario.uncertainty` chosen by `plan` (all of
/// them, or the slice of `shard`) on `backend`, in parallel on the rayon
/// thread pool; `progress` is called with 1 after each variant. Every
/// variant's result is kept: for sweeps of a size that fits in memory
/// (the CLI streams them through [`stream`](super::stream) instead).
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
    let mut variants = Vec::new();
    let streamed = super::stream(scenario, plan, backend, shard, progress, &mut |v| {
        variants.push(v.clone());
        Ok(())
    })?;
    let h = streamed.header;
    Ok(SweepResult {
        scenario: h.scenario,
        source: h.source,
        fingerprint: h.fingerprint,
        backend: h.backend,
        method: h.method,
        seed: h.seed,
        levels: h.levels,
        total: h.total,
        shard: h.shard,
        params: h.params,
        criteria: h.criteria,
        variants,
        envelope: streamed.envelope,
    })
}
