//! Tolerances of the back-to-back comparison: declared in the scenario's
//! `[compare]` table, or derived from the number formats.
//!
//! # How the defaults are derived
//!
//! 1. **Per-sample rounding bound G** of the fixed-point controller against
//!    `f64`, term by term as in `controller/FORMATS.md` §4, with this
//!    scenario's stored coefficients (their errors Δ from the
//!    quantization table), R = the largest `|r − y|` or measurement span of
//!    the `f64` run, and the rounding of the inputs (setpoint and
//!    measurement reach the fixed controller rounded to Q16.16, ≤ q/2 each):
//!    `G = δP + q + δs + δI`.
//! 2. **Other quantizers in the loop.** A sensor with a quantum Q_s rounds
//!    both runs' measurements, but once the trajectories differ by a hair a
//!    reading can fall on the other side of a level: a difference of one
//!    whole quantum, which the controller turns into `(Kp + Ki·Ts)·Q_s` of
//!    command.
//! 3. **Slew step.** While the slew limiter holds the command, both
//!    commands ramp open loop by their own stored step, which differ by
//!    Δs = |stored − R·Ts| ≤ q/2 per sample: over the longest stretch of m
//!    consecutive slew-limited samples (counted in the `f64` run) they part
//!    by `m·Δs`.
//! 4. **Resolutions.** Command: `E_u = G + m·Δs + (Kp + Ki·Ts)·Q_s`.
//!    Output: each loop can only settle to within its measurement
//!    resolution, and a command difference `C = G + m·Δs` is what an output
//!    difference `C/(Kp + Ki·Ts)` would make the controller produce:
//!    `E_y = q/2 + Q_s + C/(Kp + Ki·Ts)`.
//! 5. **Closed-loop margin M = 4**: a well-damped loop amplifies a
//!    disturbance by at most its sensitivity peak (M_s ≤ 2 is the usual
//!    robustness target for PI loops: Åström & Hägglund, *Advanced PID
//!    Control*, 2006, from memory), doubled for the discrete events the
//!    formats cannot bound (a limit, the conditional integration or a
//!    sensor level decided differently). Largest difference ≤ M·E, RMS
//!    ≤ M/2·E.
//!
//! These are engineering estimates, not proofs: the strict open-loop bound
//! of FORMATS.md §4 grows with the run length and is useless as a
//! tolerance. The limit-cycle amplitude defaults to G (a quantization cycle
//! hunts between grid values one sample's rounding apart), the stall error
//! to one LSB q (any error the format can represent must move the
//! integrator), and the resolution to 0.1 % (one LSB at most a thousandth of
//! the reference span).

use evenkeel::fixed::types::I16F16;
use evenkeel::{Config, ConfigError, Settings};

/// One Q16.16 LSB.
const Q: f64 = 1.0 / 65_536.0;

/// Margin M between the resolutions and the default largest differences.
pub const MARGIN: f64 = 4.0;

/// Default of `[compare] max_lsb_pct`: one LSB at most 0.1 % of the
/// reference span.
pub const DEFAULT_MAX_LSB_PCT: f64 = 0.1;

/// The scenario's `[compare]` table as declared; `None` means "derive it".
#[derive(Debug, Clone, PartialEq, Default)]
pub struct CompareSpec {
    /// Largest |command difference|, command units.
    pub max_command_diff: Option<f64>,
    /// RMS command difference, command units.
    pub rms_command_diff: Option<f64>,
    /// Largest |output difference|, measurement units.
    pub max_output_diff: Option<f64>,
    /// RMS output difference, measurement units.
    pub rms_output_diff: Option<f64>,
    /// Largest amplitude (half peak-to-peak) of a limit cycle the fixed
    /// loop may show where the `f64` loop shows none, command units.
    pub max_limit_cycle_amplitude: Option<f64>,
    /// Largest error that may fail to move the integrator, measurement units.
    pub max_stall_error: Option<f64>,
    /// Largest size of one LSB as a percentage of the reference span.
    pub max_lsb_pct: Option<f64>,
    /// Length of the steady-state window at the end of the run, s (default:
    /// the second half of the final stretch with constant reference and
    /// disturbances).
    pub steady_window_s: Option<f64>,
    /// Where the declared tolerances come from; carried into JSON and JUnit.
    pub source: Option<String>,
}

/// The rounding bounds of one scenario, from the formats.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FormatBounds {
    /// Per-sample command bound G (see the module documentation).
    pub per_sample: f64,
    /// Open-loop drift of the slew-limited command: `m·|Δs|` for the
    /// longest stretch of `m` slew-limited samples.
    pub slew_drift: f64,
    /// Sensor quantum Q_s (0 without one).
    pub sensor_quantum: f64,
    /// `Kp + Ki·Ts`: command per unit of a one-sample measured error.
    pub loop_gain: f64,
    /// Command resolution `E_u`.
    pub command: f64,
    /// Output resolution `E_y`.
    pub output: f64,
}

