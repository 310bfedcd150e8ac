//! Back-to-back comparison, fixed point against f64: the library on the
//! demos and constructed cases, and the `evenkeel compare` binary.

mod common;

use std::path::Path;

use common::{assert_exit, data, demos, evenkeel, evenkeel_on, text};
use evenkeel_harness::compare::{self, Comparison, LSB};
use evenkeel_harness::{CAUTION, Scenario};

fn run(path: &Path) -> Comparison {
    compare::compare(&Scenario::from_path(path).unwrap()).unwrap()
}

fn check<'a>(c: &'a Comparison, name: &str) -> &'a compare::Check {
    c.checks.iter().find(|ch| ch.name == name).unwrap()
}

#[test]
fn every_demo_stays_within_the_tolerances_derived_from_the_formats() {
    for path in demos() {
        let c = run(&path);
        c.assert_pass();
        for ch in &c.checks {
            assert!(!ch.tolerance.declared, "{}: demos declare nothing", ch.name);
        }
        // Something differs (fixed point is not f64), within the estimate.
        let r = check(&c, "max_command_diff");
        assert!(r.measured > 0.0 && r.measured <= r.tolerance.limit, "{r:?}");
        // Coefficients as the numeric contract promises.
        assert!(compare::coefficients_within_contract(&c.coefficients));
        // The measured stall error is the analytical one (one LSB of the
        // raw measurement here, in measurement units).
        let s = c.stall.unwrap();
        let lsb = LSB / c.scenario.controller.scaling.measurement.per_unit;
        assert_eq!(c.measurement_lsb, lsb);
        assert_eq!((s.bound, s.measured()), (lsb, lsb), "{}", path.display());
        // The 16-bit backend runs beside it on every demo.
        let x = c.sixteen.as_ref().unwrap();
        assert!(x.command.max_abs > 0.0, "{}", path.display());
        assert!(x.stall.is_some_and(|st| st.bound >= x.measurement_lsb));
    }
}

#[test]
fn the_tug_difference_comes_from_the_encoder_quantum() {
    // With the encoder quantum (0.005 m/s) a reading that falls on the
    // other side of a level moves the command by about Kp·Q_s; without any
    // sensor only the controller's own rounding and the slew step remain.
    let mut s = Scenario::demo().unwrap();
    let with = compare::compare(&s).unwrap();
    s.sensor = None;
    let without = compare::compare(&s).unwrap();
    assert!(with.command.max_abs > 0.005, "{}", with.command.max_abs);
    assert!(without.command.max_abs < with.command.max_abs / 5.0);
    // Without the sensor the slew-step term explains the command
    // difference: both commands ramp by their own stored step.
    assert!(without.command.max_abs <= without.bounds.per_sample + without.bounds.slew_drift);
}

#[test]
fn a_format_too_coarse_for_the_signal_scale_fails_with_an_explanation() {
    let c = run(&data("dosing_flow_m3s.toml"));
    assert!(!c.passed());
    let res = check(&c, "max_lsb_pct");
    assert!(!res.pass);
    assert!((res.measured - 1.526).abs() < 1e-3, "{}", res.measured);
    let note = res.note.as_deref().unwrap();
    assert!(note.contains("too coarse"), "{note}");
    assert!(note.contains("1000 LSB"), "{note}");
    // The declared 0.5 % output tolerance is tighter than what Q16.16 can
    // be expected to deliver at this scale, and the report says so.
    let out = check(&c, "max_output_diff");
    assert!(out.tolerance.declared && !out.pass, "{out:?}");
    assert!(out.tolerance.limit < out.tolerance.derived);
    assert!(
        out.note
            .as_deref()
            .unwrap()
            .contains("cannot be expected to meet it")
    );
    // The same loop in L/s passes everything.
    let ls = run(&data("dosing_flow_ls.toml"));
    ls.assert_pass();
    assert!(ls.output.max_abs < 0.005 * 0.1);
}

