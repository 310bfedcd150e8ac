//! The whole of `evenkeel design`: feasibility, the analytic starting
//! point, verification over the sample, the search while anything fails,
//! and the robustness figures of the loop handed over.

use evenkeel::{AntiWindup, Settings};

use super::feasibility::{Feasibility, box_corners, feasibility};
use super::model::command_gain;
use super::search::{Candidate, Evaluator, Space, Stop, pattern_search, score, worst_outside};
use super::verify::{
    ConstraintMargin, CriterionMargin, Origin, SamplePoint, Verification, criterion_margins,
    point_label, run_variants, sample,
};
use super::{CornerReport, DesignError, FixedCheck, Proposal, Request, design, fixed_check};
use crate::outcome::BackendKind;
use crate::report::format_number;
use crate::scenario::Scenario;

/// How `design` verifies and searches.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Options {
    /// Backend the closed loops run on (default: fixed, as on target).
    pub backend: BackendKind,
    /// Latin-hypercube variants on top of the corners and centre.
    pub count: usize,
    /// Seed of the sample (draws and sensor noise).
    pub seed: u64,
    /// Candidates the search may evaluate at most.
    pub budget: usize,
    /// Search while anything fails (`false`: verify the analytic proposal
    /// only).
    pub search: bool,
}

/// Default number of Latin-hypercube variants.
pub const DEFAULT_COUNT: usize = 64;

/// Default search budget, candidates.
pub const DEFAULT_BUDGET: usize = 400;

impl Options {
    /// The defaults for `s`: fixed point, 64 variants, the `[sweep]` seed
    /// (0 without), a budget of 400 candidates, search on.
    #[must_use]
    pub fn for_scenario(s: &Scenario) -> Self {
        Self {
            backend: BackendKind::Fixed,
            count: DEFAULT_COUNT,
            seed: s.sweep.map_or(0, |p| p.seed),
            budget: DEFAULT_BUDGET,
            search: true,
        }
    }
}

/// What the search did.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SearchLog {
    /// `false`: the starting point passed with the target margin, or the
    /// search was switched off, or the scenario is infeasible.
    pub searched: bool,
    /// Rounds of search and verification.
    pub rounds: usize,
    /// Pattern-search iterations over all rounds.
    pub iterations: usize,
    /// Candidates evaluated (the starting point included).
    pub candidates: usize,
    /// Closed-loop runs.
    pub runs: usize,
    /// Why the last round stopped.
    pub stop: Option<Stop>,
    /// Variants in the final working set.
    pub working_set: usize,
    /// Knobs the search moved (coordinates).
    pub knobs: usize,
    /// Worst margin of the starting point over the sample.
    pub start_worst: f64,
    /// Worst margin of the loop handed over (criteria and constraints).
    pub final_worst: f64,
}

/// Where the search started.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StartPoint {
    /// The analytic rule (SIMC or pole placement).
    Analytic,
    /// The `[controller]` as written in the scenario: it scored better
    /// over the sample than the analytic rule (e.g. an earlier design).
    AsWritten,
}

/// The outcome of `design`.
#[derive(Debug, Clone, PartialEq)]
pub struct Tuned {
    /// Feasibility of the criteria at every corner.
    pub feasibility: Feasibility,
    /// The analytic proposal (with its derivation).
    pub start: Proposal,
    /// Which start the search took: the analytic proposal, or the
    /// `[controller]` as written when that scored better.
    pub started_from: StartPoint,
    /// Said before anything else: limits narrowed, anti-windup switched.
    pub notices: Vec<String>,
    /// The loop handed over.
    pub settings: Settings,
    /// Margins at every linearised corner, of the loop handed over.
    pub corners: Vec<CornerReport>,
    /// The linear constraints, of the loop handed over.
    pub constraints: Vec<ConstraintMargin>,
    /// The fixed-point check, of the loop handed over.
    pub fixed: FixedCheck,
    /// Verification over the sample (`None` when infeasible).
    pub verification: Option<Verification>,
    /// Verification of the starting point (`None` when infeasible).
    pub start_verification: Option<Vec<CriterionMargin>>,
    /// What the search did.
    pub search: SearchLog,
    /// The options used.
    pub options: Options,
}

impl Tuned {
    /// The start the search took, in words: `the simc proposal`, `the
    /// [controller] as written`.
    #[must_use]
    pub fn start_name(&self) -> String {
        match self.started_from {
            StartPoint::Analytic => format!("the {} proposal", self.start.method.name()),
            StartPoint::AsWritten => "the [controller] as written".into(),
        }
    }

    /// `true` only when the criteria are feasible, every sampled variant
    /// meets every criterion, every constraint holds and Q16.16 holds the
    /// coefficients.
    #[must_use]
    pub fn passed(&self) -> bool {
        self.feasibility.feasible()
            && self.verification.as_ref().is_some_and(Verification::passed)
            && self.constraints.iter().all(|c| c.margin >= 0.0)
            && self.fixed.holds()
    }
}

