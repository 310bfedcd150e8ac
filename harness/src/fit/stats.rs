//! The statistics of a fit: parameter covariance from the Jacobian at the
//! optimum, confidence intervals, and the whiteness of the residuals.

use super::lm::{inverse, normal};

/// Two-sided 95 % quantile of Student's t for 1..=30 degrees of freedom
/// (standard table values, e.g. Abramowitz & Stegun, *Handbook of
/// Mathematical Functions*, table 26.10; from memory); above 30 the
/// normal 1.959964.
const T975: [f64; 30] = [
    12.706, 4.303, 3.182, 2.776, 2.571, 2.447, 2.365, 2.306, 2.262, 2.228, 2.201, 2.179, 2.160,
    2.145, 2.131, 2.120, 2.110, 2.101, 2.093, 2.086, 2.080, 2.074, 2.069, 2.064, 2.060, 2.056,
    2.052, 2.048, 2.045, 2.042,
];

/// The confidence level of every interval `fit` reports.
pub const CONFIDENCE: f64 = 0.95;

/// The 97.5 % quantile of Student's t with `dof` degrees of freedom.
///
/// ```
/// use evenkeel_harness::fit::t_quantile_975;
/// assert_eq!(t_quantile_975(10), 2.228);
/// assert_eq!(t_quantile_975(1000), 1.959964);
/// ```
#[must_use]
pub fn t_quantile_975(dof: usize) -> f64 {
    match dof {
        0 => f64::INFINITY,
        1..=30 => T975[dof - 1],
        _ => 1.959_964,
    }
}

/// Covariance of the parameters `σ²·(JᵀJ)⁻¹` with `σ² = SSR/(N − p)`
/// (the usual linearised estimate, e.g. Seber & Wild, *Nonlinear
/// Regression*, 1989, §5.1; from memory); `None` if `JᵀJ` is singular
/// or there are no spare degrees of freedom.
#[must_use]
pub fn covariance(jacobian: &[Vec<f64>], residuals: &[f64]) -> Option<Vec<Vec<f64>>> {
    let n = residuals.len();
    let p = jacobian.first().map_or(0, Vec::len);
    if n <= p {
        return None;
    }
    let (a, _) = normal(jacobian, residuals);
    let inv = inverse(&a)?;
    #[allow(clippy::cast_precision_loss)]
    let s2 = residuals.iter().map(|r| r * r).sum::<f64>() / (n - p) as f64;
    Some(
        inv.iter()
            .map(|row| row.iter().map(|v| v * s2).collect())
            .collect(),
    )
}

/// The 95 % quantile of the χ² distribution with `k` degrees of freedom,
/// by the Wilson–Hilferty cube approximation (Wilson & Hilferty, PNAS 17,
/// 1931): `k·(1 − 2/(9k) + z·√(2/(9k)))³`, `z = 1.644854`. Within 0.1 % of
/// table values for k ≥ 5 (e.g. 31.41 for k = 20; from memory).
///
/// ```
/// use evenkeel_harness::fit::chi_square_95;
/// assert!((chi_square_95(20) - 31.41).abs() < 0.03);
/// assert!((chi_square_95(10) - 18.31).abs() < 0.03);
/// ```
#[must_use]
pub fn chi_square_95(k: usize) -> f64 {
    #[allow(clippy::cast_precision_loss)]
    let k = k as f64;
    let z = 1.644_854;
    let a = 2.0 / (9.0 * k);
    k * (1.0 - a + z * a.sqrt()).powi(3)
}

/// The whiteness test of a fit's residuals.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Whiteness {
    /// Lags tested.
    pub lags: usize,
    /// The Ljung–Box statistic `Q = N(N + 2)·Σ ρ_k²/(N − k)` (Ljung & Box,
    /// Biometrika 65, 1978).
    pub q: f64,
    /// The χ² 95 % quantile with `lags` degrees of freedom.
    pub critical: f64,
    /// Largest |ρ_k| over the lags.
    pub max_autocorrelation: f64,
}

impl Whiteness {
    /// `true` when the residuals pass as white at the 5 % level: what is
    /// left is noise, not unmodelled dynamics.
    #[must_use]
    pub fn white(&self) -> bool {
        self.q <= self.critical
    }
}

/// The Ljung–Box test of `residuals` over `min(20, N/4)` lags.
#[must_use]
pub fn whiteness(residuals: &[f64]) -> Whiteness {
    let n = residuals.len();
    let lags = (n / 4).clamp(1, 20);
    #[allow(clippy::cast_precision_loss)]
    let nf = n as f64;
    let mean = residuals.iter().sum::<f64>() / nf.max(1.0);
    let c0: f64 = residuals.iter().map(|r| (r - mean).powi(2)).sum();
    let mut q = 0.0;
    let mut max_rho = 0.0f64;
    for k in 1..=lags {
        let ck: f64 = residuals
            .iter()
            .zip(&residuals[k..])
            .map(|(a, b)| (a - mean) * (b - mean))
            .sum();
        let rho = if c0 > 0.0 { ck / c0 } else { 0.0 };
        max_rho = max_rho.max(rho.abs());
        #[allow(clippy::cast_precision_loss)]
        {
            q += rho * rho / (nf - k as f64);
        }
    }
    Whiteness {
        lags,
        q: nf * (nf + 2.0) * q,
        critical: chi_square_95(lags),
        max_autocorrelation: max_rho,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn covariance_of_a_straight_line_fit_worked_by_hand() {
        // y = a + b·x at x = 0, 1, 2, 3 with residuals ±0.1: JᵀJ =
        // [[4, 6], [6, 14]], its inverse [[0.7, −0.3], [−0.3, 0.2]];
        // σ² = 4·0.01/(4 − 2) = 0.02.
        let jac = vec![
            vec![1.0, 0.0],
            vec![1.0, 1.0],
            vec![1.0, 2.0],
            vec![1.0, 3.0],
        ];
        let r = [0.1, -0.1, 0.1, -0.1];
        let c = covariance(&jac, &r).unwrap();
        assert!((c[0][0] - 0.014).abs() < 1e-15, "{c:?}");
        assert!((c[0][1] + 0.006).abs() < 1e-15);
        assert!((c[1][1] - 0.004).abs() < 1e-15);
    }

    #[test]
    fn alternating_residuals_are_not_white_a_seeded_noise_is() {
        let alternating: Vec<f64> = (0..200)
            .map(|k| if k % 2 == 0 { 1.0 } else { -1.0 })
            .collect();
        assert!(!whiteness(&alternating).white());
        // A SplitMix64 sequence mapped to [−0.5, 0.5): white.
        let noise: Vec<f64> = (0..400u64)
            .map(|k| {
                #[allow(clippy::cast_precision_loss)]
                let u = (crate::sweep::splitmix64(k) >> 11) as f64 / (1u64 << 53) as f64;
                u - 0.5
            })
            .collect();
        let w = whiteness(&noise);
        assert!(w.white(), "{w:?}");
        assert_eq!(w.lags, 20);
    }
}
