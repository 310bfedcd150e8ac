//! Fault injection and the loop monitor, end to end: the fault demo passes
//! on every backend with its flags at the right samples; the monitor finds a
//! constructed oscillation and stays quiet on every demo scenario; fault
//! and monitor settings are validated like the rest of a scenario file.

mod common;

use std::path::Path;

use common::{demo, demos};
use evenkeel::Status;
use evenkeel::monitor::Diagnostics;
use evenkeel_harness::fault::FaultKind;
use evenkeel_harness::sim::Recording;
use evenkeel_harness::{BackendKind, Scenario};

fn fault_demo() -> Scenario {
    Scenario::from_path(demo("faults/irrigation_pump_faults")).unwrap()
}

/// Sample indices `[first, end)` of the fault of `kind`'s name, `nth` of that name.
fn window(s: &Scenario, rec: &Recording, name: &str, nth: usize) -> (usize, usize) {
    let f = s
        .setup
        .faults
        .iter()
        .filter(|f| f.kind.name() == name)
        .nth(nth)
        .unwrap();
    let first = rec.time_s.partition_point(|&t| t < f.start_s);
    let end = rec
        .time_s
        .partition_point(|&t| t < f.start_s + f.duration_s);
    (first, end)
}

#[test]
fn fault_demo_passes_on_every_backend() {
    let outcome = fault_demo().run_all().unwrap();
    outcome.assert_pass();
    for run in &outcome.runs {
        let m = &run.metrics.faults;
        assert_eq!(m.limit_violations, Some(0.0), "{}", run.backend);
        assert_eq!(m.fault_flag_errors, Some(0.0), "{}", run.backend);
        assert!(m.fault_recovery_s.is_some_and(|t| t <= 20.0));
    }
}

#[test]
fn flags_are_raised_exactly_while_the_faults_call_for_them() {
    let s = fault_demo();
    assert_eq!(s.setup.faults.len(), 9);
    for backend in BackendKind::ALL {
        let outcome = s.run_on(&[backend]).unwrap();
        let rec = &outcome.runs[0].recording;
        let name = backend.name();
        // NaN reading: float backends hold and flag; fixed point's guard holds.
        let (a, b) = window(&s, rec, "non_finite", 0);
        assert!(b > a + 10);
        for k in a..b {
            let held = rec.command[k] == rec.command[a - 1];
            assert!(
                held,
                "{name} sample {k}: command moved during a NaN reading"
            );
            let want = if backend.is_fixed() {
                Status::NONE
            } else {
                Status::NON_FINITE
            };
            assert_eq!(rec.status[k], want, "{name} sample {k}");
        }
        // Out of range: flagged on every sample of the window, never before or after.
        let (a, b) = window(&s, rec, "out_of_range", 0);
        for k in a - 5..b + 5 {
            let flagged = rec.status[k].contains(Status::MEASUREMENT_RANGE);
            assert_eq!(flagged, (a..b).contains(&k), "{name} sample {k}");
        }
        // A spike beyond the transmitter's range is flagged; one inside is not.
        let (a, b) = window(&s, rec, "spike", 1);
        assert!((a..b).all(|k| rec.status[k].contains(Status::MEASUREMENT_RANGE)));
        let (a, b) = window(&s, rec, "spike", 0);
        assert!((a..b).all(|k| !rec.status[k].is_fault()));
        // Override: the actuator's value differs from the command, flagged
        // downstream from the second sample of the window (the first
        // reports the value before the override) until one after it.
        let (a, b) = window(&s, rec, "actuator_override", 0);
        for k in a + 1..=b {
            assert_eq!(rec.applied[k - 1], 0.4);
            assert!(rec.status[k].contains(Status::DOWNSTREAM), "{name} {k}");
        }
        // Stuck, dropout and payload change raise no controller flag.
        for kind in ["stuck", "dropout", "payload_change"] {
            let (a, b) = window(&s, rec, kind, 0);
            assert!((a..b).all(|k| !rec.status[k].is_fault()), "{name} {kind}");
        }
    }
}

#[test]
fn every_fault_kind_is_in_the_demo_and_each_is_documented() {
    let s = fault_demo();
    let doc =
        std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("../docs/SCENARIO.md"))
            .unwrap();
    let kinds = [
        FaultKind::NonFinite,
        FaultKind::Stuck(0.0),
        FaultKind::Dropout,
        FaultKind::Spike(0.0),
        FaultKind::OutOfRange(0.0),
        FaultKind::ActuatorOverride(0.0),
        FaultKind::ActuatorClip { min: 0.0, max: 1.0 },
        FaultKind::PayloadChange(1.0),
    ];
    for kind in kinds {
        assert!(
            s.setup.faults.iter().any(|f| f.kind.name() == kind.name()),
            "{} missing from the demo",
            kind.name()
        );
        assert!(
            doc.contains(&format!("`{}`", kind.name())),
            "{}",
            kind.name()
        );
    }
}

/// A too-aggressive gain on a plant with dead time: the pump's lag with a
/// longer delay and Kp far above the ultimate gain (Ziegler–Nichols-style
/// reasoning: k·Kp ≫ 1 with L/τ ≈ 0.7 loses the phase margin; common
/// practice). The loop oscillates in a limit cycle between the limits.
fn aggressive() -> Scenario {
    let mut s = Scenario::from_path(demo("irrigation_pump")).unwrap();
    s.setup.overrides.clear();
    s.controller.kp = 0.02;
    s.controller.ki_per_s = 0.01;
    s.controller.slew_per_s = None;
    if let evenkeel_harness::scenario::PlantModel::FirstOrderLag { dead_time_s, .. } = &mut s.plant
    {
        *dead_time_s = 1.0;
    }
    s
}

