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

/// A panel on `area` over `0..t_end_s` (with 1 % room before 0, so that
/// what happens at the first samples is not hidden by the y axis) and
/// `y_range`, with a column `y_labels_px` wide for the y labels.
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
        .build_cartesian_2d((-0.01 * t_end_s)..t_end_s, y_range)
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
    // Time labels: shortest decimals, none before 0.
    let x_label = |v: &f64| {
        if *v < 0.0 {
            return String::new();
        }
        let text = format!("{v:.3}");
        text.trim_end_matches('0').trim_end_matches('.').to_owned()
    };
    grid.x_label_formatter(&x_label);
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

/// Width of the legend column beside each panel, pixels.
pub(crate) const LEGEND_PX: u32 = 250;

/// How an entry of a side legend is drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Mark {
    /// A solid line.
    Line,
    /// A dashed line (limits, bands).
    Dashed,
    /// A triangle (points clipped at the axis).
    Clipped,
    /// A filled box (a lane, a band); for a lane, written at the lane's
    /// height.
    Lane,
    /// Text only, indented under the entry above.
    Text,
    /// A ring (a worst value marked on the data).
    Ring,
}

/// One entry of a side legend: label, colour, mark, and for a lane the
/// y value (in panel units) it is written at.
#[derive(Debug, Clone)]
pub(crate) struct LegendEntry {
    /// The text.
    pub(crate) label: String,
    /// Its colour.
    pub(crate) colour: RGBColor,
    /// Its mark.
    pub(crate) mark: Mark,
    /// For [`Mark::Lane`]: the height, in the panel's y units.
    pub(crate) at: Option<f64>,
}

impl LegendEntry {
    /// An entry with a line, dashed line or clip mark.
    pub(crate) fn new(label: impl Into<String>, colour: RGBColor, mark: Mark) -> Self {
        Self {
            label: label.into(),
            colour,
            mark,
            at: None,
        }
    }
}

/// Splits a panel's `area` into the data part and the legend column on
/// its right (outside the data, so no legend covers a trace).
pub(crate) fn with_legend_column<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
) -> (DrawingArea<DB, Shift>, DrawingArea<DB, Shift>) {
    let (w, _) = area.dim_in_pixel();
    area.split_horizontally(w.saturating_sub(LEGEND_PX))
}

/// Draws `entries` in the legend column `column` of `panel`: from the top
/// down, or for lane entries at the height of their lane.
pub(crate) fn draw_side_legend<DB: DrawingBackend>(
    panel: &TimePanel<'_, DB>,
    column: &DrawingArea<DB, Shift>,
    entries: &[LegendEntry],
) -> Result<(), PlotError> {
    let (base_x, base_y) = column.get_base_pixel();
    let font = (FONT, 14).into_font().color(&BLACK);
    let mut y = 14;
    for e in entries {
        let row = match (e.mark, e.at) {
            (Mark::Lane, Some(at)) => {
                let (_, py) = panel.backend_coord(&(0.0, at));
                py - base_y - 7
            }
            (Mark::Text, _) => {
                let r = y - 4;
                y += 16;
                r
            }
            _ => {
                let r = y;
                y += 20;
                r
            }
        };
        let style = e.colour.stroke_width(2);
        match e.mark {
            Mark::Line => column
                .draw(&PathElement::new([(4, row + 7), (28, row + 7)], style))
                .map_err(draw_error)?,
            Mark::Dashed => {
                for x in [4, 14, 24] {
                    column
                        .draw(&PathElement::new([(x, row + 7), (x + 6, row + 7)], style))
                        .map_err(draw_error)?;
                }
            }
            Mark::Clipped => column
                .draw(&TriangleMarker::new((16, row + 7), 5, e.colour.filled()))
                .map_err(draw_error)?,
            Mark::Lane => column
                .draw(&Rectangle::new(
                    [(4, row + 2), (28, row + 12)],
                    e.colour.filled(),
                ))
                .map_err(draw_error)?,
            Mark::Text => {}
            Mark::Ring => column
                .draw(&Circle::new((16, row + 7), 5, e.colour.stroke_width(2)))
                .map_err(draw_error)?,
        }
        column
            .draw_text(&e.label, &font, (34, row))
            .map_err(draw_error)?;
    }
    let _ = base_x;
    Ok(())
}

/// Draws dashed horizontal segments `(t0, t1, y)` in `colour`.
pub(crate) fn draw_dashed_segments<DB: DrawingBackend>(
    panel: &mut TimePanel<'_, DB>,
    segments: &[(f64, f64, f64)],
    colour: RGBColor,
) -> Result<(), PlotError> {
    for &(t0, t1, y) in segments {
        panel
            .draw_series(DashedLineSeries::new(
                [(t0, y), (t1, y)],
                8,
                5,
                colour.stroke_width(2),
            ))
            .map_err(draw_error)?;
    }
    Ok(())
}

/// Draws a triangle at each of `points` (values clipped at the axis).
pub(crate) fn draw_clipped<DB: DrawingBackend>(
    panel: &mut TimePanel<'_, DB>,
    points: &[(f64, f64)],
    colour: RGBColor,
) -> Result<(), PlotError> {
    panel
        .draw_series(
            points
                .iter()
                .map(|&p| TriangleMarker::new(p, 5, colour.filled())),
        )
        .map_err(draw_error)?;
    Ok(())
}

/// A worst value to mark: time, value, label.
pub(crate) type WorstMark = (f64, f64, String);

/// Marks each worst value with a ring of `colour` and its label beside it
/// (left of the ring in the right third of the panel, so it stays on the
/// page); a value beyond the panel's `range` is marked at its edge.
pub(crate) fn draw_marks<DB: DrawingBackend>(
    panel: &mut TimePanel<'_, DB>,
    t_end_s: f64,
    range: &Range<f64>,
    marks: &[WorstMark],
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
        let v = v.clamp(range.start, range.end);
        panel
            .draw_series(std::iter::once(
                EmptyElement::at((*t, v))
                    + Circle::new((0, 0), 6, colour.stroke_width(2))
                    + Text::new(label.clone(), (dx, dy), font),
            ))
            .map_err(draw_error)?;
    }
    Ok(())
}
