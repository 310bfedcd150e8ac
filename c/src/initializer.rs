//! The C text of a configuration: a header with `static const
//! EkcCoefficients` initialisers, so that a firmware configures with
//! `ekc_load` and no floating-point code (what `evenkeel design --c-out`
//! and `evenkeel c-config` write).
//!
//! ```
//! use evenkeel::{Config, Settings};
//! use evenkeel::fixed::types::I16F16;
//! use evenkeel_c::initializer::{Item, write_header};
//! use evenkeel_c::types::{EKC_FORMAT_Q16_16, EkcCoefficients};
//! let config = Config::<I16F16>::try_new(&Settings::new(0.01, 2.0, 5.0, -10.0, 10.0))?;
//! let coefficients = EkcCoefficients::from_parts(EKC_FORMAT_Q16_16, &config.to_parts());
//! let mut text = String::new();
//! write_header(&mut text, "speed_loop.h", &["an example"], &[Item { name: "SPEED_LOOP", coefficients }])
//!     .map_err(|_| evenkeel::ConfigError::NoAction)?;
//! assert!(text.contains("static const EkcCoefficients SPEED_LOOP = {"));
//! assert!(text.contains(".kp = { 1073741824, 29 }, /* 2 */"));
//! # Ok::<(), evenkeel::ConfigError>(())
//! ```

use core::fmt::{self, Write};

use crate::types::{
    EKC_FEATURE_BACK_CALCULATION, EKC_FEATURE_DEADBAND, EKC_FEATURE_FILTER,
    EKC_FEATURE_SETPOINT_WEIGHT, EKC_FEATURE_SLEW, EKC_FORMAT_Q16_16, EKC_FORMAT_SLIM16, EkcCoef,
    EkcCoefficients,
};

/// The caution every generated file carries.
pub const CAUTION: &str = "CAUTION: an engineering aid, not a certified safety function; functional-safety processes (e.g. ISO 26262, IEC 61508) and local regulations govern any real deployment.";

/// One named configuration of a header.
#[derive(Clone, Copy, Debug)]
pub struct Item<'a> {
    /// The C identifier of the constant (see [`is_c_identifier`]).
    pub name: &'a str,
    /// Its value.
    pub coefficients: EkcCoefficients,
}

/// `true` if `name` is a C identifier (ASCII letter or `_`, then letters,
/// digits, `_`) that does not start with `ekc_`/`EKC_`/`Ekc` (the
/// interface's own prefix).
#[must_use]
pub fn is_c_identifier(name: &str) -> bool {
    let mut chars = name.chars();
    let first_ok = chars
        .next()
        .is_some_and(|c| c.is_ascii_alphabetic() || c == '_');
    first_ok
        && chars.all(|c| c.is_ascii_alphanumeric() || c == '_')
        && !["ekc_", "EKC_", "Ekc"].iter().any(|p| name.starts_with(p))
}

/// `name` made into a C identifier: every other character becomes `_`, a
/// leading digit or the interface's prefix gets a `cfg_` in front.
#[must_use]
pub fn c_identifier(name: &str, out: &mut [u8; 64]) -> usize {
    let mut len = 0;
    let mut push = |b: u8, len: &mut usize| {
        if let Some(slot) = out.get_mut(*len) {
            *slot = b;
            *len += 1;
        }
    };
    let needs_prefix = name
        .chars()
        .next()
        .is_none_or(|c| !(c.is_ascii_alphabetic() || c == '_'))
        || ["ekc_", "EKC_", "Ekc"].iter().any(|p| name.starts_with(p));
    if needs_prefix {
        for &b in b"cfg_" {
            push(b, &mut len);
        }
    }
    for c in name.chars() {
        let b = if c.is_ascii_alphanumeric() {
            c as u8
        } else {
            b'_'
        };
        push(b, &mut len);
    }
    len
}

fn coef_value(c: EkcCoef) -> f64 {
    // Exact: a 32-bit mantissa times a power of two (shift ≤ 63 here; a
    // larger one is refused by `ekc_load` anyway).
    let scale = 1u64.checked_shl(u32::from(c.shift)).unwrap_or(0);
    #[allow(clippy::cast_precision_loss)] // a power of two: exact
    let scale = scale as f64;
    f64::from(c.mantissa) / scale
}

/// An `int32_t` as a C constant expression (the most negative one has no
/// literal: `-2147483648` is the negation of a `long`).
struct CInt(i32);

impl fmt::Display for CInt {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.0 == i32::MIN {
            f.write_str("(-2147483647 - 1)")
        } else {
            write!(f, "{}", self.0)
        }
    }
}

fn write_coef(out: &mut impl Write, field: &str, c: EkcCoef, on: bool) -> fmt::Result {
    if on {
        writeln!(
            out,
            "    .{field} = {{ {}, {} }}, /* {} */",
            CInt(c.mantissa),
            c.shift,
            coef_value(c)
        )
    } else {
        writeln!(out, "    .{field} = {{ 0, 0 }}, /* off */")
    }
}

fn write_signal(out: &mut impl Write, field: &str, raw: i32, format: u32, on: bool) -> fmt::Result {
    if !on {
        return writeln!(out, "    .{field} = 0, /* off */");
    }
    if format == EKC_FORMAT_Q16_16 {
        writeln!(
            out,
            "    .{field} = {}, /* {} */",
            CInt(raw),
            f64::from(raw) / 65_536.0
        )
    } else {
        writeln!(out, "    .{field} = {},", CInt(raw))
    }
}

