//! Bad input against every CLI command: missing and unreadable files, wrong
//! types, huge values, empty sweeps, zero-length durations. Each must give
//! a precise error on standard error, exit code 2, and write nothing.

mod common;

use std::path::Path;

use common::{demo, evenkeel, text};

/// The pump demo with `from` replaced by `to`, as `bad.toml` in `dir`.
fn broken(dir: &Path, from: &str, to: &str) {
    let text = std::fs::read_to_string(demo("irrigation_pump")).unwrap();
    assert!(text.contains(from), "{from}");
    std::fs::write(dir.join("bad.toml"), text.replacen(from, to, 1)).unwrap();
}

/// Runs `args` in a fresh directory holding only `bad.toml` (made by
/// `setup`) and the directory `unreadable.toml/`; expects exit code 2, an
/// error mentioning `words`, and no new file.
fn refused(setup: &dyn Fn(&Path), args: &[&str], words: &str) {
    let dir = tempfile::tempdir().unwrap();
    setup(dir.path());
    std::fs::create_dir(dir.path().join("unreadable.toml")).unwrap();
    let before = std::fs::read_dir(dir.path()).unwrap().count();
    let out = evenkeel(dir.path(), args);
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
    assert!(err.contains(words), "{args:?}: want `{words}` in: {err}");
    assert_eq!(
        std::fs::read_dir(dir.path()).unwrap().count(),
        before,
        "{args:?} wrote a file"
    );
}

fn none(_: &Path) {}

#[test]
fn missing_and_unreadable_files_in_every_command() {
    for cmd in ["check", "sweep", "design", "compare"] {
        refused(&none, &[cmd, "no-such.toml"], "no-such.toml");
        refused(&none, &[cmd, "unreadable.toml"], "unreadable.toml");
    }
    refused(&none, &["merge", "no-such.json"], "no-such.json");
    refused(&none, &["merge", "unreadable.toml"], "unreadable.toml");
}

#[test]
fn wrong_types_and_huge_values_in_every_command() {
    let wrong_type = |d: &Path| broken(d, "kp = 0.00165", "kp = \"fast\"");
    let huge_duration = |d: &Path| broken(d, "duration_s = 120.0", "duration_s = 1.0e12");
    let huge_gain = |d: &Path| broken(d, "kp = 0.00165", "kp = 1.0e300");
    let zero_duration = |d: &Path| broken(d, "duration_s = 120.0", "duration_s = 0.0");
    for cmd in ["check", "sweep", "design", "compare"] {
        refused(&wrong_type, &[cmd, "bad.toml"], "bad.toml:");
        refused(&wrong_type, &[cmd, "bad.toml"], "invalid type");
        refused(&huge_duration, &[cmd, "bad.toml"], "scenario.duration_s");
        refused(&huge_duration, &[cmd, "bad.toml"], "at most 5e6");
        refused(&zero_duration, &[cmd, "bad.toml"], "scenario.duration_s");
    }
    // A gain no backend can hold: refused when the fixed backend runs.
    refused(
        &huge_gain,
        &["check", "bad.toml", "--backend", "fixed"],
        "kp",
    );
    // Huge numbers on the command line.
    let pump = demo("irrigation_pump");
    let pump = pump.to_str().unwrap();
    refused(
        &none,
        &["sweep", pump, "--count", "99999999999999999999999"],
        "count",
    );
    refused(&none, &["sweep", pump, "--shard", "3/2"], "shard");
}

#[test]
fn empty_sweeps_and_bad_report_paths() {
    let pump = demo("irrigation_pump");
    let pump = pump.to_str().unwrap();
    refused(
        &none,
        &["sweep", pump, "--method", "random", "--count", "0"],
        "--count",
    );
    refused(
        &none,
        &["sweep", pump, "--method", "grid", "--levels", "1"],
        "--levels",
    );
    refused(&none, &["merge"], "");
    // A report into a directory that does not exist: refused before any
    // run, so the other reports are not written either.
    refused(
        &none,
        &[
            "check",
            pump,
            "--json",
            "r.json",
            "--junit",
            "no/such/dir/r.xml",
        ],
        "no/such/dir",
    );
    refused(
        &none,
        &[
            "check",
            pump,
            "--trace",
            "t.csv",
            "--plot",
            "unreadable.toml",
        ],
        "unreadable.toml",
    );
}

/// Every command that writes reports checks all its report paths before it
/// runs anything (a sweep can take minutes), with the same words.
#[test]
fn every_command_checks_report_paths_first() {
    let pump = demo("irrigation_pump");
    let pump = pump.to_str().unwrap();
    let missing_dir = "no/such/dir";
    for (cmd, flag) in [
        ("compare", "--json"),
        ("compare", "--junit"),
        ("compare", "--trace"),
        ("compare", "--plot"),
        ("sweep", "--json"),
        ("sweep", "--junit"),
        ("sweep", "--save"),
        ("sweep", "--plot"),
        ("design", "--rust-out"),
        ("design", "--scenario-out"),
    ] {
        let path = format!("{missing_dir}/r.svg");
        let mut args = vec![cmd, pump, flag, path.as_str()];
        if cmd != "design" && flag != "--json" {
            // A writable report beside it: it must not be written either.
            args.extend(["--json", "ok.json"]);
        }
        refused(&none, &args, "the directory no/such/dir does not exist");
        refused(
            &none,
            &[cmd, pump, flag, "unreadable.toml"],
            "is a directory, not a report file",
        );
    }
    for cmd in ["check", "compare", "sweep"] {
        refused(
            &none,
            &[cmd, pump, "--plot", "p.gif"],
            "--plot p.gif: the file must end in .svg or .png",
        );
    }
    // merge checks its paths before it reads the shard files.
    refused(
        &none,
        &["merge", "no-such.json", "--junit", "no/such/dir/r.xml"],
        "the directory no/such/dir does not exist",
    );
}
