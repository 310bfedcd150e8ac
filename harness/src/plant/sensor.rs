//! Measurement: delay, seeded Gaussian noise, quantisation.

use std::collections::VecDeque;

use rand::rngs::ChaCha8Rng;
use rand::{Rng, SeedableRng};

use super::{ParamError, check};

/// Longest supported delay, in samples.
const MAX_DELAY_SAMPLES: usize = 1 << 20;

/// Parameters of a [`Sensor`].
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct SensorParams {
    /// Standard deviation of the additive Gaussian noise, output units, ≥ 0.
    pub noise_std: f64,
    /// Quantisation step, output units; 0 means none, else > 0.
    pub quantum: f64,
    /// Delay in whole samples (≤ 2²⁰).
    pub delay_samples: usize,
}

/// A sensor read once per controller sample: the true value of
/// `delay_samples` samples ago, plus Gaussian noise, rounded to the nearest
/// multiple of `quantum` (ties away from zero), in that order, as an ADC
/// sees a delayed, noisy signal.
///
/// Deterministic for a seed: noise comes from ChaCha8 (`rand` 0.10) seeded
/// with `seed_from_u64`, turned into normal deviates by the Box–Muller
/// transform on 53-bit uniforms. Before the delay line has filled it repeats
/// the first value it was given (the sensor "was reading it before").
///
/// ```
/// use evenkeel_harness::plant::{Sensor, SensorParams};
/// let mut tacho = Sensor::new(SensorParams { quantum: 0.5, delay_samples: 1, ..SensorParams::default() }, 7)?;
/// assert_eq!(tacho.measure(1.2), 1.0);
/// assert_eq!(tacho.measure(2.4), 1.0); // delayed by one sample
/// assert_eq!(tacho.measure(0.0), 2.5);
/// # Ok::<(), evenkeel_harness::plant::ParamError>(())
/// ```
/// Not `Clone`: `ChaCha8Rng` is not `Clone` in `rand` 0.10; build a second
/// sensor with the same seed instead.
#[derive(Debug)]
pub struct Sensor {
    params: SensorParams,
    seed: u64,
    rng: ChaCha8Rng,
    /// Second Box–Muller deviate of the last pair.
    spare: Option<f64>,
    line: VecDeque<f64>,
}

impl Sensor {
    /// Validates `params`; `seed` fixes the noise sequence.
    ///
    /// # Errors
    /// [`ParamError::OutOfRange`] naming the first parameter out of range.
    pub fn new(params: SensorParams, seed: u64) -> Result<Self, ParamError> {
        let p = params;
        check(
            "noise_std",
            p.noise_std,
            "finite and >= 0",
            p.noise_std >= 0.0,
        )?;
        check("quantum", p.quantum, "finite and >= 0", p.quantum >= 0.0)?;
        // Exact in f64: both are far below 2^53.
        #[allow(clippy::cast_precision_loss)]
        check(
            "delay_samples",
            p.delay_samples as f64,
            "<= 1048576",
            p.delay_samples <= MAX_DELAY_SAMPLES,
        )?;
        Ok(Self {
            params,
            seed,
            rng: ChaCha8Rng::seed_from_u64(seed),
            spare: None,
            line: VecDeque::with_capacity(p.delay_samples + 1),
        })
    }

    /// Takes one sample of `true_value` and returns the measurement.
    pub fn measure(&mut self, true_value: f64) -> f64 {
        let delay = self.params.delay_samples;
        if self.line.is_empty() {
            self.line.extend(std::iter::repeat_n(true_value, delay));
        }
        self.line.push_back(true_value);
        let delayed = self.line.pop_front().unwrap_or(true_value);
        let noisy = if self.params.noise_std > 0.0 {
            delayed + self.params.noise_std * self.standard_normal()
        } else {
            delayed
        };
        let q = self.params.quantum;
        if q > 0.0 {
            (noisy / q).round() * q
        } else {
            noisy
        }
    }

    /// Restarts the noise sequence from the seed and fills the delay line
    /// with `value`.
    pub fn reset(&mut self, value: f64) {
        self.rng = ChaCha8Rng::seed_from_u64(self.seed);
        self.spare = None;
        self.line.clear();
        self.line
            .extend(std::iter::repeat_n(value, self.params.delay_samples));
    }

