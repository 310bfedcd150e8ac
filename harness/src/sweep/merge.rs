//! Scale-out without cluster code: deterministic shards that any CI matrix
//! or batch scheduler runs, and a merge of their result files into the
//! result of one run.

use std::fmt;
use std::ops::Range;
use std::str::FromStr;

use std::io::BufRead;

use super::SweepError;
use super::envelope::Envelope;
use super::file::ResultReader;
use super::run::{CriterionRecord, SweepResult, VariantResult, noise_seed};
use super::space::{Design, Method, SweepPlan};
use super::stream::{Streamed, SweepHeader};
use super::tally::Tally;
use crate::outcome::BackendKind;
use crate::scenario::Scenario;
use crate::undefined::Undefined;

/// Shard `index` of `count` (1-based, `--shard 2/8`): a contiguous slice
/// of the variant indices.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Shard {
    /// Which shard, 1..=`count`.
    pub index: usize,
    /// How many shards.
    pub count: usize,
}

impl Shard {
    /// The variant indices of this shard out of `total`: shard `i` of `n`
    /// gets `[⌊(i−1)·total/n⌋, ⌊i·total/n⌋)`, so the shards tile the sweep.
    ///
    /// ```
    /// use evenkeel_harness::sweep::Shard;
    /// let s: Shard = "2/3".parse()?;
    /// assert_eq!(s.range(10), 3..6);
    /// assert_eq!("3/3".parse::<Shard>()?.range(10), 6..10);
    /// # Ok::<(), evenkeel_harness::sweep::SweepError>(())
    /// ```
    #[must_use]
    pub fn range(self, total: usize) -> Range<usize> {
        // u128: no overflow for any usize total and count.
        let at = |i: usize| {
            usize::try_from(i as u128 * total as u128 / self.count.max(1) as u128).unwrap_or(total)
        };
        at(self.index - 1)..at(self.index)
    }
}

impl FromStr for Shard {
    type Err = SweepError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let bad = || SweepError::Shard(s.to_owned());
        let (i, n) = s.split_once('/').ok_or_else(bad)?;
        let index: usize = i.trim().parse().map_err(|_| bad())?;
        let count: usize = n.trim().parse().map_err(|_| bad())?;
        if index == 0 || index > count {
            return Err(bad());
        }
        Ok(Self { index, count })
    }
}

impl fmt::Display for Shard {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}/{}", self.index, self.count)
    }
}

