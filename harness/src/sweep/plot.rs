//! The envelope plot of a sweep: per panel the min/max band over every
//! variant, with the worst variant drawn on top (SVG or PNG by extension).
//!
//! 1. output band, reference, worst output;
//! 2. command band and output limits;
//! 3. acceleration band and the `peak_accel` limit;
//! 4. jerk band and the `peak_jerk` limit.

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::run::SweepResult;
use crate::criteria::MetricKey;
use crate::outcome::BackendRun;
use crate::plot::{
    FONT, Figure, MAX_POINTS, PlotError, SIZE, max_limit, reduce, span, write_figure,
};
use crate::report::CAUTION;
use crate::scenario::Scenario;

/// Band `(t, lo, hi)` reduced to about `MAX_POINTS / 2` buckets, each
/// keeping the lowest low and the highest high.
fn reduce_band(t: &[f64], lo: &[f64], hi: &[f64]) -> Vec<(f64, f64, f64)> {
    let n = t.len().min(lo.len()).min(hi.len());
    let bucket = n.div_ceil(MAX_POINTS / 2).max(1);
    (0..n)
        .step_by(bucket)
        .map(|i| {
            let end = (i + bucket).min(n);
            let l = lo[i..end].iter().copied().fold(f64::INFINITY, f64::min);
            let h = hi[i..end].iter().copied().fold(f64::NEG_INFINITY, f64::max);
            (t[i], l, h)
        })
        .collect()
}

/// Draws the envelope of `result` (a sweep of `scenario`) with `worst`
/// (the re-run worst variant, if given) highlighted, into `path`.
///
/// # Errors
/// [`PlotError`] for a wrong extension, a drawing or a writing failure.
pub fn plot_envelope(
    scenario: &Scenario,
    result: &SweepResult,
    worst: Option<&BackendRun>,
    path: &Path,
) -> Result<(), PlotError> {
    let figure = EnvelopeFigure {
        scenario,
        result,
        worst,
    };
    write_figure(&figure, path)
}

/// The envelope of a sweep with its worst variant, as a page.
struct EnvelopeFigure<'a> {
    scenario: &'a Scenario,
    result: &'a SweepResult,
    worst: Option<&'a BackendRun>,
}

impl Figure for EnvelopeFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError> {
        draw(root, self.scenario, self.result, self.worst)
    }
}

struct Panel<'a> {
    y_desc: String,
    band: &'a [Vec<f64>; 2],
    worst: Option<Vec<f64>>,
    reference: Option<&'a [f64]>,
    limits: Vec<f64>,
    limit_name: &'static str,
}

fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    scenario: &Scenario,
    result: &SweepResult,
    worst: Option<&BackendRun>,
) -> Result<(), PlotError> {
    let e = |e: DrawingAreaErrorKind<DB::ErrorType>| PlotError::Draw(e.to_string());
    let env = &result.envelope;
    #[allow(clippy::cast_precision_loss)]
    let t: Vec<f64> = (0..env.reference.len())
        .map(|k| k as f64 * env.dt_s)
        .collect();
    let t_end = t.last().copied().unwrap_or(1.0).max(env.dt_s);
    let unit = &scenario.output_unit;
    let (rate_unit, jerk_unit) = match unit.as_str() {
        "m/s" => ("m/s²".to_owned(), "m/s³".to_owned()),
        "rad/s" => ("rad/s²".to_owned(), "rad/s³".to_owned()),
        u => (format!("{u}/s"), format!("{u}/s²")),
    };
    let sym = |l: Option<f64>| l.map(|v| vec![v, -v]).unwrap_or_default();
    let rec = worst.map(|w| &w.recording);
    let mut panels = [
        Panel {
            y_desc: format!("output ({unit})"),
            band: &env.output,
            worst: rec.map(|r| r.output.clone()),
            reference: Some(&env.reference),
            limits: Vec::new(),
            limit_name: "",
        },
        Panel {
            y_desc: format!("command ({})", scenario.command_unit),
            band: &env.command,
            worst: rec.map(|r| r.command.clone()),
            reference: None,
            limits: vec![
                scenario.controller.output_min,
                scenario.controller.output_max,
            ],
            limit_name: "output limits",
        },
        Panel {
            y_desc: format!("acceleration ({rate_unit})"),
            band: &env.accel,
            worst: rec.map(|r| r.accel.clone()),
            reference: None,
            limits: sym(max_limit(scenario, MetricKey::PeakAccel)),
            limit_name: "peak_accel limit (±)",
        },
        Panel {
            y_desc: format!("jerk ({jerk_unit})"),
            band: &env.jerk,
            worst: rec.map(crate::sim::Recording::jerk),
            reference: None,
            limits: sym(max_limit(scenario, MetricKey::PeakJerk)),
            limit_name: "peak_jerk limit (±)",
        },
    ];

    root.fill(&WHITE).map_err(e)?;
    let (title, rest) = root.split_vertically(50);
    let (body, footer) = rest.split_vertically(SIZE.1 - 50 - 36);
    let summary = super::summarise(result);
    title
        .titled(
            &format!(
                "{} — {} sweep, {} variants, backend {} — {} of {} pass",
                result.scenario,
                result.method,
                result.variants.len(),
                result.backend,
                summary.passed,
                summary.total
            ),
            (FONT, 22),
        )
        .map_err(e)?;
    footer
        .draw_text(CAUTION, &(FONT, 15).into_font().color(&BLACK), (20, 8))
        .map_err(e)?;
    let worst_label = summary.worst_index.map_or_else(
        || "worst variant".to_owned(),
        |i| format!("worst variant #{i}"),
    );
    let band_colour = RGBColor(31, 119, 180);
    let red = RGBColor(200, 30, 30);
    let orange = RGBColor(230, 120, 20);
    let areas = body.split_evenly((panels.len(), 1));
    for (area, panel) in areas.iter().zip(panels.iter_mut()) {
        let worst_series = panel.worst.take().unwrap_or_default();
        let reference = panel.reference.unwrap_or(&[]);
        let range = span(
            &[&panel.band[0], &panel.band[1], &worst_series, reference],
            &panel.limits,
        );
        let mut chart = ChartBuilder::on(area)
            .margin_left(12)
            .margin_right(24)
            .margin_top(8)
            .x_label_area_size(40)
            .y_label_area_size(80)
            .build_cartesian_2d(0.0..t_end, range)
            .map_err(e)?;
        chart
            .configure_mesh()
            .x_desc("time (s)")
            .y_desc(panel.y_desc.as_str())
            .label_style((FONT, 14))
            .axis_desc_style((FONT, 16))
            .light_line_style(RGBColor(235, 235, 235))
            .draw()
            .map_err(e)?;
        let band = reduce_band(&t, &panel.band[0], &panel.band[1]);
        let mut outline: Vec<(f64, f64)> = band.iter().map(|&(x, _, h)| (x, h)).collect();
        outline.extend(band.iter().rev().map(|&(x, l, _)| (x, l)));
        chart
            .draw_series(std::iter::once(Polygon::new(
                outline,
                band_colour.mix(0.3).filled(),
            )))
            .map_err(e)?
            .label("min/max over variants")
            .legend(move |(x, y)| {
                Rectangle::new([(x, y - 5), (x + 20, y + 5)], band_colour.mix(0.3).filled())
            });
        for (i, v) in panel.limits.iter().enumerate() {
            let line = chart
                .draw_series(DashedLineSeries::new(
                    [(0.0, *v), (t_end, *v)],
                    8,
                    5,
                    RGBColor(90, 90, 90).stroke_width(2),
                ))
                .map_err(e)?;
            if i == 0 {
                line.label(panel.limit_name).legend(|(x, y)| {
                    PathElement::new([(x, y), (x + 20, y)], RGBColor(90, 90, 90).stroke_width(2))
                });
            }
        }
        if !reference.is_empty() {
            chart
                .draw_series(LineSeries::new(
                    reduce(&t, reference),
                    orange.stroke_width(1),
                ))
                .map_err(e)?
                .label("reference")
                .legend(move |(x, y)| {
                    PathElement::new([(x, y), (x + 20, y)], orange.stroke_width(2))
                });
        }
        if !worst_series.is_empty() {
            chart
                .draw_series(LineSeries::new(
                    reduce(&t, &worst_series),
                    red.stroke_width(1),
                ))
                .map_err(e)?
                .label(worst_label.clone())
                .legend(move |(x, y)| PathElement::new([(x, y), (x + 20, y)], red.stroke_width(2)));
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
