//! The 16-bit step written by hand for the two cost workloads: the floor
//! that `Controller<Slim16, L>` is measured against.
//!
//! Each function computes the same command and status bits as the library
//! step for one configuration only ([`crate::cost::SLIM_MINIMAL`],
//! [`crate::cost::SLIM_FULL`]), written as a person would write it for
//! that configuration: every setting a literal, no generic layer, the
//! state the workload needs and nothing more (no engage, track, reset or
//! retune: the workloads never call them, so the library's engage test and
//! retune inputs are not here), plain `i16`/`i32` arithmetic. Saturation
//! is kept wherever some input makes it observable; where a bound makes it
//! unobservable, the comment gives the bound. The firmware checks every
//! step of each workload against the library before timing it
//! ([`crate::cost::check_minimal_floor`], [`crate::cost::check_full_floor`]);
//! the host test `tests/tests/floor.rs` checks the same over random and
//! extreme inputs.
//!
//! Settings, in raw units of 512 LSB per unit (printed from the library's
//! configuration getters): output ±5120, measurement range ±30 720,
//! integrator ±15 360 raw (±125 829 120 state LSB at 2⁻¹³), Kp = 16 384 ·
//! 2⁻¹³ (exactly 2), Ki·Ts = 26 214 · 2⁻¹⁹; full only: α = 21 845 · 2⁻¹⁶,
//! b = 22 938 · 2⁻¹⁵, Ts/Tt = 26 214 · 2⁻¹⁸, deadband 5, slew step 1024,
//! feed-forward range ±15 360.

/// Command (raw) and status bits ([`evenkeel::Status::bits`]) of a step.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Step {
    /// The command, raw.
    pub command: i16,
    /// The status bits.
    pub status: u16,
}

const CLAMP_HIGH: u16 = 1 << 0;
const CLAMP_LOW: u16 = 1 << 1;
const SLEW: u16 = 1 << 2;
const DOWNSTREAM: u16 = 1 << 3;
const INTEGRATOR_HELD: u16 = 1 << 4;
const DEADBAND: u16 = 1 << 5;
const MEASUREMENT_RANGE: u16 = 1 << 9;
const SETPOINT_RANGE: u16 = 1 << 10;

const OUT: i32 = 5120;
const RANGE: i16 = 30_720;
const I_MAX: i32 = 15_360 << 13;

/// `x` saturated to the 16-bit range, kept in `i32`.
#[inline(always)]
fn s16(x: i32) -> i32 {
    x.clamp(-32_768, 32_767)
}

/// Whether `x` lies within the measurement range ±30 720 (one unsigned
/// comparison).
#[inline(always)]
fn inside(x: i16) -> bool {
    (i32::from(x) + i32::from(RANGE)) as u32 <= 2 * RANGE as u32
}

/// Setpoint and measurement, clamped into ±30 720, with their flags. Only
/// when one is outside: out of line, off the common path.
#[cold]
#[inline(never)]
fn clamp_inputs(r: i16, y: i16) -> (i16, i16, u16) {
    let mut status = 0;
    if !inside(y) {
        status |= MEASUREMENT_RANGE;
    }
    if !inside(r) {
        status |= SETPOINT_RANGE;
    }
    (r.clamp(-RANGE, RANGE), y.clamp(-RANGE, RANGE), status)
}

/// Setpoint and measurement within the measurement range, and the status
/// so far.
#[inline(always)]
fn range(r: i16, y: i16) -> (i16, i16, u16) {
    if inside(r) & inside(y) {
        (r, y, 0)
    } else {
        clamp_inputs(r, y)
    }
}

/// State of the minimal loop: the integrator alone.
#[derive(Clone, Copy, Debug, Default)]
pub struct Minimal {
    integral: i32,
}

impl Minimal {
    /// At rest.
    #[must_use]
    pub const fn new() -> Self {
        Self { integral: 0 }
    }
}

