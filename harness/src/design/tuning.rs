//! Published PI tuning rules, by their usual names.
//!
//! - **SIMC** (Skogestad, "Simple analytic rules for model reduction and
//!   PID controller tuning", J. Process Control 13 (2003) 291–309), with
//!   its half rule for model reduction;
//! - **pole placement** of the continuous closed loop for the first-order
//!   and the integrating model (e.g. Åström & Hägglund, *Advanced PID
//!   Control*, 2006, §6; from memory).

/// A first-order-plus-delay model `k·e^(−θs)/(τ₁s + 1)`, or integrating
/// `k·e^(−θs)/s` when `tau1_s` is infinite.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Fopdt {
    /// Gain k (integrating: k', output rate per command).
    pub gain: f64,
    /// Dominant time constant τ₁, s (`f64::INFINITY`: integrating).
    pub tau1_s: f64,
    /// Effective delay θ, s.
    pub delay_s: f64,
}

/// Skogestad's half rule: the largest neglected lag is split evenly
/// between τ₁ and the delay, the others (and `delays`) add to the delay.
///
/// ```
/// use evenkeel_harness::design::half_rule;
/// // 1/((s + 1)(0.2s + 1)) e^(−0.1s): τ₁ = 1.1, θ = 0.2.
/// let m = half_rule(1.0, 1.0, &[0.2], &[0.1]);
/// assert!((m.tau1_s - 1.1).abs() < 1e-12 && (m.delay_s - 0.2).abs() < 1e-12);
/// ```
#[must_use]
pub fn half_rule(gain: f64, tau1_s: f64, lags_s: &[f64], delays_s: &[f64]) -> Fopdt {
    let mut lags: Vec<f64> = lags_s.iter().copied().filter(|t| *t > 0.0).collect();
    lags.sort_by(|a, b| b.total_cmp(a));
    let mut tau1 = tau1_s;
    let mut delay: f64 = delays_s.iter().sum();
    for (i, t) in lags.iter().enumerate() {
        if i == 0 {
            tau1 += t / 2.0;
            delay += t / 2.0;
        } else {
            delay += t;
        }
    }
    Fopdt {
        gain,
        tau1_s: tau1,
        delay_s: delay,
    }
}

/// PI settings in the ideal (parallel) form used by `evenkeel`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pi {
    /// Kp.
    pub kp: f64,
    /// Integral time Ti = Kp/Ki, s.
    pub ti_s: f64,
}

impl Pi {
    /// Ki = Kp/Ti.
    #[must_use]
    pub fn ki(&self) -> f64 {
        self.kp / self.ti_s
    }
}

/// SIMC PI settings for closed-loop time constant `tau_c_s`:
/// `Kc = τ₁/(k·(τc + θ))`, `τI = min(τ₁, 4·(τc + θ))`; integrating:
/// `Kc = 1/(k'·(τc + θ))`, `τI = 4·(τc + θ)` (Skogestad 2003, eqs. for
/// first-order and integrating processes; from memory).
///
/// ```
/// use evenkeel_harness::design::{simc, Fopdt};
/// let pi = simc(&Fopdt { gain: 1.0, tau1_s: 2.5, delay_s: 1.47 }, 1.47);
/// assert!((pi.kp - 0.850).abs() < 1e-3 && pi.ti_s == 2.5);
/// ```
#[must_use]
pub fn simc(m: &Fopdt, tau_c_s: f64) -> Pi {
    let sum = tau_c_s + m.delay_s;
    if m.tau1_s.is_finite() {
        Pi {
            kp: m.tau1_s / (m.gain * sum),
            ti_s: m.tau1_s.min(4.0 * sum),
        }
    } else {
        Pi {
            kp: 1.0 / (m.gain * sum),
            ti_s: 4.0 * sum,
        }
    }
}

