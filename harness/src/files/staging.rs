//! All-or-nothing writing: temporary files beside their targets, renamed
//! together.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU32, Ordering};
use std::sync::{Mutex, MutexGuard, PoisonError};

/// Temporary files (and directories created for outputs) that exist now
/// and are not yet renamed into place. A signal handler removes them
/// ([`abandon_staged`]); the lock is held while a set of outputs is
/// renamed, so a signal waits for that set to be complete.
static LIVE: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

fn live() -> MutexGuard<'static, Vec<PathBuf>> {
    LIVE.lock().unwrap_or_else(PoisonError::into_inner)
}

/// A fresh temporary path in `dir`, ending in `ext` (the target's
/// extension, so that writers choosing a format by extension still
/// work): `.evenkeel-PID-N.tmp[.EXT]`. Short whatever the target's name.
fn temp_path(dir: &Path, ext: Option<&std::ffi::OsStr>) -> PathBuf {
    static COUNTER: AtomicU32 = AtomicU32::new(0);
    let mut name = format!(
        ".evenkeel-{}-{}.tmp",
        std::process::id(),
        COUNTER.fetch_add(1, Ordering::Relaxed)
    );
    if let Some(ext) = ext.and_then(|e| e.to_str()) {
        name.push('.');
        name.push_str(ext);
    }
    dir.join(name)
}

