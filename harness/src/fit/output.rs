//! What `evenkeel fit` hands back: a readable report, JSON, the scenario
//! (an existing one with only its `[plant]`, `[actuator] tau_s` and
//! `[uncertainty]` values changed, or a new one), and the plot of measured
//! against fitted.

use std::fmt::Write;
use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;
use serde_json::{Value, json as j};
use toml_edit::{DocumentMut, InlineTable, Item, Table, Value as TomlValue};

use super::{FitOutcome, Log, Target};
use crate::plot::{
    Figure, PlotError, draw_grid, draw_labelled_line, draw_legend_box, draw_page, reduce,
    render_svg, span, time_panel, write_figure,
};
use crate::report::{CAUTION, HtmlPage, format_number};
use crate::scenario::Scenario;
use crate::sweep::Param;

fn n(x: f64) -> String {
    format_number(Some(x))
}

/// The readable report.
#[must_use]
pub fn report(o: &FitOutcome, unit: &str) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "fit of {} log{} to `{}`{}: {}",
        o.logs.len(),
        if o.logs.len() == 1 { "" } else { "s" },
        o.request.model.name(),
        if o.request.actuator_lag {
            " with an actuator lag"
        } else {
            ""
        },
        if o.passed() { "PASS" } else { "FAIL" }
    );
    for (k, v) in &o.request.fixed {
        let _ = writeln!(out, "  held: {k} = {}", n(*v));
    }
    for l in &o.logs {
        let _ = writeln!(
            out,
            "  log {} ({}){}: {} samples, dt {} s, residual RMS {} {unit} ({:.1} % of the output's spread), {} iterations{}",
            l.name,
            l.file,
            l.label
                .as_ref()
                .map_or(String::new(), |x| format!(" label {x}")),
            l.samples,
            n(l.dt_s),
            n(l.residual_rms),
            100.0 * l.normalised_error,
            l.iterations,
            if l.converged { "" } else { " (not converged)" }
        );
        let _ = writeln!(
            out,
            "    {:<18} {:>12} {:>26} {:>12}",
            "value", "estimate", "95 % interval", "std"
        );
        for e in &l.estimates {
            let _ = writeln!(
                out,
                "    {:<18} {:>12} {:>26} {:>12}",
                e.target.key(),
                n(e.value),
                format!("[{}, {}]", n(e.interval.0), n(e.interval.1)),
                n(e.std)
            );
        }
        let w = &l.whiteness;
        let _ = writeln!(
            out,
            "    residuals: Ljung–Box Q = {:.1} over {} lags (95 % limit {:.1}): {}; largest autocorrelation {:.3}",
            w.q,
            w.lags,
            w.critical,
            if w.white() { "white" } else { "NOT white" },
            w.max_autocorrelation
        );
        for warning in &l.warnings {
            let _ = writeln!(out, "    warning: {warning}");
        }
        for p in &l.problems {
            let _ = writeln!(out, "    PROBLEM: {p}");
        }
    }
    if !o.spread.is_empty() {
        let _ = writeln!(
            out,
            "  across the logs (nominal: median; box: {}, widened by {} % of the nominal):",
            if o.logs.len() == 1 {
                "the 95 % interval"
            } else {
                "the logs' range"
            },
            n(100.0 * o.margin)
        );
        for s in &o.spread {
            let _ = writeln!(
                out,
                "    {:<18} nominal {:>12}   [uncertainty] {{ min = {}, max = {} }}",
                s.target.key(),
                n(s.nominal),
                n(s.min),
                n(s.max)
            );
        }
    }
    let _ = writeln!(out, "  {CAUTION}");
    out
}