#[test]
fn finds_a_known_limit_cycle_and_none_in_a_clean_loop() {
    // See the fixture: period 2(2D + 1) = 10 samples, half an LSB.
    let c = run(&data("limit_cycle.toml"));
    let lc = c.fixed_cycle.expect("the fixed loop hunts");
    assert_eq!(lc.period_samples, 10);
    assert_eq!(lc.amplitude, LSB / 2.0);
    assert!(c.float_cycle.is_none(), "{:?}", c.float_cycle);
    // Within the amplitude the formats predict, so the check passes.
    let ch = check(&c, "max_limit_cycle_amplitude");
    assert!(ch.pass && ch.measured == LSB / 2.0, "{ch:?}");
    // Without the delay: period 2.
    let mut s = Scenario::from_path(data("limit_cycle.toml")).unwrap();
    s.sensor = None;
    let c = compare::compare(&s).unwrap();
    assert_eq!(c.fixed_cycle.map(|l| l.period_samples), Some(2));
    // Clean: the equilibrium command 100 LSB lies on the grid.
    let text = std::fs::read_to_string(data("limit_cycle.toml"))
        .unwrap()
        .replace("-0.0015335083007812500", "-0.00152587890625");
    let clean = Scenario::from_toml(&text, "clean.toml").unwrap();
    let c = compare::compare(&clean).unwrap();
    assert_eq!(c.fixed_cycle, None);
    assert_eq!(c.fixed_ripple.command, 0.0);
    // A declared amplitude below half an LSB turns the cycle into a failure.
    let mut s = Scenario::from_path(data("limit_cycle.toml")).unwrap();
    s.compare.max_limit_cycle_amplitude = Some(LSB / 4.0);
    let c = compare::compare(&s).unwrap();
    let ch = check(&c, "max_limit_cycle_amplitude");
    assert!(!ch.pass);
    assert!(
        ch.note
            .as_deref()
            .unwrap()
            .contains("hunts between Q16.16 values")
    );
}

#[test]
fn an_integral_gain_below_the_accumulator_resolution_stalls() {
    // Ki·Ts = 0.0005 /s · 0.01 s = 5e-6 < 2⁻¹⁷: an error of one LSB adds
    // round(0.33) = 0 accumulator LSB; two LSB are needed.
    let text = std::fs::read_to_string(data("limit_cycle.toml"))
        .unwrap()
        .replace("ki_per_s = 0.0", "ki_per_s = 0.0005");
    let s = Scenario::from_toml(&text, "stall.toml").unwrap();
    let c = compare::compare(&s).unwrap();
    let st = c.stall.unwrap();
    assert_eq!((st.bound, st.measured()), (2.0 * LSB, 2.0 * LSB));
    assert_eq!(st.samples_per_lsb, None);
    let ch = check(&c, "max_stall_error");
    assert!(!ch.pass);
    assert!(
        ch.note
            .as_deref()
            .unwrap()
            .contains("never moves the fixed-point integrator")
    );
}

#[test]
fn compare_table_is_validated() {
    let base = std::fs::read_to_string(data("dosing_flow_ls.toml")).unwrap();
    let bad = base.replace("max_output_diff = 0.005", "max_output_dif = 0.005");
    let e = Scenario::from_toml(&bad, "x.toml").unwrap_err().to_string();
    assert!(e.contains("max_output_dif"), "{e}");
    let bad = base.replace("max_output_diff = 0.005", "max_output_diff = -1.0");
    let e = Scenario::from_toml(&bad, "x.toml").unwrap_err().to_string();
    assert!(
        e.contains("compare.max_output_diff") && e.contains("> 0"),
        "{e}"
    );
    // Absent table: everything derived.
    let s = Scenario::demo().unwrap();
    assert_eq!(s.compare, compare::CompareSpec::default());
}

