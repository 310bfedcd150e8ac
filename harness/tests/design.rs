//! `evenkeel design` end to end, on scenarios of our own invention
//! (`tests/data/design/`, invented numbers, not the demos):
//!
//! - feasible ones (a dead-time-dominated lag with θ/τ from 0.1 to 0.5, an
//!   integrating loop with a 2× gain range, a vehicle with a 3× mass
//!   range): `design` exits 0, and `sweep --count 1000` of the scenario it
//!   wrote passes every variant;
//! - infeasible ones (a setpoint out of reach at one corner, a jerk limit
//!   that contradicts the settling time at the heavy corner): exit 1, and
//!   the message names the criterion and the corner;
//! - the file it writes is the user's file with only the designed values
//!   changed; it refuses to write over its input without `--in-place`;
//! - JSON and JUnit carry the verdicts; the demos pass re-designed.

mod common;

use common::{assert_exit, data, demo, evenkeel, text};

fn scenario(name: &str) -> String {
    data(&format!("design/{name}.toml")).display().to_string()
}

#[test]
fn feasible_scenarios_are_designed_and_pass_a_thousand_variant_sweep() {
    for name in ["tank_heater", "level_tank", "shuttle"] {
        let dir = tempfile::tempdir().unwrap();
        let out = evenkeel(
            dir.path(),
            &[
                "design",
                &scenario(name),
                "--scenario-out",
                "designed.toml",
                "--json",
                "design.json",
            ],
        );
        assert_exit(&out, 0);
        let json: serde_json::Value =
            serde_json::from_slice(&std::fs::read(dir.path().join("design.json")).unwrap())
                .unwrap();
        assert_eq!(json["passed"], true, "{name}");
        assert_eq!(json["feasibility"]["feasible"], true, "{name}");
        for c in json["criteria"].as_array().unwrap() {
            assert!(c["worst_margin"].as_f64().unwrap() >= 0.0, "{name}: {c}");
            assert_eq!(c["failing"], 0, "{name}: {c}");
        }
        let out = evenkeel(
            dir.path(),
            &[
                "sweep",
                "designed.toml",
                "--method",
                "latin-hypercube",
                "--count",
                "1000",
                "-q",
            ],
        );
        assert_exit(&out, 0);
        assert!(
            text(&out.stdout).contains("1000 of 1000 variants met every criterion"),
            "{name}: {}",
            text(&out.stdout)
        );
    }
}

#[test]
fn the_search_turns_a_failing_start_into_a_passing_loop() {
    // The SIMC start of the dead-time-dominated heater fails; the search
    // must move it (and say so).
    let dir = tempfile::tempdir().unwrap();
    let out = evenkeel(
        dir.path(),
        &["design", &scenario("tank_heater"), "--json", "d.json"],
    );
    assert_exit(&out, 0);
    let json: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("d.json")).unwrap()).unwrap();
    let search = &json["search"];
    assert_eq!(search["searched"], true);
    assert!(
        search["start_worst_margin"].as_f64().unwrap() < 0.0,
        "{search}"
    );
    assert!(
        search["final_worst_margin"].as_f64().unwrap() >= 0.0,
        "{search}"
    );
    assert_eq!(json["started_from"], "analytic");
    assert_ne!(json["proposal"]["kp"], json["analytic"]["kp"]);
    // Without the search the same start fails: exit 1.
    let out = evenkeel(
        dir.path(),
        &["design", &scenario("tank_heater"), "--no-search"],
    );
    assert_exit(&out, 1);
    assert!(text(&out.stdout).contains("verdict: FAIL"));
}

