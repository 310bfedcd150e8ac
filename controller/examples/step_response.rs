//! A speed step on an invented first-order plant (m·v̇ = c·u − d·v), the
//! same controller run in Q16.16 fixed point and in f64, side by side.
//!
//! `cargo run --release -p evenkeel --example step_response`

use evenkeel::{AntiWindup, Config, Controller, Settings};
use fixed::types::I16F16;

/// Invented demo numbers: Ts = 10 ms, command in kN, speed in m/s.
const SETTINGS: Settings = Settings::new(0.01, 1.2, 0.6, -2.0, 3.0)
    .with_slew_per_s(4.0)
    .with_anti_windup(AntiWindup::BackCalculation {
        tracking_time_s: 0.5,
    });
const FIXED: Config<I16F16> = evenkeel::config!(I16F16, SETTINGS);

fn main() {
    let (mass_t, gain_kn, damping) = (2.4, 1.0, 0.3);
    let mut fixed = Controller::new(FIXED);
    let mut float =
        Controller::new(Config::<f64>::try_new(&SETTINGS).expect("valid demo settings"));
    let (mut v_fixed, mut v_float) = (0.0f64, 0.0f64);
    let setpoint = 4.0;
    println!("   t/s   command fixed   command f64   speed fixed   speed f64   status");
    for k in 0..=1500 {
        let a = fixed.step(I16F16::from_num(setpoint), I16F16::from_num(v_fixed));
        let b = float.step(setpoint, v_float);
        let u_fixed: f64 = a.command.to_num();
        if k % 100 == 0 {
            println!(
                "{:6.2} {:15.5} {:13.5} {:13.5} {:11.5}   {}",
                f64::from(k) * 0.01,
                u_fixed,
                b.command,
                v_fixed,
                v_float,
                a.status
            );
        }
        // Explicit Euler with 10 sub-steps per sample, zero-order hold.
        for _ in 0..10 {
            v_fixed += 0.001 * (gain_kn * u_fixed - damping * v_fixed) / mass_t;
            v_float += 0.001 * (gain_kn * b.command - damping * v_float) / mass_t;
        }
    }
    println!(
        "Engineering aid, not a certified safety function; ISO 26262 / IEC 61508 processes and local regulations govern real deployments."
    );
}
