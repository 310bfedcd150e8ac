//! Regression tests for the findings of issue 12, one per finding, each
//! named after what it pins.

use evenkeel::{Config, ConfigError, Controller, FixedCoef, Input, Setting, Settings, Status};
use fixed::types::I16F16;

/// Finding: output limits were rounded to nearest, so the fixed-point
/// command could reach −0.8000030517578125 for `output_min = -0.8`.
#[test]
fn fixed_command_never_passes_a_limit_written_off_the_grid() {
    for (lo, hi) in [
        (-0.8, 0.8),
        (-0.3, 1.1),
        (0.123_456, 0.654_321),
        (-1e-4, 3e-4),
    ] {
        let s = Settings::new(0.01, 50.0, 0.0, lo, hi);
        let mut pi = Controller::new(Config::<I16F16>::try_new(&s).expect("valid"));
        let (stored_lo, stored_hi) = pi.config().output_limits();
        assert!(stored_lo.to_num::<f64>() >= lo && stored_hi.to_num::<f64>() <= hi);
        // Within one LSB of the written value: rounded inward, not further.
        assert!(stored_lo.to_num::<f64>() - lo < 1.0 / 65_536.0);
        assert!(hi - stored_hi.to_num::<f64>() < 1.0 / 65_536.0);
        for r in [-100.0, 100.0, -100.0] {
            let out = pi.step(I16F16::from_num(r), I16F16::ZERO);
            let u = out.command.to_num::<f64>();
            assert!(u >= lo && u <= hi, "command {u} outside [{lo}, {hi}]");
            assert!(
                out.status.contains(Status::CLAMP_HIGH) || out.status.contains(Status::CLAMP_LOW)
            );
        }
    }
    // The example of the issue, exactly.
    let s = Settings::new(0.01, 50.0, 0.0, -0.8, 0.8);
    let mut pi = Controller::new(Config::<I16F16>::try_new(&s).expect("valid"));
    let u = pi.step(I16F16::from_num(-100), I16F16::ZERO).command;
    assert_eq!(u.to_bits(), -52_428); // −0.79998779296875, not −0.8000030517578125
}

/// The same for `f32`: `output_min = -0.8` rounds to −0.8000000119 in
/// nearest rounding; stored inward it is −0.79999995.
#[test]
fn f32_command_never_passes_a_limit_written_off_the_grid() {
    let s = Settings::new(0.01, 50.0, 0.0, -0.8, 0.8);
    let mut pi = Controller::new(Config::<f32>::try_new(&s).expect("valid"));
    for r in [-100.0, 100.0] {
        let u = f64::from(pi.step(r, 0.0).command);
        assert!((-0.8..=0.8).contains(&u), "command {u}");
    }
}

/// Finding: near large commands `last ± slew_step` rounded on the float
/// grid: with limits ±1e7 and slew step 0.04 an f32 command moved 0.0625
/// per sample, or never moved while SLEW was flagged. Now the step is
/// refused where it is below the command's resolution at the limits, and
/// elsewhere the change never exceeds the stored step.
#[test]
fn float_slew_never_exceeds_the_stored_step() {
    for limit in [1.0e7, 1.0e6] {
        let s = Settings::new(0.01, 1.0, 0.0, -limit, limit).with_slew_per_s(4.0); // 0.04 per sample
        assert_eq!(
            Config::<f32>::try_new(&s),
            Err(ConfigError::TooFine(Setting::Slew)),
            "±{limit}: 0.04 is below one f32 ulp there"
        );
        assert!(
            ConfigError::TooFine(Setting::Slew)
                .to_string()
                .contains("resolution")
        );
    }
    // ±1e5: ulp 0.0078 < 0.04, accepted; every move at most the stored step.
    let s = Settings::new(0.01, 1.0, 0.0, -1.0e5, 1.0e5)
        .with_slew_per_s(4.0)
        .with_measurement_range(-1.0e9, 1.0e9);
    let config = Config::<f32>::try_new(&s).expect("step above the resolution");
    let step = f64::from(config.slew_step().expect("slew on"));
    let mut pi = Controller::new(config);
    pi.engage(99_000.0);
    let mut last = f64::from(pi.step(99_000.0, 0.0).command);
    let mut moved = 0.0;
    for k in 0..2000 {
        let r = if k < 1000 { 1.0e8 } else { -1.0e8 };
        let out = pi.step(r, 0.0);
        let u = f64::from(out.command);
        assert!(
            (u - last).abs() <= step,
            "step {k}: moved {} > {step}",
            (u - last).abs()
        );
        assert!(
            out.status.contains(Status::SLEW),
            "step {k}: {}",
            out.status
        );
        moved += (u - last).abs();
        last = u;
    }
    assert!(moved > 0.0, "the command moves");
}