/// The JSON document of a fit:
///
/// ```text
/// { "caution", "passed", "model", "actuator_lag", "fixed": {..}, "margin",
///   "logs": [ { "name", "file", "label", "samples", "dt_s", "residual_rms", "normalised_error",
///               "iterations", "converged", "estimates": [ { "key", "value", "std", "lower", "upper" } ],
///               "correlation": [[..]], "whiteness": { "lags", "q", "critical", "white", "max_autocorrelation" },
///               "warnings": [..], "problems": [..] } ],
///   "spread": [ { "key", "nominal", "min", "max", "values": [..] } ] }
/// ```
#[must_use]
pub fn json(o: &FitOutcome) -> Value {
    let fixed: serde_json::Map<String, Value> = o
        .request
        .fixed
        .iter()
        .map(|(k, v)| (k.clone(), j!(v)))
        .collect();
    j!({
        "caution": CAUTION,
        "passed": o.passed(),
        "model": o.request.model.name(),
        "actuator_lag": o.request.actuator_lag,
        "fixed": fixed,
        "margin": o.margin,
        "logs": o.logs.iter().map(|l| j!({
            "name": l.name,
            "file": l.file,
            "label": l.label,
            "samples": l.samples,
            "dt_s": l.dt_s,
            "residual_rms": l.residual_rms,
            "normalised_error": l.normalised_error,
            "iterations": l.iterations,
            "converged": l.converged,
            "estimates": l.estimates.iter().map(|e| j!({
                "key": e.target.key(),
                "value": e.value,
                "std": finite(e.std),
                "lower": finite(e.interval.0),
                "upper": finite(e.interval.1),
            })).collect::<Vec<_>>(),
            "correlation": l.correlation.iter().map(|r| r.iter().map(|x| finite(*x)).collect::<Vec<_>>()).collect::<Vec<_>>(),
            "whiteness": {
                "lags": l.whiteness.lags,
                "q": l.whiteness.q,
                "critical": l.whiteness.critical,
                "white": l.whiteness.white(),
                "max_autocorrelation": l.whiteness.max_autocorrelation,
            },
            "warnings": l.warnings,
            "problems": l.problems,
        })).collect::<Vec<_>>(),
        "spread": o.spread.iter().map(|s| j!({
            "key": s.target.key(),
            "nominal": s.nominal,
            "min": s.min,
            "max": s.max,
            "values": s.values,
        })).collect::<Vec<_>>(),
    })
}

fn finite(x: f64) -> Value {
    if x.is_finite() { j!(x) } else { Value::Null }
}

/// `(table, key)` a fitted value lives under in a scenario file.
fn place(t: Target) -> Option<(&'static str, &'static str)> {
    match t {
        Target::Param(Param::ActuatorTauS) => Some(("actuator", "tau_s")),
        Target::Param(p) => Some(("plant", p.key())),
        Target::Load | Target::InitialOutput => None,
    }
}

/// Rounds to 4 significant digits, for values written to a file.
fn round4(x: f64) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    #[allow(clippy::cast_possible_truncation)]
    let e = x.abs().log10().floor() as i32 - 3;
    let s = 10f64.powi(e);
    let r = (x / s).round() * s;
    format!("{r:.12e}").parse().unwrap_or(r)
}

fn set_keep_decor(table: &mut Table, key: &str, v: TomlValue) {
    match table.get_mut(key) {
        Some(item) => {
            if let Some(old) = item.as_value() {
                let mut v = v;
                *v.decor_mut() = old.decor().clone();
                *item = Item::Value(v);
            } else {
                *item = Item::Value(v);
            }
        }
        None => {
            table.insert(key, Item::Value(v));
        }
    }
}

