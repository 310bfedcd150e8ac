//! Every controller operation the firmware uses, each kept out of line.
//!
//! Two reasons: the controller's machine code then sits in a few named
//! symbols (`evenkeel_replay::probe::*`), so its size can be read from the
//! symbol table; and a step is one call that [`crate::cost`] can time.
//! Each function does exactly what its name says and nothing else.

use evenkeel::{Backend, Controller, Input, Output};

/// [`Controller::new`].
#[inline(never)]
pub fn new<B: Backend>(config: evenkeel::Config<B>) -> Controller<B> {
    Controller::new(config)
}

/// [`Controller::step`].
#[inline(never)]
pub fn step<B: Backend>(pi: &mut Controller<B>, setpoint: B, measurement: B) -> Output<B> {
    pi.step(setpoint, measurement)
}

/// [`Controller::step_with`].
#[inline(never)]
pub fn step_with<B: Backend>(pi: &mut Controller<B>, input: &Input<B>) -> Output<B> {
    pi.step_with(input)
}

/// [`Controller::engage`].
#[inline(never)]
pub fn engage<B: Backend>(pi: &mut Controller<B>, actuator: B) {
    pi.engage(actuator);
}

/// [`Controller::track`].
#[inline(never)]
pub fn track<B: Backend>(pi: &mut Controller<B>, input: &Input<B>, actuator: B) -> Output<B> {
    pi.track(input, actuator)
}

/// [`Controller::reset`].
#[inline(never)]
pub fn reset<B: Backend>(pi: &mut Controller<B>) {
    pi.reset();
}

/// [`Controller::retune`] to the present configuration with new gains
/// (what [`Controller::schedule`] does once it has interpolated them).
#[inline(never)]
pub fn retune<B: Backend>(pi: &mut Controller<B>, kp: B::Coef, ki_ts: B::Coef) {
    let config = pi.config().with_gains(kp, ki_ts);
    pi.retune(config);
}
