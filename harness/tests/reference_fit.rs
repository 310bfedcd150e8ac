//! `evenkeel fit` against outside references on synthetic logs made by a
//! script of our own (`harness/tests/reference/fit_fixture.py`, which
//! simulates the plant with numpy, not with the harness):
//!
//! - the estimates agree with `scipy.optimize.least_squares` on the same
//!   data (fixture `shared/vectors/reference/fit_lag.csv`): both minimise
//!   the same output error; the harness's sum of squares is never worse
//!   than scipy's, and the estimates differ by far less than their
//!   standard deviations (the dead time's slope has kinks at whole
//!   samples, where an optimiser may stop a hair away from the other);
//! - the known parameters lie inside the reported 95 % intervals as often
//!   as 95 % intervals promise (over 12 logs × 5 values: at least 51 of
//!   60; the binomial chance of fewer with true 95 % coverage is below
//!   1 %).

mod common;

use evenkeel_harness::fit::{Columns, FitRequest, ModelKind, fit, read_log};
use evenkeel_harness::plant::{Environment, FirstOrderLag, Plant};

/// Largest difference from scipy's estimate, in standard deviations of
/// the estimate.
const AGREEMENT_STD: f64 = 0.5;

/// The output-error sum of squares of `p` = (k, τ, θ, d, y0) on `log`, with
/// the harness's plant model.
fn ssr(log: &evenkeel_harness::fit::Log, p: &[f64]) -> f64 {
    let mut plant = FirstOrderLag::new(p[0], p[1], p[2]).unwrap();
    plant.reset_with_input(p[4], log.input[0]);
    let env = Environment {
        load: p[3],
        ..Environment::default()
    };
    let mut s = (p[4] - log.output[0]).powi(2);
    for k in 1..log.time_s.len() {
        plant.advance(log.input[k - 1], &env, log.time_s[k] - log.time_s[k - 1]);
        s += (plant.output() - log.output[k]).powi(2);
    }
    s
}

#[test]
fn lag_fits_agree_with_scipy_and_cover_the_truth() {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../shared/vectors/reference/fit_lag.csv"
    );
    let rows: Vec<(String, Vec<f64>)> = std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("log,"))
        .map(|l| {
            let mut f = l.split(',');
            let name = f.next().unwrap().to_owned();
            (name, f.map(|x| x.parse().unwrap()).collect())
        })
        .collect();
    assert_eq!(rows.len(), 12);
    let logs: Vec<_> = rows
        .iter()
        .map(|(name, _)| {
            read_log(
                &common::data(&format!("fit/{name}.csv")),
                &Columns::default(),
            )
            .unwrap()
        })
        .collect();
    let request = FitRequest {
        model: ModelKind::FirstOrderLag,
        actuator_lag: false,
        fixed: Vec::new(),
        base: None,
    };
    let outcome = fit(&request, &logs, 0.0).unwrap();
    assert!(outcome.passed());
    let keys = ["gain", "tau_s", "dead_time_s", "load", "initial_output"];
    let mut inside = 0;
    let mut total = 0;
    let mut worst = 0.0f64;
    for (((name, v), f), log) in rows.iter().zip(&outcome.logs).zip(&logs) {
        let ours: Vec<f64> = keys
            .iter()
            .map(|k| {
                f.estimates
                    .iter()
                    .find(|e| e.target.key() == *k)
                    .unwrap()
                    .value
            })
            .collect();
        let (a, b) = (ssr(log, &ours), ssr(log, &v[5..]));
        assert!(
            a <= b * (1.0 + 1e-9),
            "{name}: sum of squares {a} against scipy's {b}"
        );
        for (i, key) in keys.iter().enumerate() {
            let e = f.estimates.iter().find(|e| e.target.key() == *key).unwrap();
            let (truth, scipy) = (v[i], v[5 + i]);
            assert!(
                (e.value - scipy).abs() <= AGREEMENT_STD * e.std,
                "{name} {key}: {} vs scipy {scipy} (std {})",
                e.value,
                e.std
            );
            worst = worst.max((e.value - scipy).abs() / e.std);
            total += 1;
            if e.interval.0 <= truth && truth <= e.interval.1 {
                inside += 1;
            }
        }
        assert!(
            f.whiteness.white(),
            "{name}: white noise was added: {:?}",
            f.whiteness
        );
    }
    assert_eq!(total, 60);
    eprintln!(
        "largest difference from scipy: {worst:.3} standard deviations; {inside} of 60 inside"
    );
    assert!(
        inside >= 51,
        "{inside} of 60 true values inside their 95 % intervals"
    );
}