/// Finding: `Config::with_gains` was public and unchecked: a NaN gain gave
/// a NaN command, negative gains were accepted. It now validates like
/// `try_new`.
#[test]
fn with_gains_refuses_what_try_new_refuses() {
    let s = Settings::new(0.01, 1.0, 1.0, -1.0, 1.0);
    let f = Config::<f32>::try_new(&s).expect("valid");
    assert_eq!(
        f.with_gains(f32::NAN, 0.01),
        Err(ConfigError::NotFinite(Setting::Kp))
    );
    assert_eq!(
        f.with_gains(1.0, f32::INFINITY),
        Err(ConfigError::NotFinite(Setting::Ki))
    );
    assert_eq!(
        f.with_gains(-1.0, 0.01),
        Err(ConfigError::Negative(Setting::Kp))
    );
    assert_eq!(f.with_gains(0.0, 0.0), Err(ConfigError::NoAction));
    assert_eq!(
        f.with_gains(2.0e12, 0.01),
        Err(ConfigError::OutOfFormat(Setting::Kp))
    );
    let d = Config::<f64>::try_new(&s).expect("valid");
    assert_eq!(
        d.with_gains(1.0, f64::NAN),
        Err(ConfigError::NotFinite(Setting::Ki))
    );
    assert_eq!(
        d.with_gains(1.0, -0.5),
        Err(ConfigError::Negative(Setting::Ki))
    );
    let q = Config::<I16F16>::try_new(&s).expect("valid");
    let negative = FixedCoef::from_f64(-0.5, 0).expect("fits");
    let coarse = FixedCoef::from_f64(0.5, 0).map(|c| FixedCoef::with_shift(c.to_f64(), 8));
    assert_eq!(
        q.with_gains(negative, q.ki_ts()),
        Err(ConfigError::Negative(Setting::Kp))
    );
    // Ki·Ts with a shift below 16 would not be applied at Q32.32 precision.
    assert_eq!(
        q.with_gains(q.kp(), coarse.flatten().expect("fits")),
        Err(ConfigError::OutOfFormat(Setting::Ki))
    );
    // Valid gains go through, and a NaN never reaches a command.
    let mut pi = Controller::new(f.with_gains(2.0, 0.02).expect("valid"));
    assert!(pi.step_with(&Input::new(1.0, 0.0)).command.is_finite());
}

/// Finding: `Controller::new` was not `const`, so a controller in a
/// `static` needed an `Option` and a run-time initialisation.
#[test]
fn controller_new_is_const() {
    const CONFIG: Config<I16F16> =
        evenkeel::config!(I16F16, Settings::new(0.01, 2.0, 1.0, -5.0, 5.0));
    static AT_REST: Controller<I16F16> = Controller::new(CONFIG);
    evenkeel::layout!(Fixed = Settings::new(0.01, 2.0, 1.0, -5.0, 5.0));
    static LAID_OUT: Controller<I16F16, Fixed> = Controller::new(evenkeel::config!(
        I16F16,
        Fixed,
        Settings::new(0.01, 2.0, 1.0, -5.0, 5.0)
    ));
    let mut a = AT_REST;
    let mut b = LAID_OUT;
    assert_eq!(
        a.step(I16F16::ONE, I16F16::ZERO),
        b.step(I16F16::ONE, I16F16::ZERO)
    );
}
