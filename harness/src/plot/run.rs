//! The plot of one run (see the module above for its panels).

use std::ops::Range;
use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::{
    Figure, LabelledLine, Mark, PlotError, derivative_units, draw_grid, draw_labelled_line,
    draw_legend_box, draw_limit_lines, draw_marks, draw_page, max_limit, mirrored, reduce, span,
    time_panel, write_figure,
};
use crate::criteria::MetricKey;
use crate::outcome::BackendRun;
use crate::scenario::Scenario;

/// Draws `run` of `scenario` into `path` (`.svg` or `.png`), atomically.
///
/// # Errors
/// [`PlotError`] for a wrong extension, a drawing or a writing failure.
pub fn plot(scenario: &Scenario, run: &BackendRun, path: &Path) -> Result<(), PlotError> {
    write_figure(&RunFigure { scenario, run }, path)
}

/// One run of a scenario, as a page.
struct RunFigure<'a> {
    scenario: &'a Scenario,
    run: &'a BackendRun,
}

impl Figure for RunFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError> {
        draw(root, self.scenario, self.run)
    }
}

/// Panel 5: one 0/1 lane per signal, lane `i` drawn between `i` and `i + 0.8`.
fn lanes_panel(run: &BackendRun) -> Panel<'static> {
    use evenkeel::Status;
    use evenkeel::monitor::Diagnostics;
    let rec = &run.recording;
    let t = &rec.time_s;
    let f = &rec.faults;
    let lane = |i: f64, on: &dyn Fn(usize) -> bool| -> Vec<f64> {
        (0..t.len())
            .map(|k| i + if on(k) { 0.8 } else { 0.0 })
            .collect()
    };
    let monitor = |k: usize, flag: Diagnostics| f.monitor.get(k).is_some_and(|d| d.contains(flag));
    let flagged = |k: usize| {
        rec.status
            .get(k)
            .is_some_and(|s| s.is_fault() || s.contains(Status::DOWNSTREAM))
    };
    let series = vec![
        (
            "fault injected",
            reduce(
                t,
                &lane(5.0, &|k| {
                    f.active.get(k).copied().unwrap_or(false)
                        || f.payload.get(k).copied().unwrap_or(false)
                }),
            ),
            RGBColor(200, 30, 30),
        ),
        (
            "controller fault flag",
            reduce(t, &lane(4.0, &flagged)),
            RGBColor(230, 120, 20),
        ),
        (
            "monitor: oscillation",
            reduce(t, &lane(3.0, &|k| monitor(k, Diagnostics::OSCILLATION))),
            RGBColor(148, 103, 189),
        ),
        (
            "monitor: saturation",
            reduce(t, &lane(2.0, &|k| monitor(k, Diagnostics::SATURATION))),
            RGBColor(31, 119, 180),
        ),
        (
            "monitor: sluggish",
            reduce(t, &lane(1.0, &|k| monitor(k, Diagnostics::SLUGGISH))),
            RGBColor(44, 160, 44),
        ),
        (
            "monitor: noisy",
            reduce(t, &lane(0.0, &|k| monitor(k, Diagnostics::NOISY))),
            RGBColor(120, 120, 120),
        ),
    ];
    Panel {
        y_desc: "faults / flags (lanes, 0/1)".to_owned(),
        series,
        limits: Vec::new(),
        limit_name: "",
        range: -0.3..10.5, // head room for the legend above the lanes
        marks: Vec::new(),
    }
}

/// The panel (0 output, 1 command, 2 rate, 3 jerk) a metric's worst
/// value is drawn on.
fn panel_of(metric: MetricKey) -> Option<usize> {
    match metric {
        MetricKey::Overshoot
        | MetricKey::FaultOvershoot
        | MetricKey::TrackingErrorPeak
        | MetricKey::RampTrackingErrorPeak
        | MetricKey::DisturbancePeakDeviation => Some(0),
        MetricKey::PeakCommand
        | MetricKey::PeakSlew
        | MetricKey::FaultReturnJump
        | MetricKey::LimitViolations => Some(1),
        MetricKey::PeakAccel => Some(2),
        MetricKey::PeakJerk => Some(3),
        _ => None,
    }
}

struct Panel<'a> {
    y_desc: String,
    series: Vec<LabelledLine<'a>>,
    /// Limit lines, all under one legend entry `limit_name`.
    limits: Vec<f64>,
    limit_name: &'static str,
    range: Range<f64>,
    /// Worst values marked on this panel.
    marks: Vec<Mark>,
}

fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    scenario: &Scenario,
    run: &BackendRun,
) -> Result<(), PlotError> {
    let rec = &run.recording;
    let t = &rec.time_s;
    let t_end = t.last().copied().unwrap_or(1.0).max(rec.dt_s);
    let unit = &scenario.output_unit;
    let (rate_unit, jerk_unit) = derivative_units(unit);
    let (u_lo, u_hi) = (
        scenario.controller.output_min,
        scenario.controller.output_max,
    );
    let jerk = rec.jerk();
    let accel_limits = mirrored(max_limit(scenario, MetricKey::PeakAccel));
    let jerk_limits = mirrored(max_limit(scenario, MetricKey::PeakJerk));
    let blue = RGBColor(31, 119, 180);
    let orange = RGBColor(230, 120, 20);
    let green = RGBColor(44, 160, 44);
    let grey = RGBColor(150, 150, 150);

    let mut panels = [
        Panel {
            y_desc: format!("output ({unit})"),
            range: span(&[&rec.reference, &rec.measurement, &rec.output], &[]),
            series: vec![
                ("measurement", reduce(t, &rec.measurement), grey),
                ("output (true)", reduce(t, &rec.output), blue),
                ("reference", reduce(t, &rec.reference), orange),
            ],
            limits: Vec::new(),
            limit_name: "",
            marks: Vec::new(),
        },
        Panel {
            y_desc: format!("command ({})", scenario.command_unit),
            range: span(&[&rec.command, &rec.applied], &[u_lo, u_hi]),
            series: vec![
                ("applied", reduce(t, &rec.applied), grey),
                ("command", reduce(t, &rec.command), blue),
            ],
            limits: vec![u_lo, u_hi],
            limit_name: "output limits",
            marks: Vec::new(),
        },
        Panel {
            y_desc: format!("acceleration ({rate_unit})"),
            range: span(&[&rec.accel], &accel_limits),
            series: vec![("acceleration", reduce(t, &rec.accel), green)],
            limits: accel_limits,
            limit_name: "peak_accel limit (±)",
            marks: Vec::new(),
        },
        Panel {
            y_desc: format!("jerk ({jerk_unit})"),
            range: span(&[&jerk], &jerk_limits),
            series: vec![("jerk", reduce(t, &jerk), green)],
            limits: jerk_limits,
            limit_name: "peak_jerk limit (±)",
            marks: Vec::new(),
        },
        lanes_panel(run),
    ];
    for v in &run.verdicts {
        let (Some(at), Some(measured), Some(p)) =
            (v.at_s, v.measured, panel_of(v.criterion.metric))
        else {
            continue;
        };
        // Truncation is intended: the instant is a whole sample.
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        let k = (at / rec.dt_s).round() as usize;
        let signal: &[f64] = match p {
            0 => &rec.output,
            1 => &rec.command,
            2 => &rec.accel,
            _ => &jerk,
        };
        let Some(&y) = signal.get(k) else { continue };
        let metric = v.criterion.metric;
        let label = format!(
            "{} {} {} at t = {} s",
            v.criterion.label(),
            crate::report::format_number(Some(measured)),
            metric.unit(unit, &scenario.command_unit),
            crate::report::format_number(Some(at))
        );
        if !panels[p].marks.iter().any(|m| m.2 == label) {
            panels[p].marks.push((at, y, label));
        }
    }

    let verdict = if run.passed() { "PASS" } else { "FAIL" };
    let title = format!("{} — backend {} — {verdict}", scenario.name, run.backend);
    let body = draw_page(root, &title, 24)?;
    let areas = body.split_evenly((panels.len(), 1));
    for (area, panel) in areas.iter().zip(panels.iter_mut()) {
        let mut chart = time_panel(area, t_end, panel.range.clone(), 80)?;
        let height = panel.range.end - panel.range.start;
        // Decimals for about three significant digits over the range.
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        let decimals = (2.0 - height.log10().floor()).clamp(0.0, 6.0) as usize;
        let y_label = move |v: &f64| {
            // No "-0.0" labels.
            let v = if v.abs() < 1e-9 * height { 0.0 } else { *v };
            format!("{v:.decimals$}")
        };
        draw_grid(&mut chart, &panel.y_desc, Some(&y_label))?;
        let red = RGBColor(200, 30, 30);
        draw_limit_lines(&mut chart, t_end, &panel.limits, panel.limit_name, red)?;
        for (name, points, colour) in panel.series.drain(..) {
            draw_labelled_line(&mut chart, points, name, colour)?;
        }
        draw_marks(&mut chart, t_end, &panel.marks, RGBColor(170, 0, 120))?;
        draw_legend_box(&mut chart)?;
    }
    Ok(())
}
