//! The HTML reports of `check`, `compare`, `sweep` and `merge`: the same
//! verdicts as the terminal table, as tables, with the plots inline (see
//! [`HtmlPage`] for what makes the page self-contained).

use super::{HtmlPage, format_number};
use crate::compare::Comparison;
use crate::outcome::Outcome;
use crate::sweep::{SweepHeader, Tally, summary_of};

fn verdict_cell(pass: bool) -> String {
    if pass { "pass" } else { "FAIL" }.to_owned()
}

/// The HTML report of `check`: per scenario and backend, the verdict and
/// the criteria table, then the run's plot when `plots[i][k]` holds it
/// (scenario `i`, run `k`); the text table at the end.
#[must_use]
pub fn check_html(outcomes: &[Outcome], plots: &[Vec<Option<String>>]) -> String {
    let passed = outcomes.iter().all(Outcome::passed);
    let title = match outcomes {
        [one] => format!("evenkeel check: {}", one.scenario.name),
        _ => format!("evenkeel check: {} scenarios", outcomes.len()),
    };
    let mut p = HtmlPage::new(&title, Some(passed));
    let runs: usize = outcomes.iter().map(|o| o.runs.len()).sum();
    let failed: usize = outcomes
        .iter()
        .flat_map(|o| &o.runs)
        .filter(|r| r.verdicts.iter().any(|v| !v.pass))
        .count();
    p.verdict(
        passed,
        &format!(
            "{} of {runs} runs met every criterion ({} scenarios)",
            runs - failed,
            outcomes.len()
        ),
    );
    for (i, o) in outcomes.iter().enumerate() {
        let s = &o.scenario;
        p.heading(2, &format!("{} ({})", s.name, s.source));
        for (k, run) in o.runs.iter().enumerate() {
            let met = run.verdicts.iter().filter(|v| v.pass).count();
            let pass = met == run.verdicts.len();
            p.heading(3, &format!("backend {}", run.backend));
            p.verdict(
                pass,
                &format!(
                    "{}: {met} of {} criteria met",
                    if pass { "PASS" } else { "FAIL" },
                    run.verdicts.len()
                ),
            );
            let rows: Vec<Vec<String>> = run
                .verdicts
                .iter()
                .map(|v| {
                    let c = &v.criterion;
                    let unit = c.metric.unit(&s.output_unit, &s.command_unit);
                    vec![
                        c.label(),
                        format!(
                            "{} {} {unit}",
                            c.bound.symbol(),
                            format_number(Some(c.limit))
                        ),
                        format_number(v.measured),
                        v.at_s.map_or_else(String::new, |t| format_number(Some(t))),
                        verdict_cell(v.pass),
                        v.undefined
                            .map_or_else(String::new, |u| u.reason().to_owned()),
                        c.source.clone().unwrap_or_default(),
                    ]
                })
                .collect();
            p.table(
                &[
                    "criterion",
                    "limit",
                    "measured",
                    "at (s)",
                    "verdict",
                    "undefined because",
                    "source",
                ],
                &rows,
            );
            if let Some(Some(svg)) = plots.get(i).and_then(|r| r.get(k)) {
                p.svg(svg, &format!("{} on {}", s.name, run.backend));
            }
        }
    }
    p.heading(2, "Text report");
    let text: String = outcomes.iter().map(ToString::to_string).collect();
    p.preformatted(&text);
    p.finish()
}

