//! The work behind every `ekc_` function, written once for both storage
//! types; `fixed_api` and `slim_api` are one-line wrappers that cbindgen
//! can see.

use evenkeel::fixed::types::I16F16;
use evenkeel::{Backend, Config, ConfigError, Controller, FixedCoef, Input, Slim16, SlimCoef};

use crate::codes::{self, EKC_OK, EkcCode};
use crate::storage::{self, EkcLoop, EkcSlimLoop, Located, Out, Plain, Readable, Storage};
use crate::types::{
    self, EKC_FORMAT_Q16_16, EKC_FORMAT_SLIM16, EkcCoef, EkcCoefficients, EkcInput, EkcOutput,
    EkcSettings, EkcSlimInput, EkcSlimOutput,
};

/// What differs between the two storage types.
pub(crate) trait Engine: Storage {
    /// `EkcCoefficients.format` of this type.
    const FORMAT: u32;
    /// A raw signal in C.
    type Raw: Plain;
    /// The C input struct.
    type In: Plain;
    /// The C output struct.
    type Out: Plain + Default;
    fn signal(raw: Self::Raw) -> Self::Backend;
    /// The C input of setpoint and measurement alone (what `Input::new` is).
    fn plain_input(setpoint: Self::Raw, measurement: Self::Raw) -> Self::In;
    /// `o` with the `TRACKING` status bit set.
    fn tracking(o: Self::Out) -> Self::Out;
    fn raw(x: Self::Backend) -> Self::Raw;
    fn input(i: &Self::In) -> Input<Self::Backend>;
    fn output(o: evenkeel::Output<Self::Backend>) -> Self::Out;
    fn compute(s: &evenkeel::Settings) -> Result<Config<Self::Backend>, ConfigError>;
    fn from_parts(p: &evenkeel::ConfigParts) -> Result<Config<Self::Backend>, ConfigError>;
    fn to_parts(c: &Config<Self::Backend>) -> evenkeel::ConfigParts;
    fn coef(c: EkcCoef) -> Option<<Self::Backend as Backend>::Coef>;
}

impl Engine for EkcLoop {
    const FORMAT: u32 = EKC_FORMAT_Q16_16;
    type Raw = i32;
    type In = EkcInput;
    type Out = EkcOutput;
    #[inline(always)]
    fn signal(raw: i32) -> I16F16 {
        I16F16::from_bits(raw)
    }
    #[inline(always)]
    fn raw(x: I16F16) -> i32 {
        x.to_bits()
    }
    #[inline(always)]
    fn plain_input(setpoint: i32, measurement: i32) -> EkcInput {
        EkcInput {
            setpoint,
            measurement,
            feed_forward: 0,
            applied: 0,
            has_applied: 0,
        }
    }
    fn tracking(o: EkcOutput) -> EkcOutput {
        EkcOutput {
            status: o.status | types::EKC_STATUS_TRACKING,
            ..o
        }
    }
    #[inline(always)]
    fn input(i: &EkcInput) -> Input<I16F16> {
        types::fixed_input(i)
    }
    #[inline(always)]
    fn output(o: evenkeel::Output<I16F16>) -> EkcOutput {
        EkcOutput {
            command: o.command.to_bits(),
            status: o.status.bits(),
        }
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
    type In = EkcSlimInput;
    type Out = EkcSlimOutput;
    #[inline(always)]
    fn signal(raw: i16) -> Slim16 {
        Slim16::from_raw(raw)
    }
    #[inline(always)]
    fn raw(x: Slim16) -> i16 {
        x.raw()
    }
    #[inline(always)]
    fn plain_input(setpoint: i16, measurement: i16) -> EkcSlimInput {
        EkcSlimInput {
            setpoint,
            measurement,
            feed_forward: 0,
            applied: 0,
            has_applied: 0,
        }
    }
    fn tracking(o: EkcSlimOutput) -> EkcSlimOutput {
        EkcSlimOutput {
            status: o.status | types::EKC_STATUS_TRACKING,
            ..o
        }
    }
    #[inline(always)]
    fn input(i: &EkcSlimInput) -> Input<Slim16> {
        types::slim_input(i)
    }
    #[inline(always)]
    fn output(o: evenkeel::Output<Slim16>) -> EkcSlimOutput {
        EkcSlimOutput {
            command: o.command.raw(),
            status: o.status.bits(),
        }
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

/// The one control step of the C interface, behind `ekc_step`,
/// `ekc_step_with` and `ekc_track` (and their 16-bit twins), once the
/// pointers are checked: the tag test, then the only call of
/// [`Controller::step_with`] in the crate, so the compiler inlines the step
/// here and reads the C input's fields where the step needs them (no copy
/// into an [`Input`] first). Out of line, so the step's code is in the
/// firmware once; `ekc_step_with` reaches it with its arguments in place
/// (a jump, not a call).
#[inline(never)]
fn checked_step<E: Engine>(
    storage: Located<E>,
    input: Readable<'_, E::In>,
    out: Out<E::Out>,
) -> EkcCode {
    done(storage::with_step(storage, input, out, |pi, input, out| {
        out.put(E::output(pi.step_with(&E::input(input))));
    }))
}

#[inline(always)]
pub(crate) fn step<E: Engine>(
    storage: *mut E,
    setpoint: E::Raw,
    measurement: E::Raw,
    out: *mut E::Out,
) -> EkcCode {
    let input = E::plain_input(setpoint, measurement);
    match Out::new(out).and_then(|out| Ok((out, storage::locate(storage)?))) {
        Ok((out, storage)) => checked_step(storage, Readable::local(&input), out),
        Err(code) => code,
    }
}

#[inline(always)]
pub(crate) fn step_with<E: Engine>(
    storage: *mut E,
    input: *const E::In,
    out: *mut E::Out,
) -> EkcCode {
    let checked =
        Out::new(out).and_then(|out| Ok((out, Readable::new(input)?, storage::locate(storage)?)));
    match checked {
        Ok((out, input, storage)) => checked_step(storage, input, out),
        Err(code) => code,
    }
}

/// `Controller::track` (engage, then the step, flagged `TRACKING`),
/// written out so that [`checked_step`] stays the only caller of the step.
pub(crate) fn track<E: Engine>(
    storage: *mut E,
    input: *const E::In,
    actuator: E::Raw,
    out: *mut E::Out,
) -> EkcCode {
    done((|| {
        let out = Out::new(out)?;
        let input = storage::read(input)?;
        storage::with_mut(storage, |pi| pi.engage(E::signal(actuator)))?;
        let mut o = E::Out::default();
        let checked = storage::locate(storage)?;
        match checked_step(checked, Readable::local(&input), Out::new(&mut o)?) {
            EKC_OK => {
                out.put(E::tracking(o));
                Ok(())
            }
            code => Err(code),
        }
    })())
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