/// The scenario file `text` with the fit put in: `[plant]` values set to
/// the nominal, `[actuator] tau_s` for a fitted actuator lag, and one
/// `[uncertainty]` entry `{ min, max }` per fitted value whose box has a
/// width (an existing entry of the same key replaced, the others and their
/// order kept). Everything else stays as written, comments included.
///
/// # Errors
/// A message if `text` is not TOML or lacks a table the fit writes into.
pub fn scenario_edit(text: &str, o: &FitOutcome) -> Result<String, String> {
    let mut doc: DocumentMut = text
        .parse()
        .map_err(|e: toml_edit::TomlError| e.to_string())?;
    for s in &o.spread {
        let Some((table, key)) = place(s.target) else {
            continue;
        };
        let t = doc
            .get_mut(table)
            .and_then(Item::as_table_mut)
            .ok_or_else(|| format!("the scenario has no [{table}] table"))?;
        set_keep_decor(t, key, TomlValue::from(round4(s.nominal)));
    }
    let boxed: Vec<_> = o.spread.iter().filter(|s| s.max > s.min).collect();
    if !boxed.is_empty() {
        if doc.get("uncertainty").is_none() {
            doc.insert("uncertainty", Item::Table(Table::new()));
        }
        let t = doc
            .get_mut("uncertainty")
            .and_then(Item::as_table_mut)
            .ok_or("[uncertainty] is not a table")?;
        for s in boxed {
            let key = match s.target {
                Target::Param(p) => p.key(),
                _ => continue,
            };
            let mut inline = InlineTable::new();
            inline.insert("min", TomlValue::from(round4(s.min)));
            inline.insert("max", TomlValue::from(round4(s.max)));
            set_keep_decor(t, key, TomlValue::InlineTable(inline));
        }
    }
    Ok(doc.to_string())
}

