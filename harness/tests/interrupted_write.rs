//! Interrupted and failing writes: a run's outputs appear all together or
//! not at all, and no temporary file is left behind, whether the run is
//! stopped by SIGTERM or SIGINT while its outputs are staged, killed at
//! any moment, or meets an output that became unwritable.
//!
//! The binary's test hook `EVENKEEL_TEST_PAUSE_BEFORE_COMMIT_MS` holds a
//! run between staging its outputs and renaming them (DEVELOPERS.md), so
//! a signal can be sent at exactly that point.

#![cfg(unix)]

mod common;

use std::path::Path;
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use common::data;

const OUTPUTS: [&str; 4] = ["r.json", "r.xml", "t.csv", "p.svg"];

fn start(dir: &Path, pause_ms: Option<u64>) -> Child {
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_evenkeel"));
    cmd.current_dir(dir)
        .args([
            "check",
            "s.toml",
            "--backend",
            "f64",
            "--json",
            "out/r.json",
            "--junit",
            "out/r.xml",
            "--trace",
            "out/t.csv",
            "--plot",
            "out/p.svg",
        ])
        .stdout(Stdio::null())
        .stderr(Stdio::null());
    if let Some(ms) = pause_ms {
        cmd.env("EVENKEEL_TEST_PAUSE_BEFORE_COMMIT_MS", ms.to_string());
    }
    cmd.spawn().unwrap()
}

fn names(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

fn signal(child: &Child, sig: &str) {
    let ok = Command::new("kill")
        .args([sig, &child.id().to_string()])
        .status()
        .unwrap()
        .success();
    assert!(ok, "kill {sig}");
}

fn fresh() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir(dir.path().join("out")).unwrap();
    std::fs::copy(data("hostile/base.toml"), dir.path().join("s.toml")).unwrap();
    dir
}

/// Waits until all four outputs are staged (four temporary files in
/// `out/`), at most `limit`.
fn wait_staged(out: &Path, limit: Duration) {
    let started = Instant::now();
    loop {
        let staged = names(out)
            .iter()
            .filter(|n| n.starts_with(".evenkeel-"))
            .count();
        if staged == OUTPUTS.len() {
            return;
        }
        assert!(started.elapsed() < limit, "never staged: {:?}", names(out));
        std::thread::sleep(Duration::from_millis(20));
    }
}

/// SIGTERM and SIGINT while every output is staged and none renamed:
/// the temporaries go, nothing is written, the exit status is 128 + the
/// signal.
#[test]
fn finding_3_a_signal_while_outputs_are_staged_leaves_nothing() {
    for (sig, code) in [("-TERM", 128 + 15), ("-INT", 128 + 2), ("-HUP", 128 + 1)] {
        let dir = fresh();
        let out = dir.path().join("out");
        let mut child = start(dir.path(), Some(60_000));
        wait_staged(&out, Duration::from_secs(60));
        signal(&child, sig);
        let status = child.wait().unwrap();
        assert_eq!(status.code(), Some(code), "{sig}");
        assert!(names(&out).is_empty(), "{sig}: {:?}", names(&out));
    }
}

/// Without the pause, the run is killed at spread-out moments (during the
/// simulation, the staging or the renames): each time either every output
/// is there or none is, and no temporary file is left.
#[test]
fn finding_3_outputs_are_all_or_nothing_whenever_the_run_is_stopped() {
    let mut seen_all = false;
    let mut seen_none = false;
    for k in 0..24u64 {
        let dir = fresh();
        let out = dir.path().join("out");
        let mut child = start(dir.path(), None);
        std::thread::sleep(Duration::from_millis(k * 15));
        // The run may have ended already: then kill has nothing to stop.
        let _ = Command::new("kill")
            .args(["-TERM", &child.id().to_string()])
            .stderr(Stdio::null())
            .status();
        let _ = child.wait().unwrap();
        let present = names(&out);
        assert!(
            !present.iter().any(|n| n.starts_with(".evenkeel-")),
            "temporary left: {present:?}"
        );
        if present.is_empty() {
            seen_none = true;
        } else {
            let mut want: Vec<String> = OUTPUTS.iter().map(|s| (*s).to_owned()).collect();
            want.sort();
            assert_eq!(present, want, "partial set");
            seen_all = true;
        }
    }
    // Both ends were reached (a stop early and a run that finished).
    assert!(seen_none && seen_all, "none {seen_none}, all {seen_all}");
}

/// An output that became a directory after the checks (between staging
/// and the renames): the run fails with exit 2 and replaces nothing, not
/// even the outputs that could have been written; the old files stay.
#[test]
fn finding_3_a_late_write_error_leaves_no_partial_set() {
    let dir = fresh();
    let out = dir.path().join("out");
    std::fs::write(out.join("r.json"), "old").unwrap();
    let mut child = start(dir.path(), Some(3_000));
    wait_staged(&out, Duration::from_secs(60));
    std::fs::create_dir(out.join("p.svg")).unwrap();
    let status = child.wait().unwrap();
    assert_eq!(status.code(), Some(2));
    assert_eq!(names(&out), ["p.svg", "r.json"]);
    assert_eq!(std::fs::read_to_string(out.join("r.json")).unwrap(), "old");
}
