//! The evenkeel controller for C firmware.
//!
//! An `extern "C"` interface with one prefix (`ekc_`, types `Ekc…`,
//! constants `EKC_…`) over [`evenkeel::Controller`], for the Q16.16
//! backend (`EkcLoop`, `int32_t` signals) and the 16-bit backend
//! (`EkcSlimLoop`, `int16_t` signals). The C side owns the storage: a
//! struct of published size and alignment that can be a `static`. Every
//! function checks its pointers and returns an error code (a step returns
//! it packed with command and status in one `u64`, `EkcStepResult`);
//! nothing allocates or panics. The header `include/evenkeel.h` is generated from
//! this crate by cbindgen (a test fails when the committed one is stale).
//!
//! A configuration reaches the target in one of two ways: from physical
//! settings (`ekc_configure`, which computes in `f64`: host or FPU cores),
//! or as precomputed integers (`ekc_load` of an `EkcCoefficients`, a
//! `const` initialiser written by `evenkeel design --c-out` or `evenkeel
//! c-config`), which needs no floating point at all.
//!
//! Module map: [`codes`] error codes and messages; [`storage`] the
//! C-owned controller storage and every pointer access (all the `unsafe`
//! of the crate); [`types`] the C structs; [`fixed_api`], [`slim_api`] and
//! [`common_api`] the functions; [`initializer`] the C text of a configuration.
//!
//! CAUTION: an engineering aid, not a certified safety function;
//! functional-safety processes (e.g. ISO 26262, IEC 61508) and local
//! regulations govern any real deployment.
#![no_std]
#![deny(missing_docs, unsafe_op_in_unsafe_fn)]
#![warn(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing,
    clippy::undocumented_unsafe_blocks,
    clippy::multiple_unsafe_ops_per_block
)]

// On a hosted target the standard library provides the panic handler (a
// panic inside an `extern "C"` function aborts; none is reachable).
#[cfg(not(target_os = "none"))]
extern crate std;

pub mod codes;
pub mod common_api;
mod engine;
pub mod fixed_api;
pub mod initializer;
pub mod slim_api;
pub mod storage;
pub mod types;

pub use codes::EkcCode;

/// On a bare-metal target: the link fails if any panic path survives
/// optimisation, naming `ekc_firmware_has_a_panic_path` (the same proof as
/// the Rust boards').
#[cfg(target_os = "none")]
#[panic_handler]
fn panic(_: &core::panic::PanicInfo<'_>) -> ! {
    unsafe extern "C" {
        /// Deliberately defined nowhere.
        fn ekc_firmware_has_a_panic_path() -> !;
    }
    // SAFETY: never runs: the firmware does not link while this call is
    // reachable, and once linked, no code leads here.
    unsafe { ekc_firmware_has_a_panic_path() }
}
