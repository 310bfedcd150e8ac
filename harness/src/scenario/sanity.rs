//! Physical sanity at load: parameter values that make a model
//! meaningless for the integrator it is solved with are refused with the
//! bound, before anything runs.
//!
//! The vehicle and the rotor are solved with classical RK4, `substeps`
//! steps of `h = period_s / substeps` per controller period (and again
//! divided by the actuator's sub-steps when an `[actuator]` is modelled).
//! Linearised, `ẋ = −λ·x` is stable under RK4 only for `λ·h ≤ 2.78` (the
//! real-axis stability limit of RK4 is about 2.785; from memory, e.g.
//! Hairer & Wanner, *Solving Ordinary Differential Equations II*). The
//! largest `λ` of each model over the speeds it can reach:
//!
//! - vehicle: drag `λ = ρ·C_dA·|v|/m` and rolling resistance (smoothed by
//!   `tanh(v/v_ε)`) `λ = C_rr·g/v_ε`;
//! - rotor: `λ = (b + 2·c·|ω|)/J`.
//!
//! The speed bound is twice the largest speed the reference or the initial
//! output asks for (at least 1), capped by the speed at which drag balances
//! the full command (full authority).
//! The integrator and the first-order lag are solved exactly: no bound.

use super::error::number_text;
use super::{PlantModel, Scenario};
use crate::plant::STANDARD_GRAVITY_M_S2;

/// Largest `λ·h` accepted (RK4 real-axis limit ≈ 2.785, rounded down).
pub(crate) const RK4_LIMIT: f64 = 2.78;

/// A model made meaningless by a parameter: the key to blame and why.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Insane {
    /// `plant.KEY`.
    pub key: &'static str,
    /// What is wrong and the bound.
    pub message: String,
}

/// Largest command magnitude the loop can apply.
fn authority(s: &Scenario) -> f64 {
    let (lo, hi) = (s.controller.output_min, s.controller.output_max);
    let mut u = lo.abs().max(hi.abs());
    if let Some(a) = s.actuator {
        u = u.min(a.min.abs().max(a.max.abs()));
    }
    u
}

/// Largest speed the reference and the start ask for.
fn asked_speed(s: &Scenario) -> f64 {
    let (lo, hi) = s.setup.reference.range();
    lo.abs().max(hi.abs()).max(s.initial_output.abs())
}

/// The speed the check assumes the loop can reach: twice the largest
/// the reference asks for (at least 1 in the output's unit: a loop can
/// overshoot), but no more than full authority gives (`terminal`, where
/// drag balances the full command; 0 when unknown).
fn reach(asked: f64, terminal: f64) -> f64 {
    let v = (2.0 * asked).max(1.0);
    if terminal > 0.0 { v.min(terminal) } else { v }
}

/// RK4 step of the plant, s.
fn step_s(s: &Scenario, substeps: u32) -> f64 {
    let outer = s.actuator.map_or(1, |a| a.substeps.max(1));
    s.controller.period_s / f64::from(substeps.max(1)) / f64::from(outer)
}

/// Checks `s`'s plant against the integrator it is solved with.
pub(crate) fn physical(s: &Scenario) -> Result<(), Insane> {
    match &s.plant {
        PlantModel::Vehicle(p) => {
            let h = step_s(s, p.substeps);
            let g = STANDARD_GRAVITY_M_S2;
            let rr = p.crr * g / p.creep_speed_m_s;
            if rr * h > RK4_LIMIT {
                return Err(Insane {
                    key: "creep_speed_m_s",
                    message: format!(
                        "{} m/s is too small for RK4 steps of {h:.3e} s: the smoothed rolling resistance is stable only for creep_speed_m_s >= {:.3e} m/s (or more plant.substeps)",
                        number_text(p.creep_speed_m_s),
                        p.crr * g * h / RK4_LIMIT
                    ),
                });
            }
            let drag = p.air_density_kg_m3 * p.cda_m2;
            if drag > 0.0 {
                let force = p.actuator_gain_n.abs() * authority(s);
                let v = reach(asked_speed(s), (2.0 * force / drag).sqrt());
                let min_mass = drag * v * h / RK4_LIMIT;
                if p.mass_kg.is_nan() || p.mass_kg < min_mass {
                    return Err(Insane {
                        key: "mass_kg",
                        message: format!(
                            "{} kg is too small: with drag up to {v:.3e} m/s, RK4 steps of {h:.3e} s are stable only for mass_kg >= {min_mass:.3e} kg (or more plant.substeps)",
                            number_text(p.mass_kg)
                        ),
                    });
                }
            }
            let accel = p.actuator_gain_n.abs() * authority(s) / p.mass_kg;
            if !accel.is_finite() || accel > 1e12 {
                return Err(Insane {
                    key: "mass_kg",
                    message: format!(
                        "{} kg gives an acceleration of {accel:.3e} m/s² at full command: at most 1e12 m/s² is meaningful",
                        number_text(p.mass_kg)
                    ),
                });
            }
        }
        PlantModel::Rotor(p) => {
            let h = step_s(s, p.substeps);
            let torque = p.torque_gain_n_m.abs() * authority(s);
            let b = p.viscous_n_m_s;
            let c = p.drag_n_m_s2;
            let terminal = if c > 0.0 {
                (-b + (b * b + 4.0 * c * torque).sqrt()) / (2.0 * c)
            } else if b > 0.0 {
                torque / b
            } else {
                0.0
            };
            let w = reach(asked_speed(s), terminal);
            let stiffness = b + 2.0 * c * w;
            let min_inertia = stiffness * h / RK4_LIMIT;
            if stiffness > 0.0 && (p.inertia_kg_m2.is_nan() || p.inertia_kg_m2 < min_inertia) {
                return Err(Insane {
                    key: "inertia_kg_m2",
                    message: format!(
                        "{} kg·m² is too small: with friction and drag up to {w:.3e} rad/s, RK4 steps of {h:.3e} s are stable only for inertia_kg_m2 >= {min_inertia:.3e} kg·m² (or more plant.substeps)",
                        number_text(p.inertia_kg_m2)
                    ),
                });
            }
            let accel = torque / p.inertia_kg_m2;
            if !accel.is_finite() || accel > 1e12 {
                return Err(Insane {
                    key: "inertia_kg_m2",
                    message: format!(
                        "{} kg·m² gives an angular acceleration of {accel:.3e} rad/s² at full command: at most 1e12 rad/s² is meaningful",
                        number_text(p.inertia_kg_m2)
                    ),
                });
            }
        }
        PlantModel::Integrator { .. } | PlantModel::FirstOrderLag { .. } => {}
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_demo_tug_is_sane_and_a_feather_is_not() {
        let mut s = Scenario::demo().unwrap();
        assert_eq!(physical(&s), Ok(()));
        if let PlantModel::Vehicle(p) = &mut s.plant {
            p.mass_kg = 1e-300;
        }
        let e = physical(&s).unwrap_err();
        assert_eq!(e.key, "mass_kg");
        assert!(e.message.contains("mass_kg >="), "{}", e.message);
    }
}