#[test]
fn infeasible_scenarios_exit_1_naming_the_criterion_and_the_corner() {
    for (name, needles) in [
        (
            "weak_heater",
            [
                "INFEASIBLE: steady_state_error cannot be met at corner gain=20 ",
                "raise output_max to ≥ 1.1",
            ],
        ),
        (
            "stiff_shuttle",
            [
                "INFEASIBLE: settling_time_s cannot be met at corner mass_kg=1500",
                "the peak_jerk limit 0.5, ",
            ],
        ),
    ] {
        let dir = tempfile::tempdir().unwrap();
        let out = evenkeel(
            dir.path(),
            &[
                "design",
                &scenario(name),
                "--scenario-out",
                "x.toml",
                "--junit",
                "d.xml",
            ],
        );
        assert_exit(&out, 1);
        let report = text(&out.stdout);
        for needle in needles {
            assert!(report.contains(needle), "{name}: {needle}\n{report}");
        }
        assert!(report.contains("verdict: FAIL: infeasible"), "{report}");
        // Nothing was tuned, so no scenario is written.
        assert!(!dir.path().join("x.toml").exists());
        let xml = std::fs::read_to_string(dir.path().join("d.xml")).unwrap();
        let doc = roxmltree::Document::parse(&xml).unwrap();
        let feasibility = doc
            .descendants()
            .find(|n| n.attribute("name") == Some("feasibility"))
            .unwrap();
        assert!(feasibility.children().any(|c| c.has_tag_name("failure")));
    }
}

#[test]
fn scenario_out_keeps_the_file_as_written_but_the_designed_values() {
    let dir = tempfile::tempdir().unwrap();
    let input = scenario("tank_heater");
    let out = evenkeel(
        dir.path(),
        &["design", &input, "--scenario-out", "designed.toml"],
    );
    assert_exit(&out, 0);
    let before = std::fs::read_to_string(&input).unwrap();
    let after = std::fs::read_to_string(dir.path().join("designed.toml")).unwrap();
    // Outside [controller] every line is as written, in order; comments too.
    let outside = |t: &str| -> Vec<String> {
        let mut keep = Vec::new();
        let mut inside = false;
        for line in t.lines().filter(|l| !l.starts_with("# evenkeel design:")) {
            if line.starts_with('[') {
                inside = line.starts_with("[controller]");
            }
            if !inside {
                keep.push(line.to_owned());
            }
        }
        keep
    };
    assert_eq!(outside(&before), outside(&after));
    assert!(after.starts_with("# evenkeel design:"), "{after}");
    // The comments of [controller] lines survive.
    assert!(
        after.contains("# holding 15 K at the nominal gain (60 K)"),
        "{after}"
    );
    assert!(
        after.contains("anti_windup = \"back_calculation\""),
        "{after}"
    );
    // And the file runs: check passes on every backend.
    let out = evenkeel(dir.path(), &["check", "designed.toml"]);
    assert_exit(&out, 0);
}

#[test]
fn design_refuses_to_overwrite_its_input_unless_in_place() {
    let dir = tempfile::tempdir().unwrap();
    let copy = dir.path().join("heater.toml");
    std::fs::copy(scenario("tank_heater"), &copy).unwrap();
    let original = std::fs::read_to_string(&copy).unwrap();
    for flag in ["--scenario-out", "--json", "--junit", "--rust-out"] {
        let out = evenkeel(dir.path(), &["design", "heater.toml", flag, "heater.toml"]);
        assert_exit(&out, 2);
        assert!(
            text(&out.stderr).contains("refusing to overwrite it"),
            "{flag}: {}",
            text(&out.stderr)
        );
        assert_eq!(std::fs::read_to_string(&copy).unwrap(), original, "{flag}");
    }
    let out = evenkeel(
        dir.path(),
        &[
            "design",
            "heater.toml",
            "--json",
            "a.json",
            "--junit",
            "a.json",
        ],
    );
    assert_exit(&out, 2);
    assert!(text(&out.stderr).contains("would both write a.json"));
    // --in-place writes the design into the input, keeping the rest.
    let out = evenkeel(dir.path(), &["design", "heater.toml", "--in-place"]);
    assert_exit(&out, 0);
    let designed = std::fs::read_to_string(&copy).unwrap();
    assert_ne!(designed, original);
    assert!(designed.contains("[uncertainty]\ngain = { min = 40.0, max = 80.0 }\n"));
    // A second run on its own output starts from the [controller] as
    // written, which already passes: the file comes out identical.
    let out = evenkeel(dir.path(), &["design", "heater.toml", "--in-place"]);
    assert_exit(&out, 0);
    assert!(
        text(&out.stdout).contains("search: not needed"),
        "{}",
        text(&out.stdout)
    );
    assert_eq!(std::fs::read_to_string(&copy).unwrap(), designed);
}

