//! Closed-loop metrics over a uniformly sampled trace.
//!
//! Sample `i` is taken at `t = i·dt_s`. Every metric below is also a free
//! function, so a user can compute one alone; [`compute`] validates a
//! [`Trace`] and fills all of [`Metrics`].
//!
//! Conventions: the error is `e = r − y` (reference minus output); integrals
//! use the rectangle rule with each sample held for `dt_s`, matching the
//! zero-order hold of the simulation; crossing instants are interpolated
//! linearly between samples; a metric that is undefined for the trace (no
//! step, no limits given, …) is `None`, and [`Metrics::undefined`] says
//! why ([`Undefined`]).

use crate::undefined::Undefined;

/// A uniformly sampled closed-loop trace: all slices have the same length.
#[derive(Debug, Clone, Copy)]
pub struct Trace<'a> {
    /// Sample period in s.
    pub dt_s: f64,
    /// Reference `r`.
    pub reference: &'a [f64],
    /// Plant output `y` as the controller is judged on (usually the true
    /// output, not the noisy measurement).
    pub output: &'a [f64],
    /// Controller command `u`.
    pub command: &'a [f64],
    /// Plant rate (for a vehicle: acceleration in m/s²).
    pub accel: &'a [f64],
}

/// The instant of sample `k` at period `dt_s`: `k / rate` when the rate
/// `1/dt_s` is a whole number of samples per second (so that 13 samples
/// at 1 kHz are `0.013` s, not the `0.013000000000000001` of `13·0.001`),
/// else `k·dt_s`. Every sample time of a run is computed this way, never
/// as a running sum.
///
/// ```
/// use evenkeel_harness::metrics::sample_time_s;
/// assert_eq!(sample_time_s(13, 0.001), 0.013);
/// assert_eq!(sample_time_s(7, 0.05), 0.35);
/// assert_eq!(sample_time_s(3, 0.003), 3.0 * 0.003);
/// ```
#[must_use]
pub fn sample_time_s(k: usize, dt_s: f64) -> f64 {
    let rate = 1.0 / dt_s;
    let whole = rate.round();
    #[allow(clippy::cast_precision_loss)] // k < 2^53
    let k = k as f64;
    if whole >= 1.0 && (rate - whole).abs() <= 1e-9 * whole {
        k / whole
    } else {
        k * dt_s
    }
}

/// A reference step: `reference` goes from `from` to `to` at sample
/// `start_index`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Step {
    /// First sample with the new reference.
    pub start_index: usize,
    /// Reference before the step.
    pub from: f64,
    /// Reference after the step.
    pub to: f64,
}

impl Step {
    /// The first change of `reference`, if any.
    #[must_use]
    pub fn detect(reference: &[f64]) -> Option<Self> {
        let i = reference.windows(2).position(|w| w[0] != w[1])?;
        Some(Self {
            start_index: i + 1,
            from: reference[i],
            to: reference[i + 1],
        })
    }

    fn size(&self) -> f64 {
        self.to - self.from
    }
}

/// Command limits for the saturation metrics.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Saturation {
    /// Lower command limit.
    pub min: f64,
    /// Upper command limit.
    pub max: f64,
    /// A command within this distance of a limit counts as saturated.
    pub tolerance: f64,
}

impl Saturation {
    fn holds(&self, u: f64) -> bool {
        u >= self.max - self.tolerance || u <= self.min + self.tolerance
    }
}

/// Choices for [`compute`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MetricOptions {
    /// The step the step-response metrics refer to; `None` leaves them
    /// undefined (use [`Step::detect`] to find one in the reference).
    pub step: Option<Step>,
    /// Settling band as a fraction of the step size, in (0, 1). Default 0.02.
    pub settling_band: f64,
    /// Window at the end of the trace for the steady-state error, s. Default 1.
    pub steady_window_s: f64,
    /// Command limits; `None` leaves the saturation metrics undefined.
    pub saturation: Option<Saturation>,
    /// Absolute error band for the recovery time; `None` uses
    /// `settling_band·|step size|` when a step is given.
    pub error_band: Option<f64>,
}

impl Default for MetricOptions {
    fn default() -> Self {
        Self {
            step: None,
            settling_band: 0.02,
            steady_window_s: 1.0,
            saturation: None,
            error_band: None,
        }
    }
}

/// All metrics of one trace. Field names are the serialised keys.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Metrics {
    /// See [`rise_time_s`].
    pub rise_time_s: Option<f64>,
    /// See [`settling_time_s`].
    pub settling_time_s: Option<f64>,
    /// See [`overshoot_pct`].
    pub overshoot_pct: Option<f64>,
    /// See [`steady_state_error`].
    pub steady_state_error: Option<f64>,
    /// See [`iae`].
    pub iae: f64,
    /// See [`ise`].
    pub ise: f64,
    /// See [`peak_abs`] (of the command).
    pub peak_command: f64,
    /// See [`total_variation`] (of the command).
    pub command_total_variation: f64,
    /// See [`peak_rate`] (of the command), units per s.
    pub peak_slew_per_s: f64,
    /// See [`peak_abs`] (of the plant rate).
    pub peak_accel: f64,
    /// See [`peak_rate`] (of the plant rate), e.g. m/s³.
    pub peak_jerk: f64,
    /// See [`time_saturated_s`].
    pub time_saturated_s: Option<f64>,
    /// See [`peak_error`] (over the whole trace); `None` for an empty trace.
    pub tracking_error_peak: Option<f64>,
    /// See [`rms_error`]; `None` for an empty trace.
    pub tracking_error_rms: Option<f64>,
    /// See [`peak_error`] over the samples in a reference ramp; left
    /// undefined by [`compute`] (which knows no profile), filled in by
    /// [`crate::outcome::BackendRun::assess`].
    pub ramp_tracking_error_peak: Option<f64>,
    /// See [`disturbance_rejection`]; filled in as the ramp error.
    pub disturbance_peak_deviation: Option<f64>,
    /// See [`disturbance_rejection`]; filled in as the ramp error.
    pub disturbance_recovery_s: Option<f64>,
    /// See [`recovery_time_s`].
    pub recovery_time_s: Option<f64>,
    /// When the worst value of each peak metric occurred.
    pub at_s: Times,
    /// Fault checks ([`crate::fault::assess`]); left empty by [`compute`],
    /// filled in by [`crate::outcome::BackendRun::assess`].
    pub faults: crate::fault::FaultMetrics,
    /// Why each optional metric above is `None`, when it is.
    pub undefined: Reasons,
}