/// The `minimal` workload's step (conditional integration, nothing else).
///
/// Unobservable saturation, dropped: `r − y` and `2e + I` are computed in
/// `i32`. With |r|, |y| ≤ 30 720 and |I| ≤ 15 360 raw, whenever the
/// library's 16-bit `e` or `P + I` would saturate, `2e + I` is already
/// beyond the output limit on the same side, so the command and the clamp
/// flag are the same, and the integrator is held (its error pushes the
/// same way): the saturated values never reach the integrator.
#[inline(never)]
pub fn minimal_step(s: &mut Minimal, setpoint: i16, measurement: i16) -> Step {
    let (r, y, mut status) = range(setpoint, measurement);
    let e = i32::from(r) - i32::from(y);
    // I rounded to a signal, ties toward +∞ (|I| < 2³⁰: no wrap, and it
    // fits 16 bits).
    let v = 2 * e + ((s.integral + 4096) >> 13);
    let u = if v > OUT {
        status |= CLAMP_HIGH;
        OUT
    } else if v < -OUT {
        status |= CLAMP_LOW;
        -OUT
    } else {
        v
    };
    if (v > OUT && e > 0) || (v < -OUT && e < 0) {
        status |= INTEGRATOR_HELD;
    } else {
        // Ki·Ts·e at 2⁻¹³: (e · 26 214 + 2⁵) >> 6, |e| ≤ 32 767 here.
        let i = s.integral + ((e * 26_214 + 32) >> 6);
        s.integral = i.clamp(-I_MAX, I_MAX);
    }
    Step {
        command: u as i16,
        status,
    }
}

/// State of the full loop.
#[derive(Clone, Copy, Debug, Default)]
pub struct Full {
    integral: i32,
    filtered: i32,
    last_filtered: i16,
    last_command: i16,
    primed: bool,
}

impl Full {
    /// At rest.
    #[must_use]
    pub const fn new() -> Self {
        Self {
            integral: 0,
            filtered: 0,
            last_filtered: 0,
            last_command: 0,
            primed: false,
        }
    }
}

/// The `full` workload's step: filter, deadband, setpoint weight, slew
/// limit, back-calculation, measurement range, feed-forward, applied value.
///
/// Unobservable saturation, dropped: rounding the integrator (|I| ≤ 15 360
/// raw) and the filter state to a signal (it stays within the
/// measurement range, ±30 720, to within one LSB); `r · b` (b < 1);
/// `last ± 1024` (|last| ≤ 5120); two of the three in P (see there).
#[inline(never)]
pub fn full_step(
    s: &mut Full,
    setpoint: i16,
    measurement: i16,
    feed_forward: i16,
    applied: i16,
) -> Step {
    let (r, y, mut status) = range(setpoint, measurement);
    let (r, y) = (i32::from(r), i32::from(y));
    let ff = i32::from(feed_forward).clamp(-15_360, 15_360);
    let y_f = if s.primed {
        // y_f += α·(y − y_f) at 2⁻¹³: (d · 21 845 + 2²) >> 3.
        let d = s16(y - i32::from(s.last_filtered));
        s.filtered += (d * 21_845 + 4) >> 3;
        (s.filtered + 4096) >> 13
    } else {
        s.filtered = y << 13;
        y
    };
    s.primed = true;
    s.last_filtered = y_f as i16;

    let e = s16(r - y_f);
    // Deadband ±5: exact sums (|inside| ≤ 5).
    let inside = e.clamp(-5, 5);
    let e_db = e - inside;
    if e_db == 0 {
        status |= DEADBAND;
    }
    // P = Kp·(b·r − y_f − inside), Kp = 2 exactly (no rounding), b·r
    // nearest, ties toward +∞. One saturation where the library has three
    // (b·r − y_f, − inside, 2·): whenever an inner one acts, |2·(…)| is
    // beyond 32 767 on the same side either way (|inside| ≤ 5).
    let rb = (r * 22_938 + 16_384) >> 15;
    let p = s16(2 * (rb - y_f - inside));
    let i = (s.integral + 4096) >> 13;
    let v = s16(s16(p + i) + ff);

    let mut u = v;
    if u > OUT {
        u = OUT;
        status |= CLAMP_HIGH;
    } else if u < -OUT {
        u = -OUT;
        status |= CLAMP_LOW;
    }
    let last = i32::from(s.last_command);
    if u > last + 1024 {
        u = last + 1024;
        status |= SLEW;
    } else if u < last - 1024 {
        u = last - 1024;
        status |= SLEW;
    }
    let downstream = s16(i32::from(applied) - last);
    if downstream != 0 {
        status |= DOWNSTREAM;
    }
    // Back-calculation: Ki·Ts·e_db at 2⁻¹³, (e · 26 214 + 2⁵) >> 6, then
    // (Ts/Tt)·(u − v + d), (x · 26 214 + 2⁴) >> 5; within 2³¹ before the
    // clamp (the bound of `SlimCoef::integrate`).
    let mut integral = s.integral + ((e_db * 26_214 + 32) >> 6);
    let back = s16(s16(u - v) + downstream);
    integral += (back * 26_214 + 16) >> 5;
    s.integral = integral.clamp(-I_MAX, I_MAX);
    s.last_command = u as i16;
    Step {
        command: u as i16,
        status,
    }
}
