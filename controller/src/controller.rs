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
use crate::layout::{self, Features, Layout, Runtime, Slot};
use crate::status::Status;

/// Inputs of one step.
///
/// ```
/// use evenkeel::Input;
/// let i = Input::new(5.0_f32, 4.5).with_feed_forward(1.0).with_applied(0.8);
/// assert_eq!(i.applied, Some(0.8));
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
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
    ///
    /// ```
    /// use evenkeel::Input;
    /// let i = Input::new(2.0_f64, 1.5);
    /// assert_eq!((i.setpoint, i.measurement), (2.0, 1.5));
    /// assert_eq!((i.feed_forward, i.applied), (0.0, None));
    /// ```
    pub fn new(setpoint: B, measurement: B) -> Self {
        Self {
            setpoint,
            measurement,
            feed_forward: B::ZERO,
            applied: None,
        }
    }

    /// Add a feed-forward term.
    ///
    /// ```
    /// use evenkeel::{Config, Controller, Input, Settings};
    /// let mut pi = Controller::new(Config::<f64>::try_new(&Settings::new(0.1, 1.0, 0.0, -5.0, 5.0))?);
    /// let out = pi.step_with(&Input::new(1.0, 0.75).with_feed_forward(0.5));
    /// assert_eq!(out.command, 0.75); // P = 0.25, plus 0.5 feed-forward
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub fn with_feed_forward(mut self, feed_forward: B) -> Self {
        self.feed_forward = feed_forward;
        self
    }

    /// Report what the actuator applied of the previous command.
    ///
    /// ```
    /// use evenkeel::{Config, Controller, Input, Settings, Status};
    /// let mut pi = Controller::new(Config::<f64>::try_new(&Settings::new(0.1, 1.0, 0.0, -5.0, 5.0))?);
    /// assert_eq!(pi.step(2.0, 0.0).command, 2.0);
    /// // The actuator only gave 1.5 of the 2.0 commanded.
    /// let out = pi.step_with(&Input::new(2.0, 0.0).with_applied(1.5));
    /// assert!(out.status.contains(Status::DOWNSTREAM) && out.status.is_limited());
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub fn with_applied(mut self, applied: B) -> Self {
        self.applied = Some(applied);
        self
    }
}

/// Result of one step.
///
/// ```
/// use evenkeel::{Config, Controller, Output, Settings, Status};
/// let mut pi = Controller::new(Config::<f32>::try_new(&Settings::new(0.1, 1.0, 0.0, 0.0, 4.0))?);
/// let out: Output<f32> = pi.step(10.0, 0.0);
/// assert_eq!(out.command, 4.0); // P = 10, clamped to output_max
/// assert_eq!(out.status, Status::CLAMP_HIGH | Status::INTEGRATOR_HELD);
/// # Ok::<(), evenkeel::ConfigError>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
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
/// `L` is the [`Layout`]: [`Runtime`] (the default) reads the structure
/// from the configuration each step; a compile-time layout
/// ([`crate::layout!`]) fixes it, so the step has only the parts the layout
/// has and shifts by constants. Both give the same bits for the same
/// settings.
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
pub struct Controller<B: Backend, L: Layout = Runtime> {
    config: Config<B, L>,
    integral: B::Accum,
    filtered: B::Accum,
    /// [`PRIMED`] once a step ran since `new`/`reset`; [`ENGAGE`] while an
    /// engage waits for the next step (one byte: one load and one store per
    /// step).
    state: u8,
    last_command: B,
    last_setpoint: B,
    last_filtered: B,
    /// The actuator value of a pending engage (read only under [`ENGAGE`]).
    engage_at: B,
}

/// A step ran since `new` or `reset` (filter and retune history valid).
const PRIMED: u8 = 1 << 0;
/// `engage` was called: the next step takes over from `engage_at`.
const ENGAGE: u8 = 1 << 1;

