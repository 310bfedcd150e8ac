//! `design --plot`: the loop's frequency response at every linearised
//! corner (magnitude and phase against frequency; the Nyquist curve with
//! the circle that the Ms bound keeps it out of) and the speed trade-off
//! (the loop made slower or faster: the worst margin at the heavy corner
//! against the worst margin at the light corner, the proposal marked).

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::{LoopCoefficients, ResponsePoint, SampledLoop, TradeOff, Tuned, frequency_response};
use crate::plot::{Figure, PlotError, draw_error, draw_page, render_svg, write_figure};
use crate::scenario::Scenario;

/// Family name of the vendored font (as in `crate::plot`).
const FONT: &str = "sans-serif";

/// Points of each frequency response.
const POINTS: usize = 600;

/// Draws the design plot of `t` into `path` (`.svg` or `.png`).
///
/// # Errors
/// [`PlotError`] for a wrong extension, a drawing or a writing failure.
pub fn plot(s: &Scenario, t: &Tuned, trade: &TradeOff, path: &Path) -> Result<(), PlotError> {
    write_figure(&figure(s, t, trade), path)
}

/// The design plot as an SVG document (for the HTML report).
///
/// # Errors
/// [`PlotError::Draw`] for a drawing failure.
pub fn plot_svg(s: &Scenario, t: &Tuned, trade: &TradeOff) -> Result<String, PlotError> {
    render_svg(&figure(s, t, trade))
}

fn figure<'a>(s: &'a Scenario, t: &'a Tuned, trade: &'a TradeOff) -> DesignFigure<'a> {
    let coeffs = super::loop_coefficients(&t.settings);
    let curves: Vec<(String, f64, Vec<ResponsePoint>)> = coeffs
        .map(|c: LoopCoefficients| {
            t.corners
                .iter()
                .map(|r| {
                    (
                        r.corner.label(),
                        r.margins.sensitivity_peak,
                        frequency_response(&SampledLoop::new(&r.corner.plant, &c), POINTS),
                    )
                })
                .collect()
        })
        .unwrap_or_default();
    DesignFigure {
        s,
        t,
        trade,
        curves,
    }
}

struct DesignFigure<'a> {
    s: &'a Scenario,
    t: &'a Tuned,
    trade: &'a TradeOff,
    curves: Vec<(String, f64, Vec<ResponsePoint>)>,
}

impl Figure for DesignFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError> {
        let verdict = if self.t.passed() { "PASS" } else { "FAIL" };
        let title = format!(
            "{} — design: loop at every corner and speed trade-off — {verdict}",
            self.s.name
        );
        let body = draw_page(root, &title, 22)?;
        let rows = body.split_evenly((3, 1));
        let bottom = rows[2].split_evenly((1, 2));
        let worst = self
            .curves
            .iter()
            .enumerate()
            .max_by(|a, b| a.1.1.total_cmp(&b.1.1))
            .map_or(usize::MAX, |(i, _)| i);
        bode(&rows[0], &self.curves, worst, true)?;
        bode(&rows[1], &self.curves, worst, false)?;
        nyquist(&bottom[0], &self.curves, worst, self.s.design.ms_max)?;
        trade_panel(&bottom[1], self.trade)?;
        Ok(())
    }
}

const GREY: RGBColor = RGBColor(150, 170, 200);
const RED: RGBColor = RGBColor(200, 30, 30);
const BLUE: RGBColor = RGBColor(31, 119, 180);
const ORANGE: RGBColor = RGBColor(230, 120, 20);

