//! The search for a loop that passes: a deterministic pattern search
//! (compass search with complete polling, diagonal moves of the two gains,
//! a pattern move after each success and step halving; Kolda, Lewis &
//! Torczon, "Optimization by direct search", SIAM Review 45(3), 2003)
//! over the controller's tuning knobs, maximising the worst normalised
//! margin over the criteria of a working set of variants and over the
//! linear constraints (gain margin, phase margin, Ms, stability).
//!
//! Knobs and their coordinates (log scale where the knob is a scale):
//! `ln Kp`, `ln Ti`, setpoint weight `b ∈ [0, 1]`, `ln` slew rate,
//! `ln` filter time, `ln(Tt/Ti)`, and the output limits where `[design]`
//! lets design narrow them. Every candidate is rounded to three
//! significant digits before it is run, so what is judged is exactly what
//! is handed over.
//!
//! Rounds: the search starts on the corners and centre of the box plus the
//! variants that bind the starting point. When it stops (target margin
//! reached, steps below their floor, or the budget spent) its best loop is
//! verified on the whole sample; variants that do worse than the working
//! set are added to it and the search goes on from there (at most
//! [`MAX_ROUNDS`] rounds). Score ties on the worst margin are broken by the
//! mean margin over the criteria (clipped to [−2, 0.5]), which gives the
//! search a direction while one variant is stuck (e.g. never settles).

use evenkeel::{AntiWindup, Settings};
use rayon::prelude::*;

use super::CornerReport;
use super::analytic::round3;
use super::corner_margins;
use super::verify::{
    ConstraintMargin, SamplePoint, VariantCheck, constraints, criterion_margins, run_variant,
};
use crate::outcome::BackendKind;
use crate::scenario::{LimitChoice, Scenario};

/// Rounds of search and verification at most.
pub const MAX_ROUNDS: usize = 4;

/// Variants added to the working set per round at most.
const ADDED_PER_ROUND: usize = 4;

/// A candidate's score: compared on `worst` first, then on `mean`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Score {
    /// Smallest margin over the criteria of the variants run and over the
    /// constraints.
    pub worst: f64,
    /// Mean over criteria and constraints of each one's worst margin,
    /// clipped to [−2, 0.5].
    pub mean: f64,
}

impl Score {
    /// The score of a candidate that cannot run at all.
    pub const INVALID: Self = Self {
        worst: f64::NEG_INFINITY,
        mean: f64::NEG_INFINITY,
    };

    /// `true` when `self` is strictly better than `other`.
    #[must_use]
    pub fn beats(&self, other: &Self) -> bool {
        if (self.worst - other.worst).abs() > 1e-9 {
            self.worst > other.worst
        } else {
            self.mean > other.mean + 1e-9
        }
    }
}

/// One coordinate of the search.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Axis {
    knob: Knob,
    lo: f64,
    hi: f64,
    step: f64,
    floor: f64,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Knob {
    LnKp,
    LnTi,
    Weight,
    LnSlew,
    LnFilter,
    LnTrackingRatio,
    OutMin,
    OutMax,
}

/// The search space around a starting loop.
#[derive(Debug, Clone, PartialEq)]
pub struct Space {
    base: Settings,
    axes: Vec<Axis>,
}

