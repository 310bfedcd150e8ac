//! `evenkeel sweep` and `evenkeel merge`: thin layers over
//! `evenkeel_harness::sweep`.

use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::time::{Duration, Instant};

use anyhow::Context;
use clap::{Args, ValueEnum};
use evenkeel_harness::files::safe_stem;
use evenkeel_harness::sweep::{self, Method, Shard, SweepPlan};
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
    /// Values per parameter for grid sampling (and for --map, default 21).
    #[arg(long)]
    levels: Option<usize>,
    /// Also draw the robustness map over two uncertain parameters
    /// (`X,Y`, keys of `[uncertainty]`; the others at their centre): the
    /// worst criterion margin as colour, the pass boundary, the binding
    /// criterion per region. Its points count in the exit status.
    #[arg(long, value_name = "X,Y")]
    map: Option<String>,
    /// Where the map goes (SVG or PNG by extension); without it the map is
    /// summarised in the table only.
    #[arg(long, value_name = "PATH", requires = "map")]
    map_plot: Option<PathBuf>,
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
    /// Write one self-contained HTML report (criteria table, envelope plot
    /// and robustness map inline, the caution) to PATH.
    #[arg(long, value_name = "PATH.html")]
    html: Option<PathBuf>,
}

impl ReportArgs {
    /// Checks the report paths and `--save` (`save`) before anything
    /// runs (see [`Outputs`]); `--worst-dir` is created if missing.
    fn plan(&self, inputs: &[&Path], save: Option<&Path>) -> anyhow::Result<Outputs> {
        let mut out = Outputs::new(inputs);
        out.file("--json", self.json.as_deref())?;
        out.file("--junit", self.junit.as_deref())?;
        out.plot("--plot", self.plot.as_deref())?;
        out.html("--html", self.html.as_deref())?;
        out.file("--save", save)?;
        out.directory("--worst-dir", self.worst_dir.as_deref())?;
        Ok(out)
    }

