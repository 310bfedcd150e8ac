//! The settings each backend runs with: the scenario's own, and for the
//! 16-bit backend a per-loop scale when the scenario states none.

use evenkeel::{Scaling, Settings};

use super::Scenario;

/// The measurement range `Settings::new` starts with (±30 000): a scenario
/// that leaves it states no range of its own.
const DEFAULT_RANGE: (f64, f64) = (-30_000.0, 30_000.0);

/// The settings of a 16-bit loop for `s` when it has no `[scaling]`:
/// power-of-two scales (exact, no offset). The measurement side
/// (`Scaling::covering`) puts the stated measurement range, or without one
/// the reference's range and the initial output, within ±2¹⁴ raw (one bit
/// of headroom for `r − y`); the measurement range is then cut to what 16
/// bits hold on that scale (−32 768 … 32 767 raw), so a reading beyond it
/// is flagged and clamped as on the device. The command side puts the
/// integrator's range, the output limits widened by their span on both
/// sides, within ±2¹⁵ raw: the integrator then saturates by at most one
/// LSB when it is narrowed to 16 bits in `P + I + ff` (with the output limits at ±2¹⁴
/// it could reach 3·2¹⁴, and a saturated proportional part and a saturated
/// integrator would cancel to a command stuck near zero).
pub(crate) fn sixteen_bit(s: &Scenario) -> Settings {
    let c = s.controller;
    let stated = (c.measurement_min, c.measurement_max) != DEFAULT_RANGE;
    let (lo, hi) = if stated {
        (c.measurement_min, c.measurement_max)
    } else {
        let (lo, hi) = s.setup.reference.range();
        (lo.min(s.initial_output), hi.max(s.initial_output))
    };
    let mut scaling = Scaling::covering(lo, hi, c.output_min, c.output_max);
    let span = c.output_max - c.output_min;
    let widest = (c.output_min - span).abs().max((c.output_max + span).abs());
    scaling.command.per_unit = power_of_two_within(widest, 32_768.0);
    let mut out = c.with_scaling(scaling);
    if !stated {
        let per_unit = scaling.measurement.per_unit;
        out = out.with_measurement_range(-32_768.0 / per_unit, 32_767.0 / per_unit);
    }
    out
}

/// The largest `2^k`, −20 ≤ k ≤ 20, with `m · 2^k ≤ top`.
fn power_of_two_within(m: f64, top: f64) -> f64 {
    let mut p = f64::powi(2.0, 20);
    for _ in 0..40 {
        if m * p <= top {
            break;
        }
        p /= 2.0;
    }
    p
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn demo_scale_worked_by_hand() {
        // The baggage tug: reference 0 … 3 m/s or so, command −1 … 1.
        let s = Scenario::demo().expect("demo loads");
        let (lo, hi) = s.setup.reference.range();
        let m = lo.abs().max(hi.abs());
        let settings = sixteen_bit(&s);
        let pu = settings.scaling.measurement.per_unit;
        // The largest power of two with m · 2^k ≤ 16 384.
        assert!(m * pu <= 16_384.0 && m * pu * 2.0 > 16_384.0, "{m} {pu}");
        // Command −1 … 1: the integrator's range −3 … 3 within 2¹⁵ raw:
        // 8192 per unit (3 · 8192 = 24 576; 16 384 would give 49 152).
        assert_eq!(settings.scaling.command.per_unit, 8192.0);
        assert_eq!(settings.measurement_max * pu, 32_767.0);
        // A scenario with [scaling] keeps it.
        let mut own = s.clone();
        own.controller = own
            .controller
            .with_scaling(Scaling::NONE.with_measurement(evenkeel::Scale::new(100.0, 0.0)));
        assert_eq!(
            own.settings_on(crate::BackendKind::Slim16).scaling,
            own.controller.scaling
        );
    }
}
