//! What is fitted: the harness's own plant models (built by
//! [`Scenario::build_plant`], so what is fitted is exactly what `check`
//! simulates), driven by a log's input sample by sample (zero-order hold
//! over each logged interval; dead time not limited to whole samples), and
//! the output error against the log minimised over the model's
//! parameters.

use crate::plant::{Environment, STANDARD_GRAVITY_M_S2};
use crate::scenario::{ActuatorSpec, PlantModel, Scenario};
use crate::sweep::Param;

use super::lm::{Coordinate, minimise, solve};
use super::log::Log;
use super::stats::{CONFIDENCE, Whiteness, covariance, t_quantile_975, whiteness};

/// A plant model `fit` can fit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ModelKind {
    /// `integrator`: gain and a constant drift (load).
    Integrator,
    /// `first_order_lag`: gain, time constant, dead time and an offset
    /// (load).
    FirstOrderLag,
    /// `vehicle`: drive force gain, rolling resistance and drag area, with
    /// the mass known.
    Vehicle,
    /// `rotor`: torque gain, viscous friction, drag and a load torque, with
    /// the inertia known.
    Rotor,
}

impl ModelKind {
    /// The `[plant] model` name.
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::Integrator => "integrator",
            Self::FirstOrderLag => "first_order_lag",
            Self::Vehicle => "vehicle",
            Self::Rotor => "rotor",
        }
    }

    /// The kind named `name`.
    #[must_use]
    pub fn from_name(name: &str) -> Option<Self> {
        [
            Self::Integrator,
            Self::FirstOrderLag,
            Self::Vehicle,
            Self::Rotor,
        ]
        .into_iter()
        .find(|k| k.name() == name)
    }

    fn of(s: &Scenario) -> Self {
        match s.plant {
            PlantModel::Integrator { .. } => Self::Integrator,
            PlantModel::FirstOrderLag { .. } => Self::FirstOrderLag,
            PlantModel::Vehicle(_) => Self::Vehicle,
            PlantModel::Rotor(_) => Self::Rotor,
        }
    }
}

/// How a parameter is searched.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Scale {
    /// Strictly positive magnitude, searched as `ln|v|` with its sign kept.
    Log,
    /// `≥ 0`, searched as is with a bound at 0.
    NonNegative,
    /// Any value.
    Free,
}

/// Where a fitted value goes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Target {
    /// A plant or actuator value of `[uncertainty]`'s keys.
    Param(Param),
    /// A constant additive disturbance (`[disturbance.load]`).
    Load,
    /// The output at the log's first sample.
    InitialOutput,
}

impl Target {
    /// Scenario key of the value (`tau_s`, `load`, `initial_output`).
    #[must_use]
    pub fn key(self) -> &'static str {
        match self {
            Self::Param(p) => p.key(),
            Self::Load => "load",
            Self::InitialOutput => "initial_output",
        }
    }

    /// `true` for values of the plant itself (not the log's own offset
    /// and starting point).
    #[must_use]
    pub fn is_plant(self) -> bool {
        matches!(self, Self::Param(_))
    }
}

/// What to fit and what to hold.
#[derive(Debug, Clone, PartialEq)]
pub struct FitRequest {
    /// The model.
    pub model: ModelKind,
    /// Also fit an actuator lag (`[actuator] tau_s`).
    pub actuator_lag: bool,
    /// Values held, not fitted (`mass_kg`, `inertia_kg_m2`, or any fitted
    /// key), by scenario key.
    pub fixed: Vec<(String, f64)>,
    /// A scenario to take the model's other values from (actuator range,
    /// sub-steps, air density) and to write the fit into.
    pub base: Option<Scenario>,
}

/// One fitted value with its uncertainty.
#[derive(Debug, Clone, PartialEq)]
pub struct Estimate {
    /// Where it goes.
    pub target: Target,
    /// The value.
    pub value: f64,
    /// Standard deviation (linearised).
    pub std: f64,
    /// 95 % interval `(lo, hi)`.
    pub interval: (f64, f64),
}

