//! Host harness for `evenkeel`: closed-loop simulation of the real
//! controller against floating-point plant models (`f64`, SI units),
//! metrics, pass/fail criteria and reports.
//!
//! - [`scenario`]: a loop described in a TOML file or in code ([`Scenario`])
//! - [`plant`]: plant models behind the [`plant::Plant`] trait, actuator and sensor
//! - [`profile`]: piecewise references and disturbances
//! - [`sim`]: the closed loop, zero-order hold, override windows
//! - [`boundary`]: raw units (ADC and PWM counts, 16-bit scales) against physical ones
//! - [`metrics`]: step-response, effort and saturation metrics of a trace
//! - [`criteria`]: limits on metrics, evaluated into verdicts; [`undefined`]: why a metric has no value
//! - [`outcome`]: runs per backend, [`Outcome::assert_pass`]
//! - [`report`]: table, JSON, JUnit XML, CSV; [`plot`]: SVG/PNG
//! - [`files`]: derived file names, output checks, all-or-nothing writing
//! - [`compare`]: fixed point against `f64`, back to back, with tolerances from the formats
//! - [`fault`]: fault injection (sensor, actuator, payload) and its checks
//! - [`sweep`]: uncertain parameters, parallel sweeps, shards, envelopes
//! - [`design`]: gains and limits that pass at every corner, or why none can
//! - [`fit`]: the plant and its uncertainty box from logged tests
//! - [`map`]: the robustness map over two uncertain parameters
//! - [`replay`]: a device log against the host controller, bit for bit
//!
//! In a project's own tests, check a loop in a few lines:
//!
//! ```
//! use evenkeel_harness::Scenario;
//! let mut scenario = Scenario::demo()?; // or Scenario::from_path("loops/tug.toml")?
//! scenario.controller = scenario.controller.with_filter_time_s(0.05); // your settings
//! let outcome = scenario.run_all()?;    // fixed, slim16, f32 and f64
//! outcome.assert_pass();                // panics with the result table
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
//!
//! Engineering aid, not a certified safety function; ISO 26262 / IEC 61508
//! processes and local regulations govern real deployments.
#![forbid(unsafe_code)]
#![deny(missing_docs)]
#![cfg_attr(not(test), deny(clippy::unwrap_used, clippy::expect_used))]

pub mod boundary;
pub mod compare;
pub mod criteria;
pub mod design;
pub mod fault;
pub mod files;
pub mod fit;
pub mod map;
pub mod metrics;
pub mod outcome;
pub mod plant;
pub mod plot;
pub mod profile;
pub mod replay;
pub mod report;
pub mod scenario;
pub mod sim;
pub mod sweep;
pub mod undefined;

pub use outcome::{BackendKind, BackendRun, Outcome, RunError};
pub use report::CAUTION;
pub use scenario::{Scenario, ScenarioError};
