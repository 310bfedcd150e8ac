//! Helpers shared by the harness's integration tests: where the demo
//! scenarios and test fixtures are, and running the `evenkeel` binary in a
//! directory.
//!
//! Each file in `tests/` is its own crate and includes this module with
//! `mod common;`. A file that uses only some of the helpers would warn that
//! the others are never used, hence the allow below.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The demo scenarios' folder, `shared/scenarios/` of the workspace.
fn scenarios_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared/scenarios")
}

/// The scenario file `shared/scenarios/{name}.toml`; `name` may have a
/// subfolder (`faults/irrigation_pump_faults`).
pub fn demo(name: &str) -> PathBuf {
    scenarios_dir().join(format!("{name}.toml"))
}

/// The demo scenario files (the `.toml` files directly in
/// `shared/scenarios/`), sorted by path.
pub fn demos() -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(scenarios_dir())
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    files.sort();
    files
}

/// The fixture `tests/data/{name}` of the harness crate.
pub fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(name)
}

/// Runs the `evenkeel` binary with `args` in `dir` and waits for it.
pub fn evenkeel(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_evenkeel"))
        .current_dir(dir)
        .args(args)
        .output()
        .unwrap()
}

/// Runs `evenkeel {command} {files…} {flags…}` in `dir`.
pub fn evenkeel_on(dir: &Path, command: &str, files: &[PathBuf], flags: &[&str]) -> Output {
    let files: Vec<String> = files.iter().map(|p| p.display().to_string()).collect();
    let mut args = vec![command];
    args.extend(files.iter().map(String::as_str));
    args.extend_from_slice(flags);
    evenkeel(dir, &args)
}

/// The binary's output as text (invalid UTF-8 replaced).
pub fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}

/// Asserts that the binary exited with `code`; on failure the message
/// shows both of its output streams.
#[track_caller]
pub fn assert_exit(out: &Output, code: i32) {
    assert_eq!(
        out.status.code(),
        Some(code),
        "stdout:\n{}\nstderr:\n{}",
        text(&out.stdout),
        text(&out.stderr)
    );
}

/// Debian's Chromium, if installed (`.ci/run` installs it).
pub fn chromium() -> Option<PathBuf> {
    ["/usr/bin/chromium", "/usr/bin/chromium-browser"]
        .into_iter()
        .map(PathBuf::from)
        .find(|p| p.exists())
}

/// Renders `page` (an HTML file) in headless Chromium: the screenshot's
/// path and the console messages the page caused (errors and warnings).
/// `None` (with a message on standard error) when no browser is installed.
pub fn render_in_browser(page: &Path, out_dir: &Path) -> Option<(PathBuf, Vec<String>)> {
    let Some(browser) = chromium() else {
        eprintln!(
            "SKIP: no Chromium at /usr/bin/chromium (apt-get install chromium); the page was not rendered"
        );
        return None;
    };
    let shot = out_dir.join("screenshot.png");
    let profile = out_dir.join("chromium-profile");
    let url = format!("file://{}", page.canonicalize().unwrap().display());
    let out = Command::new(browser)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--enable-logging=stderr",
            "--v=0",
            "--window-size=1250,2000",
        ])
        .arg(format!("--user-data-dir={}", profile.display()))
        .arg(format!("--screenshot={}", shot.display()))
        .arg(&url)
        .output()
        .unwrap();
    assert!(out.status.success(), "chromium: {}", text(&out.stderr));
    let console = text(&out.stderr)
        .lines()
        .filter(|l| l.contains(":CONSOLE"))
        .map(str::to_owned)
        .collect();
    Some((shot, console))
}