impl Estimate {
    /// Half the interval's width over |value|.
    #[must_use]
    pub fn relative_half_width(&self) -> f64 {
        0.5 * (self.interval.1 - self.interval.0) / self.value.abs().max(1e-300)
    }
}

/// The fit of one log.
#[derive(Debug, Clone, PartialEq)]
pub struct LogFit {
    /// The log's name.
    pub name: String,
    /// Its file.
    pub file: String,
    /// Its label, if any.
    pub label: Option<String>,
    /// Samples.
    pub samples: usize,
    /// Median sample interval, s.
    pub dt_s: f64,
    /// The estimates, plant values first.
    pub estimates: Vec<Estimate>,
    /// Correlation matrix of the estimates.
    pub correlation: Vec<Vec<f64>>,
    /// RMS of the output error.
    pub residual_rms: f64,
    /// Residual RMS over the standard deviation of the measured output.
    pub normalised_error: f64,
    /// The whiteness test of the residuals.
    pub whiteness: Whiteness,
    /// Levenberg–Marquardt iterations (best start).
    pub iterations: usize,
    /// `true` when the iteration stopped on a convergence test.
    pub converged: bool,
    /// The simulated output at the optimum (for plots).
    pub fitted: Vec<f64>,
    /// Warnings (identifiability, whiteness, the log's own).
    pub warnings: Vec<String>,
    /// Why the fit cannot be handed over (empty: it can).
    pub problems: Vec<String>,
}

/// Largest normalised output error (residual RMS over the output's
/// standard deviation) a fit may have: 0.3 leaves 9 % of the output's
/// variance unexplained.
pub const MAX_NORMALISED_ERROR: f64 = 0.3;

/// Largest relative half-width of a plant value's 95 % interval before it
/// counts as not identified (a warning above half of it).
pub const MAX_RELATIVE_HALF_WIDTH: f64 = 1.0;

#[derive(Debug, Clone, Copy)]
struct Knob {
    target: Target,
    scale: Scale,
    sign: f64,
}

/// The scenario the model is simulated with (the base's, else a minimal
/// one of the asked model), with the actuator when asked for.
fn template(req: &FitRequest) -> Result<Scenario, String> {
    if let Some(b) = &req.base {
        if ModelKind::of(b) != req.model {
            return Err(format!(
                "the scenario's model is `{}`, not `{}`",
                ModelKind::of(b).name(),
                req.model.name()
            ));
        }
        let mut s = b.clone();
        if req.actuator_lag && s.actuator.is_none() {
            s.actuator = Some(ActuatorSpec {
                tau_s: 0.1,
                min: -1e12,
                max: 1e12,
                substeps: 4,
            });
        }
        return Ok(s);
    }
    let plant = match req.model {
        ModelKind::Integrator => "model = \"integrator\"\ngain = 1.0",
        ModelKind::FirstOrderLag => {
            "model = \"first_order_lag\"\ngain = 1.0\ntau_s = 1.0\ndead_time_s = 0.0"
        }
        ModelKind::Vehicle => {
            "model = \"vehicle\"\nmass_kg = 1000.0\nactuator_gain_n = 1000.0\nsubsteps = 4"
        }
        ModelKind::Rotor => {
            "model = \"rotor\"\ninertia_kg_m2 = 1.0\ntorque_gain_n_m = 1.0\nviscous_n_m_s = 0.0\ndrag_n_m_s2 = 0.0\nsubsteps = 4"
        }
    };
    let actuator = if req.actuator_lag {
        "[actuator]\ntau_s = 0.1\nmin = -1e12\nmax = 1e12\nsubsteps = 4\n"
    } else {
        ""
    };
    let text = format!(
        "[scenario]\nname = \"fit\"\nduration_s = 1.0\n[controller]\nperiod_s = 0.01\nkp = 1.0\nki_per_s = 0.0\noutput_min = -1e9\noutput_max = 1e9\n[plant]\n{plant}\n{actuator}[reference]\nsegments = [{{ hold_s = 1.0 }}]\n[criteria]\niae = {{ max = 1e300 }}\n"
    );
    Scenario::from_toml(&text, "<fit template>").map_err(|e| e.to_string())
}

