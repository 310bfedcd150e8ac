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
    let minimal_inputs = plain(&full_inputs);
    for (label, settings, inputs) in [
        ("minimal", MINIMAL, &minimal_inputs),
        ("full", FULL, &full_inputs),
    ] {
        let config = Config::<B>::try_new(&settings).expect("valid bench settings");
        bench_steps(c, &format!("step/{}/{label}", B::NAME), config, inputs);
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

/// The inputs of `full` without feed-forward and applied value (what the
/// minimal loops take).
fn plain<B: Backend>(full: &[Input<B>]) -> Vec<Input<B>> {
    full.iter()
        .map(|i| Input::new(i.setpoint, i.measurement))
        .collect()
}

/// The 16-bit loops: the same loops on power-of-two scales that cover them
/// (`Scaling::covering`: 2048 raw per measurement unit, 8 per command
/// unit).
const SLIM_SCALING: Scaling = Scaling::covering(0.0, 8.0, -800.0, 1200.0);
const SLIM_FULL: Settings = FULL
    .with_scaling(SLIM_SCALING)
    .with_measurement_range(-16.0, 15.99);
const SLIM_MINIMAL: Settings = MINIMAL
    .with_scaling(SLIM_SCALING)
    .with_measurement_range(-16.0, 15.99);

/// The bench inputs converted to the 16-bit loops' raw units, as a
/// firmware's would be.
fn slim_inputs() -> Vec<Input<Slim16>> {
    let m = SLIM_SCALING.measurement;
    let u = SLIM_SCALING.command;
    inputs::<f64>()
        .iter()
        .map(|i| {
            Input::new(
                Slim16::from_f64(m.raw(i.setpoint)),
                Slim16::from_f64(m.raw(i.measurement)),
            )
            .with_feed_forward(Slim16::from_f64(u.raw_span(i.feed_forward)))
            .with_applied(Slim16::ZERO)
        })
        .collect()
}

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

/// The fixed-point step with its structure fixed at compile time (the same
/// settings and inputs as `step/fixed/…`, the same bits).
fn bench_layout(c: &mut Criterion) {
    let full = inputs::<I16F16>();
    let minimal = plain(&full);
    let config = evenkeel::config!(I16F16, MinimalLayout, MINIMAL);
    bench_steps(c, "step/fixed-layout/minimal", config, &minimal);
    let config = evenkeel::config!(I16F16, FullLayout, FULL);
    bench_steps(c, "step/fixed-layout/full", config, &full);
}

/// The 16-bit backend on the same loops, run-time configuration.
fn bench_slim16(c: &mut Criterion) {
    let full = slim_inputs();
    let minimal = plain(&full);
    let config = Config::<Slim16>::try_new(&SLIM_MINIMAL).expect("valid bench settings");
    bench_steps(c, "step/slim16/minimal", config, &minimal);
    let config = Config::<Slim16>::try_new(&SLIM_FULL).expect("valid bench settings");
    bench_steps(c, "step/slim16/full", config, &full);
}

evenkeel::frozen!(FrozenFull: I16F16 = FULL);
evenkeel::frozen!(FrozenMinimal: I16F16 = MINIMAL);
evenkeel::frozen!(SlimFrozenFull: Slim16 = SLIM_FULL);
evenkeel::frozen!(SlimFrozenMinimal: Slim16 = SLIM_MINIMAL);

/// The whole configuration fixed at compile time (`evenkeel::frozen!`):
/// the same settings and inputs as `step/fixed/…` and `step/slim16/…`, the
/// same bits.
fn bench_frozen(c: &mut Criterion) {
    let full = inputs::<I16F16>();
    bench_steps(
        c,
        "step/fixed-frozen/minimal",
        FrozenMinimal::CONFIG,
        &plain(&full),
    );
    bench_steps(c, "step/fixed-frozen/full", FrozenFull::CONFIG, &full);
    let full = slim_inputs();
    bench_steps(
        c,
        "step/slim16-frozen/minimal",
        SlimFrozenMinimal::CONFIG,
        &plain(&full),
    );
    bench_steps(c, "step/slim16-frozen/full", SlimFrozenFull::CONFIG, &full);
}

/// A step bench as on the boards: every step one out-of-line call
/// (`evenkeel_replay::probe`, `#[inline(never)]`), as the hand-written
/// floor's steps are; `step` for inputs without feed-forward and applied
/// value.
fn probe_steps<B: Backend, L: evenkeel::Layout>(
    c: &mut Criterion,
    name: &str,
    config: Config<B, L>,
    inputs: &[Input<B>],
) {
    use evenkeel_replay::probe;
    let mut pi = probe::new(config);
    let mut k = 0usize;
    c.bench_function(name, |b| {
        b.iter(|| {
            k = (k + 1) & 255;
            let input = black_box(
                inputs
                    .get(k)
                    .copied()
                    .unwrap_or(Input::new(B::ZERO, B::ZERO)),
            );
            if input.applied.is_none() && input.feed_forward == B::ZERO {
                black_box(probe::step(&mut pi, input.setpoint, input.measurement))
            } else {
                black_box(probe::step_with(&mut pi, &input))
            }
        })
    });
}

/// The boards' cost workloads on the host (`evenkeel_replay::cost`): `f64`
/// with the physical settings, the frozen 16-bit configuration, and the
/// 16-bit step written by hand for these settings
/// (`evenkeel_replay::floor`, the same bits as the library), on the same
/// 256 inputs (the bench profile at 512 raw per unit, the workloads'
/// scale); every step one out-of-line call, as on the boards. The floor
/// shows what a 16-bit step with these semantics costs here, written
/// without the library's generic structure.
fn bench_workload_floor(c: &mut Criterion) {
    use evenkeel_replay::{cost, floor};
    evenkeel::frozen!(WorkFull: Slim16 = cost::SLIM_FULL);
    evenkeel::frozen!(WorkMinimal: Slim16 = cost::SLIM_MINIMAL);
    let physical = inputs::<f64>();
    let raw = |x: f64| Slim16::from_f64(x * cost::SLIM_SCALE);
    let slim: Vec<Input<Slim16>> = physical
        .iter()
        .map(|i| {
            Input::new(raw(i.setpoint), raw(i.measurement))
                .with_feed_forward(raw(i.feed_forward))
                .with_applied(raw(i.applied.unwrap_or(0.0)))
        })
        .collect();
    let f64_full = Config::<f64>::try_new(&cost::FULL).expect("valid workload");
    let f64_minimal = Config::<f64>::try_new(&cost::MINIMAL).expect("valid workload");
    probe_steps(c, "workload/f64/minimal", f64_minimal, &plain(&physical));
    probe_steps(c, "workload/f64/full", f64_full, &physical);
    probe_steps(
        c,
        "workload/slim16-frozen/minimal",
        WorkMinimal::CONFIG,
        &plain(&slim),
    );
    probe_steps(c, "workload/slim16-frozen/full", WorkFull::CONFIG, &slim);
    let pick = |k: usize| {
        slim.get(k)
            .copied()
            .unwrap_or(Input::new(Slim16::ZERO, Slim16::ZERO))
    };
    let mut state = floor::Minimal::new();
    let mut k = 0usize;
    c.bench_function("workload/slim16-floor/minimal", |b| {
        b.iter(|| {
            k = (k + 1) & 255;
            let i = black_box(pick(k));
            black_box(floor::minimal_step(
                &mut state,
                i.setpoint.raw(),
                i.measurement.raw(),
            ))
        })
    });
    let mut state = floor::Full::new();
    c.bench_function("workload/slim16-floor/full", |b| {
        b.iter(|| {
            k = (k + 1) & 255;
            let i = black_box(pick(k));
            let applied = i.applied.unwrap_or(Slim16::ZERO).raw();
            black_box(floor::full_step(
                &mut state,
                i.setpoint.raw(),
                i.measurement.raw(),
                i.feed_forward.raw(),
                applied,
            ))
        })
    });
}

fn benches(c: &mut Criterion) {
    bench_workload_floor(c);
    bench_frozen(c);
    bench_layout(c);
    bench_slim16(c);
    bench_backend::<I16F16>(c);
    bench_backend::<f32>(c);
    bench_backend::<f64>(c);
}

criterion_group!(step, benches);
criterion_main!(step);
