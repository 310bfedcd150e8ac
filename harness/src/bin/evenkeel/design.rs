//! `evenkeel design`: a thin layer over `evenkeel_harness::design::tune`.

use std::path::{Path, PathBuf};

use anyhow::Context;
use clap::{Args, ValueEnum};
use evenkeel_harness::Scenario;
use evenkeel_harness::design::{self, HEADER_MARK, Options, Request, Tuned};

use super::output::{self, Outputs};
use super::robust::OneBackend;

#[derive(Args)]
pub struct DesignArgs {
    /// Scenario file (TOML): plant, `[uncertainty]`, criteria, `[design]`.
    scenario: PathBuf,
    /// Analytic rule for the starting point.
    #[arg(long, value_enum, default_value_t = DesignMethod::Simc)]
    method: DesignMethod,
    /// Closed-loop time constant at the slowest corner, s (default: from
    /// the rise and settling criteria).
    #[arg(long, value_name = "S", conflicts_with = "bandwidth_rad_s")]
    closed_loop_time_s: Option<f64>,
    /// Closed-loop bandwidth target, rad/s (same as a time constant 1/ω).
    #[arg(long, value_name = "RAD_S")]
    bandwidth_rad_s: Option<f64>,
    /// Damping ratio of the placed poles (pole placement).
    #[arg(long, default_value_t = 1.0)]
    damping: f64,
    /// Peak acceleration allowed (default: the peak_accel criterion).
    #[arg(long)]
    accel_limit: Option<f64>,
    /// Peak jerk allowed (default: the peak_jerk criterion).
    #[arg(long)]
    jerk_limit: Option<f64>,
    /// Numeric backend the verification runs the controller on.
    #[arg(long, value_enum, default_value_t = OneBackend::Fixed)]
    backend: OneBackend,
    /// Latin-hypercube variants verified on top of the corners and centre.
    #[arg(long, default_value_t = design::DEFAULT_COUNT)]
    count: usize,
    /// Seed of the sample (default: the `[sweep]` seed, else 0).
    #[arg(long)]
    seed: Option<u64>,
    /// Candidates the search may evaluate at most.
    #[arg(long, default_value_t = design::DEFAULT_BUDGET)]
    budget: usize,
    /// Verify the analytic proposal only; do not search.
    #[arg(long)]
    no_search: bool,
    /// Write the design as JSON to PATH (`-`: standard output).
    #[arg(long, value_name = "PATH")]
    json: Option<PathBuf>,
    /// Write JUnit XML (feasibility, one case per criterion and
    /// constraint, fixed point) to PATH (`-`: standard output).
    #[arg(long, value_name = "PATH")]
    junit: Option<PathBuf>,
    /// Frequency responses at every corner, Nyquist curves and the speed
    /// trade-off, SVG or PNG by extension.
    #[arg(long, value_name = "PATH")]
    plot: Option<PathBuf>,
    /// One self-contained HTML report (verdict, tables, the design plot
    /// inline, the caution) to PATH.
    #[arg(long, value_name = "PATH")]
    html: Option<PathBuf>,
    /// Write the scenario with the designed values put in (the file as
    /// written otherwise) to PATH; refuses the input file itself.
    #[arg(long, value_name = "PATH", conflicts_with = "in_place")]
    scenario_out: Option<PathBuf>,
    /// Write the designed values into SCENARIO itself (only when the
    /// design passes).
    #[arg(long)]
    in_place: bool,
    /// Write the firmware `const` configuration (Rust) to PATH (`-`:
    /// standard output).
    #[arg(long, value_name = "PATH")]
    rust_out: Option<PathBuf>,
    /// Write the configuration for C firmware to PATH (`-`: standard
    /// output): a header with the precomputed Q16.16 coefficients as a
    /// `static const EkcCoefficients`, loaded with `ekc_load` (no floating
    /// point on the target); with `--backend slim16` the 16-bit ones (the
    /// scaling verified), loaded with `ekc_slim_load`.
    #[arg(long, value_name = "PATH.h")]
    c_out: Option<PathBuf>,
}

#[derive(Clone, Copy, ValueEnum)]
enum DesignMethod {
    Simc,
    PolePlacement,
}

/// Checks every output before anything runs: none is the input (but
/// `--in-place`), none is another, each can be written.
fn plan_outputs(args: &DesignArgs) -> anyhow::Result<Outputs> {
    let mut out = Outputs::new(&[args.scenario.as_path()]);
    out.file("--json", args.json.as_deref())?;
    out.file("--junit", args.junit.as_deref())?;
    out.plot("--plot", args.plot.as_deref())?;
    out.file("--html", args.html.as_deref())?;
    if let Some(p) = args.scenario_out.as_deref() {
        out.file("--scenario-out", Some(p)).map_err(|e| {
            if e.to_string().contains("is an input") {
                anyhow::anyhow!(
                    "--scenario-out {}: that is the input scenario; refusing to overwrite it (give --in-place to write the design into it)",
                    output::shown(p)
                )
            } else {
                e
            }
        })?;
    }
    out.file("--rust-out", args.rust_out.as_deref())?;
    out.file("--c-out", args.c_out.as_deref())?;
    if args.in_place {
        out.in_place("--in-place", &args.scenario)?;
    }
    Ok(out)
}

