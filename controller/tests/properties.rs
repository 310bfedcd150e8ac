//! Property tests: invariants for any accepted configuration and any input
//! sequence, for every backend; and the fixed-versus-float bound.

use evenkeel::{AntiWindup, Backend, Config, Controller, Input, Scaling, Settings, Slim16, Status};
use fixed::types::I16F16;
use proptest::prelude::*;

/// One Q16.16 LSB.
const Q: f64 = 1.0 / 65_536.0;

fn settings() -> impl Strategy<Value = Settings> {
    settings_within(300.0, 20_000.0)
}

/// Settings with gains up to `gain_max` and output limits within ±`limit`.
fn settings_within(gain_max: f64, limit: f64) -> impl Strategy<Value = Settings> {
    (
        (
            1e-4f64..0.5,
            0.0f64..gain_max,
            0.0f64..gain_max,
            0.0f64..=1.0,
        ),
        (-limit..limit, 0.01f64..limit),
        (
            prop::option::of(0.001f64..1.0),
            prop::option::of(1e-3f64..5.0),
            prop::option::of(0.0f64..2.0),
        ),
        prop::option::of(1.0f64..100.0),
        prop::option::of((-30_000.0f64..0.0, 1.0f64..30_000.0)),
    )
        .prop_map(
            move |((ts, kp, ki, b), (lo, span), (slew_frac, tf, db), tt, range)| {
                let hi = (lo + span).min(limit * 1.25);
                let mut s = Settings::new(ts, kp, ki, lo, hi).with_setpoint_weight(b);
                if let Some(f) = slew_frac {
                    s = s.with_slew_per_s(f * (hi - lo) / ts);
                }
                if let Some(tf) = tf {
                    s = s.with_filter_time_s(tf);
                }
                if let Some(db) = db {
                    s = s.with_deadband(db);
                }
                if let Some(ratio) = tt {
                    s = s.with_anti_windup(AntiWindup::BackCalculation {
                        tracking_time_s: ts * ratio,
                    });
                }
                if let Some((a, b)) = range {
                    s = s.with_measurement_range(a, b);
                }
                s
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

/// Values including non-finite and far-out-of-range ones.
fn value() -> impl Strategy<Value = f64> {
    prop_oneof![
        6 => -1_000.0f64..1_000.0,
        2 => -40_000.0f64..40_000.0,
        1 => Just(f64::NAN),
        1 => Just(f64::INFINITY),
        1 => Just(f64::NEG_INFINITY),
        1 => Just(1e30),
        1 => Just(-1e30),
        1 => Just(0.0),
    ]
}

fn events() -> impl Strategy<Value = Vec<Event>> {
    let event = prop_oneof![
        20 => (value(), value(), value(), prop::option::of(value()))
            .prop_map(|(r, y, ff, applied)| Event::Step { r, y, ff, applied }),
        1 => value().prop_map(Event::Engage),
        2 => (value(), value(), value()).prop_map(|(r, y, a)| Event::Track { r, y, a }),
        1 => Just(Event::Reset),
        1 => settings().prop_map(Event::Retune),
    ];
    prop::collection::vec(event, 1..120)
}

/// Runs the events and checks every invariant after each step.
fn check_invariants<B: Backend>(
    settings: &Settings,
    events: &[Event],
) -> Result<(), TestCaseError> {
    let Ok(config) = Config::<B>::try_new(settings) else {
        return Ok(());
    };
    let mut pi = Controller::new(config);
    // The limits as the user wrote them (the settings in force), in the
    // step's raw units.
    let raw_limits = |s: &Settings| {
        let c = s.scaling.command;
        (c.raw(s.output_min), c.raw(s.output_max))
    };
    let mut written = raw_limits(settings);
    // One signal LSB: Q16.16's, or one raw unit of the 16-bit format.
    let lsb = if B::NAME == "slim16" { 1.0 } else { Q };
    // Rounding slack of float bounds on the integrator (two ulps of the
    // operands); zero for fixed point, whose additions are exact.
    let slack = |x: B| -> f64 {
        match B::NAME {
            "f32" => x.to_f64().abs() * 2.5e-7,
            "f64" => x.to_f64().abs() * 5e-16,
            _ => 0.0,
        }
    };
    let mut engaged_at: Option<B> = None;
    for event in events {
        let before = pi.last_command();
        let (out, exempt) = match event {
            Event::Step { r, y, ff, applied } => {
                let mut input = Input::new(B::from_f64(*r), B::from_f64(*y))
                    .with_feed_forward(B::from_f64(*ff));
                if let Some(a) = applied {
                    input = input.with_applied(B::from_f64(*a));
                }
                (pi.step_with(&input), false)
            }
            Event::Engage(a) => {
                pi.engage(B::from_f64(*a));
                engaged_at = Some(B::from_f64(*a)).filter(|a| a.is_finite());
                continue;
            }
            Event::Track { r, y, a } => {
                engaged_at = None;
                let out = pi.track(
                    &Input::new(B::from_f64(*r), B::from_f64(*y)),
                    B::from_f64(*a),
                );
                (out, true)
            }
            Event::Reset => {
                pi.reset();
                engaged_at = None;
                continue;
            }
            Event::Retune(s) => {
                if let Ok(c) = Config::<B>::try_new(s) {
                    pi.retune(c);
                    written = raw_limits(s);
                }
                continue;
            }
        };
        let c = *pi.config();
        let (lo, hi) = c.output_limits();
        // Within the limits as written, not only as stored.
        let u = out.command.to_f64();
        prop_assert!(
            u >= written.0 && u <= written.1,
            "command {u} outside the written [{}, {}]",
            written.0,
            written.1
        );
        prop_assert!(out.command.is_finite());
        if out.status.contains(Status::NON_FINITE) {
            prop_assert_eq!(out.command.to_f64().to_bits(), before.to_f64().to_bits());
            continue;
        }
        if let Some(a) = engaged_at.take() {
            prop_assert!(out.status.contains(Status::ENGAGED));
            let target = if a > hi {
                hi
            } else if a < lo {
                lo
            } else {
                a
            };
            let err = (out.command.to_f64() - target.to_f64()).abs();
            prop_assert!(err <= lsb.max(slack(target) * 8.0), "engage off by {err}");
        }
        let engage_step = out.status.contains(Status::ENGAGED) || exempt;
        if let (Some(step), false) = (c.slew_step(), engage_step) {
            let change = (out.command.to_f64() - before.to_f64()).abs();
            // A retune may have moved the limits away from the last command:
            // then the limits win, as documented.
            let outside = before > hi || before < lo;
            // Never more than the stored step, in every backend (no
            // rounding slack: the float limiter rounds towards the last
            // command).
            prop_assert!(
                outside || change <= step.to_f64(),
                "change {change} > slew step {:?}",
                step
            );
        }
        let i = pi.integral().to_f64();
        let span = hi.to_f64() - lo.to_f64();
        let tol = lsb + 4.0 * (slack(lo) + slack(hi));
        prop_assert!(
            i >= lo.to_f64() - span - tol && i <= hi.to_f64() + span + tol,
            "integral {i} unbounded"
        );
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 400, ..ProptestConfig::default() })]

    #[test]
    fn fixed_invariants(s in settings(), e in events()) {
        check_invariants::<I16F16>(&s, &e)?;
    }

    #[test]
    fn slim16_invariants(s in slim_settings(), e in slim_events()) {
        check_invariants::<Slim16>(&s, &e)?;
    }

    #[test]
    fn f32_invariants(s in settings(), e in events()) {
        check_invariants::<f32>(&s, &e)?;
    }

    #[test]
    fn f64_invariants(s in settings(), e in events()) {
        check_invariants::<f64>(&s, &e)?;
    }

    /// Fixed point follows f64 within the bound documented in the crate's
    /// `FORMATS.md` §4, while both take the same branches (same status).
    /// Ranges keep every intermediate value inside Q16.16 (|P| ≤ 10 · 1000,
    /// |I| ≤ 15 000, |ff| ≤ 50): beyond that the fixed backend saturates
    /// where f64 does not, by design.
    #[test]
    fn fixed_follows_f64_within_bound(
        s in settings_within(10.0, 5_000.0),
        inputs in prop::collection::vec((-500.0f64..500.0, -500.0f64..500.0, -50.0f64..50.0), 1..150),
    ) {
        let (Ok(cf), Ok(cd)) = (Config::<I16F16>::try_new(&s), Config::<f64>::try_new(&s)) else {
            return Ok(());
        };
        let bound = FixedBound::new(&s, &cf);
        let mut fixed = Controller::new(cf);
        let mut float = Controller::new(cd);
        for (k, (r, y, ff)) in inputs.into_iter().enumerate() {
            // Inputs on the Q16.16 grid, so both see identical values.
            let (r, y, ff) = (grid(r), grid(y), grid(ff));
            let a = fixed.step_with(&Input::new(I16F16::from_num(r), I16F16::from_num(y)).with_feed_forward(I16F16::from_num(ff)));
            let b = float.step_with(&Input::new(r, y).with_feed_forward(ff));
            if a.status != b.status {
                break; // a branch decision differs: the bound no longer applies
            }
            let diff = (a.command.to_num::<f64>() - b.command).abs();
            prop_assert!(diff <= bound.after(k), "step {k}: |Δu| = {diff} > bound {}", bound.after(k));
        }
    }
}

/// Settings on a power-of-two scale that puts their ranges within ±2¹⁴
/// raw ([`Scaling::covering`]).
fn slim_settings() -> impl Strategy<Value = Settings> {
    settings_within(300.0, 20_000.0).prop_map(|s| {
        s.with_scaling(Scaling::covering(
            s.measurement_min.max(-20_000.0),
            s.measurement_max.min(20_000.0),
            s.output_min,
            s.output_max,
        ))
    })
}

/// Events in raw units of the 16-bit format (any value, saturated on
/// conversion, like an out-of-range reading).
fn slim_events() -> impl Strategy<Value = Vec<Event>> {
    let event = prop_oneof![
        20 => (value(), value(), value(), prop::option::of(value()))
            .prop_map(|(r, y, ff, applied)| Event::Step { r, y, ff, applied }),
        1 => value().prop_map(Event::Engage),
        2 => (value(), value(), value()).prop_map(|(r, y, a)| Event::Track { r, y, a }),
        1 => Just(Event::Reset),
        1 => slim_settings().prop_map(Event::Retune),
    ];
    prop::collection::vec(event, 1..120)
}

fn grid(x: f64) -> f64 {
    (x * 65_536.0).round() / 65_536.0
}

/// The per-step error budget of FORMATS.md §4, from the stored coefficients.
struct FixedBound {
    growth: f64,
}

impl FixedBound {
    fn new(s: &Settings, c: &Config<I16F16>) -> Self {
        let ts = s.period_s;
        let kp = s.kp;
        let rel = |stored: f64, exact: f64| (stored - exact).abs();
        let range = 2.0 * (s.measurement_max - s.measurement_min).abs().max(1000.0);
        // Filtered-measurement error: rounding of the state and of its use,
        // plus the α error over the largest difference.
        let dy = match (s.filter_time_s, c.filter_alpha()) {
            (Some(tf), Some(alpha)) => {
                let exact = ts / (tf + ts);
                Q + rel(alpha.to_f64(), exact) * range / exact + 2f64.powi(-33) / exact
            }
            _ => 0.0,
        };
        let db = if s.deadband.is_some() { Q / 2.0 } else { 0.0 };
        let b = s.setpoint_weight;
        let db_r = if b == 1.0 {
            0.0
        } else {
            Q / 2.0 + c.setpoint_weight().map_or(0.0, |w| rel(w.to_f64(), b)) * 500.0
        };
        let d_pe = db_r + 3.0 * dy + db;
        let d_p = kp * d_pe + rel(c.kp().to_f64(), kp) * range + Q / 2.0;
        let d_slew = match (s.slew_per_s, c.slew_step()) {
            (Some(rate), Some(step)) => rel(step.to_num::<f64>(), rate * ts),
            _ => 0.0,
        };
        let ki_ts = s.ki_per_s * ts;
        let d_i = ki_ts * (dy + db)
            + rel(c.ki_ts().to_f64(), ki_ts) * range
            + 2f64.powi(-31)
            + c.tracking_ratio()
                .map_or(0.0, |r| r.to_f64() * (2.0 * d_p + 2.0 * Q) + 2f64.powi(-31));
        // Limits are rounded to the grid (Q/2) once; every step can add the
        // proportional error, one narrowing, the slew-step error and the
        // integrator error.
        Self {
            growth: d_p + Q + d_slew + d_i,
        }
    }

    /// FORMATS.md §4: `(k + 1)·G + q`, plus 6q for the two derived ranges
    /// (integrator and feed-forward: the output range widened by its span,
    /// from the inward-rounded limits, each end within 3q), which a step
    /// can meet at once: the integrator at its clamp and a zero
    /// feed-forward clamped into a range that excludes zero.
    fn after(&self, k: usize) -> f64 {
        (k as f64 + 1.0) * self.growth + 7.0 * Q
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 400, ..ProptestConfig::default() })]

    /// The 16-bit format follows f64 (both on the same raw units) within the
    /// bound of `FORMATS.md` §8, while both take the same branches and no
    /// intermediate value leaves the 16-bit range (there the format
    /// saturates where f64 does not, by design).
    #[test]
    fn slim16_follows_f64_within_bound(
        s in settings_within(10.0, 5_000.0),
        inputs in prop::collection::vec((-1.0f64..1.0, -1.0f64..1.0, -0.05f64..0.05), 1..150),
    ) {
        let s = s.with_scaling(Scaling::covering(
            s.measurement_min.max(-5_000.0),
            s.measurement_max.min(5_000.0),
            s.output_min,
            s.output_max,
        ));
        let (Ok(cs), Ok(cd)) = (Config::<Slim16>::try_new(&s), Config::<f64>::try_new(&s)) else {
            return Ok(());
        };
        let Ok(p) = s.per_sample() else { return Ok(()) };
        let bound = SlimBound::new(&p, &cs);
        let mut slim = Controller::new(cs);
        let mut float = Controller::new(cd);
        // Inputs as fractions of ±8 192 raw, on the integer grid.
        for (k, (r, y, ff)) in inputs.into_iter().enumerate() {
            let (r, y, ff) = ((r * 8_192.0).round(), (y * 8_192.0).round(), (ff * 8_192.0).round());
            let a = slim.step_with(&Input::new(Slim16::from_f64(r), Slim16::from_f64(y)).with_feed_forward(Slim16::from_f64(ff)));
            let b = float.step_with(&Input::new(r, y).with_feed_forward(ff));
            let p_part = p.kp * (r - y);
            if a.status != b.status || float.integral().abs() + p_part.abs() + ff.abs() > 30_000.0 {
                break;
            }
            let diff = (a.command.to_f64() - b.command).abs();
            prop_assert!(diff <= bound.after(k), "step {k}: |Δu| = {diff} > bound {}", bound.after(k));
        }
    }
}

