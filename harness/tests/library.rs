//! The library as a user's own tests would call it.

use evenkeel_harness::criteria::MetricKey;
use evenkeel_harness::scenario::PlantModel;
use evenkeel_harness::{BackendKind, Scenario};

fn tug() -> Scenario {
    Scenario::demo().unwrap()
}

#[test]
fn tug_tuning_also_passes_at_the_light_end_of_the_fleet() {
    // The demo file is the heavy end (3,900 kg, motor -20 %); the same
    // settings must pass with the tractor alone and the strongest motor.
    let mut s = tug();
    let PlantModel::Vehicle(p) = &mut s.plant else {
        panic!("the tug is a vehicle");
    };
    p.mass_kg = 1500.0;
    p.actuator_gain_n = 7200.0;
    s.run_all().unwrap().assert_pass();
}

#[test]
fn backends_agree_closely_on_the_demo() {
    // Back-to-back: Q16.16 and f32 against f64. Rounding differences are
    // tiny (Q16.16 LSB 1.5e-5 m/s), but the encoder quantiser (0.005 m/s)
    // turns one that straddles a level into a whole quantum, which the loop
    // (Kp = 3 per m/s) carries into the speed for a while. Measured: fixed
    // 0.012 m/s, f32 below that; bound: four quanta.
    let outcome = tug().run_all().unwrap();
    let f64_run = &outcome.runs[2];
    for run in &outcome.runs[..2] {
        let worst = run
            .recording
            .output
            .iter()
            .zip(&f64_run.recording.output)
            .map(|(a, b)| (a - b).abs())
            .fold(0.0, f64::max);
        assert!(worst < 0.02, "{}: {worst:e} m/s", run.backend);
    }
}

#[test]
#[should_panic(expected = "peak_jerk")]
fn assert_pass_reports_the_failing_criterion() {
    let mut s = tug();
    s.controller.kp = 8.0;
    s.controller.ki_per_s = 6.0;
    s.controller.slew_per_s = None;
    s.run_on(&[BackendKind::F64]).unwrap().assert_pass();
}

#[test]
fn a_scenario_built_in_code() {
    use evenkeel::Settings;
    use evenkeel_harness::criteria::Criterion;
    use evenkeel_harness::profile::{Profile, Segment};
    use evenkeel_harness::sim::Setup;
    let mut s = tug();
    s.name = "level-tank".into();
    s.plant = PlantModel::Integrator { gain: 0.5 };
    s.actuator = None;
    s.sensor = None;
    s.controller = Settings::new(0.05, 4.0, 1.0, -1.0, 1.0);
    s.setup = Setup {
        duration_s: 40.0,
        reference: Profile::new(0.0, vec![Segment::step(1.0, 40.0)]),
        ..Setup::default()
    };
    s.criteria = vec![
        Criterion::max(MetricKey::Overshoot, 20.0),
        Criterion::max(MetricKey::SettlingTime, 20.0),
    ];
    let outcome = s.run_all().unwrap();
    outcome.assert_pass();
    assert_eq!(outcome.runs.len(), 4, "fixed, slim16, f32, f64");
    assert!(outcome.to_string().contains("level-tank"));
}