/// When the worst value of a metric occurred, s from the start of the
/// run ([`sample_time_s`] of its sample); `None` where the metric has no
/// value or no single instant. Ties go to the earliest sample.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Times {
    /// The sample of the largest excursion beyond the target.
    pub overshoot_pct: Option<f64>,
    /// The sample of the largest |u|.
    pub peak_command: Option<f64>,
    /// The later sample of the largest |u_k − u_{k−1}|.
    pub peak_slew_per_s: Option<f64>,
    /// The sample of the largest |rate|.
    pub peak_accel: Option<f64>,
    /// The later sample of the largest rate change.
    pub peak_jerk: Option<f64>,
    /// The sample of the largest |r − y|.
    pub tracking_error_peak: Option<f64>,
    /// The sample of the largest |r − y| in a ramp.
    pub ramp_tracking_error_peak: Option<f64>,
    /// The sample of the largest deviation after a disturbance change.
    pub disturbance_peak_deviation: Option<f64>,
    /// The disturbance change the longest recovery follows.
    pub disturbance_recovery_s: Option<f64>,
}

impl Times {
    /// The same instants for a trace whose sample 0 is sample `first` of
    /// the run (exact: each instant is recomputed from its sample index).
    #[must_use]
    pub fn offset(self, first: usize, dt_s: f64) -> Self {
        // Truncation is intended: the instants are whole samples.
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        let at =
            |t: Option<f64>| t.map(|t| sample_time_s((t / dt_s).round() as usize + first, dt_s));
        Self {
            overshoot_pct: at(self.overshoot_pct),
            peak_command: at(self.peak_command),
            peak_slew_per_s: at(self.peak_slew_per_s),
            peak_accel: at(self.peak_accel),
            peak_jerk: at(self.peak_jerk),
            tracking_error_peak: at(self.tracking_error_peak),
            ramp_tracking_error_peak: at(self.ramp_tracking_error_peak),
            disturbance_peak_deviation: at(self.disturbance_peak_deviation),
            disturbance_recovery_s: at(self.disturbance_recovery_s),
        }
    }
}

/// Why the optional metrics of [`Metrics`] are undefined (`None` where
/// the metric has a value).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Reasons {
    /// For [`Metrics::rise_time_s`].
    pub rise_time_s: Option<Undefined>,
    /// For [`Metrics::settling_time_s`].
    pub settling_time_s: Option<Undefined>,
    /// For [`Metrics::overshoot_pct`].
    pub overshoot_pct: Option<Undefined>,
    /// For [`Metrics::steady_state_error`].
    pub steady_state_error: Option<Undefined>,
    /// For [`Metrics::time_saturated_s`].
    pub time_saturated_s: Option<Undefined>,
    /// For [`Metrics::tracking_error_peak`].
    pub tracking_error_peak: Option<Undefined>,
    /// For [`Metrics::tracking_error_rms`].
    pub tracking_error_rms: Option<Undefined>,
    /// For [`Metrics::ramp_tracking_error_peak`].
    pub ramp_tracking_error_peak: Option<Undefined>,
    /// For [`Metrics::disturbance_peak_deviation`].
    pub disturbance_peak_deviation: Option<Undefined>,
    /// For [`Metrics::disturbance_recovery_s`].
    pub disturbance_recovery_s: Option<Undefined>,
}

/// `true` when the output reaches `level` of the step (normalised) at
/// some sample from the step on.
fn reaches(output: &[f64], step: &Step, level: f64) -> bool {
    step.size() != 0.0 && normalised(output, step).any(|(_, p)| p >= level)
}

/// Why a step metric that came out `None` is undefined: no step, the
/// loop never moved, or `otherwise`.
fn step_reason(output: &[f64], step: Option<&Step>, otherwise: Undefined) -> Undefined {
    match step {
        Some(s) if s.size() != 0.0 => {
            if reaches(output, s, 0.1) {
                otherwise
            } else {
                Undefined::NeverMoved
            }
        }
        _ => Undefined::NoStep,
    }
}

/// A trace or option that [`compute`] cannot use.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum MetricsError {
    /// A slice differs in length from `reference`.
    #[error("trace `{name}` has {len} samples, `reference` has {expected}")]
    LengthMismatch {
        /// Slice name.
        name: &'static str,
        /// Its length.
        len: usize,
        /// Length of `reference`.
        expected: usize,
    },
    /// A number is outside its allowed range.
    #[error("`{name}` = {value} is out of range: must be {allowed}")]
    OutOfRange {
        /// Field name.
        name: &'static str,
        /// The rejected value.
        value: f64,
        /// The allowed range, in words.
        allowed: &'static str,
    },
}

