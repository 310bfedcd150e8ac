//! Tests written against surviving mutants (`cargo mutants`, see
//! `controller/MUTATION.md`): each pins one behaviour that a mutant of the
//! source changed without any other test noticing.

use evenkeel::{
    AntiWindup, Backend, Config, ConfigError, Controller, FixedCoef, Input, Setting, Settings,
    Status,
};
use fixed::types::I16F16;

#[test]
fn fixed_coefficient_reads_back_exactly() {
    let c = FixedCoef::with_shift(0.1, 20).expect("fits");
    assert_eq!(I16F16::coef_to_f64(c), 104_858.0 / 1_048_576.0);
    assert_eq!(<f32 as Backend>::coef_to_f64(0.5), 0.5);
}

fn everything() -> Settings {
    Settings::new(0.01, 1.0, 2.0, -10.0, 10.0)
        .with_slew_per_s(50.0)
        .with_filter_time_s(0.03)
        .with_setpoint_weight(0.5)
        .with_deadband(0.25)
        .with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: 0.5,
        })
}

#[test]
fn config_accessors_return_what_was_configured() {
    let s = everything();
    let f = Config::<f64>::try_new(&s).expect("valid");
    assert_eq!(f.slew_step(), Some(0.5));
    assert_eq!(f.tracking_ratio(), Some(0.02));
    assert!((f.filter_alpha().expect("on") - 0.25).abs() < 1e-15);
    assert_eq!(f.setpoint_weight(), Some(0.5));
    assert_eq!(f.deadband(), Some(0.25));
    let q = Config::<I16F16>::try_new(&s).expect("valid");
    assert_eq!(q.slew_step(), Some(I16F16::from_num(0.5)));
    assert_eq!(q.deadband(), Some(I16F16::from_num(0.25)));
    assert_eq!(q.setpoint_weight().map(FixedCoef::to_f64), Some(0.5));
    assert!(q.tracking_ratio().is_some() && q.filter_alpha().is_some());
}

#[test]
fn fixed_refuses_a_coefficient_that_rounds_down_too_far() {
    // Ki·Ts = 4611.3 · 2^-62 is stored at the largest shift (62) as
    // mantissa 4611: 6.5e-5 relative too small, far beyond 2^-20.
    let ki_ts = 4611.3 / 2f64.powi(62);
    let s = Settings::new(1e-6, 1.0, ki_ts / 1e-6, 0.0, 1.0);
    assert_eq!(
        Config::<I16F16>::try_new(&s),
        Err(ConfigError::TooFine(Setting::Ki))
    );
}

#[test]
fn every_error_has_its_summary_and_message() {
    let all = [
        ConfigError::NotFinite(Setting::Kp),
        ConfigError::NotPositive(Setting::Period),
        ConfigError::Negative(Setting::Deadband),
        ConfigError::Inverted(Setting::OutputMax),
        ConfigError::Inverted(Setting::MeasurementMax),
        ConfigError::Inverted(Setting::Breakpoint),
        ConfigError::NoAction,
        ConfigError::SetpointWeightOutOfRange,
        ConfigError::TrackingRatioOutOfRange,
        ConfigError::OutOfFormat(Setting::Slew),
        ConfigError::TooFine(Setting::FilterTime),
        ConfigError::Schedule,
    ];
    for e in all {
        assert!(e.summary().starts_with("evenkeel configuration: "), "{e:?}");
        assert!(e.to_string().len() > 20, "{e:?}");
    }
    assert_eq!(
        ConfigError::NotFinite(Setting::Kp).to_string(),
        "kp must be a finite number"
    );
    assert_eq!(
        ConfigError::Negative(Setting::Deadband).to_string(),
        "deadband must be zero or positive"
    );
    assert_eq!(
        ConfigError::Inverted(Setting::Breakpoint).to_string(),
        "schedule breakpoint is below the lower end of its range"
    );
    let names = [
        (Setting::Period, "period_s"),
        (Setting::Kp, "kp"),
        (Setting::Ki, "ki_per_s"),
        (Setting::SetpointWeight, "setpoint_weight"),
        (Setting::OutputMin, "output_min"),
        (Setting::OutputMax, "output_max"),
        (Setting::Slew, "slew_per_s"),
        (Setting::FilterTime, "filter_time_s"),
        (Setting::Deadband, "deadband"),
        (Setting::TrackingTime, "tracking_time_s"),
        (Setting::MeasurementMin, "measurement_min"),
        (Setting::MeasurementMax, "measurement_max"),
        (Setting::Breakpoint, "schedule breakpoint"),
    ];
    for (s, name) in names {
        assert_eq!(s.name(), name);
    }
    assert_eq!(
        ConfigError::NoAction.summary(),
        "evenkeel configuration: kp and ki are both zero"
    );
}

#[test]
fn conditional_integration_holds_against_an_actuator_that_gave_more() {
    let s = Settings::new(0.01, 0.5, 5.0, -10.0, 10.0);
    let mut pi = Controller::new(Config::<f64>::try_new(&s).expect("valid"));
    let u = pi.step(1.0, 0.0).command;
    let before = pi.integral();
    // The actuator applied more than commanded and the error is negative:
    // integrating would push further into what downstream already exceeds.
    let out = pi.step_with(&Input::new(0.0, 1.0).with_applied(u + 1.0));
    assert!(
        out.status
            .contains(Status::DOWNSTREAM | Status::INTEGRATOR_HELD)
    );
    assert_eq!(pi.integral(), before);
}

#[test]
fn zero_error_is_not_reported_as_held() {
    // Clamped high (feed-forward beyond the limit) with zero error: nothing
    // to integrate, so nothing is held.
    let s = Settings::new(0.01, 1.0, 1.0, -1.0, 1.0);
    for ff in [5.0, -5.0] {
        let mut pi = Controller::new(Config::<f64>::try_new(&s).expect("valid"));
        let out = pi.step_with(&Input::new(0.5, 0.5).with_feed_forward(ff));
        assert!(out.status.is_limited(), "{ff}");
        assert!(!out.status.contains(Status::INTEGRATOR_HELD), "{ff}");
    }
}

#[test]
fn coefficient_shift_bounds_and_normalisation() {
    // min_shift up to 62 is allowed, beyond is refused (even for zero).
    let tiny = FixedCoef::from_f64(1e-12, 62).expect("fits at shift 62");
    assert_eq!(tiny.shift(), 62);
    assert!(FixedCoef::from_f64(0.0, 63).is_none());
    assert_eq!(FixedCoef::from_f64(0.0, 62).map(FixedCoef::shift), Some(62));
    // The largest shift that keeps the mantissa in 31 bits: 30 or 31 bits used.
    for (value, shift) in [(0.5, 31), (1.0, 30), (3.0, 29), (1500.0, 20), (-0.75, 31)] {
        let c = FixedCoef::from_f64(value, 0).expect("fits");
        assert_eq!(c.shift(), shift, "{value}");
        assert!(c.mantissa().unsigned_abs() >= 1 << 29, "{value}");
        assert_eq!(c.to_f64(), value);
    }
    // −2^31 would need the mantissa i32::MIN, which the format excludes.
    assert!(FixedCoef::from_f64(-2_147_483_648.0, 0).is_none());
    assert!(FixedCoef::from_f64(-2_147_483_647.0, 0).is_some());
}
