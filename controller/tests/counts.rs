//! Counts in, counts out: a loop configured in physical units whose
//! firmware passes raw ADC readings and writes raw PWM compare values,
//! checked against a few steps worked by hand from the stated scales.

use evenkeel::{Backend, Config, Controller, Scale, Scaling, Settings, Slim16};
use fixed::types::I16F16;

/// A pressure loop (numbers invented for the test): 12-bit ADC on a 4–20 mA
/// transmitter, 409.5 counts per bar and 410 counts at 0 bar; PWM compare
/// register 0 … 1000 for 0 … 100 % duty (10 counts per %). Kp = 2 %/bar,
/// Ki = 50 %/(bar·s), Ts = 1 ms, duty 0 … 100 %.
const SETTINGS: Settings = Settings::new(0.001, 2.0, 50.0, 0.0, 100.0).with_scaling(
    Scaling::NONE
        .with_adc(12, Scale::new(409.5, 410.0))
        .with_pwm(Scale::new(10.0, 0.0)),
);

/// Worked by hand:
///
/// * gains in raw units: Kp = 2 · 10 / 409.5 = 0.048 840 048 8… counts out
///   per count in; Ki·Ts = 50 · 0.001 · 10 / 409.5 = 0.001 221 001 2…;
/// * setpoint 5 bar = 5 · 409.5 + 410 = 2457.5 counts: the firmware stores
///   2458; the ADC reads 1639 counts (3.0012 bar), so e = 819 counts
///   = 2.0 bar;
/// * P = Kp · e = 819 · 20 / 409.5 = 40 counts exactly (4.0 % duty);
///   the integrator starts at 0 counts (the command offset) and gains
///   Ki·Ts · e = 819 · 0.5 / 409.5 = 1 count per step (0.1 %/ms);
/// * so the compare values are 40, 41, 42 (the integral is added before
///   it grows: the command of step k is P + (k − 1) · 1).
///
/// In the 16-bit format: Kp is stored as 25 606 · 2⁻¹⁹ (0.048 840 3),
/// 819 · 25 606 = 20 971 314, / 2¹⁹ = 39.9998 → 40; Ki·Ts as 20 485 · 2⁻²⁴,
/// 819 · 20 485 = 16 777 215, / 2¹¹ (to 2⁻¹³ state units) = 8191.9995 →
/// 8192 = exactly one count. In Q16.16 the stored gains are within 2⁻³¹
/// relative, far below half an LSB of these products: the same counts.
const EXPECTED: [i32; 3] = [40, 41, 42];

#[test]
fn slim16_counts_worked_by_hand() {
    let config = Config::<Slim16>::try_new(&SETTINGS).expect("valid");
    assert_eq!((config.kp().mantissa(), config.kp().shift()), (25_606, 19));
    assert_eq!(
        (config.ki_ts().mantissa(), config.ki_ts().shift()),
        (20_485, 24)
    );
    let mut pi = Controller::new(config);
    for want in EXPECTED {
        let out = pi.step(Slim16::from_counts(2458), Slim16::from_counts(1639));
        assert_eq!(out.command.to_counts(), want);
    }
}

#[test]
fn q16_16_counts_worked_by_hand() {
    let mut pi = Controller::new(Config::<I16F16>::try_new(&SETTINGS).expect("valid"));
    for want in EXPECTED {
        let out = pi.step(I16F16::from_counts(2458), I16F16::from_counts(1639));
        assert_eq!(out.command.to_counts(), want);
    }
}

#[test]
fn limits_and_range_in_counts() {
    let c = Config::<Slim16>::try_new(&SETTINGS).expect("valid");
    // 0 … 100 % → 0 … 1000 counts; the ADC range 0 … 4095 cuts the
    // default ±30 000 bar measurement range.
    assert_eq!(
        c.output_limits(),
        (Slim16::from_counts(0), Slim16::from_counts(1000))
    );
    assert_eq!(
        c.measurement_range(),
        (Slim16::from_counts(0), Slim16::from_counts(4095))
    );
    // The ADC model the harness uses: 3 bar → 1638.5 → 1639 counts.
    assert_eq!(SETTINGS.scaling.adc_reading(3.0), 1639.0);
}

#[test]
fn weighted_setpoint_with_offset_is_refused() {
    let s = SETTINGS.with_setpoint_weight(0.5);
    assert_eq!(
        Config::<Slim16>::try_new(&s),
        Err(evenkeel::ConfigError::WeightedOffset)
    );
}
