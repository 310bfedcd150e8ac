//! Scenarios: a loop described in a TOML file (schema in `docs/SCENARIO.md`)
//! or built in code, validated, ready to run on any backend.
//!
//! ```
//! use evenkeel_harness::Scenario;
//! let text = r#"
//! [scenario]
//! name = "tank"
//! duration_s = 20.0
//! [controller]
//! period_s = 0.05
//! kp = 2.0
//! ki_per_s = 1.0
//! output_min = -5.0
//! output_max = 5.0
//! [plant]
//! model = "integrator"
//! gain = 1.0
//! [reference]
//! segments = [{ to = 1.0, hold_s = 20.0 }]
//! [criteria]
//! overshoot_pct = { max = 20.0 }
//! "#;
//! let scenario = Scenario::from_toml(text, "tank.toml")?;
//! scenario.run_all()?.assert_pass();
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```

mod design_table;
mod error;
mod faults;
mod load;
mod sanity;
mod scale;
mod schema;
mod uncertainty;

use std::io::Read;
use std::path::Path;

use evenkeel::fixed::types::I16F16;
use evenkeel::{Backend, Settings, Slim16};

pub use design_table::{DesignSpec, LimitChoice};
pub use error::ScenarioError;
pub use load::{MAX_NAME_CHARS, MAX_SAMPLES};

use crate::criteria::Criterion;
use crate::outcome::{BackendKind, BackendRun, Outcome, RunError};
use crate::plant::{
    Actuated, Actuator, FirstOrderLag, Integrator, ParamError, Plant, Rotor, RotorParams, Sensor,
    SensorParams, Vehicle, VehicleParams,
};
use crate::sim::{Setup, simulate};
use crate::sweep::{SweepPlan, Uncertain};

/// Largest scenario file read, bytes (8 MiB): a file of 100 000
/// reference segments is about 3 MiB.
pub const MAX_SCENARIO_BYTES: usize = 8 << 20;

/// The built-in demo scenario (airport baggage tug), as shipped in
/// `shared/scenarios/baggage_tug.toml`.
pub const DEMO_TOML: &str = include_str!("../../../shared/scenarios/baggage_tug.toml");

/// The plant model and its parameters (`[plant]`).
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum PlantModel {
    /// `model = "integrator"`: [`Integrator`].
    Integrator {
        /// `gain`, output units per second per unit command.
        gain: f64,
    },
    /// `model = "first_order_lag"`: [`FirstOrderLag`].
    FirstOrderLag {
        /// `gain`, output units per unit command.
        gain: f64,
        /// `tau_s`.
        tau_s: f64,
        /// `dead_time_s`.
        dead_time_s: f64,
    },
    /// `model = "vehicle"`: [`Vehicle`].
    Vehicle(VehicleParams),
    /// `model = "rotor"`: [`Rotor`].
    Rotor(RotorParams),
}

/// Actuator lag and limits in front of the plant (`[actuator]`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ActuatorSpec {
    /// Lag time constant, s (0: none).
    pub tau_s: f64,
    /// Lower limit, command units.
    pub min: f64,
    /// Upper limit, command units.
    pub max: f64,
    /// Sub-steps per period for the plant behind it.
    pub substeps: u32,
}

/// Metric choices (`[metrics]`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MetricSettings {
    /// Settling band, fraction of the step size. Default 0.02.
    pub settling_band: f64,
    /// Window at the end for the steady-state error, s. Default 1.
    pub steady_window_s: f64,
    /// Error band of `disturbance_recovery_s`, measurement units; `None`:
    /// `settling_band` times the first reference step.
    pub disturbance_band: Option<f64>,
}

impl Default for MetricSettings {
    fn default() -> Self {
        Self {
            settling_band: 0.02,
            steady_window_s: 1.0,
            disturbance_band: None,
        }
    }
}

/// A validated scenario. All fields are public so that a test can load a
/// file and then, e.g., put its own controller settings in.
#[derive(Debug, Clone, PartialEq)]
pub struct Scenario {
    /// `scenario.name`.
    pub name: String,
    /// `scenario.description`.
    pub description: String,
    /// Where it came from (file path, `<built-in>`).
    pub source: String,
    /// Seed of the sensor noise.
    pub seed: u64,
    /// Unit of the measured output, for reports (`m/s`, `kPa`).
    pub output_unit: String,
    /// Unit of the command, for reports.
    pub command_unit: String,
    /// Controller settings in physical units (`[controller]`), with the
    /// raw units of `[scaling]` (`Scaling::NONE` without it).
    pub controller: Settings,
    /// Plant model.
    pub plant: PlantModel,
    /// Plant output at t = 0.
    pub initial_output: f64,
    /// Actuator in front of the plant.
    pub actuator: Option<ActuatorSpec>,
    /// Sensor between plant and controller.
    pub sensor: Option<SensorParams>,
    /// Duration, reference, disturbances, override windows, load shift.
    pub setup: Setup,
    /// Metric choices.
    pub metric_options: MetricSettings,
    /// Pass/fail criteria.
    pub criteria: Vec<Criterion>,
    /// Uncertain parameters (`[uncertainty]`), in file order; empty: none.
    pub uncertainty: Vec<Uncertain>,
    /// Sweep method, size and seed (`[sweep]`); `None`: not given.
    pub sweep: Option<SweepPlan>,
    /// Tolerances of the fixed-against-f64 comparison (`[compare]`).
    pub compare: crate::compare::CompareSpec,
    /// What `evenkeel design` may change and must keep (`[design]`).
    pub design: DesignSpec,
}

impl Scenario {
    /// Reads and validates a scenario file.
    ///
    /// # Errors
    /// A [`ScenarioError`] naming the file, and for invalid content the
    /// line, column and key, and what is allowed.
    pub fn from_path(path: impl AsRef<Path>) -> Result<Self, ScenarioError> {
        let path = path.as_ref();
        let file = crate::files::shown(path);
        let refuse = |message: String| ScenarioError {
            file: file.clone(),
            line: None,
            column: None,
            key: None,
            message,
        };
        let f =
            std::fs::File::open(path).map_err(|e| refuse(format!("cannot read the file: {e}")))?;
        let meta = f
            .metadata()
            .map_err(|e| refuse(format!("cannot read the file: {e}")))?;
        if !meta.is_file() {
            return Err(refuse(
                "not a regular file (a directory, device or pipe): give a scenario file".into(),
            ));
        }
        // Bounded memory: never read more than the limit (a file can grow
        // while it is read).
        let mut bytes = Vec::new();
        let limit = u64::try_from(MAX_SCENARIO_BYTES).unwrap_or(u64::MAX);
        std::io::Read::take(f, limit + 1)
            .read_to_end(&mut bytes)
            .map_err(|e| refuse(format!("cannot read the file: {e}")))?;
        if bytes.len() > MAX_SCENARIO_BYTES {
            return Err(refuse(format!(
                "the file is larger than {MAX_SCENARIO_BYTES} bytes ({} MiB), the most a scenario may have",
                MAX_SCENARIO_BYTES >> 20
            )));
        }
        let text = String::from_utf8(bytes).map_err(|e| {
            refuse(format!(
                "not UTF-8 text (invalid byte at offset {})",
                e.utf8_error().valid_up_to()
            ))
        })?;
        Self::from_toml(&text, &file)
    }

    /// Parses and validates scenario text; `file` names it in errors.
    ///
    /// # Errors
    /// As [`Scenario::from_path`].
    pub fn from_toml(text: &str, file: &str) -> Result<Self, ScenarioError> {
        load::parse(text, file)
    }

    /// The built-in demo ([`DEMO_TOML`]).
    ///
    /// # Errors
    /// None in practice (the demo is checked by the test suite).
    pub fn demo() -> Result<Self, ScenarioError> {
        Self::from_toml(DEMO_TOML, "<built-in baggage_tug.toml>")
    }

    /// A fresh plant (with its actuator) at the initial output.
    ///
    /// # Errors
    /// [`ParamError`] if a parameter set in code is out of range.
    pub fn build_plant(&self) -> Result<Box<dyn Plant>, ParamError> {
        let y0 = self.initial_output;
        let u0 = self.setup.initial_command.unwrap_or(0.0);
        let plant: Box<dyn Plant> = match self.plant {
            PlantModel::Integrator { gain } => {
                let mut p = Integrator::new(gain)?;
                p.reset(y0);
                Box::new(p)
            }
            PlantModel::FirstOrderLag {
                gain,
                tau_s,
                dead_time_s,
            } => {
                let mut p = FirstOrderLag::new(gain, tau_s, dead_time_s)?;
                // The command held before t = 0 fills the delay line.
                p.reset_with_input(y0, u0);
                Box::new(p)
            }
            PlantModel::Vehicle(p) => {
                let mut p = Vehicle::new(p)?;
                p.reset(y0);
                Box::new(p)
            }
            PlantModel::Rotor(p) => {
                let mut p = Rotor::new(p)?;
                p.reset(y0);
                Box::new(p)
            }
        };
        Ok(match self.actuator {
            None => plant,
            Some(a) => {
                let mut actuator = Actuator::new(a.tau_s, a.min, a.max)?;
                actuator.reset(u0);
                Box::new(Actuated::new(actuator, plant, a.substeps)?)
            }
        })
    }

    /// A fresh sensor (same seed every time), if one is modelled.
    ///
    /// # Errors
    /// [`ParamError`] if a parameter set in code is out of range.
    pub fn build_sensor(&self) -> Result<Option<Sensor>, ParamError> {
        self.sensor.map(|p| Sensor::new(p, self.seed)).transpose()
    }

    /// The controller settings backend `kind` runs with: the scenario's
    /// own, except that the 16-bit backend (`slim16`) of a scenario without
    /// `[scaling]` gets power-of-two scales covering the loop's range
    /// (±2¹⁴ raw for the measurement range, or the reference's range and the
    /// initial output; ±2¹⁵ raw for the output limits widened by their
    /// span, the integrator's range) and a measurement range cut to what
    /// 16 bits hold on that scale.
    ///
    /// ```
    /// use evenkeel_harness::{BackendKind, Scenario};
    /// let tug = Scenario::demo()?;
    /// assert!(tug.settings_on(BackendKind::Fixed).scaling.is_none());
    /// assert_eq!(tug.settings_on(BackendKind::Slim16).scaling.command.per_unit, 8192.0);
    /// # Ok::<(), Box<dyn std::error::Error>>(())
    /// ```
    #[must_use]
    pub fn settings_on(&self, kind: BackendKind) -> Settings {
        if kind == BackendKind::Slim16 && self.controller.scaling.is_none() {
            scale::sixteen_bit(self)
        } else {
            self.controller
        }
    }

    /// [`Scenario::settings_on`] for the backend type `B`.
    #[must_use]
    pub fn settings_for<B: Backend>(&self) -> Settings {
        self.settings_on(BackendKind::from_name(B::NAME).unwrap_or(BackendKind::Fixed))
    }

    /// Runs the scenario with backend `B` and evaluates the criteria.
    ///
    /// # Errors
    /// [`RunError`] when the backend refuses the settings or a part cannot
    /// be built.
    pub fn run<B: Backend>(&self) -> Result<BackendRun, RunError> {
        let mut plant = self.build_plant()?;
        let mut sensor = self.build_sensor()?;
        let rec = simulate::<B>(
            &self.settings_for::<B>(),
            &self.setup,
            plant.as_mut(),
            sensor.as_mut(),
        )
        .map_err(|error| self.refused(B::NAME, error))?;
        if let Some((state, k)) = first_non_finite(&rec) {
            let value = if state == "output" {
                rec.output[k]
            } else {
                rec.states
                    .iter()
                    .find(|(n, _)| *n == state)
                    .map_or(f64::NAN, |(_, c)| c[k])
            };
            return Err(RunError::NonFinite {
                backend: B::NAME,
                state: state.to_owned(),
                value,
                time_s: rec.time_s[k],
            });
        }
        BackendRun::assess(self, rec)
    }

    /// The refusal of `backend`, located at the setting in the scenario
    /// file when the file can be read again.
    pub(crate) fn refused(&self, backend: &'static str, error: evenkeel::ConfigError) -> RunError {
        let location = std::fs::read_to_string(&self.source)
            .ok()
            .and_then(|text| load::locate_refusal(&text, &self.source, backend, &error));
        match location {
            Some(location) => RunError::Refused {
                backend,
                error,
                location: Box::new(location),
            },
            None => RunError::Config { backend, error },
        }
    }

    /// Runs the scenario on backend `kind` ([`Scenario::run`]).
    ///
    /// # Errors
    /// As [`Scenario::run`].
    pub fn run_kind(&self, kind: BackendKind) -> Result<BackendRun, RunError> {
        match kind {
            BackendKind::Fixed => self.run::<I16F16>(),
            BackendKind::Slim16 => self.run::<Slim16>(),
            BackendKind::F32 => self.run::<f32>(),
            BackendKind::F64 => self.run::<f64>(),
        }
    }

    /// Whether backend `kind` accepts the settings it would run with
    /// ([`Scenario::settings_on`]).
    ///
    /// # Errors
    /// The controller's refusal.
    pub fn accepts(&self, kind: BackendKind) -> Result<(), evenkeel::ConfigError> {
        accepts(&self.settings_on(kind), kind)
    }

    /// Runs on each of `backends`.
    ///
    /// # Errors
    /// As [`Scenario::run`].
    pub fn run_on(&self, backends: &[BackendKind]) -> Result<Outcome, RunError> {
        let mut runs = Vec::with_capacity(backends.len());
        for &b in backends {
            runs.push(self.run_kind(b)?);
        }
        Ok(Outcome {
            scenario: self.clone(),
            runs,
        })
    }

    /// Runs on fixed, slim16, f32 and f64.
    ///
    /// # Errors
    /// As [`Scenario::run`].
    pub fn run_all(&self) -> Result<Outcome, RunError> {
        self.run_on(&BackendKind::ALL)
    }
}

