//! The closed loop: the real `evenkeel` controller against a plant model.
//!
//! Every controller period `Ts`, at `t_k = k·Ts`:
//!
//! 1. the sensor reads the plant output (true value → delay, noise,
//!    quantisation), the reference and the disturbances are sampled;
//! 2. the controller runs exactly as firmware calls it: `step_with` with
//!    setpoint, measurement and (when an actuator with limits is modelled)
//!    the value the actuator applied of the previous command; inside an
//!    override window another source drives the actuator and the controller
//!    runs `track` with that value instead;
//! 3. the command and the disturbances are held constant while the plant
//!    advances by `Ts` (zero-order hold).
//!
//! Numbers cross into the backend through the settings' scaling
//! ([`crate::boundary::Boundary`]): with `Scaling::NONE` by
//! `Backend::from_f64` and back with `to_f64` (exact), so the fixed-point
//! backend sees the Q16.16 values a firmware would; with ADC or PWM counts
//! the sensor is read as the ADC reads it and the actuator gets the compare
//! value the firmware writes.

use evenkeel::monitor::{Monitor, MonitorSettings};
use evenkeel::{Backend, Config, ConfigError, Controller, Input, Output, Settings, Status};

use crate::boundary::Boundary;
use crate::fault::{Fault, FaultTrace, Injector};
use crate::metrics::Trace;
use crate::plant::{Environment, Plant, Sensor};
use crate::profile::{Profile, Windows};

/// Disturbance profiles over time, sampled at each controller period.
#[derive(Debug, Clone, PartialEq)]
pub struct Disturbances {
    /// Road grade in % ([`Environment::grade_pct`]).
    pub grade_pct: Profile,
    /// External force in N ([`Environment::force_n`]).
    pub force_n: Profile,
    /// Additive load in the model's units ([`Environment::load`]).
    pub load: Profile,
    /// Command-gain factor, 1 nominal ([`Environment::gain_factor`]).
    pub gain_factor: Profile,
}

impl Default for Disturbances {
    fn default() -> Self {
        Self {
            grade_pct: Profile::constant(0.0),
            force_n: Profile::constant(0.0),
            load: Profile::constant(0.0),
            gain_factor: Profile::constant(1.0),
        }
    }
}

impl Disturbances {
    /// The environment at `t_s`.
    #[must_use]
    pub fn at(&self, t_s: f64) -> Environment {
        Environment {
            grade_pct: self.grade_pct.at(t_s),
            force_n: self.force_n.at(t_s),
            load: self.load.at(t_s),
            gain_factor: self.gain_factor.at(t_s),
        }
    }

    /// [`Disturbances::at`] for times that do not decrease, one
    /// [`Profile::at_forward`] position per profile (all 0 before the first
    /// call); the same values.
    pub fn at_forward(&self, started: &mut [usize; 4], t_s: f64) -> Environment {
        Environment {
            grade_pct: self.grade_pct.at_forward(&mut started[0], t_s),
            force_n: self.force_n.at_forward(&mut started[1], t_s),
            load: self.load.at_forward(&mut started[2], t_s),
            gain_factor: self.gain_factor.at_forward(&mut started[3], t_s),
        }
    }
}

/// A time window in which another source (a driver, an operator, a safety
/// function) drives the actuator: from the value it finds at `start_s` it
/// moves linearly to `command` over `ramp_s` (0: at once) and holds it to
/// the end of the window; the controller tracks it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Override {
    /// Start, s.
    pub start_s: f64,
    /// Length, s.
    pub duration_s: f64,
    /// Actuator value applied during the window, command units.
    pub command: f64,
    /// Time to move to `command`, s.
    pub ramp_s: f64,
}

