//! Feasibility before tuning: can *any* controller meet the criteria at
//! every corner of the uncertainty box, given the plant, the limits the
//! user wrote and the other criteria?
//!
//! Three kinds of check, each a necessary condition derived from the plant
//! model alone (no controller is simulated):
//!
//! 1. **Holds.** At every corner and at every time the reference holds a
//!    value (with the disturbances then active), the steady command the
//!    plant needs ([`hold_command`]) must lie within the output limits
//!    (the `[controller]` limits intersected with the `[actuator]` range).
//!    Where it does not, the output cannot stay at the setpoint: the most
//!    the loop can hold is found by bisection, and the criteria that judge
//!    that time (steady-state error in the end window, settling of the
//!    step segment, time in saturation) are shown to fail by a named
//!    amount.
//! 2. **Rates.** The step that the step metrics judge must be covered in
//!    time: the output rate is bounded by the `peak_accel` limit and by
//!    the authority (the plant's rate with the command at its limit), its
//!    derivative by the `peak_jerk` limit and by `peak_slew_per_s` times
//!    the command gain; the dead time adds. The fastest motion under these
//!    bounds gives a lower bound on rise and settling time.
//! 3. **Run length.** A reference longer than the run, or a step that
//!    cannot settle before its segment or the run ends, is warned about.
//!
//! Advisory checks (warnings, not proofs) cover the trade-off the search
//! then faces: a slew limit small enough to keep the jerk at the lightest
//! corner, against the jerk the heaviest corner needs, and reference ramps
//! faster than a corner can follow.

use crate::criteria::{Bound, MetricKey, Scope};
use crate::plant::Environment;
use crate::profile::Profile;
use crate::report::format_number;
use crate::scenario::{PlantModel, Scenario};

use super::model::{command_gain, hold_command, output_rate};

/// How bad a finding is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Severity {
    /// No controller can meet the criterion: `design` stops with exit 1.
    Infeasible,
    /// Worth knowing; the design goes on.
    Warning,
}

impl Severity {
    /// `infeasible` or `warning`.
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::Infeasible => "infeasible",
            Self::Warning => "warning",
        }
    }
}

/// One verdict of the feasibility analysis.
#[derive(Debug, Clone, PartialEq)]
pub struct Finding {
    /// Infeasible or warning.
    pub severity: Severity,
    /// The criterion that cannot be met (or is at risk); `None` for
    /// general warnings.
    pub criterion: Option<MetricKey>,
    /// The corner of the uncertainty box (`key=value …`, `nominal` without
    /// uncertainty).
    pub corner: Option<String>,
    /// When it happens, s.
    pub time_s: Option<f64>,
    /// What the physics needs, in the criterion's unit (e.g. the shortest
    /// possible settling time).
    pub needed: Option<f64>,
    /// The criterion's limit.
    pub limit: Option<f64>,
    /// The finding in a sentence, with the figures.
    pub message: String,
    /// What would make it feasible.
    pub remedy: Option<String>,
}

/// The feasibility analysis of a scenario.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Feasibility {
    /// Findings, infeasible ones first.
    pub findings: Vec<Finding>,
    /// Corners of the uncertainty box examined.
    pub corners: usize,
    /// Reference holds examined per corner.
    pub holds: usize,
}

impl Feasibility {
    /// `true` when no finding is [`Severity::Infeasible`].
    #[must_use]
    pub fn feasible(&self) -> bool {
        self.findings
            .iter()
            .all(|f| f.severity != Severity::Infeasible)
    }

    /// The infeasible findings.
    pub fn infeasible(&self) -> impl Iterator<Item = &Finding> {
        self.findings
            .iter()
            .filter(|f| f.severity == Severity::Infeasible)
    }
}

fn n(x: f64) -> String {
    format_number(Some(x))
}

/// A corner of the box: the variant scenario and its label.
pub(crate) struct BoxCorner {
    pub scenario: Scenario,
    pub label: String,
}

/// Every corner of the uncertainty box of `s` (2ⁿ variants; the scenario
/// itself, labelled `nominal`, without uncertainty).
pub(crate) fn box_corners(s: &Scenario) -> Vec<BoxCorner> {
    let dims = s.uncertainty.len();
    if dims == 0 {
        return vec![BoxCorner {
            scenario: s.clone(),
            label: "nominal".into(),
        }];
    }
    (0..(1usize << dims))
        .map(|mask| {
            let point: Vec<f64> = s
                .uncertainty
                .iter()
                .enumerate()
                .map(|(j, u)| {
                    let (lo, hi) = u.dist.support();
                    if (mask >> j) & 1 == 1 { hi } else { lo }
                })
                .collect();
            let label = s
                .uncertainty
                .iter()
                .zip(&point)
                .map(|(u, v)| format!("{}={}", u.param.key(), n(*v)))
                .collect::<Vec<_>>()
                .join(" ");
            BoxCorner {
                scenario: crate::sweep::apply_variant(s, &point, s.seed),
                label,
            }
        })
        .collect()
}

