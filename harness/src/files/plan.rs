//! The outputs of one run, checked before it starts.

use std::fmt;
use std::path::{Path, PathBuf};

/// Longest file name (one path component) accepted, in bytes: the limit
/// of the common Linux, macOS and Windows file systems (common practice).
const MAX_NAME_BYTES: usize = 255;

/// An output refused before the run: exit code 2, nothing written.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PlanError(pub String);

impl fmt::Display for PlanError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for PlanError {}

/// `path` for a message: control characters escaped, so that a name
/// cannot move the cursor or recolour the terminal.
#[must_use]
pub fn shown(path: &Path) -> String {
    printable(&path.display().to_string())
}

/// `text` with control characters written as `\u{..}`.
///
/// ```
/// assert_eq!(evenkeel_harness::files::printable("a\u{1b}[2Jb"), "a\\u{1b}[2Jb");
/// ```
#[must_use]
pub fn printable(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        if c.is_control() {
            out.push_str(&format!("\\u{{{:x}}}", u32::from(c)));
        } else {
            out.push(c);
        }
    }
    out
}

/// What identifies a file: its canonical directory and name, and for an
/// existing file its device and inode (so a hard link is the same file).
#[derive(Debug, Clone, PartialEq, Eq)]
struct FileKey {
    path: PathBuf,
    inode: Option<(u64, u64)>,
}

impl FileKey {
    fn same(&self, other: &Self) -> bool {
        self.path == other.path || (self.inode.is_some() && self.inode == other.inode)
    }
}

#[cfg(unix)]
fn inode(m: &std::fs::Metadata) -> Option<(u64, u64)> {
    use std::os::unix::fs::MetadataExt;
    Some((m.dev(), m.ino()))
}

#[cfg(not(unix))]
fn inode(_: &std::fs::Metadata) -> Option<(u64, u64)> {
    None
}

/// The directory `path` goes into (`.` for a bare file name).
fn dir_of(path: &Path) -> &Path {
    match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    }
}

fn key_of(path: &Path) -> FileKey {
    let meta = std::fs::metadata(path).ok();
    let canonical = path.canonicalize().ok().or_else(|| {
        let dir = dir_of(path).canonicalize().ok()?;
        Some(dir.join(path.file_name()?))
    });
    FileKey {
        path: canonical.unwrap_or_else(|| path.to_path_buf()),
        inode: meta.as_ref().and_then(inode),
    }
}

#[derive(Debug)]
struct Claim {
    what: String,
    key: FileKey,
}

/// The outputs of one run and the inputs they must not replace.
///
/// Each output is checked when added: its directory exists (and is a
/// directory), its file name is at most 255 bytes, and if it exists it is
/// a regular file (never a symbolic link, directory or device); it is
/// none of the inputs and none of the outputs added before; `-` (standard
/// output) is taken by one output at most. Names derived for several runs
/// are added one by one, so that two runs whose names reduce to the same
/// [`safe_stem`](super::safe_stem) are refused too.
///
/// ```
/// use std::path::Path;
/// use evenkeel_harness::files::OutputPlan;
/// let dir = tempfile::tempdir()?;
/// let scenario = dir.path().join("s.toml");
/// std::fs::write(&scenario, "")?;
/// let mut plan = OutputPlan::new();
/// plan.input(&scenario);
/// let e = plan.file("--json", &scenario).unwrap_err();
/// assert!(e.to_string().contains("is an input"));
/// plan.file("--json", &dir.path().join("r.json"))?;
/// assert!(plan.file("--junit", &dir.path().join("r.json")).is_err());
/// plan.file("--junit", Path::new("-"))?;
/// assert!(plan.file("--save", Path::new("-")).is_err()); // standard output is taken
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
#[derive(Debug, Default)]
pub struct OutputPlan {
    inputs: Vec<(PathBuf, FileKey)>,
    /// Directories that will be created for outputs ([`OutputPlan::directory`]).
    new_dirs: Vec<PathBuf>,
    outputs: Vec<Claim>,
    stdout: Option<String>,
}

impl OutputPlan {
    /// No inputs, no outputs.
    #[must_use]
    pub fn new() -> Self {
        Self::default()
    }

    /// `path` is read by the run: no output may replace it.
    pub fn input(&mut self, path: &Path) {
        self.inputs.push((path.to_path_buf(), key_of(path)));
    }

    /// The flag that sends its output to standard output, if any.
    #[must_use]
    pub fn stdout_taken_by(&self) -> Option<&str> {
        self.stdout.as_deref()
    }

    /// Adds the output of `what` (a flag such as `--json`, or a derived
    /// name such as `--trace for pump/f32`) at `path`; `-` is standard
    /// output.
    ///
    /// # Errors
    /// A [`PlanError`] naming the flag, the path and the rule broken.
    pub fn file(&mut self, what: &str, path: &Path) -> Result<(), PlanError> {
        self.claim(what, path, false)
    }

    /// As [`OutputPlan::file`], but `path` may be an input: `--in-place`.
    ///
    /// # Errors
    /// As [`OutputPlan::file`].
    pub fn in_place(&mut self, what: &str, path: &Path) -> Result<(), PlanError> {
        self.claim(what, path, true)
    }

    /// As [`OutputPlan::file`] for a file that must be a file (several
    /// per-run files, a plot chosen by extension): `-` is refused with
    /// `why`.
    ///
    /// # Errors
    /// As [`OutputPlan::file`], and for `-`.
    pub fn named_file(&mut self, what: &str, path: &Path, why: &str) -> Result<(), PlanError> {
        if path.as_os_str() == "-" {
            return Err(PlanError(format!(
                "{what} -: standard output cannot be used here ({why})"
            )));
        }
        self.file(what, path)
    }

