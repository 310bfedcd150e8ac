//! `evenkeel sweep` and `evenkeel merge`: thin layers over
//! `evenkeel_harness::sweep`.

use std::io::IsTerminal;
use std::path::{Path, PathBuf};

use anyhow::Context;
use clap::{Args, ValueEnum};
use evenkeel_harness::files::safe_stem;
use evenkeel_harness::sweep::{self, Method, Shard, SweepPlan, SweepResult};
use evenkeel_harness::{BackendKind, Scenario};
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

use super::output::{self, Outputs};

#[derive(Args)]
pub struct SweepArgs {
    /// Scenario file (TOML) with an `[uncertainty]` table.
    scenario: PathBuf,
    /// Sampling method (default: the file's `[sweep]` method, else corners).
    #[arg(long, value_enum)]
    method: Option<MethodArg>,
    /// Variants for random and latin-hypercube sampling.
    #[arg(long)]
    count: Option<usize>,
    /// Values per parameter for grid sampling.
    #[arg(long)]
    levels: Option<usize>,
    /// Seed of the draws and of every variant's sensor noise.
    #[arg(long)]
    seed: Option<u64>,
    /// Numeric backend of the controller.
    #[arg(long, value_enum, default_value_t = OneBackend::Fixed)]
    backend: OneBackend,
    /// Run only shard I of N (1-based), e.g. 2/8; save it with --save and
    /// combine the shards with `evenkeel merge`.
    #[arg(long, value_name = "I/N")]
    shard: Option<Shard>,
    /// Worker threads (default: one per core).
    #[arg(long)]
    threads: Option<usize>,
    /// Save the full result (for `evenkeel merge`) as JSON to PATH.
    #[arg(long, value_name = "PATH")]
    save: Option<PathBuf>,
    #[command(flatten)]
    out: ReportArgs,
    /// No progress bar.
    #[arg(long, short)]
    quiet: bool,
}

#[derive(Args)]
pub struct MergeArgs {
    /// Result files written by `evenkeel sweep --shard I/N --save PATH`.
    #[arg(required = true)]
    results: Vec<PathBuf>,
    /// The scenario file (for --plot and --worst-dir; default: the path
    /// recorded in the results).
    #[arg(long)]
    scenario: Option<PathBuf>,
    /// Save the merged result as JSON to PATH.
    #[arg(long, value_name = "PATH")]
    save: Option<PathBuf>,
    #[command(flatten)]
    out: ReportArgs,
}

#[derive(Args)]
struct ReportArgs {
    /// Write the sweep report as JSON to PATH (`-`: standard output).
    #[arg(long, value_name = "PATH")]
    json: Option<PathBuf>,
    /// Write JUnit XML (one test case per criterion) to PATH (`-`:
    /// standard output).
    #[arg(long, value_name = "PATH")]
    junit: Option<PathBuf>,
    /// Envelope plot (min/max band over the variants, worst highlighted),
    /// SVG or PNG by extension.
    #[arg(long, value_name = "PATH")]
    plot: Option<PathBuf>,
    /// Write each criterion's worst variant as a scenario file into DIR, to
    /// re-run it alone with `evenkeel check`.
    #[arg(long, value_name = "DIR")]
    worst_dir: Option<PathBuf>,
}

impl ReportArgs {
    /// Checks the report paths and `--save` (`save`) before anything
    /// runs (see [`Outputs`]); `--worst-dir` is created if missing.
    fn plan(&self, inputs: &[&Path], save: Option<&Path>) -> anyhow::Result<Outputs> {
        let mut out = Outputs::new(inputs);
        out.file("--json", self.json.as_deref())?;
        out.file("--junit", self.junit.as_deref())?;
        out.plot("--plot", self.plot.as_deref())?;
        out.file("--save", save)?;
        out.directory("--worst-dir", self.worst_dir.as_deref())?;
        Ok(out)
    }

    /// The files `--worst-dir` may write for `scenario`'s criteria, each
    /// checked (inside the directory, not an input, no collision).
    fn plan_worst(&self, out: &mut Outputs, scenario: &Scenario) -> anyhow::Result<()> {
        if let Some(dir) = &self.worst_dir {
            for c in &scenario.criteria {
                let file = worst_file(dir, &scenario.name, c.metric.name(), c.bound.name());
                out.derived(&format!("--worst-dir for {}", c.metric.name()), &file)?;
            }
        }
        Ok(())
    }
}

/// `DIR/STEM-worst-METRIC.toml` (`…-METRIC-min.toml` for a lower bound),
/// the stem reduced by [`safe_stem`].
fn worst_file(dir: &Path, scenario: &str, metric: &str, bound: &str) -> PathBuf {
    let suffix = if bound == "min" { "-min" } else { "" };
    dir.join(format!(
        "{}-worst-{metric}{suffix}.toml",
        safe_stem(scenario)
    ))
}

#[derive(Clone, Copy, ValueEnum)]
enum MethodArg {
    Grid,
    Corners,
    Random,
    LatinHypercube,
}

#[derive(Clone, Copy, ValueEnum)]
pub(crate) enum OneBackend {
    Fixed,
    F32,
    F64,
}

impl OneBackend {
    /// The backend chosen.
    pub(crate) fn kind(self) -> BackendKind {
        match self {
            Self::Fixed => BackendKind::Fixed,
            Self::F32 => BackendKind::F32,
            Self::F64 => BackendKind::F64,
        }
    }
}