/// The command range the plant can get: the controller's limits as
/// written, within the actuator's.
pub(crate) fn command_range(s: &Scenario) -> (f64, f64) {
    let (mut lo, mut hi) = (s.controller.output_min, s.controller.output_max);
    if let Some(a) = s.actuator {
        lo = lo.max(a.min);
        hi = hi.min(a.max);
    }
    (lo, hi)
}

/// Reference holds `(start_s, end_s, value)`, the last one running to ∞.
fn holds(r: &Profile) -> Vec<(f64, f64, f64)> {
    let pieces: Vec<_> = r.pieces().collect();
    let mut out = Vec::new();
    let first_start = pieces.first().map_or(f64::INFINITY, |p| p.start_s);
    if first_start > 0.0 {
        out.push((0.0, first_start, r.at(0.0)));
    }
    for (i, p) in pieces.iter().enumerate() {
        let end = if i + 1 == pieces.len() {
            f64::INFINITY
        } else {
            p.end_s()
        };
        if end > p.hold_start_s() {
            out.push((p.hold_start_s(), end, p.to));
        }
    }
    if pieces.is_empty() {
        out.push((0.0, f64::INFINITY, r.at(0.0)));
    }
    out
}

/// `true` if an override window (another source drives the actuator)
/// covers `t`.
fn overridden(s: &Scenario, t: f64) -> bool {
    s.setup
        .overrides
        .iter()
        .any(|o| t >= o.start_s && t < o.start_s + o.duration_s)
}

fn criterion_max(s: &Scenario, metric: MetricKey) -> Option<f64> {
    s.criteria
        .iter()
        .filter(|c| c.metric == metric && c.bound == Bound::Max && c.scope == Scope::Run)
        .map(|c| c.limit)
        .reduce(f64::min)
}

/// The largest output `y` between `from` and `to` whose hold command is
/// within `[u_lo, u_hi]` at `env`, by bisection (the hold command of the
/// lag, the vehicle and the rotor grows with `y` for `y ≥ 0`). `None` for
/// an integrator (its hold command does not depend on the output).
fn reachable(
    s: &Scenario,
    from: f64,
    to: f64,
    u_lim: f64,
    up: bool,
    env: &Environment,
) -> Option<f64> {
    if matches!(s.plant, PlantModel::Integrator { .. }) {
        return None;
    }
    let beyond =
        |y: f64| hold_command(s, y, env).is_none_or(|u| if up { u > u_lim } else { u < u_lim });
    let (mut ok, mut bad) = (from, to);
    if beyond(ok) {
        return Some(from);
    }
    for _ in 0..80 {
        let m = 0.5 * (ok + bad);
        if beyond(m) {
            bad = m;
        } else {
            ok = m;
        }
    }
    Some(ok)
}

/// Time for the output to travel `d` from rest with its rate bounded by
/// `v` and the rate's derivative by `j` (`∞`: unbounded): the fastest
/// motion under those bounds, the rate growing at `j` until it reaches
/// `v` (a lower bound: it ignores the braking needed to stop).
fn travel_time(d: f64, v: f64, j: f64) -> f64 {
    if d <= 0.0 {
        return 0.0;
    }
    if !j.is_finite() {
        return d / v;
    }
    if d <= v * v / (2.0 * j) {
        (2.0 * d / j).sqrt()
    } else {
        d / v + v / (2.0 * j)
    }
}

/// The inverse of [`travel_time`]: the distance covered in `t`.
fn travel_distance(t: f64, v: f64, j: f64) -> f64 {
    if t <= 0.0 {
        return 0.0;
    }
    if !j.is_finite() {
        return v * t;
    }
    if t <= v / j {
        0.5 * j * t * t
    } else {
        v * t - v * v / (2.0 * j)
    }
}

/// Per-corner results of the hold check, for one criterion.
struct Worst {
    shortfall: f64,
    finding: Finding,
}

fn keep_worst(slot: &mut Option<Worst>, shortfall: f64, finding: Finding) {
    if slot.as_ref().is_none_or(|w| shortfall > w.shortfall) {
        *slot = Some(Worst { shortfall, finding });
    }
}