#[test]
fn monitor_detects_a_constructed_oscillation() {
    let outcome = aggressive().run_all().unwrap();
    for run in &outcome.runs {
        let flags = &run.recording.faults.monitor;
        let first = flags
            .iter()
            .position(|d| d.contains(Diagnostics::OSCILLATION));
        let t = first.map(|k| run.recording.time_s[k]);
        // Hägglund's rule needs more than 10 detections within 50·Ti.
        assert!(t.is_some_and(|t| t < 100.0), "{}: {t:?}", run.backend);
        let events = flags
            .iter()
            .filter(|d| d.contains(Diagnostics::LOAD_DISTURBANCE))
            .count();
        assert!(events > 10, "{}: {events}", run.backend);
    }
}

#[test]
fn monitor_stays_quiet_on_every_demo_scenario() {
    let files = demos();
    assert!(files.len() >= 3, "{files:?}");
    for file in files {
        let outcome = Scenario::from_path(&file).unwrap().run_all().unwrap();
        for run in &outcome.runs {
            let raised = run
                .recording
                .faults
                .monitor
                .iter()
                .fold(Diagnostics::NONE, |a, d| a | *d);
            assert!(
                !raised.is_alarm(),
                "{} {}: {raised}",
                file.display(),
                run.backend
            );
            assert!(run.recording.faults.monitor_settings.is_some());
        }
    }
}

#[test]
fn trace_csv_carries_fault_and_monitor_columns() {
    let outcome = aggressive().run_on(&[BackendKind::F64]).unwrap();
    let csv = evenkeel_harness::report::trace_csv(&outcome.runs[0].recording);
    let header = csv.lines().next().unwrap();
    assert!(header.ends_with(",fault,monitor"), "{header}");
    assert!(
        csv.lines().any(
            |l| l.ends_with(",0,load_disturbance|oscillation") || l.ends_with(",0,oscillation")
        )
    );
}

fn with(extra: &str) -> String {
    let base = std::fs::read_to_string(demo("irrigation_pump")).unwrap();
    format!("{base}\n{extra}\n")
}

#[test]
fn fault_and_monitor_tables_are_validated_with_locations() {
    let cases = [
        (
            "[[fault]]\nkind = \"melted\"\nstart_s = 1.0\nduration_s = 1.0",
            "fault[0].kind",
            "unknown fault `melted`",
        ),
        (
            "[[fault]]\nkind = \"stuck\"\nstart_s = 1.0\nduration_s = 1.0",
            "fault[0].value",
            "is required",
        ),
        (
            "[[fault]]\nkind = \"non_finite\"\nstart_s = 1.0\nduration_s = 1.0\nvalue = 3.0",
            "fault[0].value",
            "does not apply",
        ),
        (
            "[[fault]]\nkind = \"out_of_range\"\nstart_s = 1.0\nduration_s = 1.0\nvalue = 500.0",
            "fault[0].value",
            "outside the measurement range",
        ),
        (
            "[[fault]]\nkind = \"actuator_clip\"\nstart_s = 1.0\nduration_s = 1.0\nmin = 0.5\nmax = 0.2",
            "fault[0].max",
            "> fault[0].min",
        ),
        (
            "[[fault]]\nkind = \"spike\"\nstart_s = -1.0\nduration_s = 1.0\nvalue = 1.0",
            "fault[0].start_s",
            ">= 0 s",
        ),
        (
            "[[fault]]\nkind = \"dropout\"\nstart_s = 1.0\nduration_s = 0.0",
            "fault[0].duration_s",
            "> 0 s",
        ),
        (
            "[[fault]]\nkind = \"payload_change\"\nstart_s = 1.0\nduration_s = 1.0\nvalue = -2.0",
            "fault[0].value",
            "> 0",
        ),
        ("[monitor]\namplitude = 0.0", "monitor.amplitude", "> 0"),
        (
            "[monitor]\noscillation_count = 99",
            "monitor.oscillation_count",
            "[1, 31]",
        ),
        ("[monitor]\nwobble = 1.0", "monitor.wobble", "unknown field"),
    ];
    for (extra, key, words) in cases {
        let err = Scenario::from_toml(&with(extra), "x.toml").unwrap_err();
        let text = err.to_string();
        assert_eq!(err.key.as_deref(), Some(key), "{extra}: {text}");
        assert!(text.contains(words), "{extra}: {text}");
        assert!(err.line.is_some(), "{extra}: {text}");
    }
    // A valid [monitor] table is taken over.
    let s = Scenario::from_toml(
        &with("[monitor]\namplitude = 2.0\nultimate_period_s = 3.0\nnoise_rms_max = 4.0"),
        "x.toml",
    )
    .unwrap();
    let m = s.setup.monitor.unwrap();
    assert_eq!(
        (m.amplitude, m.ultimate_period_s, m.noise_rms_max),
        (2.0, 3.0, 4.0)
    );
    assert_eq!(m.supervision_time_s, 150.0); // 50·T_u
}