fn check(
    name: &'static str,
    value: f64,
    allowed: &'static str,
    ok: bool,
) -> Result<(), MetricsError> {
    if ok && value.is_finite() {
        Ok(())
    } else {
        Err(MetricsError::OutOfRange {
            name,
            value,
            allowed,
        })
    }
}

/// Validates `trace` and `options` and computes every metric.
///
/// # Errors
/// [`MetricsError::LengthMismatch`] if the slices differ in length,
/// [`MetricsError::OutOfRange`] for a bad period, option or step index.
///
/// ```
/// use evenkeel_harness::metrics::{compute, MetricOptions, Step, Trace};
/// let r = [0.0, 1.0, 1.0, 1.0];
/// let y = [0.0, 0.5, 1.1, 1.0];
/// let u = [0.0, 2.0, 0.5, 1.0];
/// let a = [0.0; 4];
/// let trace = Trace { dt_s: 0.1, reference: &r, output: &y, command: &u, accel: &a };
/// let m = compute(&trace, &MetricOptions { step: Step::detect(&r), ..MetricOptions::default() })?;
/// assert!((m.overshoot_pct.unwrap_or(0.0) - 10.0).abs() < 1e-9);
/// assert_eq!(m.command_total_variation, 4.0);
/// # Ok::<(), evenkeel_harness::metrics::MetricsError>(())
/// ```
pub fn compute(trace: &Trace<'_>, options: &MetricOptions) -> Result<Metrics, MetricsError> {
    let n = trace.reference.len();
    for (name, len) in [
        ("output", trace.output.len()),
        ("command", trace.command.len()),
        ("accel", trace.accel.len()),
    ] {
        if len != n {
            return Err(MetricsError::LengthMismatch {
                name,
                len,
                expected: n,
            });
        }
    }
    let dt = trace.dt_s;
    check("dt_s", dt, "finite and > 0 s", dt > 0.0)?;
    let band = options.settling_band;
    check("settling_band", band, "in (0, 1)", band > 0.0 && band < 1.0)?;
    let window = options.steady_window_s;
    check("steady_window_s", window, "finite and > 0 s", window > 0.0)?;
    if let Some(s) = options.step {
        #[allow(clippy::cast_precision_loss)] // only for the message
        let start = s.start_index as f64;
        check(
            "step.start_index",
            start,
            "< trace length",
            s.start_index < n,
        )?;
        check("step.from", s.from, "finite", true)?;
        check("step.to", s.to, "finite", true)?;
    }
    if let Some(s) = options.saturation {
        check("saturation.min", s.min, "finite", true)?;
        check("saturation.max", s.max, "finite and > min", s.max > s.min)?;
        check(
            "saturation.tolerance",
            s.tolerance,
            "finite and >= 0",
            s.tolerance >= 0.0,
        )?;
    }
    if let Some(b) = options.error_band {
        check("error_band", b, "finite and > 0", b > 0.0)?;
    }

    let (r, y, u, a) = (trace.reference, trace.output, trace.command, trace.accel);
    let step = options.step;
    let error_band = options
        .error_band
        .or_else(|| step.map(|s| band * s.size().abs()).filter(|b| *b > 0.0));
    let rise = step.and_then(|s| rise_time_s(y, dt, &s));
    let settling = step.and_then(|s| settling_time_s(y, dt, &s, band));
    // A loop that never reached 10 % of its step has no overshoot to speak
    // of: undefined (it would pass as 0).
    let overshoot = step
        .filter(|s| reaches(y, s, 0.1))
        .and_then(|s| overshoot_pct(y, &s));
    let steady = steady_state_error(r, y, dt, window);
    let why = |value: Option<f64>, reason: Undefined| value.is_none().then_some(reason);
    let tracking = peak_error(r, y, None);
    let at = |k: Option<usize>| k.map(|k| sample_time_s(k, dt));
    let at_s = Times {
        overshoot_pct: at(overshoot
            .filter(|o| *o > 0.0)
            .and(step)
            .and_then(|s| peak_index(y, &s))),
        peak_command: at(argmax_abs(u)),
        peak_slew_per_s: at(argmax_step(u)),
        peak_accel: at(argmax_abs(a)),
        peak_jerk: at(argmax_step(a)),
        tracking_error_peak: at(tracking.map(|(_, k)| k)),
        ..Times::default()
    };
    let undefined = Reasons {
        rise_time_s: why(rise, step_reason(y, step.as_ref(), Undefined::NotReached)),
        settling_time_s: why(
            settling,
            step_reason(y, step.as_ref(), Undefined::NotSettled),
        ),
        overshoot_pct: why(
            overshoot,
            step_reason(y, step.as_ref(), Undefined::NeverMoved),
        ),
        steady_state_error: why(steady, Undefined::Empty),
        time_saturated_s: options.saturation.is_none().then_some(Undefined::NoLimits),
        tracking_error_peak: (n == 0).then_some(Undefined::Empty),
        tracking_error_rms: (n == 0).then_some(Undefined::Empty),
        ramp_tracking_error_peak: Some(Undefined::NoRamp),
        disturbance_peak_deviation: Some(Undefined::NoDisturbance),
        disturbance_recovery_s: Some(Undefined::NoDisturbance),
    };
    Ok(Metrics {
        rise_time_s: rise,
        settling_time_s: settling,
        overshoot_pct: overshoot,
        steady_state_error: steady,
        iae: iae(r, y, dt),
        ise: ise(r, y, dt),
        peak_command: peak_abs(u),
        command_total_variation: total_variation(u),
        peak_slew_per_s: peak_rate(u, dt),
        peak_accel: peak_abs(a),
        peak_jerk: peak_rate(a, dt),
        time_saturated_s: options.saturation.map(|s| time_saturated_s(u, dt, &s)),
        tracking_error_peak: tracking.map(|(e, _)| e),
        tracking_error_rms: rms_error(r, y),
        ramp_tracking_error_peak: None,
        disturbance_peak_deviation: None,
        disturbance_recovery_s: None,
        recovery_time_s: match (options.saturation, error_band) {
            (Some(s), Some(b)) => recovery_time_s(r, y, u, dt, &s, b),
            _ => None,
        },
        at_s,
        faults: crate::fault::FaultMetrics::default(),
        undefined,
    })
}

