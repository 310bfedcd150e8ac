//! `defmt` output a person can read, without decimal formatting on target.
//!
//! Numbers go out as `{=f32}` / `{=f64}`: defmt sends their bits and the
//! host decoder prints them, so the firmware formats nothing. A Q16.16 value
//! or a [`FixedCoef`] is turned into an `f32` bit pattern with integer
//! operations only ([`fixed_to_f32`]), so no soft-float routine and no
//! `core::fmt` code is linked. Flags go out by name as interned literals.
//! Per-sample values (Ki·Ts, Ts/Tt, α, slew step) say so.

use fixed::types::I16F16;

use crate::config::Config;
use crate::controller::{Controller, Input, Output};
use crate::layout::{Features, Layout};
use crate::q::FixedCoef;
use crate::status::Status;

/// `mantissa · 2^-shift` as the nearest `f32` (ties to even), computed
/// with integer operations only. Exact for every Q16.16 value with at most
/// 24 significant bits; `shift ≤ 62` keeps every result a normal number.
#[must_use]
pub fn fixed_to_f32(mantissa: i32, shift: u32) -> f32 {
    if mantissa == 0 {
        return 0.0;
    }
    let sign = u32::from(mantissa < 0) << 31;
    let magnitude = mantissa.unsigned_abs();
    let top = 31 - magnitude.leading_zeros(); // position of the leading 1
    // 24-bit significand, rounded to nearest, ties to even.
    let (mut significand, mut exponent) = if top > 23 {
        let drop = top - 23;
        let kept = magnitude >> drop;
        let rest = magnitude & ((1 << drop) - 1);
        let half = 1 << (drop - 1);
        let up = rest > half || (rest == half && kept & 1 == 1);
        (kept + u32::from(up), top)
    } else {
        (magnitude << (23 - top), top)
    };
    if significand == 1 << 24 {
        significand >>= 1;
        exponent += 1;
    }
    // value = significand · 2^(exponent − 23 − shift); biased exponent
    // exponent − shift + 127 lies in 127 − 62 … 127 + 31: always normal.
    let biased = (exponent + 127).saturating_sub(shift.min(62));
    f32::from_bits(sign | (biased << 23) | (significand & 0x007f_ffff))
}

fn q16(x: I16F16) -> f32 {
    fixed_to_f32(x.to_bits(), 16)
}

/// A Q16.16 value that logs as a number without decimal formatting on
/// target (`fixed`'s own `defmt` output formats with `core::fmt`).
///
/// ```
/// use evenkeel::log::Q16;
/// use fixed::types::I16F16;
/// let x = Q16(I16F16::from_num(2.5));
/// assert_eq!(x.to_f32(), 2.5);
/// // defmt::info!("speed {}", x);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Q16(pub I16F16);

impl Q16 {
    /// The value as the log shows it: the nearest `f32`.
    #[must_use]
    pub fn to_f32(self) -> f32 {
        q16(self.0)
    }
}

impl defmt::Format for Q16 {
    fn format(&self, f: defmt::Formatter<'_>) {
        defmt::write!(f, "{=f32}", self.to_f32());
    }
}

fn coef(c: FixedCoef) -> f32 {
    fixed_to_f32(c.mantissa(), c.shift())
}

/// The set bits of `bits` (below `count`) by name, joined by `|`, or `-`
/// when none is set; `name` writes one bit's name (a literal, interned).
fn flags(f: defmt::Formatter<'_>, bits: u16, count: u16, name: impl Fn(defmt::Formatter<'_>, u16)) {
    if bits == 0 {
        defmt::write!(f, "-");
        return;
    }
    let mut first = true;
    for bit in (0..count).filter(|b| bits & (1 << b) != 0) {
        if !first {
            defmt::write!(f, "|");
        }
        first = false;
        name(f, bit);
    }
}

impl defmt::Format for Status {
    fn format(&self, f: defmt::Formatter<'_>) {
        flags(f, self.bits(), 11, |f, bit| match bit {
            0 => defmt::write!(f, "clamp_high"),
            1 => defmt::write!(f, "clamp_low"),
            2 => defmt::write!(f, "slew"),
            3 => defmt::write!(f, "downstream"),
            4 => defmt::write!(f, "integrator_held"),
            5 => defmt::write!(f, "deadband"),
            6 => defmt::write!(f, "tracking"),
            7 => defmt::write!(f, "engaged"),
            8 => defmt::write!(f, "non_finite"),
            9 => defmt::write!(f, "measurement_range"),
            _ => defmt::write!(f, "setpoint_range"),
        });
    }
}

