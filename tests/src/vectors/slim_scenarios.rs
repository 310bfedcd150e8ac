//! The scenarios of the 16-bit set (`slim16.ekv`, format version 3) and of
//! the 16-bit schedule set (`slim16_schedule.ekv`, version 4): the
//! `Slim16` backend through every anti-windup mode, slew limit, filter,
//! deadband and setpoint weight, engage/track/reset/retune, an ADC and a
//! PWM counter with offsets, sub-LSB integration, and hostile inputs.
//!
//! As in [`super::scenarios`], inputs come from closed loops around small
//! plants and from the seeded integer generator, with + − × ÷ only in
//! `f64` (and `round`, which is exact), so every host writes the same
//! bytes. The loops and numbers are invented for the tests.

use evenkeel::{AntiWindup, Breakpoint, ConfigError, Scale, Scaling, Settings, Slim16};

use super::record::Recording;
use super::scenarios::Noise;
use super::slim_record::{SlimEvent, SlimExtra, SlimRecorder};

/// The nearest raw value to `x` (ties away from zero), saturated to 16
/// bits.
fn raw(x: f64) -> Slim16 {
    Slim16::from_raw(x.clamp(-32_768.0, 32_767.0).round() as i16)
}

/// The loop's two scales, for turning plant values into raw inputs and
/// commands back into plant inputs.
#[derive(Clone, Copy)]
struct Units {
    measurement: Scale,
    command: Scale,
}

impl Units {
    fn of(settings: &Settings) -> Self {
        Self {
            measurement: settings.scaling.measurement,
            command: settings.scaling.command,
        }
    }
    /// A setpoint or measurement in raw units.
    fn y(self, physical: f64) -> Slim16 {
        raw(self.measurement.raw(physical))
    }
    /// A command-side value (actuator, applied) in raw units.
    fn u(self, physical: f64) -> Slim16 {
        raw(self.command.raw(physical))
    }
    /// A command-side change (feed-forward) in raw units.
    fn du(self, physical: f64) -> Slim16 {
        raw(self.command.raw_span(physical))
    }
    /// A raw command in physical units.
    fn physical(self, u: Slim16) -> f64 {
        self.command.physical(f64::from(u.raw()))
    }
}

/// First-order plant `y ← y + a·(k·u + d − y)`, physical units.
struct Lag {
    y: f64,
    a: f64,
    k: f64,
}

impl Lag {
    fn advance(&mut self, u: f64, d: f64) {
        self.y += self.a * (self.k * u + d - self.y);
    }
}

fn back(tracking_time_s: f64) -> AntiWindup {
    AntiWindup::BackCalculation { tracking_time_s }
}

/// A ±5 loop with a ±8 measurement range on power-of-two scales (2048 LSB
/// per unit on both sides).
fn base() -> Settings {
    Settings::new(0.01, 1.5, 4.0, -5.0, 5.0)
        .with_measurement_range(-8.0, 8.0)
        .with_scaling(Scaling::covering(-8.0, 8.0, -5.0, 5.0))
}

/// Every scenario, in file order.
///
/// # Errors
/// A configuration error if a scenario's settings are invalid (a bug here).
pub fn all() -> Result<Vec<Recording>, ConfigError> {
    let profile_400 = |k: usize| match k {
        0..100 => 2.0,
        100..200 => 7.5,  // beyond reach: saturation high
        200..300 => -6.0, // saturation low
        _ => 0.5,
    };
    let profile_300 = |k: usize| profile_400(k * 4 / 3);
    Ok(vec![
        closed_loop("slim_conditional_plain", base(), 400, profile_400, 0.01, 1)?,
        closed_loop(
            "slim_conditional_slew",
            base().with_slew_per_s(40.0),
            300,
            profile_300,
            0.01,
            2,
        )?,
        closed_loop(
            "slim_conditional_filter_slew",
            base().with_filter_time_s(0.05).with_slew_per_s(100.0),
            300,
            profile_300,
            0.05,
            3,
        )?,
        closed_loop(
            "slim_backcalc_plain",
            base().with_anti_windup(back(0.2)),
            300,
            profile_300,
            0.01,
            4,
        )?,
        closed_loop(
            "slim_backcalc_filter",
            base().with_anti_windup(back(0.05)).with_filter_time_s(0.03),
            300,
            profile_300,
            0.05,
            5,
        )?,
        closed_loop(
            "slim_backcalc_unit_ratio_slew",
            base().with_anti_windup(back(0.01)).with_slew_per_s(25.0),
            300,
            profile_300,
            0.0,
            6,
        )?,
        closed_loop(
            "slim_deadband_weight_filter",
            base()
                .with_deadband(0.05)
                .with_setpoint_weight(0.4)
                .with_filter_time_s(0.1),
            300,
            |k| [0.0, 0.04, 0.3, -0.2, 1.0, 0.98][k / 50 % 6],
            0.02,
            7,
        )?,
        pump_adc_pwm()?,
        bidirectional_drive()?,
        feed_forward_full()?,
        engage_track_reset()?,
        retune()?,
        downstream_saturation()?,
        sub_lsb_integral()?,
        extreme_inputs()?,
        extreme_gains()?,
        random_everything()?,
    ])
}