/// `evenkeel sweep`: `Ok(all variants passed)`.
pub fn sweep(args: &SweepArgs) -> anyhow::Result<bool> {
    let mut out = args
        .out
        .plan(&[args.scenario.as_path()], args.save.as_deref())?;
    let scenario = Scenario::from_path(&args.scenario)?;
    args.out.plan_worst(&mut out, &scenario)?;
    if scenario.uncertainty.is_empty() {
        anyhow::bail!(
            "{}: no [uncertainty] table: nothing to sweep (see docs/SCENARIO.md)",
            scenario.source
        );
    }
    let mut plan: SweepPlan = scenario.sweep.unwrap_or_default();
    if let Some(m) = args.method {
        plan.method = match m {
            MethodArg::Grid => Method::Grid,
            MethodArg::Corners => Method::Corners,
            MethodArg::Random => Method::Random,
            MethodArg::LatinHypercube => Method::LatinHypercube,
        };
    }
    if let Some(c) = args.count {
        anyhow::ensure!(c >= 1, "--count must be at least 1");
        plan.count = c;
    }
    if let Some(l) = args.levels {
        anyhow::ensure!(l >= 2, "--levels must be at least 2");
        plan.levels = l;
    }
    if let Some(s) = args.seed {
        plan.seed = s;
    }
    let backend = args.backend.kind();
    let total = plan
        .variants(scenario.uncertainty.len())
        .context("the design is too large")?;
    let todo = args.shard.map_or(total, |s| s.range(total).len());
    let bar = if args.quiet || !std::io::stderr().is_terminal() {
        ProgressBar::hidden()
    } else {
        let bar = ProgressBar::with_draw_target(Some(todo as u64), ProgressDrawTarget::stderr());
        bar.set_style(
            ProgressStyle::with_template(
                "{bar:40} {pos}/{len} variants, {elapsed} elapsed, eta {eta}",
            )
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
        );
        bar
    };
    let work = || sweep::run(&scenario, &plan, backend, args.shard, &|n| bar.inc(n));
    let result = match args.threads {
        Some(t) => rayon::ThreadPoolBuilder::new()
            .num_threads(t)
            .build()
            .context("starting the worker threads")?
            .install(work),
        None => work(),
    }
    .with_context(|| format!("{}: scenario `{}`", scenario.source, scenario.name))?;
    bar.finish_and_clear();
    if let Some(path) = &args.save {
        out.bytes(path, serde_json::to_string(&result)?.as_bytes())?;
    }
    report(out, &scenario, &result, &args.out)
}

/// `evenkeel merge`: `Ok(all variants passed)`.
pub fn merge(args: &MergeArgs) -> anyhow::Result<bool> {
    let mut inputs = output::paths(&args.results);
    if let Some(s) = &args.scenario {
        inputs.push(s);
    }
    let mut out = args.out.plan(&inputs, args.save.as_deref())?;
    let mut parts = Vec::with_capacity(args.results.len());
    for path in &args.results {
        let text =
            std::fs::read_to_string(path).with_context(|| format!("reading {}", path.display()))?;
        let part: SweepResult = serde_json::from_str(&text)
            .with_context(|| format!("{}: not a sweep result file", path.display()))?;
        parts.push(part);
    }
    let result = sweep::merge(parts)?;
    let source = args
        .scenario
        .clone()
        .unwrap_or_else(|| PathBuf::from(&result.source));
    out.input(&source);
    let scenario = Scenario::from_path(&source)?;
    args.out.plan_worst(&mut out, &scenario)?;
    anyhow::ensure!(
        sweep::fingerprint(&scenario) == result.fingerprint,
        "{}: the scenario changed since the shards ran (fingerprint differs)",
        source.display()
    );
    if let Some(path) = &args.save {
        out.bytes(path, serde_json::to_string(&result)?.as_bytes())?;
    }
    report(out, &scenario, &result, &args.out)
}

fn report(
    mut out: Outputs,
    scenario: &Scenario,
    result: &SweepResult,
    args: &ReportArgs,
) -> anyhow::Result<bool> {
    let summary = sweep::summarise(result);
    if let Some(path) = &args.plot {
        let backend = BackendKind::from_name(&result.backend).unwrap_or(BackendKind::Fixed);
        let worst = summary
            .worst_index
            .and_then(|i| sweep::variant_scenario(scenario, result, i))
            .map(|s| s.run_on(&[backend]))
            .transpose()?
            .and_then(|o| o.runs.into_iter().next());
        out.drawn(path, |p| {
            Ok(sweep::plot_envelope(scenario, result, worst.as_ref(), p)?)
        })?;
    }
    if let Some(dir) = &args.worst_dir {
        out.make_directory(dir)?;
        let text = std::fs::read_to_string(&scenario.source)
            .with_context(|| format!("reading {}", scenario.source))?;
        let mut done = Vec::new();
        for c in &summary.criteria {
            if done.contains(&c.worst_index) && c.passed == c.total {
                continue;
            }
            let file = worst_file(dir, &scenario.name, &c.criterion.metric, &c.criterion.bound);
            let body = sweep::variant_toml(&text, scenario, result, c.worst_index)
                .map_err(anyhow::Error::msg)?;
            out.bytes(&file, body.as_bytes())?;
            done.push(c.worst_index);
        }
    }
    out.json(args.json.as_deref(), || sweep::json(result))?;
    out.text(args.junit.as_deref(), || sweep::junit(result))?;
    out.finish(&sweep::table(result))?;
    Ok(summary.all_passed())
}
