//! The scenarios the golden vectors record: every anti-windup mode, slew
//! limit and filter on and off, a gain schedule, engage/track/reset,
//! saturation episodes and extreme inputs.
//!
//! Inputs come from closed loops around a small plant and from a seeded
//! integer generator, using only + − × ÷ in `f64` (IEEE-exact, so every host
//! regenerates the same bytes). The numbers are invented for the tests.

use evenkeel::fixed::types::I16F16;
use evenkeel::{AntiWindup, Breakpoint, ConfigError, Schedule, Settings};

use super::record::{Event, Extra, Recorder, Recording};

/// Every scenario, in file order.
///
/// # Errors
/// A configuration error if a scenario's settings are invalid (a bug here).
pub fn all() -> Result<Vec<Recording>, ConfigError> {
    let profile_400 = |k: usize| match k {
        0..100 => 2.0,
        100..200 => 8.0,  // beyond reach: saturation high
        200..300 => -6.0, // saturation low
        _ => 0.5,
    };
    let profile_300 = |k: usize| profile_400(k * 4 / 3);
    let base = Settings::new(0.01, 1.5, 4.0, -5.0, 5.0);
    let back = |tt| AntiWindup::BackCalculation {
        tracking_time_s: tt,
    };
    Ok(vec![
        closed_loop("conditional_plain", base, 400, profile_400, 0.01, 1)?,
        closed_loop(
            "conditional_slew",
            base.with_slew_per_s(40.0),
            300,
            profile_300,
            0.01,
            2,
        )?,
        closed_loop(
            "conditional_filter_slew",
            base.with_filter_time_s(0.05).with_slew_per_s(100.0),
            300,
            profile_300,
            0.05,
            3,
        )?,
        closed_loop(
            "backcalc_plain",
            base.with_anti_windup(back(0.2)),
            300,
            profile_300,
            0.01,
            4,
        )?,
        closed_loop(
            "backcalc_filter",
            base.with_anti_windup(back(0.05)).with_filter_time_s(0.03),
            300,
            profile_300,
            0.05,
            5,
        )?,
        closed_loop(
            "backcalc_unit_ratio_slew",
            base.with_anti_windup(back(0.01)).with_slew_per_s(25.0),
            300,
            profile_300,
            0.0,
            6,
        )?,
        closed_loop(
            "deadband_weight_filter",
            base.with_deadband(0.05)
                .with_setpoint_weight(0.4)
                .with_filter_time_s(0.1),
            300,
            |k| [0.0, 0.04, 0.3, -0.2, 1.0, 0.98][k / 50 % 6],
            0.02,
            7,
        )?,
        feed_forward_full()?,
        gain_schedule()?,
        engage_track_reset()?,
        downstream_saturation()?,
        sub_lsb_integral()?,
        extreme_inputs()?,
        extreme_gains()?,
        random_everything()?,
    ])
}

/// Every scenario of the schedule set (`schedule.ekv`, format version 2):
/// the gain schedule applied with `Controller::schedule` on every step,
/// from a table the firmware builds at compile time from the stored rows.
///
/// # Errors
/// A configuration error if a scenario's settings are invalid (a bug here).
pub fn schedules() -> Result<Vec<Recording>, ConfigError> {
    Ok(vec![
        schedule_plain()?,
        schedule_all_features()?,
        schedule_extremes()?,
    ])
}

/// A recorder whose table is built by the `const` builder, as on target.
fn scheduled(name: &str, base: Settings, rows: &[Breakpoint]) -> Result<Recorder, ConfigError> {
    let table = Schedule::fixed(&base, rows)?;
    Ok(Recorder::new(name, base, Some(table))?.with_rows(rows))
}

fn schedule_plain() -> Result<Recording, ConfigError> {
    let base = Settings::new(0.01, 1.0, 2.0, -10.0, 10.0);
    let mut rec = scheduled("schedule_plain", base, &GAIN_SCHEDULE_ROWS)?;
    let mut plant = Lag {
        y: 0.0,
        a: 0.04,
        k: 1.0,
    };
    for k in 0..400 {
        // Scheduling value −10 … 123, a new value every second sample.
        let at = I16F16::from_num(k / 3 - 10);
        let r = if k % 100 < 50 { 6.0 } else { -3.0 };
        let extra = Extra {
            event: Event::ScheduleOp(at),
            ..Extra::default()
        };
        let out = rec.step(q(r), q(plant.y), extra);
        plant.advance(out.command, 0.0);
    }
    Ok(rec.finish())
}

