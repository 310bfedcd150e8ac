//! The tracking, per-segment and disturbance criteria against traces
//! worked by hand: each recording below is written in closed form (not
//! simulated), judged by `BackendRun::assess` with the scenario's own
//! profiles, and every measured value compared with the formula in the
//! comment beside it.

use evenkeel::Status;
use evenkeel_harness::Scenario;
use evenkeel_harness::criteria::{MetricKey, Scope, Verdict};
use evenkeel_harness::fault::FaultTrace;
use evenkeel_harness::metrics::sample_time_s;
use evenkeel_harness::outcome::BackendRun;
use evenkeel_harness::sim::Recording;

/// Sample period of every trace, s.
const DT: f64 = 1e-3;
/// Agreement asked of interpolated times (the crossings are interpolated
/// linearly between samples 1 ms apart on smooth curves).
const TIME_TOL: f64 = 1e-5;

/// The scenario head: an integrator loop (never simulated here) with the
/// given reference, disturbance and criteria tables.
fn scenario(duration_s: f64, rest: &str) -> Scenario {
    let text = format!(
        r#"
[scenario]
name = "worked"
duration_s = {duration_s}
[controller]
period_s = {DT}
kp = 1.0
ki_per_s = 1.0
output_min = -10.0
output_max = 10.0
[plant]
model = "integrator"
gain = 1.0
{rest}
"#
    );
    Scenario::from_toml(&text, "worked.toml").unwrap()
}

/// A recording of `scenario`'s reference and the output `y(t)`.
fn recording(s: &Scenario, y: impl Fn(f64) -> f64) -> Recording {
    let n = (s.setup.duration_s / DT).round() as usize;
    let time_s: Vec<f64> = (0..n).map(|k| sample_time_s(k, DT)).collect();
    let reference: Vec<f64> = time_s.iter().map(|&t| s.setup.reference.at(t)).collect();
    let output: Vec<f64> = time_s.iter().map(|&t| y(t)).collect();
    Recording {
        backend: "f64",
        dt_s: DT,
        reference,
        measurement: output.clone(),
        output,
        command: vec![0.0; n],
        applied: vec![0.0; n],
        accel: vec![0.0; n],
        status: vec![Status::NONE; n],
        states: Vec::new(),
        load_shifts: 0,
        faults: FaultTrace::default(),
        time_s,
    }
}

fn verdict(run: &BackendRun, metric: MetricKey, scope: Scope) -> &Verdict {
    run.verdicts
        .iter()
        .find(|v| v.criterion.metric == metric && v.criterion.scope == scope)
        .unwrap_or_else(|| panic!("no verdict {metric} in {scope:?}"))
}

#[test]
fn ramp_tracking_error_of_a_first_order_lag() {
    // r: 0 until 1 s, then a ramp of a = 0.5 /s to 2 at 5 s, held.
    // A first-order loop (time constant τ) lags a ramp by
    //   e(t') = a·τ·(1 − e^(−t'/τ)),  t' = t − 1 ∈ [0, 4],
    // largest at the ramp's end: a·τ·(1 − e^(−4/τ)) = 0.25·(1 − e^(−8))
    // = 0.249916 for τ = 0.5 s, at t = 5 s; after it the error decays as
    // e(4)·e^(−(t' − 4)/τ).
    let (a, tau) = (0.5_f64, 0.5_f64);
    let s = scenario(
        10.0,
        r#"
[reference]
initial = 0.0
segments = [{ hold_s = 1.0 }, { to = 2.0, ramp_s = 4.0, hold_s = 5.0 }]
[criteria]
ramp_tracking_error_peak = { max = 0.2, source = "belt lag the operator notices (invented)" }
tracking_error_peak = { max = 0.3 }
[[criteria.segment]]
index = 1
ramp_tracking_error_peak = { max = 0.3 }
"#,
    );
    let lag = |tp: f64| a * tau * (1.0 - (-tp / tau).exp());
    let rec = recording(&s, |t| {
        let tp = t - 1.0;
        let e = if tp <= 0.0 {
            0.0
        } else if tp <= 4.0 {
            lag(tp)
        } else {
            lag(4.0) * (-(tp - 4.0) / tau).exp()
        };
        s.setup.reference.at(t) - e
    });
    let run = BackendRun::assess(&s, rec).unwrap();
    let expected = a * tau * (1.0 - (-8.0_f64).exp());
    let ramp = verdict(&run, MetricKey::RampTrackingErrorPeak, Scope::Run);
    assert!(
        (ramp.measured.unwrap() - expected).abs() < 1e-12,
        "{ramp:?}"
    );
    assert_eq!(ramp.at_s, Some(5.0));
    assert!(!ramp.pass, "0.2499 > 0.2");
    let peak = verdict(&run, MetricKey::TrackingErrorPeak, Scope::Run);
    assert!((peak.measured.unwrap() - expected).abs() < 1e-12 && peak.pass);
    let seg = verdict(&run, MetricKey::RampTrackingErrorPeak, Scope::Segment(1));
    assert!((seg.measured.unwrap() - expected).abs() < 1e-12 && seg.pass);
    // No ramp: undefined, and the criterion fails with the reason.
    let flat = scenario(
        2.0,
        "[reference]\nsegments = [{ to = 1.0, hold_s = 2.0 }]\n[criteria]\nramp_tracking_error_peak = { max = 1.0 }\n",
    );
    let run = BackendRun::assess(&flat, recording(&flat, |_| 1.0)).unwrap();
    let v = &run.verdicts[0];
    assert_eq!((v.measured, v.pass), (None, false));
    assert_eq!(v.undefined.map(|u| u.key()), Some("no_ramp"));
}

