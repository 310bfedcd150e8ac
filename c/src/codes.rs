//! Error codes: what every function returns.
//!
//! `EKC_OK` (0) is success. Codes 1 to 15 are mistakes in the call itself
//! (a null or misaligned pointer, storage that was never configured, a
//! configuration of the other format). A configuration error is the kind
//! (`EKC_ERR_NOT_FINITE` … `EKC_ERR_WEIGHTED_OFFSET`, bits 8 to 15) plus
//! the setting it names (`EKC_SETTING_…`, bits 0 to 7; 0 for none), one
//! code for each [`evenkeel::ConfigError`]: for example
//! `EKC_ERR_NOT_POSITIVE | EKC_SETTING_PERIOD` is
//! `ConfigError::NotPositive(Setting::Period)`.

use core::fmt;

use evenkeel::{ConfigError, Setting};

/// A result code: `EKC_OK`, an `EKC_ERR_…` call error, or a configuration
/// error `EKC_ERR_<kind> | EKC_SETTING_<setting>`.
pub type EkcCode = i32;

/// Success.
pub const EKC_OK: EkcCode = 0;
/// A pointer argument is null.
pub const EKC_ERR_NULL: EkcCode = 1;
/// A pointer argument is not aligned for its type (`EKC_LOOP_ALIGN` for an
/// `EkcLoop`).
pub const EKC_ERR_MISALIGNED: EkcCode = 2;
/// The controller storage was never configured (`ekc_configure` or
/// `ekc_load` did not succeed on it).
pub const EKC_ERR_UNCONFIGURED: EkcCode = 3;
/// `EkcCoefficients` of the other format (Q16.16 given to a 16-bit loop, or
/// the reverse), or an unknown `format` value.
pub const EKC_ERR_FORMAT: EkcCode = 4;
/// A configuration error this version of the interface has no code for
/// (the controller crate added one).
pub const EKC_ERR_CONFIG_OTHER: EkcCode = 15;

/// Mask of a configuration error's kind.
pub const EKC_CODE_KIND_MASK: EkcCode = 0xff00;
/// Mask of a configuration error's setting.
pub const EKC_CODE_SETTING_MASK: EkcCode = 0x00ff;

/// A value is NaN or infinite.
pub const EKC_ERR_NOT_FINITE: EkcCode = 0x0100;
/// A value must be greater than zero.
pub const EKC_ERR_NOT_POSITIVE: EkcCode = 0x0200;
/// A value must be zero or positive.
pub const EKC_ERR_NEGATIVE: EkcCode = 0x0300;
/// The upper end of a range is not above the lower end.
pub const EKC_ERR_INVERTED: EkcCode = 0x0400;
/// A value does not fit the number format.
pub const EKC_ERR_OUT_OF_FORMAT: EkcCode = 0x0500;
/// A value would be stored with more relative error than promised.
pub const EKC_ERR_TOO_FINE: EkcCode = 0x0600;
/// The setting does not fit a compile-time layout.
pub const EKC_ERR_LAYOUT: EkcCode = 0x0700;
/// Both Kp and Ki are zero.
pub const EKC_ERR_NO_ACTION: EkcCode = 0x0800;
/// The setpoint weight is outside [0, 1].
pub const EKC_ERR_SETPOINT_WEIGHT_RANGE: EkcCode = 0x0900;
/// Ts/Tt is outside (0, 1].
pub const EKC_ERR_TRACKING_RATIO_RANGE: EkcCode = 0x0a00;
/// Gain-schedule breakpoints are invalid.
pub const EKC_ERR_SCHEDULE: EkcCode = 0x0b00;
/// A setpoint weight below 1 with a measurement offset.
pub const EKC_ERR_WEIGHTED_OFFSET: EkcCode = 0x0c00;

/// `period_s`.
pub const EKC_SETTING_PERIOD: EkcCode = 1;
/// `kp`.
pub const EKC_SETTING_KP: EkcCode = 2;
/// `ki_per_s`.
pub const EKC_SETTING_KI: EkcCode = 3;
/// `setpoint_weight`.
pub const EKC_SETTING_SETPOINT_WEIGHT: EkcCode = 4;
/// `output_min`.
pub const EKC_SETTING_OUTPUT_MIN: EkcCode = 5;
/// `output_max`.
pub const EKC_SETTING_OUTPUT_MAX: EkcCode = 6;
/// `slew_per_s`.
pub const EKC_SETTING_SLEW: EkcCode = 7;
/// `filter_time_s`.
pub const EKC_SETTING_FILTER_TIME: EkcCode = 8;
/// `deadband`.
pub const EKC_SETTING_DEADBAND: EkcCode = 9;
/// `tracking_time_s`.
pub const EKC_SETTING_TRACKING_TIME: EkcCode = 10;
/// `measurement_min`.
pub const EKC_SETTING_MEASUREMENT_MIN: EkcCode = 11;
/// `measurement_max`.
pub const EKC_SETTING_MEASUREMENT_MAX: EkcCode = 12;
/// A gain-schedule breakpoint.
pub const EKC_SETTING_BREAKPOINT: EkcCode = 13;
/// The set of optional parts (`EkcCoefficients.features`).
pub const EKC_SETTING_FEATURES: EkcCode = 14;
/// The measurement scale.
pub const EKC_SETTING_MEASUREMENT_SCALE: EkcCode = 15;
/// The command scale (and the command at rest of `EkcCoefficients`).
pub const EKC_SETTING_COMMAND_SCALE: EkcCode = 16;

