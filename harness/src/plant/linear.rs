//! Linear plants with exact zero-order-hold discretisation.

use std::collections::VecDeque;

use super::{Environment, ParamError, Plant, check, lag_step, valid_period};

/// [`Plant::output`], [`Plant::rate`] and [`Plant::states`] of a linear
/// plant, whose one state is its output `x` (with `rate`, its derivative
/// after the last period).
macro_rules! output_is_x {
    () => {
        fn output(&self) -> f64 {
            self.x
        }

        fn rate(&self) -> f64 {
            self.rate
        }

        fn states(&self, out: &mut Vec<(&'static str, f64)>) {
            out.push(("output", self.x));
        }
    };
}

/// Integrating plant `ẋ = k·u + d` (a tank level, a position from a speed
/// command). `d` is [`Environment::load`] in output units per second.
///
/// Exact: with `u` and `d` held over `dt`, `x ← x + (k·u + d)·dt` is the
/// closed-form solution, not an approximation.
///
/// ```
/// use evenkeel_harness::plant::{Environment, Integrator, Plant};
/// let mut tank = Integrator::new(0.5)?;
/// tank.advance(2.0, &Environment::default(), 0.1);
/// assert!((tank.output() - 0.1).abs() < 1e-15);
/// # Ok::<(), evenkeel_harness::plant::ParamError>(())
/// ```
#[derive(Debug, Clone, PartialEq)]
pub struct Integrator {
    gain: f64,
    x: f64,
    rate: f64,
}

impl Integrator {
    /// Integrating plant with gain `k` (output units per second per unit
    /// command): finite and non-zero (negative for reverse-acting plants).
    ///
    /// # Errors
    /// [`ParamError::OutOfRange`] naming the first parameter out of range.
    pub fn new(gain: f64) -> Result<Self, ParamError> {
        let gain = check("gain", gain, "finite and non-zero", gain != 0.0)?;
        Ok(Self {
            gain,
            x: 0.0,
            rate: 0.0,
        })
    }
}

impl Plant for Integrator {
    fn advance(&mut self, u: f64, env: &Environment, dt_s: f64) {
        if !valid_period(dt_s) {
            return;
        }
        self.rate = self.gain * env.gain_factor * u + env.load;
        self.x += self.rate * dt_s;
    }

    output_is_x!();

    fn reset(&mut self, output0: f64) {
        self.x = output0;
        self.rate = 0.0;
    }
}

/// First-order lag with dead time, `τ·ẋ = −x + k·u(t−L) + d`, `d` being
/// [`Environment::load`] in output units (not delayed).
///
/// Discretisation is exact for a held input, also when `L` is not a
/// multiple of the period: the delay line keeps past held inputs with their
/// durations, and each period is split at the instants where the delayed
/// input changes; every piece is one exact step
/// `x ← w + (x − w)·e^(−h/τ)` with `w = k·u + d`. Periods may differ from
/// call to call.
///
/// ```
/// use evenkeel_harness::plant::{Environment, FirstOrderLag, Plant};
/// let mut pump = FirstOrderLag::new(2.0, 1.5, 0.25)?; // k, τ = 1.5 s, L = 0.25 s
/// pump.advance(1.0, &Environment::default(), 0.1);
/// assert_eq!(pump.output(), 0.0); // the command has not arrived yet
/// # Ok::<(), evenkeel_harness::plant::ParamError>(())
/// ```
#[derive(Debug, Clone, PartialEq)]
pub struct FirstOrderLag {
    gain: f64,
    tau_s: f64,
    dead_time_s: f64,
    x: f64,
    rate: f64,
    /// Past held inputs `(u, duration_s)`, oldest first; together with
    /// `consumed_s` they span exactly the dead time.
    history: VecDeque<(f64, f64)>,
    /// Part of the oldest entry that already lies before `t − L`.
    consumed_s: f64,
}

impl FirstOrderLag {
    /// Lag with static gain `gain` (finite, non-zero), time constant `tau_s`
    /// (finite, > 0) and dead time `dead_time_s` (finite, ≥ 0). Starts at rest
    /// at output 0 with zero input.
    ///
    /// # Errors
    /// [`ParamError::OutOfRange`] naming the first parameter out of range.
    pub fn new(gain: f64, tau_s: f64, dead_time_s: f64) -> Result<Self, ParamError> {
        let gain = check("gain", gain, "finite and non-zero", gain != 0.0)?;
        let tau_s = check("tau_s", tau_s, "finite and > 0 s", tau_s > 0.0)?;
        let dead_time_s = check(
            "dead_time_s",
            dead_time_s,
            "finite and >= 0 s",
            dead_time_s >= 0.0,
        )?;
        let mut lag = Self {
            gain,
            tau_s,
            dead_time_s,
            x: 0.0,
            rate: 0.0,
            history: VecDeque::new(),
            consumed_s: 0.0,
        };
        lag.reset_with_input(0.0, 0.0);
        Ok(lag)
    }

    /// Sets the output to `output0` and fills the delay line with `u_past`,
    /// the input held before now.
    pub fn reset_with_input(&mut self, output0: f64, u_past: f64) {
        self.x = output0;
        self.rate = 0.0;
        self.history.clear();
        self.consumed_s = 0.0;
        if self.dead_time_s > 0.0 {
            self.history.push_back((u_past, self.dead_time_s));
        }
    }

    /// Dead time `L` in seconds.
    #[must_use]
    pub fn dead_time_s(&self) -> f64 {
        self.dead_time_s
    }
}

impl Plant for FirstOrderLag {
    fn advance(&mut self, u: f64, env: &Environment, dt_s: f64) {
        if !valid_period(dt_s) {
            return;
        }
        let (k, d, tau) = (self.gain * env.gain_factor, env.load, self.tau_s);
        if self.dead_time_s == 0.0 {
            self.x = lag_step(self.x, k * u + d, dt_s, tau);
            self.rate = (k * u + d - self.x) / tau;
            return;
        }
        self.history.push_back((u, dt_s));
        let mut remaining = dt_s;
        let mut acting = u;
        while remaining > 0.0 {
            let Some(&(seg_u, seg_s)) = self.history.front() else {
                // Only reachable through rounding of the durations: the
                // newest input is the one in effect.
                self.x = lag_step(self.x, k * u + d, remaining, tau);
                break;
            };
            acting = seg_u;
            let available = seg_s - self.consumed_s;
            if available <= remaining {
                self.x = lag_step(self.x, k * seg_u + d, available.max(0.0), tau);
                remaining -= available;
                self.history.pop_front();
                self.consumed_s = 0.0;
            } else {
                self.x = lag_step(self.x, k * seg_u + d, remaining, tau);
                self.consumed_s += remaining;
                remaining = 0.0;
            }
        }
        self.rate = (k * acting + d - self.x) / tau;
    }

    output_is_x!();

    /// At rest with zero load: the delay line holds `output0 / gain`.
    fn reset(&mut self, output0: f64) {
        self.reset_with_input(output0, output0 / self.gain);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Fixture made by `harness/tests/reference/zoh_fixture.py` with SciPy
    /// (`cont2discrete(method="zoh")` + `dlsim` without dead time;
    /// `lsim(interp=False)` on a fine grid with a hand-shifted input when
    /// the dead time is not a multiple of the period).
    const ZOH_FIXTURE: &str = include_str!(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../shared/vectors/reference/zoh_first_order.csv"
    ));
    /// Relative to the larger of |expected| and 1 (the fixture's signal scale).
    const ZOH_TOL: f64 = 1e-12;

    #[test]
    fn lag_matches_scipy_zoh_reference() {
        let mut plant: Option<(String, FirstOrderLag)> = None;
        let (mut rows, mut cases, mut with_dead_time) = (0, 0, 0);
        for line in ZOH_FIXTURE.lines().filter(|l| !l.starts_with('#')).skip(1) {
            let f: Vec<&str> = line.split(',').collect();
            assert_eq!(f.len(), 11, "{line}");
            let num = |i: usize| f[i].parse::<f64>().unwrap();
            let (tau, k, dt, dead, x0, u_past) = (num(1), num(2), num(3), num(4), num(5), num(6));
            if plant.as_ref().is_none_or(|(name, _)| name != f[0]) {
                let mut p = FirstOrderLag::new(k, tau, dead).unwrap();
                p.reset_with_input(x0, u_past);
                plant = Some((f[0].to_string(), p));
                cases += 1;
                if dead > 0.0 {
                    assert!(((dead / dt).round() - dead / dt).abs() > 0.1);
                    with_dead_time += 1;
                }
            }
            let (_, p) = plant.as_mut().unwrap();
            let env = Environment {
                load: num(9),
                ..Environment::default()
            };
            p.advance(num(8), &env, dt);
            let expected = num(10);
            let err = (p.output() - expected).abs();
            assert!(
                err <= ZOH_TOL * expected.abs().max(1.0),
                "{line}: got {} (err {err:e})",
                p.output()
            );
            rows += 1;
        }
        assert_eq!((rows, cases, with_dead_time), (200, 5, 3));
    }

    #[test]
    fn integrator_is_exact_for_held_input() {
        // Closed form: x(t) = x0 + Σ (k·u_i + d_i)·dt_i for piecewise-constant input.
        let mut p = Integrator::new(-0.8).unwrap();
        p.reset(1.25);
        let (mut sum_u_dt, mut t) = (0.0, 0.0);
        for i in 0..50 {
            let u = f64::from(i % 7) - 3.0;
            let env = Environment {
                load: 0.125,
                ..Environment::default()
            };
            let dt = 0.01 * f64::from(1 + i % 3);
            p.advance(u, &env, dt);
            sum_u_dt += u * dt;
            t += dt;
            let closed_form = 1.25 - 0.8 * sum_u_dt + 0.125 * t;
            assert!((p.output() - closed_form).abs() <= 1e-13, "step {i}");
            assert_eq!(p.rate(), -0.8 * u + 0.125);
        }
    }

    #[test]
    fn lag_step_response_closed_form() {
        // x(t) = k·(1 − e^(−(t−L)/τ)) for t ≥ L, 0 before (textbook FOPDT step response).
        let (k, tau, dead, dt) = (2.0, 0.7, 0.33, 0.01);
        let mut p = FirstOrderLag::new(k, tau, dead).unwrap();
        for i in 1..=300 {
            p.advance(1.0, &Environment::default(), dt);
            let t = f64::from(i) * dt;
            let exact = if t > dead {
                k * (1.0 - (-(t - dead) / tau).exp())
            } else {
                0.0
            };
            assert!((p.output() - exact).abs() < 1e-12, "t = {t}");
        }
        assert!((p.rate() - (k - p.output()) / tau).abs() < 1e-12);
    }

    #[test]
    fn lag_reset_is_at_rest_and_variable_periods_agree() {
        let mut p = FirstOrderLag::new(4.0, 0.5, 0.123).unwrap();
        p.reset(2.0);
        for _ in 0..100 {
            p.advance(0.5, &Environment::default(), 0.01);
        }
        assert!((p.output() - 2.0).abs() < 1e-12);
        // Same input history, periods split differently: same final state.
        let mut a = FirstOrderLag::new(1.0, 0.3, 0.05).unwrap();
        let mut b = a.clone();
        for i in 0..40 {
            let u = f64::from(i % 5);
            a.advance(u, &Environment::default(), 0.02);
            b.advance(u, &Environment::default(), 0.007);
            b.advance(u, &Environment::default(), 0.013);
        }
        assert!((a.output() - b.output()).abs() < 1e-12);
    }

    #[test]
    fn constructors_reject_bad_parameters() {
        assert!(matches!(
            FirstOrderLag::new(1.0, 0.0, 0.0),
            Err(ParamError::OutOfRange { name: "tau_s", .. })
        ));
        assert!(matches!(
            FirstOrderLag::new(1.0, 1.0, -0.1),
            Err(ParamError::OutOfRange {
                name: "dead_time_s",
                ..
            })
        ));
        assert!(FirstOrderLag::new(f64::NAN, 1.0, 0.0).is_err());
        assert!(Integrator::new(0.0).is_err());
        assert!(Integrator::new(f64::INFINITY).is_err());
        let msg = FirstOrderLag::new(1.0, -2.0, 0.0).unwrap_err().to_string();
        assert_eq!(
            msg,
            "parameter `tau_s` = -2 is out of range: must be finite and > 0 s"
        );
    }
}
