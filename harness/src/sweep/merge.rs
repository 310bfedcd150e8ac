//! Scale-out without cluster code: deterministic shards that any CI matrix
//! or batch scheduler runs, and a merge of their result files into the
//! result of one run.

use std::fmt;
use std::ops::Range;
use std::str::FromStr;

use super::SweepError;
use super::run::SweepResult;
use crate::scenario::Scenario;

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
