//! Regression tests for the findings of issue 15, one (or more) per
//! finding, named after it. Finding 3 (interrupted and failing writes)
//! lives in `interrupted_write.rs`; the wider hostile-input suite in
//! `hostile.rs`.

mod common;

use std::path::Path;

use common::{assert_exit, data, evenkeel, text};
use evenkeel_harness::Scenario;
use evenkeel_harness::criteria::MetricKey;
use evenkeel_harness::undefined::Undefined;

fn base() -> String {
    std::fs::read_to_string(data("hostile/base.toml")).unwrap()
}

fn dir_with(files: &[(&str, &str)]) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    for (name, body) in files {
        std::fs::write(dir.path().join(name), body).unwrap();
    }
    dir
}

fn all_files(root: &Path) -> Vec<String> {
    let mut out = Vec::new();
    let mut stack = vec![root.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p.clone());
            }
            out.push(p.strip_prefix(root).unwrap().display().to_string());
        }
    }
    out.sort();
    out
}

#[test]
fn finding_1_a_scenario_name_cannot_leave_the_worst_dir() {
    let named = base().replacen("name = \"tank\"", "name = \"../../escape\"", 1);
    let dir = dir_with(&[]);
    let work = dir.path().join("a/b");
    std::fs::create_dir_all(&work).unwrap();
    std::fs::write(work.join("s.toml"), &named).unwrap();
    // Shards made here, then merged elsewhere as files received from
    // someone else: the name inside cannot steer the files either.
    for (i, save) in [("1/2", "sh1.json"), ("2/2", "sh2.json")] {
        assert_exit(
            &evenkeel(
                &work,
                &["sweep", "s.toml", "-q", "--shard", i, "--save", save],
            ),
            0,
        );
    }
    assert_exit(
        &evenkeel(&work, &["sweep", "s.toml", "-q", "--worst-dir", "w"]),
        0,
    );
    assert_exit(
        &evenkeel(
            &work,
            &["merge", "sh1.json", "sh2.json", "--worst-dir", "m"],
        ),
        0,
    );
    let files = all_files(dir.path());
    for f in &files {
        assert!(
            f.starts_with("a/b") || f == "a",
            "{f} written outside the directories named: {files:?}"
        );
    }
    let worst = all_files(&work.join("w"));
    assert!(!worst.is_empty());
    assert!(
        worst.iter().all(|f| f.starts_with("______escape-worst-")),
        "{worst:?}"
    );
    assert_eq!(worst, all_files(&work.join("m")));
}

#[test]
fn finding_2_outputs_never_replace_inputs_or_each_other() {
    let dir = dir_with(&[("s.toml", &base())]);
    let d = dir.path();
    let out = evenkeel(d, &["check", "s.toml", "--json", "s.toml"]);
    assert_exit(&out, 2);
    assert_eq!(std::fs::read_to_string(d.join("s.toml")).unwrap(), base());
    let out = evenkeel(
        d,
        &["check", "s.toml", "--json", "x.xml", "--junit", "x.xml"],
    );
    assert_exit(&out, 2);
    assert!(text(&out.stderr).contains("would both write x.xml"));
    // Two non-ASCII names that clean to the same stem.
    std::fs::write(d.join("a.toml"), base().replacen("\"tank\"", "\"été\"", 1)).unwrap();
    std::fs::write(d.join("b.toml"), base().replacen("\"tank\"", "\"ôté\"", 1)).unwrap();
    let out = evenkeel(
        d,
        &[
            "check", "a.toml", "b.toml", "--trace", "t.csv", "--plot", "p.svg",
        ],
    );
    assert_exit(&out, 2);
    assert!(
        text(&out.stderr).contains("t-_t_-fixed.csv"),
        "{}",
        text(&out.stderr)
    );
    // The device stays a device.
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        let out = evenkeel(d, &["check", "s.toml", "--json", "/dev/full"]);
        assert_exit(&out, 2);
        assert!(
            std::fs::metadata("/dev/full")
                .unwrap()
                .file_type()
                .is_char_device()
        );
    }
    // A copy (as `design --scenario-out` writes) and the file it came
    // from: the same name.
    std::fs::copy(d.join("s.toml"), d.join("d.toml")).unwrap();
    let out = evenkeel(d, &["check", "s.toml", "d.toml", "--plot", "p.svg"]);
    assert_exit(&out, 2);
    assert!(text(&out.stderr).contains("would both write p-tank-fixed.svg"));
    assert_eq!(all_files(d), ["a.toml", "b.toml", "d.toml", "s.toml"]);
}

