//! Closed-loop steps per second, per plant model and controller backend
//! (one thread): a whole scenario run (sensor, controller, plant, recording
//! and metrics) divided by its number of controller periods.
//!
//! `cargo bench --manifest-path benches/Cargo.toml --bench closed_loop`; figures in
//! BENCHMARKS.md.

use std::hint::black_box;
use std::path::Path;

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use evenkeel::fixed::types::I16F16;
use evenkeel_harness::Scenario;
use evenkeel_harness::scenario::PlantModel;

fn scenarios() -> Vec<(&'static str, Scenario)> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared/scenarios");
    let load = |f: &str| Scenario::from_path(dir.join(f)).unwrap_or_else(|e| panic!("{e}"));
    let tug = load("baggage_tug.toml");
    let mut tank = tug.clone();
    tank.plant = PlantModel::Integrator { gain: 0.5 };
    tank.actuator = None;
    tank.setup.load_shift = None;
    vec![
        ("vehicle+actuator (tug)", tug),
        ("rotor (fan)", load("greenhouse_fan.toml")),
        (
            "lag+dead time+actuator (pump)",
            load("irrigation_pump.toml"),
        ),
        ("integrator", tank),
    ]
}

fn steps(s: &Scenario) -> u64 {
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let n = (s.setup.duration_s / s.controller.period_s).round() as u64;
    n
}

fn closed_loop(c: &mut Criterion) {
    for (name, s) in scenarios() {
        let mut group = c.benchmark_group(format!("closed_loop/{name}"));
        group.throughput(Throughput::Elements(steps(&s)));
        group.sample_size(20);
        group.bench_function("fixed", |b| {
            b.iter(|| black_box(s.run::<I16F16>().unwrap()))
        });
        group.bench_function("f32", |b| b.iter(|| black_box(s.run::<f32>().unwrap())));
        group.bench_function("f64", |b| b.iter(|| black_box(s.run::<f64>().unwrap())));
        group.finish();
    }
}

criterion_group! {
    name = benches;
    // No HTML plots: criterion's plotters back end needs system fonts.
    config = Criterion::default().without_plots();
    targets = closed_loop
}
criterion_main!(benches);