/// The per-step error budget of FORMATS.md §8 (16-bit), in raw units: q = 1
/// raw LSB, h = half a state LSB = 2⁻¹⁴.
struct SlimBound {
    growth: f64,
}

impl SlimBound {
    fn new(p: &evenkeel::PerSample, c: &Config<Slim16>) -> Self {
        let (q, h) = (1.0, 2f64.powi(-14));
        let rel = |stored: f64, exact: f64| (stored - exact).abs();
        let range = 2.0 * (p.measurement_max - p.measurement_min).abs().max(16_384.0);
        let dy = match (p.filter_alpha, c.filter_alpha()) {
            (Some(exact), Some(alpha)) => {
                q + rel(alpha.to_f64(), exact) * range / exact + h / exact
            }
            _ => 0.0,
        };
        let db = if p.deadband.is_some() { q / 2.0 } else { 0.0 };
        let db_r = match (p.setpoint_weight, c.setpoint_weight()) {
            (Some(b), Some(w)) => q / 2.0 + rel(w.to_f64(), b) * 8_192.0,
            _ => 0.0,
        };
        let d_p = p.kp * (db_r + 3.0 * dy + db) + rel(c.kp().to_f64(), p.kp) * range + q / 2.0;
        let d_slew = match (p.slew_step, c.slew_step()) {
            (Some(exact), Some(step)) => rel(step.to_f64(), exact),
            _ => 0.0,
        };
        let d_i = p.ki_ts * (dy + db)
            + rel(c.ki_ts().to_f64(), p.ki_ts) * range
            + 4.0 * h
            + c.tracking_ratio()
                .map_or(0.0, |r| r.to_f64() * (2.0 * d_p + 2.0 * q) + 4.0 * h);
        Self {
            growth: d_p + q + d_slew + d_i,
        }
    }