/// A new scenario from the fit: the nominal plant, the box, the
/// measurement noise (the residual RMS), a reference over the logs'
/// setpoints (or outputs), a placeholder requirement, and the controller
/// of the analytic rule (SIMC) for the nominal plant — NOT verified: the
/// file says to run `evenkeel design` on it.
///
/// # Errors
/// A message if the scenario built does not load (a fit out of any valid
/// range).
pub fn new_scenario(
    o: &FitOutcome,
    logs: &[Log],
    name: &str,
    unit: &str,
) -> Result<String, String> {
    let first = logs.first().ok_or("no log")?;
    let dt = first.median_dt_s();
    let duration = logs
        .iter()
        .map(|l| l.time_s.last().copied().unwrap_or(0.0) - l.time_s[0])
        .fold(0.0, f64::max);
    let (lo, hi) = logs
        .iter()
        .flat_map(|l| l.setpoint.as_deref().unwrap_or(&l.output).iter().copied())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
            (a.min(x), b.max(x))
        });
    let (u_lo, u_hi) = logs
        .iter()
        .flat_map(|l| l.input.iter().copied())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
            (a.min(x), b.max(x))
        });
    // The actuator range is not in the logs: a normalised range when the
    // inputs fit one, else the logged range widened by half.
    let (u_lo, u_hi) = if u_lo >= 0.0 && u_hi <= 1.0 {
        (0.0, 1.0)
    } else if u_lo >= -1.0 && u_hi <= 1.0 {
        (-1.0, 1.0)
    } else {
        let w = 0.5 * (u_hi - u_lo);
        (u_lo - w, u_hi + w)
    };
    let noise = {
        let mut r: Vec<f64> = o.logs.iter().map(|l| l.residual_rms).collect();
        r.sort_by(f64::total_cmp);
        r.get(r.len() / 2).copied().unwrap_or(0.0)
    };
    let load = {
        let mut v: Vec<f64> = o
            .logs
            .iter()
            .filter_map(|l| l.estimates.iter().find(|e| e.target == Target::Load))
            .map(|e| e.value)
            .collect();
        v.sort_by(f64::total_cmp);
        v.get(v.len() / 2).copied()
    };
    let mut plant = format!("model = \"{}\"\n", o.request.model.name());
    let mut actuator = String::new();
    for (k, v) in &o.request.fixed {
        if k != "tau_s" || o.request.actuator_lag {
            plant.push_str(&format!("{k} = {:?}   # held, not fitted\n", *v));
        }
    }
    for s in &o.spread {
        match place(s.target) {
            Some(("actuator", key)) => {
                actuator = format!(
                    "[actuator]\n{key} = {:?}\nmin = {:?}\nmax = {:?}\n\n",
                    round4(s.nominal),
                    u_lo,
                    u_hi
                );
            }
            Some((_, key)) => plant.push_str(&format!("{key} = {:?}\n", round4(s.nominal))),
            None => {}
        }
    }
    let y0 = o
        .logs
        .first()
        .and_then(|l| {
            l.estimates
                .iter()
                .find(|e| e.target == Target::InitialOutput)
        })
        .map_or(first.output[0], |e| e.value);
    let mut text = format!(
        "# Scenario made by `evenkeel fit` from {} log(s); plant and [uncertainty] fitted.\n# The [controller] is the analytic rule's start for the nominal plant, NOT verified:\n# run `evenkeel design` on this file. The [criteria] are placeholders: put your requirements in.\n# {CAUTION}\n\n[scenario]\nname = \"{name}\"\ndescription = \"fitted from logs\"\nduration_s = {:?}\noutput_unit = \"{unit}\"\ncommand_unit = \"1\"\n\n[controller]\nperiod_s = {:?}\nkp = 1.0\nki_per_s = 0.1\noutput_min = {:?}   # placeholder: your actuator's range\noutput_max = {:?}\n\n[plant]\n{plant}initial_output = {:?}\n\n{actuator}[sensor]\nnoise_std = {:?}   # the fits' residual RMS (median over the logs)\n\n[reference]\ninitial = {:?}\nsegments = [\n  {{ hold_s = {:?} }},\n  {{ to = {:?}, hold_s = {:?} }},\n]\n\n[criteria]\nsteady_state_error = {{ max = {:?}, source = \"placeholder: 2 % of the logged range; put your requirement here\" }}\n",
        logs.len(),
        round4(duration.max(10.0 * dt)),
        dt,
        u_lo,
        u_hi,
        round4(y0),
        round4(noise),
        round4(lo),
        round4(0.1 * duration),
        round4(hi),
        round4(0.9 * duration),
        round4((0.02 * (hi - lo)).max(1e-9)),
    );
    let boxed: Vec<String> = o
        .spread
        .iter()
        .filter(|s| s.max > s.min)
        .filter_map(|s| match s.target {
            Target::Param(p) => Some(format!(
                "{} = {{ min = {:?}, max = {:?} }}\n",
                p.key(),
                round4(s.min),
                round4(s.max)
            )),
            _ => None,
        })
        .collect();
    if let Some(d) = load {
        text.push_str(&format!(
            "\n[disturbance.load]   # the fitted offset (median over the logs), held constant\ninitial = {:?}\n",
            round4(d)
        ));
    }
    if !boxed.is_empty() {
        text.push_str("\n[uncertainty]\n");
        text.extend(boxed);
    }
    let scenario = Scenario::from_toml(&text, name)
        .map_err(|e| format!("the scenario built from the fit does not load: {e}"))?;
    let start = crate::design::design(&scenario, &crate::design::Request::default())
        .map_err(|e| format!("no analytic controller for the fitted plant: {e}"))?;
    crate::design::scenario_toml(&text, &start.settings, &[])
}

/// Draws measured against fitted and the residuals of every log (at most
/// six) into `path` (`.svg` or `.png`).
///
/// # Errors
/// [`PlotError`] for a wrong extension, a drawing or a writing failure.
pub fn plot(o: &FitOutcome, logs: &[Log], unit: &str, path: &Path) -> Result<(), PlotError> {
    write_figure(&FitFigure { o, logs, unit }, path)
}

/// The fit plot as an SVG document (for the HTML report).
///
/// # Errors
/// [`PlotError::Draw`] for a drawing failure.
pub fn plot_svg(o: &FitOutcome, logs: &[Log], unit: &str) -> Result<String, PlotError> {
    render_svg(&FitFigure { o, logs, unit })
}

