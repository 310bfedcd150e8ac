//! Every controller operation the firmware uses, each kept out of line.
//!
//! Two reasons: the controller's machine code then sits in a few named
//! symbols (`evenkeel_replay::probe::*`), so its size can be read from the
//! symbol table; and a step is one call that [`crate::cost`] can time.
//! Each function does exactly what its name says and nothing else.

use evenkeel::{Backend, Controller, Input, Layout, Output};

/// [`Controller::new`].
#[inline(never)]
pub fn new<B: Backend, L: Layout>(config: evenkeel::Config<B, L>) -> Controller<B, L> {
    Controller::new(config)
}

/// [`Controller::step`].
#[inline(never)]
pub fn step<B: Backend, L: Layout>(
    pi: &mut Controller<B, L>,
    setpoint: B,
    measurement: B,
) -> Output<B> {
    pi.step(setpoint, measurement)
}

/// [`Controller::step_with`].
#[inline(never)]
pub fn step_with<B: Backend, L: Layout>(pi: &mut Controller<B, L>, input: &Input<B>) -> Output<B> {
    pi.step_with(input)
}

/// [`Controller::engage`].
#[inline(never)]
pub fn engage<B: Backend, L: Layout>(pi: &mut Controller<B, L>, actuator: B) {
    pi.engage(actuator);
}

/// [`Controller::track`].
#[inline(never)]
pub fn track<B: Backend, L: Layout>(
    pi: &mut Controller<B, L>,
    input: &Input<B>,
    actuator: B,
) -> Output<B> {
    pi.track(input, actuator)
}

/// [`Controller::reset`].
#[inline(never)]
pub fn reset<B: Backend, L: Layout>(pi: &mut Controller<B, L>) {
    pi.reset();
}

/// [`Controller::retune`] to the present configuration with new gains
/// (what [`Controller::schedule`] does once it has interpolated them).
/// Returns `false`, changing nothing, if the gains are refused.
#[inline(never)]
pub fn retune<B: Backend, L: Layout>(
    pi: &mut Controller<B, L>,
    kp: B::Coef,
    ki_ts: B::Coef,
) -> bool {
    match pi.config().with_gains(kp, ki_ts) {
        Ok(config) => {
            pi.retune(config);
            true
        }
        Err(_) => false,
    }
}

/// [`Controller::schedule`].
#[inline(never)]
pub fn schedule<B: Backend, L: Layout, const N: usize>(
    pi: &mut Controller<B, L>,
    table: &evenkeel::Schedule<B, N, L>,
    at: B,
) {
    pi.schedule(table, at);
}
