//! Golden-vector replay for evenkeel, shared by every board firmware and by
//! the host test `tests/tests/golden.rs`.
//!
//! The vector files (`shared/vectors/golden.ekv`, `schedule.ekv`, the
//! 16-bit set `slim16.ekv` and the 16-bit schedule set
//! `slim16_schedule.ekv`) are embedded and read in place ([`format`]);
//! each scenario's configuration is evaluated at compile time
//! ([`tables`]); [`replay::run`], [`replay::run_schedules`],
//! [`replay::run_slim16`] and [`replay::run_slim16_schedules`] drive the
//! controller through [`probe`] and
//! report every bit difference to a [`replay::Report`];
//! [`cost`] times single steps against a [`cost::Clock`]; [`floor`] is
//! the 16-bit step written by hand for the two cost workloads.
#![no_std]
#![forbid(unsafe_code)]
#![deny(missing_docs)]

pub mod cost;
pub mod floor;
pub mod format;
pub mod probe;
pub mod replay;

/// The fixed-point signal type the vectors use (Q16.16).
pub type Fixed = evenkeel::fixed::types::I16F16;
/// The 16-bit backend.
pub type Slim16 = evenkeel::Slim16;

/// Compile-time tables generated from the vector files by `build.rs`: one
/// module per file ([`tables::golden`], [`tables::schedule`],
/// [`tables::slim16`], [`tables::slim16_schedule`]).
pub mod tables {
    use evenkeel::fixed::types::I16F16;
    use evenkeel::{
        AntiWindup, Backend, Breakpoint, Config, FixedCoef, Layout, Schedule, Settings, Shape,
        Slim16, SlimCoef,
    };

    /// Breakpoint rows a schedule scenario may have.
    pub const SCHEDULE_ROWS: usize = 4;

    /// Something that takes a configuration of backend `B` in any
    /// compile-time layout (each scenario's layout is its own type), with
    /// its schedule if it has one.
    pub trait ConfigVisitor<B: Backend> {
        /// Take one configuration.
        fn visit<L: Layout>(
            &mut self,
            config: Config<B, L>,
            schedule: Option<&'static Schedule<B, SCHEDULE_ROWS, L>>,
        );
    }

    /// A gain from its stored form (mantissa · 2^-shift); for constant
    /// evaluation only (an unrepresentable gain stops the build).
    const fn gain(mantissa: i32, shift: u32) -> FixedCoef {
        let value = mantissa as f64 / (1u64 << shift) as f64;
        match FixedCoef::with_shift(value, shift) {
            Some(c) if c.mantissa() == mantissa => c,
            _ => panic!("vector file: gain does not round-trip"),
        }
    }

    /// A 16-bit gain from its stored form (mantissa · 2^-shift, the
    /// mantissa sign-extended); for constant evaluation only.
    const fn slim_gain(mantissa: i32, shift: u32) -> SlimCoef {
        let value = mantissa as f64 / (1u64 << shift) as f64;
        match SlimCoef::with_shift(value, shift) {
            Some(c) if c.mantissa() as i32 == mantissa => c,
            _ => panic!("vector file: 16-bit gain does not round-trip"),
        }
    }

    include!(concat!(env!("OUT_DIR"), "/tables.rs"));
}
