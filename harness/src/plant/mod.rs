//! Plant models the controller is simulated against: `f64`, SI units.
//!
//! A model implements [`Plant`]: the closed loop hands it one command per
//! controller period and the model holds that command constant over the
//! period (zero-order hold), exactly as a DAC or PWM register would.
//!
//! | model | equation | integration |
//! |---|---|---|
//! | [`Integrator`] | `ẋ = k·u + d` | exact |
//! | [`FirstOrderLag`] | `τ·ẋ = −x + k·u(t−L) + d` | exact ZOH, any dead time `L` |
//! | [`Rotor`] | `J·ω̇ = k·u − b·ω − c·ω·\|ω\| + T_d` | RK4, sub-steps |
//! | [`Vehicle`] | `m·v̇ = c·u − C_rr·m·g·cosθ·s(v) − ½ρ·C_dA·v·\|v\| − m·g·sinθ + F_d` | RK4, sub-steps |
//!
//! Around a model: [`Actuator`] (lag and limits, [`Actuated`] puts it in
//! front of any plant) and [`Sensor`] (seeded noise, quantisation, delay).
//!
//! Constructors validate their parameters and return [`ParamError`], which
//! names the parameter and the allowed range.

mod actuator;
mod linear;
mod rotor;
mod sensor;
mod vehicle;

pub use actuator::{Actuated, Actuator};

pub use linear::{FirstOrderLag, Integrator};
pub use rotor::{Rotor, RotorParams};
pub use sensor::{Sensor, SensorParams};
pub use vehicle::{STANDARD_GRAVITY_M_S2, Vehicle, VehicleParams};

/// Conditions outside the plant during one period, held constant over it.
///
/// Each model reads only the fields that make sense for it:
/// [`Integrator`], [`FirstOrderLag`] and [`Rotor`] read `load`, [`Vehicle`] reads
/// `grade_pct` and `force_n`; all read `gain_factor`. `Default` is a level
/// road with no disturbance and the nominal gain.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Environment {
    /// Road grade in percent (rise over run × 100); positive is uphill.
    pub grade_pct: f64,
    /// External force on a vehicle in newtons (e.g. a towed load shifting);
    /// positive pushes forward.
    pub force_n: f64,
    /// Additive disturbance `d` in the model's own units (output units per
    /// second for [`Integrator`], output units for [`FirstOrderLag`], N·m
    /// for [`Rotor`]).
    pub load: f64,
    /// Multiplies the model's command gain (`k`, `c`): 1 is nominal, 0.8 a
    /// motor 20 % weaker, a valve opening that lowers the pressure per unit
    /// of pump speed is below 1. Applied where the command acts (after any
    /// [`Actuator`] and dead time).
    pub gain_factor: f64,
}

impl Default for Environment {
    fn default() -> Self {
        Self {
            grade_pct: 0.0,
            force_n: 0.0,
            load: 0.0,
            gain_factor: 1.0,
        }
    }
}

/// A simulated process driven by one command.
pub trait Plant {
    /// Advances the model by `dt_s` seconds with command `u` and `env` held
    /// constant over the whole period (zero-order hold).
    ///
    /// `dt_s` must be positive and finite; any other value leaves the state
    /// unchanged.
    fn advance(&mut self, u: f64, env: &Environment, dt_s: f64);

    /// The measured quantity now (before any [`Sensor`]).
    fn output(&self) -> f64;

    /// Time derivative of [`Plant::output`] now, with the last command and
    /// environment (for a vehicle: acceleration in m/s²). Zero after a reset.
    fn rate(&self) -> f64;

