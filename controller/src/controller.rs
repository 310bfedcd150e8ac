//! The PI controller: one algorithm for every backend.
//!
//! One [`Controller::step`], in this order (output first, state last):
//!
//! 1. sanity: a non-finite input (float backends) holds the last command and
//!    raises [`Status::NON_FINITE`], touching no state; measurement and
//!    setpoint outside the measurement range are clamped and flagged;
//! 2. measurement low-pass `y_f += α·(y − y_f)` (backward Euler) if on;
//! 3. error `e = r − y_f`, shrunk towards zero by the deadband if on;
//! 4. `P = Kp·(b·r − y_f − (e − e_db))` (equal to `Kp·e_db` when b = 1);
//! 5. `v = P + I + ff`, clamp to `[u_min, u_max]`, slew-limit around the last
//!    command, clamp again (limits always win);
//! 6. integrator update, back-calculation `I += Ki·Ts·e_db + (Ts/Tt)·(u − v +
//!    d)` or conditional integration, where `d` is the downstream difference
//!    (actuator-applied value minus last command); `I` stays within the
//!    output range widened by its span on each side.

use crate::backend::Backend;
use crate::config::Config;
use crate::status::Status;

/// Inputs of one step.
///
/// ```
/// use evenkeel::Input;
/// let i = Input::new(5.0_f32, 4.5).with_feed_forward(1.0).with_applied(0.8);
/// assert_eq!(i.applied, Some(0.8));
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Input<B> {
    /// Setpoint r.
    pub setpoint: B,
    /// Measurement y.
    pub measurement: B,
    /// Feed-forward added before the limits (output units); zero if unused.
    pub feed_forward: B,
    /// What the actuator actually applied of the previous command, if the
    /// firmware knows it (a downstream limiter or override). `None`: the
    /// command was applied as given.
    pub applied: Option<B>,
}

impl<B: Backend> Input<B> {
    /// Setpoint and measurement; no feed-forward, no applied value.
    pub fn new(setpoint: B, measurement: B) -> Self {
        Self {
            setpoint,
            measurement,
            feed_forward: B::ZERO,
            applied: None,
        }
    }

    /// Add a feed-forward term.
    #[must_use]
    pub fn with_feed_forward(mut self, feed_forward: B) -> Self {
        self.feed_forward = feed_forward;
        self
    }

    /// Report what the actuator applied of the previous command.
    #[must_use]
    pub fn with_applied(mut self, applied: B) -> Self {
        self.applied = Some(applied);
        self
    }
}

/// Result of one step.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Output<B> {
    /// The command, always within the configured output limits.
    pub command: B,
    /// What acted during the step.
    pub status: Status,
}

/// A PI controller with setpoint weighting, measurement filter, deadband,
/// feed-forward, output clamp, slew limiter, anti-windup, bumpless engage,
/// tracking and bumpless re-tuning.
///
/// ```
/// use evenkeel::{Config, Controller, Settings};
/// use fixed::types::I16F16;
/// let settings = Settings::new(0.01, 2.0, 1.0, 0.0, 10.0).with_slew_per_s(100.0);
/// let mut pi = Controller::new(Config::<I16F16>::try_new(&settings)?);
/// let out = pi.step(I16F16::from_num(3), I16F16::from_num(2.5));
/// // P = 2 · 0.5 = 1; the slew limiter allows 1.0 per sample from 0.
/// assert_eq!(out.command, I16F16::from_num(1));
/// # Ok::<(), evenkeel::ConfigError>(())
/// ```
#[derive(Clone, Copy, Debug)]
pub struct Controller<B: Backend> {
    config: Config<B>,
    integral: B::Accum,
    filtered: B::Accum,
    filter_primed: bool,
    last_command: B,
    last_setpoint: B,
    last_filtered: B,
    engage_at: Option<B>,
}

impl<B: Backend> Controller<B> {
    /// A controller at rest: integrator zero, last command zero clamped into
    /// the output limits (so the first command is slew-limited from there).
    pub fn new(config: Config<B>) -> Self {
        let rest = clamp(B::ZERO, config.output_min, config.output_max);
        Self {
            config,
            integral: B::ZERO.widen(),
            filtered: B::ZERO.widen(),
            filter_primed: false,
            last_command: rest,
            last_setpoint: B::ZERO,
            last_filtered: B::ZERO,
            engage_at: None,
        }
    }