/// The directory `path` goes into (`.` for a bare file name).
fn dir_of(path: &Path) -> PathBuf {
    match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// Creates a new, empty temporary file in `dir` (extension `ext`) and
/// registers it for removal on a signal; the file is created while the
/// registry is locked, so a signal either finds it registered or comes
/// before it exists.
///
/// # Errors
/// The I/O error of creating it.
pub fn register_temp(
    dir: &Path,
    ext: Option<&std::ffi::OsStr>,
) -> std::io::Result<(PathBuf, std::fs::File)> {
    let mut live = live();
    let path = temp_path(dir, ext);
    let file = std::fs::File::create_new(&path)?;
    live.push(path.clone());
    Ok((path, file))
}

/// Removes the temporary file `temp` and forgets it.
fn discard(temp: &Path) {
    let _ = std::fs::remove_file(temp);
    unregister_temp(temp);
}

/// Forgets `path` (renamed into place or removed).
pub fn unregister_temp(path: &Path) {
    live().retain(|p| p != path);
}

/// Removes every temporary file not yet renamed into place, and every
/// directory created for outputs if it is empty again, then keeps the
/// registry locked (for good): meant for a SIGINT/SIGTERM handler that
/// exits the process right after. A set of renames in progress finishes
/// first.
pub fn abandon_staged() {
    let mut live = live();
    // Files first, then the directories they were in (newest first).
    for path in live.iter().rev() {
        if path.is_dir() {
            let _ = std::fs::remove_dir(path);
        } else {
            let _ = std::fs::remove_file(path);
        }
    }
    live.clear();
    std::mem::forget(live);
}

/// Where a staged output goes.
#[derive(Debug)]
struct Entry {
    temp: PathBuf,
    target: PathBuf,
}

/// The outputs of one run, written to temporary files and then renamed
/// into place together ([`Staging::commit`]), or not at all.
///
/// Each temporary file lies in the directory of its target (so the
/// rename is atomic) and is flushed to disk before any rename. Dropping a
/// `Staging` without committing (an error, a panic) removes every
/// temporary file and every directory it created. An output for standard
/// output (`-`) is held in memory and printed after the files are in
/// place (a plot for standard output is drawn into the system's temporary
/// directory first and read back at once).
///
/// ```
/// use evenkeel_harness::files::Staging;
/// let dir = tempfile::tempdir()?;
/// let (a, b) = (dir.path().join("a.json"), dir.path().join("b.xml"));
/// let mut staging = Staging::new();
/// staging.bytes(&a, b"{}")?;
/// let failed = staging.bytes(&dir.path().join("no/such/b.xml"), b"<x/>");
/// assert!(failed.is_err());
/// drop(staging); // an error: nothing is written
/// assert!(!a.exists() && std::fs::read_dir(dir.path())?.count() == 0);
///
/// let mut staging = Staging::new();
/// staging.bytes(&a, b"{}")?;
/// staging.bytes(&b, b"<x/>")?;
/// staging.commit()?;
/// assert!(a.exists() && b.exists());
/// # Ok::<(), std::io::Error>(())
/// ```
#[derive(Debug, Default)]
pub struct Staging {
    entries: Vec<Entry>,
    created_dirs: Vec<PathBuf>,
    /// What goes to standard output, in order, held in memory.
    stdout: Vec<Vec<u8>>,
}

impl Staging {
    /// Nothing staged yet.
    #[must_use]
    pub fn new() -> Self {
        Self::default()
    }

    /// Creates directory `dir` for outputs if it does not exist (its
    /// parent must); it is removed again if the run does not commit.
    ///
    /// # Errors
    /// The I/O error of creating it.
    pub fn directory(&mut self, dir: &Path) -> std::io::Result<()> {
        if dir.is_dir() {
            return Ok(());
        }
        let mut live = live();
        std::fs::create_dir(dir)?;
        live.push(dir.to_path_buf());
        self.created_dirs.push(dir.to_path_buf());
        Ok(())
    }

    /// Stages `bytes` for `target` (`-`: standard output).
    ///
    /// # Errors
    /// The I/O error of writing the temporary file (which is then removed).
    pub fn bytes(&mut self, target: &Path, bytes: &[u8]) -> std::io::Result<()> {
        self.stream(target, |w| w.write_all(bytes))
    }

    /// Stages what `write` writes for `target` (`-`: standard output).
    ///
    /// # Errors
    /// The I/O error of `write` or of flushing (the temporary file is then
    /// removed).
    pub fn stream(
        &mut self,
        target: &Path,
        write: impl FnOnce(&mut dyn Write) -> std::io::Result<()>,
    ) -> std::io::Result<()> {
        if target.as_os_str() == "-" {
            let mut buf = Vec::new();
            write(&mut buf)?;
            self.stdout.push(buf);
            return Ok(());
        }
        let (temp, file) = self.open(target)?;
        let mut out = std::io::BufWriter::new(file);
        let result = write(&mut out)
            .and_then(|()| {
                out.into_inner()
                    .map_err(std::io::IntoInnerError::into_error)
            })
            .and_then(|f| f.sync_all());
        self.settle(temp, target, result)
    }

    /// Stages the file that `write` creates at the path it is given (a
    /// temporary path with `target`'s extension), for writers that take a
    /// path (plots).
    ///
    /// # Errors
    /// The error of `write` (the temporary file is then removed), or the
    /// I/O error of creating the temporary file (as `E::from`).
    pub fn with_path<E: From<std::io::Error>>(
        &mut self,
        target: &Path,
        write: impl FnOnce(&Path) -> Result<(), E>,
    ) -> Result<(), E> {
        let ext = target.extension().map(std::ffi::OsStr::to_os_string);
        self.with_path_as(
            target,
            ext.as_deref().and_then(|e| e.to_str()).unwrap_or(""),
            write,
        )
    }

    /// As [`Staging::with_path`], the temporary path ending in `.ext`
    /// whatever `target` is (`-` for an SVG on standard output).
    ///
    /// # Errors
    /// As [`Staging::with_path`].
    pub fn with_path_as<E: From<std::io::Error>>(
        &mut self,
        target: &Path,
        ext: &str,
        write: impl FnOnce(&Path) -> Result<(), E>,
    ) -> Result<(), E> {
        let ext = (!ext.is_empty()).then(|| std::ffi::OsStr::new(ext));
        let to_stdout = target.as_os_str() == "-";
        let (temp, file) = register_temp(&self.dir_for(target), ext)?;
        drop(file);
        match write(&temp) {
            Ok(()) if to_stdout => {
                let read = std::fs::read(&temp);
                discard(&temp);
                self.stdout.push(read?);
                Ok(())
            }
            Ok(()) => {
                self.push(temp, target);
                Ok(())
            }
            Err(e) => {
                discard(&temp);
                Err(e)
            }
        }
    }

    fn dir_for(&self, target: &Path) -> PathBuf {
        if target.as_os_str() == "-" {
            std::env::temp_dir()
        } else {
            dir_of(target)
        }
    }

    fn open(&mut self, target: &Path) -> std::io::Result<(PathBuf, std::fs::File)> {
        register_temp(&self.dir_for(target), target.extension())
    }

    fn settle(
        &mut self,
        temp: PathBuf,
        target: &Path,
        result: std::io::Result<()>,
    ) -> std::io::Result<()> {
        if result.is_ok() {
            self.push(temp, target);
        } else {
            discard(&temp);
        }
        result
    }

    fn push(&mut self, temp: PathBuf, target: &Path) {
        self.entries.push(Entry {
            temp,
            target: target.to_path_buf(),
        });
    }

    /// Number of outputs staged.
    #[must_use]
    pub fn len(&self) -> usize {
        self.entries.len() + self.stdout.len()
    }

    /// `true` when nothing is staged.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.entries.is_empty() && self.stdout.is_empty()
    }

    /// Renames every staged file into place (a signal waits until all
    /// are), then copies what goes to standard output there.
    ///
    /// A target that became something other than a regular file since
    /// the checks is refused before any rename.
    ///
    /// # Errors
    /// The I/O error of a rename or of standard output; the error names
    /// the files already in place, if any.
    pub fn commit(mut self) -> std::io::Result<()> {
        let entries = std::mem::take(&mut self.entries);
        {
            let mut live = live();
            let forget = |live: &mut Vec<PathBuf>, rest: &[Entry]| {
                for e in rest {
                    let _ = std::fs::remove_file(&e.temp);
                    live.retain(|p| p != &e.temp);
                }
            };
            for e in &entries {
                if let Ok(m) = std::fs::symlink_metadata(&e.target)
                    && !m.is_file()
                {
                    forget(&mut live, &entries);
                    return Err(std::io::Error::other(format!(
                        "{} is no longer a regular file: nothing written",
                        e.target.display()
                    )));
                }
            }
            let mut done: Vec<String> = Vec::new();
            for (i, e) in entries.iter().enumerate() {
                if let Err(err) = std::fs::rename(&e.temp, &e.target) {
                    forget(&mut live, &entries[i..]);
                    let written = if done.is_empty() {
                        String::new()
                    } else {
                        format!(" (already replaced: {})", done.join(", "))
                    };
                    return Err(std::io::Error::new(
                        err.kind(),
                        format!("renaming into {}: {err}{written}", e.target.display()),
                    ));
                }
                done.push(e.target.display().to_string());
                live.retain(|p| p != &e.temp);
            }
            // Created directories now hold their outputs: keep them.
            for d in self.created_dirs.drain(..) {
                live.retain(|p| p != &d);
            }
        }
        let stdout = std::io::stdout();
        let mut lock = stdout.lock();
        for bytes in self.stdout.drain(..) {
            lock.write_all(&bytes)?;
        }
        lock.flush()
    }
}

