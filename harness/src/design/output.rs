//! The readable report of `evenkeel design`: what design changed that the
//! user wrote (first), feasibility, the verdict, the proposal, the search,
//! the worst margin per criterion with the variant that binds it, the
//! constraints, the derivation of the starting point, the fixed-point
//! check and the margins at every corner.

use std::fmt::Write;

use evenkeel::AntiWindup;

use super::{CornerReport, FixedCheck, Severity, Tuned};
use crate::report::{CAUTION, format_number};
use crate::scenario::Scenario;

fn n(x: f64) -> String {
    format_number(Some(x)).replace("inf", "∞")
}

/// A margin with its sign: `+0.238`, `−0.120`.
fn m(x: f64) -> String {
    if x.is_infinite() {
        return if x > 0.0 {
            "+∞".into()
        } else {
            "−∞".into()
        };
    }
    format!("{x:+.3}").replace('-', "−")
}

/// The one-line verdict.
#[must_use]
pub fn verdict(t: &Tuned) -> String {
    if !t.feasibility.feasible() {
        let k = t.feasibility.infeasible().count();
        return format!(
            "FAIL: infeasible ({k} finding{}): no controller can meet the criteria as written; nothing was tuned",
            if k == 1 { "" } else { "s" }
        );
    }
    let Some(v) = &t.verification else {
        return "FAIL: not verified".into();
    };
    let mut why = Vec::new();
    if !v.passed() {
        why.push(format!(
            "{} of {} variants fail a criterion",
            v.variants.len() - v.passing(),
            v.variants.len()
        ));
    }
    for c in t.constraints.iter().filter(|c| c.margin < 0.0) {
        why.push(format!("constraint {} fails at {}", c.name, c.corner));
    }
    if !t.fixed.holds() {
        why.push("Q16.16 cannot hold a coefficient".into());
    }
    if why.is_empty() {
        format!(
            "PASS: every one of {} variants meets every criterion (worst margin {}), every constraint holds, Q16.16 holds the coefficients",
            v.variants.len(),
            m(t.search.final_worst)
        )
    } else {
        format!("FAIL: {} (the best loop found is below)", why.join("; "))
    }
}

