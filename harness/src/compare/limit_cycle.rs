//! Quantization limit cycles: a small, exactly repeating oscillation the
//! fixed-point loop settles into where the `f64` loop comes to rest.
//!
//! A loop with a quantizer in it (here the Q16.16 rounding of measurement,
//! products and command) cannot settle where the exact equilibrium lies
//! between two grid values; with integral action or a slow plant it hunts
//! between neighbouring values instead (Oppenheim & Schafer, *Discrete-Time
//! Signal Processing*, on zero-input and overflow limit cycles of
//! fixed-point filters, from memory; Franklin, Powell & Workman, *Digital
//! Control of Dynamic Systems*, ch. on quantization effects, from memory).
//!
//! Detection, on a window where reference and disturbances are constant:
//! remove the straight-line trend, compute the normalised autocorrelation
//! `c(P) = Σ x_k x_{k+P} / sqrt(Σ x_k² · Σ x_{k+P}²)` for lags `P ≥ 2`, and
//! report the smallest lag where `c` has a local maximum of at least
//! [`Detector::min_correlation`] as the period. A signal that is constant
//! to within [`Detector::min_peak_to_peak`], white noise (no correlation)
//! and a slow drift or decay (correlation falls with the lag, no local
//! maximum) are not limit cycles.

/// Detection thresholds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Detector {
    /// Peak-to-peak variation below which the signal counts as constant
    /// (fixed point: half an LSB, so a command resting on one value is not
    /// a cycle).
    pub min_peak_to_peak: f64,
    /// Smallest normalised autocorrelation at the period, in (0, 1].
    pub min_correlation: f64,
    /// The period must fit this many times into the window (≥ 2).
    pub min_repeats: usize,
    /// Longest period searched, samples (bounds the cost on long windows).
    pub max_period: usize,
}

impl Default for Detector {
    /// Half a Q16.16 LSB, correlation 0.8, three repeats, 1024 samples.
    fn default() -> Self {
        Self {
            min_peak_to_peak: f64::powi(2.0, -17),
            min_correlation: 0.8,
            min_repeats: 3,
            max_period: 1024,
        }
    }
}

/// A detected limit cycle.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LimitCycle {
    /// Period in samples (≥ 2).
    pub period_samples: usize,
    /// Period, s.
    pub period_s: f64,
    /// Amplitude: half the peak-to-peak variation over the window.
    pub amplitude: f64,
    /// Normalised autocorrelation at the period.
    pub correlation: f64,
}

/// Half the peak-to-peak variation of `x` (0 when empty).
///
/// ```
/// assert_eq!(evenkeel_harness::compare::half_peak_to_peak(&[1.0, 3.0, 2.0]), 1.0);
/// ```
#[must_use]
pub fn half_peak_to_peak(x: &[f64]) -> f64 {
    let (lo, hi) = x
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &v| {
            (lo.min(v), hi.max(v))
        });
    if lo.is_finite() { (hi - lo) / 2.0 } else { 0.0 }
}