impl Space {
    /// The knobs of `start` that design may move in `s`, with their
    /// bounds: gains within a factor 100 of the start, the setpoint weight
    /// in [0, 1], the slew rate and filter time within a factor 30, the
    /// tracking time between one period and 10·Ti, and (if
    /// `[design] output_limits = "may_narrow"`) each output limit between
    /// the value written in `[controller]` and 5 % of the span short of
    /// the other limit.
    #[must_use]
    pub fn around(s: &Scenario, start: &Settings) -> Self {
        let ln = f64::ln;
        let mut axes = vec![
            Axis {
                knob: Knob::LnKp,
                lo: ln(start.kp.max(1e-12)) - ln(100.0),
                hi: ln(start.kp.max(1e-12)) + ln(100.0),
                step: 0.5,
                floor: 0.01,
            },
            Axis {
                knob: Knob::LnTi,
                lo: ln(ti(start)) - ln(100.0),
                hi: ln(ti(start)) + ln(100.0),
                step: 0.5,
                floor: 0.01,
            },
            Axis {
                knob: Knob::Weight,
                lo: 0.0,
                hi: 1.0,
                step: 0.2,
                floor: 0.01,
            },
        ];
        if let Some(r) = start.slew_per_s {
            axes.push(Axis {
                knob: Knob::LnSlew,
                lo: ln(r) - ln(30.0),
                hi: ln(r) + ln(30.0),
                step: 0.4,
                floor: 0.01,
            });
        }
        if let Some(t) = start.filter_time_s {
            axes.push(Axis {
                knob: Knob::LnFilter,
                lo: ln(start.period_s),
                hi: ln(t) + ln(30.0),
                step: 0.7,
                floor: 0.02,
            });
        }
        if let AntiWindup::BackCalculation { tracking_time_s } = start.anti_windup {
            let ratio = tracking_time_s / ti(start);
            axes.push(Axis {
                knob: Knob::LnTrackingRatio,
                lo: ln(1e-3),
                hi: ln(10.0),
                step: 0.7,
                floor: 0.05,
            });
            debug_assert!(ratio > 0.0);
        }
        if s.design.output_limits == LimitChoice::MayNarrow {
            let (lo, hi) = (s.controller.output_min, s.controller.output_max);
            let span = hi - lo;
            axes.push(Axis {
                knob: Knob::OutMin,
                lo,
                hi: hi - 0.05 * span,
                step: 0.1 * span,
                floor: 0.002 * span,
            });
            axes.push(Axis {
                knob: Knob::OutMax,
                lo: lo + 0.05 * span,
                hi,
                step: 0.1 * span,
                floor: 0.002 * span,
            });
        }
        Self { base: *start, axes }
    }

    /// Coordinates of `settings`.
    fn coords(&self, c: &Settings) -> Vec<f64> {
        self.axes
            .iter()
            .map(|a| {
                let x = match a.knob {
                    Knob::LnKp => c.kp.max(1e-12).ln(),
                    Knob::LnTi => ti(c).ln(),
                    Knob::Weight => c.setpoint_weight,
                    Knob::LnSlew => c.slew_per_s.unwrap_or(1.0).ln(),
                    Knob::LnFilter => c.filter_time_s.unwrap_or(c.period_s).ln(),
                    Knob::LnTrackingRatio => match c.anti_windup {
                        AntiWindup::BackCalculation { tracking_time_s } => {
                            (tracking_time_s / ti(c)).ln()
                        }
                        AntiWindup::ConditionalIntegration => 0.0,
                    },
                    Knob::OutMin => c.output_min,
                    Knob::OutMax => c.output_max,
                };
                x.clamp(a.lo, a.hi)
            })
            .collect()
    }

    /// The settings at coordinates `x`, every value rounded to three
    /// significant digits (limits to 3 digits of their span).
    #[must_use]
    fn settings(&self, x: &[f64]) -> Settings {
        let mut c = self.base;
        let mut kp = c.kp;
        let mut ti_s = ti(&c);
        let mut ratio = match c.anti_windup {
            AntiWindup::BackCalculation { tracking_time_s } => Some(tracking_time_s / ti_s),
            AntiWindup::ConditionalIntegration => None,
        };
        let span = self.base.output_max - self.base.output_min;
        let quantum = 10f64.powf((span * 1e-3).log10().floor());
        for (a, &v) in self.axes.iter().zip(x) {
            match a.knob {
                Knob::LnKp => kp = v.exp(),
                Knob::LnTi => ti_s = v.exp(),
                Knob::Weight => c.setpoint_weight = round3(v.clamp(0.0, 1.0)),
                Knob::LnSlew => c.slew_per_s = Some(round3(v.exp())),
                Knob::LnFilter => c.filter_time_s = Some(round3(v.exp())),
                Knob::LnTrackingRatio => ratio = Some(v.exp()),
                Knob::OutMin => c.output_min = (v / quantum).round() * quantum,
                Knob::OutMax => c.output_max = (v / quantum).round() * quantum,
            }
        }
        c.kp = round3(kp);
        c.ki_per_s = round3(kp / ti_s);
        if let Some(r) = ratio {
            c.anti_windup = AntiWindup::BackCalculation {
                tracking_time_s: round3((r * ti_s).max(c.period_s)),
            };
        }
        c
    }