/// The HTML report of `compare`: per scenario the checks (measured, limit,
/// where the limit comes from, note), the plot when `plots[i]` holds it,
/// and the text report.
#[must_use]
pub fn compare_html(comparisons: &[Comparison], plots: &[Option<String>]) -> String {
    let passed = comparisons.iter().all(Comparison::passed);
    let title = match comparisons {
        [one] => format!("evenkeel compare: {}", one.scenario.name),
        _ => format!("evenkeel compare: {} scenarios", comparisons.len()),
    };
    let mut p = HtmlPage::new(&title, Some(passed));
    let met = comparisons.iter().filter(|c| c.passed()).count();
    p.verdict(
        passed,
        &format!(
            "{met} of {} comparisons met every tolerance",
            comparisons.len()
        ),
    );
    for (i, c) in comparisons.iter().enumerate() {
        let s = &c.scenario;
        p.heading(2, &format!("{} ({})", s.name, s.source));
        p.verdict(
            c.passed(),
            if c.passed() {
                "PASS: fixed Q16.16 within every tolerance of f64"
            } else {
                "FAIL: fixed Q16.16 outside a tolerance of f64"
            },
        );
        let rows: Vec<Vec<String>> = c
            .checks
            .iter()
            .map(|k| {
                vec![
                    k.name.to_owned(),
                    format!("{} {}", format_number(Some(k.measured)), k.unit),
                    format!("<= {} {}", format_number(Some(k.tolerance.limit)), k.unit),
                    if k.tolerance.declared {
                        "declared in [compare]".to_owned()
                    } else {
                        format!("derived: {}", k.tolerance.basis)
                    },
                    verdict_cell(k.pass),
                    k.note.clone().unwrap_or_default(),
                ]
            })
            .collect();
        p.table(
            &[
                "check",
                "measured",
                "limit",
                "limit from",
                "verdict",
                "note",
            ],
            &rows,
        );
        if let Some(Some(svg)) = plots.get(i) {
            p.svg(svg, &format!("{}: fixed against f64", s.name));
        }
        p.preformatted(&crate::compare::table(c));
    }
    p.finish()
}

/// The HTML report of `sweep` and `merge`: the sweep's verdict, per
/// criterion the pass fraction, worst value and worst variant, the
/// envelope plot and the robustness map (each when drawn, with the map's
/// one-line summary), and the text table.
#[must_use]
pub fn sweep_html(
    header: &SweepHeader,
    tally: &Tally,
    envelope_svg: Option<&str>,
    map: Option<(&str, &str)>,
) -> String {
    let summary = summary_of(tally);
    let passed = summary.all_passed();
    let mut p = HtmlPage::new(
        &format!("evenkeel sweep: {}", header.scenario),
        Some(passed),
    );
    p.verdict(
        passed,
        &format!(
            "{} of {} variants met every criterion (backend {}, method {}, seed {}{})",
            summary.passed,
            summary.total,
            header.backend,
            header.method,
            header.seed,
            header
                .shard
                .map_or_else(String::new, |(i, n)| format!(", shard {i}/{n}"))
        ),
    );
    p.heading(2, "Criteria over the variants");
    let rows: Vec<Vec<String>> = summary
        .criteria
        .iter()
        .map(|c| {
            let r = &c.criterion;
            let symbol = if r.bound == "min" { ">=" } else { "<=" };
            let worst = c.worst.map_or_else(
                || {
                    c.worst_reason.map_or_else(
                        || "undefined".to_owned(),
                        |u| format!("undefined ({})", u.reason()),
                    )
                },
                |w| format_number(Some(w)),
            );
            vec![
                r.metric.clone(),
                format!("{symbol} {}", format_number(Some(r.limit))),
                format!("{:.2}", 100.0 * c.pass_fraction()),
                worst,
                format!("#{}", c.worst_index),
                verdict_cell(c.passed == c.total),
            ]
        })
        .collect();
    p.table(
        &[
            "criterion",
            "limit",
            "pass %",
            "worst",
            "worst variant",
            "verdict",
        ],
        &rows,
    );
    if let Some(svg) = envelope_svg {
        p.heading(2, "Envelope");
        p.svg(
            svg,
            "min/max band over the variants, worst variant highlighted",
        );
    }
    if let Some((text, svg)) = map {
        p.heading(2, "Robustness map");
        p.paragraph(text);
        p.svg(
            svg,
            "worst normalised criterion margin over two uncertain parameters",
        );
    }
    p.heading(2, "Text report");
    p.preformatted(&crate::sweep::table_of(header, tally));
    p.finish()
}
