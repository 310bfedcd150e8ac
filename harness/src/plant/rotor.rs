//! Rotating machine (fan, pump impeller): speed from a torque command
//! against viscous and quadratic (fan-law) drag.

use super::{Environment, ParamError, Plant, check, valid_period};

/// Physical parameters of a [`Rotor`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RotorParams {
    /// Moment of inertia `J` in kg·m², > 0.
    pub inertia_kg_m2: f64,
    /// Torque gain `k` in N·m per unit of command, non-zero.
    pub torque_gain_n_m: f64,
    /// Viscous friction `b` in N·m per rad/s, ≥ 0.
    pub viscous_n_m_s: f64,
    /// Quadratic drag `c` in N·m per (rad/s)², ≥ 0 (torque ∝ speed²).
    pub drag_n_m_s2: f64,
    /// RK4 sub-steps per period, ≥ 1.
    pub substeps: u32,
}

/// Rotor `J·ω̇ = k·u − b·ω − c·ω·|ω| + T_d`, `T_d` being
/// [`Environment::load`] in N·m. Output: speed `ω` in rad/s;
/// [`Plant::rate`]: angular acceleration in rad/s². Classical RK4 with
/// `substeps` sub-steps, command and load held over the period.
///
/// ```
/// use evenkeel_harness::plant::{Environment, Plant, Rotor, RotorParams};
/// let p = RotorParams { inertia_kg_m2: 0.05, torque_gain_n_m: 2.0, viscous_n_m_s: 0.0, drag_n_m_s2: 1e-4, substeps: 4 };
/// let mut fan = Rotor::new(p)?;
/// for _ in 0..5000 { fan.advance(1.0, &Environment::default(), 0.01); }
/// // Steady state k·u = c·ω²: ω = √(2/1e-4) ≈ 141.4 rad/s.
/// assert!((fan.output() - 2e4f64.sqrt()).abs() < 1e-6);
/// # Ok::<(), evenkeel_harness::plant::ParamError>(())
/// ```
#[derive(Debug, Clone, PartialEq)]
pub struct Rotor {
    p: RotorParams,
    speed_rad_s: f64,
    accel_rad_s2: f64,
}

impl Rotor {
    /// Validates `params`; the rotor starts at rest.
    ///
    /// # Errors
    /// [`ParamError::OutOfRange`] naming the first parameter out of range.
    pub fn new(params: RotorParams) -> Result<Self, ParamError> {
        let p = params;
        check(
            "inertia_kg_m2",
            p.inertia_kg_m2,
            "finite and > 0 kg·m²",
            p.inertia_kg_m2 > 0.0,
        )?;
        check(
            "torque_gain_n_m",
            p.torque_gain_n_m,
            "finite and non-zero N·m per unit command",
            p.torque_gain_n_m != 0.0,
        )?;
        check(
            "viscous_n_m_s",
            p.viscous_n_m_s,
            "finite and >= 0",
            p.viscous_n_m_s >= 0.0,
        )?;
        check(
            "drag_n_m_s2",
            p.drag_n_m_s2,
            "finite and >= 0",
            p.drag_n_m_s2 >= 0.0,
        )?;
        check("substeps", f64::from(p.substeps), ">= 1", p.substeps >= 1)?;
        Ok(Self {
            p,
            speed_rad_s: 0.0,
            accel_rad_s2: 0.0,
        })
    }

    fn accel(&self, drive: f64, w: f64) -> f64 {
        (drive - self.p.viscous_n_m_s * w - self.p.drag_n_m_s2 * w * w.abs()) / self.p.inertia_kg_m2
    }
}

impl Plant for Rotor {
    fn advance(&mut self, u: f64, env: &Environment, dt_s: f64) {
        if !valid_period(dt_s) {
            return;
        }
        let drive = self.p.torque_gain_n_m * env.gain_factor * u + env.load;
        let h = dt_s / f64::from(self.p.substeps);
        let mut w = self.speed_rad_s;
        for _ in 0..self.p.substeps {
            let a1 = self.accel(drive, w);
            let a2 = self.accel(drive, w + 0.5 * h * a1);
            let a3 = self.accel(drive, w + 0.5 * h * a2);
            let a4 = self.accel(drive, w + h * a3);
            w += h / 6.0 * (a1 + 2.0 * a2 + 2.0 * a3 + a4);
        }
        self.speed_rad_s = w;
        self.accel_rad_s2 = self.accel(drive, w);
    }

    fn output(&self) -> f64 {
        self.speed_rad_s
    }

    fn rate(&self) -> f64 {
        self.accel_rad_s2
    }

    fn states(&self, out: &mut Vec<(&'static str, f64)>) {
        out.push(("speed_rad_s", self.speed_rad_s));
        out.push(("accel_rad_s2", self.accel_rad_s2));
    }

    fn reset(&mut self, output0: f64) {
        self.speed_rad_s = output0;
        self.accel_rad_s2 = 0.0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn linear_rotor_matches_closed_form() {
        // c = 0: J·ω̇ = k·u − b·ω, ω(t) = (k·u/b)·(1 − e^(−b·t/J)).
        let p = RotorParams {
            inertia_kg_m2: 0.2,
            torque_gain_n_m: 3.0,
            viscous_n_m_s: 0.1,
            drag_n_m_s2: 0.0,
            substeps: 4,
        };
        let mut r = Rotor::new(p).unwrap();
        for i in 1..=300 {
            r.advance(0.5, &Environment::default(), 0.01);
            let t = f64::from(i) * 0.01;
            let exact = 15.0 * (1.0 - (-0.5 * t).exp());
            assert!((r.output() - exact).abs() < 1e-9, "t = {t}");
        }
    }

    #[test]
    fn rejects_bad_parameters() {
        let ok = RotorParams {
            inertia_kg_m2: 0.2,
            torque_gain_n_m: 3.0,
            viscous_n_m_s: 0.1,
            drag_n_m_s2: 0.0,
            substeps: 4,
        };
        for bad in [
            RotorParams {
                inertia_kg_m2: 0.0,
                ..ok
            },
            RotorParams {
                torque_gain_n_m: f64::NAN,
                ..ok
            },
            RotorParams {
                drag_n_m_s2: -1.0,
                ..ok
            },
            RotorParams { substeps: 0, ..ok },
        ] {
            assert!(Rotor::new(bad).is_err(), "{bad:?}");
        }
    }
}
