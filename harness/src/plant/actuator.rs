//! Actuator dynamics and limits, in front of any plant.

use super::{Environment, Lagged, Memo, ParamError, Plant, check, valid_period};

/// An actuator that clamps the command to `[min, max]` and follows it with
/// a first-order lag `τ·ȧ = −a + clamp(u)` (exact discretisation; `τ = 0`
/// means it follows at once). Its state `a` is the delivered value, which
/// stays inside `[min, max]`; the closed loop reports it back to the
/// controller.
///
/// ```
/// use evenkeel_harness::plant::Actuator;
/// let mut valve = Actuator::new(0.2, 0.0, 1.0)?;
/// let mean = valve.advance(1.5, 0.2); // command beyond the limit
/// assert!((valve.value() - (1.0 - (-1.0f64).exp())).abs() < 1e-15);
/// assert!(mean < valve.value());
/// # Ok::<(), evenkeel_harness::plant::ParamError>(())
/// ```
#[derive(Debug, Clone, PartialEq)]
pub struct Actuator {
    tau_s: f64,
    min: f64,
    max: f64,
    value: f64,
    /// [`Actuator::decay`] of the last step length: a run of equal
    /// periods computes `e^(−r) − 1` once, not once per period.
    decay: Memo<Option<(f64, f64)>>,
}

impl Actuator {
    /// Lag time constant `tau_s` (finite, ≥ 0 s) and limits `min < max`
    /// (both finite). Starts delivering `clamp(0, min, max)`.
    ///
    /// # Errors
    /// [`ParamError::OutOfRange`] naming the first parameter out of range.
    pub fn new(tau_s: f64, min: f64, max: f64) -> Result<Self, ParamError> {
        check("tau_s", tau_s, "finite and >= 0 s", tau_s >= 0.0)?;
        check("min", min, "finite", true)?;
        check("max", max, "finite and > min", max > min)?;
        Ok(Self {
            tau_s,
            min,
            max,
            value: 0.0_f64.clamp(min, max),
            decay: Memo::new(1.0, decay_of(tau_s, 1.0)),
        })
    }

    /// Holds `command` for `dt_s` seconds. Returns the mean delivered value
    /// over the period (what a plant integrating the actuator output sees);
    /// [`Actuator::value`] is the value at the end. A `dt_s` that is not
    /// positive and finite changes nothing and returns the current value.
    /// A NaN command propagates (a controller fault should be visible).
    pub fn advance(&mut self, command: f64, dt_s: f64) -> f64 {
        if !valid_period(dt_s) {
            return self.value;
        }
        let decay = self.decay(dt_s);
        self.advance_by(command, decay)
    }

    /// [`decay_of`] this actuator's lag over `dt_s`, computed once per
    /// step length.
    fn decay(&mut self, dt_s: f64) -> Option<(f64, f64)> {
        let tau_s = self.tau_s;
        self.decay.get(dt_s, |dt_s| decay_of(tau_s, dt_s))
    }

    /// One step with a precomputed [`Actuator::decay`]; bit for bit what
    /// `lag_step` and the mean formula give.
    fn advance_by(&mut self, command: f64, decay: Option<(f64, f64)>) -> f64 {
        let target = command.clamp(self.min, self.max);
        let start = self.value;
        match decay {
            Some((r, em1)) => {
                self.value = start + (target - start) * -em1;
                // Mean of target + (start − target)·e^(−t/τ) over [0, dt]:
                // target + (start − target)·(1 − e^(−r))/r with r = dt/τ.
                target + (start - target) * (-em1 / r)
            }
            None => {
                self.value = target;
                target
            }
        }
    }

    /// Delivered value now.
    #[must_use]
    pub fn value(&self) -> f64 {
        self.value
    }

    /// Lower and upper limit.
    #[must_use]
    pub fn limits(&self) -> (f64, f64) {
        (self.min, self.max)
    }

    /// Sets the delivered value, clamped to the limits.
    pub fn reset(&mut self, value: f64) {
        self.value = value.clamp(self.min, self.max);
    }
}

/// `(r, e^(−r) − 1)` with `r = dt/τ` (`None` without lag, `τ = 0`): what a
/// step of `dt_s` needs.
fn decay_of(tau_s: f64, dt_s: f64) -> Option<(f64, f64)> {
    (tau_s > 0.0).then(|| {
        let r = dt_s / tau_s;
        (r, (-r).exp_m1())
    })
}

/// A plant driven through an [`Actuator`]. Each period is split into
/// `substeps` equal pieces; in each piece the plant gets the actuator's
/// output over that piece ([`Plant::advance_lagged`]): a model that
/// evaluates its input inside a step (the vehicle's RK4 stages) takes the
/// exact lagged value at each stage; the others get the exact mean over the
/// piece, which is exact for an integrating plant and converges as O(h²)
/// for the others.
#[derive(Debug, Clone, PartialEq)]
pub struct Actuated<P> {
    actuator: Actuator,
    plant: P,
    substeps: u32,
}