/// The first sample of the largest `|x_i|`.
fn argmax_abs(x: &[f64]) -> Option<usize> {
    let mut best: Option<(usize, f64)> = None;
    for (i, v) in x.iter().enumerate() {
        if best.is_none_or(|(_, b)| v.abs() > b) {
            best = Some((i, v.abs()));
        }
    }
    best.map(|(i, _)| i)
}

/// The later sample `i` of the first largest `|x_i − x_{i−1}|` (as
/// [`peak_rate`]); `None` with fewer than two samples.
fn argmax_step(x: &[f64]) -> Option<usize> {
    let mut best: Option<(usize, f64)> = None;
    for (i, w) in x.windows(2).enumerate() {
        let d = (w[1] - w[0]).abs();
        if best.is_none_or(|(_, b)| d > b) {
            best = Some((i + 1, d));
        }
    }
    best.map(|(i, _)| i)
}

/// The first sample of the largest normalised output from the step on
/// (the peak [`overshoot_pct`] measures).
fn peak_index(y: &[f64], step: &Step) -> Option<usize> {
    let mut best: Option<(usize, f64)> = None;
    for (i, p) in normalised(y, step) {
        if best.is_none_or(|(_, b)| p > b) {
            best = Some((i, p));
        }
    }
    best.map(|(i, _)| i)
}

/// Output as a fraction of the step, `(y − from)/(to − from)`, from the step on.
fn normalised<'a>(y: &'a [f64], step: &Step) -> impl Iterator<Item = (usize, f64)> + 'a {
    let (from, size) = (step.from, step.size());
    y.iter()
        .enumerate()
        .skip(step.start_index)
        .map(move |(i, v)| (i, (v - from) / size))
}

/// Time in samples (fractional) at which the normalised output `p` first
/// reaches `level`, interpolated linearly with the sample before.
fn first_crossing(p: &[(usize, f64)], level: f64) -> Option<f64> {
    let k = p.iter().position(|&(_, v)| v >= level)?;
    #[allow(clippy::cast_precision_loss)]
    let at = p[k].0 as f64;
    match k.checked_sub(1).map(|j| p[j]) {
        Some((_, prev)) => Some(at - 1.0 + (level - prev) / (p[k].1 - prev)),
        None => Some(at),
    }
}

/// **Rise time 10–90 %**: time between the output first reaching 10 % and
/// first reaching 90 % of the step (`from` → `to`), both searched from the
/// step start on, crossings interpolated linearly. `None` when the step size is
/// zero or 90 % is never reached. Source: Ogata, *Modern Control
/// Engineering*, §5-3, transient-response specifications (10–90 % for
/// overdamped systems), from memory; IEEE Std 1057 defines rise time
/// 10–90 % for waveforms likewise, from memory.
#[must_use]
pub fn rise_time_s(output: &[f64], dt_s: f64, step: &Step) -> Option<f64> {
    if step.size() == 0.0 {
        return None;
    }
    let p: Vec<(usize, f64)> = normalised(output, step).collect();
    let t10 = first_crossing(&p, 0.1)?;
    let t90 = first_crossing(&p, 0.9)?;
    Some((t90 - t10) * dt_s)
}

/// **Settling time**: time from the step start until the output enters the
/// band `|y − to| ≤ band·|to − from|` for the last time and stays there to
/// the end of the trace (entry interpolated linearly on `|y − to|`). `0`
/// if it never leaves the band; `None` if it is outside at the last sample
/// or the step size is zero. Source: Ogata, *Modern Control Engineering*,
/// §5-3 (2 % or 5 % criterion), from memory.
#[must_use]
pub fn settling_time_s(output: &[f64], dt_s: f64, step: &Step, band: f64) -> Option<f64> {
    let width = band * step.size().abs();
    if width == 0.0 {
        return None;
    }
    let dev = |i: usize| (output[i] - step.to).abs();
    let tail = output.get(step.start_index..)?;
    let Some(last_out) = tail.iter().rposition(|v| (v - step.to).abs() > width) else {
        return Some(0.0);
    };
    let j = step.start_index + last_out;
    if j + 1 >= output.len() {
        return None;
    }
    let frac = (dev(j) - width) / (dev(j) - dev(j + 1));
    #[allow(clippy::cast_precision_loss)]
    let samples = (j - step.start_index) as f64 + frac;
    Some(samples * dt_s)
}

