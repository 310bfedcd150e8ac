//! The functions of the Q16.16 controller `EkcLoop` (`int32_t` signals,
//! value · 65 536).

use crate::codes::EkcCode;
use crate::engine;
use crate::storage::EkcLoop;
use crate::types::{EkcCoef, EkcCoefficients, EkcExtra, EkcSettings, EkcStepResult};

/// Compute the Q16.16 coefficients of `settings` into `*out` (`double`
/// arithmetic: a host tool, or a core with a double-precision FPU). On
/// error `*out` is unchanged and the code names the setting.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_compute(
    settings: *const EkcSettings,
    out: *mut EkcCoefficients,
) -> EkcCode {
    engine::compute::<EkcLoop>(settings, out)
}

/// Configure `*pi` from physical settings (as `ekc_compute` then
/// `ekc_load`): a controller at rest. On error `*pi` is unchanged.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_configure(pi: *mut EkcLoop, settings: *const EkcSettings) -> EkcCode {
    engine::configure::<EkcLoop>(pi, settings)
}

/// Configure `*pi` from precomputed coefficients (format
/// `EKC_FORMAT_Q16_16`), checked with integer comparisons only: no
/// floating point. A controller at rest. On error `*pi` is unchanged.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_load(
    pi: *mut EkcLoop,
    coefficients: *const EkcCoefficients,
) -> EkcCode {
    engine::load::<EkcLoop>(pi, coefficients)
}

/// One control step with setpoint and measurement (Q16.16 bits (value · EKC_ONE)) alone:
/// `ekc_step_with` with `EKC_NO_EXTRA` (no feed-forward, no applied value).
/// Returns code, command and status in one `EkcStepResult`; on
/// error (in this order: `pi` null `EKC_ERR_NULL`, misaligned
/// `EKC_ERR_MISALIGNED`, never configured `EKC_ERR_UNCONFIGURED`) nothing
/// changes.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_step(
    pi: *mut EkcLoop,
    setpoint: i32,
    measurement: i32,
) -> EkcStepResult {
    engine::step::<EkcLoop>(pi, setpoint, measurement, ekc_step_with)
}

/// One control step with setpoint, measurement and the optional inputs
/// in `*extra`: feed-forward and, if known, the value the actuator applied
/// of the previous command. Returns code, command and status in one
/// `EkcStepResult`. The checks, in this order (the first that fails
/// gives the code, and nothing changes): `extra` null (`EKC_ERR_NULL`) or
/// misaligned (`EKC_ERR_MISALIGNED`), `pi` null or misaligned, `pi` never
/// configured (`EKC_ERR_UNCONFIGURED`).
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_step_with(
    pi: *mut EkcLoop,
    setpoint: i32,
    measurement: i32,
    extra: *const EkcExtra,
) -> EkcStepResult {
    engine::step_with::<EkcLoop>(pi, setpoint, measurement, extra)
}

/// Take over bumplessly from `actuator` (the value another source drives):
/// the next step's command continues from it.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_engage(pi: *mut EkcLoop, actuator: i32) -> EkcCode {
    engine::engage::<EkcLoop>(pi, actuator)
}

/// One step while another source drives the actuator at `actuator`: the
/// command follows it (clamped) and the integrator stays aligned, so a later
/// step continues without a bump. The result as of the step function
/// (with `EKC_STATUS_TRACKING` set), its checks in the same order; a
/// refused call does not engage.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_track(
    pi: *mut EkcLoop,
    setpoint: i32,
    measurement: i32,
    extra: *const EkcExtra,
    actuator: i32,
) -> EkcStepResult {
    engine::track::<EkcLoop>(pi, setpoint, measurement, extra, actuator, ekc_step_with)
}

/// Replace the configuration bumplessly (the integrator absorbs the
/// change of the proportional part). On error nothing changes.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_retune(
    pi: *mut EkcLoop,
    coefficients: *const EkcCoefficients,
) -> EkcCode {
    engine::retune::<EkcLoop>(pi, coefficients)
}

/// Replace Kp and Ki·Ts (per sample) bumplessly, keeping everything else,
/// checked as a configuration checks them. On error nothing changes.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_retune_gains(
    pi: *mut EkcLoop,
    kp: EkcCoef,
    ki_ts: EkcCoef,
) -> EkcCode {
    engine::retune_gains::<EkcLoop>(pi, kp, ki_ts)
}

/// Back to rest (integrator zero, command at rest), keeping the
/// configuration.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_reset(pi: *mut EkcLoop) -> EkcCode {
    engine::reset::<EkcLoop>(pi)
}

/// The integral term I, rounded to a signal, into `*out`.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_integral(pi: *const EkcLoop, out: *mut i32) -> EkcCode {
    engine::integral::<EkcLoop>(pi, out)
}

/// The last command returned, into `*out`.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_last_command(pi: *const EkcLoop, out: *mut i32) -> EkcCode {
    engine::last_command::<EkcLoop>(pi, out)
}