/// The readable report.
#[must_use]
#[allow(clippy::too_many_lines)]
pub fn report(s: &Scenario, t: &Tuned) -> String {
    let mut out = String::new();
    let opts = &t.options;
    let _ = writeln!(
        out,
        "design for {} ({}): analytic rule {}, verified on the {} backend",
        s.name,
        s.source,
        t.start.method.name(),
        opts.backend.name()
    );
    for notice in &t.notices {
        let _ = writeln!(out, "  NOTICE: {notice}");
    }
    let f = &t.feasibility;
    let _ = writeln!(
        out,
        "  feasibility ({} corner{} x {} reference hold{}, plant physics and criteria only): {}",
        f.corners,
        if f.corners == 1 { "" } else { "s" },
        f.holds,
        if f.holds == 1 { "" } else { "s" },
        if f.feasible() {
            "feasible"
        } else {
            "INFEASIBLE"
        }
    );
    for finding in &f.findings {
        let tag = match finding.severity {
            Severity::Infeasible => "INFEASIBLE",
            Severity::Warning => "warning",
        };
        let _ = writeln!(out, "    - {tag}: {}", finding.message);
        if let Some(r) = &finding.remedy {
            let _ = writeln!(out, "      would make it feasible: {r}");
        }
    }
    let _ = writeln!(out, "  verdict: {}", verdict(t));
    let c = &t.settings;
    let _ = writeln!(
        out,
        "  {}:",
        if t.verification.is_some() {
            "proposal"
        } else {
            "analytic start (not verified: the criteria are infeasible)"
        }
    );
    let _ = writeln!(
        out,
        "    period_s = {}   kp = {}   ki_per_s = {}   setpoint_weight = {}",
        c.period_s, c.kp, c.ki_per_s, c.setpoint_weight
    );
    let _ = writeln!(
        out,
        "    output_min = {}   output_max = {}   slew_per_s = {}   filter_time_s = {}",
        c.output_min,
        c.output_max,
        c.slew_per_s.map_or("none".into(), |v| v.to_string()),
        c.filter_time_s.map_or("none".into(), |v| v.to_string())
    );
    match c.anti_windup {
        AntiWindup::BackCalculation { tracking_time_s } => {
            let _ = writeln!(
                out,
                "    anti_windup = back_calculation   tracking_time_s = {tracking_time_s}"
            );
        }
        AntiWindup::ConditionalIntegration => {
            let _ = writeln!(out, "    anti_windup = conditional_integration");
        }
    }
    if let Some(v) = &t.verification {
        let corners = v
            .points
            .iter()
            .filter(|p| p.origin == super::Origin::Corner)
            .count();
        let lhs = v
            .points
            .iter()
            .filter(|p| p.origin == super::Origin::Hypercube)
            .count();
        let _ = writeln!(
            out,
            "  sample: {} variants: {corners} corners, the centre, {lhs} Latin-hypercube draws (seed {}); {} pass every criterion",
            v.points.len(),
            opts.seed,
            v.passing()
        );
        let log = &t.search;
        if log.searched {
            let _ = writeln!(
                out,
                "  search: {} had worst margin {}; pattern search over {} knobs, {} round{}, {} iterations, {} candidates, {} closed-loop runs, working set {} variants; stopped: {}",
                t.start_name(),
                m(log.start_worst),
                log.knobs,
                log.rounds,
                if log.rounds == 1 { "" } else { "s" },
                log.iterations,
                log.candidates,
                log.runs,
                log.working_set,
                log.stop.map_or("-", |s| s.name())
            );
        } else {
            let _ = writeln!(
                out,
                "  search: not needed: {} has worst margin {} (target {}); {} closed-loop runs",
                t.start_name(),
                m(log.start_worst),
                m(s.design.target_margin),
                log.runs
            );
        }
        let _ = writeln!(
            out,
            "  per criterion, over the sample (margin: distance to the limit as a fraction of it, + passes):"
        );
        let _ = writeln!(
            out,
            "    {:<22} {:>12} {:>12} {:>9} {:>9}  binding variant",
            "criterion", "limit", "worst", "margin", "failing"
        );
        for cm in &v.criteria {
            let p = &v.points[cm.binding];
            let _ = writeln!(
                out,
                "    {:<22} {:>12} {:>12} {:>9} {:>9}  #{} {} {}",
                cm.criterion.label(),
                format!("{} {}", cm.criterion.bound.symbol(), n(cm.criterion.limit)),
                format_number(cm.worst_value),
                m(cm.worst_margin),
                format!("{}/{}", cm.failing, v.variants.len()),
                cm.binding,
                p.origin.name(),
                super::point_label(s, &p.values)
            );
        }
    }
    let _ = writeln!(
        out,
        "  constraints over the linearised corners ([design]; common practice: Ms ≤ 2, 1.2–2 typical; GM ≥ 2; PM ≥ 30°):"
    );
    for k in &t.constraints {
        let _ = writeln!(
            out,
            "    {:<22} {:>12} {:>12} {:>9}  at {}",
            k.name,
            if k.name == "stable" {
                "poles < 1".to_owned()
            } else {
                format!("{} {}", k.bound.symbol(), n(k.limit))
            },
            n(k.worst),
            m(k.margin),
            k.corner
        );
    }
    let _ = writeln!(
        out,
        "  derivation of the {} proposal{}:",
        t.start.method.name(),
        if t.started_from == super::StartPoint::AsWritten {
            " (not the start: the [controller] as written scored better)"
        } else {
            ""
        }
    );
    for line in &t.start.derivation {
        let _ = writeln!(out, "    - {line}");
    }
    fixed_section(&mut out, &t.fixed);
    formats_section(&mut out, s, &t.settings);
    corner_table(&mut out, &t.corners);
    let _ = writeln!(out, "  {CAUTION}");
    out
}