/// Runs `design` on `s`: see the module documentation of
/// [`crate::design`].
///
/// # Errors
/// [`DesignError`] for a bad request or an analytic proposal that is not a
/// valid configuration.
pub fn tune(s: &Scenario, req: &Request, opts: &Options) -> Result<Tuned, DesignError> {
    let feasibility = feasibility(s);
    let start = design(s, req)?;
    let mut log = SearchLog {
        searched: false,
        rounds: 0,
        iterations: 0,
        candidates: 0,
        runs: 0,
        stop: None,
        working_set: 0,
        knobs: 0,
        start_worst: f64::NAN,
        final_worst: f64::NAN,
    };
    if !feasibility.feasible() {
        let corners = super::corner_margins(s, &start.settings);
        let constraints = super::verify::constraints(&corners, &s.design);
        return Ok(Tuned {
            feasibility,
            notices: Vec::new(),
            settings: start.settings,
            corners,
            constraints,
            fixed: fixed_check(&start.settings),
            verification: None,
            start_verification: None,
            start,
            started_from: StartPoint::Analytic,
            search: log,
            options: *opts,
        });
    }
    let points = sample(s, opts.count, opts.seed);
    let all: Vec<usize> = (0..points.len()).collect();
    let target = s.design.target_margin;
    let mut ev = Evaluator {
        scenario: s,
        points: &points,
        backend: opts.backend,
        candidates: 0,
        runs: 0,
    };
    let mut first = ev
        .evaluate(&[start.settings], &all)
        .pop()
        .ok_or_else(|| DesignError::Request("no candidate evaluated".into()))?;
    // The [controller] as written (an earlier design, a hand tune) is the
    // start when it does better: a passing loop is not re-tuned away.
    let mut started_from = StartPoint::Analytic;
    if s.controller != start.settings
        && let Some(written) = ev.evaluate(&[s.controller], &all).pop()
        && written.score.beats(&first.score)
    {
        first = written;
        started_from = StartPoint::AsWritten;
    }
    log.start_worst = first.score.worst;
    let start_margins = criterion_margins(&s.criteria, &first.variants);
    let mut best_full = first.clone();
    if opts.search && first.score.worst < target {
        log.searched = true;
        let space = Space::around(s, &first.settings);
        log.knobs = space.dims();
        let mut which: Vec<usize> = points
            .iter()
            .enumerate()
            .filter(|(_, p)| p.origin != Origin::Hypercube)
            .map(|(i, _)| i)
            .collect();
        which.extend(worst_outside(&first.variants, &which, target));
        let mut current = restrict(s, &first, &which);
        for round in 0..super::search::MAX_ROUNDS {
            log.rounds = round + 1;
            #[allow(clippy::cast_possible_truncation, clippy::cast_possible_wrap)]
            let scale = 0.5f64.powi(round as i32);
            let (found, iterations, stop) =
                pattern_search(&mut ev, &space, current, &which, target, opts.budget, scale);
            log.iterations += iterations;
            log.stop = Some(stop);
            let full = ev
                .evaluate(&[found.settings], &all)
                .pop()
                .unwrap_or_else(|| found.clone());
            if full.score.beats(&best_full.score) {
                best_full = full.clone();
            }
            if full.score.worst >= target || stop == Stop::Budget {
                break;
            }
            let add = worst_outside(&full.variants, &which, found.score.worst.min(target));
            if add.is_empty() {
                break;
            }
            which.extend(add);
            current = restrict(s, &full, &which);
        }
        log.working_set = which.len();
    }
    log.candidates = ev.candidates;
    log.runs = ev.runs;
    log.final_worst = best_full.score.worst;
    let settings = best_full.settings;
    let verification = Verification {
        backend: opts.backend,
        criteria: criterion_margins(&s.criteria, &best_full.variants),
        variants: best_full.variants,
        points,
    };
    Ok(Tuned {
        feasibility,
        notices: notices(s, &settings),
        settings,
        corners: best_full.corners,
        constraints: best_full.constraints,
        fixed: fixed_check(&settings),
        verification: Some(verification),
        start_verification: Some(start_margins),
        start,
        started_from,
        search: log,
        options: *opts,
    })
}

/// `full` (evaluated on the whole sample) as if evaluated on `which` only.
fn restrict(s: &Scenario, full: &Candidate, which: &[usize]) -> Candidate {
    let variants: Vec<_> = full
        .variants
        .iter()
        .filter(|v| which.contains(&v.index))
        .cloned()
        .collect();
    Candidate {
        score: score(s, &variants, &full.constraints),
        variants,
        ..full.clone()
    }
}

