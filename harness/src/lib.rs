//! Host harness for `evenkeel`: closed-loop simulation against
//! floating-point plant models (`f64`, SI units).
//!
//! - [`plant`]: plant models behind the [`plant::Plant`] trait, actuator and sensor
//! - [`metrics`]: step-response, effort and saturation metrics of a trace
#![forbid(unsafe_code)]
#![deny(missing_docs)]
#![cfg_attr(not(test), deny(clippy::unwrap_used, clippy::expect_used))]

pub mod metrics;
pub mod plant;