/// The knobs of `req` (fixed keys left out), in report order.
fn knobs(req: &FitRequest) -> Vec<Knob> {
    use Scale::{Free, Log, NonNegative};
    let p = |param, scale| Knob {
        target: Target::Param(param),
        scale,
        sign: 1.0,
    };
    let mut out = match req.model {
        ModelKind::Integrator => vec![p(Param::Gain, Log)],
        ModelKind::FirstOrderLag => vec![
            p(Param::Gain, Log),
            p(Param::TauS, Log),
            p(Param::DeadTimeS, NonNegative),
        ],
        ModelKind::Vehicle => vec![
            p(Param::ActuatorGainN, Log),
            p(Param::Crr, NonNegative),
            p(Param::CdA, NonNegative),
        ],
        ModelKind::Rotor => vec![
            p(Param::TorqueGain, Log),
            p(Param::Viscous, NonNegative),
            p(Param::Drag, NonNegative),
        ],
    };
    if req.actuator_lag {
        out.push(p(Param::ActuatorTauS, Log));
    }
    if req.model != ModelKind::Vehicle {
        out.push(Knob {
            target: Target::Load,
            scale: Free,
            sign: 1.0,
        });
    }
    out.push(Knob {
        target: Target::InitialOutput,
        scale: Free,
        sign: 1.0,
    });
    out.retain(|k| !req.fixed.iter().any(|(key, _)| key == k.target.key()));
    out
}

/// A model and a log, ready to be simulated at any parameter vector.
struct Problem<'a> {
    base: Scenario,
    knobs: Vec<Knob>,
    log: &'a Log,
    load: f64,
    initial: f64,
}

impl Problem<'_> {
    /// Physical values of coordinates `x`.
    fn values(&self, x: &[f64]) -> Vec<f64> {
        self.knobs
            .iter()
            .zip(x)
            .map(|(k, &v)| match k.scale {
                Scale::Log => k.sign * v.exp(),
                Scale::NonNegative | Scale::Free => v,
            })
            .collect()
    }

    /// Coordinates of physical values.
    fn coords(&self, values: &[f64]) -> Vec<f64> {
        self.knobs
            .iter()
            .zip(values)
            .map(|(k, &v)| match k.scale {
                Scale::Log => v.abs().max(1e-300).ln(),
                Scale::NonNegative => v.max(0.0),
                Scale::Free => v,
            })
            .collect()
    }

    /// The simulated output at physical `values`.
    fn simulate(&self, values: &[f64]) -> Option<Vec<f64>> {
        let mut s = self.base.clone();
        let mut load = self.load;
        let mut y0 = self.initial;
        for (k, &v) in self.knobs.iter().zip(values) {
            match k.target {
                Target::Param(p) => p.set(&mut s, v),
                Target::Load => load = v,
                Target::InitialOutput => y0 = v,
            }
        }
        let log = self.log;
        s.initial_output = y0;
        s.setup.initial_command = log.input.first().copied();
        let mut plant = s.build_plant().ok()?;
        let env = Environment {
            grade_pct: 0.0,
            force_n: 0.0,
            load,
            gain_factor: 1.0,
        };
        let mut y = Vec::with_capacity(log.time_s.len());
        y.push(plant.output());
        for k in 1..log.time_s.len() {
            plant.advance(log.input[k - 1], &env, log.time_s[k] - log.time_s[k - 1]);
            let v = plant.output();
            if !v.is_finite() {
                return None;
            }
            y.push(v);
        }
        Some(y)
    }

    fn residuals(&self, x: &[f64]) -> Option<Vec<f64>> {
        let y = self.simulate(&self.values(x))?;
        Some(y.iter().zip(&self.log.output).map(|(a, b)| a - b).collect())
    }
}