    /// `dir` is a directory that outputs go into: it exists as a
    /// directory, or its parent does (it is then created when outputs are
    /// staged).
    ///
    /// # Errors
    /// A [`PlanError`] when `dir` is a file or another non-directory, or
    /// when neither it nor its parent exists.
    pub fn directory(&mut self, what: &str, dir: &Path) -> Result<(), PlanError> {
        let p = shown(dir);
        if dir.as_os_str() == "-" {
            return Err(PlanError(format!(
                "{what} -: a directory is needed, not standard output"
            )));
        }
        match std::fs::metadata(dir) {
            Ok(m) if m.is_dir() => Ok(()),
            Ok(_) => Err(PlanError(format!("{what} {p}: is a file, not a directory"))),
            Err(_) => {
                let parent = dir_of(dir);
                if parent.is_dir() {
                    self.new_dirs.push(dir.to_path_buf());
                    Ok(())
                } else {
                    Err(PlanError(format!(
                        "{what} {p}: neither it nor the directory {} exists",
                        shown(parent)
                    )))
                }
            }
        }
    }

    fn claim(&mut self, what: &str, path: &Path, may_be_input: bool) -> Result<(), PlanError> {
        let p = shown(path);
        if path.as_os_str() == "-" {
            if let Some(first) = &self.stdout {
                return Err(PlanError(format!(
                    "{what} - and {first} -: only one output can go to standard output"
                )));
            }
            self.stdout = Some(what.to_owned());
            return Ok(());
        }
        let Some(name) = path.file_name() else {
            return Err(PlanError(format!(
                "{what} {p}: names a directory, not a report file"
            )));
        };
        if name.len() > MAX_NAME_BYTES {
            return Err(PlanError(format!(
                "{what}: the file name is {} bytes long, at most {MAX_NAME_BYTES} are allowed ({}…)",
                name.len(),
                printable(&name.to_string_lossy().chars().take(40).collect::<String>())
            )));
        }
        let dir = dir_of(path);
        match std::fs::metadata(dir) {
            _ if self.new_dirs.iter().any(|d| d == dir) => {}
            Ok(m) if m.is_dir() => {}
            Ok(_) => {
                return Err(PlanError(format!(
                    "{p}: {} is a file, not a directory",
                    shown(dir)
                )));
            }
            Err(_) => {
                return Err(PlanError(format!(
                    "{p}: the directory {} does not exist",
                    shown(dir)
                )));
            }
        }
        if let Ok(m) = std::fs::symlink_metadata(path) {
            let kind = m.file_type();
            let refuse = |what_it_is: &str| {
                Err(PlanError(format!(
                    "{p}: is {what_it_is}; only regular files are replaced"
                )))
            };
            if kind.is_dir() {
                return Err(PlanError(format!("{p}: is a directory, not a report file")));
            }
            if kind.is_symlink() {
                return refuse("a symbolic link");
            }
            if !kind.is_file() {
                return refuse("a device, pipe or socket, not a regular file");
            }
        }
        let key = key_of(path);
        if !may_be_input && let Some((input, _)) = self.inputs.iter().find(|(_, k)| k.same(&key)) {
            return Err(PlanError(format!(
                "{what} {p}: is an input of this run ({}); refusing to overwrite it",
                shown(input)
            )));
        }
        if let Some(other) = self.outputs.iter().find(|c| c.key.same(&key)) {
            return Err(PlanError(format!(
                "{what} and {} would both write {p}: give them different names",
                other.what
            )));
        }
        self.outputs.push(Claim {
            what: what.to_owned(),
            key,
        });
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refuses_links_devices_and_hard_links_to_inputs() {
        let dir = tempfile::tempdir().unwrap();
        let input = dir.path().join("s.toml");
        std::fs::write(&input, "x").unwrap();
        let mut plan = OutputPlan::new();
        plan.input(&input);
        #[cfg(unix)]
        {
            let link = dir.path().join("link.json");
            std::os::unix::fs::symlink(&input, &link).unwrap();
            let e = plan.file("--json", &link).unwrap_err();
            assert!(e.0.contains("symbolic link"), "{e}");
            let hard = dir.path().join("hard.json");
            std::fs::hard_link(&input, &hard).unwrap();
            let e = plan.file("--json", &hard).unwrap_err();
            assert!(e.0.contains("is an input"), "{e}");
            if Path::new("/dev/null").exists() {
                let e = plan.file("--json", Path::new("/dev/null")).unwrap_err();
                assert!(e.0.contains("only regular files"), "{e}");
            }
        }
        let e = plan
            .file("--json", &dir.path().join("s.toml/r.json"))
            .unwrap_err();
        assert!(e.0.contains("is a file, not a directory"), "{e}");
        let long = dir.path().join("x".repeat(300));
        assert!(
            plan.file("--json", &long)
                .unwrap_err()
                .0
                .contains("300 bytes")
        );
        // The same file by two spellings.
        plan.file("--json", &dir.path().join("r.json")).unwrap();
        let again = dir.path().join(".").join("r.json");
        assert!(plan.file("--junit", &again).is_err());
        assert!(plan.in_place("--in-place", &input).is_ok());
    }

    #[test]
    fn directories_must_be_directories() {
        let dir = tempfile::tempdir().unwrap();
        let file = dir.path().join("f");
        std::fs::write(&file, "x").unwrap();
        let mut plan = OutputPlan::new();
        let e = plan.directory("--worst-dir", &file).unwrap_err();
        assert!(e.0.contains("is a file, not a directory"), "{e}");
        assert!(
            plan.directory("--worst-dir", &dir.path().join("new"))
                .is_ok()
        );
        let e = plan
            .directory("--worst-dir", &dir.path().join("a/b"))
            .unwrap_err();
        assert!(e.0.contains("neither it nor the directory"), "{e}");
    }
}