    /// Number of coordinates.
    #[must_use]
    pub fn dims(&self) -> usize {
        self.axes.len()
    }
}

/// Integral time `Kp/Ki` (1/Ki for a pure I loop).
fn ti(c: &Settings) -> f64 {
    if c.ki_per_s > 0.0 {
        if c.kp > 0.0 {
            c.kp / c.ki_per_s
        } else {
            1.0 / c.ki_per_s
        }
    } else {
        1e6
    }
}

/// What one candidate did.
#[derive(Debug, Clone, PartialEq)]
pub struct Candidate {
    /// The settings (rounded).
    pub settings: Settings,
    /// Score over the working set and the constraints.
    pub score: Score,
    /// Per-variant results over the working set.
    pub variants: Vec<VariantCheck>,
    /// Margins at the linearised corners.
    pub corners: Vec<CornerReport>,
    /// The constraints.
    pub constraints: Vec<ConstraintMargin>,
}

/// The evaluator: scenario, sample, backend, and the count of closed-loop
/// runs so far.
pub struct Evaluator<'a> {
    /// The scenario.
    pub scenario: &'a Scenario,
    /// The sample.
    pub points: &'a [SamplePoint],
    /// Backend.
    pub backend: BackendKind,
    /// Candidates evaluated.
    pub candidates: usize,
    /// Closed-loop runs.
    pub runs: usize,
}

impl Evaluator<'_> {
    /// Evaluates every candidate of `list` on the working set `which`, in
    /// parallel over candidates and variants.
    pub fn evaluate(&mut self, list: &[Settings], which: &[usize]) -> Vec<Candidate> {
        let s = self.scenario;
        // Settings the backend or Q16.16 refuses are invalid candidates.
        let valid: Vec<bool> = list
            .iter()
            .map(|c| {
                c.per_sample().is_ok()
                    && super::fixed_check(c).holds()
                    && match self.backend {
                        BackendKind::Fixed => true,
                        BackendKind::Slim16 => {
                            let mut b = s.clone();
                            b.controller = *c;
                            b.accepts(BackendKind::Slim16).is_ok()
                        }
                        other => crate::scenario::accepts(c, other).is_ok(),
                    }
            })
            .collect();
        let bases: Vec<Scenario> = list
            .iter()
            .map(|c| {
                let mut b = s.clone();
                b.controller = *c;
                b
            })
            .collect();
        let jobs: Vec<(usize, usize)> = (0..list.len())
            .filter(|&i| valid[i])
            .flat_map(|i| which.iter().map(move |&w| (i, w)))
            .collect();
        self.runs += jobs.len();
        self.candidates += list.len();
        let results: Vec<(usize, VariantCheck)> = jobs
            .par_iter()
            .map(|&(i, w)| (i, run_variant(&bases[i], &self.points[w], w, self.backend)))
            .collect();
        list.par_iter()
            .enumerate()
            .map(|(i, c)| {
                if !valid[i] {
                    return Candidate {
                        settings: *c,
                        score: Score::INVALID,
                        variants: Vec::new(),
                        corners: Vec::new(),
                        constraints: Vec::new(),
                    };
                }
                let variants: Vec<VariantCheck> = results
                    .iter()
                    .filter(|(j, _)| *j == i)
                    .map(|(_, v)| v.clone())
                    .collect();
                let corners = corner_margins(s, c);
                let cons = constraints(&corners, &s.design);
                let score = score(s, &variants, &cons);
                Candidate {
                    settings: *c,
                    score,
                    variants,
                    corners,
                    constraints: cons,
                }
            })
            .collect()
    }
}