    /// Back to the state of [`Controller::new`], keeping the configuration.
    ///
    /// ```
    /// # use evenkeel::{Config, Controller, Settings};
    /// let mut pi = Controller::new(Config::<f64>::try_new(&Settings::new(0.1, 1.0, 1.0, -1.0, 1.0))?);
    /// pi.step(1.0, 0.0);
    /// pi.reset();
    /// assert_eq!(pi.integral(), 0.0);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn reset(&mut self) {
        *self = Self::new(self.config);
    }

    /// The configuration in use.
    pub fn config(&self) -> &Config<B> {
        &self.config
    }

    /// The integral term I, rounded to a signal (output units).
    pub fn integral(&self) -> B {
        B::narrow(self.integral)
    }

    /// The last command returned.
    pub fn last_command(&self) -> B {
        self.last_command
    }

    /// Take over from another source bumplessly: the next step's command
    /// equals `actuator` (clamped into the output limits, within one LSB),
    /// and the integrator is set so that the loop continues from there.
    ///
    /// ```
    /// # use evenkeel::{Config, Controller, Settings};
    /// let mut pi = Controller::new(Config::<f32>::try_new(&Settings::new(0.1, 1.0, 1.0, 0.0, 10.0))?);
    /// pi.engage(6.5);
    /// assert_eq!(pi.step(3.0, 2.0).command, 6.5);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn engage(&mut self, actuator: B) {
        if actuator.is_finite() {
            self.engage_at = Some(actuator);
        }
    }

    /// One step while another source drives the actuator: the controller
    /// follows `actuator` (returned as the command, clamped) and keeps its
    /// integrator aligned so that a later [`Controller::step`] continues
    /// without a bump.
    pub fn track(&mut self, input: &Input<B>, actuator: B) -> Output<B> {
        self.engage(actuator);
        let mut out = self.step_with(input);
        out.status |= Status::TRACKING;
        out
    }

    /// Replace the configuration bumplessly: the integrator absorbs the
    /// change of the proportional part at the last inputs, so the next
    /// command does not jump because of the new gains.
    ///
    /// ```
    /// # use evenkeel::{Config, Controller, Settings};
    /// let slow = Config::<f64>::try_new(&Settings::new(0.1, 1.0, 0.5, -10.0, 10.0))?;
    /// let fast = Config::<f64>::try_new(&Settings::new(0.1, 4.0, 0.5, -10.0, 10.0))?;
    /// let mut pi = Controller::new(slow);
    /// let before = pi.step(1.0, 0.0).command;
    /// pi.retune(fast);
    /// let after = pi.step(1.0, 0.0).command;
    /// assert!((after - before - 0.05).abs() < 1e-12); // only one more integration step
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn retune(&mut self, config: Config<B>) {
        if self.filter_primed {
            let (old, _) = proportional(&self.config, self.last_setpoint, self.last_filtered);
            let (new, _) = proportional(&config, self.last_setpoint, self.last_filtered);
            let moved = B::deplete(B::accumulate(self.integral, old), new);
            self.integral = clamp(moved, config.integral_min, config.integral_max);
        } else {
            self.integral = clamp(self.integral, config.integral_min, config.integral_max);
        }
        self.config = config;
    }

    /// One control step with setpoint and measurement only.
    pub fn step(&mut self, setpoint: B, measurement: B) -> Output<B> {
        self.step_with(&Input::new(setpoint, measurement))
    }

    /// One control step. No loop, no division, no panic; the command is
    /// always within the output limits, and (except on an engage step, where
    /// it equals the actuator's present value) differs from the last command
    /// by at most the slew step.
    pub fn step_with(&mut self, input: &Input<B>) -> Output<B> {
        let c = self.config;
        let applied_ok = match input.applied {
            Some(a) => a.is_finite(),
            None => true,
        };
        if !(input.setpoint.is_finite()
            && input.measurement.is_finite()
            && input.feed_forward.is_finite()
            && applied_ok)
        {
            return Output {
                command: self.last_command,
                status: Status::NON_FINITE,
            };
        }
        let mut status = Status::NONE;

        let y = clamp(input.measurement, c.measurement_min, c.measurement_max);
        if y != input.measurement {
            status |= Status::MEASUREMENT_RANGE;
        }
        let r = clamp(input.setpoint, c.measurement_min, c.measurement_max);
        if r != input.setpoint {
            status |= Status::SETPOINT_RANGE;
        }
        let ff = clamp(input.feed_forward, c.feed_forward_min, c.feed_forward_max);

        let y_f = match c.filter_alpha {
            Some(alpha) if self.filter_primed => {
                let previous = B::narrow(self.filtered);
                self.filtered = B::scale_into(self.filtered, y.sub(previous), alpha);
                B::narrow(self.filtered)
            }
            _ => {
                self.filtered = y.widen();
                y
            }
        };
        self.filter_primed = true;

        let (p, e) = proportional(&c, r, y_f);
        if c.deadband.is_some() && e == B::ZERO {
            status |= Status::DEADBAND;
        }

        if let Some(actuator) = self.engage_at.take() {
            // Bumpless engage: choose I so that v equals the actuator value.
            let target = clamp(actuator, c.output_min, c.output_max);
            let i = B::deplete(B::deplete(target.widen(), p), ff);
            self.integral = clamp(i, c.integral_min, c.integral_max);
            self.last_command = target;
            status |= Status::ENGAGED;
        }

        let v = p.add(B::narrow(self.integral)).add(ff);
        let mut u = v;
        if u > c.output_max {
            u = c.output_max;
            status |= Status::CLAMP_HIGH;
        } else if u < c.output_min {
            u = c.output_min;
            status |= Status::CLAMP_LOW;
        }
        if let Some(step) = c.slew_step {
            let up = self.last_command.add(step);
            let down = self.last_command.sub(step);
            if u > up {
                u = up;
                status |= Status::SLEW;
            } else if u < down {
                u = down;
                status |= Status::SLEW;
            }
            u = clamp(u, c.output_min, c.output_max);
        }

        let downstream = match input.applied {
            Some(a) => a.sub(self.last_command),
            None => B::ZERO,
        };
        if downstream != B::ZERO {
            status |= Status::DOWNSTREAM;
        }

        let integral = match c.tracking_ratio {
            Some(ratio) => {
                let i = B::scale_into(self.integral, e, c.ki_ts);
                B::scale_into(i, u.sub(v).add(downstream), ratio)
            }
            None => {
                let held_high = u < v || downstream < B::ZERO;
                let held_low = u > v || downstream > B::ZERO;
                if (held_high && e > B::ZERO) || (held_low && e < B::ZERO) {
                    status |= Status::INTEGRATOR_HELD;
                    self.integral
                } else {
                    B::scale_into(self.integral, e, c.ki_ts)
                }
            }
        };
        self.integral = clamp(integral, c.integral_min, c.integral_max);
        self.last_command = u;
        self.last_setpoint = r;
        self.last_filtered = y_f;
        Output { command: u, status }
    }
}

/// Proportional part and the (deadband-shrunk) error for setpoint `r` and
/// filtered measurement `y_f`.
#[inline]
fn proportional<B: Backend>(c: &Config<B>, r: B, y_f: B) -> (B, B) {
    let e = r.sub(y_f);
    let e_db = match c.deadband {
        Some(w) => {
            if e > w {
                e.sub(w)
            } else if e < B::ZERO.sub(w) {
                e.add(w)
            } else {
                B::ZERO
            }
        }
        None => e,
    };
    let weighted = match c.setpoint_weight {
        Some(b) => r.scale(b).sub(y_f).sub(e.sub(e_db)),
        None => e_db,
    };
    (weighted.scale(c.kp), e_db)
}

#[inline]
fn clamp<T: PartialOrd>(x: T, lo: T, hi: T) -> T {
    if x > hi {
        hi
    } else if x < lo {
        lo
    } else {
        x
    }
}