/// The bounds for `settings`, a sensor quantum (0: none), the longest
/// stretch of consecutive slew-limited samples `slew_run`, and the largest
/// error or measurement span `r_max` and reference magnitude `ref_max` of
/// the run.
///
/// ```
/// use evenkeel::Settings;
/// use evenkeel_harness::compare::format_bounds;
/// let q = f64::powi(2.0, -16);
/// // P-only, Kp = 1, no filter: G = Kp·(q/2 + 3·q/2) + q/2 + q = 3.5 q.
/// let b = format_bounds(&Settings::new(0.01, 1.0, 0.0, -1.0, 1.0), 0.0, 0, 1.0, 1.0)?;
/// assert_eq!(b.per_sample, 3.5 * q);
/// assert_eq!(b.output, 0.5 * q + 3.5 * q);
/// # Ok::<(), evenkeel::ConfigError>(())
/// ```
///
/// # Errors
/// The [`ConfigError`] when the fixed-point backend refuses the settings.
pub fn format_bounds(
    settings: &Settings,
    sensor_quantum: f64,
    slew_run: usize,
    r_max: f64,
    ref_max: f64,
) -> Result<FormatBounds, ConfigError> {
    let p = settings.per_sample()?;
    let c = Config::<I16F16>::try_new(settings)?;
    let stored = Stored {
        kp: c.kp().to_f64(),
        ki_ts: c.ki_ts().to_f64(),
        weight: c.setpoint_weight().map(|x| x.to_f64()),
        alpha: c.filter_alpha().map(|x| x.to_f64()),
        slew: c.slew_step().map(|x| x.to_num::<f64>()),
    };
    let grid = Grid {
        q: Q,
        half_state: f64::powi(2.0, -33),
    };
    Ok(bounds(
        &p,
        &stored,
        grid,
        sensor_quantum,
        slew_run,
        r_max,
        ref_max,
    ))
}

/// [`format_bounds`] for the 16-bit backend (`Slim16`, FORMATS.md §8):
/// q = one raw LSB, half a state LSB h = 2⁻¹⁴, the 16-bit mantissas' errors;
/// every value in the settings' raw units.
///
/// ```
/// use evenkeel::Settings;
/// use evenkeel_harness::compare::format_bounds_16;
/// // P-only, Kp = 1 raw per raw: G = Kp·(½ + 3·½) + ½ + 1 = 3.5 raw LSB.
/// let b = format_bounds_16(&Settings::new(0.01, 1.0, 0.0, -1000.0, 1000.0), 0.0, 0, 100.0, 100.0)?;
/// assert_eq!(b.per_sample, 3.5);
/// # Ok::<(), evenkeel::ConfigError>(())
/// ```
///
/// # Errors
/// The [`ConfigError`] when the 16-bit backend refuses the settings.
pub fn format_bounds_16(
    settings: &Settings,
    sensor_quantum: f64,
    slew_run: usize,
    r_max: f64,
    ref_max: f64,
) -> Result<FormatBounds, ConfigError> {
    use evenkeel::Backend;
    let p = settings.per_sample()?;
    let c = Config::<evenkeel::Slim16>::try_new(settings)?;
    let coef = |x: evenkeel::SlimCoef| x.to_f64();
    let stored = Stored {
        kp: coef(c.kp()),
        ki_ts: coef(c.ki_ts()),
        weight: c.setpoint_weight().map(coef),
        alpha: c.filter_alpha().map(coef),
        slew: c.slew_step().map(Backend::to_f64),
    };
    let grid = Grid {
        q: 1.0,
        half_state: f64::powi(2.0, -14),
    };
    Ok(bounds(
        &p,
        &stored,
        grid,
        sensor_quantum,
        slew_run,
        r_max,
        ref_max,
    ))
}

/// `bound` (a [`format_bounds`] or [`format_bounds_16`]) for settings with
/// a scaling: the quantum, `r_max` and `ref_max` are given in physical
/// units and converted to raw ones; the bounds come back in physical
/// units (command bounds ÷ command per unit, output bound ÷ measurement
/// per unit). With `Scaling::NONE` the same as `bound` itself.
///
/// # Errors
/// As `bound`.
pub fn physical_bounds(
    bound: fn(&Settings, f64, usize, f64, f64) -> Result<FormatBounds, ConfigError>,
    settings: &Settings,
    sensor_quantum: f64,
    slew_run: usize,
    r_max: f64,
    ref_max: f64,
) -> Result<FormatBounds, ConfigError> {
    let sc = settings.scaling;
    if sc.is_none() {
        return bound(settings, sensor_quantum, slew_run, r_max, ref_max);
    }
    let (m, c) = (sc.measurement.per_unit, sc.command.per_unit);
    let b = bound(
        settings,
        sensor_quantum * m,
        slew_run,
        r_max * m,
        ref_max * m,
    )?;
    Ok(FormatBounds {
        per_sample: b.per_sample / c,
        slew_drift: b.slew_drift / c,
        sensor_quantum,
        loop_gain: b.loop_gain * m / c,
        command: b.command / c,
        output: b.output / m,
    })
}