/// The score of a set of variant results and constraints.
#[must_use]
pub fn score(s: &Scenario, variants: &[VariantCheck], cons: &[ConstraintMargin]) -> Score {
    let per = criterion_margins(&s.criteria, variants);
    let margins: Vec<f64> = per
        .iter()
        .map(|c| c.worst_margin)
        .chain(cons.iter().map(|c| c.margin))
        .collect();
    let worst = margins.iter().copied().fold(f64::INFINITY, f64::min);
    #[allow(clippy::cast_precision_loss)]
    let mean =
        margins.iter().map(|m| m.clamp(-2.0, 0.5)).sum::<f64>() / margins.len().max(1) as f64;
    if worst.is_nan() {
        return Score::INVALID;
    }
    Score { worst, mean }
}

/// Why a search stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stop {
    /// The target margin was reached on the working set.
    Target,
    /// Every step fell below its floor: a local optimum.
    Converged,
    /// The evaluation budget was spent.
    Budget,
}

impl Stop {
    /// `target`, `converged` or `budget`.
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::Target => "target margin reached",
            Self::Converged => "converged (every step below its floor)",
            Self::Budget => "evaluation budget spent",
        }
    }
}

/// One pattern search on the working set `which` from `start`; returns
/// the best candidate, the iterations and why it stopped.
pub fn pattern_search(
    ev: &mut Evaluator<'_>,
    space: &Space,
    start: Candidate,
    which: &[usize],
    target: f64,
    budget: usize,
    step_scale: f64,
) -> (Candidate, usize, Stop) {
    let mut best = start;
    let mut x = space.coords(&best.settings);
    let mut steps: Vec<f64> = space.axes.iter().map(|a| a.step * step_scale).collect();
    let mut iterations = 0;
    loop {
        if best.score.worst >= target {
            return (best, iterations, Stop::Target);
        }
        if ev.candidates >= budget {
            return (best, iterations, Stop::Budget);
        }
        if steps.iter().zip(&space.axes).all(|(s, a)| *s < a.floor) {
            return (best, iterations, Stop::Converged);
        }
        iterations += 1;
        let polls = poll_points(space, &x, &steps);
        let Some((c, y)) = best_of(ev, space, &best, polls, which) else {
            for s in &mut steps {
                *s *= 0.5;
            }
            continue;
        };
        // A successful move: extrapolate along it while that keeps paying
        // (the pattern move of Hooke & Jeeves, J. ACM 8(2), 1961).
        let mut from = x.clone();
        best = c;
        x = y;
        for _ in 0..3 {
            if best.score.worst >= target || ev.candidates >= budget {
                break;
            }
            let ahead: Vec<f64> = x
                .iter()
                .zip(&from)
                .zip(&space.axes)
                .map(|((a, b), axis)| (a + (a - b)).clamp(axis.lo, axis.hi))
                .collect();
            match best_of(ev, space, &best, vec![ahead], which) {
                Some((c, y)) => {
                    from = std::mem::replace(&mut x, y);
                    best = c;
                }
                None => break,
            }
        }
    }
}

