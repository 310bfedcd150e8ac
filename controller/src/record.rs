//! One line per controller call, in the device-log format that
//! `evenkeel replay` reads (`ekr1 step k=… r=… y=… a=… f=… u=… s=…`): a
//! firmware logs every call and the host replays the log through the same
//! controller, bit for bit.
//!
//! Values go out in the backend's raw form, so nothing is lost to decimal
//! printing: Q16.16 as its 32-bit integer in decimal, [`crate::Slim16`] as
//! its 16-bit raw value (the counts) in decimal, `f32`/`f64` as their
//! IEEE 754 bits in hexadecimal, `-` for an absent value. [`Record::write`]
//! formats the line with integer operations only (no `core::fmt`, no
//! float, no panic path) into any byte sink (semihosting, a UART); with
//! the `defmt` feature a [`Record`] is also a `defmt::Format` whose decoded
//! text is the same line.
//!
//! ```
//! use evenkeel::fixed::types::I16F16;
//! use evenkeel::record::Record;
//! use evenkeel::{Config, Controller, Input, Settings};
//! let config = Config::<I16F16>::try_new(&Settings::new(0.01, 2.0, 1.0, -10.0, 10.0))?;
//! let mut pi = Controller::new(config);
//! let input = Input::new(I16F16::from_num(1), I16F16::from_num(0.5));
//! let output = pi.step_with(&input);
//! let mut line = Vec::new();
//! Record::Step { k: 0, input, output }.write(&mut |bytes: &[u8]| line.extend_from_slice(bytes));
//! assert_eq!(
//!     String::from_utf8(line).unwrap(),
//!     "ekr1 step k=0 r=65536 y=32768 a=- f=0 u=65536 s=0x0000\n"
//! );
//! # Ok::<(), evenkeel::ConfigError>(())
//! ```

use fixed::types::I16F16;

use crate::backend::Backend;
use crate::controller::{Input, Output};

/// A backend value in the raw text form of the log.
pub trait RawText: Backend {
    /// Writes the value's raw form into `sink`.
    fn write_raw(self, sink: &mut dyn FnMut(&[u8]));
}

/// Writes `n` in decimal.
fn decimal(mut n: u64, sink: &mut dyn FnMut(&[u8])) {
    let mut digits = [0u8; 20];
    let mut len = 0usize;
    for d in digits.iter_mut().rev() {
        // `n % 10 < 10`: the cast keeps every bit.
        #[allow(clippy::cast_possible_truncation)]
        let digit = (n % 10) as u8;
        *d = b'0' + digit;
        len += 1;
        n /= 10;
        if n == 0 {
            break;
        }
    }
    let start = digits.len() - len;
    if let Some(s) = digits.get(start..) {
        sink(s);
    }
}

/// Writes `bits` as `0x` and `nibbles` hex digits.
fn hex(bits: u64, nibbles: u32, sink: &mut dyn FnMut(&[u8])) {
    sink(b"0x");
    for i in (0..nibbles).rev() {
        // One nibble: the mask keeps it below 16.
        #[allow(clippy::cast_possible_truncation)]
        let v = ((bits >> (4 * i)) & 0xf) as u8;
        let c = if v < 10 { b'0' + v } else { b'a' + (v - 10) };
        sink(&[c]);
    }
}

impl RawText for I16F16 {
    fn write_raw(self, sink: &mut dyn FnMut(&[u8])) {
        let bits = self.to_bits();
        if bits < 0 {
            sink(b"-");
        }
        decimal(u64::from(bits.unsigned_abs()), sink);
    }
}

impl RawText for crate::Slim16 {
    /// The raw 16-bit value in decimal (the counts themselves).
    fn write_raw(self, sink: &mut dyn FnMut(&[u8])) {
        let raw = self.raw();
        if raw < 0 {
            sink(b"-");
        }
        decimal(u64::from(raw.unsigned_abs()), sink);
    }
}

impl RawText for f32 {
    fn write_raw(self, sink: &mut dyn FnMut(&[u8])) {
        hex(u64::from(self.to_bits()), 8, sink);
    }
}

impl RawText for f64 {
    fn write_raw(self, sink: &mut dyn FnMut(&[u8])) {
        hex(self.to_bits(), 16, sink);
    }
}

/// One controller call, as the log records it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Record<B> {
    /// `Controller::step_with(&input)` gave `output`.
    Step {
        /// Sample index.
        k: u64,
        /// The input.
        input: Input<B>,
        /// The output.
        output: Output<B>,
    },
    /// `Controller::track(&input, actuator)` gave `output`.
    Track {
        /// Sample index.
        k: u64,
        /// The input.
        input: Input<B>,
        /// The actuator's value.
        actuator: B,
        /// The output.
        output: Output<B>,
    },
    /// `Controller::engage(actuator)`.
    Engage {
        /// Sample index.
        k: u64,
        /// The actuator's value.
        actuator: B,
    },
    /// `Controller::reset()`.
    Reset {
        /// Sample index.
        k: u64,
    },
}

fn field<B: RawText>(name: &[u8], v: Option<B>, sink: &mut dyn FnMut(&[u8])) {
    sink(name);
    match v {
        Some(x) => x.write_raw(sink),
        None => sink(b"-"),
    }
}