/// **Overshoot**: largest excursion beyond the new reference, in percent of
/// the step size, `100·max(0, max_i (y_i − from)/(to − from) − 1)` over the
/// samples from the step on (sampled peak, not interpolated). Relative to
/// the commanded step rather than the final output value, so a
/// steady-state error does not hide or inflate it. `None` for a zero step.
/// Source: Ogata, *Modern Control Engineering*, §5-3, maximum (percent)
/// overshoot, from memory.
pub fn overshoot_pct(output: &[f64], step: &Step) -> Option<f64> {
    if step.size() == 0.0 {
        return None;
    }
    let peak = normalised(output, step)
        .map(|(_, p)| p)
        .fold(f64::NEG_INFINITY, f64::max);
    (peak > f64::NEG_INFINITY).then(|| 100.0 * (peak - 1.0).max(0.0))
}

/// **Steady-state error**: mean of `|r − y|` over the last
/// `round(window_s/dt_s)` samples (at least one, at most all). `None` for
/// an empty trace. Common practice.
#[must_use]
pub fn steady_state_error(
    reference: &[f64],
    output: &[f64],
    dt_s: f64,
    window_s: f64,
) -> Option<f64> {
    let n = reference.len().min(output.len());
    if n == 0 {
        return None;
    }
    let want = (window_s / dt_s).round();
    // Saturating float→int cast; clamped to [1, n] next.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let count = (want as usize).clamp(1, n);
    let sum: f64 = (n - count..n)
        .map(|i| (reference[i] - output[i]).abs())
        .sum();
    #[allow(clippy::cast_precision_loss)]
    Some(sum / count as f64)
}

/// **IAE**, integral of absolute error `∫|r − y| dt ≈ dt·Σ|r_i − y_i|` over
/// the whole trace. Source: Åström & Hägglund, *Advanced PID Control*
/// (2006), from memory.
#[must_use]
pub fn iae(reference: &[f64], output: &[f64], dt_s: f64) -> f64 {
    dt_s * reference
        .iter()
        .zip(output)
        .map(|(r, y)| (r - y).abs())
        .sum::<f64>()
}

/// **ISE**, integral of squared error `∫(r − y)² dt ≈ dt·Σ(r_i − y_i)²` over
/// the whole trace. Source: Åström & Hägglund, *Advanced PID Control*
/// (2006), from memory.
#[must_use]
pub fn ise(reference: &[f64], output: &[f64], dt_s: f64) -> f64 {
    dt_s * reference
        .iter()
        .zip(output)
        .map(|(r, y)| (r - y) * (r - y))
        .sum::<f64>()
}

/// **Peak magnitude** `max_i |x_i|` (peak command, peak acceleration); 0 for
/// an empty slice. Common practice.
#[must_use]
pub fn peak_abs(x: &[f64]) -> f64 {
    x.iter().fold(0.0_f64, |m, v| m.max(v.abs()))
}

/// **Total variation** `Σ_i |x_i − x_{i−1}|`: how much the command moves in
/// all (actuator wear). Common practice (a standard measure of control
/// effort and smoothness, e.g. in Skogestad's tuning comparisons, from
/// memory).
#[must_use]
pub fn total_variation(x: &[f64]) -> f64 {
    x.windows(2).map(|w| (w[1] - w[0]).abs()).sum()
}

/// **Peak rate** `max_i |x_i − x_{i−1}|/dt` (backward difference): command
/// slew, or jerk when `x` is the acceleration. 0 with fewer than two
/// samples. Common practice.
#[must_use]
pub fn peak_rate(x: &[f64], dt_s: f64) -> f64 {
    x.windows(2)
        .fold(0.0_f64, |m, w| m.max((w[1] - w[0]).abs()))
        / dt_s
}

/// **Time in saturation**: `dt·(number of samples with the command within
/// `tolerance` of a limit)`. Common practice.
#[must_use]
pub fn time_saturated_s(command: &[f64], dt_s: f64, limits: &Saturation) -> f64 {
    #[allow(clippy::cast_precision_loss)]
    let count = command.iter().filter(|u| limits.holds(**u)).count() as f64;
    count * dt_s
}

/// **Peak tracking error** `max_i |r_i − y_i|` over the samples where
/// `mask` is true (all without a mask), with the first sample where it
/// occurs; `None` when no sample counts. Over the samples of reference
/// ramps it is the ramp-tracking error (how far the output lags a ramp).
/// Common practice (the maximum error, a standard figure of merit of a
/// servo loop; from memory).
///
/// ```
/// use evenkeel_harness::metrics::peak_error;
/// let r = [0.0, 1.0, 2.0, 2.0];
/// let y = [0.0, 0.5, 1.2, 1.9];
/// assert_eq!(peak_error(&r, &y, None), Some((0.8, 2)));
/// assert_eq!(peak_error(&r, &y, Some(&[false, true, false, true])), Some((0.5, 1)));
/// ```
#[must_use]
pub fn peak_error(
    reference: &[f64],
    output: &[f64],
    mask: Option<&[bool]>,
) -> Option<(f64, usize)> {
    let mut best: Option<(f64, usize)> = None;
    for (i, (r, y)) in reference.iter().zip(output).enumerate() {
        if mask.is_some_and(|m| !m.get(i).copied().unwrap_or(false)) {
            continue;
        }
        let e = (r - y).abs();
        if best.is_none_or(|(b, _)| e > b) {
            best = Some((e, i));
        }
    }
    best
}

