//! Report files and the summary table, shared by `check`, `compare`,
//! `sweep`, `merge` and `design`: every output is checked before the run
//! ([`OutputPlan`]), staged while the run goes ([`Staging`]) and put in
//! place together at the end, or not at all.

use std::path::{Path, PathBuf};

use anyhow::Context;
use evenkeel_harness::fault::FaultTrace;
pub(crate) use evenkeel_harness::files::shown;
use evenkeel_harness::files::{OutputPlan, Staging, printable};
use evenkeel_harness::report::per_run_path;
use evenkeel_harness::sim::Recording;

/// The file name a header written to `path` is known by (its include
/// guard is made from it): the last component, or `evenkeel_config.h` for
/// standard output.
pub(crate) fn header_file_name(path: &Path) -> String {
    match path.file_name() {
        Some(name) if path.as_os_str() != "-" => name.to_string_lossy().into_owned(),
        _ => "evenkeel_config.h".to_owned(),
    }
}

/// The outputs of one command run.
pub(crate) struct Outputs {
    plan: OutputPlan,
    staging: Staging,
}

impl Outputs {
    /// A run that reads `inputs`: no output may replace one of them.
    pub(crate) fn new<P: AsRef<Path>>(inputs: &[P]) -> Self {
        let mut plan = OutputPlan::new();
        for p in inputs {
            plan.input(p.as_ref());
        }
        Self {
            plan,
            staging: Staging::new(),
        }
    }

    /// Another input (e.g. a scenario named inside a shard file).
    pub(crate) fn input(&mut self, path: &Path) {
        self.plan.input(path);
    }

    /// The output of `flag` at `path`, if given (`-`: standard output).
    pub(crate) fn file(&mut self, flag: &str, path: Option<&Path>) -> anyhow::Result<()> {
        if let Some(p) = path {
            self.plan.file(flag, p)?;
        }
        Ok(())
    }

    /// An HTML report at `path`, if given: a file ending in `.html` or
    /// `.htm`, or `-` (standard output).
    pub(crate) fn html(&mut self, flag: &str, path: Option<&Path>) -> anyhow::Result<()> {
        if let Some(p) = path {
            self.plan.file(flag, p)?;
            let ext = p
                .extension()
                .map(|e| e.to_string_lossy().to_ascii_lowercase());
            if p.as_os_str() != "-" && !matches!(ext.as_deref(), Some("html" | "htm")) {
                anyhow::bail!("{flag} {}: the file must end in .html or .htm", shown(p));
            }
        }
        Ok(())
    }

    /// `--in-place`: `path` is the input, replaced on purpose.
    pub(crate) fn in_place(&mut self, flag: &str, path: &Path) -> anyhow::Result<()> {
        self.plan.in_place(flag, path)?;
        Ok(())
    }

    /// A plot at `path`, if given: `.svg` or `.png`, or `-` (SVG on
    /// standard output).
    pub(crate) fn plot(&mut self, flag: &str, path: Option<&Path>) -> anyhow::Result<()> {
        if let Some(p) = path {
            self.plan.file(flag, p)?;
            if p.as_os_str() != "-" {
                plot_extension_ok(flag, p)?;
            }
        }
        Ok(())
    }

    /// A directory outputs go into (created if missing).
    pub(crate) fn directory(&mut self, flag: &str, dir: Option<&Path>) -> anyhow::Result<()> {
        if let Some(d) = dir {
            self.plan.directory(flag, d)?;
        }
        Ok(())
    }

    /// A file derived from a flag (one per run, one per criterion);
    /// `what` names it in errors.
    pub(crate) fn derived(&mut self, what: &str, path: &Path) -> anyhow::Result<()> {
        self.plan
            .named_file(what, path, "one file per run is written")?;
        Ok(())
    }

    /// Per-run files of `--trace`/`--plot`: checks every name `runs`
    /// (scenario name, run label) will give, before anything runs.
    /// `runs` holds (scenario name, its source, run label).
    pub(crate) fn per_run(
        &mut self,
        files: &PerRun<'_>,
        runs: &[(&str, &str, &str)],
    ) -> anyhow::Result<()> {
        for (flag, base) in [("--trace", files.trace), ("--plot", files.plot)] {
            let Some(base) = base else { continue };
            if flag == "--plot" && base.as_os_str() != "-" {
                plot_extension_ok(flag, base)?;
            }
            if files.only {
                self.plan.file(flag, base)?;
                continue;
            }
            if base.as_os_str() == "-" {
                self.plan
                    .named_file(flag, base, &format!("{} runs, one file each", runs.len()))?;
            }
            for (scenario, source, label) in runs {
                let path = per_run_path(base, scenario, label, false);
                let what = format!(
                    "{flag} for `{}` ({}) on {label}",
                    printable(scenario),
                    printable(source)
                );
                self.derived(&what, &path)?;
            }
        }
        Ok(())
    }

    /// Creates `dir` for outputs if missing (removed again without a commit).
    pub(crate) fn make_directory(&mut self, dir: &Path) -> anyhow::Result<()> {
        self.staging
            .directory(dir)
            .with_context(|| format!("creating {}", printable(&dir.display().to_string())))
    }

    /// Stages `bytes` for `path`.
    pub(crate) fn bytes(&mut self, path: &Path, bytes: &[u8]) -> anyhow::Result<()> {
        self.staging
            .bytes(path, bytes)
            .with_context(|| format!("writing {}", shown(path)))
    }

    /// Stages what `write` streams for `path`.
    pub(crate) fn stream(
        &mut self,
        path: &Path,
        write: impl FnOnce(&mut dyn std::io::Write) -> std::io::Result<()>,
    ) -> anyhow::Result<()> {
        self.staging
            .stream(path, write)
            .with_context(|| format!("writing {}", shown(path)))
    }