impl<B: RawText> Record<B> {
    /// Writes the record as one line (with its newline) into `sink`.
    pub fn write(&self, sink: &mut dyn FnMut(&[u8])) {
        let (kind, k): (&[u8], u64) = match self {
            Self::Step { k, .. } => (b"ekr1 step k=", *k),
            Self::Track { k, .. } => (b"ekr1 track k=", *k),
            Self::Engage { k, .. } => (b"ekr1 engage k=", *k),
            Self::Reset { k } => (b"ekr1 reset k=", *k),
        };
        sink(kind);
        decimal(k, sink);
        match self {
            Self::Step { input, output, .. } | Self::Track { input, output, .. } => {
                field(b" r=", Some(input.setpoint), sink);
                field(b" y=", Some(input.measurement), sink);
                field(b" a=", input.applied, sink);
                field(b" f=", Some(input.feed_forward), sink);
                if let Self::Track { actuator, .. } = self {
                    field(b" v=", Some(*actuator), sink);
                }
                field(b" u=", Some(output.command), sink);
                sink(b" s=");
                hex(u64::from(output.status.bits()), 4, sink);
            }
            Self::Engage { actuator, .. } => field(b" v=", Some(*actuator), sink),
            Self::Reset { .. } => {}
        }
        sink(b"\n");
    }
}

#[cfg(feature = "defmt")]
mod defmt_form {
    //! The same line through `defmt`: integers go out as integers (the
    //! host decoder prints them in decimal or, with `:#x` hints, in hex),
    //! so the decoded text equals [`Record::write`]'s.

    use super::Record;
    use fixed::types::I16F16;

    macro_rules! opt {
        ($f:expr, $name:tt, $v:expr, $fmt:tt, $bits:expr) => {
            defmt::write!($f, $name);
            match $v {
                Some(x) => defmt::write!($f, $fmt, ($bits)(x)),
                None => defmt::write!($f, "-"),
            }
        };
    }

    macro_rules! format_record {
        ($t:ty, $fmt:tt, $bits:expr) => {
            impl defmt::Format for Record<$t> {
                fn format(&self, f: defmt::Formatter<'_>) {
                    match self {
                        Self::Step { k, input, output }
                        | Self::Track {
                            k, input, output, ..
                        } => {
                            let kind = if matches!(self, Self::Step { .. }) {
                                "step"
                            } else {
                                "track"
                            };
                            defmt::write!(f, "ekr1 {=str} k={=u64}", kind, k);
                            opt!(f, " r=", Some(input.setpoint), $fmt, $bits);
                            opt!(f, " y=", Some(input.measurement), $fmt, $bits);
                            opt!(f, " a=", input.applied, $fmt, $bits);
                            opt!(f, " f=", Some(input.feed_forward), $fmt, $bits);
                            if let Self::Track { actuator, .. } = self {
                                opt!(f, " v=", Some(*actuator), $fmt, $bits);
                            }
                            opt!(f, " u=", Some(output.command), $fmt, $bits);
                            defmt::write!(f, " s={=u16:#06x}", output.status.bits());
                        }
                        Self::Engage { k, actuator } => {
                            defmt::write!(f, "ekr1 engage k={=u64}", k);
                            opt!(f, " v=", Some(*actuator), $fmt, $bits);
                        }
                        Self::Reset { k } => defmt::write!(f, "ekr1 reset k={=u64}", k),
                    }
                }
            }
        };
    }

    format_record!(I16F16, "{=i32}", |x: I16F16| x.to_bits());
    format_record!(crate::Slim16, "{=i16}", |x: crate::Slim16| x.raw());
    format_record!(f32, "{=u32:#010x}", |x: f32| x.to_bits());
    format_record!(f64, "{=u64:#018x}", |x: f64| x.to_bits());
}

/// The raw forms, checked (a test sink).
#[cfg(test)]
mod tests {
    use super::*;

    extern crate std;
    use std::string::String;
    use std::vec::Vec;

    fn text<B: RawText>(r: &Record<B>) -> String {
        let mut v: Vec<u8> = Vec::new();
        r.write(&mut |b: &[u8]| v.extend_from_slice(b));
        String::from_utf8(v).unwrap_or_default()
    }

    #[test]
    fn raw_forms_worked_by_hand() {
        let mut v: Vec<u8> = Vec::new();
        let mut sink = |b: &[u8]| v.extend_from_slice(b);
        I16F16::from_bits(i32::MIN).write_raw(&mut sink);
        sink(b" ");
        I16F16::from_bits(-65536).write_raw(&mut sink);
        sink(b" ");
        crate::Slim16::MIN.write_raw(&mut sink);
        sink(b" ");
        crate::Slim16::from_raw(812).write_raw(&mut sink);
        sink(b" ");
        1.0f32.write_raw(&mut sink);
        sink(b" ");
        (-2.0f64).write_raw(&mut sink);
        sink(b" ");
        decimal(u64::MAX, &mut sink);
        assert_eq!(
            String::from_utf8(v).unwrap_or_default(),
            "-2147483648 -65536 -32768 812 0x3f800000 0xc000000000000000 18446744073709551615"
        );
        assert_eq!(text(&Record::<f32>::Reset { k: 7 }), "ekr1 reset k=7\n");
        assert_eq!(
            text(&Record::Engage {
                k: 0,
                actuator: I16F16::from_bits(32768)
            }),
            "ekr1 engage k=0 v=32768\n"
        );
    }
}