#[test]
fn each_segment_judged_on_its_own_step() {
    // Three steps: 0 → 1 at 0 s, 1 → 3 at 10 s, 3 → 2 at 20 s.
    // Segment 0 and 1 answer as first-order lags (τ0 = 0.5 s, τ1 = 0.8 s):
    // rise time 10–90 % = τ·ln 9, 2 % settling time = τ·ln 50 (closed
    // form: 1 − e^(−t/τ) crosses 0.1 at τ·ln(10/9), 0.9 at τ·ln 10 and
    // leaves the 2 % band at τ·ln 50). Segment 2 answers as an
    // underdamped second-order loop, ζ = 0.5, ωn = 4 rad/s:
    // y = 3 − 1·(1 − e^(−ζωn t')/√(1−ζ²)·sin(ωd t' + acos ζ)), whose peak
    // overshoot is 100·e^(−πζ/√(1−ζ²)) = 16.303 % at t' = π/ωd = 0.9069 s
    // (Ogata §5-3, from memory).
    let (tau0, tau1, zeta, wn) = (0.5_f64, 0.8_f64, 0.5_f64, 4.0_f64);
    let s = scenario(
        30.0,
        r#"
[reference]
initial = 0.0
segments = [{ to = 1.0, hold_s = 10.0 }, { to = 3.0, hold_s = 10.0 }, { to = 2.0, hold_s = 10.0 }]
[criteria]
settling_time_s = { max = 2.5 }
[[criteria.segment]]
index = 1
rise_time_s = { max = 2.0 }
settling_time_s = { max = 3.0 }
[[criteria.segment]]
index = 2
overshoot_pct = { max = 20.0 }
[[criteria.window]]
start_s = 9.0
end_s = 19.0
settling_time_s = { max = 3.5 }
"#,
    );
    let sd = (1.0 - zeta * zeta).sqrt();
    let wd = wn * sd;
    let rec = recording(&s, |t| {
        if t < 10.0 {
            1.0 - (-t / tau0).exp()
        } else if t < 20.0 {
            1.0 + 2.0 * (1.0 - (-(t - 10.0) / tau1).exp())
        } else {
            let tp = t - 20.0;
            3.0 - (1.0 - (-zeta * wn * tp).exp() / sd * (wd * tp + zeta.acos()).sin())
        }
    });
    let run = BackendRun::assess(&s, rec).unwrap();
    // The whole-run step metrics still refer to the first change.
    let settle0 = verdict(&run, MetricKey::SettlingTime, Scope::Run);
    assert!((settle0.measured.unwrap() - tau0 * 50f64.ln()).abs() < TIME_TOL);
    assert!(settle0.pass, "1.956 s <= 2.5 s");
    let rise1 = verdict(&run, MetricKey::RiseTime, Scope::Segment(1));
    assert!((rise1.measured.unwrap() - tau1 * 9f64.ln()).abs() < TIME_TOL);
    assert!(rise1.pass, "1.758 s <= 2 s");
    let settle1 = verdict(&run, MetricKey::SettlingTime, Scope::Segment(1));
    assert!((settle1.measured.unwrap() - tau1 * 50f64.ln()).abs() < TIME_TOL);
    assert!(!settle1.pass, "3.130 s > 3 s");
    let over2 = verdict(&run, MetricKey::Overshoot, Scope::Segment(2));
    let expected = 100.0 * (-std::f64::consts::PI * zeta / sd).exp();
    // Sampled peak: within the curvature over half a sample of the true one.
    assert!(
        (over2.measured.unwrap() - expected).abs() < 1e-3,
        "{over2:?}"
    );
    assert!(over2.pass);
    let peak_at = 20.0 + std::f64::consts::PI / wd;
    assert!(
        (over2.at_s.unwrap() - peak_at).abs() <= DT,
        "{:?}",
        over2.at_s
    );
    // The window's step is the first change inside it (10 s), judged to
    // the end of its segment or of the window: the same settling time.
    let win = verdict(
        &run,
        MetricKey::SettlingTime,
        Scope::Window {
            index: 0,
            start_s: 9.0,
            end_s: 19.0,
            band: None,
        },
    );
    assert!((win.measured.unwrap() - tau1 * 50f64.ln()).abs() < TIME_TOL);
    assert_eq!(win.criterion.label(), "window[0].settling_time_s");
}

