//! Fuzz target 1: a controller configuration from arbitrary numbers plus an
//! arbitrary sequence of steps, engages, tracking, resets and re-tunes, on
//! every backend (Q16.16, f32, f64).
//!
//! Must never panic (overflow checks are on in this build). Whenever the
//! backend accepted the configuration, every command must lie within the
//! output limits, move from the last command by at most the slew step
//! (except on an engage or tracking step, which jumps to the actuator's
//! value by design), be finite, and repeat the last command bit for bit
//! when the input was non-finite.
#![no_main]

use evenkeel::fixed::types::I16F16;
use evenkeel::{AntiWindup, Backend, Config, Controller, Input, Settings, Status};
use libfuzzer_sys::arbitrary::{Result, Unstructured};
use libfuzzer_sys::fuzz_target;

/// A number: usually from a physically sensible range, sometimes raw bits
/// (NaN, infinities, subnormals, huge values), sometimes a corner value.
fn num(u: &mut Unstructured<'_>) -> Result<f64> {
    const CORNERS: [f64; 12] = [
        0.0,
        -0.0,
        1.0,
        -1.0,
        f64::NAN,
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::MIN_POSITIVE,
        32_767.999_984_741_21,
        -32_768.0,
        1.0e12,
        1.0e150,
    ];
    Ok(match u.int_in_range(0u8..=9)? {
        0 => f64::from_bits(u.arbitrary()?),
        1 => CORNERS[usize::from(u.int_in_range(0u8..=11)?)],
        2 => f64::from(u.arbitrary::<i32>()?) / 65_536.0,
        3 => f64::from(u.arbitrary::<i16>()?) * 1.0e-3,
        _ => f64::from(u.arbitrary::<i16>()?) / 64.0,
    })
}

fn positive(u: &mut Unstructured<'_>) -> Result<f64> {
    Ok(if u.ratio(1u8, 8)? {
        num(u)?
    } else {
        f64::from(u.int_in_range(1u32..=1_000_000)?) * 1.0e-5
    })
}

fn settings(u: &mut Unstructured<'_>) -> Result<Settings> {
    let mut s = Settings::new(positive(u)?, num(u)?.abs(), num(u)?.abs(), num(u)?, num(u)?);
    if u.arbitrary()? {
        s = s.with_setpoint_weight(num(u)?);
    }
    if u.arbitrary()? {
        s = s.with_slew_per_s(positive(u)?);
    }
    if u.arbitrary()? {
        s = s.with_filter_time_s(positive(u)?);
    }
    if u.arbitrary()? {
        s = s.with_deadband(num(u)?);
    }
    if u.arbitrary()? {
        s = s.with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: positive(u)?,
        });
    }
    if u.arbitrary()? {
        s = s.with_measurement_range(num(u)?, num(u)?);
    }
    Ok(s)
}

fn run<B: Backend>(first: &Settings, data: &[u8]) -> Result<()> {
    let Ok(config) = Config::<B>::try_new(first) else {
        return Ok(());
    };
    let mut u = Unstructured::new(data);
    let mut pi = Controller::new(config);
    let mut steps = 0;
    while !u.is_empty() && steps < 512 {
        steps += 1;
        let before = pi.last_command();
        let (lo, hi) = pi.config().output_limits();
        let slew = pi.config().slew_step();
        let out = match u.int_in_range(0u8..=15)? {
            0 => {
                pi.engage(B::from_f64(num(&mut u)?));
                continue;
            }
            1 => pi.track(
                &Input::new(B::from_f64(num(&mut u)?), B::from_f64(num(&mut u)?)),
                B::from_f64(num(&mut u)?),
            ),
            2 => {
                pi.reset();
                continue;
            }
            3 => {
                if let Ok(c) = Config::<B>::try_new(&settings(&mut u)?) {
                    pi.retune(c);
                }
                continue;
            }
            _ => {
                let mut input = Input::new(B::from_f64(num(&mut u)?), B::from_f64(num(&mut u)?));
                if u.arbitrary()? {
                    input = input.with_feed_forward(B::from_f64(num(&mut u)?));
                }
                if u.arbitrary()? {
                    input = input.with_applied(B::from_f64(num(&mut u)?));
                }
                pi.step_with(&input)
            }
        };
        let u_k = out.command;
        assert!(u_k.is_finite(), "non-finite command {u_k:?}");
        assert!(lo <= u_k && u_k <= hi, "{u_k:?} outside [{lo:?}, {hi:?}]");
        if out.status == Status::NON_FINITE {
            assert_eq!(u_k.to_f64().to_bits(), before.to_f64().to_bits());
        } else if let Some(step) = slew
            && !out.status.contains(Status::ENGAGED)
        {
            assert!(
                before.sub(step) <= u_k && u_k <= before.add(step),
                "slew: {before:?} -> {u_k:?}, step {step:?}"
            );
        }
        assert_eq!(pi.last_command().to_f64().to_bits(), u_k.to_f64().to_bits());
    }
    Ok(())
}

fuzz_target!(|data: &[u8]| {
    let mut u = Unstructured::new(data);
    let Ok(s) = settings(&mut u) else { return };
    let rest = u.take_rest();
    let _ = run::<I16F16>(&s, rest);
    let _ = run::<f32>(&s, rest);
    let _ = run::<f64>(&s, rest);
});
