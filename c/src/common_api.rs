//! Functions for both controller types: default settings and the text of a
//! code.

use core::ffi::c_char;
use core::fmt;

use evenkeel::Settings;

use crate::codes::{self, EKC_OK, EkcCode};
use crate::storage::{self, Out};
use crate::types::EkcSettings;

/// Fill `*out` with the required settings and a default for every other
/// one: setpoint weight 1, no slew limit, filter or deadband, conditional
/// integration, measurement range ±30 000, raw units = physical units.
/// Nothing is checked here (`ekc_configure` checks).
///
/// # Safety
/// `out` is null (refused with `EKC_ERR_NULL`) or points to an
/// `EkcSettings` that no other call uses at the same time.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_settings_init(
    out: *mut EkcSettings,
    period_s: f64,
    kp: f64,
    ki_per_s: f64,
    output_min: f64,
    output_max: f64,
) -> EkcCode {
    match Out::new(out) {
        Ok(out) => {
            let s = Settings::new(period_s, kp, ki_per_s, output_min, output_max);
            out.put(EkcSettings::from_settings(&s));
            EKC_OK
        }
        Err(code) => code,
    }
}

/// Writes as much of a text as fits, always NUL-terminated, and counts
/// the whole.
struct Truncating<'a> {
    buffer: Option<&'a mut [u8]>,
    len: usize,
}

impl fmt::Write for Truncating<'_> {
    fn write_str(&mut self, s: &str) -> fmt::Result {
        if let Some(buffer) = self.buffer.as_deref_mut() {
            // Room for the text, keeping one byte for the NUL.
            let room = buffer.len().saturating_sub(1);
            for (slot, &byte) in buffer
                .iter_mut()
                .take(room)
                .skip(self.len)
                .zip(s.as_bytes())
            {
                *slot = byte;
            }
        }
        self.len = self.len.saturating_add(s.len());
        Ok(())
    }
}

/// Write what `code` means (for a configuration error, the setting and
/// the rule it breaks) into `buffer`, at most `capacity` bytes including
/// the terminating NUL, and return the length of the whole text (without
/// NUL), as `snprintf` does: a return value ≥ `capacity` means it was cut.
/// A null `buffer` or zero `capacity` only measures. Unknown codes have a
/// text too. (Links `core::fmt`: on a small target, print the code instead.)
///
/// # Safety
/// `buffer` is null or points to `capacity` writable bytes that no other
/// call uses at the same time.
#[unsafe(no_mangle)]
pub unsafe extern "C" fn ekc_code_text(
    code: EkcCode,
    buffer: *mut c_char,
    capacity: usize,
) -> usize {
    let mut out = Truncating {
        buffer: storage::text_buffer(buffer, capacity),
        len: 0,
    };
    // `Truncating` never fails.
    let _ = codes::describe(code, &mut out);
    if let Some(buffer) = out.buffer {
        let end = out.len.min(buffer.len().saturating_sub(1));
        if let Some(nul) = buffer.get_mut(end) {
            *nul = 0;
        }
    }
    out.len
}
