//! Golden-vector replay for evenkeel, shared by every board firmware and by
//! the host test `tests/tests/golden.rs`.
//!
//! The vector file (`shared/vectors/golden.ekv`) is embedded and read in
//! place ([`format`]); each scenario's configuration is evaluated at compile
//! time ([`tables`]); [`replay::run`] drives the controller through
//! [`probe`] and reports every bit difference to a [`replay::Report`];
//! [`cost`] times single steps against a [`cost::Clock`].
#![no_std]
#![forbid(unsafe_code)]
#![deny(missing_docs)]

pub mod cost;
pub mod format;
pub mod probe;
pub mod replay;

/// The fixed-point signal type the vectors use (Q16.16).
pub type Fixed = evenkeel::fixed::types::I16F16;
/// The 16-bit backend.
pub type Slim16 = evenkeel::Slim16;

/// Compile-time tables generated from the vector files by `build.rs`: one
/// module per file ([`tables::golden`], [`tables::schedule`]).
pub mod tables {
    use evenkeel::fixed::types::I16F16;
    use evenkeel::{AntiWindup, Breakpoint, Config, FixedCoef, Layout, Schedule, Settings, Shape};

    /// Breakpoint rows a schedule scenario may have.
    pub const SCHEDULE_ROWS: usize = 4;

    /// Something that takes a configuration of any compile-time layout (each
    /// scenario's layout is its own type), with its schedule if it has one.
    pub trait ConfigVisitor {
        /// Take one configuration.
        fn visit<L: Layout>(
            &mut self,
            config: Config<I16F16, L>,
            schedule: Option<&'static Schedule<I16F16, SCHEDULE_ROWS, L>>,
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

    include!(concat!(env!("OUT_DIR"), "/tables.rs"));
}