fn closed_loop(
    name: &str,
    settings: Settings,
    steps: usize,
    setpoint: impl Fn(usize) -> f64,
    noise_amplitude: f64,
    seed: u32,
) -> Result<Recording, ConfigError> {
    let units = Units::of(&settings);
    let mut rec = SlimRecorder::new(name, settings)?;
    let mut plant = Lag {
        y: 0.0,
        a: 0.08,
        k: 0.9,
    };
    let mut noise = Noise(0x85eb_ca6b ^ seed);
    for k in 0..steps {
        let y = units.y(plant.y + noise_amplitude * noise.centred());
        let out = rec.step(units.y(setpoint(k)), y, SlimExtra::default())?;
        let d = if k >= steps / 2 { -0.3 } else { 0.0 };
        plant.advance(units.physical(out.command), d);
    }
    Ok(rec.finish())
}

/// A pump holding a pressure: a 12-bit ADC reads 0 … 10 bar as 410 … 3686
/// counts (a live-zero sensor), the controller writes a PWM compare value
/// of 0 … 1000 counts (0 … 100 % duty).
fn pump_adc_pwm() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.001, 8.0, 40.0, 0.0, 100.0)
        .with_slew_per_s(200.0)
        .with_measurement_range(0.0, 12.0)
        .with_scaling(
            Scaling::NONE
                .with_adc(12, Scale::new(327.6, 410.0))
                .with_pwm(Scale::new(10.0, 0.0)),
        );
    let scaling = settings.scaling;
    let units = Units::of(&settings);
    let mut rec = SlimRecorder::new("slim_pump_adc_pwm", settings)?;
    let mut plant = Lag {
        y: 0.0,
        a: 0.01,
        k: 0.1,
    };
    let mut noise = Noise(0x51ed_270b);
    for k in 0..500 {
        let r = [3.0, 8.0, 12.5, 0.0, 5.5][k / 100];
        let counts = scaling.adc_reading(plant.y + 0.02 * noise.centred());
        let out = rec.step(units.y(r), raw(counts), SlimExtra::default())?;
        plant.advance(units.physical(out.command), 0.0);
    }
    Ok(rec.finish())
}

/// A bidirectional drive: −100 … 100 % written as PWM 0 … 1000 with 500 at
/// rest (a command offset), speed from a 10-bit ADC without offset.
fn bidirectional_drive() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.002, 20.0, 60.0, -100.0, 100.0)
        .with_setpoint_weight(0.7)
        .with_deadband(0.01)
        .with_anti_windup(back(0.05))
        .with_measurement_range(0.0, 1.0)
        .with_scaling(
            Scaling::NONE
                .with_adc(10, Scale::new(1000.0, 0.0))
                .with_pwm(Scale::new(5.0, 500.0)),
        );
    let scaling = settings.scaling;
    let units = Units::of(&settings);
    let mut rec = SlimRecorder::new("slim_bidirectional_drive", settings)?;
    let mut plant = Lag {
        y: 0.5,
        a: 0.02,
        k: 0.006,
    };
    let mut noise = Noise(0x2545_f491);
    for k in 0..400 {
        let r = [0.5, 0.8, 0.2, 1.2, 0.55][k / 80];
        let event = match k {
            // Start bumplessly at the drive's present output (rest: 500).
            0 => SlimEvent::Engage(units.u(0.0)),
            200 => SlimEvent::Reset,
            _ => SlimEvent::None,
        };
        let counts = scaling.adc_reading(0.5 + plant.y + 0.004 * noise.centred());
        let extra = SlimExtra {
            event,
            ..SlimExtra::default()
        };
        let out = rec.step(units.y(r), raw(counts), extra)?;
        plant.advance(units.physical(out.command), 0.0);
    }
    Ok(rec.finish())
}