/// The root of x·e^(1−x) = level for x > 1, by bisection (independent of
/// the harness).
fn tail_crossing(level: f64) -> f64 {
    let f = |x: f64| x * (1.0 - x).exp() - level;
    let (mut lo, mut hi) = (1.0, 50.0);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if f(mid) > 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

#[test]
fn disturbance_peak_and_recovery_of_a_load_step() {
    // Reference 1, a load step at 5 s. The error answers as
    //   e(t') = A·(t'/τ)·e^(1 − t'/τ),  t' = t − 5,
    // the shape of a PI loop's load response: its peak is A at t' = τ
    // (de/dt' = 0 there), so A = 0.4 at t = 5.5 s for τ = 0.5 s. It falls
    // back below the band b = 0.04 = A/10 for good where
    // x·e^(1−x) = 0.1, x = t'/τ ≈ 4.88972 (ln x + 1 − x = ln 0.1), so the
    // recovery time is the first sample after τ·x ≈ 2.44486 s.
    let (amp, tau) = (0.4_f64, 0.5_f64);
    let s = scenario(
        15.0,
        r#"
[reference]
initial = 1.0
[disturbance.load]
segments = [{ hold_s = 5.0 }, { to = 1.0, hold_s = 10.0 }]
[metrics]
disturbance_band = 0.04
[criteria]
disturbance_peak_deviation = { max = 0.3 }
disturbance_recovery_s = { max = 3.0 }
[[criteria.window]]
start_s = 4.0
end_s = 9.0
band = 0.1
disturbance_recovery_s = { max = 1.5 }
tracking_error_rms = { max = 1.0 }
"#,
    );
    let e = |t: f64| {
        let x = (t - 5.0) / tau;
        if x <= 0.0 {
            0.0
        } else {
            amp * x * (1.0 - x).exp()
        }
    };
    let run = BackendRun::assess(&s, recording(&s, |t| 1.0 - e(t))).unwrap();
    let peak = verdict(&run, MetricKey::DisturbancePeakDeviation, Scope::Run);
    assert!((peak.measured.unwrap() - amp).abs() < 1e-12);
    assert_eq!(peak.at_s, Some(5.5));
    assert!(!peak.pass, "0.4 > 0.3");
    let rec = verdict(&run, MetricKey::DisturbanceRecovery, Scope::Run);
    let back = tau * tail_crossing(0.1);
    assert!((back - 2.44486).abs() < 1e-5, "{back}");
    let want = (back / DT).ceil() * DT;
    assert!(
        (rec.measured.unwrap() - want).abs() < 1e-9,
        "{rec:?} vs {want}"
    );
    assert_eq!(rec.at_s, Some(5.0));
    assert!(rec.pass);
    // The window has its own band (0.1 = A/4: x·e^(1−x) = 0.25 at
    // x ≈ 3.69263, so back after about 1.84632 s) and ends at 9 s; the
    // error is back within 0.1 at 6.847 s, before the window ends.
    let window = Scope::Window {
        index: 0,
        start_s: 4.0,
        end_s: 9.0,
        band: Some(0.1),
    };
    let w = verdict(&run, MetricKey::DisturbanceRecovery, window);
    let back_w = tau * tail_crossing(0.25);
    assert!((w.measured.unwrap() - (back_w / DT).ceil() * DT).abs() < 1e-9);
    assert!(!w.pass, "1.86 s > 1.5 s");
    // RMS over the window [4, 9) s (5000 samples): √(Σe²/n), here
    // compared with the integral A²·τ·∫x²e^(2−2x)dx over x in [0, 8]
    // = A²·τ·e²·(1/4)·(1 − e^(−16)(1 + 16 + 128)) (from ∫x²e^(−2x) =
    // 1/4 − e^(−2X)(X²/2 + X/2 + 1/4)), over 5 s, square-rooted: 0.171918.
    let rms = verdict(&run, MetricKey::TrackingErrorRms, window);
    let x_end = 8.0_f64;
    let integral = amp
        * amp
        * tau
        * (2.0_f64).exp()
        * (0.25 - (-2.0 * x_end).exp() * (x_end * x_end / 2.0 + x_end / 2.0 + 0.25));
    let want_rms = (integral / 5.0).sqrt();
    assert!(
        (rms.measured.unwrap() - want_rms).abs() < 1e-4,
        "{rms:?} vs {want_rms}"
    );
    // No disturbance change at all: undefined and failing, with the reason.
    let calm = scenario(
        2.0,
        "[reference]\ninitial = 1.0\n[criteria]\ndisturbance_peak_deviation = { max = 1.0 }\n",
    );
    let run = BackendRun::assess(&calm, recording(&calm, |_| 1.0)).unwrap();
    assert_eq!(
        run.verdicts[0].undefined.map(|u| u.key()),
        Some("no_disturbance")
    );
    assert!(!run.verdicts[0].pass);
}

#[test]
fn scoped_tables_are_checked_on_load() {
    let bad = |criteria: &str, want: &str| {
        let text = format!(
            "[scenario]\nname = \"x\"\nduration_s = 10.0\n[controller]\nperiod_s = 0.01\nkp = 1.0\nki_per_s = 1.0\noutput_min = -1.0\noutput_max = 1.0\n[plant]\nmodel = \"integrator\"\ngain = 1.0\n[reference]\nsegments = [{{ hold_s = 2.0 }}, {{ to = 1.0, hold_s = 8.0 }}]\n{criteria}"
        );
        let e = Scenario::from_toml(&text, "x.toml")
            .unwrap_err()
            .to_string();
        assert!(e.contains(want), "{e}");
    };
    bad(
        "[criteria]\niae = { max = 1.0 }\n[[criteria.segment]]\nindex = 0\nrise_time_s = { max = 1.0 }\n",
        "reference.segments[0] does not change the reference",
    );
    bad(
        "[criteria]\niae = { max = 1.0 }\n[[criteria.segment]]\nindex = 5\nrise_time_s = { max = 1.0 }\n",
        "criteria.segment[0].index",
    );
    bad(
        "[criteria]\niae = { max = 1.0 }\n[[criteria.window]]\nstart_s = 4.0\nend_s = 3.0\niae = { max = 1.0 }\n",
        "criteria.window[0].end_s",
    );
    bad(
        "[criteria]\niae = { max = 1.0 }\n[[criteria.window]]\nstart_s = 1.0\nend_s = 3.0\nlimit_violations = { max = 0.0 }\n",
        "is a fault check",
    );
    bad(
        "[criteria]\niae = { max = 1.0 }\n[[criteria.segment]]\nindex = 1\n",
        "names no criterion",
    );
}
