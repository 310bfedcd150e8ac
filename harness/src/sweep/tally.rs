//! Sweep results aggregated as they arrive: per criterion the pass count
//! and the worst variant, the variant worst overall. Memory does not grow
//! with the number of variants, and the result does not depend on the
//! order they arrive in (ties go to the lowest index), so shards merge
//! into exactly the tally of one run.

use serde::{Deserialize, Serialize};

use super::run::{CriterionRecord, VariantResult};

/// A variant as the reports name it: index, sensor-noise seed, values.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct VariantPoint {
    /// Index in the sweep (0-based).
    pub index: usize,
    /// Sensor-noise seed it ran with.
    pub seed: u64,
    /// Parameter values, in the order of the sweep's parameters.
    pub values: Vec<f64>,
    /// `true` when it met every criterion.
    pub passed: bool,
}

impl VariantPoint {
    fn of(v: &VariantResult) -> Self {
        Self {
            index: v.index,
            seed: v.seed,
            values: v.values.clone(),
            passed: v.passed(),
        }
    }
}

/// The worst variant seen for one ranking.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Worst {
    /// Relative excess over the limit (+∞: undefined).
    pub excess: f64,
    /// Its measured value (`None`: undefined).
    pub measured: Option<f64>,
    /// Why it is undefined, when it is.
    pub reason: Option<String>,
    /// The variant.
    pub variant: VariantPoint,
}

impl Worst {
    /// `true` when `(excess, index)` ranks worse than `self`: a larger
    /// excess, or the same and a lower index.
    fn beaten_by(&self, excess: f64, index: usize) -> bool {
        excess > self.excess || (excess == self.excess && index < self.variant.index)
    }
}

/// One criterion over the variants seen.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CriterionTally {
    /// The criterion.
    pub criterion: CriterionRecord,
    /// Variants that met it.
    pub passed: usize,
    /// Variants seen.
    pub total: usize,
    /// The worst variant (largest excess; lowest index on ties).
    pub worst: Option<Worst>,
}

/// The aggregate of the variants of a sweep (or a shard of it).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Tally {
    /// Per criterion, in scenario order.
    pub criteria: Vec<CriterionTally>,
    /// Variants seen.
    pub total: usize,
    /// Variants that met every criterion.
    pub passed: usize,
    /// Variants that could not run.
    pub errors: usize,
    /// The first error message, with its variant index.
    pub first_error: Option<(usize, String)>,
    /// The variant furthest beyond its limits over all criteria.
    pub worst: Option<Worst>,
}

/// How far `measured` lies beyond `c`'s limit, relative to the limit
/// (negative: inside). Undefined (and NaN) is +∞.
#[must_use]
pub fn excess(c: &CriterionRecord, measured: Option<f64>) -> f64 {
    let Some(m) = measured.filter(|m| !m.is_nan()) else {
        return f64::INFINITY;
    };
    let scale = c.limit.abs().max(1e-12);
    if c.bound == "min" {
        (c.limit - m) / scale
    } else {
        (m - c.limit) / scale
    }
}

impl Tally {
    /// Nothing seen yet, for `criteria`.
    #[must_use]
    pub fn new(criteria: &[CriterionRecord]) -> Self {
        Self {
            criteria: criteria
                .iter()
                .map(|c| CriterionTally {
                    criterion: c.clone(),
                    passed: 0,
                    total: 0,
                    worst: None,
                })
                .collect(),
            total: 0,
            passed: 0,
            errors: 0,
            first_error: None,
            worst: None,
        }
    }