fn feed_forward_full() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.01, 2.5, 6.0, -4.0, 12.0)
        .with_slew_per_s(60.0)
        .with_filter_time_s(0.03)
        .with_deadband(0.01)
        .with_setpoint_weight(0.8)
        .with_anti_windup(back(0.05))
        .with_measurement_range(-20.0, 20.0)
        .with_scaling(Scaling::covering(-20.0, 20.0, -4.0, 12.0));
    let units = Units::of(&settings);
    let mut rec = SlimRecorder::new("slim_feed_forward_all_features", settings)?;
    let mut plant = Lag {
        y: 0.0,
        a: 0.05,
        k: 1.2,
    };
    let mut noise = Noise(11);
    for k in 0..300 {
        let r = [3.0, 9.0, -2.0, 25.0, 5.0][k / 60];
        let y = units.y(plant.y + 0.02 * noise.centred());
        let extra = SlimExtra {
            feed_forward: units.du(0.3 * r),
            applied: Some(rec.last_command()),
            ..SlimExtra::default()
        };
        let out = rec.step(units.y(r), y, extra)?;
        plant.advance(units.physical(out.command), 0.0);
    }
    Ok(rec.finish())
}

fn engage_track_reset() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.01, 2.0, 3.0, 0.0, 10.0)
        .with_slew_per_s(50.0)
        .with_anti_windup(back(0.1))
        .with_measurement_range(-10.0, 15.0)
        .with_scaling(Scaling::covering(-10.0, 15.0, 0.0, 10.0));
    let units = Units::of(&settings);
    let mut rec = SlimRecorder::new("slim_engage_track_reset", settings)?;
    let mut plant = Lag {
        y: 0.0,
        a: 0.06,
        k: 1.0,
    };
    for k in 0..340 {
        let r = if k < 200 { 4.0 } else { 6.5 };
        let event = match k {
            // Manual mode: someone else ramps the actuator from 0 to 6.
            0..40 => SlimEvent::Track(units.u(k as f64 * 0.15)),
            120 => SlimEvent::Engage(units.u(12.0)), // beyond output_max: clamped
            180 => SlimEvent::Reset,
            240 => SlimEvent::Engage(units.u(-3.0)), // below output_min: clamped
            300..340 => SlimEvent::Track(units.u(2.0 + (k - 300) as f64 * 0.05)),
            _ => SlimEvent::None,
        };
        let applied = (60..100)
            .contains(&k)
            .then(|| rec.last_command().min(units.u(7.0)));
        let feed_forward = if (200..260).contains(&k) {
            units.du(1.5)
        } else {
            Slim16::ZERO
        };
        let extra = SlimExtra {
            feed_forward,
            applied,
            event,
        };
        let out = rec.step(units.y(r), units.y(plant.y), extra)?;
        plant.advance(units.physical(out.command), 0.0);
    }
    Ok(rec.finish())
}

/// Gains changed on the fly (as a firmware's own schedule would), among
/// them Kp = 0 and a tenfold Ki.
fn retune() -> Result<Recording, ConfigError> {
    let settings = base().with_slew_per_s(100.0).with_anti_windup(back(0.1));
    let units = Units::of(&settings);
    let mut rec = SlimRecorder::new("slim_retune", settings)?;
    let mut plant = Lag {
        y: 0.0,
        a: 0.04,
        k: 1.0,
    };
    let gains = [(1.5, 4.0), (3.0, 1.0), (0.0, 6.0), (0.5, 40.0), (12.0, 0.5)];
    for k in 0..400 {
        let r = if k % 100 < 50 { 4.0 } else { -2.5 };
        let event = if k % 40 == 20 {
            let (kp, ki_per_s) = gains[k / 40 % gains.len()];
            SlimEvent::Retune { kp, ki_per_s }
        } else {
            SlimEvent::None
        };
        let extra = SlimExtra {
            event,
            ..SlimExtra::default()
        };
        let out = rec.step(units.y(r), units.y(plant.y), extra)?;
        plant.advance(units.physical(out.command), 0.0);
    }
    Ok(rec.finish())
}