/// An edited shard no longer passes: emptied arrays, changed values,
/// long arrays, empty envelopes and `criteria: []` are each refused.
/// (More edits, each with its message: `hostile.rs`.)
#[test]
fn finding_4_an_edited_shard_does_not_pass() {
    let dir = dir_with(&[("s.toml", &base())]);
    let d = dir.path();
    for (i, save) in [("1/2", "sh1.json"), ("2/2", "sh2.json")] {
        assert_exit(
            &evenkeel(d, &["sweep", "s.toml", "-q", "--shard", i, "--save", save]),
            0,
        );
    }
    assert_exit(&evenkeel(d, &["merge", "sh1.json", "sh2.json"]), 0);
    let original = std::fs::read_to_string(d.join("sh2.json")).unwrap();
    let edits: [(&str, &str); 4] = [
        ("\"measured\":[", "\"measured\":[],\"x\":["),
        ("\"criteria\":[{", "\"criteria\":[],\"y\":[{"),
        ("\"pass\":[true,true]", "\"pass\":[true,true,true]"),
        ("\"runs\":2", "\"runs\":0"),
    ];
    for (from, to) in edits {
        assert!(original.contains(from), "{from}");
        std::fs::write(d.join("sh2.json"), original.replacen(from, to, 1)).unwrap();
        let out = evenkeel(d, &["merge", "sh1.json", "sh2.json"]);
        assert_exit(&out, 2);
        assert!(!text(&out.stdout).contains("PASS"), "{from}");
    }
}

/// Runs `toml` on f64 and returns the verdict of `metric`.
fn verdict(toml: &str, metric: MetricKey) -> evenkeel_harness::criteria::Verdict {
    let s = Scenario::from_toml(toml, "t.toml").unwrap();
    let run = s.run::<f64>().unwrap();
    run.verdicts
        .into_iter()
        .find(|v| v.criterion.metric == metric)
        .unwrap()
}

fn with_fault_criteria(fault: &str) -> String {
    base().replacen(
        "[criteria]\n",
        &format!(
            "{fault}\n[criteria]\nfault_recovery_s = {{ max = 3.0 }}\nfault_return_jump = {{ max = 10.0 }}\nfault_overshoot = {{ max = 10.0 }}\n"
        ),
        1,
    )
}

#[test]
fn finding_5_a_fault_that_never_clears_has_no_recovery() {
    let toml = with_fault_criteria(
        "[[fault]]\nkind = \"stuck\"\nvalue = 0.2\nstart_s = 2.0\nduration_s = 10.0\n",
    );
    let v = verdict(&toml, MetricKey::FaultRecovery);
    assert_eq!(v.measured, None);
    assert_eq!(v.undefined, Some(Undefined::FaultAtEnd));
    assert!(!v.pass);
}

#[test]
fn finding_6_payload_changes_alone_do_not_fail_the_return_checks() {
    let toml = with_fault_criteria(
        "[[fault]]\nkind = \"payload_change\"\nvalue = 1.3\nstart_s = 2.0\nduration_s = 1.0\n",
    );
    for m in [MetricKey::FaultReturnJump, MetricKey::FaultOvershoot] {
        let v = verdict(&toml, m);
        assert_eq!(v.undefined, Some(Undefined::OnlyPayload), "{m}");
        assert!(v.pass, "{m}");
    }
    let out = Scenario::from_toml(&toml, "t.toml")
        .unwrap()
        .run_all()
        .unwrap();
    for run in &out.runs {
        let returns: Vec<_> = run
            .verdicts
            .iter()
            .filter(|v| {
                matches!(
                    v.criterion.metric,
                    MetricKey::FaultReturnJump | MetricKey::FaultOvershoot
                )
            })
            .collect();
        assert!(
            returns.len() == 2 && returns.iter().all(|v| v.pass),
            "{out}"
        );
    }
    let xml = evenkeel_harness::report::junit(std::slice::from_ref(&out));
    assert!(
        xml.contains("<skipped message=\"fault_return_jump measured undefined (not applicable")
    );
}

#[test]
fn finding_7_a_reading_f32_cannot_hold_is_expected_as_non_finite() {
    let toml = base().replacen(
        "[criteria]\n",
        "[[fault]]\nkind = \"spike\"\nvalue = 1.0e300\nstart_s = 2.0\nduration_s = 0.5\n\n[criteria]\nfault_flag_errors = { max = 0.0 }\n",
        1,
    );
    let s = Scenario::from_toml(&toml, "t.toml").unwrap();
    for run in s.run_all().unwrap().runs {
        let v = run
            .verdicts
            .iter()
            .find(|v| v.criterion.metric == MetricKey::FaultFlagErrors)
            .unwrap();
        assert_eq!(v.measured, Some(0.0), "{}", run.backend);
    }
}

