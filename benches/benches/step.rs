//! Cost of one controller step per backend, minimal and full feature sets;
//! engage and reset; building a configuration.
//!
//! `cargo bench --manifest-path benches/Cargo.toml --bench step`. Report ratios measured in one
//! run (BENCHMARKS.md); absolute times depend on the machine.

use std::hint::black_box;

use criterion::{BatchSize, Criterion, criterion_group, criterion_main};
use evenkeel::{AntiWindup, Backend, Config, Controller, Input, Scaling, Settings, Slim16};
use fixed::types::I16F16;

/// Kp, Ki and limits only; conditional integration.
const MINIMAL: Settings = Settings::new(0.01, 40.0, 20.0, -800.0, 1200.0);

/// Every feature on: weighting, filter, deadband, slew, back-calculation.
const FULL: Settings = Settings::new(0.01, 40.0, 20.0, -800.0, 1200.0)
    .with_setpoint_weight(0.7)
    .with_filter_time_s(0.05)
    .with_deadband(0.01)
    .with_slew_per_s(2000.0)
    .with_anti_windup(AntiWindup::BackCalculation {
        tracking_time_s: 0.5,
    });

/// 256 inputs that visit the linear region, both clamps and the slew limit.
fn inputs<B: Backend>() -> Vec<Input<B>> {
    (0..256)
        .map(|k| {
            let t = f64::from(k) / 256.0;
            let r = if k < 128 { 4.0 } else { 1.0 };
            let y = 4.0 * t + 0.05 * (37.0 * t).sin();
            Input::new(B::from_f64(r), B::from_f64(y))
                .with_feed_forward(B::from_f64(10.0))
                .with_applied(B::ZERO)
        })
        .collect()
}

fn bench_backend<B: Backend>(c: &mut Criterion) {
    let full_inputs = inputs::<B>();
    // The minimal set also drops feed-forward and the applied value.
    let minimal_inputs: Vec<Input<B>> = full_inputs
        .iter()
        .map(|i| Input::new(i.setpoint, i.measurement))
        .collect();
    for (label, settings, inputs) in [
        ("minimal", MINIMAL, &minimal_inputs),
        ("full", FULL, &full_inputs),
    ] {
        let config = Config::<B>::try_new(&settings).expect("valid bench settings");
        let mut pi = Controller::new(config);
        let mut k = 0usize;
        c.bench_function(&format!("step/{}/{label}", B::NAME), |b| {
            b.iter(|| {
                k = (k + 1) & 255;
                let input = inputs
                    .get(k)
                    .copied()
                    .unwrap_or(Input::new(B::ZERO, B::ZERO));
                black_box(pi.step_with(black_box(&input)))
            })
        });
    }
    let config = Config::<B>::try_new(&FULL).expect("valid bench settings");
    c.bench_function(&format!("engage+step/{}", B::NAME), |b| {
        b.iter_batched_ref(
            || Controller::new(config),
            |pi| {
                pi.engage(B::from_f64(150.0));
                black_box(pi.step(B::from_f64(4.0), B::from_f64(3.5)))
            },
            BatchSize::SmallInput,
        )
    });
    c.bench_function(&format!("reset/{}", B::NAME), |b| {
        let mut pi = Controller::new(config);
        b.iter(|| {
            pi.reset();
            black_box(pi.last_command())
        })
    });
    c.bench_function(&format!("configure/{}", B::NAME), |b| {
        b.iter(|| black_box(Config::<B>::try_new(black_box(&FULL))))
    });
}

evenkeel::layout!(FullLayout = FULL);
evenkeel::layout!(MinimalLayout = MINIMAL);

/// The fixed-point step with its structure fixed at compile time (the same
/// settings and inputs as `step/fixed/…`, the same bits).
fn bench_layout(c: &mut Criterion) {
    let full_inputs = inputs::<I16F16>();
    let minimal_inputs: Vec<Input<I16F16>> = full_inputs
        .iter()
        .map(|i| Input::new(i.setpoint, i.measurement))
        .collect();
    let mut full = Controller::new(evenkeel::config!(I16F16, FullLayout, FULL));
    let mut minimal = Controller::new(evenkeel::config!(I16F16, MinimalLayout, MINIMAL));
    let mut k = 0usize;
    c.bench_function("step/fixed-layout/minimal", |b| {
        b.iter(|| {
            k = (k + 1) & 255;
            let input = minimal_inputs
                .get(k)
                .copied()
                .unwrap_or(Input::new(I16F16::ZERO, I16F16::ZERO));
            black_box(minimal.step_with(black_box(&input)))
        })
    });
    c.bench_function("step/fixed-layout/full", |b| {
        b.iter(|| {
            k = (k + 1) & 255;
            let input = full_inputs
                .get(k)
                .copied()
                .unwrap_or(Input::new(I16F16::ZERO, I16F16::ZERO));
            black_box(full.step_with(black_box(&input)))
        })
    });
}