    /// FORMATS.md §8: `(k + 1)·G + q` plus 6q for the derived ranges, as
    /// in [`FixedBound::after`].
    fn after(&self, k: usize) -> f64 {
        (k as f64 + 1.0) * self.growth + 7.0
    }
}

/// A Q32.32 value near `base` (within a few units of it, any fraction), or
/// anywhere, so the upper halves of value and limits often coincide or
/// differ by one.
fn accum_near(base: i64) -> impl Strategy<Value = fixed::types::I32F32> {
    prop_oneof![
        (-3i64..=3, any::<u32>()).prop_map(move |(d, f)| fixed::types::I32F32::from_bits(
            ((base + d) << 32) | i64::from(f)
        )),
        any::<i64>().prop_map(fixed::types::I32F32::from_bits),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(4096))]

    /// Q16.16's integrator clamp decides on the upper halves first; it must
    /// equal the plain clamp for every value and every pair of limits
    /// (`lo ≤ hi`), including values whose upper half equals a limit's.
    #[test]
    fn the_fast_integrator_clamp_is_the_plain_clamp(
        base in -40i64..40,
        x in accum_near(0),
        lo_d in accum_near(0),
        hi_d in accum_near(0),
        pick in 0u8..3,
    ) {
        let shift = |v: fixed::types::I32F32| fixed::types::I32F32::from_bits(v.to_bits().wrapping_add(base << 32));
        let (a, b) = (shift(lo_d), shift(hi_d));
        let (lo, hi) = if a <= b { (a, b) } else { (b, a) };
        // The value: random, or exactly at a limit, or one LSB beyond.
        let x = match pick {
            0 => shift(x),
            1 => fixed::types::I32F32::from_bits(lo.to_bits().saturating_sub(1)),
            _ => fixed::types::I32F32::from_bits(hi.to_bits().saturating_add(1)),
        };
        prop_assert_eq!(I16F16::clamp_state(x, lo, hi), x.clamp(lo, hi));
    }
}
