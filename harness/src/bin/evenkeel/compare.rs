//! `evenkeel compare`: the fixed-point and the `f64` controller back to
//! back on the same scenarios.

use std::path::PathBuf;

use anyhow::Context;
use clap::Args;
use evenkeel_harness::compare::{self, Comparison};

/// Options of `evenkeel compare` (those of `check` that apply).
#[derive(Args)]
pub(crate) struct CompareArgs {
    /// Scenario files (TOML). None: the built-in baggage-tug demo.
    scenarios: Vec<PathBuf>,
    /// Write machine-readable results as JSON to PATH (`-`: standard output).
    #[arg(long, value_name = "PATH")]
    json: Option<PathBuf>,
    /// Write JUnit XML (one test case per check) to PATH.
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
}

/// Runs every comparison; `Ok(passed)`, or an error for bad input.
pub(crate) fn run(args: &CompareArgs) -> anyhow::Result<bool> {
    super::output::check_report_paths(
        &[
            args.json.as_deref(),
            args.junit.as_deref(),
            args.trace.as_deref(),
        ],
        args.plot.as_deref(),
    )?;
    let scenarios = super::load_scenarios(&args.scenarios)?;
    let mut comparisons: Vec<Comparison> = Vec::with_capacity(scenarios.len());
    for s in &scenarios {
        let c =
            compare::compare(s).with_context(|| format!("{}: scenario `{}`", s.source, s.name))?;
        comparisons.push(c);
    }

    let tables: String = comparisons.iter().map(compare::table).collect();
    super::output::summary(
        &tables,
        args.json.as_deref(),
        || compare::json(&comparisons),
        args.junit.as_deref(),
        || compare::junit(&comparisons),
    )?;
    let files = super::output::PerRun {
        trace: args.trace.as_deref(),
        plot: args.plot.as_deref(),
        only: comparisons.len() == 1,
    };
    for c in &comparisons {
        files.write(
            &c.scenario.name,
            "compare",
            || compare::trace_csv(c),
            |path| Ok(compare::plot(c, path)?),
        )?;
    }
    Ok(comparisons.iter().all(Comparison::passed))
}