impl<B: Backend, L: Layout> Controller<B, L> {
    /// A controller at rest: integrator zero, last command zero clamped into
    /// the output limits (so the first command is slew-limited from there).
    /// `const`, so a controller can live in a `static` without run-time
    /// initialisation (see the crate documentation's interrupt example).
    ///
    /// ```
    /// use evenkeel::{Config, Controller, Settings};
    /// let pi = Controller::new(Config::<f64>::try_new(&Settings::new(0.1, 1.0, 1.0, 2.0, 5.0))?);
    /// assert_eq!(pi.last_command(), 2.0); // zero clamped into [2, 5]
    /// assert_eq!(pi.integral(), 0.0);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[must_use]
    pub const fn new(config: Config<B, L>) -> Self {
        Self {
            integral: B::ACCUM_ZERO,
            filtered: B::ACCUM_ZERO,
            state: 0,
            last_command: config.rest,
            last_setpoint: B::ZERO,
            last_filtered: B::ZERO,
            engage_at: B::ZERO,
            config,
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
    ///
    /// ```
    /// use evenkeel::{Config, Controller, Settings};
    /// let pi = Controller::new(Config::<f64>::try_new(&Settings::new(0.1, 1.0, 1.0, -1.0, 1.0))?);
    /// assert_eq!(pi.config().output_limits(), (-1.0, 1.0));
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn config(&self) -> &Config<B, L> {
        &self.config
    }

    /// The integral term I, rounded to a signal (output units).
    ///
    /// Fixed point: the Q32.32 integrator rounded to nearest Q16.16, ties toward +∞.
    ///
    /// ```
    /// use evenkeel::{Config, Controller, Settings};
    /// use fixed::types::I16F16;
    /// let mut pi = Controller::new(Config::<I16F16>::try_new(&Settings::new(0.01, 0.0, 1.0, -1.0, 1.0))?);
    /// pi.step(I16F16::ONE, I16F16::ZERO);
    /// // Ki·Ts·e = 0.01 = 655.36 LSB → 655 LSB
    /// assert_eq!(pi.integral().to_bits(), 655);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn integral(&self) -> B {
        B::narrow(self.integral)
    }

    /// The last command returned.
    ///
    /// ```
    /// use evenkeel::{Config, Controller, Settings};
    /// let s = Settings::new(0.1, 1.0, 0.0, -10.0, 10.0).with_slew_per_s(1.0);
    /// let mut pi = Controller::new(Config::<f64>::try_new(&s)?);
    /// pi.step(5.0, 0.0); // P = 5, slew-limited to 1 /s · 0.1 s
    /// assert_eq!(pi.last_command(), 0.1);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
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
            self.engage_at = actuator;
            self.state |= ENGAGE;
        }
    }

    /// One step while another source drives the actuator: the controller
    /// follows `actuator` (returned as the command, clamped) and keeps its
    /// integrator aligned so that a later [`Controller::step`] continues
    /// without a bump.
    ///
    /// ```
    /// use evenkeel::{Config, Controller, Input, Settings, Status};
    /// let mut pi = Controller::new(Config::<f64>::try_new(&Settings::new(0.5, 1.0, 0.5, 0.0, 10.0))?);
    /// let out = pi.track(&Input::new(3.0, 2.0), 6.5); // manual mode holds 6.5
    /// assert_eq!(out.command, 6.5);
    /// assert!(out.status.contains(Status::TRACKING));
    /// assert_eq!(pi.step(3.0, 2.0).command, 6.75); // continues: + Ki·Ts·e = 0.25
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
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
    /// Under a compile-time layout the new configuration has the same
    /// layout (the type says so), so only gains and limits change; a gain
    /// that does not fit the layout's format was refused when that
    /// configuration was built ([`crate::ConfigError::Layout`]).
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
    pub fn retune(&mut self, config: Config<B, L>) {
        const {
            assert!(
                !layout::is_frozen::<L>(),
                "a frozen configuration (evenkeel::frozen!) cannot be re-tuned"
            );
        }
        if self.state & PRIMED != 0 {
            let old = proportional_part(&self.config, self.last_setpoint, self.last_filtered);
            let new = proportional_part(&config, self.last_setpoint, self.last_filtered);
            let moved = B::deplete(B::accumulate(self.integral, old), new);
            self.integral = clamp(moved, config.integral_min, config.integral_max);
        } else {
            self.integral = clamp(self.integral, config.integral_min, config.integral_max);
        }
        // The limits always win: a held command outside new limits moves in.
        self.last_command = clamp(self.last_command, config.output_min, config.output_max);
        self.config = config;
    }

    /// One control step with setpoint and measurement only.
    ///
    /// ```
    /// use evenkeel::{Config, Controller, Settings};
    /// use fixed::types::I16F16;
    /// let mut pi = Controller::new(Config::<I16F16>::try_new(&Settings::new(0.01, 0.5, 0.0, -1.0, 1.0))?);
    /// // Kp·e = 0.5 · ±3 LSB = ±1.5 LSB → 2 and −1 (nearest, ties toward +∞)
    /// assert_eq!(pi.step(I16F16::from_bits(3), I16F16::ZERO).command.to_bits(), 2);
    /// assert_eq!(pi.step(I16F16::from_bits(-3), I16F16::ZERO).command.to_bits(), -1);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn step(&mut self, setpoint: B, measurement: B) -> Output<B> {
        self.step_with(&Input::new(setpoint, measurement))
    }

    /// One control step. No loop, no division, no panic; the command is
    /// always within the output limits, and (except on an engage step, where
    /// it equals the actuator's present value) differs from the last command
    /// by at most the slew step.
    ///
    /// ```
    /// use evenkeel::{Config, Controller, Input, Settings, Status};
    /// let mut pi = Controller::new(Config::<f32>::try_new(&Settings::new(0.1, 1.0, 0.0, -5.0, 5.0))?);
    /// let out = pi.step_with(&Input::new(2.0, 0.5).with_feed_forward(1.0));
    /// assert_eq!(out.command, 2.5); // P = 1.5, plus 1.0 feed-forward
    /// let out = pi.step_with(&Input::new(2.0, f32::NAN));
    /// assert_eq!((out.command, out.status), (2.5, Status::NON_FINITE)); // held
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    #[inline]
    pub fn step_with(&mut self, input: &Input<B>) -> Output<B> {
        // A frozen layout's configuration is a constant: every setting the
        // step reads folds into the code. (`self.config` holds the same
        // one: it is the only configuration such a layout has.)
        let frozen = B::frozen::<L>();
        let c = match frozen {
            Some(f) => f,
            None => &self.config,
        };
        let on = layout::features::<L>(c.features);
        let state = self.state;
        // Only before the first step (after `new` or `reset`) can the
        // integrator lie outside its range: `new` starts it at zero, and
        // every later assignment clamps (`retune`, `engage`, the update
        // below).
        let first = state & PRIMED == 0;
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

        let (lo, hi) = (c.measurement_min, c.measurement_max);
        let (mut y, mut r) = (input.measurement, input.setpoint);
        // Both inside the range (the usual case): nothing to clamp or flag.
        // Under a compile-time layout the clamp runs out of line; the
        // run-time step keeps it inline (measured: out of line it saves
        // 2 instructions on the M4F layout step, but in the run-time step
        // it made the C interface's inlined copy on Armv6-M slower by more
        // than the C call's whole budget; boards/README.md). A layout's
        // check is the backend's (Q16.16: unsigned distances from `lo`,
        // valid because configuration keeps lo < hi); the run-time step
        // keeps its four comparisons.
        let inside = if frozen.is_some() {
            y.inside_frozen(lo, hi) && r.inside_frozen(lo, hi)
        } else if L::SHAPE.is_some() {
            y.inside(lo, hi) && r.inside(lo, hi)
        } else {
            y >= lo && y <= hi && r >= lo && r <= hi
        };
        // A frozen step clamps inline except on Armv6-M (measured: with
        // constant bounds the inline clamp saves the out-of-line call's
        // stack frame on Armv7-M, but costs more than it saves on Armv6-M;
        // boards/README.md). The target test comes first so that on
        // Armv6-M the whole condition is a constant before inlining: with
        // the order reversed the Armv6-M run-time step and its C copy
        // were compiled differently (measured).
        let inline_frozen = !ARMV6M && frozen.is_some();
        if !inside {
            if L::SHAPE.is_some() && !inline_frozen {
                (y, r, status) = clamp_range(y, r, lo, hi);
            } else {
                y = clamp(y, lo, hi);
                status.set_if(y != input.measurement, Status::MEASUREMENT_RANGE);
                r = clamp(r, lo, hi);
                status.set_if(r != input.setpoint, Status::SETPOINT_RANGE);
            }
        }
        // `step` passes a constant zero: its clamp is stored in the
        // configuration (one load instead of two loads and a clamp; and, as
        // measured, fewer registers live across the step). Fixed point only:
        // a float −0.0 compares equal to zero but clamps to −0.0, whose sum
        // can differ in the sign of a zero command.
        let ff = if B::EXACT_SUMS && input.feed_forward == B::ZERO {
            c.feed_forward_zero
        } else {
            clamp(input.feed_forward, c.feed_forward_min, c.feed_forward_max)
        };

        let y_f = if on.contains(Features::FILTER) && !first {
            // `last_filtered` is always `narrow(filtered)`: both are set
            // together below and nowhere else (`new` sets both to zero).
            let previous = self.last_filtered;
            debug_assert!(previous == B::narrow(self.filtered));
            // Inside the signal range (see `SlimCoef::integrate` and
            // `FixedCoef::integrate`): the state's own narrowing.
            let alpha = coef::<B, L>(c.filter_alpha, Slot::FilterAlpha);
            self.filtered = if L::SHAPE.is_some() {
                integrate_at::<B, L>(self.filtered, y.sub(previous), alpha, Slot::FilterAlpha)
            } else {
                B::integrate(self.filtered, y.sub(previous), alpha)
            };
            B::narrow_state(self.filtered)
        } else {
            // A compile-time layout without filter never reads the state
            // again; a run-time configuration may gain a filter by re-tuning.
            if L::SHAPE.is_none() || on.contains(Features::FILTER) {
                self.filtered = y.widen();
            }
            y
        };
        // Primed; a pending engage is taken by this step. The inputs that
        // `retune` reads are stored now, not at the end: they are final,
        // and the registers that held them are free for the rest of the
        // step (measured: fewer spills on Armv7-M).
        self.state = PRIMED;
        // Read only by `retune`, which a frozen layout does not have.
        if frozen.is_none() {
            self.last_setpoint = r;
        }
        // Read by the filter and by `retune`: a frozen layout without
        // filter needs neither.
        if frozen.is_none() || on.contains(Features::FILTER) {
            self.last_filtered = y_f;
        }

        let (p, chain_e, in_deadband) = proportional(c, on, r, y_f);
        let e = chain_e;
        status.set_if(in_deadband, Status::DEADBAND);

        // The integrator is within its range (or zero before the first
        // step), where the state's own narrowing applies.
        // A frozen configuration that proves it (`Backend::frozen_sum`):
        // `e` and `P + I` without the intermediate saturations; `P` itself is
        // then read only by an engage.
        let wide = if B::EXACT_SUMS && input.feed_forward == B::ZERO {
            B::frozen_sum::<L>(r, y_f, self.integral)
        } else {
            None
        };
        // The hold test reads the sign of `sign`, the integrator `e`. Under
        // the wide sum where `WIDE_ERROR_TRUNCATED`, `e` is the truncated
        // difference and `sign` the sign of the wide one; an engage, which
        // may integrate, then takes the step's own `e` (`slim::wide_sum`).
        // The target test comes first (see `inline_frozen` above).
        let (mut e, mut v, mut sign) = match wide {
            Some(evs) => evs,
            None => (e, p.add(B::narrow_state(self.integral)).add(ff), e),
        };
        if state & ENGAGE != 0 {
            if WIDE_ERROR_TRUNCATED && wide.is_some() {
                (e, sign) = (chain_e, chain_e);
            }
            let actuator = self.engage_at;
            // Bumpless engage: the command continues from the actuator's
            // value, and I is chosen so that P + I + ff equals it (exactly
            // unless that I lies outside the integrator range).
            let target = clamp(actuator, c.output_min, c.output_max);
            let i = B::deplete(B::deplete(target.widen(), p), ff);
            self.integral = clamp(i, c.integral_min, c.integral_max);
            self.last_command = target;
            v = target;
            status |= Status::ENGAGED;
        }

        let mut u = v;
        if u > c.output_max {
            u = c.output_max;
            status |= Status::CLAMP_HIGH;
        } else if u < c.output_min {
            u = c.output_min;
            status |= Status::CLAMP_LOW;
        }
        if on.contains(Features::SLEW) {
            let last = self.last_command;
            // `last ± step` as computed; the exact bound (float rounding
            // of that sum may overshoot the step) is needed only when the
            // command reaches it, so it stays off the common path. Fixed
            // point: both are the same saturating sum.
            let up = last.add(c.slew_step);
            let down = last.sub(c.slew_step);
            if B::EXACT_SUMS {
                // Fixed point: `last ± step` never passes the step.
                if u > up {
                    u = up;
                    status |= Status::SLEW;
                } else if u < down {
                    u = down;
                    status |= Status::SLEW;
                }
            } else if u >= up {
                let up = last.raise_by(c.slew_step);
                if u > up {
                    u = up;
                    status |= Status::SLEW;
                }
            } else if u <= down {
                let down = last.lower_by(c.slew_step);
                if u < down {
                    u = down;
                    status |= Status::SLEW;
                }
            }
            // No second clamp: `last_command` is always within the output
            // limits (every assignment clamps or is clamped) and the step is
            // positive, so `up` ≥ `output_min` and `down` ≤ `output_max`,
            // and a bound is only applied when it is tighter than the
            // limit already applied.
            debug_assert!(u == clamp(u, c.output_min, c.output_max));
        }

        let downstream = match input.applied {
            Some(a) => a.sub(self.last_command),
            None => B::ZERO,
        };
        status.set_if(downstream != B::ZERO, Status::DOWNSTREAM);

        // A frozen configuration that proves it keeps the integrator of a
        // wide-sum step in range (`Backend::frozen_integral_stays`); its
        // range then holds zero, the state before the first step.
        let stays = wide.is_some() && B::frozen_integral_stays::<L>();
        let ki_ts = coef::<B, L>(c.ki_ts, Slot::KiTs);
        let integral = if on.contains(Features::BACK_CALCULATION) {
            let ratio = coef::<B, L>(c.tracking_ratio, Slot::TrackingRatio);
            if L::SHAPE.is_some() {
                let i = integrate_at::<B, L>(self.integral, e, ki_ts, Slot::KiTs);
                let d = u.sub(v).add(downstream);
                Some(integrate_at::<B, L>(i, d, ratio, Slot::TrackingRatio))
            } else {
                let i = B::integrate(self.integral, e, ki_ts);
                Some(B::integrate(i, u.sub(v).add(downstream), ratio))
            }
        } else {
            let held_high = u < v || downstream < B::ZERO;
            let held_low = u > v || downstream > B::ZERO;
            if (held_high && sign > B::ZERO) || (held_low && sign < B::ZERO) {
                status |= Status::INTEGRATOR_HELD;
                // Unchanged, so already in range except on the first step
                // (and then too where `stays`: zero, or set by an engage).
                if first && !stays {
                    self.integral = clamp(self.integral, c.integral_min, c.integral_max);
                }
                None
            } else {
                Some(if L::SHAPE.is_some() {
                    integrate_at::<B, L>(self.integral, e, ki_ts, Slot::KiTs)
                } else {
                    B::integrate(self.integral, e, ki_ts)
                })
            }
        };
        if let Some(integral) = integral {
            // Under a compile-time layout, the backend's fast clamp; the
            // run-time step keeps the plain one (measured: the C interface
            // inlines the run-time step, and on Armv6-M its copy got slower
            // with the fast clamp; boards/README.md).
            self.integral = if stays {
                integral
            } else if L::SHAPE.is_some() {
                B::clamp_state(integral, c.integral_min, c.integral_max)
            } else {
                clamp(integral, c.integral_min, c.integral_max)
            };
        }
        self.last_command = u;
        Output { command: u, status }
    }
}

