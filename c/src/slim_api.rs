//! The functions of the 16-bit controller `EkcSlimLoop` (`int16_t` raw
//! signals; the settings' scaling maps them to physical units).

use crate::codes::EkcCode;
use crate::engine;
use crate::storage::EkcSlimLoop;
use crate::types::{EkcCoef, EkcCoefficients, EkcSettings, EkcSlimExtra, EkcStepResult};

/// Compute the 16-bit coefficients of `settings` into `*out` (`double`
/// arithmetic: a host tool, or a core with a double-precision FPU). On
/// error `*out` is unchanged and the code names the setting.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_slim_compute(
    settings: *const EkcSettings,
    out: *mut EkcCoefficients,
) -> EkcCode {
    engine::compute::<EkcSlimLoop>(settings, out)
}

/// Configure `*pi` from physical settings (as `ekc_slim_compute` then
/// `ekc_slim_load`): a controller at rest. On error `*pi` is unchanged.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_slim_configure(
    pi: *mut EkcSlimLoop,
    settings: *const EkcSettings,
) -> EkcCode {
    engine::configure::<EkcSlimLoop>(pi, settings)
}

/// Configure `*pi` from precomputed coefficients (format
/// `EKC_FORMAT_SLIM16`), checked with integer comparisons only: no
/// floating point. A controller at rest. On error `*pi` is unchanged.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_slim_load(
    pi: *mut EkcSlimLoop,
    coefficients: *const EkcCoefficients,
) -> EkcCode {
    engine::load::<EkcSlimLoop>(pi, coefficients)
}

/// One control step with setpoint and measurement (raw 16-bit values in the loop's scaling) alone:
/// `ekc_slim_step_with` with `EKC_SLIM_NO_EXTRA` (no feed-forward, no applied value).
/// Returns code, command and status in one `EkcStepResult` (command: `ekc_slim_result_command`); on
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
pub unsafe extern "C" fn ekc_slim_step(
    pi: *mut EkcSlimLoop,
    setpoint: i16,
    measurement: i16,
) -> EkcStepResult {
    engine::step::<EkcSlimLoop>(pi, setpoint, measurement, ekc_slim_step_with)
}

/// One control step with setpoint, measurement and the optional inputs
/// in `*extra`: feed-forward and, if known, the value the actuator applied
/// of the previous command. Returns code, command and status in one
/// `EkcStepResult` (command: `ekc_slim_result_command`). The checks, in this order (the first that fails
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
pub unsafe extern "C" fn ekc_slim_step_with(
    pi: *mut EkcSlimLoop,
    setpoint: i16,
    measurement: i16,
    extra: *const EkcSlimExtra,
) -> EkcStepResult {
    engine::step_with::<EkcSlimLoop>(pi, setpoint, measurement, extra)
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
pub unsafe extern "C" fn ekc_slim_engage(pi: *mut EkcSlimLoop, actuator: i16) -> EkcCode {
    engine::engage::<EkcSlimLoop>(pi, actuator)
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
pub unsafe extern "C" fn ekc_slim_track(
    pi: *mut EkcSlimLoop,
    setpoint: i16,
    measurement: i16,
    extra: *const EkcSlimExtra,
    actuator: i16,
) -> EkcStepResult {
    engine::track::<EkcSlimLoop>(
        pi,
        setpoint,
        measurement,
        extra,
        actuator,
        ekc_slim_step_with,
    )
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
pub unsafe extern "C" fn ekc_slim_retune(
    pi: *mut EkcSlimLoop,
    coefficients: *const EkcCoefficients,
) -> EkcCode {
    engine::retune::<EkcSlimLoop>(pi, coefficients)
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
pub unsafe extern "C" fn ekc_slim_retune_gains(
    pi: *mut EkcSlimLoop,
    kp: EkcCoef,
    ki_ts: EkcCoef,
) -> EkcCode {
    engine::retune_gains::<EkcSlimLoop>(pi, kp, ki_ts)
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
pub unsafe extern "C" fn ekc_slim_reset(pi: *mut EkcSlimLoop) -> EkcCode {
    engine::reset::<EkcSlimLoop>(pi)
}

/// The integral term I, rounded to a signal, into `*out`.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_slim_integral(pi: *const EkcSlimLoop, out: *mut i16) -> EkcCode {
    engine::integral::<EkcSlimLoop>(pi, out)
}

/// The last command returned, into `*out`.
///
/// # Safety
/// Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
/// object of its type that no other call uses at the same time, the objects
/// of one call do not overlap, and loop storage was zeroed or configured
/// before (never left uninitialised).
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_slim_last_command(pi: *const EkcSlimLoop, out: *mut i16) -> EkcCode {
    engine::last_command::<EkcSlimLoop>(pi, out)
}