    /// The files `--worst-dir` may write for `scenario`'s criteria, each
    /// checked (inside the directory, not an input, no collision).
    fn plan_worst(&self, out: &mut Outputs, scenario: &Scenario) -> anyhow::Result<()> {
        if let Some(dir) = &self.worst_dir {
            for c in &scenario.criteria {
                let file = worst_file(dir, &scenario.name, &c.label(), c.bound.name());
                out.derived(&format!("--worst-dir for {}", c.label()), &file)?;
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
        "{}-worst-{}{suffix}.toml",
        safe_stem(scenario),
        safe_stem(metric)
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
    Slim16,
    F32,
    F64,
}

impl OneBackend {
    /// The backend chosen.
    pub(crate) fn kind(self) -> BackendKind {
        match self {
            Self::Fixed => BackendKind::Fixed,
            Self::Slim16 => BackendKind::Slim16,
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
    let map = match &args.map {
        Some(spec) => {
            let (x, y) = spec.split_once(',').with_context(|| {
                format!("--map {spec}: expected two parameters X,Y, e.g. mass_kg,actuator_gain_n")
            })?;
            Some((x.trim().to_owned(), y.trim().to_owned()))
        }
        None => None,
    };
    out.plot("--map-plot", args.map_plot.as_deref())?;
    let total = plan.size(scenario.uncertainty.len())?;
    let todo = args.shard.map_or(total, |s| s.range(total).len());
    if let Some(t) = args.threads {
        anyhow::ensure!(t >= 1, "--threads must be at least 1");
        // The process runs one sweep: its global pool gets `t` threads.
        rayon::ThreadPoolBuilder::new()
            .num_threads(t)
            .build_global()
            .context("starting the worker threads")?;
    }
    let threads = rayon::current_num_threads();
    if !args.quiet {
        estimate(&scenario, &plan, backend, total, todo, threads);
    }
    let progress = Progress::start(todo, args.quiet);
    let header = sweep::SweepHeader::new(&scenario, &plan, backend, total, args.shard);
    let mut streamed = None;
    let work = |sink: &mut dyn FnMut(&sweep::VariantResult) -> Result<(), String>| {
        sweep::stream(
            &scenario,
            &plan,
            backend,
            args.shard,
            &|n| progress.inc(n),
            sink,
        )
    };
    match &args.save {
        Some(path) => out.stream(path, |w| {
            let mut file = sweep::ResultWriter::new(w, &header).map_err(std::io::Error::other)?;
            let s =
                work(&mut |v| file.variant(v)).map_err(|e| std::io::Error::other(e.to_string()))?;
            file.finish(&s.envelope).map_err(std::io::Error::other)?;
            streamed = Some(s);
            Ok(())
        })?,
        None => {
            streamed =
                Some(work(&mut |_| Ok(())).with_context(|| {
                    format!("{}: scenario `{}`", scenario.source, scenario.name)
                })?);
        }
    }
    progress.finish();
    let streamed = streamed.context("the sweep did not run")?;
    let mut map_html = None;
    let map_passed = match &map {
        Some((x, y)) => {
            let m = evenkeel_harness::map::robustness_map(
                &scenario,
                x,
                y,
                args.levels.unwrap_or(21),
                backend,
            )?;
            let total = m.xs.len() * m.ys.len();
            let line = format!(
                "map over {} and {} ({} x {} points, the other parameters at their centre): {} of {total} pass",
                m.x,
                m.y,
                m.xs.len(),
                m.ys.len(),
                m.passing()
            );
            eprintln!("{line}");
            if args.out.html.is_some() {
                map_html = Some((line, evenkeel_harness::map::plot_svg(&scenario, &m)?));
            }
            if let Some(p) = &args.map_plot {
                out.drawn(p, |path| {
                    Ok(evenkeel_harness::map::plot(&scenario, &m, path)?)
                })?;
            }
            m.passing() == total
        }
        None => true,
    };
    Ok(report(out, &scenario, &streamed, &args.out, map_html)? && map_passed)
}

/// Prints the estimated duration of a sweep that will take a while
/// (over 10 s): one variant is timed first, on this thread.
fn estimate(
    scenario: &Scenario,
    plan: &SweepPlan,
    backend: BackendKind,
    total: usize,
    todo: usize,
    threads: usize,
) {
    if todo < 8 {
        return;
    }
    let design = sweep::Design::new(&scenario.uncertainty, plan, total.min(1));
    let probe = sweep::apply_variant(scenario, &design.point(0), 0);
    let started = Instant::now();
    if probe.run_on(&[backend]).is_err() {
        return;
    }
    let one = started.elapsed().as_secs_f64();
    #[allow(clippy::cast_precision_loss)]
    let seconds = one * todo as f64 / threads.max(1) as f64;
    if seconds >= 10.0 {
        eprintln!(
            "sweep: {todo} variants on {threads} threads, about {} (one variant took {:.1} ms)",
            duration_text(seconds),
            one * 1e3
        );
    }
}

/// `3 h 12 min`, `4 min 5 s`, `12 s`.
fn duration_text(seconds: f64) -> String {
    // Whole seconds for humans.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let s = seconds.max(0.0).round() as u64;
    match s {
        0..60 => format!("{s} s"),
        60..3600 => format!("{} min {} s", s / 60, s % 60),
        _ => format!("{} h {} min", s / 3600, (s % 3600) / 60),
    }
}

/// Progress of a sweep on standard error: a bar on a terminal, else a
/// line every [`PROGRESS_EVERY`]; nothing with `--quiet`.
struct Progress {
    bar: ProgressBar,
    done: Arc<AtomicU64>,
    stop: Arc<AtomicBool>,
    lines: Option<std::thread::JoinHandle<()>>,
}

/// How often a progress line is printed off a terminal.
const PROGRESS_EVERY: Duration = Duration::from_secs(5);

impl Progress {
    fn start(todo: usize, quiet: bool) -> Self {
        let done = Arc::new(AtomicU64::new(0));
        let stop = Arc::new(AtomicBool::new(false));
        let terminal = std::io::stderr().is_terminal();
        let bar = if quiet || !terminal {
            ProgressBar::hidden()
        } else {
            let bar =
                ProgressBar::with_draw_target(Some(todo as u64), ProgressDrawTarget::stderr());
            bar.set_style(
                ProgressStyle::with_template(
                    "{bar:40} {pos}/{len} variants, {elapsed} elapsed, eta {eta}",
                )
                .unwrap_or_else(|_| ProgressStyle::default_bar()),
            );
            bar
        };
        let lines = (!quiet && !terminal).then(|| {
            let (done, stop) = (Arc::clone(&done), Arc::clone(&stop));
            std::thread::spawn(move || {
                let started = Instant::now();
                let mut next = PROGRESS_EVERY;
                while !stop.load(Ordering::Relaxed) {
                    std::thread::sleep(Duration::from_millis(100));
                    let elapsed = started.elapsed();
                    if elapsed < next {
                        continue;
                    }
                    next += PROGRESS_EVERY;
                    let n = done.load(Ordering::Relaxed);
                    #[allow(clippy::cast_precision_loss)]
                    let (n_f, todo_f) = (n as f64, todo.max(1) as f64);
                    let left = if n > 0 {
                        format!(
                            ", about {} left",
                            duration_text(elapsed.as_secs_f64() * (todo_f - n_f) / n_f)
                        )
                    } else {
                        String::new()
                    };
                    eprintln!(
                        "sweep: {n} of {todo} variants ({:.1} %), {} elapsed{left}",
                        100.0 * n_f / todo_f,
                        duration_text(elapsed.as_secs_f64())
                    );
                }
            })
        });
        Self {
            bar,
            done,
            stop,
            lines,
        }
    }

    fn inc(&self, n: u64) {
        self.bar.inc(n);
        self.done.fetch_add(n, Ordering::Relaxed);
    }

    fn finish(mut self) {
        self.bar.finish_and_clear();
        self.stop.store(true, Ordering::Relaxed);
        if let Some(h) = self.lines.take() {
            let _ = h.join();
        }
    }
}

/// `evenkeel merge`: `Ok(all variants passed)`.
pub fn merge(args: &MergeArgs) -> anyhow::Result<bool> {
    let mut inputs = output::paths(&args.results);
    if let Some(s) = &args.scenario {
        inputs.push(s);
    }
    let mut out = args.out.plan(&inputs, args.save.as_deref())?;
    let open = |path: &PathBuf| -> anyhow::Result<(String, Box<dyn std::io::BufRead>)> {
        let name = output::shown(path);
        let file = input_file(path)?;
        Ok((name, Box::new(std::io::BufReader::new(file))))
    };
    // The scenario: given, or named in the first file's header.
    let source = match &args.scenario {
        Some(s) => s.clone(),
        None => {
            let (name, reader) = open(&args.results[0])?;
            let (_, header) =
                sweep::ResultReader::open(reader, &name).map_err(anyhow::Error::msg)?;
            PathBuf::from(header.source)
        }
    };
    out.input(&source);
    let scenario = Scenario::from_path(&source)?;
    args.out.plan_worst(&mut out, &scenario)?;
    let files = args
        .results
        .iter()
        .map(open)
        .collect::<anyhow::Result<Vec<_>>>()?;
    let streamed = match &args.save {
        Some(path) => {
            let mut streamed = None;
            out.stream(path, |w| {
                let (name, reader) =
                    open(&args.results[0]).map_err(|e| std::io::Error::other(e.to_string()))?;
                let (_, mut header) =
                    sweep::ResultReader::open(reader, &name).map_err(std::io::Error::other)?;
                header.shard = None;
                header.source.clone_from(&scenario.source);
                let mut file =
                    sweep::ResultWriter::new(w, &header).map_err(std::io::Error::other)?;
                let s = sweep::merge_files(files, &scenario, &mut |v| file.variant(v))
                    .map_err(|e| std::io::Error::other(e.to_string()))?;
                file.finish(&s.envelope).map_err(std::io::Error::other)?;
                streamed = Some(s);
                Ok(())
            })?;
            streamed.context("the merge did not run")?
        }
        None => sweep::merge_files(files, &scenario, &mut |_| Ok(()))?,
    };
    report(out, &scenario, &streamed, &args.out, None)
}

/// Opens an input file: a regular file (not a directory, device or
/// pipe).
fn input_file(path: &Path) -> anyhow::Result<std::fs::File> {
    let file =
        std::fs::File::open(path).with_context(|| format!("reading {}", output::shown(path)))?;
    let meta = file
        .metadata()
        .with_context(|| format!("reading {}", output::shown(path)))?;
    anyhow::ensure!(
        meta.is_file(),
        "{}: not a regular file (a directory, device or pipe)",
        output::shown(path)
    );
    Ok(file)
}

fn report(
    mut out: Outputs,
    scenario: &Scenario,
    s: &sweep::Streamed,
    args: &ReportArgs,
    map: Option<(String, String)>,
) -> anyhow::Result<bool> {
    let (header, tally) = (&s.header, &s.tally);
    // Each panel's own worst variant, each distinct one run once.
    let mut reruns: Vec<(usize, evenkeel_harness::outcome::BackendRun)> = Vec::new();
    let chosen = sweep::panel_worst(tally);
    if args.plot.is_some() || args.html.is_some() {
        let backend = BackendKind::from_name(&header.backend).unwrap_or(BackendKind::Fixed);
        for (w, _) in chosen.iter().flatten() {
            if reruns.iter().any(|(i, _)| *i == w.variant.index) {
                continue;
            }
            let v = sweep::apply_variant(scenario, &w.variant.values, w.variant.seed);
            if let Some(run) = v.run_on(&[backend])?.runs.into_iter().next() {
                reruns.push((w.variant.index, run));
            }
        }
    }
    let runs: sweep::PanelRuns<'_> = std::array::from_fn(|i| {
        chosen[i].as_ref().and_then(|(w, _)| {
            reruns
                .iter()
                .find(|(k, _)| *k == w.variant.index)
                .map(|(_, r)| r)
        })
    });
    if let Some(path) = &args.html {
        let svg = sweep::plot_envelope_svg(scenario, header, tally, &s.envelope, &runs)?;
        let page = evenkeel_harness::report::sweep_html(
            header,
            tally,
            Some(&svg),
            map.as_ref().map(|(t, m)| (t.as_str(), m.as_str())),
        );
        out.bytes(path, page.as_bytes())?;
    }
    if let Some(path) = &args.plot {
        out.drawn(path, |p| {
            Ok(sweep::plot_envelope_of(
                scenario,
                header,
                tally,
                &s.envelope,
                &runs,
                p,
            )?)
        })?;
    }
    if let Some(dir) = &args.worst_dir {
        out.make_directory(dir)?;
        let text = std::fs::read_to_string(&scenario.source)
            .with_context(|| format!("reading {}", scenario.source))?;
        let mut done = Vec::new();
        for c in &tally.criteria {
            let Some(w) = &c.worst else { continue };
            if done.contains(&w.variant.index) && c.passed == c.total {
                continue;
            }
            let file = worst_file(dir, &scenario.name, &c.criterion.metric, &c.criterion.bound);
            let body = sweep::variant_toml_of(&text, scenario, header, &w.variant)
                .map_err(anyhow::Error::msg)?;
            out.bytes(&file, body.as_bytes())?;
            done.push(w.variant.index);
        }
    }
    out.json(args.json.as_deref(), || sweep::json_of(header, tally))?;
    out.text(args.junit.as_deref(), || sweep::junit_of(header, tally))?;
    out.finish(&sweep::table_of(header, tally))?;
    Ok(tally.all_passed())
}