    /// Counts one variant.
    pub fn add(&mut self, v: &VariantResult) {
        self.total += 1;
        if v.passed() {
            self.passed += 1;
        }
        if let Some(e) = &v.error {
            self.errors += 1;
            if self.first_error.as_ref().is_none_or(|(i, _)| v.index < *i) {
                self.first_error = Some((v.index, e.clone()));
            }
        }
        let mut overall = f64::NEG_INFINITY;
        for (k, c) in self.criteria.iter_mut().enumerate() {
            c.total += 1;
            if v.error.is_none() && v.pass.get(k).copied().unwrap_or(false) {
                c.passed += 1;
            }
            let measured = v.measured.get(k).copied().flatten();
            let e = excess(&c.criterion, measured);
            overall = overall.max(e);
            if c.worst.as_ref().is_none_or(|w| w.beaten_by(e, v.index)) {
                c.worst = Some(Worst {
                    excess: e,
                    measured,
                    reason: v.reason(k),
                    variant: VariantPoint::of(v),
                });
            }
        }
        if self
            .worst
            .as_ref()
            .is_none_or(|w| w.beaten_by(overall, v.index))
        {
            self.worst = Some(Worst {
                excess: overall,
                measured: None,
                reason: None,
                variant: VariantPoint::of(v),
            });
        }
    }

    /// Adds the tally of other variants of the same sweep.
    pub fn combine(&mut self, other: &Self) {
        self.total += other.total;
        self.passed += other.passed;
        self.errors += other.errors;
        if let Some((i, e)) = &other.first_error
            && self.first_error.as_ref().is_none_or(|(j, _)| i < j)
        {
            self.first_error = Some((*i, e.clone()));
        }
        for (a, b) in self.criteria.iter_mut().zip(&other.criteria) {
            a.passed += b.passed;
            a.total += b.total;
            if let Some(w) = &b.worst
                && a.worst
                    .as_ref()
                    .is_none_or(|x| x.beaten_by(w.excess, w.variant.index))
            {
                a.worst = Some(w.clone());
            }
        }
        if let Some(w) = &other.worst
            && self
                .worst
                .as_ref()
                .is_none_or(|x| x.beaten_by(w.excess, w.variant.index))
        {
            self.worst = Some(w.clone());
        }
    }

    /// `true` when variants were seen and every one met every criterion.
    #[must_use]
    pub fn all_passed(&self) -> bool {
        self.total > 0 && self.passed == self.total
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn record(bound: &str, limit: f64) -> CriterionRecord {
        CriterionRecord {
            metric: "iae".into(),
            bound: bound.into(),
            limit,
            source: None,
        }
    }

    fn variant(index: usize, measured: Option<f64>, pass: bool) -> VariantResult {
        VariantResult {
            index,
            seed: index as u64,
            values: vec![index as f64],
            measured: vec![measured],
            pass: vec![pass],
            reasons: vec![measured.is_none().then(|| "never moved".to_owned())],
            load_shifts: 0,
            error: None,
        }
    }

    /// Any order of arrival, any split into parts: the same tally.
    #[test]
    fn order_and_parts_do_not_matter() {
        let c = [record("max", 2.0)];
        let vs = [
            variant(0, Some(1.0), true),
            variant(1, Some(3.0), false),
            variant(2, Some(3.0), false),
            variant(3, None, false),
            variant(4, Some(0.5), true),
        ];
        let mut forward = Tally::new(&c);
        vs.iter().for_each(|v| forward.add(v));
        let mut backward = Tally::new(&c);
        vs.iter().rev().for_each(|v| backward.add(v));
        assert_eq!(forward, backward);
        let (mut a, mut b) = (Tally::new(&c), Tally::new(&c));
        vs[3..].iter().for_each(|v| a.add(v));
        vs[..3].iter().for_each(|v| b.add(v));
        a.combine(&b);
        assert_eq!(a, forward);
        assert_eq!((forward.passed, forward.total), (2, 5));
        let w = forward.criteria[0].worst.as_ref().unwrap();
        // Undefined is worst, with its reason.
        assert_eq!((w.variant.index, w.measured), (3, None));
        assert_eq!(w.reason.as_deref(), Some("never moved"));
        // Between equal excesses the lower index wins.
        let mut t = Tally::new(&c);
        t.add(&vs[2]);
        t.add(&vs[1]);
        assert_eq!(t.criteria[0].worst.as_ref().unwrap().variant.index, 1);
    }
}