/// Ordinary least squares `X·β ≈ y` by the normal equations.
fn regress(rows: &[Vec<f64>], y: &[f64]) -> Option<(Vec<f64>, f64)> {
    let p = rows.first()?.len();
    let mut a = vec![vec![0.0; p]; p];
    let mut b = vec![0.0; p];
    for (r, &yi) in rows.iter().zip(y) {
        for i in 0..p {
            b[i] += r[i] * yi;
            for j in 0..p {
                a[i][j] += r[i] * r[j];
            }
        }
    }
    let beta = solve(&a, &b)?;
    let ssr = rows
        .iter()
        .zip(y)
        .map(|(r, yi)| (r.iter().zip(&beta).map(|(p, q)| p * q).sum::<f64>() - yi).powi(2))
        .sum();
    Some((beta, ssr))
}

/// Starting values from a linear regression on the log's differences
/// (an equation-error fit: cheap, biased by noise, good enough to start
/// the output-error fit from). Returns `(values by target, starts of the
/// dead time to try)`.
fn initial_guess(s: &Scenario, req: &FitRequest, log: &Log) -> (Vec<(Target, f64)>, Vec<f64>) {
    let dt = log.median_dt_s();
    let (u, y) = (&log.input, &log.output);
    let n = y.len();
    let y0 = y.iter().take(3).sum::<f64>() / y.len().min(3) as f64;
    let mut guess = vec![(Target::InitialOutput, y0)];
    let mut dead = vec![0.0];
    let span = y.iter().fold(f64::NEG_INFINITY, |a, &b| a.max(b))
        - y.iter().fold(f64::INFINITY, |a, &b| a.min(b));
    let du = u.iter().fold(f64::NEG_INFINITY, |a, &b| a.max(b))
        - u.iter().fold(f64::INFINITY, |a, &b| a.min(b));
    match req.model {
        ModelKind::Integrator => {
            let rows: Vec<Vec<f64>> = (0..n - 1).map(|k| vec![u[k], 1.0]).collect();
            let dy: Vec<f64> = (0..n - 1)
                .map(|k| (y[k + 1] - y[k]) / (log.time_s[k + 1] - log.time_s[k]))
                .collect();
            let (b, _) = regress(&rows, &dy).unwrap_or((vec![span / du.max(1e-300), 0.0], 0.0));
            guess.push((
                Target::Param(Param::Gain),
                nonzero(b[0], span / du.max(1e-300)),
            ));
            guess.push((Target::Load, b[1]));
        }
        ModelKind::FirstOrderLag => {
            let max_d = (n / 3).min(400);
            let mut best: Option<(f64, usize, Vec<f64>)> = None;
            for d in 0..=max_d {
                // Every candidate delay on the same rows, the input before
                // the log taken as its first value (as the plant model
                // does), so the rows before a step count for each.
                let delayed = |k: usize| if k >= d { u[k - d] } else { u[0] };
                let rows: Vec<Vec<f64>> = (0..n - 1).map(|k| vec![y[k], delayed(k), 1.0]).collect();
                let target: Vec<f64> = (0..n - 1).map(|k| y[k + 1]).collect();
                if let Some((b, ssr)) = regress(&rows, &target) {
                    #[allow(clippy::cast_precision_loss)]
                    let per = ssr / target.len() as f64;
                    if b[0] > 0.0 && b[0] < 1.0 && best.as_ref().is_none_or(|x| per < x.0) {
                        best = Some((per, d, b));
                    }
                }
            }
            let (d, a, b, c) = best
                .map_or((0, 0.9, span / du.max(1e-300) * 0.1, 0.0), |(_, d, b)| {
                    (d, b[0], b[1], b[2])
                });
            let tau = -dt / a.ln();
            let gain = nonzero(b / (1.0 - a), span / du.max(1e-300));
            guess.push((Target::Param(Param::Gain), gain));
            guess.push((Target::Param(Param::TauS), tau.max(dt * 0.1)));
            #[allow(clippy::cast_precision_loss)]
            let theta = d as f64 * dt;
            guess.push((Target::Param(Param::DeadTimeS), theta));
            guess.push((Target::Load, c / (1.0 - a)));
            dead = vec![theta, 0.5 * theta, 1.5 * theta + dt];
        }
        ModelKind::Vehicle => {
            let (mass, creep, rho) = match &s.plant {
                PlantModel::Vehicle(p) => (p.mass_kg, p.creep_speed_m_s, p.air_density_kg_m3),
                _ => (1000.0, 0.05, 1.225),
            };
            let rows: Vec<Vec<f64>> = (0..n - 1)
                .map(|k| vec![u[k], (y[k] / creep).tanh(), y[k] * y[k].abs()])
                .collect();
            let dy: Vec<f64> = (0..n - 1)
                .map(|k| (y[k + 1] - y[k]) / (log.time_s[k + 1] - log.time_s[k]))
                .collect();
            let (b, _) = regress(&rows, &dy).unwrap_or((vec![1.0, 0.0, 0.0], 0.0));
            guess.push((
                Target::Param(Param::ActuatorGainN),
                nonzero(mass * b[0], mass),
            ));
            guess.push((
                Target::Param(Param::Crr),
                (-b[1] / STANDARD_GRAVITY_M_S2).max(0.0),
            ));
            guess.push((
                Target::Param(Param::CdA),
                (-2.0 * mass * b[2] / rho.max(1e-9)).max(0.0),
            ));
        }
        ModelKind::Rotor => {
            let inertia = match &s.plant {
                PlantModel::Rotor(p) => p.inertia_kg_m2,
                _ => 1.0,
            };
            let rows: Vec<Vec<f64>> = (0..n - 1)
                .map(|k| vec![u[k], 1.0, y[k], y[k] * y[k].abs()])
                .collect();
            let dy: Vec<f64> = (0..n - 1)
                .map(|k| (y[k + 1] - y[k]) / (log.time_s[k + 1] - log.time_s[k]))
                .collect();
            let (b, _) = regress(&rows, &dy).unwrap_or((vec![1.0, 0.0, 0.0, 0.0], 0.0));
            guess.push((
                Target::Param(Param::TorqueGain),
                nonzero(inertia * b[0], inertia),
            ));
            guess.push((Target::Load, inertia * b[1]));
            guess.push((Target::Param(Param::Viscous), (-inertia * b[2]).max(0.0)));
            guess.push((Target::Param(Param::Drag), (-inertia * b[3]).max(0.0)));
        }
    }
    if req.actuator_lag {
        guess.push((Target::Param(Param::ActuatorTauS), 3.0 * dt));
    }
    (guess, dead)
}