/// Time grid of the analysis: every controller period, or at most 20,000
/// points over the run.
fn grid(s: &Scenario) -> Vec<f64> {
    let dt = s.controller.period_s.max(s.setup.duration_s / 20_000.0);
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let n = (s.setup.duration_s / dt).floor() as usize;
    #[allow(clippy::cast_precision_loss)]
    (0..n).map(|k| k as f64 * dt).collect()
}

/// The feasibility analysis of `s` (see the module documentation).
#[must_use]
#[allow(clippy::too_many_lines)]
pub fn feasibility(s: &Scenario) -> Feasibility {
    let corners = box_corners(s);
    let (u_lo, u_hi) = command_range(s);
    let span = u_hi - u_lo;
    let ts = s.controller.period_s;
    let duration = s.setup.duration_s;
    let hold_list = holds(&s.setup.reference);
    let times = grid(s);
    let dt = times.get(1).copied().unwrap_or(ts);
    let steady_from = duration - s.metric_options.steady_window_s;
    let change = s.setup.reference.first_change();
    let band_frac = s.metric_options.settling_band;
    let unit = &s.output_unit;
    let mut out = Feasibility {
        findings: Vec::new(),
        corners: corners.len(),
        holds: hold_list.iter().filter(|h| h.0 < duration).count(),
    };
    let mut worst_sse = None;
    let mut worst_settle = None;
    let mut worst_rise = None;
    let mut worst_sat = None;
    let mut unjudged = None;
    let mut headroom: Option<(f64, Finding)> = None;
    let actuator_max = s.actuator.map(|a| (a.min, a.max));

    // 1. Holds.
    for c in &corners {
        let v = &c.scenario;
        let mut beyond_s = 0.0;
        let mut first_beyond = None;
        for &(t0, t1, r) in &hold_list {
            let mut worst: Option<(f64, f64, f64)> = None; // (excess, t, u*)
            for &t in times.iter().filter(|&&t| t >= t0 && t < t1) {
                if overridden(v, t) {
                    continue;
                }
                let env = v.setup.disturbances.at(t);
                let Some(u) = hold_command(v, r, &env) else {
                    continue;
                };
                let excess = (u - u_hi).max(u_lo - u);
                if excess > 0.0 {
                    beyond_s += dt;
                    first_beyond.get_or_insert(t);
                    if worst.is_none_or(|w| excess > w.0) {
                        worst = Some((excess, t, u));
                    }
                } else if span > 0.0 {
                    let room = -excess / span;
                    if room < 0.05 && headroom.as_ref().is_none_or(|h| room < h.0) {
                        let side = if u_hi - u < u - u_lo {
                            "output_max"
                        } else {
                            "output_min"
                        };
                        headroom = Some((
                            room,
                            Finding {
                                severity: Severity::Warning,
                                criterion: None,
                                corner: Some(c.label.clone()),
                                time_s: Some(t),
                                needed: Some(u),
                                limit: None,
                                message: format!(
                                    "little headroom at corner {}: holding {} {unit} at t = {} s needs a command of {}, only {} % of the output range from {side}; disturbances beyond the modelled ones and the settling will use up the rest",
                                    c.label,
                                    n(r),
                                    n(t),
                                    n(u),
                                    n(100.0 * room)
                                ),
                                remedy: None,
                            },
                        ));
                    }
                }
            }
            let Some((excess, t, u)) = worst else {
                continue;
            };
            let up = u > u_hi;
            let lim = if up { u_hi } else { u_lo };
            let env = v.setup.disturbances.at(t);
            let start_y = v.setup.reference.range();
            let from = if up {
                start_y.0.min(r)
            } else {
                start_y.1.max(r)
            };
            let y_reach = reachable(v, from, r, lim, up, &env);
            let side = if up { "output_max" } else { "output_min" };
            let physical = actuator_max.map(|(a_lo, a_hi)| if up { a_hi } else { a_lo });
            let remedy = {
                let mut parts = Vec::new();
                match physical {
                    Some(p) if (up && u > p) || (!up && u < p) => parts.push(format!(
                        "a stronger actuator ({side} cannot go beyond the actuator's {} = {}; the hold needs {})",
                        if up { "max" } else { "min" },
                        n(p),
                        n(u)
                    )),
                    _ => parts.push(format!(
                        "{} {side} to {} {}",
                        if up { "raise" } else { "lower" },
                        if up { "≥" } else { "≤" },
                        n(u)
                    )),
                }
                if let Some(y) = y_reach {
                    parts.push(format!(
                        "{} that setpoint to {} {} {unit}",
                        if up { "lower" } else { "raise" },
                        if up { "≤" } else { "≥" },
                        n(y)
                    ));
                }
                parts.push("narrow [uncertainty] so that this corner is not in the range".into());
                parts.join(", or ")
            };
            let held = y_reach.map_or_else(
                || {
                    "the output drifts away (an integrating plant cannot be held with less)"
                        .to_owned()
                },
                |y| format!("the most the loop can hold there is {} {unit}", n(y)),
            );
            let what = format!(
                "at corner {}: holding {} {unit} at t = {} s needs a command of {}, {} {side} = {} by {}; {held}",
                c.label,
                n(r),
                n(t),
                n(u),
                if up { "above" } else { "below" },
                n(lim),
                n(excess)
            );
            let error = y_reach.map_or(f64::INFINITY, |y| (r - y).abs());
            let mut judged = false;
            if let Some(limit) = criterion_max(s, MetricKey::SteadyStateError)
                && t1 >= steady_from
                && times
                    .iter()
                    .any(|&x| x >= steady_from.max(t0) && x < t1.min(duration))
            {
                // Worst time inside the end window.
                let mut e_end = 0.0f64;
                for &x in times
                    .iter()
                    .filter(|&&x| x >= steady_from.max(t0) && x < t1)
                {
                    let env = v.setup.disturbances.at(x);
                    if let Some(uu) = hold_command(v, r, &env)
                        && ((up && uu > u_hi) || (!up && uu < u_lo))
                    {
                        let e = reachable(v, from, r, lim, up, &env)
                            .map_or(f64::INFINITY, |y| (r - y).abs());
                        e_end = e_end.max(e);
                    }
                }
                if e_end > limit {
                    judged = true;
                    keep_worst(
                        &mut worst_sse,
                        e_end - limit,
                        Finding {
                            severity: Severity::Infeasible,
                            criterion: Some(MetricKey::SteadyStateError),
                            corner: Some(c.label.clone()),
                            time_s: Some(t),
                            needed: Some(e_end),
                            limit: Some(limit),
                            message: format!(
                                "steady_state_error cannot be met {what}: in the end window the error is at least {} {unit}, limit {} {unit}",
                                n(e_end),
                                n(limit)
                            ),
                            remedy: Some(remedy.clone()),
                        },
                    );
                }
            }
            if let Some((start, end, step_from, step_to)) = change
                && (step_to - r).abs() <= 0.0
                && t0 >= start
                && t0 < end
            {
                let band = band_frac * (step_to - step_from).abs();
                if error > band {
                    if let Some(limit) = criterion_max(s, MetricKey::SettlingTime) {
                        judged = true;
                        keep_worst(
                            &mut worst_settle,
                            error - band,
                            Finding {
                                severity: Severity::Infeasible,
                                criterion: Some(MetricKey::SettlingTime),
                                corner: Some(c.label.clone()),
                                time_s: Some(t),
                                needed: None,
                                limit: Some(limit),
                                message: format!(
                                    "settling_time_s cannot be met {what}: the output stays {} {unit} from the step's target, outside the {} {unit} settling band",
                                    n(error),
                                    n(band)
                                ),
                                remedy: Some(remedy.clone()),
                            },
                        );
                    }
                    if error > 0.1 * (step_to - step_from).abs()
                        && let Some(limit) = criterion_max(s, MetricKey::RiseTime)
                    {
                        judged = true;
                        keep_worst(
                            &mut worst_rise,
                            error,
                            Finding {
                                severity: Severity::Infeasible,
                                criterion: Some(MetricKey::RiseTime),
                                corner: Some(c.label.clone()),
                                time_s: Some(t),
                                needed: None,
                                limit: Some(limit),
                                message: format!(
                                    "rise_time_s cannot be met {what}: the output never reaches 90 % of the step"
                                ),
                                remedy: Some(remedy.clone()),
                            },
                        );
                    }
                }
            }
            if !judged {
                let f = Finding {
                    severity: Severity::Warning,
                    criterion: None,
                    corner: Some(c.label.clone()),
                    time_s: Some(t),
                    needed: Some(u),
                    limit: Some(lim),
                    message: format!("the setpoint cannot be held {what}"),
                    remedy: Some(remedy),
                };
                keep_worst(&mut unjudged, excess, f);
            }
        }
        if let Some(limit) = criterion_max(s, MetricKey::TimeSaturated)
            && beyond_s > limit
        {
            keep_worst(
                &mut worst_sat,
                beyond_s - limit,
                Finding {
                    severity: Severity::Infeasible,
                    criterion: Some(MetricKey::TimeSaturated),
                    corner: Some(c.label.clone()),
                    time_s: first_beyond,
                    needed: Some(beyond_s),
                    limit: Some(limit),
                    message: format!(
                        "time_saturated_s cannot be met at corner {}: for {} s of the run (from t = {} s) holding the setpoint needs a command beyond the output limits [{}, {}], so a PI loop sits at a limit at least that long (limit {} s)",
                        c.label,
                        n(beyond_s),
                        n(first_beyond.unwrap_or(0.0)),
                        n(u_lo),
                        n(u_hi),
                        n(limit)
                    ),
                    remedy: Some(
                        "widen the output limits, lower the setpoints concerned, or narrow [uncertainty]"
                            .into(),
                    ),
                },
            );
        }
    }

    // 2. Rates of the judged step.
    let accel_lim = criterion_max(s, MetricKey::PeakAccel);
    let jerk_lim = criterion_max(s, MetricKey::PeakJerk);
    let slew_lim = criterion_max(s, MetricKey::PeakSlew);
    let settle_lim = criterion_max(s, MetricKey::SettlingTime);
    let rise_lim = criterion_max(s, MetricKey::RiseTime);
    let mut advisory: Option<(f64, Finding)> = None;
    if let Some((start, end, from, to)) = change {
        let delta = to - from;
        let up = delta > 0.0;
        let d_settle = delta.abs() * (1.0 - band_frac);
        let d_rise = 0.8 * delta.abs();
        let window: Vec<f64> = times
            .iter()
            .copied()
            .filter(|&t| t >= start && t < end)
            .collect();
        let gains: Vec<f64> = corners
            .iter()
            .map(|c| {
                window
                    .iter()
                    .map(|&t| command_gain(&c.scenario, &c.scenario.setup.disturbances.at(t)).abs())
                    .fold(0.0, f64::max)
            })
            .collect();
        let g_light = gains.iter().copied().fold(0.0, f64::max);
        for (c, &g) in corners.iter().zip(&gains) {
            let v = &c.scenario;
            let u_dir = if up { u_hi } else { u_lo };
            // Upper bound of the output rate along the path, over the window.
            let mut v_auth = f64::NEG_INFINITY;
            for &t in &window {
                let env = v.setup.disturbances.at(t);
                for i in 0..=40 {
                    let y = from + delta * f64::from(i) / 40.0;
                    let rate = output_rate(v, y, u_dir, &env);
                    v_auth = v_auth.max(if up { rate } else { -rate });
                }
            }
            if v_auth.is_nan() || v_auth <= 0.0 {
                continue; // the hold check reports an unreachable target
            }
            let (v_max, v_why) = match accel_lim {
                Some(a) if a < v_auth => (a, format!("the peak_accel limit {}", n(a))),
                _ => (
                    v_auth,
                    format!(
                        "the authority with the command at {} ({} {unit}/s)",
                        if up { "output_max" } else { "output_min" },
                        n(v_auth)
                    ),
                ),
            };
            let j_slew = slew_lim.map(|r| g * r);
            let (j_max, j_why) = match (jerk_lim, j_slew) {
                (Some(j), Some(js)) if js < j => (
                    js,
                    format!(
                        "peak_slew_per_s {} × the command gain {} {unit}/s² per unit",
                        n(slew_lim.unwrap_or(0.0)),
                        n(g)
                    ),
                ),
                (Some(j), _) => (j, format!("the peak_jerk limit {}", n(j))),
                (None, Some(js)) => (
                    js,
                    format!(
                        "peak_slew_per_s {} × the command gain {}",
                        n(slew_lim.unwrap_or(0.0)),
                        n(g)
                    ),
                ),
                (None, None) => (f64::INFINITY, String::new()),
            };
            let theta = dead_time(v);
            let t_settle = theta + travel_time(d_settle, v_max, j_max);
            let bounds = if j_max.is_finite() {
                format!("its rate is bounded by {v_why} and the rate's change by {j_why}")
            } else {
                format!("its rate is bounded by {v_why}")
            };
            if let Some(limit) = settle_lim
                && t_settle > limit
            {
                let d_ok = travel_distance(limit - theta, v_max, j_max) / (1.0 - band_frac);
                keep_worst(
                    &mut worst_settle,
                    t_settle - limit,
                    Finding {
                        severity: Severity::Infeasible,
                        criterion: Some(MetricKey::SettlingTime),
                        corner: Some(c.label.clone()),
                        time_s: Some(start),
                        needed: Some(t_settle),
                        limit: Some(limit),
                        message: format!(
                            "settling_time_s cannot be met at corner {}: the step from {} to {} {unit} at t = {} s needs at least {} s to settle (limit {} s, short by {} s): {bounds}{}",
                            c.label,
                            n(from),
                            n(to),
                            n(start),
                            n(t_settle),
                            n(limit),
                            n(t_settle - limit),
                            if theta > 0.0 {
                                format!(
                                    ", and it reacts only after the dead time of {} s",
                                    n(theta)
                                )
                            } else {
                                String::new()
                            }
                        ),
                        remedy: Some(format!(
                            "raise settling_time_s to ≥ {}, or make the step at most {} {unit}, or relax the limit that bounds the motion ({})",
                            n(t_settle),
                            n(d_ok.max(0.0)),
                            if j_max.is_finite() {
                                format!("{v_why}; {j_why}")
                            } else {
                                v_why.clone()
                            }
                        )),
                    },
                );
            }
            let t_rise = d_rise / v_max;
            if let Some(limit) = rise_lim
                && t_rise > limit
            {
                keep_worst(
                    &mut worst_rise,
                    t_rise - limit,
                    Finding {
                        severity: Severity::Infeasible,
                        criterion: Some(MetricKey::RiseTime),
                        corner: Some(c.label.clone()),
                        time_s: Some(start),
                        needed: Some(t_rise),
                        limit: Some(limit),
                        message: format!(
                            "rise_time_s cannot be met at corner {}: 10–90 % of the step from {} to {} {unit} at t = {} s takes at least {} s (limit {} s): the output rate is bounded by {v_why}",
                            c.label,
                            n(from),
                            n(to),
                            n(start),
                            n(t_rise),
                            n(limit)
                        ),
                        remedy: Some(format!(
                            "raise rise_time_s to ≥ {}, or make the step at most {} {unit}, or relax {v_why}",
                            n(t_rise),
                            n(v_max * limit / 0.8)
                        )),
                    },
                );
            }
            // Advisory: a slew limit that keeps the jerk at the lightest
            // corner leaves this corner only g/g_light of it.
            if let (Some(j), Some(limit)) = (jerk_lim, settle_lim)
                && g_light > 0.0
                && g < g_light
            {
                let j_here = j * g / g_light;
                let t_adv = theta + travel_time(d_settle, v_max, j_here.min(j_max));
                if t_adv > limit && t_settle <= limit {
                    let f = Finding {
                        severity: Severity::Warning,
                        criterion: Some(MetricKey::SettlingTime),
                        corner: Some(c.label.clone()),
                        time_s: Some(start),
                        needed: Some(t_adv),
                        limit: Some(limit),
                        message: format!(
                            "jerk against settling at corner {}: a slew limit that keeps the jerk within {} at the corner with the highest command gain ({} per unit) allows this corner (gain {}) a jerk of only {}, and the step then needs ≥ {} s to settle (limit {} s); the loop must keep the jerk by gentle gains, not by the slew limit alone",
                            c.label,
                            n(j),
                            n(g_light),
                            n(g),
                            n(j_here),
                            n(t_adv),
                            n(limit)
                        ),
                        remedy: None,
                    };
                    if advisory.as_ref().is_none_or(|a| t_adv > a.0) {
                        advisory = Some((t_adv, f));
                    }
                }
            }
        }
        // 3. Run length of the step.
        if let Some(limit) = settle_lim {
            if start + limit > duration {
                out.findings.push(Finding {
                    severity: Severity::Warning,
                    criterion: Some(MetricKey::SettlingTime),
                    corner: None,
                    time_s: Some(start),
                    needed: None,
                    limit: Some(limit),
                    message: format!(
                        "the step at t = {} s may settle after the end of the run: {} s + the settling limit {} s > duration_s = {} s",
                        n(start),
                        n(start),
                        n(limit),
                        n(duration)
                    ),
                    remedy: Some(format!("raise duration_s to ≥ {}", n(start + limit))),
                });
            } else if end - start < limit {
                out.findings.push(Finding {
                    severity: Severity::Warning,
                    criterion: Some(MetricKey::SettlingTime),
                    corner: None,
                    time_s: Some(start),
                    needed: None,
                    limit: Some(limit),
                    message: format!(
                        "the step segment (t = {} to {} s) is shorter than the settling limit {} s; settling is judged within the segment",
                        n(start),
                        n(end),
                        n(limit)
                    ),
                    remedy: Some("lengthen the hold of the step segment".into()),
                });
            }
        }
    } else {
        for key in [
            MetricKey::RiseTime,
            MetricKey::SettlingTime,
            MetricKey::Overshoot,
        ] {
            if s.criteria
                .iter()
                .any(|c| c.metric == key && c.scope == Scope::Run)
            {
                out.findings.push(Finding {
                    severity: Severity::Infeasible,
                    criterion: Some(key),
                    corner: None,
                    time_s: None,
                    needed: None,
                    limit: None,
                    message: format!(
                        "{key} cannot be met: the reference never changes, so there is no step to judge"
                    ),
                    remedy: Some(format!("add a reference change, or drop the {key} criterion")),
                });
            }
        }
    }
    // Ramps faster than a corner can follow: the output driven at full
    // authority from the ramp's start (and capped by the peak_accel
    // limit), against the ramp.
    let mut lagging: Option<(f64, Finding)> = None;
    for p in s.setup.reference.pieces() {
        let delta = p.to - p.from;
        if p.ramp_s <= 0.0 || delta == 0.0 || p.start_s >= duration {
            continue;
        }
        let rate = delta / p.ramp_s;
        let up = rate > 0.0;
        for c in &corners {
            let v = &c.scenario;
            let u_dir = if up { u_hi } else { u_lo };
            let mut y = p.from;
            let mut lag = 0.0f64;
            let end = p.hold_start_s().min(duration);
            let mut t = p.start_s;
            while t < end {
                let env = v.setup.disturbances.at(t);
                let mut dy = output_rate(v, y, u_dir, &env);
                if let Some(a) = accel_lim {
                    dy = dy.clamp(-a, a);
                }
                let r = v.setup.reference.at(t + dt);
                y = if up {
                    (y + dy * dt).min(r)
                } else {
                    (y + dy * dt).max(r)
                };
                lag = lag.max((r - y).abs());
                t += dt;
            }
            if lag > band_frac * delta.abs() {
                let f = Finding {
                    severity: Severity::Warning,
                    criterion: None,
                    corner: Some(c.label.clone()),
                    time_s: Some(p.start_s),
                    needed: Some(rate.abs()),
                    limit: None,
                    message: format!(
                        "the ramp from {} to {} {unit} at t = {} s asks for {} {unit}/s; at corner {} even full authority{} leaves the output up to {} {unit} behind it",
                        n(p.from),
                        n(p.to),
                        n(p.start_s),
                        n(rate.abs()),
                        c.label,
                        if accel_lim.is_some() {
                            " within the peak_accel limit"
                        } else {
                            ""
                        },
                        n(lag)
                    ),
                    remedy: None,
                };
                if lagging.as_ref().is_none_or(|l| lag > l.0) {
                    lagging = Some((lag, f));
                }
            }
        }
    }
    let ref_end = s.setup.reference.duration_s();
    if ref_end > duration {
        out.findings.push(Finding {
            severity: Severity::Warning,
            criterion: None,
            corner: None,
            time_s: Some(duration),
            needed: None,
            limit: None,
            message: format!(
                "the reference runs to t = {} s, after the end of the run (duration_s = {} s): its last {} s are never run",
                n(ref_end),
                n(duration),
                n(ref_end - duration)
            ),
            remedy: Some(format!("raise duration_s to ≥ {}", n(ref_end))),
        });
    }
    for w in [worst_sse, worst_settle, worst_rise, worst_sat, unjudged]
        .into_iter()
        .flatten()
    {
        out.findings.push(w.finding);
    }
    out.findings.extend(headroom.map(|h| h.1));
    out.findings.extend(advisory.map(|a| a.1));
    out.findings.extend(lagging.map(|l| l.1));
    out.findings
        .sort_by_key(|f| u8::from(f.severity != Severity::Infeasible));
    out
}