/// Towed load that shifts when the ride is rough (vehicle plants): whenever
/// `|acceleration|` exceeds `accel_threshold_m_s2` or `|jerk|` exceeds
/// `jerk_threshold_m_s3` while no shift is under way, the load slides and
/// pushes on the train with `force_n` against the acceleration for
/// `duration_s`. Each onset counts as one event.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LoadShift {
    /// Acceleration magnitude that makes the load slide, m/s².
    pub accel_threshold_m_s2: f64,
    /// Jerk magnitude that makes the load slide, m/s³.
    pub jerk_threshold_m_s3: f64,
    /// Force of the sliding load on the train, N.
    pub force_n: f64,
    /// How long the load slides, s.
    pub duration_s: f64,
}

/// Everything about a run except the controller settings and the plant.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Setup {
    /// Simulated time, s.
    pub duration_s: f64,
    /// Reference (setpoint) over time, measurement units.
    pub reference: Profile,
    /// Disturbances over time.
    pub disturbances: Disturbances,
    /// Windows in which another source drives the actuator.
    pub overrides: Vec<Override>,
    /// Limits of the actuator, reported back to the controller as the
    /// applied value (`Input::with_applied`); `None`: not reported.
    pub actuator_limits: Option<(f64, f64)>,
    /// Towed-load shifting (vehicle plants).
    pub load_shift: Option<LoadShift>,
    /// Actuator value at t = 0; the controller engages bumplessly from it
    /// (`Controller::engage`). `None`: the controller starts at rest.
    pub initial_command: Option<f64>,
    /// Injected faults ([`crate::fault`]).
    pub faults: Vec<Fault>,
    /// Settings of the loop monitor run beside the controller; `None`:
    /// [`default_monitor`].
    pub monitor: Option<MonitorSettings>,
}

/// Monitor settings when a scenario gives none (our own defaults):
/// amplitude a = 2 % of the largest reference magnitude (Hägglund suggests
/// about 1 % of the signal range; from memory), T_u replaced by the
/// integral time Ti = Kp/Ki (Hägglund's fallback; from memory), or 100·Ts
/// without integral action or without Kp.
#[must_use]
#[allow(clippy::cast_possible_truncation)] // f32 settings of a diagnostic
pub fn default_monitor(settings: &Settings, setup: &Setup) -> MonitorSettings {
    let ts = settings.period_s;
    let n = (setup.duration_s / ts).round().clamp(1.0, 1e9);
    let mut largest = 0.0_f64;
    let mut k = 0.0;
    while k < n {
        largest = largest.max(setup.reference.at(k * ts).abs());
        k += (n / 1000.0).ceil();
    }
    let amplitude = if largest > 0.0 { 0.02 * largest } else { 1e-3 };
    let ti = if settings.kp > 0.0 && settings.ki_per_s > 0.0 {
        settings.kp / settings.ki_per_s
    } else {
        100.0 * ts
    };
    MonitorSettings::new(ts as f32, amplitude as f32, ti as f32)
}

/// The recorded time series of one closed-loop run, one entry per
/// controller sample.
#[derive(Debug, Clone, PartialEq)]
pub struct Recording {
    /// Backend name (`fixed`, `slim16`, `f32`, `f64`).
    pub backend: &'static str,
    /// Controller period, s.
    pub dt_s: f64,
    /// Sample instants, s.
    pub time_s: Vec<f64>,
    /// Reference.
    pub reference: Vec<f64>,
    /// True plant output (what the metrics judge).
    pub output: Vec<f64>,
    /// Measurement given to the controller (physical units; with an ADC,
    /// the value of the count it read).
    pub measurement: Vec<f64>,
    /// Controller command (physical units).
    pub command: Vec<f64>,
    /// Value driving the actuator (the command, or the override value).
    pub applied: Vec<f64>,
    /// Plant rate (vehicle: acceleration, m/s²).
    pub accel: Vec<f64>,
    /// Controller status flags.
    pub status: Vec<Status>,
    /// Named plant states (units in the name), one column each.
    pub states: Vec<(&'static str, Vec<f64>)>,
    /// Number of towed-load shifts.
    pub load_shifts: usize,
    /// Fault columns and the loop monitor's flags.
    pub faults: FaultTrace,
}

impl Recording {
    /// The metrics view of the recording.
    #[must_use]
    pub fn trace(&self) -> Trace<'_> {
        Trace {
            dt_s: self.dt_s,
            reference: &self.reference,
            output: &self.output,
            command: &self.command,
            accel: &self.accel,
        }
    }