fn downstream_saturation() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.01, 0.8, 10.0, -5.0, 5.0)
        .with_slew_per_s(30.0)
        .with_measurement_range(-12.0, 12.0)
        .with_scaling(Scaling::covering(-12.0, 12.0, -5.0, 5.0));
    let units = Units::of(&settings);
    let mut rec = SlimRecorder::new("slim_downstream_saturation", settings)?;
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
        let applied = rec.last_command().clamp(units.u(-3.0), units.u(3.0));
        let extra = SlimExtra {
            applied: Some(applied),
            ..SlimExtra::default()
        };
        rec.step(units.y(r), units.y(plant.y), extra)?;
        plant.advance(units.physical(applied), 0.0);
    }
    Ok(rec.finish())
}

/// Raw units (no scaling), P = 0. Ki·Ts = 1e-4: a 40-LSB error adds 33
/// state LSB (2⁻¹³ raw) per step, 120 steps bring I to 3 960, just below
/// the half LSB (4 096) where the command becomes 1; a 1-LSB error then
/// adds round(0.8192) = 1 per step: the command is 1 from step 256 (I =
/// 3 960 + 136). From step 300 (I = 4 140) Ki·Ts = 3e-5: a 1-LSB error
/// adds round(−0.25) = 0 (the integrator stalls, the command stays 1); from
/// step 400 a 3-LSB error adds round(−0.74) = −1 per step: the command is 0
/// again from step 445 (I = 4 140 − 45). Pinned by
/// `tests/golden.rs::slim16_sub_lsb_integral_moves_stalls_and_returns`.
fn sub_lsb_integral() -> Result<Recording, ConfigError> {
    let settings =
        Settings::new(0.001, 0.0, 0.1, -100.0, 100.0).with_measurement_range(-1_000.0, 1_000.0);
    let mut rec = SlimRecorder::new("slim_sub_lsb_integral", settings)?;
    for k in 0..600 {
        let y = match k {
            0..120 => -40,
            120..300 => -1,
            300..400 => 1,
            _ => 3,
        };
        let event = if k == 300 {
            SlimEvent::Retune {
                kp: 0.0,
                ki_per_s: 0.03,
            }
        } else {
            SlimEvent::None
        };
        let extra = SlimExtra {
            event,
            ..SlimExtra::default()
        };
        rec.step(Slim16::ZERO, Slim16::from_raw(y), extra)?;
    }
    Ok(rec.finish())
}

/// Any raw value at all, with every feature on and the controller's
/// operations at random.
fn extreme_inputs() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.01, 1000.0, 50.0, -30_000.0, 30_000.0)
        .with_slew_per_s(1_000_000.0)
        .with_filter_time_s(0.01)
        .with_deadband(500.0)
        .with_setpoint_weight(0.5)
        .with_anti_windup(back(0.02));
    let mut rec = SlimRecorder::new("slim_extreme_inputs", settings)?;
    let mut noise = Noise(0xdead_beef);
    let pick = |n: &mut Noise| match n.next() % 6 {
        0 => Slim16::MIN,
        1 => Slim16::MAX,
        2 => Slim16::ZERO,
        3 => Slim16::from_raw(-1),
        4 => Slim16::from_raw(30_001),
        _ => Slim16::from_raw(n.next() as i16),
    };
    for k in 0..250 {
        let event = match k % 50 {
            10 => SlimEvent::Engage(pick(&mut noise)),
            20 => SlimEvent::Track(pick(&mut noise)),
            30 => SlimEvent::Reset,
            _ => SlimEvent::None,
        };
        let extra = SlimExtra {
            feed_forward: if noise.chance(50) {
                pick(&mut noise)
            } else {
                Slim16::ZERO
            },
            applied: noise.chance(50).then(|| pick(&mut noise)),
            event,
        };
        let (r, y) = (pick(&mut noise), pick(&mut noise));
        rec.step(r, y, extra)?;
    }
    Ok(rec.finish())
}

/// The largest gains and output range the format accepts (Kp = 32 767 raw
/// per raw, Ki·Ts just below 1, Ts/Tt = 1): products saturate.
fn extreme_gains() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.1, 32_767.0, 9.99, -32_768.0, 32_767.0)
        .with_anti_windup(back(0.1))
        .with_measurement_range(-32_768.0, 32_767.0);
    let mut rec = SlimRecorder::new("slim_extreme_gains", settings)?;
    let mut noise = Noise(77);
    for k in 0..200 {
        let r = Slim16::from_raw(if k % 40 < 20 { 7 } else { -3 });
        let y = Slim16::from_raw((noise.next() % 17) as i16 - 8);
        let event = match k {
            100 => SlimEvent::Reset,
            150 => SlimEvent::Track(Slim16::MIN),
            _ => SlimEvent::None,
        };
        let extra = SlimExtra {
            event,
            ..SlimExtra::default()
        };
        rec.step(r, y, extra)?;
    }
    Ok(rec.finish())
}