    /// Appends the named internal states (units in the name) for traces.
    fn states(&self, out: &mut Vec<(&'static str, f64)>);

    /// Puts the plant at rest with output `output0`.
    fn reset(&mut self, output0: f64);

    /// Advances by `dt_s` seconds while the input follows a known lag over
    /// the step (an [`Actuator`] in front):
    /// `u(t) = target + gap·e^(−t/τ)`. A model that evaluates its input
    /// inside the step (the RK4 stages of the vehicle) takes it from there;
    /// the default holds the step's mean, which is exact for a plant that
    /// integrates its input.
    fn advance_lagged(&mut self, input: &Lagged, env: &Environment, dt_s: f64) {
        self.advance(input.mean, env, dt_s);
    }
}

/// An input following a first-order lag over one step of `dt` seconds:
/// `u(t) = target + gap·e^(−t/τ)` for `0 ≤ t ≤ dt`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Lagged {
    /// The value the input is heading for.
    pub target: f64,
    /// Start value minus `target`.
    pub gap: f64,
    /// `dt/τ`, positive.
    pub ratio: f64,
    /// The mean of `u(t)` over the step.
    pub mean: f64,
}

impl<P: Plant + ?Sized> Plant for Box<P> {
    fn advance(&mut self, u: f64, env: &Environment, dt_s: f64) {
        (**self).advance(u, env, dt_s);
    }
    fn output(&self) -> f64 {
        (**self).output()
    }
    fn rate(&self) -> f64 {
        (**self).rate()
    }
    fn states(&self, out: &mut Vec<(&'static str, f64)>) {
        (**self).states(out);
    }
    fn reset(&mut self, output0: f64) {
        (**self).reset(output0);
    }
    fn advance_lagged(&mut self, input: &Lagged, env: &Environment, dt_s: f64) {
        (**self).advance_lagged(input, env, dt_s);
    }
}

/// A parameter given to a constructor is outside its allowed range.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum ParamError {
    /// The value is outside the allowed range (`allowed` says which).
    #[error("parameter `{name}` = {value} is out of range: must be {allowed}")]
    OutOfRange {
        /// Parameter name, as in the constructor or parameter struct.
        name: &'static str,
        /// The rejected value.
        value: f64,
        /// The allowed range, in words.
        allowed: &'static str,
    },
}

/// Checks `value` against `ok`; `allowed` describes the range for the error.
pub(crate) fn check(
    name: &'static str,
    value: f64,
    allowed: &'static str,
    ok: bool,
) -> Result<f64, ParamError> {
    if ok && value.is_finite() {
        Ok(value)
    } else {
        Err(ParamError::OutOfRange {
            name,
            value,
            allowed,
        })
    }
}

/// A value that depends on one `f64` only, kept with that argument's bits
/// so that asking again with the same argument returns it without
/// computing it again: the same bits as computing it afresh. The models
/// use it for terms that change seldom (a grade's trigonometry, a step
/// length's decay). Any two compare equal: what is kept never makes two
/// models differ.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Memo<T> {
    arg_bits: u64,
    value: T,
}

impl<T: Copy> Memo<T> {
    /// `value` kept as the result for `arg`.
    pub(crate) fn new(arg: f64, value: T) -> Self {
        Self {
            arg_bits: arg.to_bits(),
            value,
        }
    }

    /// The result for `arg`: the kept one when `arg` has the same bits as
    /// last time, else `compute(arg)` (then kept).
    pub(crate) fn get(&mut self, arg: f64, compute: impl FnOnce(f64) -> T) -> T {
        if arg.to_bits() != self.arg_bits {
            *self = Self::new(arg, compute(arg));
        }
        self.value
    }
}

impl<T> PartialEq for Memo<T> {
    fn eq(&self, _: &Self) -> bool {
        true
    }
}

/// `true` when `dt_s` is a usable period.
pub(crate) fn valid_period(dt_s: f64) -> bool {
    dt_s.is_finite() && dt_s > 0.0
}

/// One exact ZOH step of `τ·ẋ = −x + w` over `h` seconds with `w` constant:
/// `x ← w + (x − w)·e^(−h/τ)`, written with `exp_m1` so short steps keep
/// their precision. `tau_s == 0` means no lag (`x ← w`).
pub(crate) fn lag_step(x: f64, w: f64, h_s: f64, tau_s: f64) -> f64 {
    if tau_s > 0.0 {
        x + (w - x) * -(-h_s / tau_s).exp_m1()
    } else {
        w
    }
}