/// Dead time between a command and the first reaction of the measured
/// output: the plant's transport delay plus the sensor delay.
fn dead_time(s: &Scenario) -> f64 {
    let plant = match s.plant {
        PlantModel::FirstOrderLag { dead_time_s, .. } => dead_time_s,
        _ => 0.0,
    };
    #[allow(clippy::cast_precision_loss)]
    let sensor = s.sensor.map_or(0.0, |p| p.delay_samples as f64) * s.controller.period_s;
    plant + sensor
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Fastest motion under a rate and a jerk bound, worked by hand: with
    /// v = 2, j = 4, the rate reaches 2 at t = 0.5 s having covered
    /// ½·4·0.5² = 0.5; then 2 per s.
    #[test]
    fn travel_time_and_distance_worked_by_hand() {
        let table = [
            (0.5, 0.5),    // exactly the ramp-up
            (0.125, 0.25), // inside the ramp-up: √(2·0.125/4)
            (2.5, 1.5),    // 0.5 s ramp-up + 2/2 s at full rate
        ];
        for (d, t) in table {
            assert!((travel_time(d, 2.0, 4.0) - t).abs() < 1e-12, "{d}");
            assert!((travel_distance(t, 2.0, 4.0) - d).abs() < 1e-12, "{t}");
        }
        assert_eq!(travel_time(3.0, 2.0, f64::INFINITY), 1.5);
        assert_eq!(travel_time(0.0, 2.0, 4.0), 0.0);
    }

    /// A lag k/(τs + 1) with k = 10 asked to hold 12 with u ≤ 1: the hold
    /// command is 12/10 = 1.2, 0.2 above the limit; the most it can hold
    /// is k·1 = 10, an error of 2 (worked by hand).
    #[test]
    fn an_unreachable_setpoint_is_named_with_its_shortfall() {
        let text = r#"
[scenario]
name = "lag"
duration_s = 50.0
[controller]
period_s = 0.1
kp = 0.1
ki_per_s = 0.1
output_min = 0.0
output_max = 1.0
[plant]
model = "first_order_lag"
gain = 10.0
tau_s = 2.0
dead_time_s = 0.0
[reference]
segments = [{ to = 12.0, hold_s = 50.0 }]
[criteria]
steady_state_error = { max = 0.5 }
"#;
        let s = Scenario::from_toml(text, "lag.toml").unwrap();
        let f = feasibility(&s);
        assert!(!f.feasible());
        let sse = f
            .infeasible()
            .find(|x| x.criterion == Some(MetricKey::SteadyStateError))
            .unwrap();
        assert_eq!(sse.corner.as_deref(), Some("nominal"));
        let needed = sse.needed.unwrap();
        assert!((needed - 2.0).abs() < 1e-9, "{needed}");
        assert!(
            sse.message.contains("needs a command of 1.2,"),
            "{}",
            sse.message
        );
        assert!(sse.message.contains("by 0.2;"), "{}", sse.message);
        let remedy = sse.remedy.as_deref().unwrap();
        assert!(remedy.contains("raise output_max to ≥ 1.2"), "{remedy}");
        assert!(remedy.contains("lower that setpoint to ≤ 10 "), "{remedy}");
        // With output_max = 1.5 it is feasible.
        let wide = Scenario::from_toml(
            &text.replace("output_max = 1.0", "output_max = 1.5"),
            "lag.toml",
        )
        .unwrap();
        assert!(feasibility(&wide).feasible());
    }

    /// An integrator k·u with k = 2, u ≤ 1 steps by 10 with a settling
    /// limit of 4 s: at full authority the output moves at 2 per s, so
    /// 98 % of the step takes 9.8/2 = 4.9 s > 4 s (worked by hand).
    #[test]
    fn a_step_too_large_for_the_authority_cannot_settle_in_time() {
        let text = r#"
[scenario]
name = "integrator"
duration_s = 30.0
[controller]
period_s = 0.01
kp = 1.0
ki_per_s = 0.1
output_min = -1.0
output_max = 1.0
[plant]
model = "integrator"
gain = 2.0
[reference]
segments = [{ to = 10.0, hold_s = 30.0 }]
[criteria]
settling_time_s = { max = 4.0 }
"#;
        let s = Scenario::from_toml(text, "i.toml").unwrap();
        let f = feasibility(&s);
        let settle = f
            .infeasible()
            .find(|x| x.criterion == Some(MetricKey::SettlingTime))
            .unwrap();
        assert!((settle.needed.unwrap() - 4.9).abs() < 1e-9, "{settle:?}");
        assert!(
            settle
                .remedy
                .as_deref()
                .unwrap()
                .contains("raise settling_time_s to ≥ 4.9")
        );
    }

    #[test]
    fn holds_of_a_profile() {
        use crate::profile::Segment;
        let p = Profile::new(
            0.0,
            vec![
                Segment::hold(2.0),
                Segment::ramp(4.0, 5.0, 18.0),
                Segment::step(1.0, 3.0),
            ],
        );
        let h = holds(&p);
        assert_eq!(
            h,
            vec![
                (0.0, 2.0, 0.0),
                (7.0, 25.0, 4.0),
                (25.0, f64::INFINITY, 1.0)
            ]
        );
    }
}
