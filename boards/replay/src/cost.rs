//! Instructions per controller step, timed against a cycle counter.
//!
//! Method: under QEMU with `-icount shift=10` every instruction advances
//! virtual time by exactly 1024 ns, and SysTick (clocked by the core clock)
//! counts `f_clk · 1024 ns` ticks per instruction, so a tick difference is
//! an exact instruction count ([`Rate`] converts, rounding to nearest). Each
//! step is one call to a [`probe`] function between two counter readings;
//! the cost of the readings alone is measured first and subtracted, so a
//! figure counts the call, the argument set-up and the return.
//!
//! Two workloads of [`STEPS`] steps each run a closed loop around a fixed
//! first-order plant `y ← y + (u − y)/8` with setpoint changes into and out
//! of saturation: `full` uses every feature (filter, deadband, setpoint
//! weight, slew limit, back-calculation, feed-forward, applied value,
//! measurement range) through `step_with`; `minimal` uses the defaults
//! (conditional integration, nothing else) through `step`.

use evenkeel::fixed::types::I16F16;
use evenkeel::{
    AntiWindup, Backend, Config, Controller, FixedCoef, Input, Layout, Scale, Scaling, Settings,
    Slim16, SlimCoef,
};

use core::hint::black_box;

use crate::floor;
use crate::probe;

/// Steps timed per workload.
pub const STEPS: u32 = 256;

/// Settings of the `full` workload.
pub const FULL: Settings = Settings::new(0.01, 2.0, 5.0, -10.0, 10.0)
    .with_slew_per_s(200.0)
    .with_filter_time_s(0.02)
    .with_deadband(0.01)
    .with_setpoint_weight(0.7)
    .with_anti_windup(AntiWindup::BackCalculation {
        tracking_time_s: 0.1,
    })
    .with_measurement_range(-100.0, 100.0);

/// Settings of the `minimal` workload.
pub const MINIMAL: Settings = Settings::new(0.01, 2.0, 5.0, -10.0, 10.0);

/// Raw units of the 16-bit workloads: 512 LSB per unit on both sides
/// (±10 output → ±5120 raw; measurement range ±60 → ±30 720 raw).
pub const SLIM_SCALE: f64 = 512.0;

/// [`FULL`] for the 16-bit format: the same loop in raw units of
/// [`SLIM_SCALE`], measurement range ±60 (so that it fits 16 bits).
pub const SLIM_FULL: Settings = FULL.with_measurement_range(-60.0, 60.0).with_scaling(
    Scaling::NONE
        .with_measurement(Scale::new(SLIM_SCALE, 0.0))
        .with_command(Scale::new(SLIM_SCALE, 0.0)),
);

/// [`MINIMAL`] for the 16-bit format (see [`SLIM_FULL`]).
pub const SLIM_MINIMAL: Settings = MINIMAL.with_measurement_range(-60.0, 60.0).with_scaling(
    Scaling::NONE
        .with_measurement(Scale::new(SLIM_SCALE, 0.0))
        .with_command(Scale::new(SLIM_SCALE, 0.0)),
);

/// A free-running counter.
pub trait Clock {
    /// The counter; it must increase by the elapsed ticks, modulo 2²⁴.
    fn ticks(&mut self) -> u32;
}

/// Counter ticks per instruction as a fraction `ticks / instructions`
/// (mps2 at 25 MHz: 128/5 = 25.6; micro:bit at 16 MHz: 2048/125 = 16.384).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Rate {
    /// Numerator.
    pub ticks: u32,
    /// Denominator.
    pub instructions: u32,
}

impl Rate {
    /// Instructions for `ticks`, rounded to nearest.
    #[must_use]
    pub fn instructions(self, ticks: u32) -> u32 {
        let scaled = u64::from(ticks) * u64::from(self.instructions) + u64::from(self.ticks / 2);
        let count = scaled.checked_div(u64::from(self.ticks)).unwrap_or(0);
        u32::try_from(count).unwrap_or(u32::MAX)
    }
}

/// Instructions per step over one workload.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Cost {
    /// Fewest instructions of one step.
    pub min: u32,
    /// Most instructions of one step.
    pub max: u32,
    /// Sum over all [`STEPS`] steps.
    pub total: u32,
}

impl Cost {
    /// Mean per step in tenths of an instruction.
    #[must_use]
    pub fn mean_tenths(&self) -> u32 {
        self.total.saturating_mul(10) / STEPS
    }
}

struct Timer<'a, C: Clock> {
    clock: &'a mut C,
    rate: Rate,
    overhead: u32,
    cost: Cost,
}