/// **RMS tracking error** `√(Σ(r_i − y_i)²/n)` over the trace; `None` for
/// an empty trace. The root-mean-square of the error signal, a standard
/// error measure (Åström & Hägglund, *Advanced PID Control*, 2006, ISE and
/// its relatives; from memory): `√(ISE/T)` with `T = n·dt`.
#[must_use]
pub fn rms_error(reference: &[f64], output: &[f64]) -> Option<f64> {
    let n = reference.len().min(output.len());
    if n == 0 {
        return None;
    }
    let sum: f64 = reference
        .iter()
        .zip(output)
        .map(|(r, y)| (r - y) * (r - y))
        .sum();
    #[allow(clippy::cast_precision_loss)]
    Some((sum / n as f64).sqrt())
}

/// What [`disturbance_rejection`] measures.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rejection {
    /// Largest `|r − y|` after a change, and its sample.
    pub peak: (f64, usize),
    /// Longest recovery, s, and the change it follows (sample); `None`
    /// when the output was not back in the band before an episode ended,
    /// or without a band.
    pub recovery: Option<(f64, usize)>,
    /// Why `recovery` is `None`.
    pub recovery_undefined: Option<Undefined>,
}

/// **Disturbance rejection** over `episodes`, each `(change, end)`: the
/// samples from a disturbance change up to (not including) `end`, where
/// the next reference change or the end of the part judged begins. Peak
/// deviation: the largest `|r − y|` over the episodes (the maximum error
/// after a load disturbance, Åström & Hägglund, *Advanced PID Control*,
/// 2006, §4, from memory). Recovery: for each episode, the time from the
/// change to the first sample from which `|r − y| ≤ band` holds to the
/// episode's end (0 if it never leaves the band), the largest over the
/// episodes; not recovered when the last sample of an episode is outside
/// the band. Common practice (our definition of the recovery time,
/// matching the settling band of a step). `None` without episodes.
///
/// ```
/// use evenkeel_harness::metrics::disturbance_rejection;
/// // Error 0, a kick to 0.5 at sample 2 decaying by half each sample.
/// let r = [1.0; 8];
/// let y = [1.0, 1.0, 0.5, 0.75, 0.875, 0.9375, 0.96875, 0.984375];
/// let rej = disturbance_rejection(&r, &y, 0.1, &[(2, 8)], Some(0.05)).unwrap();
/// assert_eq!(rej.peak, (0.5, 2));
/// // |e| = 0.0625 at sample 5 is the last outside 0.05: back at sample 6, 0.4 s after.
/// assert_eq!(rej.recovery, Some((0.4, 2)));
/// ```
#[must_use]
pub fn disturbance_rejection(
    reference: &[f64],
    output: &[f64],
    dt_s: f64,
    episodes: &[(usize, usize)],
    band: Option<f64>,
) -> Option<Rejection> {
    let n = reference.len().min(output.len());
    let err = |k: usize| (reference[k] - output[k]).abs();
    let mut peak: Option<(f64, usize)> = None;
    let mut recovery: Option<(f64, usize)> = None;
    let mut why = band.is_none().then_some(Undefined::NoBand);
    for &(start, end) in episodes {
        let end = end.min(n);
        if start >= end {
            continue;
        }
        for k in start..end {
            if peak.is_none_or(|(p, _)| err(k) > p) {
                peak = Some((err(k), k));
            }
        }
        let Some(b) = band else { continue };
        if err(end - 1) > b {
            why = Some(Undefined::NotRecovered);
            continue;
        }
        let back = (start..end)
            .rev()
            .find(|&k| err(k) > b)
            .map_or(start, |k| k + 1);
        let t = sample_time_s(back - start, dt_s);
        if recovery.is_none_or(|(w, _)| t > w) {
            recovery = Some((t, start));
        }
    }
    let peak = peak?;
    Some(Rejection {
        peak,
        recovery: if why.is_some() { None } else { recovery },
        recovery_undefined: why,
    })
}

/// **Recovery time after saturation**: for each run of saturated samples,
/// the time from the first unsaturated sample after it until the first
/// sample (from then on) with `|r − y| ≤ error_band`; the largest over all
/// runs. `None` if the command never saturates; `Some(f64::INFINITY)` if
/// after some run the error does not come back into the band before the
/// trace ends, or the trace ends saturated. Common practice (our
/// definition).
#[must_use]
pub fn recovery_time_s(
    reference: &[f64],
    output: &[f64],
    command: &[f64],
    dt_s: f64,
    limits: &Saturation,
    error_band: f64,
) -> Option<f64> {
    let n = command.len().min(reference.len()).min(output.len());
    let in_band = |i: usize| (reference[i] - output[i]).abs() <= error_band;
    let mut worst: Option<f64> = None;
    let mut i = 0;
    while i < n {
        if !limits.holds(command[i]) {
            i += 1;
            continue;
        }
        let exit = (i..n).find(|&k| !limits.holds(command[k])).unwrap_or(n);
        let back = (exit..n).find(|&k| in_band(k));
        #[allow(clippy::cast_precision_loss)]
        let t = back.map_or(f64::INFINITY, |k| (k - exit) as f64 * dt_s);
        worst = Some(worst.map_or(t, |w: f64| w.max(t)));
        i = exit;
    }
    worst
}

#[cfg(test)]
mod tests {
    use super::*;

    fn times(n: usize, dt: f64) -> Vec<f64> {
        (0..n).map(|i| i as f64 * dt).collect()
    }