fn schedule_all_features() -> Result<Recording, ConfigError> {
    // A valve whose gain falls by a decade over the operating range: Kp and
    // Ki span decades, so the segments have different shifts.
    let base = Settings::new(0.005, 2.0, 5.0, -20.0, 60.0)
        .with_slew_per_s(400.0)
        .with_filter_time_s(0.02)
        .with_deadband(0.02)
        .with_setpoint_weight(0.6)
        .with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: 0.05,
        })
        .with_measurement_range(-50.0, 150.0);
    let rows = [
        Breakpoint {
            at: -20.0,
            kp: 0.2,
            ki_per_s: 0.5,
        },
        Breakpoint {
            at: 10.0,
            kp: 1.5,
            ki_per_s: 4.0,
        },
        Breakpoint {
            at: 45.5,
            kp: 7.25,
            ki_per_s: 12.0,
        },
        Breakpoint {
            at: 80.0,
            kp: 25.0,
            ki_per_s: 40.0,
        },
    ];
    let mut rec = scheduled("schedule_all_features", base, &rows)?;
    let mut plant = Lag {
        y: 0.0,
        a: 0.03,
        k: 0.8,
    };
    let mut noise = Noise(31);
    for k in 0..500 {
        let r = [20.0, 70.0, -10.0, 120.0, 40.0][k / 100];
        // The scheduling variable follows the measurement, beyond both ends.
        let at = q(1.2 * plant.y - 15.0 + 5.0 * noise.centred());
        let extra = Extra {
            feed_forward: q(0.1 * r),
            applied: (k % 7 != 0).then(|| rec.last_command().min(q(50.0))),
            event: Event::ScheduleOp(at),
        };
        let out = rec.step(q(r), q(plant.y + 0.05 * noise.centred()), extra);
        plant.advance(out.command.min(q(50.0)), 0.0);
    }
    Ok(rec.finish())
}

fn schedule_extremes() -> Result<Recording, ConfigError> {
    let base = Settings::new(0.01, 1.0, 1.0, -1_000.0, 1_000.0).with_slew_per_s(5_000.0);
    let rows = [
        Breakpoint {
            at: -30_000.0,
            kp: 0.001,
            ki_per_s: 0.01,
        },
        Breakpoint {
            at: -0.001,
            kp: 100.0,
            ki_per_s: 200.0,
        },
        Breakpoint {
            at: 0.001,
            kp: 0.0,
            ki_per_s: 50.0,
        },
        Breakpoint {
            at: 30_000.0,
            kp: 1_000.0,
            ki_per_s: 0.0,
        },
    ];
    let mut rec = scheduled("schedule_extremes", base, &rows)?;
    let mut noise = Noise(4242);
    for k in 0..300 {
        let at = match noise.next() % 5 {
            0 => I16F16::MIN,
            1 => I16F16::MAX,
            2 => I16F16::from_bits(noise.next() as i32 % 200),
            _ => noise.any_signal(),
        };
        let event = if k % 60 == 30 {
            Event::Reset
        } else {
            Event::ScheduleOp(at)
        };
        let r = q(400.0 * noise.centred());
        let y = q(400.0 * noise.centred());
        rec.step(
            r,
            y,
            Extra {
                event,
                ..Extra::default()
            },
        );
    }
    Ok(rec.finish())
}

/// Deterministic xorshift32: integers only, the same on every machine.
pub(super) struct Noise(pub(super) u32);

impl Noise {
    pub(super) fn next(&mut self) -> u32 {
        let mut x = self.0;
        x ^= x << 13;
        x ^= x >> 17;
        x ^= x << 5;
        self.0 = x;
        x
    }
    /// Uniform in [−0.5, 0.5), exact in f64.
    pub(super) fn centred(&mut self) -> f64 {
        f64::from(self.next()) / 4_294_967_296.0 - 0.5
    }
    /// `true` with probability `percent` %.
    pub(super) fn chance(&mut self, percent: u32) -> bool {
        self.next() % 100 < percent
    }
    /// Any Q16.16 value.
    fn any_signal(&mut self) -> I16F16 {
        I16F16::from_bits(self.next() as i32)
    }
}

/// First-order plant `y ← y + a·(k·u + d − y)`.
struct Lag {
    y: f64,
    a: f64,
    k: f64,
}

impl Lag {
    fn advance(&mut self, u: I16F16, d: f64) {
        self.y += self.a * (self.k * u.to_num::<f64>() + d - self.y);
    }
}

fn q(x: f64) -> I16F16 {
    I16F16::saturating_from_num(x)
}