/// The 16-bit backend on the same loops, on power-of-two scales that
/// cover them (`Scaling::covering`: 2048 raw per measurement unit, 8 per
/// command unit), inputs converted to raw units as a firmware's would be.
fn bench_slim16(c: &mut Criterion) {
    let scaling = Scaling::covering(0.0, 8.0, -800.0, 1200.0);
    let m = scaling.measurement;
    let u = scaling.command;
    let full_inputs: Vec<Input<Slim16>> = inputs::<f64>()
        .iter()
        .map(|i| {
            Input::new(
                Slim16::from_f64(m.raw(i.setpoint)),
                Slim16::from_f64(m.raw(i.measurement)),
            )
            .with_feed_forward(Slim16::from_f64(u.raw_span(i.feed_forward)))
            .with_applied(Slim16::ZERO)
        })
        .collect();
    let minimal_inputs: Vec<Input<Slim16>> = full_inputs
        .iter()
        .map(|i| Input::new(i.setpoint, i.measurement))
        .collect();
    for (label, settings, inputs) in [
        ("minimal", MINIMAL, &minimal_inputs),
        ("full", FULL, &full_inputs),
    ] {
        let settings = settings
            .with_scaling(scaling)
            .with_measurement_range(-16.0, 15.99);
        let config = Config::<Slim16>::try_new(&settings).expect("valid bench settings");
        let mut pi = Controller::new(config);
        let mut k = 0usize;
        c.bench_function(&format!("step/slim16/{label}"), |b| {
            b.iter(|| {
                k = (k + 1) & 255;
                let input = inputs
                    .get(k)
                    .copied()
                    .unwrap_or(Input::new(Slim16::ZERO, Slim16::ZERO));
                black_box(pi.step_with(black_box(&input)))
            })
        });
    }
}

evenkeel::frozen!(FrozenFull: I16F16 = FULL);
evenkeel::frozen!(FrozenMinimal: I16F16 = MINIMAL);
/// The 16-bit loops of `bench_slim16`, as constants.
const SLIM_SCALING: Scaling = Scaling::covering(0.0, 8.0, -800.0, 1200.0);
evenkeel::frozen!(SlimFrozenFull: Slim16 = FULL.with_scaling(SLIM_SCALING).with_measurement_range(-16.0, 15.99));
evenkeel::frozen!(SlimFrozenMinimal: Slim16 = MINIMAL.with_scaling(SLIM_SCALING).with_measurement_range(-16.0, 15.99));

/// A step bench over `inputs`, cycling through them.
fn bench_steps<B: Backend, L: evenkeel::Layout>(
    c: &mut Criterion,
    name: &str,
    config: Config<B, L>,
    inputs: &[Input<B>],
) {
    let mut pi = Controller::new(config);
    let mut k = 0usize;
    c.bench_function(name, |b| {
        b.iter(|| {
            k = (k + 1) & 255;
            let input = inputs
                .get(k)
                .copied()
                .unwrap_or(Input::new(B::ZERO, B::ZERO));
            black_box(pi.step_with(black_box(&input)))
        })
    });
}

/// The whole configuration fixed at compile time (`evenkeel::frozen!`):
/// the same settings and inputs as `step/fixed/…` and `step/slim16/…`, the
/// same bits.
fn bench_frozen(c: &mut Criterion) {
    let full = inputs::<I16F16>();
    let minimal: Vec<Input<I16F16>> = full
        .iter()
        .map(|i| Input::new(i.setpoint, i.measurement))
        .collect();
    bench_steps(c, "step/fixed-frozen/minimal", FrozenMinimal::CONFIG, &minimal);
    bench_steps(c, "step/fixed-frozen/full", FrozenFull::CONFIG, &full);
    let m = SLIM_SCALING.measurement;
    let u = SLIM_SCALING.command;
    let full: Vec<Input<Slim16>> = inputs::<f64>()
        .iter()
        .map(|i| {
            Input::new(
                Slim16::from_f64(m.raw(i.setpoint)),
                Slim16::from_f64(m.raw(i.measurement)),
            )
            .with_feed_forward(Slim16::from_f64(u.raw_span(i.feed_forward)))
            .with_applied(Slim16::ZERO)
        })
        .collect();
    let minimal: Vec<Input<Slim16>> = full
        .iter()
        .map(|i| Input::new(i.setpoint, i.measurement))
        .collect();
    bench_steps(c, "step/slim16-frozen/minimal", SlimFrozenMinimal::CONFIG, &minimal);
    bench_steps(c, "step/slim16-frozen/full", SlimFrozenFull::CONFIG, &full);
}

fn benches(c: &mut Criterion) {
    bench_frozen(c);
    bench_layout(c);
    bench_slim16(c);
    bench_backend::<I16F16>(c);
    bench_backend::<f32>(c);
    bench_backend::<f64>(c);
}

criterion_group!(step, benches);
criterion_main!(step);
