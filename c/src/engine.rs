//! The work behind every `ekc_` function, written once for both storage
//! types; `fixed_api` and `slim_api` are one-line wrappers that cbindgen
//! can see.

use evenkeel::fixed::types::I16F16;
use evenkeel::{Backend, Config, ConfigError, Controller, FixedCoef, Input, Slim16, SlimCoef};

use crate::codes::{self, EKC_OK, EkcCode};
use crate::storage::{self, EkcLoop, EkcSlimLoop, Out, Plain, Storage};
use crate::types::{
    self, EKC_FORMAT_Q16_16, EKC_FORMAT_SLIM16, EKC_RESULT_STATUS_SHIFT, EKC_STATUS_TRACKING,
    EkcCoef, EkcCoefficients, EkcExtra, EkcSettings, EkcSlimExtra, EkcStepResult,
};

/// What differs between the two storage types.
pub(crate) trait Engine: Storage {
    /// `EkcCoefficients.format` of this type.
    const FORMAT: u32;
    /// A raw signal in C.
    type Raw: Plain;
    /// The C struct of the optional inputs.
    type Extra: Plain + 'static;
    fn signal(raw: Self::Raw) -> Self::Backend;
    /// No optional inputs (what `Input::new` leaves out): `EKC_NO_EXTRA`,
    /// in read-only memory.
    fn no_extra() -> &'static Self::Extra;
    fn raw(x: Self::Backend) -> Self::Raw;
    fn input(setpoint: Self::Raw, measurement: Self::Raw, e: &Self::Extra) -> Input<Self::Backend>;
    /// The step result of the controller's output.
    fn result(o: evenkeel::Output<Self::Backend>) -> EkcStepResult;
    fn compute(s: &evenkeel::Settings) -> Result<Config<Self::Backend>, ConfigError>;
    fn from_parts(p: &evenkeel::ConfigParts) -> Result<Config<Self::Backend>, ConfigError>;
    fn to_parts(c: &Config<Self::Backend>) -> evenkeel::ConfigParts;
    fn coef(c: EkcCoef) -> Option<<Self::Backend as Backend>::Coef>;
}

impl Engine for EkcLoop {
    const FORMAT: u32 = EKC_FORMAT_Q16_16;
    type Raw = i32;
    type Extra = EkcExtra;
    #[inline(always)]
    fn signal(raw: i32) -> I16F16 {
        I16F16::from_bits(raw)
    }
    #[inline(always)]
    fn raw(x: I16F16) -> i32 {
        x.to_bits()
    }
    #[inline(always)]
    fn no_extra() -> &'static EkcExtra {
        static NO_EXTRA: EkcExtra = types::EKC_NO_EXTRA;
        &NO_EXTRA
    }
    #[inline(always)]
    fn input(setpoint: i32, measurement: i32, e: &EkcExtra) -> Input<I16F16> {
        types::fixed_input(setpoint, measurement, e)
    }
    #[inline(always)]
    fn result(o: evenkeel::Output<I16F16>) -> EkcStepResult {
        types::step_result(o.command.to_bits(), o.status.bits())
    }
    fn compute(s: &evenkeel::Settings) -> Result<Config<I16F16>, ConfigError> {
        Config::try_new(s)
    }
    fn from_parts(p: &evenkeel::ConfigParts) -> Result<Config<I16F16>, ConfigError> {
        Config::<I16F16>::from_parts(p)
    }
    fn to_parts(c: &Config<I16F16>) -> evenkeel::ConfigParts {
        c.to_parts()
    }
    fn coef(c: EkcCoef) -> Option<FixedCoef> {
        FixedCoef::from_parts(c.mantissa, u32::from(c.shift))
    }
}

impl Engine for EkcSlimLoop {
    const FORMAT: u32 = EKC_FORMAT_SLIM16;
    type Raw = i16;
    type Extra = EkcSlimExtra;
    #[inline(always)]
    fn signal(raw: i16) -> Slim16 {
        Slim16::from_raw(raw)
    }
    #[inline(always)]
    fn raw(x: Slim16) -> i16 {
        x.raw()
    }
    #[inline(always)]
    fn no_extra() -> &'static EkcSlimExtra {
        static NO_EXTRA: EkcSlimExtra = types::EKC_SLIM_NO_EXTRA;
        &NO_EXTRA
    }
    #[inline(always)]
    fn input(setpoint: i16, measurement: i16, e: &EkcSlimExtra) -> Input<Slim16> {
        types::slim_input(setpoint, measurement, e)
    }
    #[inline(always)]
    fn result(o: evenkeel::Output<Slim16>) -> EkcStepResult {
        types::step_result(i32::from(o.command.raw()), o.status.bits())
    }
    fn compute(s: &evenkeel::Settings) -> Result<Config<Slim16>, ConfigError> {
        Config::try_new(s)
    }
    fn from_parts(p: &evenkeel::ConfigParts) -> Result<Config<Slim16>, ConfigError> {
        Config::<Slim16>::from_parts(p)
    }
    fn to_parts(c: &Config<Slim16>) -> evenkeel::ConfigParts {
        c.to_parts()
    }
    fn coef(c: EkcCoef) -> Option<SlimCoef> {
        let mantissa = i16::try_from(c.mantissa).ok()?;
        SlimCoef::from_parts(mantissa, u32::from(c.shift))
    }
}

/// `EKC_OK` or the error.
#[inline(always)]
pub(crate) fn done(r: Result<(), EkcCode>) -> EkcCode {
    match r {
        Ok(()) => EKC_OK,
        Err(code) => code,
    }
}

