//! Back-to-back comparison of the fixed-point (Q16.16) controller against
//! the `f64` one: the same scenario, inputs, plant and noise, run twice.
//!
//! Back-to-back testing (running a floating-point model and the
//! fixed-point code on identical stimuli and bounding their difference) is
//! how model-based development of automotive software verifies generated
//! or hand-written production code; ISO 26262-6 lists back-to-back
//! comparison between model and code among its software unit verification
//! methods (from memory).
//!
//! - [`diff`](diff_stats): largest and RMS difference of command and
//!   output, the time of the largest, the first branch divergence;
//! - [`limit cycles`](detect_limit_cycle) and [`integrator stall`](stall)
//!   in the steady state of the fixed loop, each next to the bound the
//!   formats give;
//! - [`coefficient quantization`](coefficient_table);
//! - the 16-bit backend ([`SixteenBit`]) beside Q16.16: its difference from
//!   `f64`, limit cycle and [stall bound](stall_16), shown and not judged
//!   (the checks cover Q16.16; `check --backend slim16` judges the 16-bit
//!   loop against the scenario's criteria);
//! - tolerances declared in `[compare]` or [derived from the
//!   formats](format_bounds), and the [`Check`]s of the verdict;
//! - reports: [`table`], [`json`], [`junit`], [`trace_csv`], [`plot`].
//!
//! ```
//! use evenkeel_harness::{compare, Scenario};
//! let comparison = compare::compare(&Scenario::demo()?)?;
//! assert!(comparison.passed(), "{}", compare::table(&comparison));
//! assert!(comparison.command.max_abs < 0.05); // normalised traction command
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```

mod coefficients;
mod diff;
mod limit_cycle;
mod plot;
mod report;
mod sixteen;
mod stall;
mod tolerance;
mod verdict;

use std::ops::Range;

use evenkeel::fixed::types::I16F16;
use evenkeel::{Config, Slim16, Status};

pub use coefficients::{CoefRow, coefficient_table, coefficients_within_contract};
pub use diff::{DiffStats, Divergence, diff_stats, first_divergence};
pub use limit_cycle::{Detector, LimitCycle, detect_limit_cycle, half_peak_to_peak};
pub use plot::{plot, plot_svg};
pub use report::{json, junit, table, trace_csv};
pub use sixteen::{SixteenBit, stall_16};
pub use stall::{LSB, Stall, stall};
pub use tolerance::{
    CompareSpec, DEFAULT_MAX_LSB_PCT, FormatBounds, MARGIN, Tolerance, format_bounds,
    format_bounds_16, physical_bounds,
};
pub use verdict::Check;

use crate::outcome::{BackendKind, RunError};
use crate::scenario::Scenario;
use crate::sim::Recording;

/// Half peak-to-peak of command and output over the steady-state window.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ripple {
    /// Command, half peak-to-peak.
    pub command: f64,
    /// True plant output, half peak-to-peak.
    pub output: f64,
}

/// Everything `evenkeel compare` reports for one scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct Comparison {
    /// The scenario as run.
    pub scenario: Scenario,
    /// The fixed-point (Q16.16) run.
    pub fixed: Recording,
    /// The `f64` run.
    pub float: Recording,
    /// Command difference, fixed − f64.
    pub command: DiffStats,
    /// True plant output difference, fixed − f64.
    pub output: DiffStats,
    /// First sample with different controller status, if any.
    pub divergence: Option<Divergence>,
    /// Sample range of the steady-state window.
    pub window: Range<usize>,
    /// Limit cycle of the fixed run's command in the window.
    pub fixed_cycle: Option<LimitCycle>,
    /// Limit cycle of the `f64` run's command in the window.
    pub float_cycle: Option<LimitCycle>,
    /// Ripple of the fixed run in the window.
    pub fixed_ripple: Ripple,
    /// Ripple of the `f64` run in the window.
    pub float_ripple: Ripple,
    /// Integrator stall analysis (`None` without integral action),
    /// measurement units.
    pub stall: Option<Stall>,
    /// One Q16.16 measurement LSB in measurement units (2⁻¹⁶ ÷ the
    /// measurement's per-unit scale).
    pub measurement_lsb: f64,
    /// The 16-bit backend's run beside it, or why it refused the settings.
    pub sixteen: Result<SixteenBit, String>,
    /// Coefficient quantization table.
    pub coefficients: Vec<CoefRow>,
    /// Rounding bounds from the formats.
    pub bounds: FormatBounds,
    /// Reference span (max − min; |reference| if constant), measurement units.
    pub reference_span: f64,
    /// The verdict, one check per tolerance.
    pub checks: Vec<Check>,
}

impl Comparison {
    /// `true` when every check passes.
    #[must_use]
    pub fn passed(&self) -> bool {
        self.checks.iter().all(|c| c.pass)
    }

    /// Panics with the report unless every check passed; for `cargo test`.
    ///
    /// # Panics
    /// When a check fails.
    #[allow(clippy::panic)]
    pub fn assert_pass(&self) {
        if !self.passed() {
            panic!("{}", table(self));
        }
    }
}

/// Runs `scenario` with the fixed-point and the `f64` backend and compares
/// the runs.
///
/// # Errors
/// [`RunError`] when a backend refuses the settings or a part cannot be
/// built.
pub fn compare(scenario: &Scenario) -> Result<Comparison, RunError> {
    let fixed = scenario.run::<I16F16>()?.recording;
    let float = scenario.run::<f64>()?.recording;
    let config_error = |error| RunError::Config {
        backend: "fixed",
        error,
    };
    let settings = &scenario.controller;
    let config = Config::<I16F16>::try_new(settings).map_err(config_error)?;
    let m_per_unit = settings.scaling.measurement.per_unit;

    let (lo, hi) = float
        .reference
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &r| {
            (lo.min(r), hi.max(r))
        });
    let ref_max = lo.abs().max(hi.abs());
    let reference_span = if hi > lo { hi - lo } else { ref_max };
    let error_max = float
        .reference
        .iter()
        .zip(&float.measurement)
        .map(|(r, y)| (r - y).abs())
        .fold(0.0, f64::max);
    let r_max = error_max.max(2.0 * half_peak_to_peak(&float.measurement));
    // The sensor's quantum, or the ADC's count when coarser.
    let adc = settings.scaling.adc_max().map_or(0.0, |_| 1.0 / m_per_unit);
    let quantum = scenario.sensor.map_or(0.0, |s| s.quantum).max(adc);
    let mut slew_run = 0_usize;
    let mut run = 0_usize;
    for st in &float.status {
        run = if st.contains(Status::SLEW) {
            run + 1
        } else {
            0
        };
        slew_run = slew_run.max(run);
    }
    let bounds = physical_bounds(format_bounds, settings, quantum, slew_run, r_max, ref_max)
        .map_err(config_error)?;
    let sixteen = sixteen_bit(scenario, &float, quantum, slew_run, r_max, ref_max);

    let window = steady_window(scenario, &float);
    let det = Detector::default();
    let cycle = |rec: &Recording| {
        let x = rec.command.get(window.clone()).unwrap_or(&[]);
        detect_limit_cycle(x, rec.dt_s, &det)
    };
    let ripple = |rec: &Recording| Ripple {
        command: half_peak_to_peak(rec.command.get(window.clone()).unwrap_or(&[])),
        output: half_peak_to_peak(rec.output.get(window.clone()).unwrap_or(&[])),
    };
    let sixteen = sixteen.map(|(rec, bounds, config, scaling)| {
        let command_lsb = 1.0 / scaling.command.per_unit;
        // A command resting on one 16-bit value is no cycle: half its LSB.
        let det16 = Detector {
            min_peak_to_peak: 0.5 * command_lsb,
            ..det
        };
        SixteenBit {
            scaling,
            measurement_lsb: 1.0 / scaling.measurement.per_unit,
            command_lsb,
            command: diff_stats(&rec.time_s, &rec.command, &float.command),
            output: diff_stats(&rec.time_s, &rec.output, &float.output),
            divergence: first_divergence(&rec.status, &float.status),
            cycle: detect_limit_cycle(
                rec.command.get(window.clone()).unwrap_or(&[]),
                rec.dt_s,
                &det16,
            ),
            ripple: ripple(&rec),
            stall: stall_16(&config, scaling.measurement.per_unit),
            bounds,
            recording: rec,
        }
    });
    let mut c = Comparison {
        command: diff_stats(&fixed.time_s, &fixed.command, &float.command),
        output: diff_stats(&fixed.time_s, &fixed.output, &float.output),
        divergence: first_divergence(&fixed.status, &float.status),
        fixed_cycle: cycle(&fixed),
        float_cycle: cycle(&float),
        fixed_ripple: ripple(&fixed),
        float_ripple: ripple(&float),
        window,
        stall: stall(&config).map(|st| Stall {
            bound: st.bound / m_per_unit,
            measured_positive: st.measured_positive / m_per_unit,
            measured_negative: st.measured_negative / m_per_unit,
            ..st
        }),
        measurement_lsb: LSB / m_per_unit,
        sixteen,
        coefficients: coefficient_table(settings).map_err(config_error)?,
        bounds,
        reference_span,
        scenario: scenario.clone(),
        fixed,
        float,
        checks: Vec::new(),
    };
    c.checks = verdict::evaluate(&c);
    Ok(c)
}

/// The 16-bit run of `scenario` with its stored configuration, bounds and
/// scaling; a message if the backend refuses the settings.
fn sixteen_bit(
    scenario: &Scenario,
    float: &Recording,
    quantum: f64,
    slew_run: usize,
    r_max: f64,
    ref_max: f64,
) -> Result<(Recording, FormatBounds, Config<Slim16>, evenkeel::Scaling), String> {
    let settings = scenario.settings_on(BackendKind::Slim16);
    let config = Config::<Slim16>::try_new(&settings).map_err(|e| e.to_string())?;
    let bounds = physical_bounds(
        format_bounds_16,
        &settings,
        quantum,
        slew_run,
        r_max,
        ref_max,
    )
    .map_err(|e| e.to_string())?;
    let rec = scenario
        .run::<Slim16>()
        .map_err(|e| e.to_string())?
        .recording;
    debug_assert_eq!(rec.time_s.len(), float.time_s.len());
    Ok((rec, bounds, config, settings.scaling))
}

/// The steady-state window: the last `[compare] steady_window_s` if
/// declared, else the second half of the final stretch in which the
/// reference, every disturbance and the override state stay constant (at
/// least 16 samples, at most the whole run).
fn steady_window(scenario: &Scenario, rec: &Recording) -> Range<usize> {
    let n = rec.time_s.len();
    if let Some(w) = scenario.compare.steady_window_s {
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        let len = (w / rec.dt_s).round().max(1.0) as usize;
        return n.saturating_sub(len)..n;
    }
    let setup = &scenario.setup;
    let overriding = |t: f64| {
        setup
            .overrides
            .iter()
            .any(|o| t >= o.start_s && t < o.start_s + o.duration_s)
    };
    let Some(&t_end) = rec.time_s.last() else {
        return 0..0;
    };
    let last = (
        rec.reference.last().copied(),
        setup.disturbances.at(t_end),
        overriding(t_end),
    );
    let mut start = n;
    while start > 0 {
        let k = start - 1;
        let t = rec.time_s[k];
        if (
            rec.reference.get(k).copied(),
            setup.disturbances.at(t),
            overriding(t),
        ) != last
        {
            break;
        }
        start = k;
    }
    let stretch = n - start;
    let len = (stretch / 2).max(16).min(n);
    n - len..n
}
