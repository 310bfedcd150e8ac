//! The plot of one run (see the module above for its panels).

use std::ops::Range;
use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::{FONT, Figure, PlotError, SIZE, max_limit, reduce, span, write_figure};
use crate::criteria::MetricKey;
use crate::outcome::BackendRun;
use crate::report::CAUTION;
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
        range: -0.3..10.5, // head room for the legend above the lanes
    }
}

/// A named line: label, points, colour.
type Series<'a> = (&'a str, Vec<(f64, f64)>, RGBColor);

struct Panel<'a> {
    y_desc: String,
    series: Vec<Series<'a>>,
    limits: Vec<(String, f64)>,
    range: Range<f64>,
}

fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    scenario: &Scenario,
    run: &BackendRun,
) -> Result<(), PlotError> {
    let e = |e: DrawingAreaErrorKind<DB::ErrorType>| PlotError::Draw(e.to_string());
    let rec = &run.recording;
    let t = &rec.time_s;
    let t_end = t.last().copied().unwrap_or(1.0).max(rec.dt_s);
    let unit = &scenario.output_unit;
    let (rate_unit, jerk_unit) = match unit.as_str() {
        "m/s" => ("m/s²".to_owned(), "m/s³".to_owned()),
        "rad/s" => ("rad/s²".to_owned(), "rad/s³".to_owned()),
        "1" => ("1/s".to_owned(), "1/s²".to_owned()),
        u => (format!("{u}/s"), format!("{u}/s²")),
    };
    let (u_lo, u_hi) = (
        scenario.controller.output_min,
        scenario.controller.output_max,
    );
    let jerk = rec.jerk();
    let accel_limit = max_limit(scenario, MetricKey::PeakAccel);
    let jerk_limit = max_limit(scenario, MetricKey::PeakJerk);
    let sym = |l: Option<f64>| l.map(|v| vec![v, -v]).unwrap_or_default();
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
        },
        Panel {
            y_desc: format!("command ({})", scenario.command_unit),
            range: span(&[&rec.command, &rec.applied], &[u_lo, u_hi]),
            series: vec![
                ("applied", reduce(t, &rec.applied), grey),
                ("command", reduce(t, &rec.command), blue),
            ],
            limits: vec![
                ("output limits".into(), u_lo),
                ("output limits".into(), u_hi),
            ],
        },
        Panel {
            y_desc: format!("acceleration ({rate_unit})"),
            range: span(&[&rec.accel], &sym(accel_limit)),
            series: vec![("acceleration", reduce(t, &rec.accel), green)],
            limits: sym(accel_limit)
                .into_iter()
                .map(|v| ("peak_accel limit (±)".to_owned(), v))
                .collect(),
        },
        Panel {
            y_desc: format!("jerk ({jerk_unit})"),
            range: span(&[&jerk], &sym(jerk_limit)),
            series: vec![("jerk", reduce(t, &jerk), green)],
            limits: sym(jerk_limit)
                .into_iter()
                .map(|v| ("peak_jerk limit (±)".to_owned(), v))
                .collect(),
        },
        lanes_panel(run),
    ];

    root.fill(&WHITE).map_err(e)?;
    let (title, rest) = root.split_vertically(50);
    let (body, footer) = rest.split_vertically(SIZE.1 - 50 - 36);
    let verdict = if run.passed() { "PASS" } else { "FAIL" };
    title
        .titled(
            &format!("{} — backend {} — {verdict}", scenario.name, run.backend),
            (FONT, 24),
        )
        .map_err(e)?;
    footer
        .draw_text(CAUTION, &(FONT, 15).into_font().color(&BLACK), (20, 8))
        .map_err(e)?;

    let areas = body.split_evenly((panels.len(), 1));
    for (area, panel) in areas.iter().zip(panels.iter_mut()) {
        let mut chart = ChartBuilder::on(area)
            .margin_left(12)
            .margin_right(24)
            .margin_top(8)
            .x_label_area_size(40)
            .y_label_area_size(80)
            .build_cartesian_2d(0.0..t_end, panel.range.clone())
            .map_err(e)?;
        let height = panel.range.end - panel.range.start;
        // Decimals for about three significant digits over the range.
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        let decimals = (2.0 - height.log10().floor()).clamp(0.0, 6.0) as usize;
        let y_label = move |v: &f64| {
            // No "-0.0" labels.
            let v = if v.abs() < 1e-9 * height { 0.0 } else { *v };
            format!("{v:.decimals$}")
        };
        chart
            .configure_mesh()
            .y_label_formatter(&y_label)
            .x_desc("time (s)")
            .y_desc(panel.y_desc.as_str())
            .label_style((FONT, 14))
            .axis_desc_style((FONT, 16))
            .light_line_style(RGBColor(235, 235, 235))
            .draw()
            .map_err(e)?;
        let red = RGBColor(200, 30, 30);
        for (i, (name, value)) in panel.limits.iter().enumerate() {
            let line = chart
                .draw_series(DashedLineSeries::new(
                    [(0.0, *value), (t_end, *value)],
                    8,
                    5,
                    red.stroke_width(2),
                ))
                .map_err(e)?;
            // One legend entry for the pair of limit lines.
            if i == 0 {
                line.label(name.clone()).legend(move |(x, y)| {
                    PathElement::new([(x, y), (x + 20, y)], red.stroke_width(2))
                });
            }
        }
        for (name, points, color) in panel.series.drain(..) {
            let c = color;
            chart
                // Width 1: wider polylines get miter spikes at the sharp
                // corners of noisy signals in the bitmap back end.
                .draw_series(LineSeries::new(points, c.stroke_width(1)))
                .map_err(e)?
                .label(name)
                .legend(move |(x, y)| PathElement::new([(x, y), (x + 20, y)], c.stroke_width(2)));
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .label_font((FONT, 14))
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .draw()
            .map_err(e)?;
    }
    Ok(())
}