fn config_of<E: Engine>(c: *const EkcCoefficients) -> Result<Config<E::Backend>, EkcCode> {
    let parts = storage::read(c)?.to_parts(E::FORMAT)?;
    E::from_parts(&parts).map_err(codes::code)
}

pub(crate) fn compute<E: Engine>(
    settings: *const EkcSettings,
    out: *mut EkcCoefficients,
) -> EkcCode {
    done((|| {
        let out = Out::new(out)?;
        let settings = storage::read(settings)?.to_settings();
        let config = E::compute(&settings).map_err(codes::code)?;
        out.put(EkcCoefficients::from_parts(
            E::FORMAT,
            &E::to_parts(&config),
        ));
        Ok(())
    })())
}

pub(crate) fn configure<E: Engine>(storage: *mut E, settings: *const EkcSettings) -> EkcCode {
    done((|| {
        let settings = storage::read(settings)?.to_settings();
        let config = E::compute(&settings).map_err(codes::code)?;
        storage::install(storage, Controller::new(config))
    })())
}

pub(crate) fn load<E: Engine>(storage: *mut E, c: *const EkcCoefficients) -> EkcCode {
    done(config_of::<E>(c).and_then(|config| storage::install(storage, Controller::new(config))))
}

pub(crate) fn retune<E: Engine>(storage: *mut E, c: *const EkcCoefficients) -> EkcCode {
    done(config_of::<E>(c).and_then(|config| storage::with_mut(storage, |pi| pi.retune(config))))
}

pub(crate) fn retune_gains<E: Engine>(storage: *mut E, kp: EkcCoef, ki_ts: EkcCoef) -> EkcCode {
    let result = storage::with_mut(storage, |pi| {
        let out_of_format = |s| codes::code(ConfigError::OutOfFormat(s));
        let kp = E::coef(kp).ok_or(out_of_format(evenkeel::Setting::Kp))?;
        let ki_ts = E::coef(ki_ts).ok_or(out_of_format(evenkeel::Setting::Ki))?;
        let config = pi.config().with_gains(kp, ki_ts).map_err(codes::code)?;
        pi.retune(config);
        Ok(())
    });
    done(result.and_then(|r| r))
}

/// The signature of `ekc_step_with` and `ekc_slim_step_with`.
pub(crate) type StepWith<E> = unsafe extern "C" fn(
    *mut E,
    <E as Engine>::Raw,
    <E as Engine>::Raw,
    *const <E as Engine>::Extra,
) -> EkcStepResult;

/// The one control step of the C interface (`ekc_step_with`, and its
/// 16-bit twin): the checks of [`storage::with_step`], then the only call
/// of [`Controller::step_with`] in the crate, so the compiler inlines the
/// step into the exported function, with setpoint and measurement in
/// registers and the optional inputs read where the step needs them.
/// `ekc_step` and `ekc_track` call the exported function, so the step's
/// code is in the firmware once.
#[inline(always)]
pub(crate) fn step_with<E: Engine>(
    storage: *mut E,
    setpoint: E::Raw,
    measurement: E::Raw,
    extra: *const E::Extra,
) -> EkcStepResult {
    match storage::with_step(storage, extra, |pi, extra| {
        E::result(pi.step_with(&E::input(setpoint, measurement, extra)))
    }) {
        Ok(result) => result,
        Err(code) => types::refused_result(code),
    }
}

/// `ekc_step`: `entry` (`ekc_step_with` of the format) with
/// `EKC_NO_EXTRA`, a constant in read-only memory: the arguments stay in
/// their registers and the call is a jump.
#[inline(always)]
pub(crate) fn step<E: Engine>(
    storage: *mut E,
    setpoint: E::Raw,
    measurement: E::Raw,
    entry: StepWith<E>,
) -> EkcStepResult {
    storage::forward(entry, storage, setpoint, measurement, E::no_extra())
}

/// `Controller::track` (engage, then the step, flagged `TRACKING`),
/// written out so that `entry` (`ekc_step_with` of the format) stays the
/// only place of the step. Every check is made before the engage, in the
/// order of the step's, so a refused call changes nothing.
pub(crate) fn track<E: Engine>(
    storage: *mut E,
    setpoint: E::Raw,
    measurement: E::Raw,
    extra: *const E::Extra,
    actuator: E::Raw,
    entry: StepWith<E>,
) -> EkcStepResult {
    if let Err(code) = storage::with_step(storage, extra, |pi, _| {
        pi.engage(E::signal(actuator));
    }) {
        return types::refused_result(code);
    }
    match storage::forward(entry, storage, setpoint, measurement, extra) {
        // The same checks passed above, so the step runs; a refused
        // result would keep its code alone all the same.
        result if types::result_code(result) == EKC_OK => {
            result | (u64::from(EKC_STATUS_TRACKING) << EKC_RESULT_STATUS_SHIFT)
        }
        refused => refused,
    }
}

pub(crate) fn engage<E: Engine>(storage: *mut E, actuator: E::Raw) -> EkcCode {
    done(storage::with_mut(storage, |pi| {
        pi.engage(E::signal(actuator))
    }))
}

pub(crate) fn reset<E: Engine>(storage: *mut E) -> EkcCode {
    done(storage::with_mut(storage, Controller::reset))
}

pub(crate) fn integral<E: Engine>(storage: *const E, out: *mut E::Raw) -> EkcCode {
    done((|| {
        let out = Out::new(out)?;
        out.put(E::raw(storage::with_ref(storage, Controller::integral)?));
        Ok(())
    })())
}

pub(crate) fn last_command<E: Engine>(storage: *const E, out: *mut E::Raw) -> EkcCode {
    done((|| {
        let out = Out::new(out)?;
        out.put(E::raw(storage::with_ref(
            storage,
            Controller::last_command,
        )?));
        Ok(())
    })())
}
