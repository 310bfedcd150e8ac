//! Gain and limit design: from a scenario's plant with its uncertainty
//! ranges and criteria, a controller that passes at every corner, or the
//! reason none can.
//!
//! [`tune`] is the whole of `evenkeel design`:
//!
//! 1. [`feasibility`]: can any controller meet the criteria at every
//!    corner (hold commands against the limits, rise and settling bounds)?
//! 2. [`design`]: the analytic start (SIMC or pole placement over the
//!    linearised corners, comfort limits from the acceleration and jerk
//!    criteria), with its derivation;
//! 3. [`Verification`]: the real controller in the closed loop over the
//!    corners, the centre and a Latin-hypercube sample ([`sample`]), judged
//!    by the scenario's criteria as normalised margins;
//! 4. the search (`search`): a deterministic pattern search while
//!    anything fails, with stability, gain margin, phase margin and Ms at
//!    every linearised corner as constraints ([`constraints`]);
//! 5. reports: [`report`], [`json`], [`junit`], [`plot`], the user's
//!    scenario with the designed values ([`scenario_toml`]) and the
//!    firmware `const` ([`snippet`]).
//!
//! Modules: `analytic`, `tuning` (SIMC, half rule, pole placement),
//! `model` (linear models at the corners, hold commands, rates),
//! `margins` (ZOH discretisation, loop gain on the unit circle, margins,
//! Ms, Mt, poles), `feasibility`, `verify`, `search`, `tune`, `output`,
//! `export`, `edit`, `plot`.
//!
//! ```
//! use evenkeel_harness::Scenario;
//! use evenkeel_harness::design::{Options, Request, tune};
//! let pump = Scenario::from_path("../shared/scenarios/irrigation_pump.toml")?;
//! let mut options = Options::for_scenario(&pump);
//! options.count = 8; // Latin-hypercube variants on top of corners and centre
//! let tuned = tune(&pump, &Request::default(), &options)?;
//! assert!(tuned.feasibility.feasible());
//! let v = tuned.verification.as_ref().unwrap();
//! assert_eq!(v.variants.len(), 8 + 1 + 8);
//! for c in &v.criteria {
//!     println!("{}: worst margin {:+.3}", c.criterion.metric, c.worst_margin);
//! }
//! assert!(tuned.passed()); // every variant, every criterion, Ms ≤ 2, GM ≥ 2, PM ≥ 30°
//! assert!(tuned.corners.iter().all(|c| c.margins.sensitivity_peak <= 2.0));
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```

mod analytic;
mod edit;
mod export;
mod feasibility;
mod formats;
mod margins;
mod model;
mod output;
mod plot;
mod search;
mod tune;
mod tuning;
mod verify;

use evenkeel::fixed::types::I16F16;
use evenkeel::{Config, ConfigError, Settings};

pub use analytic::design;
pub use edit::{
    DesignedValue, HEADER_MARK, c_header, c_name, designed_values, provenance, rust_snippet,
    scenario_toml, snippet,
};
pub use export::{html, json, junit};
pub use feasibility::{Feasibility, Finding, Severity, feasibility};
pub use formats::{FormatFit, RESOLUTION_SHARE, format_fits, needed};
pub use margins::{
    LinearPlant, LoopCoefficients, Margins, ResponsePoint, SampledLoop, frequency_response, margins,
};
pub use model::{
    Corner, command_gain, corners, equilibrium_command, hold_command, linearise, output_rate,
    reference_rate,
};
pub use output::{report, verdict};
pub use plot::{plot, plot_svg};
pub use search::{Score, Stop};
pub use tune::{
    DEFAULT_BUDGET, DEFAULT_COUNT, Options, SearchLog, StartPoint, TRADE_FACTORS, TradeOff,
    TradePoint, Tuned, trade_off, tune,
};
pub use tuning::{Fopdt, Pi, half_rule, pole_placement, simc};
pub use verify::{
    ConstraintMargin, CriterionMargin, Origin, SamplePoint, VariantCheck, Verification,
    constraints, criterion_margins, point_label, run_variants, sample,
};

use crate::scenario::Scenario;

/// A tuning rule.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum Method {
    /// SIMC (Skogestad 2003).
    Simc,
    /// Pole placement of the continuous closed loop.
    PolePlacement,
}

impl Method {
    /// The name on the command line and in reports.
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::Simc => "simc",
            Self::PolePlacement => "pole_placement",
        }
    }
}

/// What the engineer asks for.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Request {
    /// Tuning rule.
    pub method: Method,
    /// Closed-loop time constant τc (SIMC) or 1/ω₀ (pole placement), s,
    /// at the slowest corner. `None`: from the scenario's rise and
    /// settling criteria (τc = min(t_settle/8, t_rise/4.4)).
    pub closed_loop_time_s: Option<f64>,
    /// Damping ζ of the placed poles (pole placement).
    pub damping: f64,
    /// Peak acceleration (plant rate) allowed; `None`: the scenario's
    /// `peak_accel` criterion.
    pub accel_limit: Option<f64>,
    /// Peak jerk allowed; `None`: the scenario's `peak_jerk` criterion.
    pub jerk_limit: Option<f64>,
}

impl Default for Request {
    fn default() -> Self {
        Self {
            method: Method::Simc,
            closed_loop_time_s: None,
            damping: 1.0,
            accel_limit: None,
            jerk_limit: None,
        }
    }
}

/// Why no proposal could be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum DesignError {
    /// A request value out of range.
    #[error("{0}")]
    Request(String),
    /// The proposal is not a valid configuration at all.
    #[error("the proposed settings are invalid: {0}")]
    Config(ConfigError),
}

/// The margins at one corner.
#[derive(Debug, Clone, PartialEq)]
pub struct CornerReport {
    /// The corner.
    pub corner: Corner,
    /// Margins of the sampled loop with the stored (fixed-point) coefficients.
    pub margins: Margins,
}

/// One stored fixed-point coefficient against the wanted value.
#[derive(Debug, Clone, PartialEq)]
pub struct StoredCoefficient {
    /// Name (`kp`, `ki_ts`, …).
    pub name: &'static str,
    /// Wanted (f64).
    pub wanted: f64,
    /// Stored in Q16.16 / `FixedCoef`.
    pub stored: f64,
    /// Largest relative error accepted.
    pub tolerance: f64,
}

impl StoredCoefficient {
    /// Relative error of the stored value.
    #[must_use]
    pub fn relative_error(&self) -> f64 {
        if self.wanted == 0.0 {
            self.stored.abs()
        } else {
            ((self.stored - self.wanted) / self.wanted).abs()
        }
    }
}

/// Whether Q16.16 holds the proposal with the required precision.
#[derive(Debug, Clone, PartialEq)]
pub struct FixedCheck {
    /// `Config::<I16F16>::try_new` result.
    pub accepted: Result<(), ConfigError>,
    /// Stored coefficients.
    pub coefficients: Vec<StoredCoefficient>,
}

/// Relative precision required of stored gains and per-sample
/// coefficients: 10⁻⁴ keeps margins unchanged to well below a percent.
pub const COEFFICIENT_TOLERANCE: f64 = 1e-4;

impl FixedCheck {
    /// `true` when the configuration is accepted and every coefficient is
    /// within its tolerance.
    #[must_use]
    pub fn holds(&self) -> bool {
        self.accepted.is_ok()
            && self
                .coefficients
                .iter()
                .all(|c| c.relative_error() <= c.tolerance)
    }
}

/// A complete controller proposal.
#[derive(Debug, Clone, PartialEq)]
pub struct Proposal {
    /// Tuning rule used.
    pub method: Method,
    /// The proposed settings.
    pub settings: Settings,
    /// How each value was derived, in order, one line each.
    pub derivation: Vec<String>,
    /// Margins at every corner.
    pub corners: Vec<CornerReport>,
    /// Fixed-point check.
    pub fixed: FixedCheck,
}

impl Proposal {
    /// The corner with the smallest phase margin.
    #[must_use]
    pub fn worst_corner(&self) -> Option<&CornerReport> {
        self.corners.iter().min_by(|a, b| {
            a.margins
                .phase_margin_deg
                .total_cmp(&b.margins.phase_margin_deg)
        })
    }
}

/// The fixed-point (Q16.16) check of `settings`: accepted, and what it
/// stores against what was wanted.
#[must_use]
pub fn fixed_check(settings: &Settings) -> FixedCheck {
    let fixed = Config::<I16F16>::try_new(settings);
    let mut coefficients = Vec::new();
    if let (Ok(c), Ok(per)) = (&fixed, settings.per_sample()) {
        let mut push = |name, wanted: f64, stored: f64, tolerance| {
            coefficients.push(StoredCoefficient {
                name,
                wanted,
                stored,
                tolerance,
            });
        };
        push("kp", per.kp, c.kp().to_f64(), COEFFICIENT_TOLERANCE);
        push(
            "ki_ts",
            per.ki_ts,
            c.ki_ts().to_f64(),
            COEFFICIENT_TOLERANCE,
        );
        if let (Some(w), Some(st)) = (per.setpoint_weight, c.setpoint_weight()) {
            push("setpoint_weight", w, st.to_f64(), COEFFICIENT_TOLERANCE);
        }
        if let (Some(w), Some(st)) = (per.tracking_ratio, c.tracking_ratio()) {
            push("ts_over_tt", w, st.to_f64(), COEFFICIENT_TOLERANCE);
        }
        if let (Some(w), Some(st)) = (per.filter_alpha, c.filter_alpha()) {
            push("filter_alpha", w, st.to_f64(), COEFFICIENT_TOLERANCE);
        }
        if let (Some(w), Some(st)) = (per.slew_step, c.slew_step()) {
            push(
                "slew_step",
                w,
                st.to_num::<f64>(),
                evenkeel::SLEW_REL_TOLERANCE,
            );
        }
    }
    FixedCheck {
        accepted: fixed.map(drop),
        coefficients,
    }
}

/// The per-sample coefficients the loop analysis uses: as stored in Q16.16
/// when the format accepts `settings`, else as computed in f64.
pub(crate) fn loop_coefficients(settings: &Settings) -> Option<LoopCoefficients> {
    let ts = settings.period_s;
    if let Ok(c) = Config::<I16F16>::try_new(settings) {
        return Some(LoopCoefficients {
            period_s: ts,
            kp: c.kp().to_f64(),
            ki_ts: c.ki_ts().to_f64(),
            alpha: c.filter_alpha().map_or(1.0, |a| a.to_f64()),
        });
    }
    let per = settings.per_sample().ok()?;
    Some(LoopCoefficients {
        period_s: ts,
        kp: per.kp,
        ki_ts: per.ki_ts,
        alpha: per.filter_alpha.unwrap_or(1.0),
    })
}

/// Margins of the sampled loop under `settings` at every linearised
/// corner of `s` ([`corners`]); empty if the settings are invalid.
#[must_use]
pub fn corner_margins(s: &Scenario, settings: &Settings) -> Vec<CornerReport> {
    let Some(coeffs) = loop_coefficients(settings) else {
        return Vec::new();
    };
    corners(s)
        .into_iter()
        .map(|corner| {
            let m = margins(&SampledLoop::new(&corner.plant, &coeffs));
            CornerReport { corner, margins: m }
        })
        .collect()
}