impl<'a, C: Clock> Timer<'a, C> {
    fn new(clock: &'a mut C, rate: Rate) -> Self {
        let a = clock.ticks();
        let b = clock.ticks();
        let overhead = b.wrapping_sub(a) & 0x00ff_ffff;
        Self {
            clock,
            rate,
            overhead,
            cost: Cost {
                min: u32::MAX,
                max: 0,
                total: 0,
            },
        }
    }

    fn time<T>(&mut self, f: impl FnOnce() -> T) -> T {
        let a = self.clock.ticks();
        let out = f();
        let b = self.clock.ticks();
        let ticks = (b.wrapping_sub(a) & 0x00ff_ffff).saturating_sub(self.overhead);
        let n = self.rate.instructions(ticks);
        self.cost.min = self.cost.min.min(n);
        self.cost.max = self.cost.max.max(n);
        self.cost.total = self.cost.total.saturating_add(n);
        out
    }
}

/// A backend's constants for the workloads.
pub trait Workload: Backend {
    /// `x/8` as a coefficient.
    const EIGHTH: Self::Coef;
    /// Signal from a small integer.
    fn int(x: i16) -> Self;
}

impl Workload for I16F16 {
    const EIGHTH: FixedCoef = match FixedCoef::from_f64(0.125, 0) {
        Some(c) => c,
        None => FixedCoef::ZERO,
    };
    fn int(x: i16) -> Self {
        I16F16::from_bits(i32::from(x) << 16)
    }
}

impl Workload for Slim16 {
    const EIGHTH: SlimCoef = match SlimCoef::from_f64(0.125, 0) {
        Some(c) => c,
        None => SlimCoef::ZERO,
    };
    fn int(x: i16) -> Self {
        Slim16::from_raw(x.saturating_mul(SLIM_SCALE as i16))
    }
}

#[cfg(feature = "f32")]
impl Workload for f32 {
    const EIGHTH: f32 = 0.125;
    fn int(x: i16) -> Self {
        f32::from(x)
    }
}

fn setpoint<B: Workload>(k: u32) -> B {
    match k {
        0..64 => B::int(4),
        64..128 => B::int(40), // far beyond the output range: saturation
        128..192 => B::int(-3),
        _ => B::int(1),
    }
}

/// The `minimal` workload's loop: the setpoint profile and a plant
/// `y += (u − y)/8`. `step(k, r, y)` runs step `k` and returns its command.
fn drive_minimal<B: Workload>(mut step: impl FnMut(u32, B, B) -> B) {
    let mut y = B::ZERO;
    for k in 0..STEPS {
        let u = step(k, setpoint::<B>(k), y);
        y = y.add(u.sub(y).scale(B::EIGHTH));
    }
}

/// The `full` workload's loop: the setpoint profile, feed-forward 1, and
/// a downstream limit at 8 that the controller hears about next step.
/// `step(k, input)` runs step `k` and returns its command.
fn drive_full<B: Workload>(mut step: impl FnMut(u32, &Input<B>) -> B) {
    let mut y = B::ZERO;
    let mut applied = B::ZERO;
    for k in 0..STEPS {
        let input = Input::new(setpoint::<B>(k), y)
            .with_feed_forward(B::int(1))
            .with_applied(applied);
        let u = step(k, &input);
        applied = if u > B::int(8) { B::int(8) } else { u };
        y = y.add(applied.sub(y).scale(B::EIGHTH));
    }
}

/// Time the `full` workload with configuration `config` (built from
/// [`FULL`]).
pub fn full<B: Workload, L: Layout>(
    config: Config<B, L>,
    clock: &mut impl Clock,
    rate: Rate,
) -> Cost {
    let mut timer = Timer::new(clock, rate);
    let mut pi = probe::new(config);
    drive_full(|_, input: &Input<B>| {
        let out = timer.time(|| probe::step_with(&mut pi, input));
        // The status is part of the result: keep the optimiser from
        // dropping its computation from the probe (outside the timing).
        black_box(out.status);
        out.command
    });
    timer.cost
}

/// Time the `minimal` workload with configuration `config` (built from
/// [`MINIMAL`]).
pub fn minimal<B: Workload, L: Layout>(
    config: Config<B, L>,
    clock: &mut impl Clock,
    rate: Rate,
) -> Cost {
    let mut timer = Timer::new(clock, rate);
    let mut pi = probe::new(config);
    drive_minimal(|_, r: B, y: B| {
        let out = timer.time(|| probe::step(&mut pi, r, y));
        black_box(out.status);
        out.command
    });
    timer.cost
}