fn nonzero(x: f64, fallback: f64) -> f64 {
    if x.is_finite() && x != 0.0 {
        x
    } else if fallback.is_finite() && fallback != 0.0 {
        fallback
    } else {
        1.0
    }
}

/// Fits one log.
///
/// # Errors
/// A message if the model cannot be set up (a model that differs from the
/// base scenario's, a value to hold that the model does not have, the
/// mass or inertia unknown) or cannot be simulated at the starting point.
#[allow(clippy::too_many_lines)]
pub fn fit_log(req: &FitRequest, log: &Log) -> Result<LogFit, String> {
    let mut base = template(req)?;
    for (key, v) in &req.fixed {
        let param = Param::from_key(key).ok_or_else(|| format!("--fix {key}: not a plant value of the scenario keys (see docs/SCENARIO.md, [uncertainty])"))?;
        if let Some(why) = param.not_applicable(&base) {
            return Err(format!("--fix {key}: {why}"));
        }
        param.set(&mut base, *v);
    }
    let held = |key: &str| req.fixed.iter().any(|(k, _)| k == key);
    match req.model {
        ModelKind::Vehicle if req.base.is_none() && !held("mass_kg") => {
            return Err("the speed alone does not tell mass from drive force (only their ratio): give the mass with --fix mass_kg=VALUE or take it from --scenario".into());
        }
        ModelKind::Rotor if req.base.is_none() && !held("inertia_kg_m2") => {
            return Err("the speed alone does not tell inertia from torque gain (only their ratio): give the inertia with --fix inertia_kg_m2=VALUE or take it from --scenario".into());
        }
        _ => {}
    }
    let mut knobs = knobs(req);
    let (guess, dead_starts) = initial_guess(&base, req, log);
    let value_of = |t: Target| guess.iter().find(|(g, _)| *g == t).map_or(0.0, |g| g.1);
    for k in &mut knobs {
        if k.scale == Scale::Log {
            k.sign = value_of(k.target).signum();
            if k.sign == 0.0 {
                k.sign = 1.0;
            }
        }
    }
    let problem = Problem {
        load: 0.0,
        initial: value_of(Target::InitialOutput),
        knobs,
        log,
        base,
    };
    let dt = log.median_dt_s();
    let y_span = log
        .output
        .iter()
        .fold(0.0f64, |a, &b| a.max(b.abs()))
        .max(1e-12);
    let duration = log.time_s.last().copied().unwrap_or(1.0) - log.time_s[0];
    let coords: Vec<Coordinate> = problem
        .knobs
        .iter()
        .map(|k| match (k.scale, k.target) {
            (Scale::Log, _) => Coordinate {
                lo: -700.0,
                hi: 700.0,
                h: 1e-5,
            },
            (Scale::NonNegative, Target::Param(Param::DeadTimeS)) => Coordinate {
                lo: 0.0,
                hi: duration,
                h: 1e-4 * dt,
            },
            (Scale::NonNegative, _) => Coordinate {
                lo: 0.0,
                hi: 1e12,
                h: 1e-6 * value_of(k.target).abs().max(1e-6),
            },
            (Scale::Free, _) => Coordinate {
                lo: -1e15,
                hi: 1e15,
                h: 1e-6 * y_span,
            },
        })
        .collect();
    let starts: Vec<Vec<f64>> = dead_starts
        .iter()
        .map(|&theta| {
            let values: Vec<f64> = problem
                .knobs
                .iter()
                .map(|k| {
                    if k.target == Target::Param(Param::DeadTimeS) {
                        theta
                    } else {
                        value_of(k.target)
                    }
                })
                .collect();
            problem.coords(&values)
        })
        .collect();
    let f = |x: &[f64]| problem.residuals(x);
    let best = starts
        .iter()
        .filter_map(|x0| minimise(&f, x0, &coords, 300))
        .min_by(|a, b| a.ssr.total_cmp(&b.ssr))
        .ok_or_else(|| {
            format!(
                "{}: the model cannot be simulated from the starting values",
                log.file
            )
        })?;
    let values = problem.values(&best.x);
    let n = log.output.len();
    let p = values.len();
    let t = t_quantile_975(n.saturating_sub(p));
    let cov = covariance(&best.jacobian, &best.residuals);
    let mut warnings = log.warnings.clone();
    let mut problems = Vec::new();
    let estimates: Vec<Estimate> = problem
        .knobs
        .iter()
        .enumerate()
        .map(|(i, k)| {
            let v = values[i];
            let sx = cov
                .as_ref()
                .map_or(f64::INFINITY, |c| c[i][i].max(0.0).sqrt());
            let (std, interval) = match k.scale {
                Scale::Log => {
                    let (a, b) = (v * (-t * sx).exp(), v * (t * sx).exp());
                    (v.abs() * sx, (a.min(b), a.max(b)))
                }
                Scale::NonNegative => (sx, ((v - t * sx).max(0.0), v + t * sx)),
                Scale::Free => (sx, (v - t * sx, v + t * sx)),
            };
            Estimate {
                target: k.target,
                value: v,
                std,
                interval,
            }
        })
        .collect();
    let correlation: Vec<Vec<f64>> = match &cov {
        Some(c) => (0..p)
            .map(|i| {
                (0..p)
                    .map(|j| c[i][j] / (c[i][i] * c[j][j]).sqrt().max(1e-300))
                    .collect()
            })
            .collect(),
        None => vec![vec![f64::NAN; p]; p],
    };
    #[allow(clippy::cast_precision_loss)]
    let rms = (best.ssr / n as f64).sqrt();
    #[allow(clippy::cast_precision_loss)]
    let mean = log.output.iter().sum::<f64>() / n as f64;
    #[allow(clippy::cast_precision_loss)]
    let std_y = (log.output.iter().map(|y| (y - mean).powi(2)).sum::<f64>() / n as f64).sqrt();
    let normalised_error = rms / std_y.max(1e-300);
    let white = whiteness(&best.residuals);
    if cov.is_none() {
        problems.push("the parameters are not identifiable from this log: the Jacobian at the optimum is singular (the input does not excite every parameter)".into());
    }
    for (i, e) in estimates.iter().enumerate() {
        if !e.target.is_plant() {
            continue;
        }
        let w = e.relative_half_width();
        let scale = problem.knobs[i].scale;
        if scale == Scale::Log && w > MAX_RELATIVE_HALF_WIDTH {
            problems.push(format!(
                "{} is not identifiable from this log: its {:.0} % interval is [{}, {}], more than ±{:.0} % of the value",
                e.target.key(),
                100.0 * CONFIDENCE,
                crate::report::format_number(Some(e.interval.0)),
                crate::report::format_number(Some(e.interval.1)),
                100.0 * MAX_RELATIVE_HALF_WIDTH
            ));
        } else if e.value != 0.0 && w > 0.5 * MAX_RELATIVE_HALF_WIDTH {
            warnings.push(format!(
                "{} is poorly identified: its {:.0} % interval is [{}, {}]",
                e.target.key(),
                100.0 * CONFIDENCE,
                crate::report::format_number(Some(e.interval.0)),
                crate::report::format_number(Some(e.interval.1))
            ));
        }
    }
    for i in 0..p {
        for j in i + 1..p {
            let r = correlation[i][j];
            if r.abs() > 0.99 && estimates[i].target.is_plant() && estimates[j].target.is_plant() {
                warnings.push(format!(
                    "{} and {} are {:.3} correlated: this log barely tells them apart",
                    estimates[i].target.key(),
                    estimates[j].target.key(),
                    r
                ));
            }
        }
    }
    // The output change the input makes, against the noise.
    if let Some(g) = estimates
        .iter()
        .find(|e| matches!(e.target, Target::Param(Param::Gain)))
    {
        let du = log.input.iter().fold(f64::NEG_INFINITY, |a, &b| a.max(b))
            - log.input.iter().fold(f64::INFINITY, |a, &b| a.min(b));
        let moved = if req.model == ModelKind::Integrator {
            g.value.abs() * du * dt * 10.0
        } else {
            g.value.abs() * du
        };
        if req.model == ModelKind::FirstOrderLag && moved < 5.0 * rms {
            warnings.push(format!(
                "the input change moves the output by about {}, only {:.1} times the residual noise {}: a larger step would identify the plant better",
                crate::report::format_number(Some(moved)),
                moved / rms.max(1e-300),
                crate::report::format_number(Some(rms))
            ));
        }
    }
    if normalised_error > MAX_NORMALISED_ERROR {
        problems.push(format!(
            "the fitted model does not reproduce the log: residual RMS {} is {:.0} % of the output's spread (at most {:.0} %); another model (or --actuator-lag) may fit",
            crate::report::format_number(Some(rms)),
            100.0 * normalised_error,
            100.0 * MAX_NORMALISED_ERROR
        ));
    }
    if !white.white() {
        warnings.push(format!(
            "the residuals are not white (Ljung–Box Q = {:.1} over {} lags, 95 % limit {:.1}): dynamics or disturbances the model does not have, so the intervals are optimistic",
            white.q, white.lags, white.critical
        ));
    }
    if !best.converged {
        warnings.push(format!(
            "the minimisation stopped at its iteration limit ({}) before a convergence test was met",
            best.iterations
        ));
    }
    let fitted = problem.simulate(&values).unwrap_or_default();
    Ok(LogFit {
        name: log.name.clone(),
        file: log.file.clone(),
        label: log.label.clone(),
        samples: n,
        dt_s: dt,
        estimates,
        correlation,
        residual_rms: rms,
        normalised_error,
        whiteness: white,
        iterations: best.iterations,
        converged: best.converged,
        fitted,
        warnings,
        problems,
    })
}