#[test]
fn finding_8_undefined_says_why_in_table_json_and_junit() {
    // A plant that barely responds: the loop never moves.
    let toml = base()
        .replacen("gain = 1.0\n", "gain = 1.0e-9\n", 1)
        .replacen(
            "[criteria]\n",
            "[criteria]\nrise_time_s = { max = 2.0 }\nsettling_time_s = { max = 3.0 }\n",
            1,
        );
    let toml = toml.split("[uncertainty]").next().unwrap().to_owned();
    for m in [
        MetricKey::Overshoot,
        MetricKey::RiseTime,
        MetricKey::SettlingTime,
    ] {
        let v = verdict(&toml, m);
        assert_eq!(v.undefined, Some(Undefined::NeverMoved), "{m}");
        assert!(!v.pass, "{m}: a loop that never moved must not pass");
    }
    let dir = dir_with(&[("s.toml", &toml)]);
    let out = evenkeel(
        dir.path(),
        &["check", "s.toml", "--json", "r.json", "--junit", "r.xml"],
    );
    assert_exit(&out, 1);
    let reason = Undefined::NeverMoved.reason();
    assert!(text(&out.stdout).contains(reason), "{}", text(&out.stdout));
    let json = std::fs::read_to_string(dir.path().join("r.json")).unwrap();
    assert!(json.contains(reason) && json.contains("\"undefined\": \"never_moved\""));
    let xml = std::fs::read_to_string(dir.path().join("r.xml")).unwrap();
    assert!(xml.contains(reason));
    // A reference segment or a fault that starts after the end: refused.
    let late = base().replacen("hold_s = 4.0 }]", "hold_s = 4.0 }, { to = 0.0 }]", 1);
    let e = Scenario::from_toml(&late, "late.toml").unwrap_err();
    assert!(e.to_string().contains("never act"), "{e}");
}

#[test]
fn finding_9_a_meaningless_plant_is_refused_at_load() {
    let tug = std::fs::read_to_string(common::demo("baggage_tug")).unwrap();
    let at = tug.find("mass_kg = ").unwrap();
    let end = at + tug[at..].find('\n').unwrap();
    let feather = format!("{}mass_kg = 1e-300{}", &tug[..at], &tug[end..]);
    let e = Scenario::from_toml(&feather, "tug.toml").unwrap_err();
    assert_eq!(e.key.as_deref(), Some("plant.mass_kg"));
    assert!(e.to_string().contains("1e-300 kg is too small"), "{e}");
    assert!(e.line.is_some());
    let through_zero = base().replacen("min = 0.8", "min = -0.8", 1);
    let e = Scenario::from_toml(&through_zero, "t.toml").unwrap_err();
    assert!(e.to_string().contains("includes 0"), "{e}");
    let dir = dir_with(&[("s.toml", &through_zero)]);
    assert_exit(&evenkeel(dir.path(), &["sweep", "s.toml"]), 2);
}

#[test]
fn finding_9_a_plant_state_that_stops_being_finite_stops_the_run() {
    // A load of 1e308 measurement/s from t = 1 s on an integrator the
    // controller (±5, gain 1) cannot hold: the level reaches f64's range
    // (1.8e308) after about 180 periods, near t = 2.8 s.
    let runaway = base()
        .replacen("name = \"tank\"", "name = \"runaway\"", 1)
        .replacen(
            "[criteria]",
            "[disturbance.load]\nsegments = [{ hold_s = 1.0 }, { to = 1e308, hold_s = 3.0 }]\n\n[criteria]",
            1,
        );
    let dir = dir_with(&[("s.toml", &runaway)]);
    let out = evenkeel(
        dir.path(),
        &["check", "s.toml", "--backend", "f64", "--json", "r.json"],
    );
    assert_exit(&out, 2);
    let err = text(&out.stderr);
    assert!(err.contains("s.toml"), "{err}");
    assert!(
        err.contains("the plant's output is inf at t = 2.8 s on the f64 backend"),
        "{err}"
    );
    // Nothing is written for a run that is meaningless.
    assert_eq!(all_files(dir.path()), ["s.toml"]);
}

