//! What the plots draw: series reduced to a drawable size, axis ranges and
//! the limits taken from a scenario's criteria.

use std::ops::Range;

use crate::criteria::{Bound, MetricKey, Scope};
use crate::scenario::Scenario;

/// Longest series drawn; longer ones are reduced to per-bucket min and max,
/// which keeps every peak.
pub(crate) const MAX_POINTS: usize = 2400;

/// The limit of criterion `metric` with bound `max`, if the scenario has one.
pub(crate) fn max_limit(scenario: &Scenario, metric: MetricKey) -> Option<f64> {
    scenario
        .criteria
        .iter()
        .find(|c| c.metric == metric && c.bound == Bound::Max && c.scope == Scope::Run)
        .map(|c| c.limit)
}

/// `limit` and its negative (the band `±limit`); empty without a limit.
pub(crate) fn mirrored(limit: Option<f64>) -> Vec<f64> {
    limit.map(|v| vec![v, -v]).unwrap_or_default()
}

/// Units of the first and second time derivative of a signal in `unit`
/// (`m/s` → `m/s²`, `m/s³`; otherwise `unit/s`, `unit/s²`).
pub(crate) fn derivative_units(unit: &str) -> (String, String) {
    let rate = crate::criteria::per_second(unit);
    let change = crate::criteria::per_second(&rate);
    (rate, change)
}

/// `(t, x)` reduced to at most about `MAX_POINTS` points, keeping each
/// bucket's minimum and maximum in time order.
pub(crate) fn reduce(t: &[f64], x: &[f64]) -> Vec<(f64, f64)> {
    let n = t.len().min(x.len());
    let bucket = n.div_ceil(MAX_POINTS / 2).max(1);
    if bucket == 1 {
        return t.iter().copied().zip(x.iter().copied()).collect();
    }
    let mut out = Vec::with_capacity(MAX_POINTS + 2);
    let mut i = 0;
    while i < n {
        let end = (i + bucket).min(n);
        let (mut lo, mut hi) = (i, i);
        for k in i..end {
            if x[k] < x[lo] {
                lo = k;
            }
            if x[k] > x[hi] {
                hi = k;
            }
        }
        let (a, b) = if lo <= hi { (lo, hi) } else { (hi, lo) };
        out.push((t[a], x[a]));
        if b != a {
            out.push((t[b], x[b]));
        }
        i = end;
    }
    out
}

/// Range covering `values` and `extra` with 8 % head room; never empty.
pub(crate) fn span(values: &[&[f64]], extra: &[f64]) -> Range<f64> {
    let all = values
        .iter()
        .flat_map(|v| v.iter())
        .chain(extra)
        .copied()
        .filter(|v| v.is_finite());
    let (lo, hi) = all.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
        (lo.min(v), hi.max(v))
    });
    if !lo.is_finite() {
        return -1.0..1.0;
    }
    let pad = ((hi - lo) * 0.08).max(1e-6 * hi.abs().max(1.0));
    (lo - pad)..(hi + pad)
}

/// Share of a series' samples allowed outside a robust axis range at
/// each end before the range stops growing for them.
const TAIL: f64 = 0.01;

/// The axis range of `values` (with `extra`, e.g. limits, always inside):
/// as [`span`], unless a few samples (at most [`TAIL`] of a series at
/// either end) stretch it to more than three times its height; then the range of the
/// rest, and the few are drawn clipped at the edge and marked. So one
/// out-of-range reading no longer squashes the trajectory.
pub(crate) fn robust_span(values: &[&[f64]], extra: &[f64]) -> Range<f64> {
    let full = span(values, extra);
    let mut kept: Vec<f64> = Vec::new();
    for v in values {
        let mut finite: Vec<f64> = v.iter().copied().filter(|x| x.is_finite()).collect();
        if finite.is_empty() {
            continue;
        }
        finite.sort_by(f64::total_cmp);
        #[allow(
            clippy::cast_possible_truncation,
            clippy::cast_sign_loss,
            clippy::cast_precision_loss
        )]
        let cut = (finite.len() as f64 * TAIL).floor() as usize;
        kept.push(finite[cut]);
        kept.push(finite[finite.len() - 1 - cut]);
    }
    let core = span(&[&kept], extra);
    let (wf, wc) = (full.end - full.start, core.end - core.start);
    if wf > 3.0 * wc { core } else { full }
}

/// Points `(t, y)` of a line.
pub(crate) type Points = Vec<(f64, f64)>;

/// `points` with every value outside `range` moved onto its edge, and the
/// moved points (to be marked as clipped).
pub(crate) fn clamp_points(points: Points, range: &Range<f64>) -> (Points, Points) {
    let mut clipped = Vec::new();
    let inside = points
        .into_iter()
        .map(|(t, y)| {
            if y < range.start || y > range.end {
                let edge = y.clamp(range.start, range.end);
                clipped.push((t, edge));
                (t, edge)
            } else {
                (t, y)
            }
        })
        .collect();
    (inside, clipped)
}

/// `true` when `unit` is a speed (linear or angular): its derivatives are
/// then acceleration and jerk; for any other quantity they are rates.
pub(crate) fn is_motion(unit: &str) -> bool {
    matches!(unit, "m/s" | "rad/s" | "km/h" | "rpm" | "mm/s")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn derivative_units_of_common_signals() {
        let table = [
            ("m/s", ("m/s²", "m/s³")),
            ("rad/s", ("rad/s²", "rad/s³")),
            ("1", ("1/s", "1/s²")),
            ("kPa", ("kPa/s", "kPa/s²")),
        ];
        for (unit, (rate, jerk)) in table {
            assert_eq!(
                derivative_units(unit),
                (rate.to_owned(), jerk.to_owned()),
                "{unit}"
            );
        }
    }

    #[test]
    fn mirrored_limits() {
        assert_eq!(mirrored(Some(2.5)), [2.5, -2.5]);
        assert!(mirrored(None).is_empty());
    }

    #[test]
    fn one_outlier_is_clipped_and_a_real_excursion_is_not() {
        let mut y: Vec<f64> = (0..1000).map(|i| f64::from(i) / 1000.0).collect();
        // Without an outlier the range is the plain span.
        assert_eq!(robust_span(&[&y], &[]), span(&[&y], &[]));
        y[500] = 1000.0;
        let r = robust_span(&[&y], &[]);
        assert!(r.end < 1.2 && r.start > -0.2, "{r:?}");
        let (inside, clipped) = clamp_points(vec![(0.5, 1000.0), (0.6, 0.6)], &r);
        assert_eq!(clipped, vec![(0.5, r.end)]);
        assert_eq!(inside[1], (0.6, 0.6));
        // A limit passed as `extra` is always inside.
        let r = robust_span(&[&y], &[5.0]);
        assert!(r.end > 5.0);
        // Many samples out there are the signal, not an outlier.
        y[500] = 0.5;
        for v in y.iter_mut().skip(900) {
            *v = 10.0;
        }
        assert_eq!(robust_span(&[&y], &[]), span(&[&y], &[]));
    }

    #[test]
    fn reduction_keeps_peaks() {
        let t: Vec<f64> = (0..10_000).map(|i| f64::from(i) * 0.01).collect();
        let mut x = vec![0.0; 10_000];
        x[4321] = 7.0;
        x[8765] = -3.0;
        let r = reduce(&t, &x);
        assert!(r.len() <= MAX_POINTS + 2);
        assert!(r.contains(&(t[4321], 7.0)));
        assert!(r.contains(&(t[8765], -3.0)));
        assert!(r.windows(2).all(|w| w[0].0 <= w[1].0));
    }
}
