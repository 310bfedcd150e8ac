//! The plot of one run (see the module above for its panels).

use std::ops::Range;
use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::{
    Figure, LegendEntry, Mark, PlotError, WorstMark, clamp_points, derivative_units, draw_clipped,
    draw_dashed_segments, draw_grid, draw_labelled_line, draw_marks, draw_page, draw_side_legend,
    is_motion, max_limit, mirrored, reduce, render_svg, robust_span, time_panel,
    with_legend_column, write_figure,
};
use crate::criteria::MetricKey;
use crate::outcome::BackendRun;
use crate::report::format_number;
use crate::scenario::Scenario;

/// Draws `run` of `scenario` into `path` (`.svg` or `.png`), atomically.
///
/// # Errors
/// [`PlotError`] for a wrong extension, a drawing or a writing failure.
pub fn plot(scenario: &Scenario, run: &BackendRun, path: &Path) -> Result<(), PlotError> {
    write_figure(&RunFigure { scenario, run }, path)
}

/// [`plot`] as an SVG document in memory (for the HTML report).
///
/// # Errors
/// [`PlotError::Draw`] for a drawing failure.
pub fn plot_svg(scenario: &Scenario, run: &BackendRun) -> Result<String, PlotError> {
    render_svg(&RunFigure { scenario, run })
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

const RED: RGBColor = RGBColor(200, 30, 30);
const BLUE: RGBColor = RGBColor(31, 119, 180);
const ORANGE: RGBColor = RGBColor(230, 120, 20);
const GREEN: RGBColor = RGBColor(44, 160, 44);
const GREY: RGBColor = RGBColor(150, 150, 150);
const PURPLE: RGBColor = RGBColor(148, 103, 189);
const MAGENTA: RGBColor = RGBColor(170, 0, 120);

/// Dashed horizontal segments under one legend entry.
struct Dashes {
    label: String,
    colour: RGBColor,
    /// `(t0, t1, y)`.
    segments: Vec<(f64, f64, f64)>,
}

struct Panel {
    y_desc: String,
    /// Label, samples, colour.
    series: Vec<(String, Vec<f64>, RGBColor)>,
    dashes: Vec<Dashes>,
    range: Range<f64>,
    /// Lanes panel: names at heights, 0/1 lanes, y labels hidden.
    lanes: bool,
    /// Worst values marked on this panel.
    marks: Vec<WorstMark>,
}

/// The panel (0 output, 1 command, 2 rate, 3 change of rate) a metric's
/// worst value is drawn on.
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

/// Whether a lane is raised at sample `k`.
type Lane<'a> = Box<dyn Fn(usize) -> bool + 'a>;

/// The lanes of panel 5, top to bottom: one per kind of injected fault
/// (in file order), the controller's fault flags, the monitor's alarms.
/// Lane `i` (from the bottom) lies between `i` and `i + 0.8` when raised.
fn lanes_panel(scenario: &Scenario, run: &BackendRun) -> Panel {
    use evenkeel::Status;
    use evenkeel::monitor::Diagnostics;
    let rec = &run.recording;
    let t = &rec.time_s;
    let f = &rec.faults;
    let mut kinds: Vec<&'static str> = Vec::new();
    for fault in &scenario.setup.faults {
        if !kinds.contains(&fault.kind.name()) {
            kinds.push(fault.kind.name());
        }
    }
    let mut lanes: Vec<(String, Lane<'_>, RGBColor)> = Vec::new();
    for kind in kinds {
        let faults: Vec<_> = scenario
            .setup
            .faults
            .iter()
            .filter(|x| x.kind.name() == kind)
            .collect();
        lanes.push((
            format!("fault: {kind}"),
            Box::new(move |k: usize| faults.iter().any(|x| x.active(t[k]))),
            RED,
        ));
    }
    lanes.push((
        "controller fault flag".to_owned(),
        Box::new(|k: usize| {
            rec.status
                .get(k)
                .is_some_and(|s| s.is_fault() || s.contains(Status::DOWNSTREAM))
        }),
        ORANGE,
    ));
    let monitor = |flag: Diagnostics| {
        Box::new(move |k: usize| f.monitor.get(k).is_some_and(|d| d.contains(flag))) as Lane<'_>
    };
    if f.monitor_settings.is_some() || !f.monitor.is_empty() {
        lanes.push((
            "monitor: oscillation".to_owned(),
            monitor(Diagnostics::OSCILLATION),
            PURPLE,
        ));
        lanes.push((
            "monitor: saturation".to_owned(),
            monitor(Diagnostics::SATURATION),
            BLUE,
        ));
        lanes.push((
            "monitor: sluggish".to_owned(),
            monitor(Diagnostics::SLUGGISH),
            GREEN,
        ));
        lanes.push((
            "monitor: noisy".to_owned(),
            monitor(Diagnostics::NOISY),
            GREY,
        ));
    }
    let n = lanes.len();
    let series = lanes
        .into_iter()
        .enumerate()
        .map(|(i, (name, on, colour))| {
            #[allow(clippy::cast_precision_loss)]
            let base = (n - 1 - i) as f64;
            let samples = (0..t.len())
                .map(|k| base + if on(k) { 0.8 } else { 0.0 })
                .collect();
            (name, samples, colour)
        })
        .collect();
    #[allow(clippy::cast_precision_loss)]
    let top = n as f64;
    Panel {
        y_desc: "raised (lane up) / clear".to_owned(),
        series,
        dashes: Vec::new(),
        range: -0.3..top,
        lanes: true,
        marks: Vec::new(),
    }
}

/// The settling band and the overshoot limit around the judged step (the
/// first change of the reference), over that step's segment.
fn step_marks(scenario: &Scenario) -> Vec<Dashes> {
    let Some((start, end, from, to)) = scenario.setup.reference.first_change() else {
        return Vec::new();
    };
    let size = (to - from).abs();
    let band = scenario.metric_options.settling_band * size;
    let mut out = vec![Dashes {
        label: format!(
            "settling band (±{} %)",
            format_number(Some(100.0 * scenario.metric_options.settling_band))
        ),
        colour: GREEN,
        segments: vec![(start, end, to - band), (start, end, to + band)],
    }];
    if let Some(limit) = max_limit(scenario, MetricKey::Overshoot) {
        let beyond = to + (to - from).signum() * size * limit / 100.0;
        out.push(Dashes {
            label: format!("overshoot limit ({} %)", format_number(Some(limit))),
            colour: RED,
            segments: vec![(start, end, beyond)],
        });
    }
    out
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
    let (rate_name, jerk_name) = if is_motion(unit) {
        ("acceleration", "jerk")
    } else {
        ("rate of change", "change of rate")
    };
    let (u_lo, u_hi) = (
        scenario.controller.output_min,
        scenario.controller.output_max,
    );
    let jerk = rec.jerk();
    let limit = |label: &str, values: Vec<f64>| Dashes {
        label: label.to_owned(),
        colour: RED,
        segments: values.into_iter().map(|v| (0.0, t_end, v)).collect(),
    };
    let accel_limits = mirrored(max_limit(scenario, MetricKey::PeakAccel));
    let jerk_limits = mirrored(max_limit(scenario, MetricKey::PeakJerk));
    let marks = step_marks(scenario);
    let mark_values: Vec<f64> = marks
        .iter()
        .flat_map(|d| d.segments.iter().map(|s| s.2))
        .collect();

    let mut panels = [
        Panel {
            y_desc: format!("output ({unit})"),
            range: robust_span(
                &[&rec.reference, &rec.measurement, &rec.output],
                &mark_values,
            ),
            series: vec![
                ("measurement".into(), rec.measurement.clone(), GREY),
                ("output (true)".into(), rec.output.clone(), BLUE),
                ("reference".into(), rec.reference.clone(), ORANGE),
            ],
            dashes: marks,
            lanes: false,
            marks: Vec::new(),
        },
        Panel {
            y_desc: format!("command ({})", scenario.command_unit),
            range: robust_span(&[&rec.command, &rec.applied], &[u_lo, u_hi]),
            series: vec![
                ("applied".into(), rec.applied.clone(), GREY),
                ("command".into(), rec.command.clone(), BLUE),
            ],
            dashes: vec![limit("output limits", vec![u_lo, u_hi])],
            lanes: false,
            marks: Vec::new(),
        },
        Panel {
            y_desc: format!("{rate_name} ({rate_unit})"),
            range: robust_span(&[&rec.accel], &accel_limits),
            series: vec![(rate_name.into(), rec.accel.clone(), GREEN)],
            dashes: vec![limit("peak_accel limit (±)", accel_limits)],
            lanes: false,
            marks: Vec::new(),
        },
        Panel {
            y_desc: format!("{jerk_name} ({jerk_unit})"),
            range: robust_span(&[&jerk], &jerk_limits),
            series: vec![(jerk_name.into(), jerk, GREEN)],
            dashes: vec![limit("peak_jerk limit (±)", jerk_limits)],
            lanes: false,
            marks: Vec::new(),
        },
        lanes_panel(scenario, run),
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
            _ => &rec.jerk(),
        };
        let Some(&y) = signal.get(k) else { continue };
        let metric = v.criterion.metric;
        let label = format!(
            "{} {} {} at t = {} s",
            v.criterion.label(),
            format_number(Some(measured)),
            metric.unit(unit, &scenario.command_unit),
            format_number(Some(at))
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
        let (data, column) = with_legend_column(area);
        let mut chart = time_panel(&data, t_end, panel.range.clone(), 80)?;
        let height = panel.range.end - panel.range.start;
        // Decimals for about three significant digits over the range.
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        let decimals = (2.0 - height.log10().floor()).clamp(0.0, 6.0) as usize;
        let lanes = panel.lanes;
        let y_label = move |v: &f64| {
            if lanes {
                return String::new();
            }
            // No "-0.0" labels.
            let v = if v.abs() < 1e-9 * height { 0.0 } else { *v };
            format!("{v:.decimals$}")
        };
        draw_grid(&mut chart, &panel.y_desc, Some(&y_label))?;
        let mut legend = Vec::new();
        for d in &panel.dashes {
            if d.segments.is_empty() {
                continue;
            }
            draw_dashed_segments(&mut chart, &d.segments, d.colour)?;
            legend.push(LegendEntry::new(d.label.clone(), d.colour, Mark::Dashed));
        }
        let mut clipped_all: Vec<(f64, f64)> = Vec::new();
        let mut farthest: Option<f64> = None;
        let series = std::mem::take(&mut panel.series);
        for (i, (name, samples, colour)) in series.into_iter().enumerate() {
            let (points, clipped) = clamp_points(reduce(t, &samples), &panel.range);
            if !clipped.is_empty() {
                let range = &panel.range;
                let far = samples
                    .iter()
                    .copied()
                    .filter(|v| v.is_finite() && !range.contains(v))
                    .fold(None, |m: Option<f64>, v| {
                        Some(m.map_or(v, |m| if v.abs() > m.abs() { v } else { m }))
                    });
                farthest = match (farthest, far) {
                    (Some(a), Some(b)) => Some(if b.abs() > a.abs() { b } else { a }),
                    (a, b) => a.or(b),
                };
            }
            clipped_all.extend(clipped);
            draw_labelled_line(&mut chart, points, name.clone(), colour)?;
            if panel.lanes {
                #[allow(clippy::cast_precision_loss)]
                let at = panel.range.end - 1.0 - i as f64 + 0.4;
                legend.push(LegendEntry {
                    label: name,
                    colour,
                    mark: Mark::Lane,
                    at: Some(at),
                });
            } else {
                legend.push(LegendEntry::new(name, colour, Mark::Line));
            }
        }
        if !panel.marks.is_empty() {
            draw_marks(&mut chart, t_end, &panel.range, &panel.marks, MAGENTA)?;
            legend.push(LegendEntry::new("worst value", MAGENTA, Mark::Ring));
        }
        if !clipped_all.is_empty() {
            draw_clipped(&mut chart, &clipped_all, RED)?;
            legend.push(LegendEntry::new(
                format!("clipped at the axis (to {})", format_number(farthest)),
                RED,
                Mark::Clipped,
            ));
        }
        draw_side_legend(&chart, &column, &legend)?;
    }
    Ok(())
}