fn random_everything() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.005, 3.0, 20.0, -50.0, 80.0)
        .with_slew_per_s(2000.0)
        .with_filter_time_s(0.02)
        .with_deadband(0.1)
        .with_setpoint_weight(0.6)
        .with_anti_windup(back(0.04))
        .with_measurement_range(-100.0, 100.0)
        .with_scaling(Scaling::covering(-100.0, 100.0, -50.0, 80.0));
    let units = Units::of(&settings);
    let mut rec = SlimRecorder::new("slim_random_everything", settings)?;
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
        let around = |n: &mut Noise, x: Slim16| {
            Slim16::from_raw(x.raw().saturating_add(units.du(20.0 * n.centred()).raw()))
        };
        let event = match noise.next() % 100 {
            0..3 => SlimEvent::Engage(units.u(200.0 * noise.centred())),
            3..8 => SlimEvent::Track(around(&mut noise, rec.last_command())),
            8 => SlimEvent::Reset,
            _ => SlimEvent::None,
        };
        let extra = SlimExtra {
            feed_forward: if noise.chance(30) {
                units.du(150.0 * noise.centred())
            } else {
                Slim16::ZERO
            },
            applied: noise
                .chance(40)
                .then(|| around(&mut noise, rec.last_command())),
            event,
        };
        rec.step(units.y(r), units.y(y), extra)?;
    }
    Ok(rec.finish())
}

/// Every scenario of the 16-bit schedule set (`slim16_schedule.ekv`,
/// format version 4): the gain schedule applied with
/// `Controller::schedule` on (almost) every step, from a table the
/// firmware builds at compile time from the stored rows
/// (`schedule!(Slim16: …)`).
///
/// # Errors
/// A configuration error if a scenario's settings or rows are invalid (a
/// bug here).
pub fn schedules() -> Result<Vec<Recording>, ConfigError> {
    Ok(vec![
        schedule_blower()?,
        schedule_all_features()?,
        schedule_extremes()?,
    ])
}

/// A small blower holding a duct pressure (invented for the tests): a
/// 12-bit ADC reads 0 … 500 Pa as 400 … 3680 counts, the controller
/// writes a PWM compare value of 0 … 1000, and the gains are scheduled on
/// the blower's tachometer reading in counts (0 … 4000, raw), because the
/// pressure gained per duty step grows with speed.
fn schedule_blower() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.002, 0.8, 6.0, 0.0, 100.0)
        .with_measurement_range(0.0, 520.0)
        .with_scaling(
            Scaling::NONE
                .with_adc(12, Scale::new(6.56, 400.0))
                .with_pwm(Scale::new(10.0, 0.0)),
        );
    let rows = [
        Breakpoint {
            at: 500.0,
            kp: 1.6,
            ki_per_s: 12.0,
        },
        Breakpoint {
            at: 2000.0,
            kp: 0.8,
            ki_per_s: 6.0,
        },
        Breakpoint {
            at: 3600.0,
            kp: 0.35,
            ki_per_s: 2.5,
        },
    ];
    let scaling = settings.scaling;
    let units = Units::of(&settings);
    let mut rec = SlimRecorder::scheduled("slim_schedule_blower", settings, &rows)?;
    let mut pressure = 0.0;
    let mut speed = 0.0; // tachometer counts
    let mut noise = Noise(0x0b10_3e55);
    for k in 0..600 {
        let r = [80.0, 300.0, 480.0, 20.0, 200.0, 520.0][k / 100];
        let tach = raw(speed + 15.0 * noise.centred());
        let extra = SlimExtra {
            event: SlimEvent::Schedule(tach),
            ..SlimExtra::default()
        };
        let reading = scaling.adc_reading(pressure + 2.0 * noise.centred());
        let out = rec.step(units.y(r), raw(reading), extra)?;
        let duty = units.physical(out.command);
        // Speed follows the duty (4400 counts at full duty, so the table's
        // ends are passed); pressure grows with the square of speed.
        speed += 0.05 * (44.0 * duty - speed);
        pressure += 0.04 * (5.2 * (speed / 4000.0) * (speed / 4000.0) * 100.0 - pressure);
    }
    Ok(rec.finish())
}

