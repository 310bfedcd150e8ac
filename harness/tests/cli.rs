//! End-to-end tests of the `evenkeel` binary, run in a temporary directory.

mod common;

use common::{assert_exit, data, demos, evenkeel, evenkeel_on, text};
use evenkeel_harness::CAUTION;

const METRIC_KEYS: [&str; 22] = [
    "rise_time_s",
    "settling_time_s",
    "overshoot_pct",
    "steady_state_error",
    "iae",
    "ise",
    "tracking_error_peak",
    "tracking_error_rms",
    "ramp_tracking_error_peak",
    "peak_command",
    "command_total_variation",
    "peak_slew_per_s",
    "peak_accel",
    "peak_jerk",
    "time_saturated_s",
    "disturbance_peak_deviation",
    "disturbance_recovery_s",
    "limit_violations",
    "fault_flag_errors",
    "fault_recovery_s",
    "fault_return_jump",
    "fault_overshoot",
];

#[test]
fn demos_pass_on_all_backends_with_every_report() {
    let dir = tempfile::tempdir().unwrap();
    let files = demos();
    assert_eq!(files.len(), 4, "{files:?}");
    let out = evenkeel_on(
        dir.path(),
        "check",
        &files,
        &[
            "--json", "r.json", "--junit", "r.xml", "--trace", "t.csv", "--plot", "p.svg",
        ],
    );
    let stdout = text(&out.stdout);
    assert_exit(&out, 0);
    assert!(stdout.contains(CAUTION));
    assert_eq!(stdout.matches("PASS").count(), 16, "{stdout}");
    // Units from the scenario, when the worst value occurred, one number
    // format, and the summary over the three scenarios.
    assert!(
        stdout.contains("at (s)") && stdout.contains(" unit "),
        "{stdout}"
    );
    let jerk = stdout
        .lines()
        .find(|l| l.trim_start().starts_with("peak_jerk"))
        .unwrap();
    assert!(
        jerk.contains("<= 2.5 ") && jerk.contains(" m/s³ "),
        "{jerk}"
    );
    let rise = stdout
        .lines()
        .find(|l| l.trim_start().starts_with("rise_time_s"))
        .unwrap();
    assert!(
        rise.contains("<= 8 ") && rise.contains(" s ") && rise.contains(" - "),
        "{rise}"
    );
    assert!(
        stdout.contains("summary: 4 scenarios, 4 passed, 0 failed; "),
        "{stdout}"
    );

    // JSON: parses, every run passes, metrics have exactly the keys.
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("r.json")).unwrap()).unwrap();
    assert_eq!(json["caution"], CAUTION);
    assert_eq!(json["passed"], true);
    let scenarios = json["scenarios"].as_array().unwrap();
    assert_eq!(scenarios.len(), 4);
    let mut criteria = 0;
    for s in scenarios {
        let runs = s["runs"].as_array().unwrap();
        let backends: Vec<&str> = runs
            .iter()
            .map(|r| r["backend"].as_str().unwrap())
            .collect();
        assert_eq!(backends, ["fixed", "slim16", "f32", "f64"]);
        for r in runs {
            let metrics = r["metrics"].as_object().unwrap();
            let mut keys: Vec<&str> = metrics.keys().map(String::as_str).collect();
            keys.sort_unstable();
            let mut want = METRIC_KEYS;
            want.sort_unstable();
            assert_eq!(keys, want);
            for c in r["criteria"].as_array().unwrap() {
                for k in ["name", "limit", "measured", "pass"] {
                    assert!(c.get(k).is_some(), "{c}");
                }
                assert!(METRIC_KEYS.contains(&c["name"].as_str().unwrap()));
                assert_eq!(c["pass"], true, "{c}");
                assert!(c["unit"].is_string(), "{c}");
                if c["name"] == "peak_jerk" {
                    assert!(c["at_s"].as_f64().unwrap() >= 0.0, "{c}");
                }
                criteria += 1;
            }
        }
    }

    // JUnit: well-formed XML, one test case per criterion, no failure.
    let xml = std::fs::read_to_string(dir.path().join("r.xml")).unwrap();
    let doc = roxmltree::Document::parse(&xml).unwrap();
    let cases = doc
        .descendants()
        .filter(|n| n.has_tag_name("testcase"))
        .count();
    assert_eq!(cases, criteria);
    // Stable names (the criterion, never its limit) and the criterion's
    // source and limit as properties.
    let jerk = doc
        .descendants()
        .find(|n| {
            n.has_tag_name("testcase")
                && n.attribute("classname") == Some("baggage-tug.fixed")
                && n.attribute("name") == Some("peak_jerk max")
        })
        .unwrap();
    let prop = |name: &str| {
        jerk.descendants()
            .find(|p| p.has_tag_name("property") && p.attribute("name") == Some(name))
            .and_then(|p| p.attribute("value"))
            .map(str::to_owned)
    };
    assert_eq!(prop("limit").as_deref(), Some("2.5"));
    assert_eq!(prop("unit").as_deref(), Some("m/s³"));
    assert!(prop("source").unwrap().contains("ISO 15622"));
    assert!(prop("at_s").unwrap().parse::<f64>().unwrap() >= 0.0);
    assert!(prop("measured").unwrap().parse::<f64>().unwrap() <= 2.5);
    assert_eq!(
        doc.descendants()
            .filter(|n| n.has_tag_name("testcase"))
            .filter(|n| n.attribute("name").unwrap().contains("<="))
            .count(),
        0
    );
    assert_eq!(
        doc.descendants()
            .filter(|n| n.has_tag_name("failure"))
            .count(),
        0
    );
    assert!(xml.contains(CAUTION));

    // One CSV and one plot per scenario and backend.
    for name in [
        "baggage-tug",
        "chiller-pump",
        "greenhouse-fan",
        "irrigation-pump",
    ] {
        for backend in ["fixed", "slim16", "f32", "f64"] {
            let csv = std::fs::read_to_string(dir.path().join(format!("t-{name}-{backend}.csv")))
                .unwrap();
            let header = csv.lines().next().unwrap();
            assert!(
                header.starts_with(
                    "t_s,reference,measurement,output,command,applied,accel,jerk,status"
                ),
                "{header}"
            );
            assert!(csv.lines().count() > 1000);
            // Unique column names; times k/rate, so no 0.013000000000000001.
            let mut names: Vec<&str> = header.split(',').collect();
            let all = names.len();
            names.sort_unstable();
            names.dedup();
            assert_eq!(names.len(), all, "{header}");
            assert!(
                csv.lines()
                    .skip(1)
                    .all(|l| l.split(',').next().unwrap().len() <= 8),
                "a time column with rounding noise"
            );
            let svg = std::fs::read_to_string(dir.path().join(format!("p-{name}-{backend}.svg")))
                .unwrap();
            assert!(
                svg.starts_with("<svg") && svg.len() > 50_000,
                "{}",
                svg.len()
            );
            assert!(svg.contains("time (s)") && svg.contains("Engineering aid"));
        }
    }
    // Nothing but the reports (no temporary files left behind).
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 2 + 16 + 16);
}