    /// Stages the plot `draw` writes at the path it is given (`-`: SVG).
    pub(crate) fn drawn(
        &mut self,
        path: &Path,
        draw: impl FnOnce(&Path) -> anyhow::Result<()>,
    ) -> anyhow::Result<()> {
        if path.as_os_str() == "-" {
            return self.staging.with_path_as(path, "svg", draw);
        }
        self.staging.with_path(path, draw)
    }

    /// Stages the JSON value (pretty, with a final newline) for `path`.
    pub(crate) fn json(
        &mut self,
        path: Option<&Path>,
        value: impl FnOnce() -> serde_json::Value,
    ) -> anyhow::Result<()> {
        if let Some(p) = path {
            let text = serde_json::to_string_pretty(&value())? + "\n";
            self.bytes(p, text.as_bytes())?;
        }
        Ok(())
    }

    /// Stages the text `make` gives for `path`, if given.
    pub(crate) fn text(
        &mut self,
        path: Option<&Path>,
        make: impl FnOnce() -> String,
    ) -> anyhow::Result<()> {
        if let Some(p) = path {
            self.bytes(p, make().as_bytes())?;
        }
        Ok(())
    }

    /// Prints `tables` (on standard error when an output takes standard
    /// output, so that it stays machine-readable), then puts every staged
    /// output in place.
    pub(crate) fn finish(self, tables: &str) -> anyhow::Result<()> {
        if self.plan.stdout_taken_by().is_some() {
            eprint!("{tables}");
        } else {
            print!("{tables}");
        }
        pause_for_tests(self.staging.len());
        self.staging.commit().context("writing the reports")
    }
}

/// Test hook (DEVELOPERS.md): with `EVENKEEL_TEST_PAUSE_BEFORE_COMMIT_MS`
/// set, waits that long once every output is staged and before any is
/// renamed into place, and says so on standard error, so that a test can
/// interrupt a run at exactly that point. Without it, nothing.
fn pause_for_tests(staged: usize) {
    if let Some(ms) = std::env::var("EVENKEEL_TEST_PAUSE_BEFORE_COMMIT_MS")
        .ok()
        .and_then(|v| v.parse::<u64>().ok())
    {
        eprintln!("test hook: {staged} outputs staged, pausing {ms} ms before renaming them");
        std::thread::sleep(std::time::Duration::from_millis(ms));
    }
}

/// `--trace` and `--plot` of a command that writes one file per run,
/// named by [`per_run_path`].
pub(crate) struct PerRun<'a> {
    /// `--trace PATH.csv`.
    pub(crate) trace: Option<&'a Path>,
    /// `--plot PATH` (`.svg` or `.png`).
    pub(crate) plot: Option<&'a Path>,
    /// Only one run: the files are the paths given, without suffix.
    pub(crate) only: bool,
}

impl PerRun<'_> {
    /// Stages the trace (`to_csv` streams it) and the plot (`draw`) of
    /// the run `label` of `scenario`, each only when asked for.
    pub(crate) fn write(
        &self,
        out: &mut Outputs,
        scenario: &str,
        label: &str,
        to_csv: impl FnOnce(&mut dyn std::io::Write) -> std::io::Result<()>,
        draw: impl FnOnce(&Path) -> anyhow::Result<()>,
    ) -> anyhow::Result<()> {
        if let Some(base) = self.trace {
            out.stream(&per_run_path(base, scenario, label, self.only), to_csv)?;
        }
        if let Some(base) = self.plot {
            out.drawn(&per_run_path(base, scenario, label, self.only), draw)?;
        }
        Ok(())
    }
}

/// Checks a `--trace`/`--plot` base path before the scenarios load (its
/// directory exists, it is not a directory; `.svg`/`.png` for a plot);
/// the names derived from it are checked by [`Outputs::per_run`].
pub(crate) fn base_ok(flag: &str, base: Option<&Path>, plot: bool) -> anyhow::Result<()> {
    let Some(base) = base else { return Ok(()) };
    if base.as_os_str() == "-" {
        return Ok(());
    }
    OutputPlan::new().file(flag, base)?;
    if plot {
        plot_extension_ok(flag, base)?;
    }
    Ok(())
}

/// Drops the samples of `rec` once its files are staged (the reports
/// keep only the counts).
pub(crate) fn drop_samples(rec: &mut Recording) {
    *rec = Recording {
        backend: rec.backend,
        dt_s: rec.dt_s,
        time_s: Vec::new(),
        reference: Vec::new(),
        output: Vec::new(),
        measurement: Vec::new(),
        command: Vec::new(),
        applied: Vec::new(),
        accel: Vec::new(),
        status: Vec::new(),
        states: Vec::new(),
        load_shifts: rec.load_shifts,
        faults: FaultTrace {
            monitor_settings: rec.faults.monitor_settings,
            ..FaultTrace::default()
        },
    };
}

/// `--plot` must name an `.svg` or `.png` file.
fn plot_extension_ok(flag: &str, p: &Path) -> anyhow::Result<()> {
    let ext = p
        .extension()
        .map(|e| e.to_string_lossy().to_ascii_lowercase());
    if !matches!(ext.as_deref(), Some("svg" | "png")) {
        anyhow::bail!("{flag} {}: the file must end in .svg or .png", shown(p));
    }
    Ok(())
}

/// The paths of `files`, for [`Outputs::new`].
pub(crate) fn paths(files: &[PathBuf]) -> Vec<&Path> {
    files.iter().map(PathBuf::as_path).collect()
}
