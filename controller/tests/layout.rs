//! Property tests: a compile-time layout and the run-time configuration give
//! the same command and status, on random settings and inputs.
//!
//! A layout fixes each coefficient's shift, so the random settings keep
//! every coefficient in the binade the layout was made for (there its
//! natural shift is the layout's, and both configurations store the same
//! mantissa); cases that land on a binade edge are discarded.

use evenkeel::{AntiWindup, Config, Controller, Input, Layout, Settings, Shape};
use fixed::types::I16F16;
use proptest::prelude::*;

/// Every feature on: Kp in [2, 4) (shift 29), Ki·Ts in [1/32, 1/16)
/// (shift 35), b in [1/2, 1) (31), α in [1/4, 1/2) (32), Ts/Tt in
/// [1/16, 1/8) (34).
const FULL: Settings = Settings::new(0.01, 2.0, 5.0, -10.0, 10.0)
    .with_slew_per_s(200.0)
    .with_filter_time_s(0.02)
    .with_deadband(0.01)
    .with_setpoint_weight(0.7)
    .with_anti_windup(AntiWindup::BackCalculation {
        tracking_time_s: 0.1,
    })
    .with_measurement_range(-100.0, 100.0);
const MINIMAL: Settings = Settings::new(0.01, 2.0, 5.0, -10.0, 10.0);

evenkeel::layout!(Full = FULL);
evenkeel::layout!(Minimal = MINIMAL);

/// Settings of `base`'s features with every coefficient in its binade and
/// random limits, rates and ranges.
fn settings(full: bool) -> impl Strategy<Value = Settings> {
    (
        (1e-3f64..0.1, 2.0f64..3.99, 0.0313f64..0.0624),
        (-500.0f64..400.0, 0.5f64..900.0),
        (0.51f64..0.99, 0.251f64..0.499, 0.0626f64..0.124),
        (
            0.001f64..1.0,
            0.0f64..2.0,
            -1_000.0f64..0.0,
            1.0f64..1_000.0,
        ),
    )
        .prop_map(
            move |((ts, kp, ki_ts), (lo, span), (b, alpha, ratio), (slew, db, ylo, yhi))| {
                let s = Settings::new(ts, kp, ki_ts / ts, lo, lo + span);
                if !full {
                    return s;
                }
                s.with_setpoint_weight(b)
                    .with_filter_time_s(ts * (1.0 / alpha - 1.0))
                    .with_anti_windup(AntiWindup::BackCalculation {
                        tracking_time_s: ts / ratio,
                    })
                    .with_slew_per_s(slew * span / ts)
                    .with_deadband(db)
                    .with_measurement_range(ylo, yhi)
            },
        )
}

#[derive(Clone, Debug)]
enum Event {
    Step {
        r: f64,
        y: f64,
        ff: f64,
        applied: Option<f64>,
    },
    Engage(f64),
    Track {
        r: f64,
        y: f64,
        a: f64,
    },
    Reset,
    Retune(Settings),
}

fn events(full: bool) -> impl Strategy<Value = Vec<Event>> {
    let v = || prop_oneof![8 => -1_500.0f64..1_500.0, 1 => -40_000.0f64..40_000.0, 1 => Just(0.0)];
    let event = prop_oneof![
        20 => (v(), v(), v(), prop::option::of(v()))
            .prop_map(|(r, y, ff, applied)| Event::Step { r, y, ff, applied }),
        1 => v().prop_map(Event::Engage),
        2 => (v(), v(), v()).prop_map(|(r, y, a)| Event::Track { r, y, a }),
        1 => Just(Event::Reset),
        1 => settings(full).prop_map(Event::Retune),
    ];
    prop::collection::vec(event, 1..150)
}

/// Drive two controllers with the same events (`retune` handles a
/// re-tune) and compare every output, the integrator and the last command.
fn same_outputs<B: evenkeel::Backend, L: Layout, M: Layout>(
    mut a: Controller<B, L>,
    mut b: Controller<B, M>,
    events: &[Event],
    q: impl Fn(f64) -> B,
    mut retune: impl FnMut(&mut Controller<B, L>, &mut Controller<B, M>, &Settings),
) -> Result<(), TestCaseError> {
    for (k, event) in events.iter().enumerate() {
        let (x, y) = match *event {
            Event::Step { r, y, ff, applied } => {
                let mut input = Input::new(q(r), q(y)).with_feed_forward(q(ff));
                if let Some(v) = applied {
                    input = input.with_applied(q(v));
                }
                (a.step_with(&input), b.step_with(&input))
            }
            Event::Engage(v) => {
                a.engage(q(v));
                b.engage(q(v));
                continue;
            }
            Event::Track { r, y, a: v } => {
                let input = Input::new(q(r), q(y));
                (a.track(&input, q(v)), b.track(&input, q(v)))
            }
            Event::Reset => {
                a.reset();
                b.reset();
                continue;
            }
            Event::Retune(ref t) => {
                retune(&mut a, &mut b, t);
                continue;
            }
        };
        prop_assert_eq!(x, y, "event {}: {:?}", k, event);
        prop_assert_eq!(a.integral(), b.integral());
        prop_assert_eq!(a.last_command(), b.last_command());
    }
    Ok(())
}

