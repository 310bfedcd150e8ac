//! From logged tests to `[plant]` and `[uncertainty]`: `evenkeel fit`.
//!
//! - `log`: CSV logs, validated with file, line and column
//! - `model`: the harness's own plant models driven by a log's input,
//!   fitted by output error ([`fit_log`])
//! - `lm`: Levenberg–Marquardt, small dense linear algebra
//! - `stats`: covariance, intervals, whiteness (Ljung–Box)
//! - `range`: across logs, the nominal plant and the uncertainty box
//! - `output`: report, JSON, the scenario written (new or edited in place
//!   of its values), plots
//!
//! ```
//! use evenkeel_harness::fit::{Columns, FitRequest, ModelKind, fit, parse_log};
//! // A first-order lag k = 2, τ = 1.5 s, sampled every 0.1 s, from a step
//! // of the input at t = 1 s (exact zero-order-hold response).
//! let mut text = String::from("t_s,applied,measurement\n");
//! let mut y = 0.0f64;
//! for k in 0..100 {
//!     let u = if k >= 10 { 1.0 } else { 0.0 };
//!     text += &format!("{},{u},{y}\n", f64::from(k) * 0.1);
//!     y = 2.0 * u + (y - 2.0 * u) * (-0.1f64 / 1.5).exp();
//! }
//! let log = parse_log(&text, "step.csv", "step", &Columns::default())?;
//! let request = FitRequest { model: ModelKind::FirstOrderLag, actuator_lag: false, fixed: vec![], base: None };
//! let outcome = fit(&request, &[log], 0.0).map_err(|e| e.to_string())?;
//! let gain = outcome.logs[0].estimates.iter().find(|e| e.target.key() == "gain").unwrap();
//! assert!((gain.value - 2.0).abs() < 1e-6);
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```

mod lm;
mod log;
mod model;
mod output;
mod stats;

use rayon::prelude::*;

pub use lm::{Coordinate, Minimum, Residuals, inverse, minimise, solve};
pub use log::{
    Columns, GAP_ERROR, GAP_WARNING, Log, LogError, MAX_LOG_BYTES, MIN_SAMPLES, parse as parse_log,
    read as read_log,
};
pub use model::{
    Estimate, FitRequest, LogFit, MAX_NORMALISED_ERROR, MAX_RELATIVE_HALF_WIDTH, ModelKind, Target,
    fit_log,
};
pub use output::{html, json, new_scenario, plot, plot_svg, report, scenario_edit};
pub use stats::{CONFIDENCE, Whiteness, chi_square_95, covariance, t_quantile_975, whiteness};

/// One plant value across the logs: the nominal and the box written to
/// `[uncertainty]`.
#[derive(Debug, Clone, PartialEq)]
pub struct Spread {
    /// The value.
    pub target: Target,
    /// The estimate of each log, in log order.
    pub values: Vec<f64>,
    /// Nominal: the median over the logs.
    pub nominal: f64,
    /// Lower end of the box.
    pub min: f64,
    /// Upper end of the box.
    pub max: f64,
}

/// The fit of every log and what they say together.
#[derive(Debug, Clone, PartialEq)]
pub struct FitOutcome {
    /// What was asked.
    pub request: FitRequest,
    /// One fit per log, in the order given.
    pub logs: Vec<LogFit>,
    /// Per plant value: nominal and box.
    pub spread: Vec<Spread>,
    /// The margin the box was widened by (a fraction of the nominal).
    pub margin: f64,
}

impl FitOutcome {
    /// `true` when every log's fit can be handed over (reproduces the log,
    /// every plant value identified).
    #[must_use]
    pub fn passed(&self) -> bool {
        self.logs.iter().all(|l| l.problems.is_empty())
    }
}

/// Fits every log (in parallel) and combines them: the nominal is the
/// median of the logs' estimates; the box spans them (with one log, its
/// 95 % interval), each end widened by `margin`·|nominal|, kept on the
/// valid side of zero.
///
/// # Errors
/// A message naming the log whose model cannot be set up.
pub fn fit(req: &FitRequest, logs: &[Log], margin: f64) -> Result<FitOutcome, String> {
    let fits: Vec<LogFit> = logs
        .par_iter()
        .map(|l| fit_log(req, l))
        .collect::<Result<_, _>>()?;
    let mut spread = Vec::new();
    if let Some(first) = fits.first() {
        for (i, e) in first.estimates.iter().enumerate() {
            if !e.target.is_plant() {
                continue;
            }
            let values: Vec<f64> = fits.iter().map(|f| f.estimates[i].value).collect();
            let mut sorted = values.clone();
            sorted.sort_by(f64::total_cmp);
            let mid = sorted.len() / 2;
            let nominal = if sorted.len() % 2 == 1 {
                sorted[mid]
            } else {
                0.5 * (sorted[mid - 1] + sorted[mid])
            };
            let (lo, hi) = if fits.len() == 1 {
                e.interval
            } else {
                (sorted[0], sorted[sorted.len() - 1])
            };
            let pad = margin * nominal.abs();
            let (mut min, mut max) = (lo - pad, hi + pad);
            // Stay on the side of zero the value is on (a gain does not
            // change sign, a time constant stays positive).
            if nominal > 0.0 {
                min = min.max(
                    if matches!(e.target, Target::Param(p) if is_non_negative(p)) {
                        0.0
                    } else {
                        0.01 * nominal
                    },
                );
            } else if nominal < 0.0 {
                max = max.min(0.01 * nominal);
            }
            spread.push(Spread {
                target: e.target,
                values,
                nominal,
                min,
                max,
            });
        }
    }
    Ok(FitOutcome {
        request: req.clone(),
        logs: fits,
        spread,
        margin,
    })
}

/// Values that may be zero (dead time, friction, drag).
fn is_non_negative(p: crate::sweep::Param) -> bool {
    use crate::sweep::Param;
    matches!(
        p,
        Param::DeadTimeS | Param::Crr | Param::CdA | Param::Viscous | Param::Drag
    )
}