fn closed_loop(
    name: &str,
    settings: Settings,
    steps: usize,
    setpoint: impl Fn(usize) -> f64,
    noise_amplitude: f64,
    seed: u32,
) -> Result<Recording, ConfigError> {
    let mut rec = Recorder::new(name, settings, None)?;
    let mut plant = Lag {
        y: 0.0,
        a: 0.08,
        k: 0.9,
    };
    let mut noise = Noise(0x9e37_79b9 ^ seed);
    for k in 0..steps {
        let y = q(plant.y + noise_amplitude * noise.centred());
        let out = rec.step(q(setpoint(k)), y, Extra::default());
        plant.advance(out.command, if k >= steps / 2 { -0.3 } else { 0.0 });
    }
    Ok(rec.finish())
}

fn feed_forward_full() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.01, 2.5, 6.0, -4.0, 12.0)
        .with_slew_per_s(60.0)
        .with_filter_time_s(0.03)
        .with_deadband(0.01)
        .with_setpoint_weight(0.8)
        .with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: 0.05,
        })
        .with_measurement_range(-20.0, 20.0);
    let mut rec = Recorder::new("feed_forward_all_features", settings, None)?;
    let mut plant = Lag {
        y: 0.0,
        a: 0.05,
        k: 1.2,
    };
    let mut noise = Noise(11);
    for k in 0..300 {
        let r = [3.0, 9.0, -2.0, 25.0, 5.0][k / 60];
        let y = q(plant.y + 0.02 * noise.centred());
        let extra = Extra {
            feed_forward: q(0.3 * r),
            applied: Some(rec.last_command()),
            ..Extra::default()
        };
        let out = rec.step(q(r), y, extra);
        plant.advance(out.command, 0.0);
    }
    Ok(rec.finish())
}

/// The rows of the golden `gain_schedule` scenario, also scheduled every
/// step by `schedule_plain`.
const GAIN_SCHEDULE_ROWS: [Breakpoint; 3] = [
    Breakpoint {
        at: 0.0,
        kp: 1.0,
        ki_per_s: 2.0,
    },
    Breakpoint {
        at: 50.0,
        kp: 3.0,
        ki_per_s: 1.0,
    },
    Breakpoint {
        at: 100.0,
        kp: 0.5,
        ki_per_s: 6.0,
    },
];

fn gain_schedule() -> Result<Recording, ConfigError> {
    let base = Settings::new(0.01, 1.0, 2.0, -10.0, 10.0)
        .with_slew_per_s(100.0)
        .with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: 0.1,
        });
    let table = Schedule::new(&base, &GAIN_SCHEDULE_ROWS)?;
    let mut rec = Recorder::new("gain_schedule", base, Some(table))?;
    let mut plant = Lag {
        y: 0.0,
        a: 0.04,
        k: 1.0,
    };
    for k in 0..400 {
        // Scheduling value 0, 1, … 130 in steps held for 3 samples.
        let at = I16F16::from_num(k / 3);
        let r = if k % 100 < 50 { 6.0 } else { -3.0 };
        let extra = Extra {
            event: Event::Schedule(at),
            ..Extra::default()
        };
        let out = rec.step(q(r), q(plant.y), extra);
        plant.advance(out.command, 0.0);
    }
    Ok(rec.finish())
}

fn engage_track_reset() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.01, 2.0, 3.0, 0.0, 10.0)
        .with_slew_per_s(50.0)
        .with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: 0.1,
        });
    let mut rec = Recorder::new("engage_track_reset", settings, None)?;
    let mut plant = Lag {
        y: 0.0,
        a: 0.06,
        k: 1.0,
    };
    for k in 0..340 {
        let r = if k < 200 { 4.0 } else { 6.5 };
        let event = match k {
            // Manual mode: someone else ramps the actuator from 0 to 6.
            0..40 => Event::Track(q(k as f64 * 0.15)),
            120 => Event::Engage(q(12.0)), // beyond output_max: clamped
            180 => Event::Reset,
            240 => Event::Engage(q(-3.0)), // below output_min: clamped
            300..340 => Event::Track(q(2.0 + (k - 300) as f64 * 0.05)),
            _ => Event::None,
        };
        let applied = (60..100)
            .contains(&k)
            .then(|| rec.last_command().min(q(7.0)));
        let feed_forward = if (200..260).contains(&k) {
            q(1.5)
        } else {
            I16F16::ZERO
        };
        let extra = Extra {
            feed_forward,
            applied,
            event,
        };
        let out = rec.step(q(r), q(plant.y), extra);
        plant.advance(out.command, 0.0);
    }
    Ok(rec.finish())
}

