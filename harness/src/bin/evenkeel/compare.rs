//! `evenkeel compare`: the fixed-point and the `f64` controller back to
//! back on the same scenarios.

use std::path::PathBuf;

use anyhow::Context;
use clap::Args;

use super::output::{self, Outputs};
use evenkeel_harness::compare::{self, Comparison};

/// Options of `evenkeel compare` (those of `check` that apply).
#[derive(Args)]
pub(crate) struct CompareArgs {
    /// Scenario files (TOML). None: the built-in baggage-tug demo.
    scenarios: Vec<PathBuf>,
    /// Write machine-readable results as JSON to PATH (`-`: standard output).
    #[arg(long, value_name = "PATH")]
    json: Option<PathBuf>,
    /// Write JUnit XML (one test case per check) to PATH (`-`: standard
    /// output).
    #[arg(long, value_name = "PATH")]
    junit: Option<PathBuf>,
    /// Write both trajectories and their differences as CSV to PATH (one
    /// file per scenario when there are several: PATH-SCENARIO-compare.csv).
    #[arg(long, value_name = "PATH.csv")]
    trace: Option<PathBuf>,
    /// Plot both trajectories and their differences to PATH, SVG or PNG by
    /// extension (one file per scenario when there are several).
    #[arg(long, value_name = "PATH")]
    plot: Option<PathBuf>,
    /// Write one self-contained HTML report (checks, plots inline, the
    /// caution) to PATH.
    #[arg(long, value_name = "PATH.html")]
    html: Option<PathBuf>,
}

/// Runs every comparison; `Ok(passed)`, or an error for bad input.
pub(crate) fn run(args: &CompareArgs) -> anyhow::Result<bool> {
    let mut out = Outputs::new(&output::paths(&args.scenarios));
    out.file("--json", args.json.as_deref())?;
    out.file("--junit", args.junit.as_deref())?;
    out.html("--html", args.html.as_deref())?;
    output::base_ok("--trace", args.trace.as_deref(), false)?;
    output::base_ok("--plot", args.plot.as_deref(), true)?;
    let scenarios = super::load_scenarios(&args.scenarios)?;
    let files = output::PerRun {
        trace: args.trace.as_deref(),
        plot: args.plot.as_deref(),
        only: scenarios.len() == 1,
    };
    let names: Vec<(&str, &str, &str)> = scenarios
        .iter()
        .map(|s| (s.name.as_str(), s.source.as_str(), "compare"))
        .collect();
    out.per_run(&files, &names)?;
    let mut comparisons: Vec<Comparison> = Vec::with_capacity(scenarios.len());
    let mut plots = Vec::with_capacity(scenarios.len());
    for s in &scenarios {
        let c =
            compare::compare(s).with_context(|| format!("{}: scenario `{}`", s.source, s.name))?;
        files.write(
            &mut out,
            &c.scenario.name,
            "compare",
            |w| w.write_all(compare::trace_csv(&c).as_bytes()),
            |path| Ok(compare::plot(&c, path)?),
        )?;
        if args.html.is_some() {
            plots.push(Some(compare::plot_svg(&c)?));
        }
        comparisons.push(c);
    }
    out.json(args.json.as_deref(), || compare::json(&comparisons))?;
    out.text(args.junit.as_deref(), || compare::junit(&comparisons))?;
    out.text(args.html.as_deref(), || {
        evenkeel_harness::report::compare_html(&comparisons, &plots)
    })?;
    let tables: String = comparisons.iter().map(compare::table).collect();
    out.finish(&tables)?;
    Ok(comparisons.iter().all(Comparison::passed))
}