fn same_bits<L: Layout>(s: &Settings, events: &[Event]) -> Result<(), TestCaseError> {
    // Only settings whose natural shifts are the layout's.
    prop_assume!(Shape::of(s).ok() == L::SHAPE);
    let run_time = Config::<I16F16>::try_new(s).expect("valid: it has a shape");
    let laid_out = Config::<I16F16, L>::try_new(s).expect("fits its own shape");
    same_outputs(
        Controller::new(run_time),
        Controller::new(laid_out),
        events,
        I16F16::saturating_from_num,
        |a, b, t| {
            if Shape::of(t).ok() == L::SHAPE {
                a.retune(Config::try_new(t).expect("valid"));
                b.retune(Config::try_new(t).expect("fits"));
            }
        },
    )
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 300, ..ProptestConfig::default() })]

    #[test]
    fn full_layout_gives_the_run_time_bits(s in settings(true), e in events(true)) {
        same_bits::<Full>(&s, &e)?;
    }

    #[test]
    fn minimal_layout_gives_the_run_time_bits(s in settings(false), e in events(false)) {
        same_bits::<Minimal>(&s, &e)?;
    }
}

/// A gain outside the layout's format is refused with an error that says
/// so; a configuration with other features too.
#[test]
fn configurations_outside_the_layout_are_refused() {
    use evenkeel::{ConfigError, Setting};
    let strong = Settings {
        kp: 40.0,
        ..MINIMAL
    }; // needs shift 25, the layout has 29
    assert_eq!(
        Config::<I16F16, Minimal>::try_new(&strong),
        Err(ConfigError::Layout(Setting::Kp))
    );
    assert_eq!(
        Config::<I16F16, Minimal>::try_new(&FULL),
        Err(ConfigError::Layout(Setting::Features))
    );
    // Within the format but coarser than the natural shift: stored with
    // fewer bits, still within the 2⁻²⁰ promise, so accepted.
    let weak = Settings { kp: 0.9, ..MINIMAL }; // natural shift 31
    let c = Config::<I16F16, Minimal>::try_new(&weak).expect("fits shift 29");
    assert_eq!(c.kp().shift(), 29);
    assert!((c.kp().to_f64() - 0.9).abs() <= 0.9 / 1_048_576.0);
    // A compile-time layout with gain room takes both.
    evenkeel::layout!(Roomy: match Shape::of(&MINIMAL) {
        Ok(s) => s.with_gain_room(50.0, 10.0, 0.01),
        Err(e) => Err(e),
    });
    assert!(Config::<I16F16, Roomy>::try_new(&strong).is_ok());
}

// Frozen configurations (`evenkeel::frozen!`): the same settings as the
// run-time configuration, every setting a constant in the step.
evenkeel::frozen!(FrozenFull: I16F16 = FULL);
evenkeel::frozen!(FrozenMinimal: I16F16 = MINIMAL);
const SLIM_FULL: Settings = FULL
    .with_measurement_range(-60.0, 60.0)
    .with_scaling(evenkeel::Scaling::covering(-60.0, 60.0, -10.0, 10.0));
const SLIM_MINIMAL: Settings = MINIMAL
    .with_measurement_range(-60.0, 60.0)
    .with_scaling(evenkeel::Scaling::covering(-60.0, 60.0, -10.0, 10.0));
evenkeel::frozen!(SlimFrozenFull: Slim16 = SLIM_FULL);
evenkeel::frozen!(SlimFrozenMinimal: Slim16 = SLIM_MINIMAL);
use evenkeel::Slim16;

/// A run-time and a frozen controller on the same events (no re-tune: a
/// frozen configuration has none).
fn frozen_same_bits<B: evenkeel::Backend, F: Layout>(
    run_time: Config<B>,
    frozen: Config<B, F>,
    events: &[Event],
    q: impl Fn(f64) -> B,
) -> Result<(), TestCaseError> {
    same_outputs(
        Controller::new(run_time),
        Controller::new(frozen),
        events,
        q,
        |_, _, _| {},
    )
}