    #[test]
    fn first_order_step_rise_and_settling() {
        // y = 1 − e^(−t/τ): 10 % at τ·ln(10/9), 90 % at τ·ln 10, so the rise
        // time is τ·ln 9; |y − 1| = e^(−t/τ) leaves the 2 % band at τ·ln 50
        // (closed form). Step at sample 100, dt = 1 ms.
        let (tau, dt, start) = (0.8, 1e-3, 100);
        let t = times(6000, dt);
        let y: Vec<f64> = t
            .iter()
            .enumerate()
            .map(|(i, _)| {
                if i < start {
                    0.0
                } else {
                    1.0 - (-((i - start) as f64) * dt / tau).exp()
                }
            })
            .collect();
        let step = Step {
            start_index: start,
            from: 0.0,
            to: 1.0,
        };
        let rise = rise_time_s(&y, dt, &step).unwrap();
        assert!((rise - tau * 9f64.ln()).abs() < 1e-6, "{rise}");
        let settle = settling_time_s(&y, dt, &step, 0.02).unwrap();
        assert!((settle - tau * 50f64.ln()).abs() < 1e-6, "{settle}");
        assert_eq!(overshoot_pct(&y, &step), Some(0.0));
        // Falling step: same times with from/to swapped.
        let down: Vec<f64> = y.iter().map(|v| 3.0 - 2.0 * v).collect();
        let step_down = Step {
            start_index: start,
            from: 3.0,
            to: 1.0,
        };
        assert!((rise_time_s(&down, dt, &step_down).unwrap() - rise).abs() < 1e-9);
        assert!((settling_time_s(&down, dt, &step_down, 0.02).unwrap() - settle).abs() < 1e-9);
    }

    #[test]
    fn second_order_overshoot() {
        // Underdamped step response y = 1 − e^(−ζω t)/√(1−ζ²)·sin(ω_d t + acos ζ);
        // peak overshoot 100·exp(−πζ/√(1−ζ²)) at t = π/ω_d (Ogata §5-3, from memory).
        let (zeta, wn, dt) = (0.3_f64, 4.0_f64, 1e-4);
        let s = (1.0 - zeta * zeta).sqrt();
        let wd = wn * s;
        let y: Vec<f64> = times(40_000, dt)
            .iter()
            .map(|t| 1.0 - (-zeta * wn * t).exp() / s * (wd * t + zeta.acos()).sin())
            .collect();
        let step = Step {
            start_index: 0,
            from: 0.0,
            to: 1.0,
        };
        let expected = 100.0 * (-std::f64::consts::PI * zeta / s).exp();
        let got = overshoot_pct(&y, &step).unwrap();
        assert!((got - expected).abs() < 1e-4, "{got} vs {expected}");
    }

    #[test]
    fn command_variation_slew_and_peaks() {
        // Ramp 0 → 1.5 at 0.5 /s then back down to 1.0: total variation is the
        // path length 1.5 + 0.5, peak slew 0.5 /s up and 2.0 /s down.
        let dt = 0.01;
        let mut u: Vec<f64> = (0..=300).map(|i| 0.5 * i as f64 * dt).collect();
        u.extend((1..=25).map(|i| 1.5 - 0.02 * i as f64));
        assert!((total_variation(&u) - 2.0).abs() < 1e-12);
        assert!((peak_rate(&u, dt) - 2.0).abs() < 1e-9);
        assert!((peak_rate(&u[..=300], dt) - 0.5).abs() < 1e-9);
        assert_eq!(peak_abs(&[-3.0, 2.0]), 3.0);
        assert_eq!(
            (
                peak_abs(&[]),
                total_variation(&[1.0]),
                peak_rate(&[1.0], dt)
            ),
            (0.0, 0.0, 0.0)
        );
    }

    #[test]
    fn acceleration_and_jerk_of_a_sinusoid() {
        // a = A·sin(ωt): peak |a| = A, peak |ȧ| = A·ω; the backward difference
        // is within A·ω²·dt/2 of it (Taylor remainder).
        let (amp, w, dt) = (1.5, 3.0, 1e-4);
        let a: Vec<f64> = times(30_000, dt)
            .iter()
            .map(|t| amp * (w * t).sin())
            .collect();
        assert!((peak_abs(&a) - amp).abs() < 1e-6);
        assert!((peak_rate(&a, dt) - amp * w).abs() < amp * w * w * dt);
    }

    #[test]
    fn iae_and_ise_of_exponential_error() {
        // e_i = e^(−i·dt/τ): rectangle sums are geometric series,
        // dt·(1 − qⁿ)/(1 − q) with q = e^(−dt/τ) (closed form); both tend to
        // the integrals τ and τ/2 as dt → 0.
        let (tau, dt, n) = (0.5, 1e-3, 20_000);
        let y: Vec<f64> = times(n, dt)
            .iter()
            .map(|t| 1.0 - (-t / tau).exp())
            .collect();
        let r = vec![1.0; n];
        let q: f64 = (-dt / tau).exp();
        let geo = |q: f64| dt * (1.0 - q.powi(n as i32)) / (1.0 - q);
        assert!((iae(&r, &y, dt) - geo(q)).abs() < 1e-9);
        assert!((ise(&r, &y, dt) - geo(q * q)).abs() < 1e-9);
        assert!((iae(&r, &y, dt) - tau).abs() < dt);
        assert!((steady_state_error(&r, &y, dt, 1.0).unwrap() - 0.0).abs() < 1e-15);
    }

