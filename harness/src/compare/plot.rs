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
use crate::plot::{
    Figure, LabelledLine, LegendEntry, Mark, PlotError, draw_grid, draw_labelled_line,
    draw_limit_lines, draw_page, draw_side_legend, reduce, render_svg, span, time_panel,
    with_legend_column, write_figure,
};

/// Draws `c` into `path` (`.svg` or `.png`), atomically.
///
/// # Errors
/// [`PlotError`] for a wrong extension, a drawing or a writing failure.
pub fn plot(c: &Comparison, path: &Path) -> Result<(), PlotError> {
    write_figure(&ComparisonFigure(c), path)
}

/// [`plot`] as an SVG document in memory (for the HTML report).
///
/// # Errors
/// [`PlotError::Draw`] for a drawing failure.
pub fn plot_svg(c: &Comparison) -> Result<String, PlotError> {
    render_svg(&ComparisonFigure(c))
}

/// A comparison, as a page.
struct ComparisonFigure<'a>(&'a Comparison);

impl Figure for ComparisonFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError> {
        draw(root, self.0)
    }
}

fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    c: &Comparison,
) -> Result<(), PlotError> {
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
    let mut panels: Vec<(String, std::ops::Range<f64>, Vec<LabelledLine<'_>>, f64)> = vec![
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

    let verdict = if c.passed() { "PASS" } else { "FAIL" };
    let title = format!("{} — fixed Q16.16 against f64 — {verdict}", c.scenario.name);
    let body = draw_page(root, &title, 24)?;
    let areas = body.split_evenly((panels.len(), 1));
    for (area, (y_desc, range, series, lim)) in areas.iter().zip(panels.iter_mut()) {
        let (data, column) = with_legend_column(area);
        let mut chart = time_panel(&data, t_end, range.clone(), 90)?;
        let height = range.end - range.start;
        let y_label = move |v: &f64| {
            let v = if v.abs() < 1e-9 * height { 0.0 } else { *v };
            if height < 0.01 {
                format!("{v:.2e}")
            } else {
                format!("{v:.3}")
            }
        };
        draw_grid(&mut chart, y_desc, Some(&y_label))?;
        let mut legend = Vec::new();
        if *lim > 0.0 {
            draw_limit_lines(&mut chart, t_end, &[*lim, -*lim], "tolerance (±)", red)?;
            legend.push(LegendEntry::new("tolerance (±)", red, Mark::Dashed));
        }
        for (name, points, colour) in series.drain(..) {
            legend.push(LegendEntry::new(name, colour, Mark::Line));
            draw_labelled_line(&mut chart, points, name, colour)?;
        }
        draw_side_legend(&chart, &column, &legend)?;
    }
    Ok(())
}
