//! Counts in, counts out through the harness: a scenario with `[scaling]`
//! simulates exactly what the firmware computes. The loop and the three
//! steps worked by hand are those of `controller/tests/counts.rs`; here the
//! harness's sensor (an ADC) and actuator (a PWM compare register) produce
//! the counts, and the harness must give the same commands as the
//! controller fed by hand.

use evenkeel::fixed::types::I16F16;
use evenkeel::{Backend, Config, Controller, Scale, Scaling, Settings, Slim16};
use evenkeel_harness::{BackendKind, Scenario};

/// The pressure loop of `controller/tests/counts.rs` (numbers invented for
/// the test): 12-bit ADC, 409.5 counts per bar and 410 at 0 bar; PWM
/// 0 … 1000 for 0 … 100 %. The plant is an integrator so slow (1e-9 bar/s
/// per %) that the pressure stays at 3 bar over the first steps: the ADC
/// reads 3 · 409.5 + 410 = 1638.5 → 1639 counts every time.
const TOML: &str = r#"
[scenario]
name = "counts-by-hand"
duration_s = 0.01
output_unit = "bar"
command_unit = "%"

[controller]
period_s = 0.001
kp = 2.0
ki_per_s = 50.0
output_min = 0.0
output_max = 100.0

[scaling]
adc_bits = 12
measurement_per_unit = 409.5
measurement_offset = 410.0
command_per_unit = 10.0
command_counts = true

[plant]
model = "integrator"
gain = 1e-9
initial_output = 3.0

[reference]
initial = 5.0

[criteria]
limit_violations = { max = 0.0 }
"#;

/// Worked by hand in `controller/tests/counts.rs`: setpoint 5 bar =
/// 2457.5 counts (the 16-bit firmware stores 2458, Q16.16 keeps the half),
/// measurement 1639 counts, e = 819 (818.5) counts; P = 40 counts, the
/// integrator gains one count per step: compare values 40, 41, 42, that is
/// 4.0, 4.1 and 4.2 % duty.
const EXPECTED_COUNTS: [i32; 3] = [40, 41, 42];

fn scenario() -> Scenario {
    Scenario::from_toml(TOML, "counts.toml").unwrap()
}

#[test]
fn the_scaling_table_gives_the_controller_its_counts() {
    let s = scenario();
    let want = Scaling::NONE
        .with_adc(12, Scale::new(409.5, 410.0))
        .with_pwm(Scale::new(10.0, 0.0));
    assert_eq!(s.controller.scaling, want);
    // The 16-bit backend runs on the scenario's own scaling.
    assert_eq!(s.settings_on(BackendKind::Slim16).scaling, want);
}

#[test]
fn harness_and_controller_agree_with_the_steps_worked_by_hand() {
    let s = scenario();
    let settings: Settings = s.controller;
    for kind in [BackendKind::Slim16, BackendKind::Fixed] {
        let run = s.run_kind(kind).unwrap();
        let rec = &run.recording;
        // The controller fed by hand with the counts the firmware reads.
        let by_hand: Vec<i32> = match kind {
            BackendKind::Slim16 => {
                let mut pi = Controller::new(Config::<Slim16>::try_new(&settings).unwrap());
                (0..3)
                    .map(|_| {
                        pi.step(Slim16::from_counts(2458), Slim16::from_counts(1639))
                            .command
                            .to_counts()
                    })
                    .collect()
            }
            _ => {
                let mut pi = Controller::new(Config::<I16F16>::try_new(&settings).unwrap());
                (0..3)
                    .map(|_| {
                        pi.step(I16F16::from_num(2457.5), I16F16::from_counts(1639))
                            .command
                            .to_counts()
                    })
                    .collect()
            }
        };
        assert_eq!(by_hand, EXPECTED_COUNTS, "{}", kind.name());
        for (k, &counts) in EXPECTED_COUNTS.iter().enumerate() {
            // The actuator gets the compare value, in % duty.
            assert_eq!(
                rec.applied[k],
                f64::from(counts) / 10.0,
                "{} k={k}",
                kind.name()
            );
            // The measurement the controller got: the ADC's count, in bar.
            assert_eq!(rec.measurement[k], (1639.0 - 410.0) / 409.5);
        }
        assert!(run.passed(), "{}", kind.name());
    }
    // The 16-bit command is whole counts: the recording shows 4.0, 4.1, 4.2.
    let rec = s.run_kind(BackendKind::Slim16).unwrap().recording;
    assert_eq!(&rec.command[..3], &[4.0, 4.1, 4.2]);
}

#[test]
fn an_offset_with_a_setpoint_weight_is_refused_at_the_key() {
    let text = TOML.replace(
        "output_max = 100.0\n",
        "output_max = 100.0\nsetpoint_weight = 0.5\n",
    );
    let e = Scenario::from_toml(&text, "counts.toml").unwrap_err();
    let message = e.to_string();
    assert!(message.contains("setpoint_weight"), "{message}");
    assert!(message.contains("counts.toml:"), "{message}");
}

#[test]
fn a_scale_that_is_not_positive_is_refused_with_its_range() {
    let text = TOML.replace("command_per_unit = 10.0", "command_per_unit = -10.0");
    let message = Scenario::from_toml(&text, "counts.toml")
        .unwrap_err()
        .to_string();
    assert!(message.contains("scaling.command_per_unit"), "{message}");
    assert!(message.contains("> 0"), "{message}");
}