/// One `static const EkcCoefficients NAME = { … };` with the value of
/// every coefficient and signal in a comment.
///
/// # Errors
/// Those of `out`, and [`fmt::Error`] if `name` is not a C identifier.
pub fn write_coefficients(out: &mut impl Write, item: &Item<'_>) -> fmt::Result {
    if !is_c_identifier(item.name) {
        return Err(fmt::Error);
    }
    let c = &item.coefficients;
    let f = c.features;
    let on = |bit: u32| f & bit != 0;
    let (format, loop_type, load) = if c.format == EKC_FORMAT_SLIM16 {
        ("EKC_FORMAT_SLIM16", "EkcSlimLoop", "ekc_slim_load")
    } else {
        ("EKC_FORMAT_Q16_16", "EkcLoop", "ekc_load")
    };
    writeln!(
        out,
        "/* For an {loop_type}: {load}(&pi, &{}). */",
        item.name
    )?;
    writeln!(out, "static const EkcCoefficients {} = {{", item.name)?;
    writeln!(out, "    .format = {format},")?;
    let names = [
        (EKC_FEATURE_FILTER, "EKC_FEATURE_FILTER"),
        (EKC_FEATURE_DEADBAND, "EKC_FEATURE_DEADBAND"),
        (EKC_FEATURE_SETPOINT_WEIGHT, "EKC_FEATURE_SETPOINT_WEIGHT"),
        (EKC_FEATURE_SLEW, "EKC_FEATURE_SLEW"),
        (EKC_FEATURE_BACK_CALCULATION, "EKC_FEATURE_BACK_CALCULATION"),
    ];
    out.write_str("    .features = ")?;
    let mut first = true;
    for (bit, name) in names {
        if on(bit) {
            if !first {
                out.write_str(" | ")?;
            }
            out.write_str(name)?;
            first = false;
        }
    }
    if first {
        out.write_str("0")?;
    }
    out.write_str(",\n")?;
    write_coef(out, "kp", c.kp, true)?;
    write_coef(
        out,
        "setpoint_weight",
        c.setpoint_weight,
        on(EKC_FEATURE_SETPOINT_WEIGHT),
    )?;
    write_coef(out, "ki_ts", c.ki_ts, true)?;
    write_coef(
        out,
        "tracking_ratio",
        c.tracking_ratio,
        on(EKC_FEATURE_BACK_CALCULATION),
    )?;
    write_coef(out, "filter_alpha", c.filter_alpha, on(EKC_FEATURE_FILTER))?;
    let fm = c.format;
    write_signal(out, "slew_step", c.slew_step, fm, on(EKC_FEATURE_SLEW))?;
    write_signal(out, "deadband", c.deadband, fm, on(EKC_FEATURE_DEADBAND))?;
    write_signal(out, "output_min", c.output_min, fm, true)?;
    write_signal(out, "output_max", c.output_max, fm, true)?;
    write_signal(out, "measurement_min", c.measurement_min, fm, true)?;
    write_signal(out, "measurement_max", c.measurement_max, fm, true)?;
    write_signal(out, "rest", c.rest, fm, true)?;
    out.write_str("};\n")
}

/// A whole header `file_name` (its include guard is made from it): the
/// caution, `lines` as a comment, `#include "evenkeel.h"`, and every item.
///
/// # Errors
/// As [`write_coefficients`].
pub fn write_header(
    out: &mut impl Write,
    file_name: &str,
    lines: &[&str],
    items: &[Item<'_>],
) -> fmt::Result {
    let mut guard = [0u8; 64];
    let len = c_identifier(file_name, &mut guard);
    let guard = guard.get(..len).unwrap_or_default();
    out.write_str("/*\n")?;
    for line in lines {
        writeln!(out, " * {line}")?;
    }
    writeln!(out, " *\n * {CAUTION}\n */")?;
    out.write_str("#ifndef EVENKEEL_CONFIG_")?;
    for &b in guard {
        out.write_char(char::from(b.to_ascii_uppercase()))?;
    }
    out.write_str("\n#define EVENKEEL_CONFIG_")?;
    for &b in guard {
        out.write_char(char::from(b.to_ascii_uppercase()))?;
    }
    out.write_str("\n\n#include \"evenkeel.h\"\n")?;
    for item in items {
        out.write_str("\n")?;
        write_coefficients(out, item)?;
    }
    out.write_str("\n#endif\n")
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;
    use std::string::String;

    #[test]
    fn identifiers() {
        assert!(is_c_identifier("speed_loop"));
        assert!(is_c_identifier("_x1"));
        assert!(!is_c_identifier("1x"));
        assert!(!is_c_identifier("a-b"));
        assert!(!is_c_identifier(""));
        assert!(!is_c_identifier("ekc_mine"));
        let mut buf = [0; 64];
        let n = c_identifier("oven-2 zone", &mut buf);
        assert_eq!(&buf[..n], b"oven_2_zone");
        let n = c_identifier("2nd", &mut buf);
        assert_eq!(&buf[..n], b"cfg_2nd");
    }

    #[test]
    fn the_most_negative_value_is_a_c_constant_expression() {
        let mut s = String::new();
        let item = Item {
            name: "wide",
            coefficients: EkcCoefficients {
                format: EKC_FORMAT_Q16_16,
                output_min: i32::MIN,
                ..EkcCoefficients::default()
            },
        };
        write_coefficients(&mut s, &item).unwrap();
        assert!(
            s.contains(".output_min = (-2147483647 - 1), /* -32768 */"),
            "{s}"
        );
    }

    #[test]
    fn a_bad_name_writes_nothing_of_the_item() {
        let mut s = String::new();
        let item = Item {
            name: "not a name",
            coefficients: EkcCoefficients::default(),
        };
        assert_eq!(write_coefficients(&mut s, &item), Err(fmt::Error));
        assert!(s.is_empty());
    }
}
