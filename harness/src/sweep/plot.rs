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

use super::envelope::Envelope;
use super::run::SweepResult;
use super::stream::SweepHeader;
use super::tally::Tally;
use crate::criteria::MetricKey;
use crate::files::printable;
use crate::outcome::BackendRun;
use crate::plot::{
    Figure, MAX_POINTS, PlotError, derivative_units, draw_error, draw_grid, draw_labelled_line,
    draw_legend_box, draw_limit_lines, draw_page, max_limit, mirrored, reduce, render_svg, span,
    time_panel, write_figure,
};
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
    let header = result.header();
    let tally = super::report::tally(result);
    plot_envelope_of(scenario, &header, &tally, &result.envelope, worst, path)
}

/// [`plot_envelope`] of a sweep given by its header, tally and envelope.
///
/// # Errors
/// As [`plot_envelope`].
pub fn plot_envelope_of(
    scenario: &Scenario,
    header: &SweepHeader,
    tally: &Tally,
    envelope: &Envelope,
    worst: Option<&BackendRun>,
    path: &Path,
) -> Result<(), PlotError> {
    let figure = EnvelopeFigure {
        scenario,
        header,
        tally,
        envelope,
        worst,
    };
    write_figure(&figure, path)
}

/// [`plot_envelope_of`] as an SVG document in memory (for the HTML report).
///
/// # Errors
/// [`PlotError::Draw`] for a drawing failure.
pub fn plot_envelope_svg(
    scenario: &Scenario,
    header: &SweepHeader,
    tally: &Tally,
    envelope: &Envelope,
    worst: Option<&BackendRun>,
) -> Result<String, PlotError> {
    render_svg(&EnvelopeFigure {
        scenario,
        header,
        tally,
        envelope,
        worst,
    })
}

/// The envelope of a sweep with its worst variant, as a page.
struct EnvelopeFigure<'a> {
    scenario: &'a Scenario,
    header: &'a SweepHeader,
    tally: &'a Tally,
    envelope: &'a Envelope,
    worst: Option<&'a BackendRun>,
}

impl Figure for EnvelopeFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError> {
        draw(root, self)
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
    f: &EnvelopeFigure<'_>,
) -> Result<(), PlotError> {
    let (scenario, worst, env) = (f.scenario, f.worst, f.envelope);
    let t = env.time_s();
    #[allow(clippy::cast_precision_loss)]
    let t_end = ((env.samples.max(1) - 1) as f64 * env.dt_s).max(env.dt_s);
    let reference_y: Vec<f64> = env.reference.iter().map(|p| p.1).collect();
    let unit = &scenario.output_unit;
    let (rate_unit, jerk_unit) = derivative_units(unit);
    let rec = worst.map(|w| &w.recording);
    let mut panels = [
        Panel {
            y_desc: format!("output ({unit})"),
            band: &env.output,
            worst: rec.map(|r| r.output.clone()),
            reference: Some(&reference_y),
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
            limits: mirrored(max_limit(scenario, MetricKey::PeakAccel)),
            limit_name: "peak_accel limit (±)",
        },
        Panel {
            y_desc: format!("jerk ({jerk_unit})"),
            band: &env.jerk,
            worst: rec.map(crate::sim::Recording::jerk),
            reference: None,
            limits: mirrored(max_limit(scenario, MetricKey::PeakJerk)),
            limit_name: "peak_jerk limit (±)",
        },
    ];

    let (h, tally) = (f.header, f.tally);
    let title = format!(
        "{} — {} sweep, {} variants, backend {} — {} of {} pass",
        printable(&h.scenario),
        h.method,
        tally.total,
        h.backend,
        tally.passed,
        tally.total
    );
    let body = draw_page(root, &title, 22)?;
    let worst_label = tally.worst.as_ref().map(|w| w.variant.index).map_or_else(
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
        let worst_t: Vec<f64> = (0..worst_series.len())
            .map(|k| {
                #[allow(clippy::cast_precision_loss)]
                let x = k as f64 * env.dt_s;
                x
            })
            .collect();
        let mut chart = time_panel(area, t_end, range, 80)?;
        draw_grid(&mut chart, &panel.y_desc, None)?;
        let band = reduce_band(&t, &panel.band[0], &panel.band[1]);
        let mut outline: Vec<(f64, f64)> = band.iter().map(|&(x, _, h)| (x, h)).collect();
        outline.extend(band.iter().rev().map(|&(x, l, _)| (x, l)));
        chart
            .draw_series(std::iter::once(Polygon::new(
                outline,
                band_colour.mix(0.3).filled(),
            )))
            .map_err(draw_error)?
            .label("min/max over variants")
            .legend(move |(x, y)| {
                Rectangle::new([(x, y - 5), (x + 20, y + 5)], band_colour.mix(0.3).filled())
            });
        draw_limit_lines(
            &mut chart,
            t_end,
            &panel.limits,
            panel.limit_name,
            RGBColor(90, 90, 90),
        )?;
        if !reference.is_empty() {
            draw_labelled_line(&mut chart, env.reference.clone(), "reference", orange)?;
        }
        if !worst_series.is_empty() {
            draw_labelled_line(
                &mut chart,
                reduce(&worst_t, &worst_series),
                &worst_label,
                red,
            )?;
        }
        draw_legend_box(&mut chart)?;
    }
    Ok(())
}