impl defmt::Format for Features {
    fn format(&self, f: defmt::Formatter<'_>) {
        flags(f, u16::from(self.bits()), 5, |f, bit| match bit {
            0 => defmt::write!(f, "filter"),
            1 => defmt::write!(f, "deadband"),
            2 => defmt::write!(f, "setpoint_weight"),
            3 => defmt::write!(f, "slew"),
            _ => defmt::write!(f, "back_calculation"),
        });
    }
}

impl defmt::Format for FixedCoef {
    fn format(&self, f: defmt::Formatter<'_>) {
        defmt::write!(f, "{=f32}", coef(*self));
    }
}

/// The three backends' signals and coefficients as defmt numbers (`f32`;
/// the `f64` backend's values are rounded to `f32` for the log only).
macro_rules! loggable {
    ($t:ty, $signal:expr, $coef:expr) => {
        impl defmt::Format for Output<$t> {
            fn format(&self, f: defmt::Formatter<'_>) {
                let signal = $signal;
                defmt::write!(f, "command {=f32} [{}]", signal(self.command), self.status);
            }
        }

        impl defmt::Format for Input<$t> {
            fn format(&self, f: defmt::Formatter<'_>) {
                let signal = $signal;
                defmt::write!(
                    f,
                    "setpoint {=f32} measurement {=f32} feed-forward {=f32}",
                    signal(self.setpoint),
                    signal(self.measurement),
                    signal(self.feed_forward)
                );
                if let Some(a) = self.applied {
                    defmt::write!(f, " applied {=f32}", signal(a));
                }
            }
        }

        impl<L: Layout> defmt::Format for Config<$t, L> {
            fn format(&self, f: defmt::Formatter<'_>) {
                let (signal, coef) = ($signal, $coef);
                defmt::write!(
                    f,
                    "kp {=f32}, ki·Ts {=f32} per sample, output {=f32} … {=f32}, measurement {=f32} … {=f32}, features {}",
                    coef(self.kp),
                    coef(self.ki_ts),
                    signal(self.output_min),
                    signal(self.output_max),
                    signal(self.measurement_min),
                    signal(self.measurement_max),
                    self.features
                );
                if let Some(s) = self.slew_step() {
                    defmt::write!(f, ", slew {=f32} per sample", signal(s));
                }
                if let Some(a) = self.filter_alpha() {
                    defmt::write!(f, ", filter α {=f32} per sample", coef(a));
                }
                if let Some(w) = self.deadband() {
                    defmt::write!(f, ", deadband ±{=f32}", signal(w));
                }
                if let Some(b) = self.setpoint_weight() {
                    defmt::write!(f, ", setpoint weight {=f32}", coef(b));
                }
                if let Some(r) = self.tracking_ratio() {
                    defmt::write!(f, ", Ts/Tt {=f32}", coef(r));
                }
            }
        }

        impl<L: Layout> defmt::Format for Controller<$t, L> {
            fn format(&self, f: defmt::Formatter<'_>) {
                let signal = $signal;
                defmt::write!(
                    f,
                    "last command {=f32}, integral {=f32}; {}",
                    signal(self.last_command()),
                    signal(self.integral()),
                    self.config()
                );
            }
        }
    };
}

loggable!(I16F16, q16, coef);
loggable!(f32, |x: f32| x, |x: f32| x);
loggable!(f64, |x: f64| x as f32, |x: f64| x as f32);

#[cfg(test)]
mod tests {
    use super::*;

    /// Against the host's own conversion (IEEE-754 round to nearest even;
    /// the `as` cast of an exact `f64`).
    #[test]
    fn fixed_to_f32_rounds_like_ieee() {
        let mut seed: u32 = 0x1234_5678;
        let mut next = move || {
            seed ^= seed << 13;
            seed ^= seed >> 17;
            seed ^= seed << 5;
            seed
        };
        let edges = [
            1,
            -1,
            0x00ff_ffff,
            0x0100_0001,
            0x0100_0003,
            i32::MAX,
            -i32::MAX,
            i32::MIN,
        ];
        for shift in 0..=62u32 {
            for m in edges
                .into_iter()
                .chain((0..200).map(|_| next() as i32 >> (next() % 31)))
            {
                let want = (f64::from(m) / f64::powi(2.0, shift as i32)) as f32;
                assert_eq!(
                    fixed_to_f32(m, shift).to_bits(),
                    want.to_bits(),
                    "{m}·2^-{shift}"
                );
            }
        }
        assert_eq!(fixed_to_f32(0, 16), 0.0);
    }
}