/// PI gains placing the poles of the continuous closed loop (no delay) at
/// `s² + 2ζω₀s + ω₀²`:
///
/// - first order `k/(τs + 1)`: `τs² + (1 + k·Kp)s + k·Ki` →
///   `Kp = (2ζω₀τ − 1)/k`, `Ki = ω₀²τ/k`;
/// - integrating `k/s`: `s² + k·Kp·s + k·Ki` → `Kp = 2ζω₀/k`, `Ki = ω₀²/k`.
///
/// Returns `(Kp, Ki)`; Kp may be negative for a first-order plant when
/// `2ζω₀τ < 1` (the open loop is already faster than asked).
///
/// ```
/// use evenkeel_harness::design::pole_placement;
/// let (kp, ki) = pole_placement(2.0, f64::INFINITY, 1.0, 0.5);
/// assert_eq!((kp, ki), (0.5, 0.125));
/// ```
#[must_use]
pub fn pole_placement(gain: f64, tau_s: f64, zeta: f64, omega0_rad_s: f64) -> (f64, f64) {
    if tau_s.is_finite() {
        (
            (2.0 * zeta * omega0_rad_s * tau_s - 1.0) / gain,
            omega0_rad_s * omega0_rad_s * tau_s / gain,
        )
    } else {
        (
            2.0 * zeta * omega0_rad_s / gain,
            omega0_rad_s * omega0_rad_s / gain,
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Coefficients (ascending) of the closed-loop characteristic
    /// polynomial, multiplied out from the loop: for `k/(τs+1)` with PI
    /// `Kp + Ki/s`, `1 + L = 0` ⇔ `s(τs + 1) + k(Kp·s + Ki) = 0`.
    fn closed_loop(gain: f64, tau: f64, kp: f64, ki: f64) -> [f64; 3] {
        if tau.is_finite() {
            [gain * ki, 1.0 + gain * kp, tau]
        } else {
            // s·s + k(Kp·s + Ki)
            [gain * ki, gain * kp, 1.0]
        }
    }

    #[test]
    fn pole_placement_gives_the_requested_characteristic_polynomial() {
        for (k, tau, zeta, w0) in [
            (2.0, 1.5, 0.7, 2.0),
            (400.0, 1.5, 1.0, 0.8),
            (0.5, f64::INFINITY, 1.0, 0.3),
            (4.8, f64::INFINITY, 0.8, 1.2),
        ] {
            let (kp, ki) = pole_placement(k, tau, zeta, w0);
            let c = closed_loop(k, tau, kp, ki);
            let monic = [c[0] / c[2], c[1] / c[2]];
            let want = [w0 * w0, 2.0 * zeta * w0];
            for (a, b) in monic.iter().zip(want) {
                assert!(
                    (a - b).abs() < 1e-12 * b.abs().max(1.0),
                    "{k} {tau}: {a} vs {b}"
                );
            }
        }
    }

    #[test]
    fn simc_worked_examples_of_the_paper() {
        // Skogestad (2003), values recalled from memory, not re-read: the
        // paper's example process (−0.3s+1)(0.08s+1)/((2s+1)(s+1)(0.4s+1)
        // (0.2s+1)(0.05s+1)³) reduces by the half rule to τ₁ = 2.5,
        // θ = 1.47, and SIMC with τc = θ gives Kc = 0.85, τI = 2.5.
        let m = half_rule(1.0, 2.0, &[1.0, 0.4, 0.12, 0.05, 0.05, 0.05], &[0.3]);
        assert!((m.tau1_s - 2.5).abs() < 1e-12);
        assert!((m.delay_s - 1.47).abs() < 1e-12);
        let pi = simc(&m, m.delay_s);
        assert!((pi.kp - 0.85).abs() < 0.005, "{pi:?}");
        assert!((pi.ti_s - 2.5).abs() < 1e-12);
        // Integrating process k' = 1, θ = 1, τc = θ: Kc = 0.5, τI = 8
        // (the paper's rule for integrating processes; from memory).
        let pi = simc(
            &Fopdt {
                gain: 1.0,
                tau1_s: f64::INFINITY,
                delay_s: 1.0,
            },
            1.0,
        );
        assert_eq!((pi.kp, pi.ti_s), (0.5, 8.0));
        // Lag-dominant first order, τ₁ = 20 > 8θ: τI = 4(τc + θ) = 8 instead of 20.
        let pi = simc(
            &Fopdt {
                gain: 1.0,
                tau1_s: 20.0,
                delay_s: 1.0,
            },
            1.0,
        );
        assert_eq!((pi.kp, pi.ti_s), (10.0, 8.0));
    }
}
