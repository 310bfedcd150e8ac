//! `evenkeel compare`: the fixed-point and the `f64` controller back to
//! back on the same scenarios.

use std::io::Write;
use std::path::{Path, PathBuf};

use anyhow::Context;
use clap::Args;
use evenkeel_harness::compare::{self, Comparison};
use evenkeel_harness::report::per_run_path;

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
    super::plot_extension_ok(args.plot.as_deref())?;
    let scenarios = super::load_scenarios(&args.scenarios)?;
    let mut comparisons: Vec<Comparison> = Vec::with_capacity(scenarios.len());
    for s in &scenarios {
        let c =
            compare::compare(s).with_context(|| format!("{}: scenario `{}`", s.source, s.name))?;
        comparisons.push(c);
    }

    let json_to_stdout = args.json.as_deref() == Some(Path::new("-"));
    let tables: String = comparisons.iter().map(compare::table).collect();
    if json_to_stdout {
        eprint!("{tables}");
    } else {
        print!("{tables}");
    }
    if let Some(path) = &args.json {
        let text = serde_json::to_string_pretty(&compare::json(&comparisons))? + "\n";
        if json_to_stdout {
            std::io::stdout().write_all(text.as_bytes())?;
        } else {
            super::write(path, text.as_bytes())?;
        }
    }
    if let Some(path) = &args.junit {
        super::write(path, compare::junit(&comparisons).as_bytes())?;
    }
    let only = comparisons.len() == 1;
    for c in &comparisons {
        if let Some(base) = &args.trace {
            let path = per_run_path(base, &c.scenario.name, "compare", only);
            super::write(&path, compare::trace_csv(c).as_bytes())?;
        }
        if let Some(base) = &args.plot {
            let path = per_run_path(base, &c.scenario.name, "compare", only);
            compare::plot(c, &path)?;
        }
    }
    Ok(comparisons.iter().all(Comparison::passed))
}
