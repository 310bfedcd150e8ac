//! What every plot page shares: the title and the caution footer, panels
//! over the time axis with their grid, dashed limit lines, labelled lines
//! and the legend box.

use std::ops::Range;

use plotters::coord::Shift;
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;

use super::{FONT, PlotError, SIZE};
use crate::report::CAUTION;

/// A panel: time in seconds across, one signal up.
pub(crate) type TimePanel<'a, DB> =
    ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

/// A line to draw: legend label, points, colour.
pub(crate) type LabelledLine<'a> = (&'a str, Vec<(f64, f64)>, RGBColor);

/// A drawing failure as a [`PlotError`].
pub(crate) fn draw_error<E: std::error::Error + Send + Sync>(
    e: DrawingAreaErrorKind<E>,
) -> PlotError {
    PlotError::Draw(e.to_string())
}

/// Fills `root` white, writes `title` (`title_px` high) on top and the
/// caution in the footer; returns the area between them for the panels.
pub(crate) fn draw_page<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    title: &str,
    title_px: u32,
) -> Result<DrawingArea<DB, Shift>, PlotError> {
    root.fill(&WHITE).map_err(draw_error)?;
    let (title_area, rest) = root.split_vertically(50);
    let (body, footer) = rest.split_vertically(SIZE.1 - 50 - 36);
    title_area
        .titled(title, (FONT, title_px))
        .map_err(draw_error)?;
    footer
        .draw_text(CAUTION, &(FONT, 15).into_font().color(&BLACK), (20, 8))
        .map_err(draw_error)?;
    Ok(body)
}

/// A panel on `area` over `0..t_end_s` and `y_range`, with a column
/// `y_labels_px` wide for the y labels.
pub(crate) fn time_panel<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    t_end_s: f64,
    y_range: Range<f64>,
    y_labels_px: u32,
) -> Result<TimePanel<'_, DB>, PlotError> {
    ChartBuilder::on(area)
        .margin_left(12)
        .margin_right(24)
        .margin_top(8)
        .x_label_area_size(40)
        .y_label_area_size(y_labels_px)
        .build_cartesian_2d(0.0..t_end_s, y_range)
        .map_err(draw_error)
}

/// Draws the grid and both axes, the y axis named `y_desc`; `y_label`
/// writes the y labels (plotters' own numbers when `None`).
pub(crate) fn draw_grid<DB: DrawingBackend>(
    panel: &mut TimePanel<'_, DB>,
    y_desc: &str,
    y_label: Option<&dyn Fn(&f64) -> String>,
) -> Result<(), PlotError> {
    let mut grid = panel.configure_mesh();
    if let Some(y_label) = y_label {
        grid.y_label_formatter(y_label);
    }
    grid.x_desc("time (s)")
        .y_desc(y_desc)
        .label_style((FONT, 14))
        .axis_desc_style((FONT, 16))
        .light_line_style(RGBColor(235, 235, 235))
        .draw()
        .map_err(draw_error)
}

/// Draws a dashed line of `colour` across the panel at each of `values`,
/// with one legend entry `label` for all of them (a pair of limits, or a
/// limit and its mirror).
pub(crate) fn draw_limit_lines<DB: DrawingBackend>(
    panel: &mut TimePanel<'_, DB>,
    t_end_s: f64,
    values: &[f64],
    label: &str,
    colour: RGBColor,
) -> Result<(), PlotError> {
    for (i, &value) in values.iter().enumerate() {
        let line = panel
            .draw_series(DashedLineSeries::new(
                [(0.0, value), (t_end_s, value)],
                8,
                5,
                colour.stroke_width(2),
            ))
            .map_err(draw_error)?;
        if i == 0 {
            line.label(label).legend(legend_stroke(colour));
        }
    }
    Ok(())
}

/// Draws `points` as a line of `colour`, listed in the legend as `label`.
pub(crate) fn draw_labelled_line<DB: DrawingBackend>(
    panel: &mut TimePanel<'_, DB>,
    points: Vec<(f64, f64)>,
    label: impl Into<String>,
    colour: RGBColor,
) -> Result<(), PlotError> {
    panel
        // Width 1: wider polylines get miter spikes at the sharp corners of
        // noisy signals in the bitmap back end.
        .draw_series(LineSeries::new(points, colour.stroke_width(1)))
        .map_err(draw_error)?
        .label(label)
        .legend(legend_stroke(colour));
    Ok(())
}

/// The legend mark of a line: a short stroke of `colour` (pixel coordinates).
fn legend_stroke(colour: RGBColor) -> impl Fn((i32, i32)) -> PathElement<(i32, i32)> {
    move |(x, y)| PathElement::new([(x, y), (x + 20, y)], colour.stroke_width(2))
}

/// Draws the legend of everything labelled so far, boxed, upper right.
pub(crate) fn draw_legend_box<'a, DB: DrawingBackend + 'a>(
    panel: &mut TimePanel<'a, DB>,
) -> Result<(), PlotError> {
    panel
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperRight)
        .label_font((FONT, 14))
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .draw()
        .map_err(draw_error)
}

/// A worst value to mark: time, value, label.
pub(crate) type Mark = (f64, f64, String);

/// Marks each worst value with a ring of `colour` and its label beside it
/// (left of the ring in the right third of the panel, so it stays on the
/// page), listed once in the legend as `worst value`.
pub(crate) fn draw_marks<DB: DrawingBackend>(
    panel: &mut TimePanel<'_, DB>,
    t_end_s: f64,
    marks: &[Mark],
    colour: RGBColor,
) -> Result<(), PlotError> {
    for (i, (t, v, label)) in marks.iter().enumerate() {
        let font = (FONT, 14).into_font().color(&colour);
        // Rough width of the label in pixels, to put it left of the ring.
        #[allow(clippy::cast_possible_truncation, clippy::cast_possible_wrap)]
        let width = (label.chars().count() * 7) as i32;
        let dx = if *t > 0.66 * t_end_s { -width - 10 } else { 10 };
        #[allow(clippy::cast_possible_truncation)]
        let dy = -18 + 16 * (i as i32 % 2);
        let series = panel
            .draw_series(std::iter::once(
                EmptyElement::at((*t, *v))
                    + Circle::new((0, 0), 6, colour.stroke_width(2))
                    + Text::new(label.clone(), (dx, dy), font),
            ))
            .map_err(draw_error)?;
        if i == 0 {
            series
                .label("worst value")
                .legend(move |(x, y)| Circle::new((x + 10, y), 5, colour.stroke_width(2)));
        }
    }
    Ok(())
}
