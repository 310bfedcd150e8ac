//! Plot of a comparison: both trajectories and their differences, SVG or
//! PNG by extension, four panels sharing the time axis:
//!
//! 1. output of both runs and the reference;
//! 2. output difference fixed − f64, with ± the `max_output_diff` limit;
//! 3. command of both runs;
//! 4. command difference, with ± the `max_command_diff` limit.

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::Comparison;
use crate::plot::{FONT, Figure, PlotError, SIZE, reduce, span, write_figure};
use crate::report::CAUTION;

/// Draws `c` into `path` (`.svg` or `.png`), atomically.
///
/// # Errors
/// [`PlotError`] for a wrong extension, a drawing or a writing failure.
pub fn plot(c: &Comparison, path: &Path) -> Result<(), PlotError> {
    write_figure(&ComparisonFigure(c), path)
}

/// A comparison, as a page.
struct ComparisonFigure<'a>(&'a Comparison);

impl Figure for ComparisonFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError> {
        draw(root, self.0)
    }
}

/// A named line: label, points, colour.
type Series<'a> = (&'a str, Vec<(f64, f64)>, RGBColor);

fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    c: &Comparison,
) -> Result<(), PlotError> {
    let e = |e: DrawingAreaErrorKind<DB::ErrorType>| PlotError::Draw(e.to_string());
    let (a, b) = (&c.fixed, &c.float);
    let t = &a.time_s;
    let t_end = t.last().copied().unwrap_or(1.0).max(a.dt_s);
    let dy: Vec<f64> = a.output.iter().zip(&b.output).map(|(x, y)| x - y).collect();
    let du: Vec<f64> = a
        .command
        .iter()
        .zip(&b.command)
        .map(|(x, y)| x - y)
        .collect();
    let limit = |name: &str| {
        c.checks
            .iter()
            .find(|ch| ch.name == name)
            .map_or(0.0, |ch| ch.tolerance.limit)
    };
    let (ly, lu) = (limit("max_output_diff"), limit("max_command_diff"));
    let (yu, uu) = (&c.scenario.output_unit, &c.scenario.command_unit);
    let blue = RGBColor(31, 119, 180);
    let orange = RGBColor(230, 120, 20);
    let purple = RGBColor(148, 60, 180);
    let grey = RGBColor(150, 150, 150);
    let red = RGBColor(200, 30, 30);
    // (y label, range, series, symmetric limit)
    let mut panels: Vec<(String, std::ops::Range<f64>, Vec<Series<'_>>, f64)> = vec![
        (
            format!("output ({yu})"),
            span(&[&a.reference, &a.output, &b.output], &[]),
            vec![
                ("reference", reduce(t, &a.reference), grey),
                ("f64", reduce(t, &b.output), orange),
                ("fixed Q16.16", reduce(t, &a.output), blue),
            ],
            0.0,
        ),
        (
            format!("output fixed − f64 ({yu})"),
            span(&[&dy], &[ly, -ly]),
            vec![("difference", reduce(t, &dy), purple)],
            ly,
        ),
        (
            format!("command ({uu})"),
            span(&[&a.command, &b.command], &[]),
            vec![
                ("f64", reduce(t, &b.command), orange),
                ("fixed Q16.16", reduce(t, &a.command), blue),
            ],
            0.0,
        ),
        (
            format!("command fixed − f64 ({uu})"),
            span(&[&du], &[lu, -lu]),
            vec![("difference", reduce(t, &du), purple)],
            lu,
        ),
    ];

    root.fill(&WHITE).map_err(e)?;
    let (title, rest) = root.split_vertically(50);
    let (body, footer) = rest.split_vertically(SIZE.1 - 50 - 36);
    let verdict = if c.passed() { "PASS" } else { "FAIL" };
    title
        .titled(
            &format!("{} — fixed Q16.16 against f64 — {verdict}", c.scenario.name),
            (FONT, 24),
        )
        .map_err(e)?;
    footer
        .draw_text(CAUTION, &(FONT, 15).into_font().color(&BLACK), (20, 8))
        .map_err(e)?;
    let areas = body.split_evenly((panels.len(), 1));
    for (area, (y_desc, range, series, lim)) in areas.iter().zip(panels.iter_mut()) {
        let mut chart = ChartBuilder::on(area)
            .margin_left(12)
            .margin_right(24)
            .margin_top(8)
            .x_label_area_size(40)
            .y_label_area_size(90)
            .build_cartesian_2d(0.0..t_end, range.clone())
            .map_err(e)?;
        let height = range.end - range.start;
        let y_label = move |v: &f64| {
            let v = if v.abs() < 1e-9 * height { 0.0 } else { *v };
            if height < 0.01 {
                format!("{v:.2e}")
            } else {
                format!("{v:.3}")
            }
        };
        chart
            .configure_mesh()
            .y_label_formatter(&y_label)
            .x_desc("time (s)")
            .y_desc(y_desc.as_str())
            .label_style((FONT, 14))
            .axis_desc_style((FONT, 16))
            .light_line_style(RGBColor(235, 235, 235))
            .draw()
            .map_err(e)?;
        if *lim > 0.0 {
            for (i, v) in [*lim, -*lim].into_iter().enumerate() {
                let line = chart
                    .draw_series(DashedLineSeries::new(
                        [(0.0, v), (t_end, v)],
                        8,
                        5,
                        red.stroke_width(2),
                    ))
                    .map_err(e)?;
                if i == 0 {
                    line.label("tolerance (±)").legend(move |(x, y)| {
                        PathElement::new([(x, y), (x + 20, y)], red.stroke_width(2))
                    });
                }
            }
        }
        for (name, points, color) in series.drain(..) {
            chart
                .draw_series(LineSeries::new(points, color.stroke_width(1)))
                .map_err(e)?
                .label(name)
                .legend(move |(x, y)| {
                    PathElement::new([(x, y), (x + 20, y)], color.stroke_width(2))
                });
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