/// Whether backend `kind` accepts `settings` as they are.
///
/// # Errors
/// The controller's refusal.
pub fn accepts(settings: &Settings, kind: BackendKind) -> Result<(), evenkeel::ConfigError> {
    use evenkeel::Config;
    match kind {
        BackendKind::Fixed => Config::<I16F16>::try_new(settings).map(drop),
        BackendKind::Slim16 => Config::<Slim16>::try_new(settings).map(drop),
        BackendKind::F32 => Config::<f32>::try_new(settings).map(drop),
        BackendKind::F64 => Config::<f64>::try_new(settings).map(drop),
    }
}

/// The first sample at which the plant's output or one of its states is
/// not a finite number: the state's name (or `output`) and the index.
fn first_non_finite(rec: &crate::sim::Recording) -> Option<(&'static str, usize)> {
    let output = rec.output.iter().position(|v| !v.is_finite());
    let states = rec
        .states
        .iter()
        .filter_map(|(name, c)| c.iter().position(|v| !v.is_finite()).map(|k| (*name, k)));
    states
        .chain(output.map(|k| ("output", k)))
        .min_by_key(|&(_, k)| k)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn demo_loads() {
        let s = Scenario::demo().unwrap();
        assert!(matches!(s.plant, PlantModel::Vehicle(_)));
        assert!(!s.criteria.is_empty());
    }
}
