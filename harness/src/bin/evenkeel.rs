//! `evenkeel check`: run scenarios, print verdicts, write reports; `sweep`,
//! `merge` and `design` (in `evenkeel/robust.rs`) for robustness over the
//! unknown plant.
//!
//! Exit status: 0 every criterion passed, 1 a criterion failed, 2 bad input
//! or usage (unreadable or invalid scenario, settings a backend refuses,
//! a report that cannot be written).

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::Context;
use clap::{Args, Parser, Subcommand, ValueEnum};
use evenkeel_harness::report::{json, junit, per_run_path, trace_csv, write_atomic};
use evenkeel_harness::{BackendKind, Outcome, Scenario, plot};

#[path = "evenkeel/compare.rs"]
mod compare;
#[path = "evenkeel/robust.rs"]
mod robust;

/// Checks control loops described in scenario files against their criteria.
#[derive(Parser)]
#[command(name = "evenkeel", version, about)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Run scenarios on the controller and report pass/fail per criterion.
    Check(CheckArgs),
    /// Run a scenario over its uncertain parameters (`[uncertainty]`) in
    /// parallel: pass fraction and worst case per criterion, envelope plot.
    Sweep(robust::SweepArgs),
    /// Combine shard results of `evenkeel sweep --shard I/N --save PATH`.
    Merge(robust::MergeArgs),
    /// Propose gains and limits (SIMC, pole placement) with margins at
    /// every corner of the uncertainty.
    Design(robust::DesignArgs),
    /// Run scenarios with the fixed-point (Q16.16) and the f64 controller
    /// side by side and judge the difference against `[compare]`
    /// tolerances (derived from the formats when absent).
    Compare(compare::CompareArgs),
}

#[derive(Args)]
struct CheckArgs {
    /// Scenario files (TOML). None: the built-in baggage-tug demo.
    scenarios: Vec<PathBuf>,
    /// Numeric backend(s) of the controller.
    #[arg(long, value_enum, default_value_t = BackendArg::All)]
    backend: BackendArg,
    /// Write machine-readable results as JSON to PATH (`-`: standard output).
    #[arg(long, value_name = "PATH")]
    json: Option<PathBuf>,
    /// Write JUnit XML (one test case per criterion) to PATH.
    #[arg(long, value_name = "PATH")]
    junit: Option<PathBuf>,
    /// Write the time series as CSV to PATH (one file per scenario and
    /// backend when there are several: PATH-SCENARIO-BACKEND.csv).
    #[arg(long, value_name = "PATH.csv")]
    trace: Option<PathBuf>,
    /// Plot to PATH, SVG or PNG by extension (one file per scenario and
    /// backend when there are several).
    #[arg(long, value_name = "PATH")]
    plot: Option<PathBuf>,
}

#[derive(Clone, Copy, ValueEnum)]
enum BackendArg {
    Fixed,
    F32,
    F64,
    All,
}

impl BackendArg {
    fn kinds(self) -> Vec<BackendKind> {
        match self {
            Self::Fixed => vec![BackendKind::Fixed],
            Self::F32 => vec![BackendKind::F32],
            Self::F64 => vec![BackendKind::F64],
            Self::All => BackendKind::ALL.to_vec(),
        }
    }
}

const PASS: u8 = 0;
const FAIL: u8 = 1;
const BAD_INPUT: u8 = 2;

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let _ = e.print();
            return ExitCode::from(if e.use_stderr() { BAD_INPUT } else { PASS });
        }
    };
    let result = match &cli.command {
        Command::Check(args) => check(args),
        Command::Sweep(args) => robust::sweep(args),
        Command::Merge(args) => robust::merge(args),
        Command::Design(args) => robust::design(args),
        Command::Compare(args) => compare::run(args),
    };
    match result {
        Ok(true) => ExitCode::from(PASS),
        Ok(false) => ExitCode::from(FAIL),
        Err(e) => {
            eprintln!("error: {e:#}");
            ExitCode::from(BAD_INPUT)
        }
    }
}

/// Runs everything; `Ok(passed)`, or an error for bad input.
fn check(args: &CheckArgs) -> anyhow::Result<bool> {
    // Refuse unwritable report paths before running anything, so that a bad
    // path never leaves some reports written and others not.
    let reports = [&args.json, &args.junit, &args.trace, &args.plot];
    for path in reports.into_iter().flatten() {
        if path.as_os_str() != "-" {
            report_dir_exists(path)?;
        }
    }
    plot_extension_ok(args.plot.as_deref())?;
    let scenarios = load_scenarios(&args.scenarios)?;
    let backends = args.backend.kinds();
    let mut outcomes = Vec::with_capacity(scenarios.len());
    for s in &scenarios {
        let outcome = s
            .run_on(&backends)
            .with_context(|| format!("{}: scenario `{}`", s.source, s.name))?;
        outcomes.push(outcome);
    }

    // The table goes to stderr when stdout carries the JSON.
    let json_to_stdout = args.json.as_deref() == Some(Path::new("-"));
    let tables: String = outcomes.iter().map(ToString::to_string).collect();
    if json_to_stdout {
        eprint!("{tables}");
    } else {
        print!("{tables}");
    }

    if let Some(path) = &args.json {
        let text = serde_json::to_string_pretty(&json(&outcomes))? + "\n";
        if json_to_stdout {
            std::io::stdout().write_all(text.as_bytes())?;
        } else {
            write(path, text.as_bytes())?;
        }
    }
    if let Some(path) = &args.junit {
        write(path, junit(&outcomes).as_bytes())?;
    }
    let only = outcomes.iter().map(|o| o.runs.len()).sum::<usize>() == 1;
    for o in &outcomes {
        for run in &o.runs {
            if let Some(base) = &args.trace {
                let path = per_run_path(base, &o.scenario.name, run.backend, only);
                write(&path, trace_csv(&run.recording).as_bytes())?;
            }
            if let Some(base) = &args.plot {
                let path = per_run_path(base, &o.scenario.name, run.backend, only);
                plot::plot(&o.scenario, run, &path)?;
            }
        }
    }
    Ok(outcomes.iter().all(Outcome::passed))
}

/// The directory a report goes into must exist (reports are written
/// atomically into it; nothing creates it).
/// `--plot` must name an `.svg` or `.png` file.
fn plot_extension_ok(plot: Option<&Path>) -> anyhow::Result<()> {
    if let Some(p) = plot {
        let ext = p
            .extension()
            .map(|e| e.to_string_lossy().to_ascii_lowercase());
        if !matches!(ext.as_deref(), Some("svg" | "png")) {
            anyhow::bail!("--plot {}: the file must end in .svg or .png", p.display());
        }
    }
    Ok(())
}

/// The scenario files named, or the built-in demo when none is.
fn load_scenarios(paths: &[PathBuf]) -> anyhow::Result<Vec<Scenario>> {
    if paths.is_empty() {
        return Ok(vec![Scenario::demo()?]);
    }
    Ok(paths
        .iter()
        .map(Scenario::from_path)
        .collect::<Result<Vec<_>, _>>()?)
}

fn report_dir_exists(path: &Path) -> anyhow::Result<()> {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    };
    anyhow::ensure!(
        dir.is_dir(),
        "{}: the directory {} does not exist",
        path.display(),
        dir.display()
    );
    anyhow::ensure!(
        !path.is_dir(),
        "{}: is a directory, not a report file",
        path.display()
    );
    Ok(())
}

fn write(path: &Path, bytes: &[u8]) -> anyhow::Result<()> {
    write_atomic(path, bytes).with_context(|| format!("writing {}", path.display()))
}