/// Armv6-M (the Arm targets without 32-bit atomics).
const ARMV6M: bool = cfg!(all(target_arch = "arm", not(target_has_atomic = "32")));

/// Whether the frozen 16-bit wide sum leaves `e` unsaturated
/// (`slim::wide_sum`): on Armv6-M (measured: M0 frozen minimal 84.3 →
/// 78.5; on Armv7-M M4F 44.9 → 48.4, so it keeps the saturation) and off
/// Arm, so that the host's tests run the Armv6-M form.
pub(crate) const WIDE_ERROR_TRUNCATED: bool = ARMV6M || !cfg!(target_arch = "arm");

/// Measurement `y` and setpoint `r` clamped into the measurement range
/// `[lo, hi]`, with their flags: out of line and off the common path (a
/// compile-time layout's step calls it only when one of them is outside),
/// so its registers are not held across the step. Same result as the
/// run-time step's inline clamp.
#[cold]
#[inline(never)]
fn clamp_range<B: Backend>(y: B, r: B, lo: B, hi: B) -> (B, B, Status) {
    let mut status = Status::NONE;
    let y_in = clamp(y, lo, hi);
    status.set_if(y_in != y, Status::MEASUREMENT_RANGE);
    let r_in = clamp(r, lo, hi);
    status.set_if(r_in != r, Status::SETPOINT_RANGE);
    (y_in, r_in, status)
}