/// What design changed that the user wrote and must hear first.
fn notices(s: &Scenario, c: &Settings) -> Vec<String> {
    let mut out = Vec::new();
    let w = &s.controller;
    let n = |x: f64| format_number(Some(x));
    if c.output_min > w.output_min || c.output_max < w.output_max {
        out.push(format!(
            "design NARROWED the output limits you wrote: [{}, {}] → [{}, {}] ([design] output_limits = \"may_narrow\", the default; write \"as_written\" to keep yours)",
            n(w.output_min),
            n(w.output_max),
            n(c.output_min),
            n(c.output_max)
        ));
    }
    if matches!(w.anti_windup, AntiWindup::ConditionalIntegration)
        && matches!(c.anti_windup, AntiWindup::BackCalculation { .. })
    {
        out.push(
            "design SWITCHED anti-windup from conditional integration (as written) to back-calculation, whose tracking time it tunes"
                .into(),
        );
    }
    out
}

/// One point of the speed trade-off: the loop made faster or slower by
/// `factor` (Kp·f, Ti/f, Tt/f), its worst margin at the heavy and at the
/// light corner, and which criterion binds each.
#[derive(Debug, Clone, PartialEq)]
pub struct TradePoint {
    /// Speed factor (1: the proposal).
    pub factor: f64,
    /// Worst margin at the heavy corner (lowest command gain).
    pub heavy_margin: f64,
    /// The criterion binding it.
    pub heavy_criterion: String,
    /// Worst margin at the light corner (highest command gain).
    pub light_margin: f64,
    /// The criterion binding it.
    pub light_criterion: String,
}

/// The speed trade-off of `settings` in `s`.
#[derive(Debug, Clone, PartialEq)]
pub struct TradeOff {
    /// Heavy corner (lowest command gain at t = 0).
    pub heavy: String,
    /// Light corner (highest command gain).
    pub light: String,
    /// Points, slow to fast.
    pub points: Vec<TradePoint>,
}

/// Speed factors of the trade-off.
pub const TRADE_FACTORS: [f64; 9] = [0.4, 0.5, 0.63, 0.79, 1.0, 1.26, 1.59, 2.0, 2.5];

/// Runs the trade-off of `settings` on `backend`: the loop scaled in speed
/// by each of [`TRADE_FACTORS`], at the heavy and the light corner.
#[must_use]
pub fn trade_off(s: &Scenario, settings: &Settings, backend: BackendKind, seed: u64) -> TradeOff {
    let corners = box_corners(s);
    let gain = |c: &super::feasibility::BoxCorner| {
        command_gain(&c.scenario, &c.scenario.setup.disturbances.at(0.0)).abs()
    };
    let mut heavy = 0;
    let mut light = 0;
    for (i, c) in corners.iter().enumerate() {
        if gain(c) < gain(&corners[heavy]) {
            heavy = i;
        }
        if gain(c) > gain(&corners[light]) {
            light = i;
        }
    }
    let values = |i: usize| -> Vec<f64> {
        let dims = s.uncertainty.len();
        s.uncertainty
            .iter()
            .enumerate()
            .map(|(j, u)| {
                let (lo, hi) = u.dist.support();
                if dims > 0 && (i >> j) & 1 == 1 {
                    hi
                } else {
                    lo
                }
            })
            .collect()
    };
    let points = vec![
        SamplePoint {
            values: values(heavy),
            origin: Origin::Corner,
            seed,
        },
        SamplePoint {
            values: values(light),
            origin: Origin::Corner,
            seed,
        },
    ];
    let mut out = Vec::new();
    for &f in &TRADE_FACTORS {
        let mut c = *settings;
        c.kp = settings.kp * f;
        c.ki_per_s = settings.ki_per_s * f * f;
        if let AntiWindup::BackCalculation { tracking_time_s } = settings.anti_windup {
            c.anti_windup = AntiWindup::BackCalculation {
                tracking_time_s: (tracking_time_s / f).max(settings.period_s),
            };
        }
        let runs = run_variants(s, &c, &points, &[0, 1], backend);
        let worst = |k: usize| -> (f64, String) {
            let v = &runs[k];
            if let Some(e) = &v.error {
                return (f64::NEG_INFINITY, e.clone());
            }
            v.margins
                .iter()
                .zip(&s.criteria)
                .map(|(m, c)| (*m, c.label()))
                .reduce(|a, b| if b.0 < a.0 { b } else { a })
                .unwrap_or((f64::INFINITY, "none".into()))
        };
        let (hm, hc) = worst(0);
        let (lm, lc) = worst(1);
        out.push(TradePoint {
            factor: f,
            heavy_margin: hm,
            heavy_criterion: hc,
            light_margin: lm,
            light_criterion: lc,
        });
    }
    TradeOff {
        heavy: point_label(s, &points[0].values),
        light: point_label(s, &points[1].values),
        points: out,
    }
}