#[test]
fn default_runs_the_built_in_demo_and_writes_a_png() {
    let dir = tempfile::tempdir().unwrap();
    let out = evenkeel(
        dir.path(),
        &["check", "--backend", "fixed", "--plot", "tug.png"],
    );
    let stdout = text(&out.stdout);
    assert_exit(&out, 0);
    assert!(stdout.contains("scenario baggage-tug (<built-in"));
    assert!(stdout.contains("backend fixed  PASS"));
    assert!(stdout.contains(CAUTION));
    let png = std::fs::read(dir.path().join("tug.png")).unwrap();
    assert!(png.starts_with(b"\x89PNG\r\n\x1a\n"));
    assert!(png.len() > 30_000, "{}", png.len());
}

#[test]
fn json_to_standard_output() {
    let dir = tempfile::tempdir().unwrap();
    let out = evenkeel(dir.path(), &["check", "--backend", "f32", "--json", "-"]);
    assert_exit(&out, 0);
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(json["scenarios"][0]["runs"][0]["backend"], "f32");
    // The table went to standard error.
    assert!(text(&out.stderr).contains("criterion"));
}

#[test]
fn bad_tuning_fails_with_exit_code_1() {
    let dir = tempfile::tempdir().unwrap();
    let file = data("bad_tuning.toml");
    let out = evenkeel(
        dir.path(),
        &[
            "check",
            file.to_str().unwrap(),
            "--json",
            "r.json",
            "--junit",
            "r.xml",
        ],
    );
    let stdout = text(&out.stdout);
    assert_exit(&out, 1);
    assert!(stdout.contains("FAIL"));
    assert!(
        stdout
            .lines()
            .any(|l| l.contains("peak_jerk") && l.ends_with("FAIL"))
    );
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("r.json")).unwrap()).unwrap();
    assert_eq!(json["passed"], false);
    let xml = std::fs::read_to_string(dir.path().join("r.xml")).unwrap();
    let doc = roxmltree::Document::parse(&xml).unwrap();
    assert!(doc.descendants().any(|n| n.has_tag_name("failure")));
}