/// The coefficient the step multiplies with: under a compile-time layout
/// the stored mantissa at the layout's (constant) shift.
#[inline(always)]
fn coef<B: Backend, L: Layout>(stored: B::Coef, slot: Slot) -> B::Coef {
    match L::SHAPE {
        Some(shape) => match shape.shift(slot) {
            Some(shift) => B::coef_at_shift(stored, shift),
            None => stored,
        },
        None => stored,
    }
}

/// `x · c` under a compile-time layout: the backend's
/// [`Backend::scale_at`] when the layout fixes the slot's shift (so that it
/// is a constant of the step), else [`Backend::scale`]. Same result.
#[inline(always)]
fn scale_at<B: Backend, L: Layout>(x: B, c: B::Coef, slot: Slot) -> B {
    match L::SHAPE {
        Some(shape) if shape.shift(slot).is_some() => x.scale_at(c),
        _ => x.scale(c),
    }
}

/// `acc + x · c` under a compile-time layout (see [`scale_at`]).
#[inline(always)]
fn integrate_at<B: Backend, L: Layout>(acc: B::Accum, x: B, c: B::Coef, slot: Slot) -> B::Accum {
    match L::SHAPE {
        Some(shape) if shape.shift(slot).is_some() => B::integrate_at(acc, x, c),
        _ => B::integrate(acc, x, c),
    }
}