/// Every setting with its code, in code order.
const SETTINGS: [(Setting, EkcCode); 16] = [
    (Setting::Period, EKC_SETTING_PERIOD),
    (Setting::Kp, EKC_SETTING_KP),
    (Setting::Ki, EKC_SETTING_KI),
    (Setting::SetpointWeight, EKC_SETTING_SETPOINT_WEIGHT),
    (Setting::OutputMin, EKC_SETTING_OUTPUT_MIN),
    (Setting::OutputMax, EKC_SETTING_OUTPUT_MAX),
    (Setting::Slew, EKC_SETTING_SLEW),
    (Setting::FilterTime, EKC_SETTING_FILTER_TIME),
    (Setting::Deadband, EKC_SETTING_DEADBAND),
    (Setting::TrackingTime, EKC_SETTING_TRACKING_TIME),
    (Setting::MeasurementMin, EKC_SETTING_MEASUREMENT_MIN),
    (Setting::MeasurementMax, EKC_SETTING_MEASUREMENT_MAX),
    (Setting::Breakpoint, EKC_SETTING_BREAKPOINT),
    (Setting::Features, EKC_SETTING_FEATURES),
    (Setting::MeasurementScale, EKC_SETTING_MEASUREMENT_SCALE),
    (Setting::CommandScale, EKC_SETTING_COMMAND_SCALE),
];

fn setting_code(s: Setting) -> Option<EkcCode> {
    SETTINGS
        .iter()
        .find(|(setting, _)| *setting == s)
        .map(|&(_, code)| code)
}

fn setting_of(code: EkcCode) -> Option<Setting> {
    SETTINGS
        .iter()
        .find(|(_, c)| *c == code)
        .map(|&(setting, _)| setting)
}

/// The code of a configuration error (one code per error).
#[must_use]
pub fn code(e: ConfigError) -> EkcCode {
    let with = |kind: EkcCode, s: Setting| match setting_code(s) {
        Some(setting) => kind | setting,
        None => EKC_ERR_CONFIG_OTHER,
    };
    match e {
        ConfigError::NotFinite(s) => with(EKC_ERR_NOT_FINITE, s),
        ConfigError::NotPositive(s) => with(EKC_ERR_NOT_POSITIVE, s),
        ConfigError::Negative(s) => with(EKC_ERR_NEGATIVE, s),
        ConfigError::Inverted(s) => with(EKC_ERR_INVERTED, s),
        ConfigError::OutOfFormat(s) => with(EKC_ERR_OUT_OF_FORMAT, s),
        ConfigError::TooFine(s) => with(EKC_ERR_TOO_FINE, s),
        ConfigError::Layout(s) => with(EKC_ERR_LAYOUT, s),
        ConfigError::NoAction => EKC_ERR_NO_ACTION,
        ConfigError::SetpointWeightOutOfRange => EKC_ERR_SETPOINT_WEIGHT_RANGE,
        ConfigError::TrackingRatioOutOfRange => EKC_ERR_TRACKING_RATIO_RANGE,
        ConfigError::Schedule => EKC_ERR_SCHEDULE,
        ConfigError::WeightedOffset => EKC_ERR_WEIGHTED_OFFSET,
        _ => EKC_ERR_CONFIG_OTHER,
    }
}

/// The configuration error of a code, if it is one.
#[must_use]
pub fn config_error(code: EkcCode) -> Option<ConfigError> {
    let setting = || setting_of(code & EKC_CODE_SETTING_MASK);
    let bare = |e: ConfigError| (code & EKC_CODE_SETTING_MASK == 0).then_some(e);
    if code & !(EKC_CODE_KIND_MASK | EKC_CODE_SETTING_MASK) != 0 {
        return None;
    }
    match code & EKC_CODE_KIND_MASK {
        EKC_ERR_NOT_FINITE => setting().map(ConfigError::NotFinite),
        EKC_ERR_NOT_POSITIVE => setting().map(ConfigError::NotPositive),
        EKC_ERR_NEGATIVE => setting().map(ConfigError::Negative),
        EKC_ERR_INVERTED => setting().map(ConfigError::Inverted),
        EKC_ERR_OUT_OF_FORMAT => setting().map(ConfigError::OutOfFormat),
        EKC_ERR_TOO_FINE => setting().map(ConfigError::TooFine),
        EKC_ERR_LAYOUT => setting().map(ConfigError::Layout),
        EKC_ERR_NO_ACTION => bare(ConfigError::NoAction),
        EKC_ERR_SETPOINT_WEIGHT_RANGE => bare(ConfigError::SetpointWeightOutOfRange),
        EKC_ERR_TRACKING_RATIO_RANGE => bare(ConfigError::TrackingRatioOutOfRange),
        EKC_ERR_SCHEDULE => bare(ConfigError::Schedule),
        EKC_ERR_WEIGHTED_OFFSET => bare(ConfigError::WeightedOffset),
        _ => None,
    }
}

