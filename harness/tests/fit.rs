//! `evenkeel fit` end to end: from logs to a scenario that `design` can
//! tune, into an existing scenario without disturbing it, and every bad
//! log refused with its place.

mod common;

use common::{assert_exit, data, evenkeel, text};

fn repo(path: &str) -> String {
    std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("..")
        .join(path)
        .display()
        .to_string()
}

#[test]
fn demo_logs_fit_into_a_scenario_that_design_tunes() {
    let dir = tempfile::tempdir().unwrap();
    let mut args = vec!["fit".to_owned()];
    for s in ["60C", "70C", "80C"] {
        args.push(repo(&format!("shared/logs/mixing_valve_supply_{s}.csv")));
    }
    args.extend(
        [
            "--model",
            "first-order-lag",
            "--output-unit",
            "K",
            "--scenario-out",
            "valve.toml",
            "--json",
            "fit.json",
            "--plot",
            "fit.svg",
        ]
        .map(String::from),
    );
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    let out = evenkeel(dir.path(), &args);
    assert_exit(&out, 0);
    let json: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("fit.json")).unwrap()).unwrap();
    assert_eq!(json["passed"], true);
    assert_eq!(json["logs"].as_array().unwrap().len(), 3);
    // The three supply temperatures give three gains (invented: 18, 24,
    // 30 K per unit): the box spans them.
    let gain = json["spread"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["key"] == "gain")
        .unwrap();
    assert!(
        gain["min"].as_f64().unwrap() < 18.0 && gain["max"].as_f64().unwrap() > 30.0,
        "{gain}"
    );
    let scenario = std::fs::read_to_string(dir.path().join("valve.toml")).unwrap();
    assert!(
        scenario.contains("[uncertainty]\ngain = { min = "),
        "{scenario}"
    );
    assert!(
        std::fs::read_to_string(dir.path().join("fit.svg"))
            .unwrap()
            .contains("measured")
    );
    let out = evenkeel(
        dir.path(),
        &["design", "valve.toml", "--scenario-out", "tuned.toml"],
    );
    assert_exit(&out, 0);
    let out = evenkeel(dir.path(), &["check", "tuned.toml"]);
    assert_exit(&out, 0);
}

#[test]
fn fit_into_an_existing_scenario_changes_only_plant_and_uncertainty() {
    let dir = tempfile::tempdir().unwrap();
    let heater = data("design/tank_heater.toml").display().to_string();
    // A closed-loop log of the heater's nominal plant (gain 60 K, τ 250 s,
    // dead time 60 s), written by `check --trace`.
    let out = evenkeel(
        dir.path(),
        &["check", &heater, "--backend", "f64", "--trace", "log.csv"],
    );
    assert_eq!(out.status.code(), Some(1)); // the hand-written gains fail
    let out = evenkeel(
        dir.path(),
        &[
            "fit",
            "log.csv",
            "--model",
            "first-order-lag",
            "--scenario",
            &heater,
            "--scenario-out",
            "fitted.toml",
        ],
    );
    assert_exit(&out, 0);
    let report = text(&out.stdout);
    for (key, truth) in [("gain", 60.0), ("tau_s", 250.0), ("dead_time_s", 60.0)] {
        let line = report
            .lines()
            .find(|l| l.trim_start().starts_with(&format!("{key} ")))
            .unwrap();
        let interval: Vec<f64> = line
            .split(['[', ']'])
            .nth(1)
            .unwrap()
            .split(',')
            .map(|x| x.trim().parse().unwrap())
            .collect();
        assert!(interval[0] <= truth && truth <= interval[1], "{line}");
    }
    let before = std::fs::read_to_string(&heater).unwrap();
    let after = std::fs::read_to_string(dir.path().join("fitted.toml")).unwrap();
    let changed: Vec<(&str, &str)> = before
        .lines()
        .zip(after.lines())
        .filter(|(a, b)| a != b)
        .collect();
    assert_eq!(before.lines().count(), after.lines().count(), "{after}");
    for (a, _) in &changed {
        let key = a.split('=').next().unwrap().trim();
        assert!(
            ["gain", "tau_s", "dead_time_s"].contains(&key),
            "changed a line it does not fit: {a}"
        );
    }
    // Three ranges and up to three [plant] values (a value that rounds to
    // what was written stays as written).
    assert!((5..=6).contains(&changed.len()), "{changed:?}");
    assert!(after.contains("gain = 60."), "{after}");
    assert!(after.contains("# K at full power (invented)"), "{after}");
}

fn write(dir: &std::path::Path, name: &str, body: &str) -> String {
    std::fs::write(dir.join(name), body).unwrap();
    name.to_owned()
}

/// A step log of a lag (k = 2, τ = 1 s, dt = 0.1 s) with a small
/// deterministic ripple, `n` rows, the row `bad` replaced.
fn lag_log(n: usize, bad: Option<(usize, &str)>) -> String {
    let mut s = String::from("t_s,applied,measurement\n");
    let mut y = 0.0f64;
    for k in 0..n {
        let u = if k >= 5 { 1.0 } else { 0.0 };
        #[allow(clippy::cast_precision_loss)]
        let ripple = 0.001 * ((k * 7919 % 13) as f64 - 6.0);
        let row = match bad {
            Some((i, r)) if i == k => r.to_owned(),
            #[allow(clippy::cast_precision_loss)]
            _ => format!("{},{u},{}", k as f64 * 0.1, y + ripple),
        };
        s.push_str(&row);
        s.push('\n');
        y = 2.0 * u + (y - 2.0 * u) * (-0.1f64).exp();
    }
    s
}