/// The proportional part alone, out of line: `retune` needs it twice and is
/// not time-critical, so one shared copy keeps the code small.
#[inline(never)]
fn proportional_part<B: Backend, L: Layout>(c: &Config<B, L>, r: B, y_f: B) -> B {
    let on = layout::features::<L>(c.features);
    proportional(c, on, r, y_f).0
}

/// Proportional part, the (deadband-shrunk) error for setpoint `r` and
/// filtered measurement `y_f`, and whether a deadband is configured and the
/// shrunk error is zero.
#[inline(always)]
fn proportional<B: Backend, L: Layout>(
    c: &Config<B, L>,
    on: Features,
    r: B,
    y_f: B,
) -> (B, B, bool) {
    let e = r.sub(y_f);
    // Deadband of half-width w ≥ 0 (validated): the part of e inside the
    // band is clamp(e, −w, w) and the shrunk error e_db = e − clamp(e, −w, w)
    // (e − w above the band, e + w below, zero inside). Both subtractions
    // are exact (−w ≥ −MAX; e − w ≥ 0 when e > w; e + w ≥ MIN when e < −w),
    // so they need no saturation.
    let (e_db, inside, in_deadband) = if on.contains(Features::DEADBAND) {
        let w = c.deadband;
        let inside = clamp(e, B::ZERO.sub_exact(w), w);
        let e_db = e.sub_exact(inside);
        (e_db, inside, e_db == B::ZERO)
    } else {
        (e, B::ZERO, false)
    };
    let weighted = if on.contains(Features::SETPOINT_WEIGHT) {
        let b = coef::<B, L>(c.setpoint_weight, Slot::SetpointWeight);
        if L::SHAPE.is_some() {
            scale_at::<B, L>(r, b, Slot::SetpointWeight)
                .sub(y_f)
                .sub(inside)
        } else {
            r.scale(b).sub(y_f).sub(inside)
        }
    } else {
        e_db
    };
    let kp = coef::<B, L>(c.kp, Slot::Kp);
    let p = if L::SHAPE.is_some() {
        scale_at::<B, L>(weighted, kp, Slot::Kp)
    } else {
        weighted.scale(kp)
    };
    (p, e_db, in_deadband)
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::settings::{AntiWindup, Settings};
    use fixed::types::I16F16;

    fn q(x: f64) -> I16F16 {
        I16F16::from_num(x)
    }

    fn fixed(s: &Settings) -> Controller<I16F16> {
        Controller::new(Config::try_new(s).expect("valid"))
    }

    fn float(s: &Settings) -> Controller<f64> {
        Controller::new(Config::try_new(s).expect("valid"))
    }

    const LSB: i32 = 1;

    #[test]
    fn proportional_only_and_clamp() {
        let mut pi = float(&Settings::new(0.1, 2.0, 0.0, -3.0, 3.0));
        let out = pi.step(1.0, 0.25);
        assert_eq!(out.command, 1.5);
        assert_eq!(out.status, Status::NONE);
        let out = pi.step(5.0, 0.0);
        assert_eq!(out.command, 3.0);
        assert!(out.status.contains(Status::CLAMP_HIGH));
        let out = pi.step(-5.0, 0.0);
        assert_eq!(out.command, -3.0);
        assert!(out.status.contains(Status::CLAMP_LOW));
    }

    #[test]
    fn sub_lsb_integral_increments_accumulate() {
        // Ki·Ts = 1e-4 and a constant error of 1 LSB: each step adds
        // round(1e-4 · 2^16) = 7 Q32.32 LSB (6.55 exactly); the command
        // becomes 1 LSB once I ≥ 0.5 LSB = 32768 Q32.32 LSB, i.e. after
        // ceil(32768 / 7) = 4682 updates, at step 4683 (ideal arithmetic:
        // 0.5 / 1e-4 = 5000 updates).
        let s = Settings::new(0.01, 0.0, 0.01, -1.0, 1.0);
        let mut pi = fixed(&s);
        let y = I16F16::ZERO;
        let r = I16F16::from_bits(LSB);
        let mut first_move = None;
        for k in 1..=6000 {
            let out = pi.step(r, y);
            if out.command != I16F16::ZERO && first_move.is_none() {
                first_move = Some(k);
            }
        }
        assert_eq!(first_move, Some(4683));
        // A Q16.16 integrator would never move: 1e-4 · 1 LSB rounds to 0.
        let naive = I16F16::from_bits(LSB) * I16F16::from_num(1e-4);
        assert_eq!(naive, I16F16::ZERO);
    }

    #[test]
    fn slew_limit_ramps_by_exact_steps() {
        let s = Settings::new(0.01, 10.0, 0.0, 0.0, 100.0).with_slew_per_s(50.0);
        let mut pi = fixed(&s);
        for k in 1..=10 {
            let out = pi.step(q(5.0), q(0.0));
            assert_eq!(out.command, q(0.5 * f64::from(k)), "step {k}");
            assert!(out.status.contains(Status::SLEW));
        }
        let out = pi.step(q(5.0), q(0.0));
        assert_eq!(out.command, q(5.5));
    }

    #[test]
    fn back_calculation_settles_at_textbook_equilibrium() {
        // Saturated with constant error e: I converges to where
        // Ki·Ts·e + (Ts/Tt)(u_max − v) = 0, i.e. v = u_max + Ki·Tt·e
        // (Åström & Hägglund 2006, §3.5, back-calculation; from memory).
        let s =
            Settings::new(0.01, 1.0, 2.0, 0.0, 1.0).with_anti_windup(AntiWindup::BackCalculation {
                tracking_time_s: 0.1,
            });
        let mut pi = float(&s);
        for _ in 0..5000 {
            pi.step(0.5, 0.0);
        }
        let p = 0.5;
        let v = p + pi.integral();
        assert!((v - (1.0 + 2.0 * 0.1 * 0.5)).abs() < 1e-9, "v = {v}");
    }

    #[test]
    fn conditional_integration_holds_while_clamped() {
        let s = Settings::new(0.01, 1.0, 5.0, 0.0, 1.0);
        let mut pi = fixed(&s);
        for _ in 0..200 {
            pi.step(q(0.9), q(0.0));
        }
        let held = pi.integral();
        let out = pi.step(q(0.9), q(0.0));
        assert!(
            out.status
                .contains(Status::CLAMP_HIGH | Status::INTEGRATOR_HELD)
        );
        assert_eq!(pi.integral(), held);
        // Error reverses: integrator runs again at once, no windup to unload.
        let out = pi.step(q(0.0), q(0.05));
        assert!(!out.status.contains(Status::INTEGRATOR_HELD));
        assert!(pi.integral() < held);
    }

    #[test]
    fn slew_limit_also_stops_windup() {
        for method in [
            AntiWindup::ConditionalIntegration,
            AntiWindup::BackCalculation {
                tracking_time_s: 0.05,
            },
        ] {
            let s = Settings::new(0.01, 1.0, 10.0, -100.0, 100.0)
                .with_slew_per_s(1.0)
                .with_anti_windup(method);
            let mut pi = float(&s);
            for _ in 0..100 {
                let out = pi.step(10.0, 0.0);
                assert!(out.status.contains(Status::SLEW));
            }
            // Without anti-windup I would be 10·10·1 = 100; the command is 1.
            assert!(pi.integral() < 2.5, "{method:?}: I = {}", pi.integral());
        }
    }

    #[test]
    fn downstream_limit_is_treated_like_the_clamp() {
        let s = Settings::new(0.01, 0.5, 5.0, -10.0, 10.0);
        let mut pi = float(&s);
        pi.step(2.0, 0.0);
        // The actuator only delivered 0.2 of the command: integration that
        // would raise the command further is held.
        let before = pi.integral();
        let input = Input::new(2.0, 0.0).with_applied(0.2);
        let out = pi.step_with(&input);
        assert!(
            out.status
                .contains(Status::DOWNSTREAM | Status::INTEGRATOR_HELD)
        );
        assert_eq!(pi.integral(), before);
        // With back-calculation the integrator is pulled down by (Ts/Tt)·d.
        let s = s.with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: 0.02,
        });
        let mut pi = float(&s);
        let u = pi.step(2.0, 0.0).command;
        let i0 = pi.integral();
        pi.step_with(&Input::new(2.0, 0.0).with_applied(u - 1.0));
        let d = -1.0; // applied − commanded
        let expected = i0 + 0.05 * 2.0 + 0.5 * d;
        assert!((pi.integral() - expected).abs() < 1e-12);
    }

    #[test]
    fn engage_is_bumpless_within_one_lsb() {
        let s = Settings::new(0.01, 3.3, 1.7, -50.0, 50.0)
            .with_setpoint_weight(0.6)
            .with_slew_per_s(10.0)
            .with_filter_time_s(0.1);
        for a in [-49.9, -7.25, 0.0, 0.001, 13.37, 49.99] {
            let mut pi = fixed(&s);
            pi.step(q(2.0), q(1.0));
            pi.engage(q(a));
            let out = pi.step_with(&Input::new(q(4.5), q(-3.2)).with_feed_forward(q(1.25)));
            let diff = (out.command - q(a)).to_bits().abs();
            assert!(diff <= 1, "a = {a}: off by {diff} LSB");
            assert!(out.status.contains(Status::ENGAGED));
        }
    }

    #[test]
    fn track_then_auto_is_bumpless() {
        let s = Settings::new(0.01, 2.0, 4.0, 0.0, 20.0).with_slew_per_s(5.0);
        let mut pi = float(&s);
        let input = Input::new(3.0, 2.0);
        for _ in 0..50 {
            let out = pi.track(&input, 12.0);
            assert_eq!(out.command, 12.0);
            assert!(out.status.contains(Status::TRACKING));
        }
        let out = pi.step_with(&input);
        // Continues from 12 plus one integration step Ki·Ts·e = 0.04.
        assert!((out.command - 12.04).abs() < 1e-9, "{}", out.command);
    }

    #[test]
    fn filter_follows_backward_euler() {
        // y_f[k] = y_f[k−1] + α (y[k] − y_f[k−1]), α = Ts/(Tf+Ts)
        // (backward-Euler discretisation of 1/(Tf s + 1); common practice).
        let s = Settings::new(0.01, 1.0, 0.0, -10.0, 10.0).with_filter_time_s(0.04);
        let mut pi = float(&s);
        let alpha = 0.01 / 0.05;
        pi.step(0.0, 0.0); // primes the filter at 0
        let mut y_f = 0.0;
        for _ in 0..20 {
            y_f += alpha * (1.0 - y_f);
            let out = pi.step(0.0, 1.0);
            assert!((out.command + y_f).abs() < 1e-12);
        }
    }

    #[test]
    fn deadband_is_continuous_and_stops_integration() {
        let s = Settings::new(0.01, 2.0, 1.0, -10.0, 10.0).with_deadband(0.5);
        let mut pi = float(&s);
        let out = pi.step(0.3, 0.0);
        assert_eq!(out.command, 0.0);
        assert!(out.status.contains(Status::DEADBAND));
        assert_eq!(pi.integral(), 0.0);
        let out = pi.step(0.75, 0.0);
        assert!((out.command - 0.5).abs() < 1e-12); // Kp·(0.75 − 0.5)
    }

    #[test]
    fn setpoint_weight_and_feed_forward() {
        let s = Settings::new(0.01, 2.0, 0.0, -10.0, 10.0).with_setpoint_weight(0.25);
        let mut pi = float(&s);
        let out = pi.step_with(&Input::new(4.0, 1.0).with_feed_forward(0.5));
        // Kp·(b·r − y) + ff = 2·(1 − 1) + 0.5
        assert_eq!(out.command, 0.5);
    }

    #[test]
    fn non_finite_input_holds_and_touches_nothing() {
        let s = Settings::new(0.01, 1.0, 1.0, -10.0, 10.0);
        let mut pi = float(&s);
        let u = pi.step(1.0, 0.0).command;
        let before = pi;
        for bad in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            for input in [
                Input::new(bad, 0.0),
                Input::new(1.0, bad),
                Input::new(1.0, 0.0).with_feed_forward(bad),
                Input::new(1.0, 0.0).with_applied(bad),
            ] {
                let out = pi.step_with(&input);
                assert_eq!(out.command, u);
                assert_eq!(out.status, Status::NON_FINITE);
                assert_eq!(pi.integral, before.integral);
                assert_eq!(pi.filtered, before.filtered);
            }
        }
    }

    #[test]
    fn out_of_range_measurement_is_flagged_and_clamped() {
        let s = Settings::new(0.01, 1.0, 0.0, -100.0, 100.0).with_measurement_range(0.0, 50.0);
        let mut pi = fixed(&s);
        let out = pi.step(q(10.0), q(80.0));
        assert!(out.status.contains(Status::MEASUREMENT_RANGE));
        assert_eq!(out.command, q(-40.0));
        let out = pi.step(q(-5.0), q(0.0));
        assert!(out.status.contains(Status::SETPOINT_RANGE));
        assert!(out.status.is_fault());
    }

    #[test]
    fn retune_is_bumpless_in_fixed_point() {
        let a = Settings::new(0.01, 1.0, 2.0, -100.0, 100.0);
        let b = Settings::new(0.01, 7.5, 0.5, -100.0, 100.0);
        let mut pi = fixed(&a);
        let mut twin = fixed(&a);
        for _ in 0..10 {
            pi.step(q(3.0), q(1.0));
            twin.step(q(3.0), q(1.0));
        }
        pi.retune(Config::try_new(&b).expect("valid"));
        // First command after the change: identical up to rounding (the
        // integrator absorbed ΔKp·e).
        let bumped = pi.step(q(3.0), q(1.0)).command;
        let unchanged = twin.step(q(3.0), q(1.0)).command;
        assert!((bumped - unchanged).to_bits().abs() <= 1);
        // Next: one integration step with the new Ki·Ts instead of the old,
        // 2·(0.005 − 0.02) = −0.03, plus rounding.
        let bumped = pi.step(q(3.0), q(1.0)).command;
        let unchanged = twin.step(q(3.0), q(1.0)).command;
        let diff = (bumped - unchanged).to_num::<f64>();
        assert!((diff + 0.03).abs() < 3e-5, "diff {diff}");
    }

    #[test]
    fn reset_returns_to_rest() {
        let s = Settings::new(0.01, 1.0, 1.0, 2.0, 10.0);
        let mut pi = fixed(&s);
        assert_eq!(pi.last_command(), q(2.0)); // 0 clamped into [2, 10]
        pi.step(q(5.0), q(0.0));
        pi.reset();
        assert_eq!(pi.integral(), I16F16::ZERO);
        assert_eq!(pi.last_command(), q(2.0));
    }
}