/// The demo tug file with `from` replaced by `to`, written as `bad.toml`;
/// returns the directory, and the 1-based line and column of the first
/// occurrence of `needle` in the new text, moved `skip` bytes on.
fn broken(from: &str, to: &str, needle: &str, skip: usize) -> (tempfile::TempDir, usize, usize) {
    let demo = std::fs::read_to_string(&demos()[0]).unwrap();
    assert!(demo.contains(from), "{from}");
    let bad = demo.replacen(from, to, 1);
    let offset = bad.find(needle).unwrap() + skip;
    let line = bad[..offset].matches('\n').count() + 1;
    let column = offset - bad[..offset].rfind('\n').map_or(0, |i| i + 1) + 1;
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("bad.toml"), bad).unwrap();
    (dir, line, column)
}

#[test]
fn impossible_values_fail_with_exit_code_2_and_a_location() {
    // (replace, with, where the error points (needle, bytes on), key, words of the message)
    let cases = [
        (
            "mass_kg = 3900.0",
            "mass_kg = -3900.0",
            ("mass_kg = -", 10),
            "plant.mass_kg",
            "> 0 kg",
        ),
        (
            "period_s = 0.01",
            "period_s = 0.0",
            ("period_s = 0.0", 11),
            "controller.period_s",
            "> 0 s",
        ),
        (
            "output_min = -1.0",
            "output_min = 2.0",
            ("output_max = 1.0", 13),
            "controller.output_max",
            "> controller.output_min",
        ),
        (
            "kp = 1.03",
            "kp = nan",
            ("kp = nan", 5),
            "controller.kp",
            "finite",
        ),
        (
            "ki_per_s = 0.325",
            "ki_per_s = inf",
            ("ki_per_s = inf", 11),
            "controller.ki_per_s",
            "finite",
        ),
        (
            "noise_std = 0.01",
            "noise_std = -0.01",
            ("noise_std = -", 12),
            "sensor.noise_std",
            ">= 0",
        ),
        (
            "{ hold_s = 2.0 }",
            "{ hold_s = -2.0 }",
            ("{ hold_s = -2.0", 11),
            "reference.segments[0].hold_s",
            ">= 0 s",
        ),
        (
            "anti_windup = \"back_calculation\"",
            "anti_windup = \"clamp\"",
            ("anti_windup = ", 14),
            "controller.anti_windup",
            "\"back_calculation\" or \"conditional_integration\"",
        ),
        (
            "model = \"vehicle\"",
            "model = \"vehicle\"\ngain = 2.0",
            ("gain = 2.0", 7),
            "plant.gain",
            "does not apply",
        ),
        (
            "kp = 1.03",
            "kp = \"fast\"",
            ("kp = \"fast", 5),
            "controller.kp",
            "invalid type",
        ),
    ];
    for (from, to, (needle, skip), key, words) in cases {
        let (dir, line, column) = broken(from, to, needle, skip);
        let out = evenkeel(dir.path(), &["check", "bad.toml"]);
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{to}: {err}");
        let location = format!("bad.toml:{line}:{column}: key `{key}`");
        assert!(err.contains(&location), "{to}: want `{location}` in: {err}");
        assert!(err.contains(words), "{to}: want `{words}` in: {err}");
        assert!(out.stdout.is_empty(), "{to}");
    }
}

#[test]
fn unknown_key_is_rejected_with_its_location() {
    let (dir, line, column) = broken("crr = 0.015", "crr = 0.015\nmass_kgs = 12.0", "mass_kgs", 0);
    let out = evenkeel(dir.path(), &["check", "bad.toml"]);
    let err = text(&out.stderr);
    assert_exit(&out, 2);
    assert!(
        err.contains(&format!("bad.toml:{line}:{column}: key `plant.mass_kgs`")),
        "{err}"
    );
    assert!(
        err.contains("unknown field `mass_kgs`") && err.contains("`mass_kg`"),
        "{err}"
    );
    // Unknown tables too.
    let (dir, _, _) = broken("[sensor]", "[sensors]", "[sensors]", 0);
    let out = evenkeel(dir.path(), &["check", "bad.toml"]);
    assert_exit(&out, 2);
    assert!(text(&out.stderr).contains("unknown field `sensors`"));
}

#[test]
fn usage_errors_exit_with_code_2_and_write_nothing() {
    let dir = tempfile::tempdir().unwrap();
    for args in [
        &["check", "--backend", "f16"][..],
        &["check", "--plot", "p.jpg"],
        &["check", "no-such-file.toml"],
        &["frobnicate"],
        &["check", "--junit", "no/such/dir/r.xml"],
    ] {
        let out = evenkeel(dir.path(), args);
        assert_eq!(
            out.status.code(),
            Some(2),
            "{args:?}: {}",
            text(&out.stderr)
        );
        assert!(!out.stderr.is_empty());
    }
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    let out = evenkeel(dir.path(), &["check", "--help"]);
    assert_exit(&out, 0);
}