fn fixed_section(out: &mut String, f: &FixedCheck) {
    let _ = writeln!(
        out,
        "  fixed point (Q16.16, evenkeel::Config::<I16F16>::try_new): {}",
        match (&f.accepted, f.holds()) {
            (Err(e), _) => format!("REFUSED: {e}"),
            (Ok(()), true) => "accepted, every coefficient within tolerance".into(),
            (Ok(()), false) => "accepted, but a coefficient is outside its tolerance".into(),
        }
    );
    for k in &f.coefficients {
        let _ = writeln!(
            out,
            "    {:<16} wanted {:>14}  stored {:>22.15}  rel. error {:>9.2e} (≤ {:.0e}) {}",
            k.name,
            format!("{:.10}", k.wanted),
            k.stored,
            k.relative_error(),
            k.tolerance,
            if k.relative_error() <= k.tolerance {
                "ok"
            } else {
                "TOO COARSE"
            }
        );
    }
}

/// Which fixed format the loop needs (`design::format_fits`).
fn formats_section(out: &mut String, s: &Scenario, settings: &evenkeel::Settings) {
    let fits = super::format_fits(s, settings);
    let unit = if s.output_unit == "1" {
        String::new()
    } else {
        format!(" {}", s.output_unit)
    };
    let _ = writeln!(
        out,
        "  fixed format needed: {}",
        super::needed(&fits).map_or_else(
            || "neither fixed format fits (see below)".to_owned(),
            |f| format!("{} ({} backend)", f.label, f.backend.name())
        )
    );
    for f in &fits {
        let _ = writeln!(out, "    {}", f.summary(&unit));
    }
    let _ = writeln!(
        out,
        "    resolution: the larger of one measurement LSB and the integrator's stall bound; limit cycle bound: one sample's rounding G (FORMATS.md §4, §8) in command LSB"
    );
}

fn corner_table(out: &mut String, corners: &[CornerReport]) {
    let _ = writeln!(
        out,
        "  sampled loop at every linearised corner (ZOH plant, stored coefficients):"
    );
    let _ = writeln!(
        out,
        "    {:>8} {:>7} {:>8} {:>9} {:>8} {:>6} {:>6} {:>8} {:>9} {:>7}  corner",
        "GM", "GM dB", "PM deg", "wc rad/s", "DM s", "Ms", "Mt", "zeta min", "bw rad/s", "stable"
    );
    for r in corners {
        let g = &r.margins;
        let _ = writeln!(
            out,
            "    {:>8} {:>7} {:>8} {:>9} {:>8} {:>6} {:>6} {:>8} {:>9} {:>7}  {}",
            n(g.gain_margin),
            n(20.0 * g.gain_margin.log10()),
            n(g.phase_margin_deg),
            n(g.gain_crossover_rad_s),
            n(g.delay_margin_s),
            format!("{:.2}", g.sensitivity_peak),
            format!("{:.2}", g.complementary_peak),
            n(g.min_damping),
            n(g.bandwidth_rad_s),
            if g.stable() { "yes" } else { "NO" },
            r.corner.label()
        );
    }
    if let Some(w) = corners.iter().min_by(|a, b| {
        a.margins
            .phase_margin_deg
            .total_cmp(&b.margins.phase_margin_deg)
    }) {
        let _ = writeln!(
            out,
            "    smallest phase margin {} deg at {}",
            n(w.margins.phase_margin_deg),
            w.corner.label()
        );
    }
    let _ = writeln!(
        out,
        "    GM: factor the loop gain may grow before instability; PM: phase to spare at the gain crossover wc; DM = PM/wc, the extra dead time the loop tolerates;\n    Ms = max |1/(1+L)|, the inverse of the Nyquist curve's shortest distance to -1 (common practice: Ms <= 2, 1.2-2 typical); Mt = max |L/(1+L)| (common practice: <= 1.5);\n    zeta min: the smallest damping ratio over the closed-loop poles (continuous equivalents ln(z)/Ts), filter and delay poles included: below about 0.4 a mode rings (common practice);\n    bw: where |L/(1+L)| first drops below -3 dB."
    );
}