fn bode<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    curves: &[(String, f64, Vec<ResponsePoint>)],
    worst: usize,
    magnitude: bool,
) -> Result<(), PlotError> {
    let value = |p: &ResponsePoint| {
        if magnitude {
            20.0 * p.magnitude.max(1e-12).log10()
        } else {
            p.phase_deg
        }
    };
    let all = curves.iter().flat_map(|c| c.2.iter());
    let (mut x0, mut x1, mut y0, mut y1) = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    for p in all {
        let x = p.w_rad_s.log10();
        x0 = x0.min(x);
        x1 = x1.max(x);
        let y = value(p);
        if y.is_finite() {
            y0 = y0.min(y);
            y1 = y1.max(y);
        }
    }
    if x0.is_nan() || x1.is_nan() || x0 >= x1 {
        (x0, x1) = (0.0, 1.0);
    }
    if magnitude {
        (y0, y1) = (y0.clamp(-80.0, -5.0), y1.clamp(5.0, 80.0));
    } else {
        (y0, y1) = (y0.clamp(-720.0, -200.0), y1.clamp(-60.0, 0.0));
    }
    let mut chart = ChartBuilder::on(area)
        .margin_left(12)
        .margin_right(24)
        .margin_top(8)
        .x_label_area_size(40)
        .y_label_area_size(70)
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(draw_error)?;
    chart
        .configure_mesh()
        .x_desc("frequency (rad/s)")
        .y_desc(if magnitude {
            "|L| (dB)"
        } else {
            "phase of L (deg)"
        })
        .x_label_formatter(&|x: &f64| format!("{:.3}", 10f64.powf(*x)))
        .label_style((FONT, 14))
        .axis_desc_style((FONT, 16))
        .light_line_style(RGBColor(235, 235, 235))
        .draw()
        .map_err(draw_error)?;
    let level = if magnitude { 0.0 } else { -180.0 };
    chart
        .draw_series(DashedLineSeries::new(
            [(x0, level), (x1, level)],
            8,
            5,
            BLACK.stroke_width(1),
        ))
        .map_err(draw_error)?
        .label(if magnitude { "0 dB" } else { "−180°" })
        .legend(|(x, y)| PathElement::new([(x, y), (x + 20, y)], BLACK.stroke_width(1)));
    for (i, (label, _, pts)) in curves.iter().enumerate() {
        let line: Vec<(f64, f64)> = pts
            .iter()
            .map(|p| (p.w_rad_s.log10(), value(p).clamp(y0, y1)))
            .collect();
        let colour = if i == worst { RED } else { GREY };
        let series = chart
            .draw_series(LineSeries::new(
                line,
                colour.stroke_width(if i == worst { 2 } else { 1 }),
            ))
            .map_err(draw_error)?;
        if i == worst {
            series
                .label(format!("highest Ms: {label}"))
                .legend(move |(x, y)| PathElement::new([(x, y), (x + 20, y)], RED.stroke_width(2)));
        } else if i == 0 || (worst == 0 && i == 1) {
            series.label("other corners").legend(move |(x, y)| {
                PathElement::new([(x, y), (x + 20, y)], GREY.stroke_width(1))
            });
        }
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::LowerLeft)
        .label_font((FONT, 13))
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .draw()
        .map_err(draw_error)
}

fn nyquist<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    curves: &[(String, f64, Vec<ResponsePoint>)],
    worst: usize,
    ms_max: f64,
) -> Result<(), PlotError> {
    let (x0, x1, y0, y1) = (-3.0, 1.0, -3.0, 1.0);
    let mut chart = ChartBuilder::on(area)
        .margin_left(12)
        .margin_right(16)
        .margin_top(8)
        .x_label_area_size(40)
        .y_label_area_size(50)
        .caption("Nyquist curves near −1", (FONT, 16))
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(draw_error)?;
    chart
        .configure_mesh()
        .x_desc("Re L")
        .y_desc("Im L")
        .label_style((FONT, 13))
        .axis_desc_style((FONT, 15))
        .light_line_style(RGBColor(235, 235, 235))
        .draw()
        .map_err(draw_error)?;
    let circle: Vec<(f64, f64)> = (0..=180)
        .map(|k| {
            let a = f64::from(k) * std::f64::consts::TAU / 180.0;
            (-1.0 + a.cos() / ms_max, a.sin() / ms_max)
        })
        .collect();
    chart
        .draw_series(LineSeries::new(circle, ORANGE.stroke_width(2)))
        .map_err(draw_error)?
        .label(format!("|1 + L| = 1/{ms_max}: the Ms ≤ {ms_max} bound"))
        .legend(|(x, y)| PathElement::new([(x, y), (x + 20, y)], ORANGE.stroke_width(2)));
    chart
        .draw_series([Cross::new((-1.0, 0.0), 6, BLACK.stroke_width(2))])
        .map_err(draw_error)?;
    let inside = |p: &ResponsePoint| p.re > x0 && p.re < x1 && p.im > y0 && p.im < y1;
    for (i, (_, _, pts)) in curves.iter().enumerate() {
        let colour = if i == worst { RED } else { GREY };
        // Only the pieces inside the window, each drawn on its own.
        let mut piece = Vec::new();
        for p in pts {
            if inside(p) {
                piece.push((p.re, p.im));
            } else if !piece.is_empty() {
                chart
                    .draw_series(LineSeries::new(
                        std::mem::take(&mut piece),
                        colour.stroke_width(1),
                    ))
                    .map_err(draw_error)?;
            }
        }
        if !piece.is_empty() {
            chart
                .draw_series(LineSeries::new(piece, colour.stroke_width(1)))
                .map_err(draw_error)?;
        }
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperLeft)
        .label_font((FONT, 12))
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .draw()
        .map_err(draw_error)
}