#[test]
fn in_place_leaves_a_failing_input_untouched() {
    let dir = tempfile::tempdir().unwrap();
    let copy = dir.path().join("heater.toml");
    std::fs::copy(scenario("tank_heater"), &copy).unwrap();
    let original = std::fs::read_to_string(&copy).unwrap();
    let out = evenkeel(
        dir.path(),
        &["design", "heater.toml", "--in-place", "--no-search"],
    );
    assert_exit(&out, 1);
    assert!(text(&out.stdout).contains("not written: the design does not pass"));
    assert_eq!(std::fs::read_to_string(&copy).unwrap(), original);
}

#[test]
fn json_and_junit_report_every_criterion_constraint_and_corner() {
    let dir = tempfile::tempdir().unwrap();
    let out = evenkeel(
        dir.path(),
        &[
            "design",
            &demo("irrigation_pump").display().to_string(),
            "--json",
            "-",
            "--junit",
            "d.xml",
        ],
    );
    assert_exit(&out, 0);
    // --json -: JSON on standard output, the report on standard error.
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert!(text(&out.stderr).contains("verdict: PASS"));
    for key in [
        "caution",
        "notices",
        "feasibility",
        "proposal",
        "analytic",
        "started_from",
        "derivation",
        "search",
        "sample",
        "criteria",
        "constraints",
        "corners",
        "fixed_point",
    ] {
        assert!(json.get(key).is_some(), "{key}");
    }
    assert_eq!(json["criteria"].as_array().unwrap().len(), 8);
    let names: Vec<&str> = json["constraints"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["name"].as_str().unwrap())
        .collect();
    assert_eq!(names, ["stable", "gain_margin", "phase_margin_deg", "ms"]);
    for c in json["corners"].as_array().unwrap() {
        let ms = c["ms"].as_f64().unwrap();
        let mt = c["mt"].as_f64().unwrap();
        // |T| tends to 1 at low frequency (integral action).
        assert!((1.0..=2.0).contains(&ms) && mt >= 0.99, "{c}");
    }
    assert_eq!(json["sample"]["variants"], 8 + 1 + 64);
    let xml = std::fs::read_to_string(dir.path().join("d.xml")).unwrap();
    let doc = roxmltree::Document::parse(&xml).unwrap();
    let cases: Vec<&str> = doc
        .descendants()
        .filter(|n| n.has_tag_name("testcase"))
        .map(|n| n.attribute("name").unwrap())
        .collect();
    assert!(cases.contains(&"feasibility"));
    assert!(cases.contains(&"criterion settling_time_s"));
    assert!(cases.contains(&"constraint ms"));
    assert!(cases.contains(&"fixed_point"));
    assert_eq!(cases.len(), 1 + 8 + 4 + 1);
    assert!(!xml.contains("<failure"), "{xml}");
}

#[test]
fn each_demo_passes_after_being_redesigned() {
    for name in [
        "baggage_tug",
        "chiller_pump",
        "greenhouse_fan",
        "irrigation_pump",
    ] {
        let dir = tempfile::tempdir().unwrap();
        let out = evenkeel(
            dir.path(),
            &[
                "design",
                &demo(name).display().to_string(),
                "--scenario-out",
                "d.toml",
                "--plot",
                "d.svg",
            ],
        );
        assert_exit(&out, 0);
        // Which fixed format the loop needs, both formats' figures.
        let report = String::from_utf8_lossy(&out.stdout).into_owned();
        assert!(report.contains("fixed format needed: "), "{report}");
        assert!(
            report.contains("    Q16.16: steady-state resolution"),
            "{report}"
        );
        assert!(
            report.contains("    16-bit: steady-state resolution"),
            "{report}"
        );
        if name == "chiller_pump" {
            // 12-bit ADC and PWM counts: the 16-bit format suffices.
            assert!(
                report.contains("fixed format needed: 16-bit (slim16 backend)"),
                "{report}"
            );
        }
        let svg = std::fs::read_to_string(dir.path().join("d.svg")).unwrap();
        assert!(
            svg.contains("Nyquist") && svg.contains("speed trade-off"),
            "{name}"
        );
        let out = evenkeel(dir.path(), &["check", "d.toml"]);
        assert_exit(&out, 0);
        let out = evenkeel(
            dir.path(),
            &["sweep", "d.toml", "--method", "corners", "-q"],
        );
        assert_exit(&out, 0);
    }
}
