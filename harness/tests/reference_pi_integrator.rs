//! External reference: an integrating plant `k/s` under PI control without
//! limits, against
//!
//! 1. the exact discrete-time closed-loop recursion of the sampled loop
//!    (ZOH plant `x ← x + k·Ts·u`, backward-rectangle integrator as in the
//!    controller's documented step order), and
//! 2. the continuous-time closed form. With `C = Kp + Ki/s` and `G = k/s`,
//!    `T(s) = (2ζωn·s + ωn²)/(s² + 2ζωn·s + ωn²)`, `ωn² = k·Ki`,
//!    `2ζωn = k·Kp`: a second-order system with a zero. For ζ < 1 its unit
//!    step response is
//!    `y(t) = 1 − e^(−σt)·(cos ωd·t − (σ/ωd)·sin ωd·t)`, `σ = ζωn`,
//!    `ωd = ωn·√(1 − ζ²)`: the standard second-order step response
//!    (Ogata, *Modern Control Engineering*, §5-3) plus `(2ζ/ωn)` times its
//!    derivative for the zero (Franklin, Powell & Emami-Naeini, *Feedback
//!    Control of Dynamic Systems*, §3.5 "effect of zeros"); both from memory.

use evenkeel::Settings;
use evenkeel::fixed::types::I16F16;
use evenkeel_harness::plant::Integrator;
use evenkeel_harness::profile::{Profile, Segment};
use evenkeel_harness::sim::{Recording, Setup, simulate};

const K: f64 = 2.0;
const KP: f64 = 0.6; // 2ζωn = 1.2
const KI: f64 = 0.5; // ωn² = 1.0 → ωn = 1 rad/s, ζ = 0.6
/// Difference between the f64 loop and the exact recursion: rounding only.
const RECURSION_TOL: f64 = 1e-12;
/// Sampled loop vs continuous closed form at Ts = 1 ms: the sampling adds
/// an effective delay of about Ts/2 plus the one-sample integrator lag,
/// so the error is of order ωn·Ts·max|ẏ| ≈ 1e-3; measured 3.8e-4.
const CONTINUOUS_TOL: f64 = 1e-3;
/// Q16.16 signals (LSB 1.5e-5) and rounded coefficients: measured 3.8e-4,
/// the same as f64 to 1e-6.
const FIXED_TOL: f64 = 1e-3;

fn run<B: evenkeel::Backend>(ts: f64) -> Recording {
    let settings = Settings::new(ts, KP, KI, -1000.0, 1000.0);
    let setup = Setup {
        duration_s: 15.0,
        reference: Profile::new(0.0, vec![Segment::step(1.0, 15.0)]),
        ..Setup::default()
    };
    simulate::<B>(&settings, &setup, &mut Integrator::new(K).unwrap(), None).unwrap()
}

fn closed_form(t: f64) -> f64 {
    let wn = (K * KI).sqrt();
    let zeta = K * KP / (2.0 * wn);
    let sigma = zeta * wn;
    let wd = wn * (1.0 - zeta * zeta).sqrt();
    1.0 - (-sigma * t).exp() * ((wd * t).cos() - sigma / wd * (wd * t).sin())
}

#[test]
fn f64_loop_equals_the_exact_discrete_recursion() {
    let ts = 0.01;
    let rec = run::<f64>(ts);
    let (mut x, mut i) = (0.0_f64, 0.0_f64);
    for (k, (&y, &u)) in rec.output.iter().zip(&rec.command).enumerate() {
        let r = if k == 0 { 1.0 } else { rec.reference[k] };
        assert_eq!(r, 1.0);
        let e = r - x;
        let u_ref = KP * e + i;
        assert!((y - x).abs() <= RECURSION_TOL, "k = {k}: y {y} vs {x}");
        assert!(
            (u - u_ref).abs() <= RECURSION_TOL,
            "k = {k}: u {u} vs {u_ref}"
        );
        i += KI * ts * e;
        x += K * ts * u_ref;
    }
}

#[test]
fn sampled_loop_matches_the_continuous_closed_form() {
    let ts = 0.001;
    for (name, rec) in [("f64", run::<f64>(ts)), ("fixed", run::<I16F16>(ts))] {
        let tol = if name == "fixed" {
            FIXED_TOL
        } else {
            CONTINUOUS_TOL
        };
        let worst = rec
            .time_s
            .iter()
            .zip(&rec.output)
            .map(|(&t, &y)| (y - closed_form(t)).abs())
            .fold(0.0, f64::max);
        assert!(worst <= tol, "{name}: worst deviation {worst:e} > {tol:e}");
    }
}

#[test]
fn closed_form_has_the_textbook_overshoot_of_a_zero() {
    // Sanity check of the reference itself: the peak of y(t), found on a
    // fine grid, exceeds the zero-free second-order overshoot
    // e^(−πζ/√(1−ζ²)) = 9.5 % for ζ = 0.6 (Ogata §5-3), as a left-half-plane
    // zero adds overshoot.
    let peak = (0..20_000)
        .map(|i| closed_form(f64::from(i) * 1e-3))
        .fold(0.0, f64::max);
    let zero_free = (-std::f64::consts::PI * 0.6 / 0.8_f64).exp();
    assert!(peak - 1.0 > zero_free, "peak {peak}");
}