/// A hand-written step compared with the library's over one workload.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct FloorCheck {
    /// Steps compared.
    pub steps: u32,
    /// Steps whose command or status differ.
    pub mismatches: u32,
    /// The first differing step: its index, the library's output and the
    /// hand-written one.
    pub first: Option<(u32, floor::Step, floor::Step)>,
}

impl FloorCheck {
    fn new() -> Self {
        Self {
            steps: 0,
            mismatches: 0,
            first: None,
        }
    }

    fn compare(&mut self, k: u32, library: evenkeel::Output<Slim16>, hand: floor::Step) {
        let library = floor::Step {
            command: library.command.raw(),
            status: library.status.bits(),
        };
        self.steps = self.steps.saturating_add(1);
        if library != hand {
            self.mismatches = self.mismatches.saturating_add(1);
            if self.first.is_none() {
                self.first = Some((k, library, hand));
            }
        }
    }
}

/// Run the 16-bit `minimal` workload through `Controller<Slim16,
/// SlimMinimalLayout>` and [`floor::minimal_step`] side by side (the loop
/// driven by the library's command) and compare every step.
#[must_use]
pub fn check_minimal_floor() -> FloorCheck {
    let mut check = FloorCheck::new();
    let mut pi = probe::new(SLIM_MINIMAL_LAYOUT);
    let mut hand = floor::Minimal::new();
    drive_minimal(|k, r: Slim16, y: Slim16| {
        let out = probe::step(&mut pi, black_box(r), black_box(y));
        // Opaque arguments here (untimed): otherwise the optimiser may
        // specialise the step on the few values the workloads pass.
        let got = floor::minimal_step(&mut hand, black_box(r.raw()), black_box(y.raw()));
        check.compare(k, out, got);
        out.command
    });
    check
}

/// [`check_minimal_floor`] for the `full` workload and
/// [`floor::full_step`].
#[must_use]
pub fn check_full_floor() -> FloorCheck {
    let mut check = FloorCheck::new();
    let mut pi = probe::new(SLIM_FULL_LAYOUT);
    let mut hand = floor::Full::new();
    drive_full(|k, input: &Input<Slim16>| {
        let out = probe::step_with(&mut pi, input);
        let got = floor::full_step(
            &mut hand,
            black_box(input.setpoint.raw()),
            black_box(input.measurement.raw()),
            black_box(input.feed_forward.raw()),
            black_box(input.applied.unwrap_or(Slim16::ZERO).raw()),
        );
        check.compare(k, out, got);
        out.command
    });
    check
}

/// A frozen configuration compared with the same settings under a
/// compile-time layout, over one workload.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct FrozenCheck {
    /// Steps compared.
    pub steps: u32,
    /// Steps whose command or status differ.
    pub mismatches: u32,
    /// The first differing step.
    pub first: Option<u32>,
}

impl FrozenCheck {
    fn new() -> Self {
        Self {
            steps: 0,
            mismatches: 0,
            first: None,
        }
    }

    fn compare<B: Backend>(&mut self, k: u32, a: evenkeel::Output<B>, b: evenkeel::Output<B>) {
        self.steps = self.steps.saturating_add(1);
        if a.command != b.command || a.status != b.status {
            self.mismatches = self.mismatches.saturating_add(1);
            self.first = self.first.or(Some(k));
        }
    }
}

/// Run the `minimal` workload through `layout` and `frozen` side by side
/// (the loop driven by the layout's command, the arguments opaque so the
/// optimiser cannot specialise on them) and compare every step.
#[must_use]
pub fn check_frozen_minimal<B: Workload, L: Layout, F: Layout>(
    layout: Config<B, L>,
    frozen: Config<B, F>,
) -> FrozenCheck {
    let mut check = FrozenCheck::new();
    let (mut a, mut b) = (probe::new(layout), probe::new(frozen));
    drive_minimal(|k, r: B, y: B| {
        let out = probe::step(&mut a, black_box(r), black_box(y));
        let other = probe::step(&mut b, black_box(r), black_box(y));
        check.compare(k, out, other);
        out.command
    });
    check
}

/// [`check_frozen_minimal`] for the `full` workload.
#[must_use]
pub fn check_frozen_full<B: Workload, L: Layout, F: Layout>(
    layout: Config<B, L>,
    frozen: Config<B, F>,
) -> FrozenCheck {
    let mut check = FrozenCheck::new();
    let (mut a, mut b) = (probe::new(layout), probe::new(frozen));
    drive_full(|k, input: &Input<B>| {
        let out = probe::step_with(&mut a, black_box(input));
        let other = probe::step_with(&mut b, black_box(input));
        check.compare(k, out, other);
        out.command
    });
    check
}