/// The stored values of the per-sample coefficients and the slew step.
struct Stored {
    kp: f64,
    ki_ts: f64,
    weight: Option<f64>,
    alpha: Option<f64>,
    slew: Option<f64>,
}

/// The signal LSB q and half a state LSB (2⁻³³ for Q32.32).
#[derive(Clone, Copy)]
struct Grid {
    q: f64,
    half_state: f64,
}

/// The terms of FORMATS.md §4 for one format.
fn bounds(
    p: &evenkeel::PerSample,
    c: &Stored,
    grid: Grid,
    sensor_quantum: f64,
    slew_run: usize,
    r_max: f64,
    ref_max: f64,
) -> FormatBounds {
    let Grid { q, half_state } = grid;
    let d = |stored: f64, exact: f64| (stored - exact).abs();
    let half = q / 2.0;
    // Inputs rounded to the format on the way in.
    let delta_r = half;
    let mut delta_y = half;
    if let (Some(alpha), Some(stored)) = (p.filter_alpha, c.alpha) {
        let da = d(stored, alpha);
        delta_y += q + da * r_max / alpha + half_state / alpha;
    }
    let delta_br = match (p.setpoint_weight, c.weight) {
        (Some(b), Some(stored)) => half + d(stored, b) * ref_max + b * delta_r,
        _ => delta_r,
    };
    let deadband = if p.deadband.is_some() { half } else { 0.0 };
    let kp = p.kp;
    let delta_p = kp * (delta_br + 3.0 * delta_y + deadband) + d(c.kp, kp) * r_max + half;
    // Ki·Ts = 0 adds exactly nothing; otherwise one rounding of the state.
    let mut delta_i = if p.ki_ts > 0.0 {
        p.ki_ts * (delta_y + delta_r + deadband) + d(c.ki_ts, p.ki_ts) * r_max + 4.0 * half_state
    } else {
        0.0
    };
    if let Some(ratio) = p.tracking_ratio {
        delta_i += ratio * (2.0 * delta_p + 2.0 * q) + 4.0 * half_state;
    }
    let (delta_s, slew_drift) = match (p.slew_step, c.slew) {
        (Some(exact), Some(stored)) => {
            let ds = d(stored, exact);
            #[allow(clippy::cast_precision_loss)] // sample counts < 2^53
            (ds, ds * slew_run as f64)
        }
        _ => (0.0, 0.0),
    };
    let g = delta_p + q + delta_s + delta_i;
    let loop_gain = kp + p.ki_ts;
    let controller = g + slew_drift;
    FormatBounds {
        per_sample: g,
        slew_drift,
        sensor_quantum,
        loop_gain,
        command: controller + loop_gain * sensor_quantum,
        output: half + sensor_quantum + controller / loop_gain,
    }
}

/// A tolerance with where it comes from.
#[derive(Debug, Clone, PartialEq)]
pub struct Tolerance {
    /// The limit (measured ≤ limit passes).
    pub limit: f64,
    /// `true` when written in the scenario, `false` when derived.
    pub declared: bool,
    /// The format-derived value (equal to `limit` when not declared).
    pub derived: f64,
    /// How the derived value is made, with its numbers.
    pub basis: String,
}

impl Tolerance {
    /// `declared` if given, else `derived`.
    #[must_use]
    pub fn pick(declared: Option<f64>, derived: f64, basis: String) -> Self {
        Self {
            limit: declared.unwrap_or(derived),
            declared: declared.is_some(),
            derived,
            basis,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use evenkeel::AntiWindup;

    #[test]
    fn bounds_grow_with_every_feature_and_the_sensor() {
        let plain = Settings::new(0.01, 3.0, 0.2, -1.0, 1.0);
        let full = plain
            .with_filter_time_s(0.05)
            .with_slew_per_s(0.35)
            .with_anti_windup(AntiWindup::BackCalculation {
                tracking_time_s: 0.5,
            });
        let a = format_bounds(&plain, 0.0, 0, 6.0, 6.0).unwrap();
        let b = format_bounds(&full, 0.0, 0, 6.0, 6.0).unwrap();
        assert!(b.per_sample > a.per_sample);
        let c = format_bounds(&full, 0.005, 0, 6.0, 6.0).unwrap();
        assert_eq!(c.per_sample, b.per_sample);
        assert!((c.command - (b.per_sample + 3.002 * 0.005)).abs() < 1e-12);
        // Tens of LSB per sample for the tug's settings, not thousands.
        assert!(b.per_sample < 30.0 * Q, "{}", b.per_sample / Q);
        let t = Tolerance::pick(None, 2.0, "x".into());
        assert_eq!((t.limit, t.declared), (2.0, false));
        let t = Tolerance::pick(Some(1.0), 2.0, "x".into());
        assert_eq!((t.limit, t.declared, t.derived), (1.0, true, 2.0));
    }
}