/// Every feature with a four-row schedule whose gains span a decade (so
/// the segments have different shifts), the scheduling variable following
/// the measurement beyond both ends, with engage, track and reset between
/// the schedule steps.
fn schedule_all_features() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.005, 2.0, 5.0, -20.0, 60.0)
        .with_slew_per_s(400.0)
        .with_filter_time_s(0.02)
        .with_deadband(0.05)
        .with_setpoint_weight(0.6)
        .with_anti_windup(back(0.05))
        .with_measurement_range(-50.0, 150.0)
        .with_scaling(Scaling::covering(-50.0, 150.0, -20.0, 60.0));
    let rows = [
        Breakpoint {
            at: -8000.0,
            kp: 0.4,
            ki_per_s: 1.0,
        },
        Breakpoint {
            at: -1000.0,
            kp: 1.5,
            ki_per_s: 4.0,
        },
        Breakpoint {
            at: 6000.0,
            kp: 4.0,
            ki_per_s: 9.0,
        },
        Breakpoint {
            at: 12000.0,
            kp: 12.0,
            ki_per_s: 30.0,
        },
    ];
    let units = Units::of(&settings);
    let mut rec = SlimRecorder::scheduled("slim_schedule_all_features", settings, &rows)?;
    let mut plant = Lag {
        y: 0.0,
        a: 0.03,
        k: 0.8,
    };
    let mut noise = Noise(0x5c4e_d01e);
    for k in 0..500 {
        let r = [20.0, 70.0, -10.0, 120.0, 40.0][k / 100];
        let y = units.y(plant.y + 0.05 * noise.centred());
        // The scheduling variable: the raw measurement, stretched and noisy.
        let at = raw(12.0 * f64::from(y.raw()) - 10_000.0 + 1500.0 * noise.centred());
        let event = match k % 97 {
            13 => SlimEvent::Engage(units.u(10.0)),
            41 => SlimEvent::Track(rec.last_command()),
            77 => SlimEvent::Reset,
            _ => SlimEvent::Schedule(at),
        };
        let extra = SlimExtra {
            feed_forward: units.du(0.1 * r),
            applied: (k % 7 != 0).then(|| rec.last_command().min(units.u(50.0))),
            event,
        };
        let out = rec.step(units.y(r), y, extra)?;
        plant.advance(units.physical(out.command).min(50.0), 0.0);
    }
    Ok(rec.finish())
}

/// Breakpoints at both ends of the 16-bit range (a segment 65 535 wide)
/// and a one-LSB segment; scheduling values and inputs at the extremes.
fn schedule_extremes() -> Result<Recording, ConfigError> {
    let settings = Settings::new(0.01, 1.0, 1.0, -30_000.0, 30_000.0).with_slew_per_s(500_000.0);
    let rows = [
        Breakpoint {
            at: -32_768.0,
            kp: 0.5,
            ki_per_s: 1.0,
        },
        Breakpoint {
            at: 0.0,
            kp: 8.0,
            ki_per_s: 20.0,
        },
        Breakpoint {
            at: 1.0,
            kp: 3.0,
            ki_per_s: 5.0,
        },
        Breakpoint {
            at: 32_767.0,
            kp: 6.0,
            ki_per_s: 9.0,
        },
    ];
    let mut rec = SlimRecorder::scheduled("slim_schedule_extremes", settings, &rows)?;
    let mut noise = Noise(0xe3e3_0001);
    let pick = |n: &mut Noise| match n.next() % 7 {
        0 => Slim16::MIN,
        1 => Slim16::MAX,
        2 => Slim16::ZERO,
        3 => Slim16::from_raw(1),
        4 => Slim16::from_raw(-1),
        _ => Slim16::from_raw(n.next() as i16),
    };
    for _ in 0..300 {
        let at = pick(&mut noise);
        let (r, y) = if noise.chance(20) {
            (pick(&mut noise), pick(&mut noise))
        } else {
            let r = (noise.next() % 2001) as i16 - 1000;
            (
                Slim16::from_raw(r),
                Slim16::from_raw(r.saturating_add((noise.next() % 41) as i16 - 20)),
            )
        };
        let extra = SlimExtra {
            feed_forward: if noise.chance(30) {
                pick(&mut noise)
            } else {
                Slim16::ZERO
            },
            applied: noise.chance(30).then(|| pick(&mut noise)),
            event: SlimEvent::Schedule(at),
        };
        rec.step(r, y, extra)?;
    }
    Ok(rec.finish())
}