#[test]
fn finding_10_inputs_and_designs_are_bounded_before_they_run() {
    let dir = dir_with(&[("s.toml", &base())]);
    let d = dir.path();
    let out = evenkeel(d, &["check", "/dev/zero"]);
    assert_exit(&out, 2);
    assert!(text(&out.stderr).contains("not a regular file"));
    let long = base().replacen("duration_s = 4.0", "duration_s = 1.0e6", 1);
    std::fs::write(d.join("long.toml"), long).unwrap();
    let out = evenkeel(d, &["check", "long.toml"]);
    assert_exit(&out, 2);
    assert!(text(&out.stderr).contains("1.000e8 samples: at most 5e6 are allowed"));
    let out = evenkeel(
        d,
        &[
            "sweep",
            "s.toml",
            "--method",
            "latin-hypercube",
            "--count",
            "100000000",
        ],
    );
    assert_exit(&out, 2);
    assert!(text(&out.stderr).contains("100000000 variants, at most 10000000"));
}

/// A long sweep off a terminal says how long it will take before it
/// starts, then prints progress lines (the run is stopped after the first).
#[test]
fn finding_10_a_long_sweep_estimates_and_reports_progress_off_a_terminal() {
    use std::io::{BufRead, BufReader};
    let dir = dir_with(&[("s.toml", &base())]);
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_evenkeel"))
        .current_dir(dir.path())
        .args([
            "sweep", "s.toml", "--method", "random", "--count", "1000000",
        ])
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    let stderr = child.stderr.take().unwrap();
    let mut lines = BufReader::new(stderr).lines();
    let first = lines.next().unwrap().unwrap();
    assert!(
        first.starts_with("sweep: 1000000 variants on ") && first.contains("about"),
        "{first}"
    );
    let second = lines.next().unwrap().unwrap();
    assert!(
        second.starts_with("sweep: ") && second.contains(" of 1000000 variants ("),
        "{second}"
    );
    child.kill().unwrap();
    let _ = child.wait();
}

#[test]
fn finding_11_messages_name_counts_lines_and_near_misses() {
    let dir = dir_with(&[("s.toml", &base())]);
    let d = dir.path();
    let grid = evenkeel(
        d,
        &[
            "sweep",
            "s.toml",
            "--method",
            "grid",
            "--levels",
            "1000000000",
        ],
    );
    assert!(text(&grid.stderr).contains("1000000000 variants, at most 100000000 are allowed"));
    std::fs::write(
        d.join("big.toml"),
        base().replacen("output_max = 5.0", "output_max = 40000.0", 1),
    )
    .unwrap();
    let big = evenkeel(d, &["check", "big.toml"]);
    assert_exit(&big, 2);
    assert!(
        text(&big.stderr).contains("big.toml:12:14: key `controller.output_max`"),
        "{}",
        text(&big.stderr)
    );
    std::fs::write(
        d.join("ctl.toml"),
        base().replacen("\"tank\"", "\"t\\u001b[31mank\"", 1),
    )
    .unwrap();
    let ctl = evenkeel(d, &["check", "ctl.toml"]);
    assert_exit(&ctl, 2);
    assert!(!text(&ctl.stderr).contains('\u{1b}'));
    let junit = evenkeel(d, &["check", "s.toml", "--junit", "-"]);
    assert_exit(&junit, 0);
    assert!(text(&junit.stdout).starts_with("<?xml"));
    assert!(!d.join("-").exists());
    std::fs::write(
        d.join("typo.toml"),
        base().replacen("gain = 1.0\n", "gian = 1.0\n", 1),
    )
    .unwrap();
    let typo = evenkeel(d, &["check", "typo.toml"]);
    let e = text(&typo.stderr);
    assert!(
        e.contains("did you mean `gain`?") && !e.contains("mass_kg"),
        "{e}"
    );
    let sub = evenkeel(d, &["chek"]);
    assert!(text(&sub.stderr).contains("'check'"));
    let as_dir = evenkeel(d, &["sweep", "s.toml", "-q", "--worst-dir", "s.toml"]);
    assert!(text(&as_dir.stderr).contains("is a file, not a directory"));
    std::fs::write(d.join("arr.toml"), "plant = [\n").unwrap();
    let arr = text(&evenkeel(d, &["check", "arr.toml"]).stderr);
    assert!(
        arr.contains("key `plant`:") && !arr.contains("plant.plant"),
        "{arr}"
    );
    let name = format!("out-{}.json", "n".repeat(300));
    let long = evenkeel(d, &["check", "s.toml", "--json", &name]);
    assert!(text(&long.stderr).contains("the file name is 309 bytes long, at most 255"));
}
