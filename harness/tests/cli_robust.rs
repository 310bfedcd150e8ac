//! End-to-end tests of `evenkeel sweep`, `merge` and `design`, run in a
//! temporary directory.

mod common;

use common::{assert_exit, demo, evenkeel, text};

#[test]
fn sweep_writes_every_report_and_shards_merge() {
    let dir = tempfile::tempdir().unwrap();
    let pump = demo("irrigation_pump");
    let pump = pump.to_str().unwrap();
    let common = ["--method", "random", "--count", "6", "--seed", "3"];
    let mut args = vec!["sweep", pump];
    args.extend(common);
    args.extend([
        "--json",
        "s.json",
        "--junit",
        "s.xml",
        "--plot",
        "env.svg",
        "--worst-dir",
        "worst",
        "--save",
        "all.json",
    ]);
    let out = evenkeel(dir.path(), &args);
    let table = text(&out.stdout);
    assert_exit(&out, 0);
    assert!(
        table.contains("pass %") && table.contains("6 of 6 variants"),
        "{table}"
    );
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("s.json")).unwrap()).unwrap();
    assert_eq!(json["passed"], true);
    assert_eq!(json["criteria"][0]["pass_fraction"], 1.0);
    assert!(json["criteria"][0]["worst_variant"]["params"]["gain"].is_number());
    let xml = std::fs::read_to_string(dir.path().join("s.xml")).unwrap();
    // Stable JUnit names (no limit in the name), the limit as a property.
    let doc = roxmltree::Document::parse(&xml).unwrap();
    let case = doc
        .descendants()
        .find(|n| n.has_tag_name("testcase"))
        .unwrap();
    assert!(case.attribute("name").unwrap().ends_with(" max"), "{xml}");
    assert!(
        case.descendants()
            .any(|p| p.has_tag_name("property") && p.attribute("name") == Some("limit"))
    );
    assert!(
        std::fs::read_to_string(dir.path().join("env.svg"))
            .unwrap()
            .contains("<svg")
    );
    // Each worst case re-runs alone with `check`.
    let worst: Vec<_> = std::fs::read_dir(dir.path().join("worst"))
        .unwrap()
        .collect();
    assert!(!worst.is_empty());
    let first = worst[0].as_ref().unwrap().path();
    let out = evenkeel(
        dir.path(),
        &["check", first.to_str().unwrap(), "--backend", "fixed"],
    );
    assert_exit(&out, 0);

    // Two shards, merged: the same JSON report as the single run.
    for i in ["1/2", "2/2"] {
        let save = format!("shard{}.json", &i[..1]);
        let mut args = vec!["sweep", pump, "--quiet", "--shard", i, "--save", &save];
        args.extend(common);
        assert_exit(&evenkeel(dir.path(), &args), 0);
    }
    let out = evenkeel(
        dir.path(),
        &["merge", "shard2.json", "shard1.json", "--json", "m.json"],
    );
    assert_exit(&out, 0);
    assert_eq!(
        std::fs::read_to_string(dir.path().join("m.json")).unwrap(),
        std::fs::read_to_string(dir.path().join("s.json")).unwrap()
    );
    // A lone shard does not merge.
    let out = evenkeel(dir.path(), &["merge", "shard1.json"]);
    assert_exit(&out, 2);
    // A scenario without [uncertainty] has nothing to sweep.
    let bare = dir.path().join("bare.toml");
    let pump_text = std::fs::read_to_string(pump).unwrap();
    std::fs::write(&bare, pump_text.split("[uncertainty]").next().unwrap()).unwrap();
    assert_exit(&evenkeel(dir.path(), &["sweep", bare.to_str().unwrap()]), 2);
}

#[test]
fn design_writes_a_scenario_that_checks_and_a_const_snippet() {
    let dir = tempfile::tempdir().unwrap();
    let fan = demo("greenhouse_fan");
    let out = evenkeel(
        dir.path(),
        &[
            "design",
            fan.to_str().unwrap(),
            "--scenario-out",
            "fan.toml",
            "--rust-out",
            "fan.rs",
        ],
    );
    let report = text(&out.stdout);
    assert_exit(&out, 0);
    for needle in [
        "SIMC",
        "GM dB",
        "PM deg",
        "DM s",
        "I16F16",
        "slew limit from the jerk limit",
    ] {
        assert!(report.contains(needle), "{needle}: {report}");
    }
    let rust = std::fs::read_to_string(dir.path().join("fan.rs")).unwrap();
    assert!(
        rust.contains("evenkeel::config!(I16F16, SETTINGS)"),
        "{rust}"
    );
    let out = evenkeel(dir.path(), &["check", "fan.toml"]);
    assert_exit(&out, 0);
    let out = evenkeel(dir.path(), &["sweep", "fan.toml", "-q"]);
    assert_exit(&out, 0);
    // Pole placement works too.
    let out = evenkeel(
        dir.path(),
        &[
            "design",
            fan.to_str().unwrap(),
            "--method",
            "pole-placement",
        ],
    );
    assert!(text(&out.stdout).contains("pole placement"));
}