    /// Uniform in [0, 1) with 53 random bits.
    fn uniform(&mut self) -> f64 {
        const SCALE: f64 = 1.0 / 9_007_199_254_740_992.0; // 2^-53
        #[allow(clippy::cast_precision_loss)] // < 2^53: exact
        let top = (self.rng.next_u64() >> 11) as f64;
        top * SCALE
    }

    /// Standard normal deviate (Box–Muller, both deviates of a pair used).
    fn standard_normal(&mut self) -> f64 {
        if let Some(z) = self.spare.take() {
            return z;
        }
        let u1 = 1.0 - self.uniform(); // (0, 1]: ln is finite
        let u2 = self.uniform();
        let r = (-2.0 * u1.ln()).sqrt();
        let phi = std::f64::consts::TAU * u2;
        self.spare = Some(r * phi.sin());
        r * phi.cos()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn noisy(seed: u64) -> Sensor {
        let p = SensorParams {
            noise_std: 0.3,
            ..SensorParams::default()
        };
        Sensor::new(p, seed).unwrap()
    }

    #[test]
    fn same_seed_same_sequence() {
        let (mut a, mut b, mut c) = (noisy(42), noisy(42), noisy(43));
        let sa: Vec<f64> = (0..1000).map(|_| a.measure(1.0)).collect();
        let sb: Vec<f64> = (0..1000).map(|_| b.measure(1.0)).collect();
        let sc: Vec<f64> = (0..1000).map(|_| c.measure(1.0)).collect();
        assert_eq!(sa, sb);
        assert_ne!(sa, sc);
        a.reset(1.0);
        assert_eq!(a.measure(1.0), sa[0]);
    }

    #[test]
    fn noise_statistics_within_bounds() {
        // Bounds at 5 standard errors for n samples of N(0, σ²) (common
        // practice): mean σ/√n, sample std σ/√(2n), fraction inside ±σ
        // 0.682689 (normal table, from memory) with √(p(1−p)/n).
        let n = 100_000;
        let sigma = 0.3;
        let mut s = noisy(2024);
        let x: Vec<f64> = (0..n).map(|_| s.measure(5.0) - 5.0).collect();
        let nf = f64::from(n);
        let mean = x.iter().sum::<f64>() / nf;
        let std = (x.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (nf - 1.0)).sqrt();
        let inside = x.iter().filter(|v| v.abs() <= sigma).count();
        #[allow(clippy::cast_precision_loss)]
        let frac = inside as f64 / nf;
        assert!(mean.abs() < 5.0 * sigma / nf.sqrt(), "mean {mean}");
        assert!(
            (std / sigma - 1.0).abs() < 5.0 / (2.0 * nf).sqrt(),
            "std {std}"
        );
        let p = 0.682_689;
        assert!(
            (frac - p).abs() < 5.0 * (p * (1.0 - p) / nf).sqrt(),
            "{frac}"
        );
    }

    #[test]
    fn quantisation_rounds_to_nearest_step() {
        let p = SensorParams {
            quantum: 0.25,
            ..SensorParams::default()
        };
        let mut s = Sensor::new(p, 0).unwrap();
        let table = [
            (0.37, 0.25),
            (0.38, 0.5),
            (0.125, 0.25),
            (-0.125, -0.25),
            (-0.1, 0.0),
            (10.0, 10.0),
        ];
        for (input, expected) in table {
            assert_eq!(s.measure(input), expected, "{input}");
        }
    }

    #[test]
    fn delay_in_whole_samples() {
        let p = SensorParams {
            delay_samples: 3,
            ..SensorParams::default()
        };
        let mut s = Sensor::new(p, 0).unwrap();
        let out: Vec<f64> = (1..=8).map(|i| s.measure(f64::from(i))).collect();
        assert_eq!(out, [1.0, 1.0, 1.0, 1.0, 2.0, 3.0, 4.0, 5.0]);
        s.reset(-1.0);
        let out: Vec<f64> = (1..=5).map(|i| s.measure(f64::from(i))).collect();
        assert_eq!(out, [-1.0, -1.0, -1.0, 1.0, 2.0]);
    }

    #[test]
    fn sensor_rejects_bad_parameters() {
        let bad = [
            SensorParams {
                noise_std: -0.1,
                ..SensorParams::default()
            },
            SensorParams {
                quantum: f64::NAN,
                ..SensorParams::default()
            },
            SensorParams {
                delay_samples: usize::MAX,
                ..SensorParams::default()
            },
        ];
        for p in bad {
            assert!(Sensor::new(p, 1).is_err(), "{p:?}");
        }
    }
}
