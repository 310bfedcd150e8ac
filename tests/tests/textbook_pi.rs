//! The controller against the textbook discrete PI with back-calculation.
//!
//! Reference: Åström & Hägglund, *Advanced PID Control*, ISA 2006,
//! chapter 13 (implementation), the PI listing with anti-windup (from
//! memory):
//!
//! ```text
//! P = K·(b·ysp − y);  v = P + I;  u = sat(v);
//! I = I + bi·(ysp − y) + ar·(u − v),   bi = K·h/Ti,  ar = h/Tt
//! ```

use evenkeel::{AntiWindup, Config, Controller, Settings};
use fixed::types::I16F16;

/// K = 2, Ti = 0.5 s, h = 0.1 s, Tt = 0.2 s, b = 0.5, u in [−1, 1.1]:
/// bi = 0.4, ar = 0.5.
const SETTINGS: Settings = Settings::from_integral_time(0.1, 2.0, 0.5, -1.0, 1.1)
    .with_setpoint_weight(0.5)
    .with_anti_windup(AntiWindup::BackCalculation {
        tracking_time_s: 0.2,
    });

const SETPOINT: f64 = 1.0;
const MEASUREMENTS: [f64; 7] = [0.0, 0.1, 0.3, 0.6, 0.9, 1.1, 1.0];

/// Worked by hand with the listing above:
/// k=0: P = 2(0.5−0) = 1.0,   v = 1.0,   u = 1.0,   I = 0 + 0.4·1.0 = 0.4
/// k=1: P = 0.8, v = 1.2,     u = 1.1,   I = 0.4 + 0.36 + 0.5(−0.1) = 0.71
/// k=2: P = 0.4, v = 1.11,    u = 1.1,   I = 0.71 + 0.28 − 0.005 = 0.985
/// k=3: P = −0.2, v = 0.785,  u = 0.785, I = 0.985 + 0.16 = 1.145
/// k=4: P = −0.8, v = 0.345,  u = 0.345, I = 1.145 + 0.04 = 1.185
/// k=5: P = −1.2, v = −0.015, u = −0.015, I = 1.185 − 0.04 = 1.145
/// k=6: P = −1.0, v = 0.145,  u = 0.145
const HAND_WORKED: [f64; 7] = [1.0, 1.1, 1.1, 0.785, 0.345, -0.015, 0.145];

/// The listing itself, in plain f64, to cross-check the hand-worked values.
fn listing(measurements: &[f64]) -> Vec<f64> {
    let (k, ti, h, tt, b, lo, hi) = (2.0, 0.5, 0.1, 0.2, 0.5, -1.0, 1.1);
    let (bi, ar) = (k * h / ti, h / tt);
    let mut i = 0.0;
    measurements
        .iter()
        .map(|&y| {
            let p = k * (b * SETPOINT - y);
            let v = p + i;
            let u = f64::clamp(v, lo, hi);
            i += bi * (SETPOINT - y) + ar * (u - v);
            u
        })
        .collect()
}

#[test]
fn listing_reproduces_the_hand_worked_sequence() {
    for (got, want) in listing(&MEASUREMENTS).iter().zip(HAND_WORKED) {
        assert!((got - want).abs() < 1e-12, "{got} vs {want}");
    }
}

#[test]
fn f64_backend_matches_the_textbook() {
    let mut pi = Controller::new(Config::<f64>::try_new(&SETTINGS).unwrap());
    for (y, want) in MEASUREMENTS.iter().zip(HAND_WORKED) {
        let u = pi.step(SETPOINT, *y).command;
        assert!((u - want).abs() < 1e-12, "y = {y}: {u} vs {want}");
    }
}

#[test]
fn f32_backend_matches_the_textbook() {
    let mut pi = Controller::new(Config::<f32>::try_new(&SETTINGS).unwrap());
    for (y, want) in MEASUREMENTS.iter().zip(HAND_WORKED) {
        let u = pi.step(SETPOINT as f32, *y as f32).command;
        assert!((f64::from(u) - want).abs() < 1e-6, "y = {y}: {u} vs {want}");
    }
}

#[test]
fn fixed_backend_matches_the_textbook_within_its_bound() {
    // Inputs rounded to Q16.16 (≤ 0.5 LSB each), 7 steps: the bound of
    // FORMATS.md §4 for these gains is well under 8 LSB; measured: see
    // the assertion message on failure.
    let mut pi = Controller::new(Config::<I16F16>::try_new(&SETTINGS).unwrap());
    let lsb = 1.0 / 65_536.0;
    for (y, want) in MEASUREMENTS.iter().zip(HAND_WORKED) {
        let u: f64 = pi
            .step(I16F16::from_num(SETPOINT), I16F16::from_num(*y))
            .command
            .to_num();
        assert!((u - want).abs() <= 8.0 * lsb, "y = {y}: {u} vs {want}");
    }
}