struct FitFigure<'a> {
    o: &'a FitOutcome,
    logs: &'a [Log],
    unit: &'a str,
}

impl Figure for FitFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError> {
        let shown = self.logs.len().min(6);
        let title = format!(
            "fit to `{}` — measured against fitted — {}",
            self.o.request.model.name(),
            if self.o.passed() { "PASS" } else { "FAIL" }
        );
        let body = draw_page(root, &title, 22)?;
        let areas = body.split_evenly((2 * shown.max(1), 1));
        let blue = RGBColor(31, 119, 180);
        let orange = RGBColor(230, 120, 20);
        let purple = RGBColor(148, 60, 180);
        for (i, (log, fit)) in self.logs.iter().zip(&self.o.logs).take(shown).enumerate() {
            let t0 = log.time_s[0];
            let t: Vec<f64> = log.time_s.iter().map(|x| x - t0).collect();
            let t_end = t.last().copied().unwrap_or(1.0).max(1e-9);
            let resid: Vec<f64> = fit
                .fitted
                .iter()
                .zip(&log.output)
                .map(|(a, b)| b - a)
                .collect();
            let mut chart = time_panel(
                &areas[2 * i],
                t_end,
                span(&[&log.output, &fit.fitted], &[]),
                80,
            )?;
            draw_grid(&mut chart, &format!("{} ({})", log.name, self.unit), None)?;
            draw_labelled_line(&mut chart, reduce(&t, &log.output), "measured", orange)?;
            draw_labelled_line(&mut chart, reduce(&t, &fit.fitted), "fitted", blue)?;
            draw_legend_box(&mut chart)?;
            let mut chart = time_panel(&areas[2 * i + 1], t_end, span(&[&resid], &[]), 80)?;
            draw_grid(&mut chart, &format!("residual ({})", self.unit), None)?;
            draw_labelled_line(&mut chart, reduce(&t, &resid), "measured − fitted", purple)?;
            draw_legend_box(&mut chart)?;
        }
        Ok(())
    }
}

/// The HTML report of a fit: verdict, one table of estimates per log, the
/// spread across logs, the plot (`svg`, if drawn) and the text report.
#[must_use]
pub fn html(o: &FitOutcome, unit: &str, svg: Option<&str>) -> String {
    let mut p = HtmlPage::new(
        &format!("evenkeel fit: {}", o.request.model.name()),
        Some(o.passed()),
    );
    for l in &o.logs {
        p.heading(2, &format!("log {}", l.name));
        p.verdict(
            l.problems.is_empty(),
            &format!(
                "{} samples, residual RMS {} {unit} ({:.1} % of the output's spread), residuals {}",
                l.samples,
                n(l.residual_rms),
                100.0 * l.normalised_error,
                if l.whiteness.white() {
                    "white"
                } else {
                    "not white"
                }
            ),
        );
        let rows: Vec<Vec<String>> = l
            .estimates
            .iter()
            .map(|e| {
                vec![
                    e.target.key().to_owned(),
                    n(e.value),
                    n(e.interval.0),
                    n(e.interval.1),
                    n(e.std),
                ]
            })
            .collect();
        p.table(
            &["value", "estimate", "95 % low", "95 % high", "std"],
            &rows,
        );
        for w in l.warnings.iter().chain(&l.problems) {
            p.paragraph(w);
        }
    }
    p.heading(2, "Across the logs");
    let rows: Vec<Vec<String>> = o
        .spread
        .iter()
        .map(|s| vec![s.target.key().to_owned(), n(s.nominal), n(s.min), n(s.max)])
        .collect();
    p.table(&["value", "nominal", "[uncertainty] min", "max"], &rows);
    if let Some(svg) = svg {
        p.heading(2, "Measured against fitted");
        p.svg(svg, "per log: measured and fitted output, residuals");
    }
    p.heading(2, "Full report");
    p.preformatted(&report(o, unit));
    p.finish()
}