/// What a code means, in words: a configuration error's text is its
/// [`ConfigError`]'s `Display`.
pub fn describe(code: EkcCode, out: &mut impl fmt::Write) -> fmt::Result {
    if let Some(e) = config_error(code) {
        return write!(out, "{e}");
    }
    out.write_str(match code {
        EKC_OK => "ok",
        EKC_ERR_NULL => "a pointer argument is null",
        EKC_ERR_MISALIGNED => "a pointer argument is not aligned for its type",
        EKC_ERR_UNCONFIGURED => {
            "the controller storage was never configured (ekc_configure or ekc_load did not succeed on it)"
        }
        EKC_ERR_FORMAT => {
            "the coefficients are of the other number format (Q16.16 for EkcLoop, 16-bit for EkcSlimLoop) or of none"
        }
        EKC_ERR_CONFIG_OTHER => "a configuration error this interface version has no code for",
        _ => "not an evenkeel code",
    })
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;
    use std::collections::BTreeSet;
    use std::string::String;
    use std::vec::Vec;

    /// Every `ConfigError` there is (the settings are all 16).
    pub(crate) fn every_error() -> Vec<ConfigError> {
        let mut all = Vec::new();
        for (s, _) in SETTINGS {
            all.extend([
                ConfigError::NotFinite(s),
                ConfigError::NotPositive(s),
                ConfigError::Negative(s),
                ConfigError::Inverted(s),
                ConfigError::OutOfFormat(s),
                ConfigError::TooFine(s),
                ConfigError::Layout(s),
            ]);
        }
        all.extend([
            ConfigError::NoAction,
            ConfigError::SetpointWeightOutOfRange,
            ConfigError::TrackingRatioOutOfRange,
            ConfigError::Schedule,
            ConfigError::WeightedOffset,
        ]);
        all
    }

    fn text(code: EkcCode) -> String {
        let mut s = String::new();
        describe(code, &mut s).unwrap();
        s
    }

    #[test]
    fn every_config_error_has_its_own_code_and_message() {
        let all = every_error();
        assert_eq!(all.len(), 16 * 7 + 5);
        let mut codes = BTreeSet::new();
        let mut texts = BTreeSet::new();
        for e in all {
            let c = code(e);
            assert!(c > EKC_ERR_CONFIG_OTHER, "{e:?}: {c:#x}");
            assert!(codes.insert(c), "{e:?}: code {c:#x} used twice");
            assert_eq!(config_error(c), Some(e), "{c:#x}");
            assert_eq!(text(c), std::format!("{e}"));
            assert!(texts.insert(text(c)), "{e:?}: message used twice");
        }
    }

    #[test]
    fn a_code_names_its_setting() {
        let c = code(ConfigError::NotPositive(Setting::Period));
        assert_eq!(c, 0x0201);
        assert_eq!(c & EKC_CODE_KIND_MASK, EKC_ERR_NOT_POSITIVE);
        assert_eq!(c & EKC_CODE_SETTING_MASK, EKC_SETTING_PERIOD);
        assert_eq!(text(c), "period_s must be greater than zero");
        assert_eq!(code(ConfigError::NoAction), 0x0800);
    }

    #[test]
    fn call_errors_and_unknown_codes_have_texts() {
        let call = [
            EKC_OK,
            EKC_ERR_NULL,
            EKC_ERR_MISALIGNED,
            EKC_ERR_UNCONFIGURED,
            EKC_ERR_FORMAT,
            EKC_ERR_CONFIG_OTHER,
        ];
        let texts: BTreeSet<String> = call.iter().map(|&c| text(c)).collect();
        assert_eq!(texts.len(), call.len());
        for c in call {
            assert_eq!(config_error(c), None);
        }
        for bad in [-1, 5, 0x0d00, 0x0211, 0x0801, 0x10000 | 0x0201] {
            assert_eq!(config_error(bad), None, "{bad:#x}");
            assert_eq!(text(bad), "not an evenkeel code", "{bad:#x}");
        }
    }
}