/// The poll around `x`: each coordinate up and down by its step, and the
/// four diagonals of (`ln Kp`, `ln Ti`) — faster, slower, more and less
/// proportional action at the same integral gain — which follow the ridges
/// of a min-max objective that single coordinates cannot.
fn poll_points(space: &Space, x: &[f64], steps: &[f64]) -> Vec<Vec<f64>> {
    let mut polls: Vec<Vec<f64>> = Vec::new();
    let mut push = |moves: &[(usize, f64)]| {
        let mut y = x.to_vec();
        for &(i, d) in moves {
            let a = &space.axes[i];
            y[i] = (y[i] + d).clamp(a.lo, a.hi);
        }
        if y.iter().zip(x).any(|(a, b)| (a - b).abs() > 0.0) {
            polls.push(y);
        }
    };
    for (i, a) in space.axes.iter().enumerate() {
        if steps[i] < a.floor {
            continue;
        }
        push(&[(i, steps[i])]);
        push(&[(i, -steps[i])]);
    }
    let kp = space.axes.iter().position(|a| a.knob == Knob::LnKp);
    let ti = space.axes.iter().position(|a| a.knob == Knob::LnTi);
    if let (Some(k), Some(t)) = (kp, ti) {
        let d = steps[k].min(steps[t]);
        if d >= space.axes[k].floor {
            for (sk, st) in [(1.0, -1.0), (-1.0, 1.0), (1.0, 1.0), (-1.0, -1.0)] {
                push(&[(k, sk * d), (t, st * d)]);
            }
        }
    }
    polls
}

/// The best of `polls` that beats `best` (distinct rounded settings only),
/// with its coordinates.
fn best_of(
    ev: &mut Evaluator<'_>,
    space: &Space,
    best: &Candidate,
    polls: Vec<Vec<f64>>,
    which: &[usize],
) -> Option<(Candidate, Vec<f64>)> {
    let mut settings: Vec<Settings> = Vec::new();
    let mut coords: Vec<Vec<f64>> = Vec::new();
    for y in polls {
        let c = space.settings(&y);
        if c != best.settings && !settings.contains(&c) {
            settings.push(c);
            coords.push(y);
        }
    }
    if settings.is_empty() {
        return None;
    }
    ev.evaluate(&settings, which)
        .into_iter()
        .zip(coords)
        .filter(|(c, _)| c.score.beats(&best.score))
        .reduce(|a, b| if b.0.score.beats(&a.0.score) { b } else { a })
}

/// Variant indices of the sample that bind `variants` worst, not yet in
/// `which`, at most [`ADDED_PER_ROUND`], worst first.
#[must_use]
pub fn worst_outside(variants: &[VariantCheck], which: &[usize], below: f64) -> Vec<usize> {
    let mut v: Vec<&VariantCheck> = variants
        .iter()
        .filter(|v| !which.contains(&v.index) && v.worst() < below)
        .collect();
    v.sort_by(|a, b| a.worst().total_cmp(&b.worst()));
    v.into_iter()
        .take(ADDED_PER_ROUND)
        .map(|v| v.index)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scores_compare_on_the_worst_margin_then_the_mean() {
        let a = Score {
            worst: 0.1,
            mean: 0.0,
        };
        let b = Score {
            worst: 0.0,
            mean: 0.4,
        };
        assert!(a.beats(&b) && !b.beats(&a));
        let c = Score {
            worst: 0.1,
            mean: 0.2,
        };
        assert!(c.beats(&a) && !a.beats(&c));
        assert!(!a.beats(&a));
        assert!(a.beats(&Score::INVALID));
    }

    #[test]
    fn coordinates_round_trip_through_rounded_settings() {
        let s = Scenario::demo().unwrap();
        let space = Space::around(&s, &s.controller);
        let x = space.coords(&s.controller);
        let back = space.settings(&x);
        assert_eq!(back.kp, s.controller.kp);
        assert_eq!(back.setpoint_weight, s.controller.setpoint_weight);
        assert_eq!(back.slew_per_s, s.controller.slew_per_s);
        assert_eq!(back.output_min, s.controller.output_min);
        assert_eq!(back.output_max, s.controller.output_max);
        // Ki from the rounded Kp and Ti: within rounding of 3 digits.
        assert!((back.ki_per_s - s.controller.ki_per_s).abs() <= 0.005 * s.controller.ki_per_s);
        assert_eq!(space.dims(), 5 + 2); // kp, ti, b, slew, tt and the two limits
    }
}