#[test]
fn bad_logs_are_refused_with_file_line_and_column() {
    let dir = tempfile::tempdir().unwrap();
    let cases: [(&str, String, &str); 8] = [
        (
            "nan.csv",
            lag_log(40, Some((10, "1.0,1,NaN"))),
            "nan.csv:12:7: output `NaN` is not finite",
        ),
        ("text.csv", lag_log(40, Some((10, "1.0,1,hot"))), "nan.csv"),
        (
            "repeat.csv",
            lag_log(40, Some((10, "0.9,1,2"))),
            "repeat.csv:12:1: time 0.9 s is the same as the previous sample's",
        ),
        (
            "unsorted.csv",
            lag_log(40, Some((10, "0.5,1,2"))),
            "unsorted.csv:12:1: time 0.5 s is before the previous sample's",
        ),
        (
            "short.csv",
            lag_log(12, None),
            "short.csv: 12 samples: too short",
        ),
        (
            "flat.csv",
            lag_log(40, None).replace(",0,", ",1,"),
            "nothing to identify",
        ),
        (
            "gap.csv",
            lag_log(40, Some((39, "30.0,1,2"))),
            "gap.csv: a gap of",
        ),
        (
            "fields.csv",
            lag_log(40, Some((3, "0.3,0"))),
            "fields.csv:5: 2 fields, the header has 3",
        ),
    ];
    for (name, body, words) in cases {
        let file = write(dir.path(), name, &body);
        let out = evenkeel(dir.path(), &["fit", &file, "--model", "first-order-lag"]);
        assert_exit(&out, 2);
        let err = text(&out.stderr);
        let words = if name == "text.csv" {
            "text.csv:12:7: output `hot` is not a number"
        } else {
            words
        };
        assert!(err.contains(words), "{name}: {err}");
    }
    // Not a file at all.
    let out = evenkeel(
        dir.path(),
        &["fit", "/dev/zero", "--model", "first-order-lag"],
    );
    assert_exit(&out, 2);
    assert!(
        text(&out.stderr).contains("/dev/zero: is not a regular file"),
        "{}",
        text(&out.stderr)
    );
    // A column that is not there, named.
    let file = write(dir.path(), "ok.csv", &lag_log(40, None));
    let out = evenkeel(
        dir.path(),
        &[
            "fit",
            &file,
            "--model",
            "first-order-lag",
            "--input",
            "valve",
        ],
    );
    assert_exit(&out, 2);
    assert!(
        text(&out.stderr)
            .contains("no column `valve` (input); the columns are: t_s, applied, measurement")
    );
    // A good log passes, and an output file may not be an input.
    let out = evenkeel(dir.path(), &["fit", &file, "--model", "first-order-lag"]);
    assert_exit(&out, 0);
    let out = evenkeel(
        dir.path(),
        &["fit", &file, "--model", "first-order-lag", "--json", &file],
    );
    assert_exit(&out, 2);
    assert!(text(&out.stderr).contains("is an input of this run"));
}

#[test]
fn a_step_too_small_for_the_noise_is_not_identifiable() {
    let dir = tempfile::tempdir().unwrap();
    // A step of 0.001 under ripple of ±0.006: the lag cannot be seen.
    let body = lag_log(200, None)
        .lines()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                return l.to_owned();
            }
            let f: Vec<&str> = l.split(',').collect();
            let u: f64 = f[1].parse().unwrap();
            #[allow(clippy::cast_precision_loss)]
            let ripple = 0.006 * ((i * 7919 % 13) as f64 - 6.0) / 6.0;
            format!("{},{},{}", f[0], u * 0.001, 0.5 + ripple)
        })
        .collect::<Vec<_>>()
        .join("\n");
    let file = write(dir.path(), "tiny.csv", &body);
    let out = evenkeel(
        dir.path(),
        &[
            "fit",
            &file,
            "--model",
            "first-order-lag",
            "--scenario-out",
            "x.toml",
        ],
    );
    assert_exit(&out, 1);
    let report = text(&out.stdout);
    assert!(report.contains("not identifiable"), "{report}");
    assert!(report.contains("x.toml not written"), "{report}");
    assert!(!dir.path().join("x.toml").exists());
}

#[test]
fn a_vehicle_needs_its_mass() {
    let dir = tempfile::tempdir().unwrap();
    let file = write(dir.path(), "v.csv", &lag_log(40, None));
    let out = evenkeel(dir.path(), &["fit", &file, "--model", "vehicle"]);
    assert_exit(&out, 2);
    assert!(
        text(&out.stderr).contains("--fix mass_kg=VALUE"),
        "{}",
        text(&out.stderr)
    );
    let out = evenkeel(
        dir.path(),
        &["fit", &file, "--model", "vehicle", "--fix", "mass_kg"],
    );
    assert_exit(&out, 2);
    assert!(text(&out.stderr).contains("expected KEY=VALUE"));
}