/// The limit cycle in `x` (sampled every `dt_s`), if there is one.
///
/// ```
/// use evenkeel_harness::compare::{detect_limit_cycle, Detector};
/// let q = f64::powi(2.0, -16);
/// // One LSB up for 3 samples, down for 3: period 6.
/// let x: Vec<f64> = (0..60).map(|k| if k % 6 < 3 { 0.5 + q } else { 0.5 }).collect();
/// let lc = detect_limit_cycle(&x, 0.01, &Detector::default()).ok_or("none")?;
/// assert_eq!(lc.period_samples, 6);
/// assert_eq!(lc.amplitude, q / 2.0);
/// assert!(detect_limit_cycle(&[0.5; 60], 0.01, &Detector::default()).is_none());
/// # Ok::<(), &str>(())
/// ```
#[must_use]
pub fn detect_limit_cycle(x: &[f64], dt_s: f64, det: &Detector) -> Option<LimitCycle> {
    let n = x.len();
    let repeats = det.min_repeats.max(2);
    let longest = (n / repeats).min(det.max_period);
    if longest < 2 || 2.0 * half_peak_to_peak(x) < det.min_peak_to_peak {
        return None;
    }
    let r = detrend(x);
    // A straight line (a drift) leaves only rounding noise behind.
    if 2.0 * half_peak_to_peak(&r) < det.min_peak_to_peak {
        return None;
    }
    let corr = |p: usize| -> f64 {
        let (mut xy, mut xx, mut yy) = (0.0, 0.0, 0.0);
        for (a, b) in r.iter().zip(&r[p..]) {
            xy += a * b;
            xx += a * a;
            yy += b * b;
        }
        if xx > 0.0 && yy > 0.0 {
            xy / (xx * yy).sqrt()
        } else {
            0.0
        }
    };
    let mut before = corr(1);
    let mut here = corr(2);
    for p in 2..=longest {
        let after = if p < n - 1 {
            corr(p + 1)
        } else {
            f64::NEG_INFINITY
        };
        if here >= det.min_correlation && here >= before && here >= after {
            #[allow(clippy::cast_precision_loss)] // periods are small
            return Some(LimitCycle {
                period_samples: p,
                period_s: p as f64 * dt_s,
                amplitude: half_peak_to_peak(x),
                correlation: here,
            });
        }
        before = here;
        here = after;
    }
    None
}

/// `x` minus its least-squares straight line.
fn detrend(x: &[f64]) -> Vec<f64> {
    #[allow(clippy::cast_precision_loss)] // window lengths are far below 2^53
    let n = x.len() as f64;
    let mean_k = (n - 1.0) / 2.0;
    let mean_x = x.iter().sum::<f64>() / n;
    let (mut sxy, mut sxx) = (0.0, 0.0);
    for (k, &v) in x.iter().enumerate() {
        #[allow(clippy::cast_precision_loss)]
        let dk = k as f64 - mean_k;
        sxy += dk * (v - mean_x);
        sxx += dk * dk;
    }
    let slope = if sxx > 0.0 { sxy / sxx } else { 0.0 };
    x.iter()
        .enumerate()
        .map(|(k, &v)| {
            #[allow(clippy::cast_precision_loss)]
            let dk = k as f64 - mean_k;
            v - mean_x - slope * dk
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    const Q: f64 = 1.0 / 65_536.0;

    #[test]
    fn finds_period_two_and_long_periods() {
        let alt: Vec<f64> = (0..40).map(|k| f64::from(k % 2) * Q).collect();
        let lc = detect_limit_cycle(&alt, 0.5, &Detector::default()).unwrap();
        assert_eq!((lc.period_samples, lc.period_s), (2, 1.0));
        // A 1-LSB pulse every 17 samples (a sigma-delta-like pattern).
        let pulses: Vec<f64> = (0..200)
            .map(|k| 3.0 + if k % 17 == 0 { Q } else { 0.0 })
            .collect();
        let lc = detect_limit_cycle(&pulses, 0.01, &Detector::default()).unwrap();
        assert_eq!(lc.period_samples, 17);
    }

    #[test]
    fn ignores_drift_decay_and_noise() {
        let d = Detector::default();
        let ramp: Vec<f64> = (0..300).map(|k| f64::from(k) * 1e-3).collect();
        assert!(detect_limit_cycle(&ramp, 0.01, &d).is_none());
        let decay: Vec<f64> = (0..300).map(|k| (-f64::from(k) / 80.0).exp()).collect();
        assert!(detect_limit_cycle(&decay, 0.01, &d).is_none());
        // Deterministic pseudo-random noise (a linear congruential sequence).
        let mut s: u64 = 12_345;
        let noise: Vec<f64> = (0..600)
            .map(|_| {
                s = s
                    .wrapping_mul(6_364_136_223_846_793_005)
                    .wrapping_add(1_442_695_040_888_963_407);
                #[allow(clippy::cast_precision_loss)]
                let v = (s >> 11) as f64 / (1u64 << 53) as f64;
                v - 0.5
            })
            .collect();
        assert!(detect_limit_cycle(&noise, 0.01, &d).is_none());
        // Too short for three repeats of any period ≥ 2.
        assert!(detect_limit_cycle(&[0.0, Q, 0.0, Q, 0.0], 0.01, &d).is_none());
    }
}
