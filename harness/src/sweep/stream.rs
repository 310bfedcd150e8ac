//! A sweep run with its results aggregated as they arrive: memory does
//! not grow with the number of variants.

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use super::SweepError;
use super::envelope::Envelope;
use super::merge::{Shard, fingerprint};
use super::run::{CriterionRecord, VariantResult, run_one};
use super::space::{Design, SweepPlan};
use super::tally::Tally;
use crate::outcome::BackendKind;
use crate::report::CAUTION;
use crate::scenario::Scenario;

/// Variants run in parallel before their results are passed on in index
/// order: bounds what is held at once (their small result records, not
/// their recordings, which fold into the envelope as each run ends).
const CHUNK: usize = 1024;

/// What a sweep is: everything but its variants' results. The first line
/// of a result file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SweepHeader {
    /// Always [`HEADER_FORMAT`].
    pub format: String,
    /// The caution every report carries.
    pub caution: String,
    /// Scenario name.
    pub scenario: String,
    /// Scenario source (file path).
    pub source: String,
    /// [`fingerprint`] of the scenario.
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
}

/// The `format` of a result file this version writes and reads.
pub const HEADER_FORMAT: &str = "evenkeel sweep result, version 2";

impl SweepHeader {
    /// The header of the sweep of `scenario` by `plan` on `backend`
    /// (`total` variants, `shard` of them).
    #[must_use]
    pub fn new(
        scenario: &Scenario,
        plan: &SweepPlan,
        backend: BackendKind,
        total: usize,
        shard: Option<Shard>,
    ) -> Self {
        Self {
            format: HEADER_FORMAT.to_owned(),
            caution: CAUTION.to_owned(),
            scenario: scenario.name.clone(),
            source: scenario.source.clone(),
            fingerprint: fingerprint(scenario),
            backend: backend.name().to_owned(),
            method: plan.method.name().to_owned(),
            seed: plan.seed,
            levels: plan.levels,
            total,
            shard: shard.map(|s| (s.index, s.count)),
            params: scenario
                .uncertainty
                .iter()
                .map(|u| u.param.key().to_owned())
                .collect(),
            criteria: criteria_records(scenario),
        }
    }

    /// The variant indices this result covers.
    #[must_use]
    pub fn range(&self) -> std::ops::Range<usize> {
        match self.shard {
            Some((index, count)) => Shard { index, count }.range(self.total),
            None => 0..self.total,
        }
    }
}

/// The criteria of `scenario` as result files record them.
#[must_use]
pub fn criteria_records(scenario: &Scenario) -> Vec<CriterionRecord> {
    scenario
        .criteria
        .iter()
        .map(|c| CriterionRecord {
            metric: c.label(),
            bound: c.bound.name().to_owned(),
            limit: c.limit,
            source: c.source.clone(),
        })
        .collect()
}

/// A sweep (or shard) as it ends: what it was, the aggregate of its
/// variants and the envelope of their signals.
#[derive(Debug, Clone, PartialEq)]
pub struct Streamed {
    /// What the sweep was.
    pub header: SweepHeader,
    /// Its variants, aggregated.
    pub tally: Tally,
    /// Min/max of the signals over the variants that ran.
    pub envelope: Envelope,
}

/// Refuses settings `backend` cannot hold, once for all variants.
fn backend_accepts(scenario: &Scenario, backend: BackendKind) -> Result<(), SweepError> {
    let result = scenario.accepts(backend);
    result.map_err(|e| SweepError::Run(scenario.refused(backend.name(), e)))
}

/// Runs the variants of `scenario.uncertainty` chosen by `plan` (all, or
/// the slice of `shard`) on `backend`, in parallel on the rayon thread
/// pool, and passes each variant's result to `sink` in index order as
/// its chunk ends; `progress` is called with 1 after each variant.
///
/// Memory holds one chunk of result records, one recording per worker
/// thread and per-thread envelopes of [`ENVELOPE_BUCKETS`](super::ENVELOPE_BUCKETS)
/// buckets: it does not grow with the number of variants.
///
/// # Errors
/// [`SweepError::TooLarge`], [`SweepError::Run`] if the backend refuses
/// the settings, [`SweepError::Write`] if `sink` fails.
pub fn stream(
    scenario: &Scenario,
    plan: &SweepPlan,
    backend: BackendKind,
    shard: Option<Shard>,
    progress: &(dyn Fn(u64) + Sync),
    sink: &mut dyn FnMut(&VariantResult) -> Result<(), String>,
) -> Result<Streamed, SweepError> {
    let total = plan.size(scenario.uncertainty.len())?;
    backend_accepts(scenario, backend)?;
    let header = SweepHeader::new(scenario, plan, backend, total, shard);
    let design = Design::new(&scenario.uncertainty, plan, total);
    let mut tally = Tally::new(&header.criteria);
    let blank = Envelope::empty(scenario);
    let mut envelope = blank.clone();
    let empty = || blank.clone();
    let range = header.range();
    let mut start = range.start;
    while start < range.end {
        let end = (start + CHUNK).min(range.end);
        let (mut chunk, part) = (start..end)
            .into_par_iter()
            .fold(
                || (Vec::new(), empty()),
                |(mut list, mut env), i| {
                    let (v, run) = run_one(scenario, backend, &design.point(i), i, plan.seed);
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
        chunk.sort_by_key(|v| v.index);
        envelope.combine(&part);
        for v in &chunk {
            tally.add(v);
            sink(v).map_err(SweepError::Write)?;
        }
        start = end;
    }
    envelope.finish();
    Ok(Streamed {
        header,
        tally,
        envelope,
    })
}
