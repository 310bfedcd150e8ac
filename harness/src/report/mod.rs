//! Reports of an [`Outcome`]: readable table, JSON, JUnit XML, CSV trace,
//! and the atomic file writing they share.
//!
//! Every report except the CSV time series carries [`CAUTION`].

mod csv;
mod html;
mod json;
mod junit;
mod pages;
mod table;

use std::io::Write;
use std::path::{Path, PathBuf};

pub use csv::{trace_csv, write_trace_csv};
pub use html::{HtmlPage, html_escape};
pub use json::json;
pub(crate) use junit::{Failure, JunitXml};
pub use junit::{junit, xml_escape};
pub use pages::{check_html, compare_html, sweep_html};
pub use table::{SIGNIFICANT_DIGITS, format_number, summary, table};

#[cfg(doc)]
use crate::outcome::Outcome;

/// The safety caution carried by every report.
pub const CAUTION: &str = "Engineering aid, not a certified safety function; ISO 26262 / IEC 61508 processes and local regulations govern real deployments.";

/// Writes `bytes` to `path` atomically: into a temporary file in the same
/// directory, flushed to disk, then renamed over `path`. On error the
/// temporary file is removed and `path` is untouched.
///
/// # Errors
/// The I/O error of creating, writing or renaming.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let (tmp, mut f) = crate::files::register_temp(&dir, None)?;
    let result = (|| {
        f.write_all(bytes)?;
        f.sync_all()?;
        drop(f);
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    crate::files::unregister_temp(&tmp);
    result
}

/// The file for one run when a report that holds one run (CSV, plot) is
/// asked for several: `base` itself when `only` is true, else
/// `STEM-SCENARIO-BACKEND.EXT` beside it, `SCENARIO` reduced by
/// [`safe_stem`](crate::files::safe_stem).
///
/// ```
/// use std::path::Path;
/// use evenkeel_harness::report::per_run_path;
/// let p = per_run_path(Path::new("out/run.csv"), "pump", "f32", false);
/// assert_eq!(p, Path::new("out/run-pump-f32.csv"));
/// assert_eq!(per_run_path(Path::new("run.csv"), "pump", "f32", true), Path::new("run.csv"));
/// ```
#[must_use]
pub fn per_run_path(base: &Path, scenario: &str, backend: &str, only: bool) -> PathBuf {
    if only {
        return base.to_path_buf();
    }
    let stem = base
        .file_stem()
        .map_or_else(String::new, |s| s.to_string_lossy().into_owned());
    let safe = crate::files::safe_stem(scenario);
    let mut name = format!("{stem}-{safe}-{backend}");
    if let Some(ext) = base.extension() {
        name.push('.');
        name.push_str(&ext.to_string_lossy());
    }
    base.with_file_name(name)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn atomic_write_replaces_and_leaves_no_temp() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("r.json");
        write_atomic(&path, b"one").unwrap();
        write_atomic(&path, b"two").unwrap();
        assert_eq!(std::fs::read(&path).unwrap(), b"two");
        let names: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
        assert_eq!(names.len(), 1);
        // Into a directory that does not exist: error, nothing written.
        assert!(write_atomic(&dir.path().join("no/such/r.json"), b"x").is_err());
    }
}