    #[test]
    fn saturation_time_and_recovery() {
        // Hand-built: command at the upper limit for samples 10..20 and 40..43;
        // the error comes back into the band at sample 25 after the first
        // run (5 samples after the exit at 20) and at once after the second.
        let dt = 0.1;
        let n = 60;
        let u: Vec<f64> = (0..n)
            .map(|i| {
                if (10..20).contains(&i) || (40..43).contains(&i) {
                    1.0
                } else {
                    0.3
                }
            })
            .collect();
        let r = vec![1.0; n];
        let y: Vec<f64> = (0..n)
            .map(|i| if (5..25).contains(&i) { 0.5 } else { 0.995 })
            .collect();
        let limits = Saturation {
            min: -1.0,
            max: 1.0,
            tolerance: 1e-9,
        };
        assert!((time_saturated_s(&u, dt, &limits) - 1.3).abs() < 1e-12);
        let rec = recovery_time_s(&r, &y, &u, dt, &limits, 0.01).unwrap();
        assert!((rec - 0.5).abs() < 1e-12);
        // Never back in band / never saturated.
        let stuck = vec![0.0; n];
        assert_eq!(
            recovery_time_s(&r, &stuck, &u, dt, &limits, 0.01),
            Some(f64::INFINITY)
        );
        assert_eq!(recovery_time_s(&r, &y, &[0.0; 60], dt, &limits, 0.01), None);
    }

    #[test]
    fn compute_fills_every_field_and_validates() {
        let r = [0.0, 0.0, 2.0, 2.0, 2.0, 2.0];
        let y = [0.0, 0.0, 1.0, 2.4, 2.0, 2.0];
        let u = [0.0, 0.0, 1.0, 1.0, 0.5, 0.5];
        let a = [0.0, 0.0, 10.0, 4.0, -4.0, 0.0];
        let trace = Trace {
            dt_s: 0.5,
            reference: &r,
            output: &y,
            command: &u,
            accel: &a,
        };
        let step = Step::detect(&r);
        assert_eq!(
            step,
            Some(Step {
                start_index: 2,
                from: 0.0,
                to: 2.0
            })
        );
        let opts = MetricOptions {
            step,
            saturation: Some(Saturation {
                min: -1.0,
                max: 1.0,
                tolerance: 0.0,
            }),
            ..MetricOptions::default()
        };
        let m = compute(&trace, &opts).unwrap();
        assert!((m.overshoot_pct.unwrap() - 20.0).abs() < 1e-12);
        assert!((m.settling_time_s.unwrap() - 0.5 * (1.0 + 0.36 / 0.4)).abs() < 1e-12);
        assert!((m.iae - 0.5 * 1.4).abs() < 1e-12 && (m.ise - 0.5 * 1.16).abs() < 1e-12);
        assert_eq!(
            (m.peak_command, m.command_total_variation, m.peak_slew_per_s),
            (1.0, 1.5, 2.0)
        );
        assert_eq!((m.peak_accel, m.peak_jerk), (10.0, 20.0));
        assert_eq!(m.time_saturated_s, Some(1.0));
        // Saturated at samples 2 and 3; at the exit (sample 4) |e| = 0 is already in band.
        assert_eq!(m.recovery_time_s, Some(0.0));
        assert_eq!(m.steady_state_error, Some(0.0));
        // Times of the worst values (dt = 0.5 s): the overshoot peak 2.4 is
        // sample 3; |u| = 1 first at sample 2, the largest command step
        // (0 → 1) ends at sample 2; |a| = 10 at sample 2; of the rate changes
        // 0 → 10 (10), 10 → 4 (6), 4 → −4 (8), the largest ends at sample 2.
        assert_eq!(m.at_s.overshoot_pct, Some(1.5));
        assert_eq!(
            (m.at_s.peak_command, m.at_s.peak_slew_per_s),
            (Some(1.0), Some(1.0))
        );
        assert_eq!(
            (m.at_s.peak_accel, m.at_s.peak_jerk),
            (Some(1.0), Some(1.0))
        );
        let late = [0.0, 0.0, 1.0, 4.0, -4.0, 0.0];
        let m2 = compute(
            &Trace {
                accel: &late,
                ..trace
            },
            &opts,
        )
        .unwrap();
        // |a| = 4 first at sample 3; 4 → −4 (8) is the largest change, at sample 4.
        assert_eq!(
            (m2.at_s.peak_accel, m2.at_s.peak_jerk),
            (Some(1.5), Some(2.0))
        );
        assert_eq!(m.at_s.offset(10, 0.5).peak_jerk, Some(6.0));

        let none = compute(&trace, &MetricOptions::default()).unwrap();
        assert_eq!(
            (none.rise_time_s, none.settling_time_s, none.overshoot_pct),
            (None, None, None)
        );
        assert_eq!((none.time_saturated_s, none.recovery_time_s), (None, None));

        let short = Trace {
            accel: &a[..3],
            ..trace
        };
        assert!(matches!(
            compute(&short, &opts),
            Err(MetricsError::LengthMismatch {
                name: "accel",
                len: 3,
                expected: 6
            })
        ));
        let bad_dt = Trace { dt_s: 0.0, ..trace };
        assert!(matches!(
            compute(&bad_dt, &opts),
            Err(MetricsError::OutOfRange { name: "dt_s", .. })
        ));
        let bad_band = MetricOptions {
            settling_band: 1.5,
            ..opts
        };
        assert!(compute(&trace, &bad_band).is_err());
    }
}