/// A raw 16-bit input from an event's value: `16·v`, saturated (any raw
/// value is a valid input).
fn slim(v: f64) -> Slim16 {
    Slim16::from_raw((v * 16.0).clamp(-32_768.0, 32_767.0) as i16)
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 300, ..ProptestConfig::default() })]

    #[test]
    fn frozen_full_gives_the_run_time_bits(e in events(true)) {
        frozen_same_bits(Config::<I16F16>::try_new(&FULL).expect("valid"), FrozenFull::CONFIG, &e, I16F16::saturating_from_num)?;
        frozen_same_bits(Config::<Slim16>::try_new(&SLIM_FULL).expect("valid"), SlimFrozenFull::CONFIG, &e, slim)?;
    }

    #[test]
    fn frozen_minimal_gives_the_run_time_bits(e in events(false)) {
        frozen_same_bits(Config::<I16F16>::try_new(&MINIMAL).expect("valid"), FrozenMinimal::CONFIG, &e, I16F16::saturating_from_num)?;
        frozen_same_bits(Config::<Slim16>::try_new(&SLIM_MINIMAL).expect("valid"), SlimFrozenMinimal::CONFIG, &e, slim)?;
    }
}

/// A frozen layout has one configuration: every other way to make one is
/// refused, so a frozen controller never runs with settings it does not
/// hold as constants.
#[test]
fn a_frozen_layout_has_no_other_configuration() {
    use evenkeel::{Backend, ConfigError, Setting};
    assert_eq!(
        Config::<I16F16, FrozenMinimal>::try_new(&MINIMAL),
        Err(ConfigError::Layout(Setting::Features))
    );
    assert_eq!(
        Config::<Slim16, SlimFrozenMinimal>::try_new(&SLIM_MINIMAL),
        Err(ConfigError::Layout(Setting::Features))
    );
    let parts = FrozenFull::CONFIG.to_parts();
    assert_eq!(
        Config::<I16F16, FrozenFull>::from_parts(&parts),
        Err(ConfigError::Layout(Setting::Features))
    );
    let parts = SlimFrozenFull::CONFIG.to_parts();
    assert_eq!(
        Config::<Slim16, SlimFrozenFull>::from_parts(&parts),
        Err(ConfigError::Layout(Setting::Features))
    );
    let c = FrozenMinimal::CONFIG;
    assert_eq!(
        c.with_gains(c.kp(), c.ki_ts()),
        Err(ConfigError::Layout(Setting::Kp))
    );
    // The frozen one is the run-time one, field for field.
    assert_eq!(
        FrozenFull::CONFIG.to_parts(),
        Config::<I16F16>::try_new(&FULL).expect("valid").to_parts()
    );
    assert_eq!(
        SlimFrozenFull::CONFIG.to_parts(),
        Config::<Slim16>::try_new(&SLIM_FULL)
            .expect("valid")
            .to_parts()
    );
    assert_eq!(I16F16::frozen::<FrozenFull>(), Some(&FrozenFull::CONFIG));
    assert_eq!(I16F16::frozen::<Full>(), None);
}

// The 16-bit frozen step's wide sum (`Backend::frozen_sum`) on both sides
// of its proof: the minimal settings with Kp just above the least that
// proves it (with the integrator at its lowest, 15 360 raw below zero,
// sat(Kp·32 767) − 15 360 must pass the output limit 5 120: Kp > 0.625) and
// just below (the proof fails; the step keeps the 16-bit chain).
/// 512 raw per unit on both sides (±10 output → ±5 120 raw, measurement
/// range ±60 → ±30 720 raw), as in the boards' 16-bit workloads.
const RAW_512: evenkeel::Scaling = evenkeel::Scaling::NONE
    .with_measurement(evenkeel::Scale::new(512.0, 0.0))
    .with_command(evenkeel::Scale::new(512.0, 0.0));
const SLIM_WIDE: Settings = MINIMAL
    .with_measurement_range(-60.0, 60.0)
    .with_scaling(RAW_512);
const SLIM_NEAR: Settings = Settings::new(0.01, 0.63, 5.0, -10.0, 10.0)
    .with_measurement_range(-60.0, 60.0)
    .with_scaling(RAW_512);
const SLIM_BELOW: Settings = Settings::new(0.01, 0.62, 5.0, -10.0, 10.0)
    .with_measurement_range(-60.0, 60.0)
    .with_scaling(RAW_512);
const SLIM_FILTERED: Settings = SLIM_WIDE.with_filter_time_s(0.02);
evenkeel::frozen!(SlimFrozenWide: Slim16 = SLIM_WIDE);
evenkeel::frozen!(SlimFrozenNear: Slim16 = SLIM_NEAR);
evenkeel::frozen!(SlimFrozenBelow: Slim16 = SLIM_BELOW);
evenkeel::frozen!(SlimFrozenFiltered: Slim16 = SLIM_FILTERED);

