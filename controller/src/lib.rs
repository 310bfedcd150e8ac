#![doc = include_str!("../README.md")]
//!
//! # Sharing the controller with a timer interrupt
//!
//! `Controller::new` is a `const fn`, so a controller (here inside a whole
//! control loop) can be a `static` built by the compiler: no `Option`, no
//! run-time initialisation. The interrupt handler and `main` reach it
//! through a critical-section `Mutex<RefCell<_>>` and `try_borrow_mut`,
//! which cannot panic (`borrow_mut` would link a panic path). This is the
//! complete firmware `boards/m4f-systick/src/main.rs`; `boards/run` builds
//! it for a Cortex-M4F with a panic handler that names an undefined
//! function, so it links only if no panic path survives, and checks that no
//! decimal formatting is linked. (Shown, not run, here: it needs a
//! Cortex-M target.)
//!
//! ```ignore
#![doc = include_str!("../../boards/m4f-systick/src/main.rs")]
//! ```
#![no_std]
#![forbid(unsafe_code)]
#![deny(missing_docs)]
#![warn(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing,
    clippy::float_arithmetic
)]
// Float arithmetic is allowed where the module says so: configuration (run
// once, IEEE-exact + − × ÷) and the float backends. The fixed-point step
// (`controller` with `I16F16`, `q`) uses none.

#[allow(clippy::float_arithmetic)] // float backends
mod backend;
#[allow(clippy::float_arithmetic)] // configuration, run once
mod config;
mod controller;
mod error;
#[allow(clippy::float_arithmetic)] // shape computation from settings, run once
mod layout;
#[cfg(feature = "defmt")]
pub mod log;
#[cfg(feature = "monitor")]
#[allow(clippy::float_arithmetic)] // on-target diagnostics in f32, beside the step
pub mod monitor;
mod parts;
#[allow(clippy::float_arithmetic)] // const conversions from f64, run once
pub mod q;
pub mod record;
#[allow(clippy::float_arithmetic)] // conversions from physical units, run once
mod scaling;
#[allow(clippy::float_arithmetic)] // schedule construction, run once
mod schedule;
#[allow(clippy::float_arithmetic)] // configuration, run once
mod settings;
#[allow(clippy::float_arithmetic)] // configuration in const fns, run once
pub mod slim;
mod status;

pub use backend::Backend;
pub use config::{Config, SLEW_REL_TOLERANCE};
pub use controller::{Controller, Input, Output};
pub use error::{ConfigError, Setting};
pub use fixed;
pub use layout::{Features, Layout, Runtime, Shape};
pub use parts::{CoefParts, ConfigParts};
pub use q::FixedCoef;
pub use scaling::{Scale, Scaling};
pub use schedule::{Breakpoint, SCHEDULE_GAIN_TOLERANCE, Schedule, ScheduleError};
pub use settings::{AntiWindup, PerSample, Settings};
pub use slim::{Slim16, SlimCoef};
pub use status::Status;

/// Compile-time proof that the public types can be logged with `defmt`.
#[cfg(feature = "defmt")]
#[allow(dead_code)]
fn defmt_formats_every_public_type() {
    fn loggable<T: defmt::Format>() {}
    loggable::<Controller<fixed::types::I16F16>>();
    loggable::<Controller<f32>>();
    loggable::<Config<fixed::types::I16F16>>();
    loggable::<Output<fixed::types::I16F16>>();
    loggable::<Input<f32>>();
    loggable::<Settings>();
    loggable::<ConfigError>();
    loggable::<Status>();
    loggable::<FixedCoef>();
    loggable::<Breakpoint>();
    loggable::<Shape>();
    loggable::<Features>();
    loggable::<ScheduleError>();
    loggable::<Output<f64>>();
    loggable::<Input<fixed::types::I16F16>>();
}