/// `evenkeel design`: `Ok(true)` only when the design passes
/// ([`Tuned::passed`]).
pub fn run(args: &DesignArgs) -> anyhow::Result<bool> {
    let mut out = plan_outputs(args)?;
    anyhow::ensure!(
        args.count <= 100_000,
        "--count {}: at most 100000",
        args.count
    );
    anyhow::ensure!(args.budget >= 1, "--budget must be at least 1");
    let scenario = Scenario::from_path(&args.scenario)?;
    let request = Request {
        method: match args.method {
            DesignMethod::Simc => design::Method::Simc,
            DesignMethod::PolePlacement => design::Method::PolePlacement,
        },
        closed_loop_time_s: args
            .closed_loop_time_s
            .or_else(|| args.bandwidth_rad_s.map(|w| 1.0 / w)),
        damping: args.damping,
        accel_limit: args.accel_limit,
        jerk_limit: args.jerk_limit,
    };
    let mut options = Options::for_scenario(&scenario);
    options.backend = args.backend.kind();
    options.count = args.count;
    options.budget = args.budget;
    options.search = !args.no_search;
    if let Some(s) = args.seed {
        options.seed = s;
    }
    let tuned = design::tune(&scenario, &request, &options)?;
    let passed = tuned.passed();
    let mut text = design::report(&scenario, &tuned);
    let snippet = design::snippet(&scenario, &tuned);
    if args.rust_out.is_none() && tuned.feasibility.feasible() {
        text.push('\n');
        text.push_str(&snippet);
    }
    if let Some(path) = &args.rust_out
        && tuned.feasibility.feasible()
    {
        out.bytes(path, snippet.as_bytes())?;
    }
    if let Some(path) = &args.c_out
        && tuned.feasibility.feasible()
    {
        let header = design::c_header(
            &scenario,
            &tuned.settings,
            options.backend,
            &format!(
                "Proposed by `evenkeel design` ({})",
                design::provenance(&tuned)
            ),
            &output::header_file_name(path),
            &design::c_name(&scenario.name),
        )
        .map_err(|e| anyhow::anyhow!("--c-out: {e}"))?;
        out.bytes(path, header.as_bytes())?;
    }
    // Nothing is written when nothing was tuned (infeasible); the input
    // itself only when the design passes.
    let scenario_target = if !tuned.feasibility.feasible() {
        None
    } else if args.in_place {
        passed.then_some(args.scenario.as_path())
    } else {
        args.scenario_out.as_deref()
    };
    if let Some(path) = scenario_target {
        let source = std::fs::read_to_string(&args.scenario)
            .with_context(|| format!("reading {}", args.scenario.display()))?;
        let body = design::scenario_toml(&source, &tuned.settings, &header(&tuned))
            .map_err(|e| anyhow::anyhow!("{}: {e}", args.scenario.display()))?;
        out.bytes(path, body.as_bytes())?;
        text.push_str(&format!(
            "\nwrote {}{}\n",
            path.display(),
            if passed {
                ""
            } else {
                " (the best loop found, which FAILS: see above)"
            }
        ));
    } else if args.in_place || args.scenario_out.is_some() {
        text.push_str(&format!(
            "\n{} not written: the design does not pass{}\n",
            if args.in_place {
                args.scenario.display()
            } else {
                args.scenario_out
                    .as_deref()
                    .unwrap_or(Path::new("-"))
                    .display()
            },
            if tuned.feasibility.feasible() {
                ""
            } else {
                " (infeasible: nothing was tuned)"
            }
        ));
    }
    let trade = (args.plot.is_some() || args.html.is_some())
        .then(|| design::trade_off(&scenario, &tuned.settings, options.backend, options.seed));
    if let (Some(path), Some(trade)) = (&args.plot, &trade) {
        out.drawn(path, |p| Ok(design::plot(&scenario, &tuned, trade, p)?))?;
    }
    if let (Some(path), Some(trade)) = (&args.html, &trade) {
        let svg = design::plot_svg(&scenario, &tuned, trade)?;
        out.bytes(path, design::html(&scenario, &tuned, Some(&svg)).as_bytes())?;
    }
    out.json(args.json.as_deref(), || design::json(&scenario, &tuned))?;
    out.text(args.junit.as_deref(), || design::junit(&scenario, &tuned))?;
    out.finish(&text)?;
    Ok(passed)
}

/// The lines `design` puts on top of a scenario it writes.
fn header(t: &Tuned) -> Vec<String> {
    let v = t.verification.as_ref();
    vec![
        format!(
            "{HEADER_MARK} [controller] designed by `evenkeel design`, verified on {} over {} variants: {} (worst margin {:+.3})",
            t.options.backend.name(),
            v.map_or(0, |v| v.variants.len()),
            if t.passed() { "PASS" } else { "FAIL" },
            t.search.final_worst
        ),
        format!("{HEADER_MARK} {}", evenkeel_harness::CAUTION),
    ]
}
