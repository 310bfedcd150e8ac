//! A closed loop on QEMU's mps2-an386 (Cortex-M4F): the Q16.16 controller
//! against a plant model computed on the core, every call logged through
//! semihosting in the replay format (`evenkeel::record`), then exit.
//! `boards/run` replays the log on the host with `evenkeel replay`.
#![no_std]
#![no_main]

use cortex_m_rt::{ExceptionFrame, entry, exception};
use cortex_m_semihosting::debug::{self, EXIT_FAILURE, EXIT_SUCCESS};
use cortex_m_semihosting::hio;
use evenkeel::fixed::types::I16F16;
use evenkeel::record::Record;
use evenkeel::{AntiWindup, Config, Controller, Input, Settings};

/// The same `[controller]` as `loop.toml` (the replay checks it).
const SETTINGS: Settings = Settings::new(0.01, 0.2, 0.4, 0.0, 1.0)
    .with_setpoint_weight(0.8)
    .with_slew_per_s(2.0)
    .with_filter_time_s(0.02)
    .with_anti_windup(AntiWindup::BackCalculation {
        tracking_time_s: 0.25,
    });
const CONFIG: Config<I16F16> = evenkeel::config!(I16F16, SETTINGS);

/// Steps: 20 s at 100 Hz.
const STEPS: u32 = 2000;
/// Plant: gain 10 K per unit of command, time constant 0.5 s, dead time
/// 5 samples (0.05 s); per sample the lag moves 1 − e^(−0.01/0.5) of the
/// way (0.019801327, computed on the host: the core needs no `exp`).
const GAIN: f32 = 10.0;
const ALPHA: f32 = 0.019_801_327;
const DELAY: usize = 5;

/// The reference of `loop.toml`: 0 K, then 4 K from 1 s, 2.5 K from 10 s.
fn reference(k: u32) -> f32 {
    match k {
        0..100 => 0.0,
        100..1000 => 4.0,
        _ => 2.5,
    }
}

/// `x` in Q16.16, rounded to nearest, saturated (NaN to zero), without a
/// panic path (`saturating_from_num` panics on NaN).
fn q16(x: f32) -> I16F16 {
    I16F16::checked_from_num(x).unwrap_or(if x > 0.0 {
        I16F16::MAX
    } else if x < 0.0 {
        I16F16::MIN
    } else {
        I16F16::ZERO
    })
}

/// A line buffer written with one semihosting call per record.
struct Line {
    bytes: [u8; 160],
    len: usize,
}

impl Line {
    fn push(&mut self, s: &[u8]) {
        for &b in s {
            if let Some(slot) = self.bytes.get_mut(self.len) {
                *slot = b;
                self.len += 1;
            }
        }
    }
}

#[entry]
fn main() -> ! {
    let Ok(mut out) = hio::hstdout() else {
        exit(false)
    };
    let mut pi = Controller::new(CONFIG);
    let mut emit = |r: &Record<I16F16>| {
        let mut line = Line {
            bytes: [0; 160],
            len: 0,
        };
        r.write(&mut |s: &[u8]| line.push(s));
        let _ = out.write_all(line.bytes.get(..line.len).unwrap_or(&[]));
    };
    let start = I16F16::ZERO;
    pi.engage(start);
    emit(&Record::Engage { k: 0, actuator: start });
    let mut y = 0.0f32;
    let mut pipe = [0.0f32; DELAY];
    let mut head = 0usize;
    for k in 0..STEPS {
        let input = Input::new(q16(reference(k)), q16(y));
        let output = pi.step_with(&input);
        emit(&Record::Step {
            k: u64::from(k),
            input,
            output,
        });
        // The command enters the dead-time pipe; the one from DELAY steps
        // ago drives the lag.
        let u: f32 = output.command.to_num();
        let acting = pipe.get(head).copied().unwrap_or(0.0);
        if let Some(slot) = pipe.get_mut(head) {
            *slot = u;
        }
        head = (head + 1) % DELAY;
        y += ALPHA * (GAIN * acting - y);
    }
    exit(true)
}

fn exit(passed: bool) -> ! {
    debug::exit(if passed { EXIT_SUCCESS } else { EXIT_FAILURE });
    loop {
        cortex_m::asm::wfi();
    }
}

#[exception]
unsafe fn HardFault(_frame: &ExceptionFrame) -> ! {
    exit(false)
}

#[panic_handler]
fn panic(_: &core::panic::PanicInfo<'_>) -> ! {
    unsafe extern "C" {
        /// Deliberately defined nowhere: a firmware that still contains a
        /// panic path fails to link, naming this symbol.
        fn evenkeel_firmware_has_a_panic_path() -> !;
    }
    // SAFETY: never runs; the link fails first if this is reachable.
    unsafe { evenkeel_firmware_has_a_panic_path() }
}