/// A hash (64-bit FNV-1a, hex) of everything in `scenario` that affects a
/// variant's result; the file path is left out so shards may run from
/// different checkouts.
#[must_use]
pub fn fingerprint(scenario: &Scenario) -> String {
    let mut s = scenario.clone();
    s.source = String::new();
    let text = format!("{s:?}");
    // FNV-1a (Fowler, Noll, Vo; offset basis and prime from memory).
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in text.bytes() {
        h ^= u64::from(b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    format!("{h:016x}")
}

/// Combines shard results into the result of the whole sweep: the same
/// value, field for field, as one unsharded run.
///
/// # Errors
/// [`SweepError::Merge`] when the parts belong to different sweeps
/// (scenario fingerprint, backend, method, seed, size) or do not cover
/// every variant exactly once.
pub fn merge(mut parts: Vec<SweepResult>) -> Result<SweepResult, SweepError> {
    let Some(first) = parts.first() else {
        return Err(SweepError::Merge("no result files given".into()));
    };
    let key = |r: &SweepResult| {
        (
            r.fingerprint.clone(),
            r.backend.clone(),
            r.method.clone(),
            r.seed,
            r.total,
            r.params.clone(),
        )
    };
    let want = key(first);
    for p in &parts {
        if key(p) != want {
            return Err(SweepError::Merge(format!(
                "`{}` ({}, {} backend, {} seed {}, {} variants) is not the same sweep as `{}` ({}, {} backend, {} seed {}, {} variants)",
                p.scenario,
                p.fingerprint,
                p.backend,
                p.method,
                p.seed,
                p.total,
                first.scenario,
                first.fingerprint,
                first.backend,
                first.method,
                first.seed,
                first.total
            )));
        }
    }
    parts.sort_by_key(|p| p.variants.first().map_or(usize::MAX, |v| v.index));
    let mut whole = parts.remove(0);
    for p in parts {
        whole.envelope.combine(&p.envelope);
        whole.variants.extend(p.variants);
    }
    whole.variants.sort_by_key(|v| v.index);
    for (expected, v) in whole.variants.iter().enumerate() {
        if v.index != expected {
            let what = if v.index < expected {
                format!("variant {} appears twice", v.index)
            } else {
                format!("variant {expected} is missing")
            };
            return Err(SweepError::Merge(what));
        }
    }
    if whole.variants.len() != whole.total {
        return Err(SweepError::Merge(format!(
            "variants {}..{} are missing",
            whole.variants.len(),
            whole.total
        )));
    }
    whole.shard = None;
    Ok(whole)
}

/// The sweep plan a result header describes.
fn plan_of(h: &SweepHeader) -> Result<SweepPlan, String> {
    let method =
        Method::from_name(&h.method).ok_or_else(|| format!("unknown method `{}`", h.method))?;
    Ok(SweepPlan {
        method,
        count: h.total,
        levels: h.levels,
        seed: h.seed,
    })
}

/// Checks that `header` describes a sweep of `scenario` that is possible
/// at all: same fingerprint, parameters and criteria, a size the plan
/// gives.
fn header_fits(h: &SweepHeader, scenario: &Scenario) -> Result<SweepPlan, String> {
    if h.fingerprint != fingerprint(scenario) {
        return Err(format!(
            "it is a sweep of another scenario or of an earlier version of {} (fingerprint {} against {})",
            scenario.source,
            h.fingerprint,
            fingerprint(scenario)
        ));
    }
    let want = SweepHeader::new(
        scenario,
        &plan_of(h)?,
        BackendKind::from_name(&h.backend)
            .ok_or_else(|| format!("unknown backend `{}`", h.backend))?,
        h.total,
        None,
    );
    if h.params != want.params {
        return Err(format!(
            "its parameters {:?} are not the scenario's {:?}",
            h.params, want.params
        ));
    }
    if h.criteria != want.criteria {
        let names = |c: &[CriterionRecord]| {
            c.iter()
                .map(|c| format!("{} {} {}", c.metric, c.bound, c.limit))
                .collect::<Vec<_>>()
                .join(", ")
        };
        return Err(format!(
            "its criteria [{}] are not the scenario's [{}]",
            names(&h.criteria),
            names(&want.criteria)
        ));
    }
    let plan = plan_of(h)?;
    let size = plan.size(h.params.len()).map_err(|e| e.to_string())?;
    if size != h.total {
        return Err(format!(
            "{} variants, but a {} sweep of {} parameters has {size}",
            h.total,
            h.method,
            h.params.len()
        ));
    }
    if let Some((i, n)) = h.shard
        && (i == 0 || i > n)
    {
        return Err(format!("shard {i}/{n} does not exist"));
    }
    Ok(plan)
}

/// Checks one variant line against the scenario and recomputes its
/// verdicts; `Err` says what is wrong.
fn variant_fits(
    v: &VariantResult,
    scenario: &Scenario,
    design: &Design,
    seed: u64,
) -> Result<(), String> {
    let n = scenario.criteria.len();
    if v.measured.len() != n || v.pass.len() != n || v.reasons.len() != n {
        return Err(format!(
            "{} measured values, {} verdicts and {} reasons for {n} criteria",
            v.measured.len(),
            v.pass.len(),
            v.reasons.len()
        ));
    }
    let point = design.point(v.index);
    if v.values.len() != point.len()
        || v.values
            .iter()
            .zip(&point)
            .any(|(a, b)| a.to_bits() != b.to_bits())
    {
        return Err(format!(
            "parameter values {:?}, the sweep's variant {} has {point:?}",
            v.values, v.index
        ));
    }
    if v.seed != noise_seed(seed, v.index) {
        return Err(format!("noise seed {} is not the sweep's", v.seed));
    }
    if v.error.is_some() {
        if v.pass.iter().any(|&p| p) || v.measured.iter().any(Option::is_some) {
            return Err("a variant that could not run has measured values or passes".into());
        }
        return Ok(());
    }
    for (k, c) in scenario.criteria.iter().enumerate() {
        let why = match &v.reasons[k] {
            None => None,
            Some(key) => Some(
                Undefined::from_key(key)
                    .ok_or_else(|| format!("criterion {}: unknown reason `{key}`", c.metric))?,
            ),
        };
        let m = v.measured[k];
        if m.is_some() == why.is_some() {
            return Err(format!(
                "criterion {}: a value must have either a measurement or a reason for being undefined",
                c.metric
            ));
        }
        if m.is_some_and(|x| !x.is_finite()) {
            return Err(format!("criterion {}: not a finite number", c.metric));
        }
        let pass = c.passes(m, why);
        if pass != v.pass[k] {
            return Err(format!(
                "criterion {} {} {}: the file says {}, but the measured value {} gives {}",
                c.metric,
                c.bound.symbol(),
                c.limit,
                if v.pass[k] { "pass" } else { "fail" },
                m.map_or_else(|| "undefined".to_owned(), |x| x.to_string()),
                if pass { "pass" } else { "fail" }
            ));
        }
    }
    Ok(())
}

/// Merges result files (`sweep --save`) of `scenario` read from `files`
/// (name, reader), streaming: every line is checked as it is read and
/// passed to `sink` in index order, so memory does not grow with the
/// number of variants.
///
/// Checks, each refused with the file and line: the format; the header
/// against the scenario (fingerprint, parameters, criteria, a size the
/// method gives) and against the other files (backend, method, seed,
/// size, shard count); the shards present exactly once each and covering
/// every variant; per variant its index, parameter values and noise seed
/// (recomputed from the plan), array lengths, and every verdict
/// recomputed from the measured value (or the reason it is undefined) and
/// the scenario's criterion; the envelope (bucketing, reference, bounds,
/// run count); and the SHA-256 digest of each file.
///
/// # Errors
/// [`SweepError::Merge`] or [`SweepError::Format`] saying what and where;
/// [`SweepError::Write`] if `sink` fails.
pub fn merge_files(
    files: Vec<(String, Box<dyn BufRead>)>,
    scenario: &Scenario,
    sink: &mut dyn FnMut(&VariantResult) -> Result<(), String>,
) -> Result<Streamed, SweepError> {
    if files.is_empty() {
        return Err(SweepError::Merge("no result files given".into()));
    }
    let mut opened = Vec::with_capacity(files.len());
    for (name, input) in files {
        let (reader, header) = ResultReader::open(input, &name).map_err(SweepError::Format)?;
        opened.push((name, reader, header));
    }
    let first = opened[0].2.clone();
    let plan = header_fits(&first, scenario)
        .map_err(|e| SweepError::Merge(format!("{}: {e}", opened[0].0)))?;
    let count = first.shard.map_or(1, |(_, n)| n);
    for (name, _, h) in &opened {
        header_fits(h, scenario).map_err(|e| SweepError::Merge(format!("{name}: {e}")))?;
        let same = h.backend == first.backend
            && h.method == first.method
            && h.seed == first.seed
            && h.levels == first.levels
            && h.total == first.total
            && h.shard.map_or(1, |(_, n)| n) == count;
        if !same {
            return Err(SweepError::Merge(format!(
                "{name} ({} backend, {} seed {}, {} variants, {} shards) is not the same sweep as {} ({} backend, {} seed {}, {} variants, {count} shards)",
                h.backend,
                h.method,
                h.seed,
                h.total,
                h.shard.map_or(1, |(_, n)| n),
                opened[0].0,
                first.backend,
                first.method,
                first.seed,
                first.total
            )));
        }
    }
    opened.sort_by_key(|(_, _, h)| h.shard.map_or(1, |(i, _)| i));
    for (k, (name, _, h)) in opened.iter().enumerate() {
        let i = h.shard.map_or(1, |(i, _)| i);
        if i != k + 1 {
            let what = if i < k + 1 {
                format!("shard {i}/{count} is given twice ({name})")
            } else {
                format!("shard {}/{count} is missing", k + 1)
            };
            return Err(SweepError::Merge(what));
        }
    }
    if opened.len() != count {
        return Err(SweepError::Merge(format!(
            "shards {}..={count} of {count} are missing",
            opened.len() + 1
        )));
    }
    let design = Design::new(&scenario.uncertainty, &plan, first.total);
    let mut header = first.clone();
    header.shard = None;
    header.source.clone_from(&scenario.source);
    let mut tally = Tally::new(&header.criteria);
    let mut envelope: Option<Envelope> = None;
    for (name, mut reader, h) in opened {
        let range = h.range();
        let mut next = range.start;
        let mut ran = 0;
        let bad = |line: usize, what: String| SweepError::Merge(format!("{name}:{line}: {what}"));
        while let Some(v) = reader.next_variant().map_err(SweepError::Format)? {
            let line = next - range.start + 2;
            if v.index != next {
                return Err(bad(
                    line,
                    format!("variant {} where variant {next} belongs", v.index),
                ));
            }
            if !range.contains(&v.index) {
                return Err(bad(
                    line,
                    format!("variant {} is not in this shard", v.index),
                ));
            }
            variant_fits(&v, scenario, &design, h.seed)
                .map_err(|e| bad(line, format!("variant {}: {e}", v.index)))?;
            if v.error.is_none() {
                ran += 1;
            }
            tally.add(&v);
            sink(&v).map_err(SweepError::Write)?;
            next += 1;
        }
        if next != range.end {
            return Err(SweepError::Merge(format!(
                "{name}: variants {next}..{} of this shard are missing",
                range.end
            )));
        }
        let part = reader
            .envelope
            .take()
            .ok_or_else(|| SweepError::Format(format!("{name}: no envelope")))?;
        part.check(scenario, ran)
            .map_err(|e| SweepError::Merge(format!("{name}: {e}")))?;
        match &mut envelope {
            None => envelope = Some(part),
            Some(e) => e.combine(&part),
        }
    }
    let envelope = envelope.unwrap_or_else(|| Envelope::empty(scenario));
    Ok(Streamed {
        header,
        tally,
        envelope,
    })
}
