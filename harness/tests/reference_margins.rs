//! Stability margins and closed-loop step metrics of sampled PI loops
//! against python-control 0.10 (`stability_margins`, `step_info` on
//! `sample_system(..., "zoh")`): fixture `shared/vectors/reference/
//! loop_margins.csv`, made by `harness/tests/reference/loop_margins_fixture.py`.
//!
//! Margins come from `evenkeel_harness::design::margins`; the step
//! metrics from the real closed loop (`sim::simulate`, f64 backend, plant
//! models of the harness) and `metrics::compute`.

use evenkeel::Settings;
use evenkeel_harness::design::{LinearPlant, LoopCoefficients, SampledLoop, margins};
use evenkeel_harness::metrics::{MetricOptions, Step, compute};
use evenkeel_harness::plant::{
    Actuated, Actuator, FirstOrderLag, Integrator, Plant, Sensor, SensorParams,
};
use evenkeel_harness::profile::{Profile, Segment};
use evenkeel_harness::sim::{Setup, simulate};

/// One case: (name, integrating, k, τ, actuator τ, dead-time samples, Ts,
/// Kp, Ki, α, sensor delay, b), as in the Python script.
type Case = (
    &'static str,
    bool,
    f64,
    f64,
    f64,
    u32,
    f64,
    f64,
    f64,
    f64,
    usize,
    f64,
);

const CASES: [Case; 3] = [
    (
        "lag_dead_time",
        false,
        2.0,
        1.5,
        0.0,
        4,
        0.05,
        0.6,
        0.4,
        1.0,
        0,
        1.0,
    ),
    (
        "integrator_filter_sensor_delay",
        true,
        0.5,
        0.0,
        0.0,
        0,
        0.01,
        1.2,
        0.3,
        0.01 / 0.06,
        1,
        1.0,
    ),
    (
        "lag_actuator_dead_time_weighted",
        false,
        1.0,
        3.0,
        0.3,
        3,
        0.1,
        2.0,
        1.0,
        1.0,
        0,
        0.5,
    ),
];

fn fixture() -> Vec<(String, Vec<f64>)> {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../shared/vectors/reference/loop_margins.csv"
    );
    std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("case"))
        .map(|l| {
            let mut f = l.split(',');
            let name = f.next().unwrap().to_owned();
            (name, f.map(|x| x.parse().unwrap()).collect())
        })
        .collect()
}

#[test]
fn margins_match_python_control() {
    let want = fixture();
    assert_eq!(want.len(), CASES.len());
    for ((name, integ, k, tau, ta, dead, ts, kp, ki, alpha, d, _b), (wname, w)) in
        CASES.iter().zip(&want)
    {
        assert_eq!(name, wname);
        let plant = LinearPlant {
            integrating: *integ,
            gain: *k,
            tau_s: *tau,
            dead_time_s: f64::from(*dead) * ts,
            actuator_tau_s: *ta,
            sensor_delay: *d,
        };
        let c = LoopCoefficients {
            period_s: *ts,
            kp: *kp,
            ki_ts: ki * ts,
            alpha: *alpha,
        };
        let m = margins(&SampledLoop::new(&plant, &c));
        let rel = |a: f64, b: f64| ((a - b) / b).abs();
        // python-control evaluates on its own grid and refines; 1e-3
        // relative (frequencies, gain margin) and 0.05° are well above the
        // grid effects of both.
        assert!(
            rel(m.gain_margin, w[0]) < 1e-3,
            "{name}: GM {} vs {}",
            m.gain_margin,
            w[0]
        );
        assert!(
            (m.phase_margin_deg - w[1]).abs() < 0.05,
            "{name}: PM {} vs {}",
            m.phase_margin_deg,
            w[1]
        );
        assert!(
            rel(m.phase_crossover_rad_s, w[2]) < 1e-3,
            "{name}: wpc {} vs {}",
            m.phase_crossover_rad_s,
            w[2]
        );
        assert!(
            rel(m.gain_crossover_rad_s, w[3]) < 1e-3,
            "{name}: wgc {} vs {}",
            m.gain_crossover_rad_s,
            w[3]
        );
        assert!(m.stable());
        assert!(
            (m.delay_margin_s - m.phase_margin_deg.to_radians() / m.gain_crossover_rad_s).abs()
                < 1e-12
        );
    }
}

#[test]
fn closed_loop_step_metrics_match_python_control() {
    let want = fixture();
    for ((name, integ, k, tau, ta, dead, ts, kp, ki, alpha, d, b), (_, w)) in
        CASES.iter().zip(&want)
    {
        let mut settings = Settings::new(*ts, *kp, *ki, -1e3, 1e3).with_setpoint_weight(*b);
        if *alpha < 1.0 {
            // α = Ts/(Tf + Ts) ⇒ Tf = Ts·(1 − α)/α.
            settings = settings.with_filter_time_s(ts * (1.0 - alpha) / alpha);
        }
        let core: Box<dyn Plant> = if *integ {
            Box::new(Integrator::new(*k).unwrap())
        } else {
            Box::new(FirstOrderLag::new(*k, *tau, f64::from(*dead) * ts).unwrap())
        };
        let mut plant: Box<dyn Plant> = if *ta > 0.0 {
            // Sub-steps: the mean actuator output per piece is exact for
            // the integrator, O(h²) for the lag; 200 pieces make that
            // negligible against the sample-grid resolution of step_info.
            Box::new(Actuated::new(Actuator::new(*ta, -1e3, 1e3).unwrap(), core, 200).unwrap())
        } else {
            core
        };
        let mut sensor = Sensor::new(
            SensorParams {
                delay_samples: *d,
                ..SensorParams::default()
            },
            0,
        )
        .unwrap();
        let setup = Setup {
            duration_s: 60.0,
            reference: Profile::new(0.0, vec![Segment::step(1.0, 60.0)]),
            ..Setup::default()
        };
        let rec = simulate::<f64>(&settings, &setup, plant.as_mut(), Some(&mut sensor)).unwrap();
        let m = compute(
            &rec.trace(),
            &MetricOptions {
                step: Some(Step {
                    start_index: 0,
                    from: 0.0,
                    to: 1.0,
                }),
                ..MetricOptions::default()
            },
        )
        .unwrap();
        // step_info reads crossings off the sample grid, the harness
        // interpolates them: agree within two samples.
        let (rise, settle, over) = (
            m.rise_time_s.unwrap(),
            m.settling_time_s.unwrap(),
            m.overshoot_pct.unwrap(),
        );
        assert!(
            (rise - w[4]).abs() <= 2.0 * ts,
            "{name}: rise {rise} vs {}",
            w[4]
        );
        assert!(
            (settle - w[5]).abs() <= 2.0 * ts,
            "{name}: settling {settle} vs {}",
            w[5]
        );
        assert!(
            (over - w[6]).abs() < 0.05,
            "{name}: overshoot {over} vs {}",
            w[6]
        );
    }
}
