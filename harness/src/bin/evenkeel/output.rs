//! Report files and the summary table, shared by `check`, `compare`,
//! `sweep`, `merge` and `design`: where the table goes, `--json`, `--junit`,
//! one `--trace`/`--plot` file per run, and the checks on report paths.

use std::io::Write;
use std::path::Path;

use anyhow::Context;
use evenkeel_harness::report::{per_run_path, write_atomic};
use serde_json::Value;

/// Prints `tables`, then writes the JSON (`json` given the value of
/// `to_json`) and the JUnit XML (`junit` given `to_junit`) asked for.
///
/// `json` may be `-`: the JSON then goes to standard output and the tables
/// to standard error, so that standard output stays machine-readable.
pub(crate) fn summary(
    tables: &str,
    json: Option<&Path>,
    to_json: impl FnOnce() -> Value,
    junit: Option<&Path>,
    to_junit: impl FnOnce() -> String,
) -> anyhow::Result<()> {
    let json_to_stdout = json == Some(Path::new("-"));
    if json_to_stdout {
        eprint!("{tables}");
    } else {
        print!("{tables}");
    }
    if let Some(path) = json {
        let text = serde_json::to_string_pretty(&to_json())? + "\n";
        if json_to_stdout {
            std::io::stdout().write_all(text.as_bytes())?;
        } else {
            write(path, text.as_bytes())?;
        }
    }
    if let Some(path) = junit {
        write(path, to_junit().as_bytes())?;
    }
    Ok(())
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
    /// Writes the trace (`to_csv`) and then draws the plot (`draw`) of the
    /// run `label` of `scenario`, each only when asked for.
    pub(crate) fn write(
        &self,
        scenario: &str,
        label: &str,
        to_csv: impl FnOnce() -> String,
        draw: impl FnOnce(&Path) -> anyhow::Result<()>,
    ) -> anyhow::Result<()> {
        if let Some(base) = self.trace {
            let path = per_run_path(base, scenario, label, self.only);
            write(&path, to_csv().as_bytes())?;
        }
        if let Some(base) = self.plot {
            draw(&per_run_path(base, scenario, label, self.only))?;
        }
        Ok(())
    }
}

/// Writes `bytes` to `path` atomically; the error names the path.
pub(crate) fn write(path: &Path, bytes: &[u8]) -> anyhow::Result<()> {
    write_atomic(path, bytes).with_context(|| format!("writing {}", path.display()))
}

/// Refuses, before anything runs, report paths that could not be written:
/// a directory that does not exist, a directory in place of a file, a
/// `--plot` that is not `.svg` or `.png`. So a bad path never leaves some
/// reports written and others not, nor wastes a long run. `-` (standard
/// output) is always accepted.
pub(crate) fn check_report_paths(
    files: &[Option<&Path>],
    plot: Option<&Path>,
) -> anyhow::Result<()> {
    for path in files.iter().copied().chain([plot]).flatten() {
        if path.as_os_str() != "-" {
            report_dir_exists(path)?;
        }
    }
    plot_extension_ok(plot)
}

/// The directory a report goes into must exist (reports are written
/// atomically into it; nothing creates it), and `path` must not be a
/// directory itself.
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
