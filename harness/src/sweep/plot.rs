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
use super::tally::Worst;
use crate::criteria::MetricKey;
use crate::files::printable;
use crate::outcome::BackendRun;
use crate::plot::{
    Figure, LegendEntry, MAX_POINTS, Mark, PlotError, derivative_units, draw_error, draw_grid,
    draw_labelled_line, draw_limit_lines, draw_page, draw_side_legend, is_motion, max_limit,
    mirrored, reduce, render_svg, span, time_panel, with_legend_column, write_figure,
};
use crate::report::format_number;
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

/// The four panels of the envelope plot: output, command, rate, change of
/// rate.
pub const PANELS: usize = 4;

/// The panel a criterion's metric is seen in: 3 for `peak_jerk`, 2 for
/// `peak_accel`, 1 for what concerns the command (slew, saturation), 0
/// (the output) for everything else.
#[must_use]
pub fn panel_of(metric: &str) -> usize {
    match metric {
        "peak_jerk" => 3,
        "peak_accel" => 2,
        m if m.contains("slew") || m.contains("saturat") || m.contains("command") => 1,
        _ => 0,
    }
}

/// Per panel, the variant to draw there and why: among the criteria seen
/// in that panel ([`panel_of`]) the one whose worst variant lies furthest
/// beyond (or closest to) its limit, with its criterion's name; a panel
/// without a criterion of its own shows the sweep's overall worst.
#[must_use]
pub fn panel_worst(tally: &Tally) -> [Option<(Worst, String)>; PANELS] {
    let mut out: [Option<(Worst, String)>; PANELS] = Default::default();
    for c in &tally.criteria {
        let Some(w) = &c.worst else { continue };
        let slot = &mut out[panel_of(&c.criterion.metric)];
        let better = slot.as_ref().is_none_or(|(s, _)| {
            w.excess > s.excess || (w.excess == s.excess && w.variant.index < s.variant.index)
        });
        if better {
            *slot = Some((w.clone(), c.criterion.metric.clone()));
        }
    }
    for slot in &mut out {
        if slot.is_none() {
            *slot = tally
                .worst
                .clone()
                .map(|w| (w, "every criterion".to_owned()));
        }
    }
    out
}

/// The re-run worst variant of each panel (see [`panel_worst`]), or none.
pub type PanelRuns<'a> = [Option<&'a BackendRun>; PANELS];

/// Draws the envelope of `result` (a sweep of `scenario`) with `worst`
/// (the re-run worst variant, if given) highlighted in every panel, into
/// `path`.
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
    let mut runs = [worst; PANELS];
    let labels = panel_worst(&tally);
    // The one run given is the overall worst: say so in every panel.
    for (run, label) in runs.iter_mut().zip(&labels) {
        if label.as_ref().map(|(w, _)| w.variant.index)
            != tally.worst.as_ref().map(|w| w.variant.index)
        {
            *run = None;
        }
    }
    plot_envelope_of(scenario, &header, &tally, &result.envelope, &runs, path)
}