fn trade_panel<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    trade: &TradeOff,
) -> Result<(), PlotError> {
    let clip = |m: f64| m.clamp(-1.5, 1.0);
    let pts: Vec<(f64, f64)> = trade
        .points
        .iter()
        .map(|p| (clip(p.light_margin), clip(p.heavy_margin)))
        .collect();
    let (mut x0, mut x1, mut y0, mut y1) = (-0.2f64, 0.3f64, -0.2f64, 0.3f64);
    for &(x, y) in &pts {
        x0 = x0.min(x - 0.05);
        x1 = x1.max(x + 0.05);
        y0 = y0.min(y - 0.05);
        y1 = y1.max(y + 0.05);
    }
    let mut chart = ChartBuilder::on(area)
        .margin_left(12)
        .margin_right(24)
        .margin_top(8)
        .x_label_area_size(40)
        .y_label_area_size(50)
        .caption("speed trade-off: ×f = Kp·f, Ti/f", (FONT, 16))
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(draw_error)?;
    chart
        .configure_mesh()
        .x_desc("worst margin, light corner")
        .y_desc("worst margin, heavy corner")
        .label_style((FONT, 13))
        .axis_desc_style((FONT, 15))
        .light_line_style(RGBColor(235, 235, 235))
        .draw()
        .map_err(draw_error)?;
    for (a, b) in [((0.0, y0), (0.0, y1)), ((x0, 0.0), (x1, 0.0))] {
        chart
            .draw_series(DashedLineSeries::new([a, b], 6, 4, BLACK.stroke_width(1)))
            .map_err(draw_error)?;
    }
    chart
        .draw_series(LineSeries::new(pts.clone(), BLUE.mix(0.5).stroke_width(1)))
        .map_err(draw_error)?
        .label(format!("heavy: {}", trade.heavy))
        .legend(|(x, y)| PathElement::new([(x, y), (x + 20, y)], BLUE.stroke_width(2)));
    chart
        .draw_series(LineSeries::new(Vec::<(f64, f64)>::new(), WHITE))
        .map_err(draw_error)?
        .label(format!("light: {}", trade.light))
        .legend(|(x, y)| PathElement::new([(x, y), (x + 20, y)], WHITE));
    for (p, &(x, y)) in trade.points.iter().zip(&pts) {
        let proposal = (p.factor - 1.0).abs() < 1e-12;
        let style = if proposal {
            RED.filled()
        } else {
            BLUE.filled()
        };
        chart
            .draw_series([Circle::new((x, y), if proposal { 7 } else { 3 }, style)])
            .map_err(draw_error)?;
        let text = format!(
            "×{}{}: {} / {}",
            p.factor,
            if proposal { " (proposal)" } else { "" },
            short(&p.heavy_criterion),
            short(&p.light_criterion)
        );
        // Labels on the right half point left, so they stay on the panel.
        let anchor = if x > 0.5 * (x0 + x1) {
            plotters::style::text_anchor::Pos::new(
                plotters::style::text_anchor::HPos::Right,
                plotters::style::text_anchor::VPos::Center,
            )
        } else {
            plotters::style::text_anchor::Pos::new(
                plotters::style::text_anchor::HPos::Left,
                plotters::style::text_anchor::VPos::Center,
            )
        };
        chart
            .draw_series([Text::new(
                text,
                (x, y),
                TextStyle::from((FONT, 11).into_font()).pos(anchor),
            )])
            .map_err(draw_error)?;
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::LowerRight)
        .label_font((FONT, 12))
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .draw()
        .map_err(draw_error)
}

/// A criterion name without its unit suffix, for point labels.
fn short(name: &str) -> &str {
    name.trim_end_matches("_per_s").trim_end_matches("_s")
}