impl<P: Plant> Actuated<P> {
    /// Puts `actuator` in front of `plant`; `substeps` ≥ 1.
    ///
    /// # Errors
    /// [`ParamError::OutOfRange`] naming the first parameter out of range.
    pub fn new(actuator: Actuator, plant: P, substeps: u32) -> Result<Self, ParamError> {
        check("substeps", f64::from(substeps), ">= 1", substeps >= 1)?;
        Ok(Self {
            actuator,
            plant,
            substeps,
        })
    }

    /// The actuator (its [`Actuator::value`] is what the loop reports back).
    pub fn actuator(&self) -> &Actuator {
        &self.actuator
    }

    /// The actuator, to set its value after a [`Plant::reset`].
    pub fn actuator_mut(&mut self) -> &mut Actuator {
        &mut self.actuator
    }

    /// The plant behind the actuator.
    pub fn plant(&self) -> &P {
        &self.plant
    }
}

impl<P: Plant> Plant for Actuated<P> {
    fn advance(&mut self, u: f64, env: &Environment, dt_s: f64) {
        if !valid_period(dt_s) {
            return;
        }
        let h = dt_s / f64::from(self.substeps);
        let decay = self.actuator.decay(h);
        for _ in 0..self.substeps {
            let start = self.actuator.value;
            let mean = self.actuator.advance_by(u, decay);
            match decay {
                Some((ratio, _)) => {
                    let target = u.clamp(self.actuator.min, self.actuator.max);
                    let input = Lagged {
                        target,
                        gap: start - target,
                        ratio,
                        mean,
                    };
                    self.plant.advance_lagged(&input, env, h);
                }
                None => self.plant.advance(mean, env, h),
            }
        }
    }

    fn output(&self) -> f64 {
        self.plant.output()
    }

    fn rate(&self) -> f64 {
        self.plant.rate()
    }

    fn states(&self, out: &mut Vec<(&'static str, f64)>) {
        self.plant.states(out);
        out.push(("actuator", self.actuator.value));
    }

    /// Resets the plant only; the actuator keeps its value.
    fn reset(&mut self, output0: f64) {
        self.plant.reset(output0);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plant::Integrator;

    #[test]
    fn actuator_clamps_and_lags_exactly() {
        // Closed form of τ·ȧ = −a + c from a0: a(t) = c + (a0 − c)·e^(−t/τ).
        let mut a = Actuator::new(0.5, -1.0, 2.0).unwrap();
        a.reset(-0.5);
        for i in 1..=100 {
            a.advance(7.0, 0.01);
            let t = f64::from(i) * 0.01;
            let exact = 2.0 + (-0.5 - 2.0) * (-t / 0.5).exp();
            assert!((a.value() - exact).abs() < 1e-14);
            assert!(a.value() <= 2.0);
        }
        let mut ideal = Actuator::new(0.0, -1.0, 2.0).unwrap();
        assert_eq!(ideal.advance(-3.0, 0.01), -1.0);
        assert_eq!(ideal.value(), -1.0);
    }

    #[test]
    fn actuated_integrator_is_exact() {
        // ∫a dt of the closed form above: c·t + (a0 − c)·τ·(1 − e^(−t/τ)).
        let act = Actuator::new(0.3, 0.0, 1.0).unwrap();
        let mut p = Actuated::new(act, Integrator::new(2.0).unwrap(), 3).unwrap();
        for _ in 0..100 {
            p.advance(5.0, &Environment::default(), 0.01);
        }
        let exact = 2.0 * (1.0 * 1.0 + (0.0 - 1.0) * 0.3 * (1.0 - (-1.0 / 0.3f64).exp()));
        assert!((p.output() - exact).abs() < 1e-13, "{}", p.output());
        let mut states = Vec::new();
        p.states(&mut states);
        assert_eq!(states.last(), Some(&("actuator", p.actuator().value())));
    }

    #[test]
    fn actuator_rejects_bad_parameters() {
        assert!(matches!(
            Actuator::new(0.1, 1.0, 1.0),
            Err(ParamError::OutOfRange { name: "max", .. })
        ));
        assert!(Actuator::new(-0.1, 0.0, 1.0).is_err());
        assert!(Actuator::new(0.1, f64::NEG_INFINITY, 1.0).is_err());
        let act = Actuator::new(0.1, 0.0, 1.0).unwrap();
        assert!(Actuated::new(act, Integrator::new(1.0).unwrap(), 0).is_err());
    }
}