/// [`plot_envelope`] of a sweep given by its header, tally and envelope,
/// with each panel's own worst variant (`runs[i]`, re-run; see
/// [`panel_worst`]).
///
/// # Errors
/// As [`plot_envelope`].
pub fn plot_envelope_of(
    scenario: &Scenario,
    header: &SweepHeader,
    tally: &Tally,
    envelope: &Envelope,
    runs: &PanelRuns<'_>,
    path: &Path,
) -> Result<(), PlotError> {
    let figure = EnvelopeFigure {
        scenario,
        header,
        tally,
        envelope,
        runs,
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
    runs: &PanelRuns<'_>,
) -> Result<String, PlotError> {
    render_svg(&EnvelopeFigure {
        scenario,
        header,
        tally,
        envelope,
        runs,
    })
}

/// The envelope of a sweep with its worst variant, as a page.
struct EnvelopeFigure<'a> {
    scenario: &'a Scenario,
    header: &'a SweepHeader,
    tally: &'a Tally,
    envelope: &'a Envelope,
    runs: &'a PanelRuns<'a>,
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
    let (scenario, env) = (f.scenario, f.envelope);
    let t = env.time_s();
    #[allow(clippy::cast_precision_loss)]
    let t_end = ((env.samples.max(1) - 1) as f64 * env.dt_s).max(env.dt_s);
    let reference_y: Vec<f64> = env.reference.iter().map(|p| p.1).collect();
    let unit = &scenario.output_unit;
    let (rate_unit, jerk_unit) = derivative_units(unit);
    let (rate_name, jerk_name) = if is_motion(unit) {
        ("acceleration", "jerk")
    } else {
        ("rate of change", "change of rate")
    };
    let rec = |i: usize| f.runs[i].map(|w| &w.recording);
    let mut panels = [
        Panel {
            y_desc: format!("output ({unit})"),
            band: &env.output,
            worst: rec(0).map(|r| r.output.clone()),
            reference: Some(&reference_y),
            limits: Vec::new(),
            limit_name: "",
        },
        Panel {
            y_desc: format!("command ({})", scenario.command_unit),
            band: &env.command,
            worst: rec(1).map(|r| r.command.clone()),
            reference: None,
            limits: vec![
                scenario.controller.output_min,
                scenario.controller.output_max,
            ],
            limit_name: "output limits",
        },
        Panel {
            y_desc: format!("{rate_name} ({rate_unit})"),
            band: &env.accel,
            worst: rec(2).map(|r| r.accel.clone()),
            reference: None,
            limits: mirrored(max_limit(scenario, MetricKey::PeakAccel)),
            limit_name: "peak_accel limit (±)",
        },
        Panel {
            y_desc: format!("{jerk_name} ({jerk_unit})"),
            band: &env.jerk,
            worst: rec(3).map(crate::sim::Recording::jerk),
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
    let chosen = panel_worst(tally);
    let band_colour = RGBColor(31, 119, 180);
    let red = RGBColor(200, 30, 30);
    let orange = RGBColor(230, 120, 20);
    let grey = RGBColor(90, 90, 90);
    let areas = body.split_evenly((panels.len(), 1));
    for (i, (area, panel)) in areas.iter().zip(panels.iter_mut()).enumerate() {
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
        let (data, column) = with_legend_column(area);
        let mut chart = time_panel(&data, t_end, range, 80)?;
        draw_grid(&mut chart, &panel.y_desc, None)?;
        let band = reduce_band(&t, &panel.band[0], &panel.band[1]);
        let mut outline: Vec<(f64, f64)> = band.iter().map(|&(x, _, h)| (x, h)).collect();
        outline.extend(band.iter().rev().map(|&(x, l, _)| (x, l)));
        chart
            .draw_series(std::iter::once(Polygon::new(
                outline,
                band_colour.mix(0.3).filled(),
            )))
            .map_err(draw_error)?;
        let mut legend = vec![LegendEntry::new(
            "min/max over variants",
            band_colour,
            Mark::Lane,
        )];
        if !panel.limits.is_empty() {
            draw_limit_lines(&mut chart, t_end, &panel.limits, panel.limit_name, grey)?;
            legend.push(LegendEntry::new(panel.limit_name, grey, Mark::Dashed));
        }
        if !reference.is_empty() {
            draw_labelled_line(&mut chart, env.reference.clone(), "reference", orange)?;
            legend.push(LegendEntry::new("reference", orange, Mark::Line));
        }
        if !worst_series.is_empty() {
            draw_labelled_line(
                &mut chart,
                reduce(&worst_t, &worst_series),
                "worst variant",
                red,
            )?;
            if let Some((w, why)) = &chosen[i] {
                legend.push(LegendEntry::new(
                    format!("worst #{} ({why})", w.variant.index),
                    red,
                    Mark::Line,
                ));
                for (k, x) in h.params.iter().zip(&w.variant.values) {
                    legend.push(LegendEntry::new(
                        format!("{k} = {}", format_number(Some(*x))),
                        red,
                        Mark::Text,
                    ));
                }
            }
        }
        draw_side_legend(&chart, &column, &legend)?;
    }
    Ok(())
}
