//! `evenkeel check`: run scenarios, print verdicts, write reports; `sweep`,
//! `merge` (in `evenkeel/robust.rs`) and `design` (`evenkeel/design.rs`) for robustness over the
//! unknown plant.
//!
//! Exit status: 0 every criterion passed, 1 a criterion failed, 2 bad input
//! or usage (unreadable or invalid scenario, settings a backend refuses,
//! a report that cannot be written).

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Context;
use clap::{Args, Parser, Subcommand, ValueEnum};
use evenkeel_harness::report::{json, junit, summary, write_trace_csv};
use evenkeel_harness::{BackendKind, Outcome, Scenario, plot};

#[path = "evenkeel/c_config.rs"]
mod c_config;
#[path = "evenkeel/compare.rs"]
mod compare;
#[path = "evenkeel/design.rs"]
mod design;
#[path = "evenkeel/fit.rs"]
mod fit;
#[path = "evenkeel/output.rs"]
mod output;
#[path = "evenkeel/replay.rs"]
mod replay;
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
    /// Propose gains and limits that pass: feasibility of the criteria at
    /// every corner, an analytic start (SIMC, pole placement), verification
    /// of the real controller over corners and a Latin-hypercube sample,
    /// and a search while anything fails.
    Design(design::DesignArgs),
    /// Fit a plant model to logged tests (step tests, closed-loop runs):
    /// parameters with confidence intervals per log, the nominal plant
    /// and the `[uncertainty]` box across the logs.
    Fit(fit::FitArgs),
    /// Feed a log recorded on the device through the host controller and
    /// compare every command and status bit.
    Replay(replay::ReplayArgs),
    /// Run scenarios with the fixed-point (Q16.16) and the f64 controller
    /// side by side and judge the difference against `[compare]`
    /// tolerances (derived from the formats when absent).
    Compare(compare::CompareArgs),
    /// Write a scenario's `[controller]` as a C header for firmware: the
    /// precomputed Q16.16 coefficients as a `static const
    /// EkcCoefficients`, loaded with `ekc_load` (no floating point on the
    /// target; see the README, "From C").
    CConfig(c_config::CConfigArgs),
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
    /// Write JUnit XML (one test case per criterion) to PATH (`-`:
    /// standard output).
    #[arg(long, value_name = "PATH")]
    junit: Option<PathBuf>,
    /// Write the time series as CSV to PATH (one file per scenario and
    /// backend when there are several: PATH-SCENARIO-BACKEND.csv; `-`:
    /// standard output for a single run).
    #[arg(long, value_name = "PATH.csv")]
    trace: Option<PathBuf>,
    /// Plot to PATH, SVG or PNG by extension (one file per scenario and
    /// backend when there are several; `-`: SVG on standard output for a
    /// single run).
    #[arg(long, value_name = "PATH")]
    plot: Option<PathBuf>,
    /// Write one self-contained HTML report (verdict tables, every run's
    /// plot inline, the caution) to PATH.
    #[arg(long, value_name = "PATH.html")]
    html: Option<PathBuf>,
}

#[derive(Clone, Copy, ValueEnum)]
enum BackendArg {
    Fixed,
    Slim16,
    F32,
    F64,
    All,
}

impl BackendArg {
    fn kinds(self) -> Vec<BackendKind> {
        match self {
            Self::Fixed => vec![BackendKind::Fixed],
            Self::Slim16 => vec![BackendKind::Slim16],
            Self::F32 => vec![BackendKind::F32],
            Self::F64 => vec![BackendKind::F64],
            Self::All => BackendKind::ALL.to_vec(),
        }
    }
}

const PASS: u8 = 0;
const FAIL: u8 = 1;
const BAD_INPUT: u8 = 2;

/// On SIGINT, SIGTERM or SIGHUP: removes the temporary files of outputs
/// not yet in place (a set of renames under way finishes first), then
/// exits with 128 + the signal number.
fn remove_temporaries_on_signals() {
    use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
    if let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGINT, SIGTERM, SIGHUP]) {
        std::thread::spawn(move || {
            if let Some(signal) = signals.forever().next() {
                evenkeel_harness::files::abandon_staged();
                std::process::exit(128 + signal);
            }
        });
    }
}

fn main() -> ExitCode {
    remove_temporaries_on_signals();
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
        Command::Design(args) => design::run(args),
        Command::Fit(args) => fit::run(args),
        Command::Replay(args) => replay::run(args),
        Command::Compare(args) => compare::run(args),
        Command::CConfig(args) => c_config::run(args),
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
    let mut out = output::Outputs::new(&output::paths(&args.scenarios));
    out.file("--json", args.json.as_deref())?;
    out.file("--junit", args.junit.as_deref())?;
    out.html("--html", args.html.as_deref())?;
    output::base_ok("--trace", args.trace.as_deref(), false)?;
    output::base_ok("--plot", args.plot.as_deref(), true)?;
    let scenarios = load_scenarios(&args.scenarios)?;
    let backends = args.backend.kinds();
    let mut plots: Vec<Vec<Option<String>>> = Vec::new();
    let files = output::PerRun {
        trace: args.trace.as_deref(),
        plot: args.plot.as_deref(),
        only: scenarios.len() * backends.len() == 1,
    };
    let names: Vec<(&str, &str, &str)> = scenarios
        .iter()
        .flat_map(|s| {
            backends
                .iter()
                .map(|b| (s.name.as_str(), s.source.as_str(), b.name()))
        })
        .collect();
    out.per_run(&files, &names)?;
    let mut outcomes = Vec::with_capacity(scenarios.len());
    for s in &scenarios {
        let mut outcome = Outcome {
            scenario: s.clone(),
            runs: Vec::with_capacity(backends.len()),
        };
        let mut svgs = Vec::with_capacity(backends.len());
        // One run at a time: its per-run files are staged, then its
        // samples dropped, so memory holds one recording at most.
        for b in &backends {
            let mut run = s
                .run_on(&[*b])
                .with_context(|| format!("{}: scenario `{}`", s.source, s.name))?
                .runs
                .remove(0);
            files.write(
                &mut out,
                &s.name,
                run.backend,
                |w| write_trace_csv(&run.recording, w),
                |path| Ok(plot::plot(s, &run, path)?),
            )?;
            // The HTML report draws the plot now: the samples go next.
            if args.html.is_some() {
                svgs.push(Some(plot::plot_svg(s, &run)?));
            }
            output::drop_samples(&mut run.recording);
            outcome.runs.push(run);
        }
        plots.push(svgs);
        outcomes.push(outcome);
    }
    out.json(args.json.as_deref(), || json(&outcomes))?;
    out.text(args.junit.as_deref(), || junit(&outcomes))?;
    out.text(args.html.as_deref(), || {
        evenkeel_harness::report::check_html(&outcomes, &plots)
    })?;
    let mut tables: String = outcomes.iter().map(ToString::to_string).collect();
    if outcomes.len() > 1 {
        tables.push_str(&summary(&outcomes));
    }
    out.finish(&tables)?;
    Ok(outcomes.iter().all(Outcome::passed))
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