/// Time [`floor::minimal_step`] on the `minimal` workload, as
/// [`minimal`] times the library.
pub fn minimal_floor(clock: &mut impl Clock, rate: Rate) -> Cost {
    let mut timer = Timer::new(clock, rate);
    let mut hand = floor::Minimal::new();
    drive_minimal(|_, r: Slim16, y: Slim16| {
        let out = timer.time(|| floor::minimal_step(&mut hand, r.raw(), y.raw()));
        black_box(out.status);
        Slim16::from_raw(out.command)
    });
    timer.cost
}

/// Time [`floor::full_step`] on the `full` workload, as [`full`] times
/// the library.
pub fn full_floor(clock: &mut impl Clock, rate: Rate) -> Cost {
    let mut timer = Timer::new(clock, rate);
    let mut hand = floor::Full::new();
    drive_full(|_, input: &Input<Slim16>| {
        let (r, y, ff) = (input.setpoint, input.measurement, input.feed_forward);
        let applied = input.applied.unwrap_or(Slim16::ZERO);
        let out =
            timer.time(|| floor::full_step(&mut hand, r.raw(), y.raw(), ff.raw(), applied.raw()));
        black_box(out.status);
        Slim16::from_raw(out.command)
    });
    timer.cost
}

/// Fixed-point configurations of the two workloads.
pub const FIXED_FULL: Config<I16F16> = evenkeel::config!(I16F16, FULL);
/// See [`FIXED_FULL`].
pub const FIXED_MINIMAL: Config<I16F16> = evenkeel::config!(I16F16, MINIMAL);
evenkeel::layout!(pub FullLayout = FULL);
evenkeel::layout!(pub MinimalLayout = MINIMAL);
/// The `full` workload's configuration with its structure fixed at compile
/// time (same settings, same bits).
pub const FIXED_FULL_LAYOUT: Config<I16F16, FullLayout> =
    evenkeel::config!(I16F16, FullLayout, FULL);
/// The `minimal` workload's configuration with its structure fixed at
/// compile time.
pub const FIXED_MINIMAL_LAYOUT: Config<I16F16, MinimalLayout> =
    evenkeel::config!(I16F16, MinimalLayout, MINIMAL);
/// 16-bit configurations of the two workloads (run-time and layout).
pub const SLIM_FULL_CONFIG: Config<Slim16> = evenkeel::config!(Slim16, SLIM_FULL);
/// See [`SLIM_FULL_CONFIG`].
pub const SLIM_MINIMAL_CONFIG: Config<Slim16> = evenkeel::config!(Slim16, SLIM_MINIMAL);
evenkeel::layout!(pub SlimFullLayout = SLIM_FULL);
evenkeel::layout!(pub SlimMinimalLayout = SLIM_MINIMAL);
/// The 16-bit `full` workload under its compile-time layout.
pub const SLIM_FULL_LAYOUT: Config<Slim16, SlimFullLayout> =
    evenkeel::config!(Slim16, SlimFullLayout, SLIM_FULL);
/// The 16-bit `minimal` workload under its compile-time layout.
pub const SLIM_MINIMAL_LAYOUT: Config<Slim16, SlimMinimalLayout> =
    evenkeel::config!(Slim16, SlimMinimalLayout, SLIM_MINIMAL);
// The four workloads with the whole configuration fixed at compile time
// (`evenkeel::frozen!`): same settings, same bits (checked on every step
// by `check_frozen_*`), every setting a constant in the step.
evenkeel::frozen!(pub FrozenFull: I16F16 = FULL);
evenkeel::frozen!(pub FrozenMinimal: I16F16 = MINIMAL);
evenkeel::frozen!(pub SlimFrozenFull: Slim16 = SLIM_FULL);
evenkeel::frozen!(pub SlimFrozenMinimal: Slim16 = SLIM_MINIMAL);

/// `f32` configurations of the two workloads.
#[cfg(feature = "f32")]
pub const F32_FULL: Config<f32> = evenkeel::config!(f32, FULL);
/// See [`F32_FULL`].
#[cfg(feature = "f32")]
pub const F32_MINIMAL: Config<f32> = evenkeel::config!(f32, MINIMAL);

/// Bytes of RAM one controller instance takes.
#[must_use]
pub const fn controller_bytes<B: Backend>() -> usize {
    core::mem::size_of::<Controller<B>>()
}