impl Drop for Staging {
    fn drop(&mut self) {
        let mut live = live();
        for e in self.entries.drain(..) {
            let _ = std::fs::remove_file(&e.temp);
            live.retain(|p| p != &e.temp);
        }
        for d in self.created_dirs.drain(..).rev() {
            let _ = std::fs::remove_dir(&d);
            live.retain(|p| p != &d);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn a_failing_output_leaves_nothing_and_keeps_the_old_files() {
        let dir = tempfile::tempdir().unwrap();
        let a = dir.path().join("a.json");
        std::fs::write(&a, b"old").unwrap();
        let mut s = Staging::new();
        s.bytes(&a, b"new").unwrap();
        let sub = dir.path().join("worst");
        s.directory(&sub).unwrap();
        s.bytes(&sub.join("w.toml"), b"w").unwrap();
        let late = s.stream(&dir.path().join("b.csv"), |w| {
            w.write_all(b"half")?;
            Err(std::io::Error::other("disk full"))
        });
        assert!(late.is_err());
        drop(s);
        assert_eq!(names(dir.path()), ["a.json"]);
        assert_eq!(std::fs::read(&a).unwrap(), b"old");
        assert!(!live().iter().any(|p| p.starts_with(dir.path())));
    }

    #[test]
    fn commit_puts_every_file_in_place_and_keeps_created_directories() {
        let dir = tempfile::tempdir().unwrap();
        let mut s = Staging::new();
        let sub = dir.path().join("worst");
        s.directory(&sub).unwrap();
        s.bytes(&sub.join("w.toml"), b"w").unwrap();
        s.with_path::<std::io::Error>(&dir.path().join("p.svg"), |p| {
            assert_eq!(p.extension().unwrap(), "svg");
            std::fs::write(p, b"<svg/>")
        })
        .unwrap();
        assert_eq!(s.len(), 2);
        s.commit().unwrap();
        assert_eq!(names(dir.path()), ["p.svg", "worst"]);
        assert_eq!(names(&sub), ["w.toml"]);
    }

    #[test]
    fn a_target_that_became_a_directory_is_refused_at_commit() {
        let dir = tempfile::tempdir().unwrap();
        let mut s = Staging::new();
        s.bytes(&dir.path().join("a.json"), b"a").unwrap();
        s.bytes(&dir.path().join("b.json"), b"b").unwrap();
        std::fs::create_dir(dir.path().join("b.json")).unwrap();
        assert!(s.commit().is_err());
        assert_eq!(names(dir.path()), ["b.json"]);
    }
}
