//! The min/max envelope of a sweep's signals, kept at plot resolution.

use serde::{Deserialize, Serialize};

use crate::outcome::BackendRun;
use crate::plot::{MAX_POINTS, reduce};
use crate::scenario::Scenario;

/// Buckets the envelope keeps at most: the resolution the envelope plot
/// draws (one bucket per band point), so memory and result files do not
/// grow with the run's length.
pub const ENVELOPE_BUCKETS: usize = MAX_POINTS / 2;

/// Per-bucket minimum and maximum of the signals over all variants run:
/// the samples are cut into buckets of `bucket` consecutive samples (the
/// last may be shorter) and each bucket keeps its lowest and highest value.
///
/// Min and max are exact and order-free, so shards merge into the same
/// envelope as one run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Envelope {
    /// Controller period, s (sample `k` is at `k·dt_s`).
    pub dt_s: f64,
    /// Samples of one run.
    pub samples: usize,
    /// Samples per bucket (bucket `b` starts at sample `b·bucket`).
    pub bucket: usize,
    /// The reference (the same in every variant), reduced for drawing:
    /// `(t_s, value)` points.
    pub reference: Vec<(f64, f64)>,
    /// True plant output, lower and upper bound per bucket.
    pub output: [Vec<f64>; 2],
    /// Command.
    pub command: [Vec<f64>; 2],
    /// Plant rate (acceleration).
    pub accel: [Vec<f64>; 2],
    /// Jerk.
    pub jerk: [Vec<f64>; 2],
    /// Variants that contributed.
    pub runs: usize,
}

/// Samples of one run of `scenario` (as the simulation counts them).
#[must_use]
pub fn samples_of(scenario: &Scenario) -> usize {
    let ts = scenario.controller.period_s;
    // Whole samples; the loader bounds the count.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let n = (scenario.setup.duration_s / ts).round().max(1.0) as usize;
    n
}

impl Envelope {
    /// An envelope no variant has touched, for runs of `scenario`.
    #[must_use]
    pub fn empty(scenario: &Scenario) -> Self {
        let ts = scenario.controller.period_s;
        let n = samples_of(scenario);
        let bucket = n.div_ceil(ENVELOPE_BUCKETS).max(1);
        let buckets = n.div_ceil(bucket);
        let t: Vec<f64> = (0..n)
            .map(|k| crate::metrics::sample_time_s(k, ts))
            .collect();
        let r: Vec<f64> = t.iter().map(|&t| scenario.setup.reference.at(t)).collect();
        let band = || {
            [
                vec![f64::INFINITY; buckets],
                vec![f64::NEG_INFINITY; buckets],
            ]
        };
        Self {
            dt_s: ts,
            samples: n,
            bucket,
            reference: reduce(&t, &r),
            output: band(),
            command: band(),
            accel: band(),
            jerk: band(),
            runs: 0,
        }
    }

    /// Start time of each bucket, s.
    #[must_use]
    pub fn time_s(&self) -> Vec<f64> {
        #[allow(clippy::cast_precision_loss)]
        (0..self.output[0].len())
            .map(|b| (b * self.bucket) as f64 * self.dt_s)
            .collect()
    }

    /// Widens the envelope to cover `run`.
    pub fn add(&mut self, run: &BackendRun) {
        let rec = &run.recording;
        self.runs += 1;
        let bucket = self.bucket.max(1);
        let mut last_accel = rec.accel.first().copied().unwrap_or(0.0);
        for k in 0..rec.time_s.len().min(self.samples) {
            let b = k / bucket;
            // As `Recording::jerk`, one sample at a time.
            let jerk = (rec.accel[k] - last_accel) / rec.dt_s;
            last_accel = rec.accel[k];
            for (band, v) in [
                (&mut self.output, rec.output[k]),
                (&mut self.command, rec.command[k]),
                (&mut self.accel, rec.accel[k]),
                (&mut self.jerk, jerk),
            ] {
                if v.is_finite() && b < band[0].len() {
                    band[0][b] = band[0][b].min(v);
                    band[1][b] = band[1][b].max(v);
                }
            }
        }
    }

    /// Widens `self` to cover `other` too (both of the same scenario).
    pub fn combine(&mut self, other: &Self) {
        if other.runs == 0 {
            return;
        }
        if self.runs == 0 {
            *self = other.clone();
            return;
        }
        self.runs += other.runs;
        for (a, b) in [
            (&mut self.output, &other.output),
            (&mut self.command, &other.command),
            (&mut self.accel, &other.accel),
            (&mut self.jerk, &other.jerk),
        ] {
            for (x, y) in a[0].iter_mut().zip(&b[0]) {
                *x = x.min(*y);
            }
            for (x, y) in a[1].iter_mut().zip(&b[1]) {
                *x = x.max(*y);
            }
        }
    }

    /// Replaces bounds no variant touched (±∞) by 0, so JSON can hold them.
    pub fn finish(&mut self) {
        for band in [
            &mut self.output,
            &mut self.command,
            &mut self.accel,
            &mut self.jerk,
        ] {
            for v in band.iter_mut().flatten() {
                if !v.is_finite() {
                    *v = 0.0;
                }
            }
        }
    }

    /// Whether a stored envelope fits runs of `scenario` (what `merge`
    /// checks): same period, sample count, bucketing and reference, every
    /// band of the bucket count with lower ≤ upper, `runs` as given.
    ///
    /// # Errors
    /// What does not fit, in words.
    pub fn check(&self, scenario: &Scenario, runs: usize) -> Result<(), String> {
        let want = Self::empty(scenario);
        if self.dt_s.to_bits() != want.dt_s.to_bits()
            || self.samples != want.samples
            || self.bucket != want.bucket
        {
            return Err(format!(
                "the envelope is for {} samples of {} s in buckets of {}, the scenario has {} of {} s in buckets of {}",
                self.samples, self.dt_s, self.bucket, want.samples, want.dt_s, want.bucket
            ));
        }
        if self.reference != want.reference {
            return Err("the envelope's reference differs from the scenario's".into());
        }
        let buckets = want.output[0].len();
        for (name, band) in [
            ("output", &self.output),
            ("command", &self.command),
            ("accel", &self.accel),
            ("jerk", &self.jerk),
        ] {
            if band[0].len() != buckets || band[1].len() != buckets {
                return Err(format!(
                    "envelope `{name}` has {} and {} values, {buckets} expected",
                    band[0].len(),
                    band[1].len()
                ));
            }
            if let Some(b) = (0..buckets).find(|&b| {
                band[0][b]
                    .partial_cmp(&band[1][b])
                    .is_none_or(std::cmp::Ordering::is_gt)
            }) {
                return Err(format!(
                    "envelope `{name}`: bucket {b} has lower bound {} above upper bound {}",
                    band[0][b], band[1][b]
                ));
            }
        }
        if self.runs != runs {
            return Err(format!(
                "the envelope counts {} runs, the shard has {runs} variants that ran",
                self.runs
            ));
        }
        Ok(())
    }
}
