//! The robustness map as a picture: the margin field as colour, the pass
//! boundary outlined, each region named by the criterion that binds there,
//! the nominal plant marked.

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::RobustnessMap;
use crate::plot::{Figure, PlotError, draw_error, draw_page, render_svg, write_figure};
use crate::scenario::Scenario;

/// Family name of the vendored font (as in `crate::plot`).
const FONT: &str = "sans-serif";

/// Draws `m` (the map of `s`) into `path` (`.svg` or `.png`).
///
/// # Errors
/// [`PlotError`] for a wrong extension, a drawing or a writing failure.
pub fn plot(s: &Scenario, m: &RobustnessMap, path: &Path) -> Result<(), PlotError> {
    write_figure(&MapFigure { s, m }, path)
}

/// [`plot`] as an SVG document in memory (for the HTML report).
///
/// # Errors
/// [`PlotError::Draw`] for a drawing failure.
pub fn plot_svg(s: &Scenario, m: &RobustnessMap) -> Result<String, PlotError> {
    render_svg(&MapFigure { s, m })
}

struct MapFigure<'a> {
    s: &'a Scenario,
    m: &'a RobustnessMap,
}

/// The colour of a margin: red shades fail, green shades pass, deeper the
/// further from the limit (clipped at ±0.5).
fn colour(margin: f64) -> RGBColor {
    let t = (margin.clamp(-0.5, 0.5) / 0.5).abs();
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let mix = |a: f64, b: f64| (a + (b - a) * t).round() as u8;
    if margin >= 0.0 {
        RGBColor(mix(235.0, 40.0), mix(245.0, 150.0), mix(235.0, 60.0))
    } else {
        RGBColor(mix(250.0, 200.0), mix(225.0, 30.0), mix(225.0, 30.0))
    }
}

/// Cell edges around the grid values (midpoints, and half a step beyond
/// the ends).
fn edges(v: &[f64]) -> Vec<f64> {
    let n = v.len();
    let mut e = Vec::with_capacity(n + 1);
    e.push(v[0] - 0.5 * (v[1] - v[0]));
    for w in v.windows(2) {
        e.push(0.5 * (w[0] + w[1]));
    }
    e.push(v[n - 1] + 0.5 * (v[n - 1] - v[n - 2]));
    e
}

impl Figure for MapFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError> {
        let m = self.m;
        let total = m.xs.len() * m.ys.len();
        let title = format!(
            "{} — robustness map over {} and {} — {} of {} points pass ({})",
            self.s.name,
            m.x,
            m.y,
            m.passing(),
            total,
            m.backend.name()
        );
        let body = draw_page(root, &title, 20)?;
        let (ex, ey) = (edges(&m.xs), edges(&m.ys));
        let mut chart = ChartBuilder::on(&body)
            .margin(20)
            .x_label_area_size(50)
            .y_label_area_size(90)
            .caption(
                "colour: worst normalised margin over the criteria (green passes, red fails; deeper is further from the limit); black: the pass boundary; labels: the criterion that binds",
                (FONT, 14),
            )
            .build_cartesian_2d(ex[0]..ex[ex.len() - 1], ey[0]..ey[ey.len() - 1])
            .map_err(draw_error)?;
        chart
            .configure_mesh()
            .x_desc(m.x)
            .y_desc(m.y)
            .label_style((FONT, 14))
            .axis_desc_style((FONT, 16))
            .disable_mesh()
            .draw()
            .map_err(draw_error)?;
        for (j, row) in m.cells.iter().enumerate() {
            for (i, c) in row.iter().enumerate() {
                chart
                    .draw_series([Rectangle::new(
                        [(ex[i], ey[j]), (ex[i + 1], ey[j + 1])],
                        colour(c.margin).filled(),
                    )])
                    .map_err(draw_error)?;
            }
        }
        for &(a, b) in &m.boundary {
            chart
                .draw_series([PathElement::new([a, b], BLACK.stroke_width(3))])
                .map_err(draw_error)?;
        }
        // One label per region of one binding criterion (large enough).
        let (nx, ny) = (m.xs.len(), m.ys.len());
        let mut seen = vec![vec![false; nx]; ny];
        let centre = Pos::new(HPos::Center, VPos::Center);
        for j0 in 0..ny {
            for i0 in 0..nx {
                if seen[j0][i0] {
                    continue;
                }
                let key = (m.cells[j0][i0].binding, m.cells[j0][i0].margin >= 0.0);
                let mut region = vec![(i0, j0)];
                seen[j0][i0] = true;
                let mut k = 0;
                while k < region.len() {
                    let (i, j) = region[k];
                    k += 1;
                    let near = [
                        (i.wrapping_sub(1), j),
                        (i + 1, j),
                        (i, j.wrapping_sub(1)),
                        (i, j + 1),
                    ];
                    for (a, b) in near {
                        if a < nx && b < ny && !seen[b][a] {
                            let c = &m.cells[b][a];
                            if (c.binding, c.margin >= 0.0) == key {
                                seen[b][a] = true;
                                region.push((a, b));
                            }
                        }
                    }
                }
                if region.len() < 3.max(total / 50) {
                    continue;
                }
                #[allow(clippy::cast_precision_loss)]
                let (cx, cy) = (
                    region.iter().map(|p| p.0 as f64).sum::<f64>() / region.len() as f64,
                    region.iter().map(|p| p.1 as f64).sum::<f64>() / region.len() as f64,
                );
                #[allow(clippy::cast_precision_loss)]
                let &(i, j) = region
                    .iter()
                    .min_by(|a, b| {
                        let d = |p: &(usize, usize)| {
                            (p.0 as f64 - cx).powi(2) + (p.1 as f64 - cy).powi(2)
                        };
                        d(a).total_cmp(&d(b))
                    })
                    .unwrap_or(&region[0]);
                let name = key.0.map_or("run failed", |b| m.criteria[b].as_str());
                chart
                    .draw_series([Text::new(
                        name.to_owned(),
                        (m.xs[i], m.ys[j]),
                        TextStyle::from((FONT, 15).into_font()).pos(centre),
                    )])
                    .map_err(draw_error)?;
            }
        }
        chart
            .draw_series([Cross::new(m.nominal, 9, BLACK.stroke_width(3))])
            .map_err(draw_error)?
            .label("nominal plant (as written)")
            .legend(|(x, y)| Cross::new((x + 8, y), 6, BLACK.stroke_width(2)));
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .label_font((FONT, 14))
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .draw()
            .map_err(draw_error)
    }
}
