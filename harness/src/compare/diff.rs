//! Difference statistics of two time series sampled at the same instants,
//! and the first sample where the two controllers took different branches.

use evenkeel::Status;

/// Largest and RMS difference of `fixed − f64` over a run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DiffStats {
    /// Largest `|fixed − f64|`.
    pub max_abs: f64,
    /// Sample index of the largest difference (the first, on ties).
    pub index_of_max: usize,
    /// Time of the largest difference, s.
    pub time_of_max_s: f64,
    /// Root mean square of `fixed − f64` over every sample.
    pub rms: f64,
}

/// Statistics of `fixed[k] − float[k]` over the common length of the
/// series; all zero for empty series.
///
/// ```
/// use evenkeel_harness::compare::diff_stats;
/// let t = [0.0, 0.1, 0.2, 0.3];
/// let d = diff_stats(&t, &[1.0, 2.0, 3.0, 4.0], &[1.0, 2.5, 3.0, 4.0]);
/// assert_eq!((d.max_abs, d.index_of_max, d.time_of_max_s), (0.5, 1, 0.1));
/// assert_eq!(d.rms, 0.25); // sqrt(0.25 / 4)
/// ```
#[must_use]
pub fn diff_stats(time_s: &[f64], fixed: &[f64], float: &[f64]) -> DiffStats {
    let mut out = DiffStats {
        max_abs: 0.0,
        index_of_max: 0,
        time_of_max_s: time_s.first().copied().unwrap_or(0.0),
        rms: 0.0,
    };
    let mut sum_sq = 0.0;
    let mut n = 0_u32;
    for (k, ((&t, &a), &b)) in time_s.iter().zip(fixed).zip(float).enumerate() {
        let d = a - b;
        sum_sq += d * d;
        n += 1;
        if d.abs() > out.max_abs {
            out.max_abs = d.abs();
            out.index_of_max = k;
            out.time_of_max_s = t;
        }
    }
    if n > 0 {
        out.rms = (sum_sq / f64::from(n)).sqrt();
    }
    out
}

/// The first sample where the controllers reported different status flags
/// (a limit, the deadband or the conditional integration decided
/// differently). From there on the per-sample bound of `FORMATS.md` §4 no
/// longer holds: the trajectories may part by more than rounding.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Divergence {
    /// Sample index.
    pub index: usize,
    /// Status of the fixed-point controller there.
    pub fixed: Status,
    /// Status of the `f64` controller there.
    pub float: Status,
}

/// The first index where `fixed` and `float` differ, if any.
///
/// ```
/// use evenkeel::Status;
/// use evenkeel_harness::compare::first_divergence;
/// let a = [Status::NONE, Status::SLEW, Status::NONE];
/// let b = [Status::NONE, Status::NONE, Status::NONE];
/// assert_eq!(first_divergence(&a, &b).map(|d| d.index), Some(1));
/// assert_eq!(first_divergence(&a, &a), None);
/// ```
#[must_use]
pub fn first_divergence(fixed: &[Status], float: &[Status]) -> Option<Divergence> {
    fixed
        .iter()
        .zip(float)
        .position(|(a, b)| a != b)
        .map(|index| Divergence {
            index,
            fixed: fixed[index],
            float: float[index],
        })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn empty_and_unequal_lengths() {
        let d = diff_stats(&[], &[], &[]);
        assert_eq!((d.max_abs, d.rms), (0.0, 0.0));
        // Only the common length counts.
        let d = diff_stats(&[0.0, 1.0, 2.0], &[0.0, -3.0], &[0.0, 1.0, 9.0]);
        assert_eq!((d.max_abs, d.time_of_max_s), (4.0, 1.0));
        assert!((d.rms - 8f64.sqrt()).abs() < 1e-15);
    }
}