/// Events for the wide sum: mostly steps with the zero feed-forward (the
/// only ones it serves), inputs often at the format's extremes, and
/// engages, tracks and feed-forward steps that move the integrator to the
/// ends of its range.
fn wide_events() -> impl Strategy<Value = Vec<Event>> {
    let v = || {
        prop_oneof![
            4 => -2_100.0f64..2_100.0,
            2 => prop_oneof![Just(-2_100.0), Just(2_100.0), Just(-1_920.0), Just(1_920.0)],
            1 => Just(0.0),
        ]
    };
    let event = prop_oneof![
        12 => (v(), v(), prop::option::of(v()))
            .prop_map(|(r, y, applied)| Event::Step { r, y, ff: 0.0, applied }),
        4 => (v(), v(), v()).prop_map(|(r, y, ff)| Event::Step { r, y, ff, applied: None }),
        2 => v().prop_map(Event::Engage),
        1 => (v(), v(), v()).prop_map(|(r, y, a)| Event::Track { r, y, a }),
        1 => Just(Event::Reset),
    ];
    prop::collection::vec(event, 1..200)
}

#[test]
fn the_wide_sum_is_taken_only_where_proved() {
    use evenkeel::Backend;
    let (r, y) = (Slim16::from_raw(30_720), Slim16::from_raw(-30_720));
    for (i, found) in [
        Slim16::frozen_sum::<SlimFrozenWide>(r, y, 0),
        Slim16::frozen_sum::<SlimFrozenNear>(r, y, 0),
        Slim16::frozen_sum::<SlimFrozenFiltered>(r, y, 0),
    ]
    .into_iter()
    .enumerate()
    {
        // e = 61 440 saturates (or, where the wide sum truncates it, wraps:
        // the step holds and never reads it); Kp·e + 0 far above the limit;
        // the hold test's sign positive.
        let (e, v, sign) = found.unwrap();
        assert!(
            e == Slim16::MAX || e == Slim16::from_raw(-4_096),
            "{i}: {e:?}"
        );
        assert_eq!(v, Slim16::MAX, "{i}");
        assert!(sign > Slim16::from_raw(0), "{i}");
    }
    assert_eq!(Slim16::frozen_sum::<SlimFrozenBelow>(r, y, 0), None);
    // And the integrator's clamp is idle in those three (Ki·Ts = 0.05 ≤ Kp,
    // the range three output spans wide), never without the wide sum.
    assert!(Slim16::frozen_integral_stays::<SlimFrozenWide>());
    assert!(Slim16::frozen_integral_stays::<SlimFrozenNear>());
    assert!(Slim16::frozen_integral_stays::<SlimFrozenFiltered>());
    assert!(!Slim16::frozen_integral_stays::<SlimFrozenBelow>());
    assert!(!Slim16::frozen_integral_stays::<SlimFrozenFull>());
    // Output ±10 240 raw, so the integrator spans ±30 720: with it at its
    // lowest, the saturated P (32 767) gives a sum inside the limits.
    assert_eq!(
        SlimFrozenMinimal::CONFIG.output_limits(),
        (Slim16::from_raw(-10_240), Slim16::from_raw(10_240))
    );
    assert_eq!(Slim16::frozen_sum::<SlimFrozenMinimal>(r, y, 0), None);
    // Deadband, setpoint weight and back-calculation: never.
    assert_eq!(Slim16::frozen_sum::<SlimFrozenFull>(r, y, 0), None);
    // Below the proof the wide sum would differ: e = 61 440 with the
    // integrator at −15 360 raw. The chain: P = sat(0.62·32 767) = 20 316,
    // v = 4 956, inside the limits, integrating; wide: 38 093 − 15 360,
    // clamped and held.
    let c = Config::<Slim16>::try_new(&SLIM_BELOW).expect("valid");
    let (kp, shift) = (i32::from(c.kp().mantissa()), c.kp().shift());
    let chain = (i32::from(Slim16::MAX.raw()) * kp + (1 << (shift - 1))) >> shift;
    let wide = (61_440 * kp + (1 << (shift - 1))) >> shift;
    assert!(
        chain - 15_360 <= 5_120 && wide - 15_360 > 5_120,
        "{chain} {wide}"
    );
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 400, ..ProptestConfig::default() })]

    #[test]
    fn frozen_wide_sums_give_the_run_time_bits(e in wide_events()) {
        let run_time = |s: &Settings| Config::<Slim16>::try_new(s).expect("valid");
        frozen_same_bits(run_time(&SLIM_WIDE), SlimFrozenWide::CONFIG, &e, slim)?;
        frozen_same_bits(run_time(&SLIM_NEAR), SlimFrozenNear::CONFIG, &e, slim)?;
        frozen_same_bits(run_time(&SLIM_BELOW), SlimFrozenBelow::CONFIG, &e, slim)?;
        frozen_same_bits(run_time(&SLIM_FILTERED), SlimFrozenFiltered::CONFIG, &e, slim)?;
    }
}