fn downstream_saturation() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.01, 0.8, 10.0, -5.0, 5.0).with_slew_per_s(30.0);
    let mut rec = Recorder::new("downstream_saturation", settings, None)?;
    let mut plant = Lag {
        y: 0.0,
        a: 0.03,
        k: 1.0,
    };
    for k in 0..300 {
        let r = match k {
            0..150 => 9.0,
            150..250 => -9.0,
            _ => 1.0,
        };
        // A downstream limiter at ±3 that reports what it applied.
        let applied = rec.last_command().clamp(q(-3.0), q(3.0));
        let extra = Extra {
            applied: Some(applied),
            ..Extra::default()
        };
        rec.step(q(r), q(plant.y), extra);
        plant.advance(applied, 0.0);
    }
    Ok(rec.finish())
}

fn sub_lsb_integral() -> Result<Recording, ConfigError> {
    // Ki·Ts = 1e-4: 40 LSB of error add about 262 Q32.32 LSB per step, so
    // the command moves by one LSB only every ~250 steps.
    let settings = Settings::new(0.001, 0.0, 0.1, -1.0, 1.0);
    let mut rec = Recorder::new("sub_lsb_integral", settings, None)?;
    for k in 0..600 {
        let y = I16F16::from_bits(if k < 300 { -40 } else { 3 });
        rec.step(I16F16::ZERO, y, Extra::default());
    }
    Ok(rec.finish())
}

fn extreme_inputs() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.01, 1000.0, 500.0, -30_000.0, 30_000.0)
        .with_slew_per_s(1_000_000.0)
        .with_filter_time_s(0.01)
        .with_deadband(0.5)
        .with_setpoint_weight(0.5)
        .with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: 0.02,
        });
    let mut rec = Recorder::new("extreme_inputs", settings, None)?;
    let mut noise = Noise(0xdead_beef);
    let pick = |n: &mut Noise| match n.next() % 6 {
        0 => I16F16::MIN,
        1 => I16F16::MAX,
        2 => I16F16::ZERO,
        3 => I16F16::from_bits(-1),
        4 => q(30_000.5),
        _ => n.any_signal(),
    };
    for k in 0..200 {
        let event = match k % 50 {
            10 => Event::Engage(pick(&mut noise)),
            20 => Event::Track(pick(&mut noise)),
            30 => Event::Reset,
            _ => Event::None,
        };
        let extra = Extra {
            feed_forward: if noise.chance(50) {
                pick(&mut noise)
            } else {
                I16F16::ZERO
            },
            applied: noise.chance(50).then(|| pick(&mut noise)),
            event,
        };
        let (r, y) = (pick(&mut noise), pick(&mut noise));
        rec.step(r, y, extra);
    }
    Ok(rec.finish())
}

fn extreme_gains() -> Result<Recording, ConfigError> {
    // The largest gains and output range Q16.16 accepts: products saturate.
    let settings = Settings::new(0.1, 2.0e9, 300_000.0, -32_768.0, 32_767.0).with_anti_windup(
        AntiWindup::BackCalculation {
            tracking_time_s: 0.1,
        },
    );
    let mut rec = Recorder::new("extreme_gains", settings, None)?;
    let mut noise = Noise(77);
    for k in 0..200 {
        let r = if k % 40 < 20 {
            I16F16::from_bits(7)
        } else {
            I16F16::from_bits(-3)
        };
        let y = I16F16::from_bits((noise.next() % 17) as i32 - 8);
        let event = if k == 100 { Event::Reset } else { Event::None };
        rec.step(
            r,
            y,
            Extra {
                event,
                ..Extra::default()
            },
        );
    }
    Ok(rec.finish())
}

fn random_everything() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.005, 3.0, 20.0, -50.0, 80.0)
        .with_slew_per_s(2000.0)
        .with_filter_time_s(0.02)
        .with_deadband(0.1)
        .with_setpoint_weight(0.6)
        .with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: 0.04,
        })
        .with_measurement_range(-100.0, 100.0);
    let mut rec = Recorder::new("random_everything", settings, None)?;
    let mut noise = Noise(2024);
    let mut r = 0.0;
    let mut y = 0.0;
    for _ in 0..500 {
        if noise.chance(5) {
            r = 240.0 * noise.centred();
        }
        y += 8.0 * noise.centred();
        if noise.chance(3) {
            y = 300.0 * noise.centred();
        }
        let around = |n: &mut Noise, x: I16F16| x.saturating_add(q(20.0 * n.centred()));
        let event = match noise.next() % 100 {
            0..3 => Event::Engage(q(200.0 * noise.centred())),
            3..8 => Event::Track(around(&mut noise, rec.last_command())),
            8 => Event::Reset,
            _ => Event::None,
        };
        let extra = Extra {
            feed_forward: if noise.chance(30) {
                q(150.0 * noise.centred())
            } else {
                I16F16::ZERO
            },
            applied: noise
                .chance(40)
                .then(|| around(&mut noise, rec.last_command())),
            event,
        };
        rec.step(q(r), q(y), extra);
    }
    Ok(rec.finish())
}