    /// Jerk (backward difference of [`Recording::accel`]); 0 at the first sample.
    #[must_use]
    pub fn jerk(&self) -> Vec<f64> {
        let mut out = Vec::with_capacity(self.accel.len());
        let mut last = self.accel.first().copied().unwrap_or(0.0);
        for &a in &self.accel {
            out.push((a - last) / self.dt_s);
            last = a;
        }
        out
    }
}

/// Runs `settings` in backend `B` against `plant` (already at its initial
/// state) for `setup.duration_s`, sampled every `settings.period_s`.
///
/// # Errors
/// The [`ConfigError`] if `B` refuses the settings.
///
/// ```
/// use evenkeel::Settings;
/// use evenkeel_harness::plant::Integrator;
/// use evenkeel_harness::profile::{Profile, Segment};
/// use evenkeel_harness::sim::{simulate, Setup};
/// let settings = Settings::new(0.01, 2.0, 1.0, -10.0, 10.0);
/// let setup = Setup {
///     duration_s: 10.0,
///     reference: Profile::new(0.0, vec![Segment::step(1.0, 10.0)]),
///     ..Setup::default()
/// };
/// let rec = simulate::<f32>(&settings, &setup, &mut Integrator::new(1.0)?, None)?;
/// assert!((rec.output.last().copied().unwrap_or(0.0) - 1.0).abs() < 1e-3);
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
pub fn simulate<B: Backend>(
    settings: &Settings,
    setup: &Setup,
    plant: &mut dyn Plant,
    mut sensor: Option<&mut Sensor>,
) -> Result<Recording, ConfigError> {
    let mut pi = Controller::new(Config::<B>::try_new(settings)?);
    let io = Boundary::new(settings.scaling);
    let ts = settings.period_s;
    // Truncation is intended: whole samples only; durations are validated finite.
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let n = (setup.duration_s / ts).round().max(1.0) as usize;
    let mut rec = Recording {
        backend: B::NAME,
        dt_s: ts,
        time_s: Vec::with_capacity(n),
        reference: Vec::with_capacity(n),
        output: Vec::with_capacity(n),
        measurement: Vec::with_capacity(n),
        command: Vec::with_capacity(n),
        applied: Vec::with_capacity(n),
        accel: Vec::with_capacity(n),
        status: Vec::with_capacity(n),
        states: Vec::new(),
        load_shifts: 0,
        faults: FaultTrace::default(),
    };
    let mut injector = Injector::new(&setup.faults);
    let report_applied = setup.actuator_limits.is_some() || injector.has_actuator_faults();
    let monitor_settings = setup
        .monitor
        .unwrap_or_else(|| default_monitor(settings, setup));
    let mut monitor = Monitor::new(monitor_settings).ok();
    rec.faults.monitor_settings = monitor.is_some().then_some(monitor_settings);
    let (out_lo, out_hi) = pi.config().output_limits();
    let (meas_lo, meas_hi) = pi.config().measurement_range();
    let slew = pi.config().slew_step();
    let mut names = Vec::new();
    plant.states(&mut names);
    rec.states = names
        .iter()
        .map(|&(name, _)| (name, Vec::with_capacity(n)))
        .collect();

    let mut last_accel = plant.rate();
    let mut shift_until = f64::NEG_INFINITY;
    let mut shift_force = 0.0;
    let mut states = Vec::with_capacity(names.len());
    let mut drive = 0.0;
    // The last command the firmware wrote and the actuator value it gave:
    // when the actuator applied exactly that, the firmware reports its own
    // command back (with counts, the compare value differs from a
    // fractional command, which is no downstream limit).
    let mut written: Option<(f64, B)> = None;
    if let Some(u0) = setup.initial_command {
        pi.engage(io.command(u0));
        drive = u0;
    }
    // (window index, actuator value when it began)
    let mut taken_over: Option<(usize, f64)> = None;
    let mut windows = Windows::new(setup.overrides.iter().map(|o| (o.start_s, o.duration_s)));
    let (mut reference_started, mut disturbances_started) = (0, [0; 4]);
    // The last reference converted: its bits and the backend's value.
    let mut setpoint: Option<(u64, B)> = None;
    for k in 0..n {
        let t = crate::metrics::sample_time_s(k, ts);
        let truth = plant.output();
        let measured = match sensor.as_deref_mut() {
            Some(s) => s.measure(truth),
            None => truth,
        };
        let measured = injector.sensor(t, measured);
        let r = setup.reference.at_forward(&mut reference_started, t);
        let mut env = setup.disturbances.at_forward(&mut disturbances_started, t);
        env.gain_factor *= injector.gain_factor(t);
        let accel = plant.rate();

        if let Some(shift) = &setup.load_shift {
            let jerk = (accel - last_accel) / ts;
            if t >= shift_until
                && (accel.abs() > shift.accel_threshold_m_s2
                    || jerk.abs() > shift.jerk_threshold_m_s3)
            {
                rec.load_shifts += 1;
                shift_until = t + shift.duration_s;
                // Against the motion change that set it off.
                let sign = if accel.abs() > shift.accel_threshold_m_s2 {
                    accel.signum()
                } else {
                    jerk.signum()
                };
                shift_force = -sign * shift.force_n;
            }
            if t < shift_until {
                env.force_n += shift_force;
            }
        }
        last_accel = accel;

        // The reference holds for long stretches: convert it only when it
        // changes (same bits in, same value out).
        let sp = match setpoint {
            Some((bits, v)) if bits == r.to_bits() => v,
            _ => {
                let v = io.setpoint(r);
                setpoint = Some((r.to_bits(), v));
                v
            }
        };
        let mut input: Input<B> = Input::new(sp, io.measurement(measured));
        if report_applied {
            // What the actuator was driven with last period, within its
            // limits (exact round trip for a command that was not limited).
            let (lo, hi) = setup
                .actuator_limits
                .unwrap_or((f64::NEG_INFINITY, f64::INFINITY));
            let applied = drive.clamp(lo, hi);
            input = input.with_applied(match written {
                Some((d, u)) if d == applied => u,
                _ => io.command(applied),
            });
        }
        // The fault flags the injected values call for (the oracle of
        // `fault_flag_errors`).
        let before = pi.last_command();
        // A reading the backend cannot represent (NaN in fixed point): the
        // firmware's guard refuses it before conversion and holds.
        let guarded = !measured.is_finite() && input.measurement.is_finite();
        let mut expected = Status::NONE;
        // What the backend holds decides: a finite reading beyond its
        // range (1e300 in f32) arrives as infinity and is non-finite there.
        let unrepresentable = !input.measurement.is_finite() || !input.setpoint.is_finite();
        if !measured.is_finite() || unrepresentable {
            if !guarded {
                expected = Status::NON_FINITE;
            }
        } else {
            if input.measurement < meas_lo || input.measurement > meas_hi {
                expected |= Status::MEASUREMENT_RANGE;
            }
            if input.setpoint < meas_lo || input.setpoint > meas_hi {
                expected |= Status::SETPOINT_RANGE;
            }
            if input.applied.is_some_and(|a| a != before) {
                expected |= Status::DOWNSTREAM;
            }
        }
        let active = windows
            .active_at(t, |_| {})
            .first()
            .map(|&i| (i, &setup.overrides[i]));
        let out = match active {
            Some((i, o)) => {
                let from = match taken_over {
                    Some((j, from)) if j == i => from,
                    _ => {
                        taken_over = Some((i, drive));
                        drive
                    }
                };
                let into = t - o.start_s;
                drive = if o.ramp_s > 0.0 && into < o.ramp_s {
                    from + (o.command - from) * into / o.ramp_s
                } else {
                    o.command
                };
                written = None;
                pi.track(&input, io.command(drive))
            }
            None if guarded => Output {
                command: before,
                status: Status::NONE,
            },
            None => {
                taken_over = None;
                let out = pi.step_with(&input);
                drive = io.drive(out.command);
                written = Some((drive, out.command));
                out
            }
        };
        drive = injector.actuator(t, drive);
        let u = out.command;
        let jumped = out.status.contains(Status::ENGAGED) || out.status.contains(Status::TRACKING);
        let off_slew = slew.is_some_and(|s| u > before.add(s) || u < before.sub(s));
        rec.faults
            .limit_violation
            .push(u < out_lo || u > out_hi || (off_slew && !jumped));
        rec.faults.active.push(injector.any_active(t));
        rec.faults.payload.push(injector.payload_changed(t));
        rec.faults.expected.push(expected);
        #[allow(clippy::cast_possible_truncation)] // f32 diagnostics
        let seen = monitor.as_mut().map_or_else(Default::default, |m| {
            m.update(r as f32, measured as f32, out.status)
        });
        rec.faults.monitor.push(seen);

        rec.time_s.push(t);
        rec.reference.push(r);
        rec.output.push(truth);
        rec.measurement
            .push(if measured.is_finite() && !io.is_identity() {
                io.measured(input.measurement)
            } else {
                measured
            });
        rec.command.push(io.commanded(out.command));
        rec.applied.push(drive);
        rec.accel.push(accel);
        rec.status.push(out.status);
        states.clear();
        plant.states(&mut states);
        for ((_, column), &(_, v)) in rec.states.iter_mut().zip(&states) {
            column.push(v);
        }

        plant.advance(drive, &env, ts);
    }
    Ok(rec)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plant::{Integrator, Vehicle, VehicleParams};
    use crate::profile::Segment;

    #[test]
    fn override_window_is_tracked_and_left_bumplessly() {
        let settings = Settings::new(0.01, 1.0, 0.5, -2.0, 2.0);
        let setup = Setup {
            duration_s: 6.0,
            reference: Profile::new(0.0, vec![Segment::step(1.0, 6.0)]),
            overrides: vec![Override {
                start_s: 2.0,
                duration_s: 1.0,
                command: -0.5,
                ramp_s: 0.0,
            }],
            ..Setup::default()
        };
        let rec =
            simulate::<f64>(&settings, &setup, &mut Integrator::new(1.0).unwrap(), None).unwrap();
        let (inside, after) = (250, 300); // t = 2.5 s, 3.0 s
        assert_eq!(rec.applied[inside], -0.5);
        assert_eq!(rec.command[inside], -0.5);
        assert!(rec.status[inside].contains(Status::TRACKING));
        // The first step after the window continues from the tracked value
        // (one proportional-plus-integral increment away, no jump).
        assert!((rec.command[after] - rec.command[after - 1]).abs() < 0.02);
        assert!(!rec.status[after].contains(Status::TRACKING));
    }

    #[test]
    fn load_shift_counts_onsets() {
        let settings = Settings::new(0.01, 5.0, 0.0, -1.0, 1.0);
        let setup = Setup {
            duration_s: 3.0,
            reference: Profile::new(0.0, vec![Segment::step(5.0, 3.0)]),
            load_shift: Some(LoadShift {
                accel_threshold_m_s2: 0.5,
                jerk_threshold_m_s3: 1e9,
                force_n: 100.0,
                duration_s: 10.0,
            }),
            ..Setup::default()
        };
        let mut tug = Vehicle::new(VehicleParams::default()).unwrap();
        let rec = simulate::<f32>(&settings, &setup, &mut tug, None).unwrap();
        assert_eq!(rec.load_shifts, 1);
        assert_eq!(rec.states.len(), 3);
        assert_eq!(rec.states[0].1.len(), rec.time_s.len());
    }
}