#[test]
fn cli_compares_the_demos_with_every_report() {
    let dir = tempfile::tempdir().unwrap();
    let out = evenkeel_on(
        dir.path(),
        "compare",
        &demos(),
        &[
            "--json", "c.json", "--junit", "c.xml", "--plot", "c.svg", "--trace", "c.csv",
        ],
    );
    let stdout = text(&out.stdout);
    assert_exit(&out, 0);
    assert!(stdout.contains(CAUTION));
    assert_eq!(stdout.matches("  PASS  (").count(), 4, "{stdout}");
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("c.json")).unwrap()).unwrap();
    assert_eq!(json["passed"], true);
    assert_eq!(json["caution"], CAUTION);
    let first = &json["comparisons"][0];
    assert!(first["command"]["max_abs"].as_f64().unwrap() > 0.0);
    assert!(first["coefficients"].as_array().unwrap().len() >= 4);
    assert_eq!(first["checks"].as_array().unwrap().len(), 7);
    let xml = std::fs::read_to_string(dir.path().join("c.xml")).unwrap();
    let doc = roxmltree::Document::parse(&xml).unwrap();
    assert_eq!(doc.root_element().attribute("tests"), Some("28"));
    assert_eq!(doc.root_element().attribute("failures"), Some("0"));
    // The 16-bit run beside Q16.16 in the JSON, not judged.
    assert_eq!(first["slim16"]["judged"], false);
    assert!(first["slim16"]["command"]["max_abs"].as_f64().unwrap() > 0.0);
    assert!(stdout.contains("16-bit (slim16, shown, not judged)"));
    for name in [
        "baggage-tug",
        "chiller-pump",
        "greenhouse-fan",
        "irrigation-pump",
    ] {
        let svg =
            std::fs::read_to_string(dir.path().join(format!("c-{name}-compare.svg"))).unwrap();
        assert!(svg.contains("fixed Q16.16 against f64"));
        let csv =
            std::fs::read_to_string(dir.path().join(format!("c-{name}-compare.csv"))).unwrap();
        assert!(csv.starts_with("t_s,reference,output_fixed,output_f64"));
    }
    // Nothing but the reports (atomic writes leave no temporary files).
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 10);
}

#[test]
fn cli_fails_the_coarse_scenario_and_refuses_bad_usage() {
    let dir = tempfile::tempdir().unwrap();
    let coarse = data("dosing_flow_m3s.toml").display().to_string();
    let out = evenkeel(
        dir.path(),
        &[
            "compare", &coarse, "--json", "-", "--junit", "j.xml", "--plot", "p.png",
        ],
    );
    assert_exit(&out, 1);
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(json["passed"], false);
    let checks = json["comparisons"][0]["checks"].as_array().unwrap();
    let res = checks.iter().find(|c| c["name"] == "max_lsb_pct").unwrap();
    assert_eq!(res["pass"], false);
    assert!(res["note"].as_str().unwrap().contains("too coarse"));
    let declared = checks
        .iter()
        .find(|c| c["name"] == "max_output_diff")
        .unwrap();
    assert_eq!(declared["declared"], true);
    assert!(declared["source"].as_str().unwrap().contains("0.5 %"));
    // The table went to stderr, the JUnit names the failure.
    assert!(text(&out.stderr).contains("FAIL"));
    let xml = std::fs::read_to_string(dir.path().join("j.xml")).unwrap();
    assert!(xml.contains("failures=\"2\""), "{xml}");
    assert!(
        std::fs::read(dir.path().join("p.png"))
            .unwrap()
            .starts_with(b"\x89PNG")
    );
    // Usage errors: exit 2, nothing written.
    let out = evenkeel(dir.path(), &["compare", "--plot", "p.pdf"]);
    assert_exit(&out, 2);
    let out = evenkeel(dir.path(), &["compare", "no-such.toml"]);
    assert_exit(&out, 2);
    assert!(text(&out.stderr).contains("no-such.toml"));
}
