//! The scenario's plant as linear models at the corners of its
//! uncertainty, and the command each corner needs to hold its operating
//! points.

use super::margins::LinearPlant;
use crate::plant::Environment;
use crate::plant::STANDARD_GRAVITY_M_S2;
use crate::scenario::{PlantModel, Scenario};

/// One corner: parameter values, the gain factor and operating output it
/// was linearised at, and the model.
#[derive(Debug, Clone, PartialEq)]
pub struct Corner {
    /// `(key, value)` of each uncertain parameter.
    pub values: Vec<(&'static str, f64)>,
    /// Value of `[disturbance.gain_factor]` (its extremes are corners too).
    pub gain_factor: f64,
    /// Operating output (reference extremes, for the nonlinear models).
    pub operating_output: f64,
    /// The linear model there.
    pub plant: LinearPlant,
    /// Commands that hold the operating points of this corner (min, max).
    pub hold: (f64, f64),
}

impl Corner {
    /// Short label: `mass_kg=1500 actuator_gain_n=7200 gf=1 y0=4`.
    #[must_use]
    pub fn label(&self) -> String {
        let mut parts: Vec<String> = self
            .values
            .iter()
            .map(|(k, v)| format!("{k}={}", crate::report::format_number(Some(*v))))
            .collect();
        if (self.gain_factor - 1.0).abs() > 0.0 {
            parts.push(format!(
                "gain_factor={}",
                crate::report::format_number(Some(self.gain_factor))
            ));
        }
        parts.push(format!(
            "y0={}",
            crate::report::format_number(Some(self.operating_output))
        ));
        parts.join(" ")
    }
}

/// `(lo, hi)` with duplicates removed.
fn ends(lo: f64, hi: f64) -> Vec<f64> {
    if (hi - lo).abs() > 0.0 {
        vec![lo, hi]
    } else {
        vec![lo]
    }
}

/// The linear model of `s` at operating output `y0` with gain factor `gf`.
///
/// - integrator `k/s`, first-order lag `k/(τs+1)` with its dead time: as is;
/// - vehicle: `m·δv̇ = c·δu − ρ·C_dA·|v₀|·δv` (rolling resistance is flat
///   above the creep speed): a lag of time constant `m/(ρ·C_dA·|v₀|)`, an
///   integrator `c/m` at standstill;
/// - rotor: `J·δω̇ = k·δu − (b + 2c·|ω₀|)·δω`, a lag (integrator if
///   `b + 2c·|ω₀|` is zero).
///
/// The actuator lag and the sensor delay are added as they are.
#[must_use]
pub fn linearise(s: &Scenario, y0: f64, gf: f64) -> LinearPlant {
    let actuator_tau_s = s.actuator.map_or(0.0, |a| a.tau_s);
    let sensor_delay = s.sensor.map_or(0, |p| p.delay_samples);
    let base = LinearPlant {
        integrating: true,
        gain: 1.0,
        tau_s: f64::INFINITY,
        dead_time_s: 0.0,
        actuator_tau_s,
        sensor_delay,
    };
    let lag_or_integrator = |force_gain: f64, inertia: f64, damping: f64| {
        if damping <= 0.0 {
            LinearPlant {
                gain: force_gain / inertia,
                ..base
            }
        } else {
            LinearPlant {
                integrating: false,
                gain: force_gain / damping,
                tau_s: inertia / damping,
                ..base
            }
        }
    };
    match &s.plant {
        PlantModel::Integrator { gain } => LinearPlant {
            gain: gain * gf,
            ..base
        },
        PlantModel::FirstOrderLag {
            gain,
            tau_s,
            dead_time_s,
        } => LinearPlant {
            integrating: false,
            gain: gain * gf,
            tau_s: *tau_s,
            dead_time_s: *dead_time_s,
            ..base
        },
        PlantModel::Vehicle(p) => lag_or_integrator(
            p.actuator_gain_n * gf,
            p.mass_kg,
            p.air_density_kg_m3 * p.cda_m2 * y0.abs(),
        ),
        PlantModel::Rotor(p) => lag_or_integrator(
            p.torque_gain_n_m * gf,
            p.inertia_kg_m2,
            p.viscous_n_m_s + 2.0 * p.drag_n_m_s2 * y0.abs(),
        ),
    }
}

/// The command that holds output `y` steady in `s` under the environment
/// `env` (disturbances and gain factor at one instant), in closed form:
///
/// - integrator `ẏ = k·g·u + d`: `u = −d/(k·g)`;
/// - first-order lag `τẏ = k·g·u + d − y`: `u = (y − d)/(k·g)`;
/// - vehicle: `c·g·u = C_rr·m·g₀·cos θ·sgn y + ½ρC_dA·y|y| + m·g₀·sin θ − F`;
/// - rotor: `k·g·u = b·y + c·y|y| − d`.
///
/// `None` when the command gain is zero or the result is not finite.
#[must_use]
pub fn hold_command(s: &Scenario, y: f64, env: &Environment) -> Option<f64> {
    let gf = env.gain_factor;
    let u = match &s.plant {
        PlantModel::Integrator { gain } => -env.load / (gain * gf),
        PlantModel::FirstOrderLag { gain, .. } => (y - env.load) / (gain * gf),
        PlantModel::Vehicle(p) => {
            let theta = (env.grade_pct / 100.0).atan();
            let g = STANDARD_GRAVITY_M_S2;
            let rolling = if y.abs() > 0.0 {
                p.crr * p.mass_kg * g * theta.cos() * y.signum()
            } else {
                0.0
            };
            let drag = 0.5 * p.air_density_kg_m3 * p.cda_m2 * y * y.abs();
            (rolling + drag + p.mass_kg * g * theta.sin() - env.force_n) / (p.actuator_gain_n * gf)
        }
        PlantModel::Rotor(p) => {
            (p.viscous_n_m_s * y + p.drag_n_m_s2 * y * y.abs() - env.load)
                / (p.torque_gain_n_m * gf)
        }
    };
    u.is_finite().then_some(u)
}

/// The plant's output rate at output `y` under a constant command `u`
/// applied directly (no actuator lag, no dead time), in `env`: the
/// right-hand side of the model's equation, exactly as the plant models
/// compute it (the vehicle's rolling resistance with its `tanh` creep
/// law).
#[must_use]
pub fn output_rate(s: &Scenario, y: f64, u: f64, env: &Environment) -> f64 {
    let gf = env.gain_factor;
    match &s.plant {
        PlantModel::Integrator { gain } => gain * gf * u + env.load,
        PlantModel::FirstOrderLag { gain, tau_s, .. } => (gain * gf * u + env.load - y) / tau_s,
        PlantModel::Vehicle(p) => {
            let theta = (env.grade_pct / 100.0).atan();
            let g = STANDARD_GRAVITY_M_S2;
            let force = p.actuator_gain_n * gf * u + env.force_n
                - p.crr * p.mass_kg * g * theta.cos() * (y / p.creep_speed_m_s).tanh()
                - 0.5 * p.air_density_kg_m3 * p.cda_m2 * y * y.abs()
                - p.mass_kg * g * theta.sin();
            force / p.mass_kg
        }
        PlantModel::Rotor(p) => {
            (p.torque_gain_n_m * gf * u + env.load
                - p.viscous_n_m_s * y
                - p.drag_n_m_s2 * y * y.abs())
                / p.inertia_kg_m2
        }
    }
}

/// `∂(output rate)/∂u` in `env`: what turns a command slew into the
/// plant's second derivative (jerk, for a vehicle) and a command step into
/// a rate step. `k·g` (integrator), `k·g/τ` (lag), `c·g/m` (vehicle),
/// `k·g/J` (rotor).
#[must_use]
pub fn command_gain(s: &Scenario, env: &Environment) -> f64 {
    let gf = env.gain_factor;
    match &s.plant {
        PlantModel::Integrator { gain } => gain * gf,
        PlantModel::FirstOrderLag { gain, tau_s, .. } => gain * gf / tau_s,
        PlantModel::Vehicle(p) => p.actuator_gain_n * gf / p.mass_kg,
        PlantModel::Rotor(p) => p.torque_gain_n_m * gf / p.inertia_kg_m2,
    }
}

/// Commands that hold output `y` steady in `s` with gain factor `gf`,
/// over the extremes of the disturbance profiles.
fn hold_commands(s: &Scenario, y: f64, gf: f64) -> Vec<f64> {
    let d = &s.setup.disturbances;
    let (load_lo, load_hi) = d.load.range();
    let (g_lo, g_hi) = d.grade_pct.range();
    let (f_lo, f_hi) = d.force_n.range();
    let mut out = Vec::new();
    for load in ends(load_lo, load_hi) {
        for grade_pct in ends(g_lo, g_hi) {
            for force_n in ends(f_lo, f_hi) {
                let env = Environment {
                    grade_pct,
                    force_n,
                    load,
                    gain_factor: gf,
                };
                out.extend(hold_command(s, y, &env));
            }
        }
    }
    out
}

/// The command that holds output `y` steady in `s` under the
/// disturbances and gain factor at time `t_s` (`None` if the gain is zero).
///
/// ```
/// use evenkeel_harness::Scenario;
/// use evenkeel_harness::design::equilibrium_command;
/// let tug = Scenario::demo()?;
/// assert_eq!(equilibrium_command(&tug, 0.0, 0.0), Some(0.0)); // at rest on the level
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
#[must_use]
pub fn equilibrium_command(s: &Scenario, y: f64, t_s: f64) -> Option<f64> {
    hold_command(s, y, &s.setup.disturbances.at(t_s))
}

/// Every corner of the uncertainty box of `s`, times the extremes of the
/// gain-factor profile, times the reference extremes (operating points)
/// for the nonlinear models.
#[must_use]
pub fn corners(s: &Scenario) -> Vec<Corner> {
    let dims = s.uncertainty.len();
    let (gf_lo, gf_hi) = s.setup.disturbances.gain_factor.range();
    let (r_lo, r_hi) = s.setup.reference.range();
    let nonlinear = matches!(s.plant, PlantModel::Vehicle(_) | PlantModel::Rotor(_));
    let points = if nonlinear {
        ends(r_lo, r_hi)
    } else {
        vec![0.5 * (r_lo + r_hi)]
    };
    let mut out = Vec::new();
    for mask in 0..(1usize << dims) {
        let mut v = s.clone();
        let mut values = Vec::with_capacity(dims);
        for (j, u) in s.uncertainty.iter().enumerate() {
            let (lo, hi) = u.dist.support();
            let x = if (mask >> j) & 1 == 1 { hi } else { lo };
            u.param.set(&mut v, x);
            values.push((u.param.key(), x));
        }
        for &gf in &ends(gf_lo, gf_hi) {
            // Hold commands over every operating point of the reference.
            let holds: Vec<f64> = ends(r_lo, r_hi)
                .into_iter()
                .flat_map(|y| hold_commands(&v, y, gf))
                .collect();
            let hold = holds
                .iter()
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
                    (a.min(x), b.max(x))
                });
            for &y0 in &points {
                out.push(Corner {
                    values: values.clone(),
                    gain_factor: gf,
                    operating_output: y0,
                    plant: linearise(&v, y0, gf),
                    hold,
                });
            }
        }
    }
    out
}

/// Largest rate of the reference over windows of `window_s`:
/// `max |r(t + w) − r(t)|/w` on the sample grid (a step counts as its
/// height over the window; a ramp as its slope).
#[must_use]
pub fn reference_rate(s: &Scenario, window_s: f64) -> f64 {
    let ts = s.controller.period_s;
    let w = window_s.max(ts);
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let n = (s.setup.duration_s / ts).round() as usize;
    let r = &s.setup.reference;
    #[allow(clippy::cast_precision_loss)]
    (0..n)
        .map(|k| {
            let t = k as f64 * ts;
            (r.at(t + w) - r.at(t)).abs() / w
        })
        .fold(0.0, f64::max)
}
