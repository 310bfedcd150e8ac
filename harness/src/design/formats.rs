//! Which fixed-point format a proposal needs: Q16.16 and the 16-bit
//! backend side by side, each with its steady-state resolution, its
//! limit-cycle bound in command LSB and whether it fits the scenario.
//!
//! * **Steady-state resolution**: the larger of one measurement LSB (an
//!   error below it is not seen) and the integrator's stall bound (an
//!   error below it never moves the integrator: FORMATS.md §3 and §8), in
//!   measurement units.
//! * **Limit-cycle bound**: one sample's rounding G of FORMATS.md §4 / §8
//!   (`compare::format_bounds`, `format_bounds_16`), in command LSB: a
//!   quantization cycle hunts between values about that far apart.
//! * **Fits** when the backend accepts the settings, the stored Kp and
//!   Ki·Ts are within [`super::COEFFICIENT_TOLERANCE`] of the wanted ones,
//!   and the resolution is at most the `steady_state_error` criterion (a
//!   quarter of it, so the quantization uses at most a quarter of the
//!   allowance: our own rule), or without one 0.1 % of the reference span
//!   (the default of `[compare] max_lsb_pct`).

use evenkeel::fixed::types::I16F16;
use evenkeel::{Config, Settings, Slim16};

use crate::compare::{
    DEFAULT_MAX_LSB_PCT, FormatBounds, LSB, Stall, format_bounds, format_bounds_16,
    physical_bounds, stall, stall_16,
};
use crate::criteria::{Bound, MetricKey};
use crate::outcome::BackendKind;
use crate::scenario::Scenario;

/// Share of the steady-state error criterion the format's resolution may
/// take (our own rule).
pub const RESOLUTION_SHARE: f64 = 0.25;

/// One format's fit to a proposal.
#[derive(Debug, Clone, PartialEq)]
pub struct FormatFit {
    /// `fixed` (Q16.16) or `slim16` (16-bit).
    pub backend: BackendKind,
    /// `Q16.16` or `16-bit`.
    pub label: &'static str,
    /// Why the backend refuses the settings, if it does.
    pub refused: Option<String>,
    /// One measurement LSB, measurement units.
    pub measurement_lsb: f64,
    /// One command LSB, command units.
    pub command_lsb: f64,
    /// Smallest error that moves the integrator, measurement units
    /// (`None` without integral action).
    pub stall_error: Option<f64>,
    /// Steady-state resolution, measurement units.
    pub resolution: f64,
    /// The resolution allowed, measurement units, and where it comes from.
    pub allowed: (f64, &'static str),
    /// Largest relative error of the stored Kp and Ki·Ts.
    pub gain_error: f64,
    /// Limit-cycle bound, command LSB.
    pub limit_cycle_lsb: f64,
}

impl FormatFit {
    /// Accepted, gains within tolerance, resolution within what is allowed.
    #[must_use]
    pub fn fits(&self) -> bool {
        self.refused.is_none()
            && self.gain_error <= super::COEFFICIENT_TOLERANCE
            && self.resolution <= self.allowed.0
    }

    /// One line: `16-bit: steady-state resolution 0.0005 m/s (≤ 0.005), fits; limit cycle bound 2.1 LSB`.
    #[must_use]
    pub fn summary(&self, unit: &str) -> String {
        let n = |x: f64| crate::report::format_number(Some(x));
        if let Some(e) = &self.refused {
            return format!("{}: refused ({e})", self.label);
        }
        format!(
            "{}: steady-state resolution {}{unit} (allowed {}{unit}, {}), {}; limit cycle bound {} LSB of {}; gains stored within {}",
            self.label,
            n(self.resolution),
            n(self.allowed.0),
            self.allowed.1,
            if self.fits() { "fits" } else { "DOES NOT FIT" },
            n(self.limit_cycle_lsb),
            n(self.command_lsb),
            n(self.gain_error)
        )
    }
}

/// The two fixed formats for `settings` in scenario `s`.
#[must_use]
pub fn format_fits(s: &Scenario, settings: &Settings) -> Vec<FormatFit> {
    let mut base = s.clone();
    base.controller = *settings;
    let (lo, hi) = s.setup.reference.range();
    let span = (hi - lo).abs().max(lo.abs().max(hi.abs()));
    let allowed = s
        .criteria
        .iter()
        .find(|c| c.metric == MetricKey::SteadyStateError && c.bound == Bound::Max)
        .map_or(
            (
                DEFAULT_MAX_LSB_PCT / 100.0 * span,
                "0.1 % of the reference span",
            ),
            |c| {
                (
                    RESOLUTION_SHARE * c.limit,
                    "a quarter of the steady_state_error criterion",
                )
            },
        );
    let quantum = s.sensor.map_or(0.0, |q| q.quantum);
    let ref_max = lo.abs().max(hi.abs());
    let mut out = Vec::with_capacity(2);
    // Q16.16.
    let m = settings.scaling.measurement.per_unit;
    let c = settings.scaling.command.per_unit;
    let fixed = Config::<I16F16>::try_new(settings).map_err(|e| e.to_string());
    let bounds = physical_bounds(format_bounds, settings, quantum, 0, span, ref_max);
    out.push(fit(
        BackendKind::Fixed,
        "Q16.16",
        fixed.as_ref().err().cloned(),
        (LSB / m, LSB / c),
        fixed.as_ref().ok().and_then(stall).map(|st| st.bound / m),
        allowed,
        fixed.as_ref().map_or(f64::INFINITY, |cf| {
            gain_error(settings, cf.kp().to_f64(), cf.ki_ts().to_f64())
        }),
        bounds.ok(),
    ));
    // 16-bit, on the scale it would run with.
    let s16 = base.settings_on(BackendKind::Slim16);
    let m16 = s16.scaling.measurement.per_unit;
    let c16 = s16.scaling.command.per_unit;
    let slim = Config::<Slim16>::try_new(&s16).map_err(|e| e.to_string());
    let bounds = physical_bounds(format_bounds_16, &s16, quantum, 0, span, ref_max);
    out.push(fit(
        BackendKind::Slim16,
        "16-bit",
        slim.as_ref().err().cloned(),
        (1.0 / m16, 1.0 / c16),
        slim.as_ref()
            .ok()
            .and_then(|cf| stall_16(cf, m16))
            .map(|st: Stall| st.bound),
        allowed,
        slim.as_ref().map_or(f64::INFINITY, |cf| {
            gain_error(&s16, cf.kp().to_f64(), cf.ki_ts().to_f64())
        }),
        bounds.ok(),
    ));
    out
}

/// Largest relative error of the stored Kp and Ki·Ts against the
/// per-sample values of `settings` (both in the settings' raw units).
fn gain_error(settings: &Settings, kp: f64, ki_ts: f64) -> f64 {
    let rel = |stored: f64, wanted: f64| {
        if wanted == 0.0 {
            stored.abs()
        } else {
            ((stored - wanted) / wanted).abs()
        }
    };
    settings
        .per_sample()
        .map_or(f64::INFINITY, |p| rel(kp, p.kp).max(rel(ki_ts, p.ki_ts)))
}

#[allow(clippy::too_many_arguments)]
fn fit(
    backend: BackendKind,
    label: &'static str,
    refused: Option<String>,
    (measurement_lsb, command_lsb): (f64, f64),
    stall_error: Option<f64>,
    allowed: (f64, &'static str),
    gain_error: f64,
    bounds: Option<FormatBounds>,
) -> FormatFit {
    FormatFit {
        backend,
        label,
        refused,
        measurement_lsb,
        command_lsb,
        stall_error,
        resolution: measurement_lsb.max(stall_error.unwrap_or(0.0)),
        allowed,
        gain_error,
        limit_cycle_lsb: bounds.map_or(f64::NAN, |b| b.per_sample / command_lsb),
    }
}

/// The smallest format that fits: `16-bit`, `Q16.16`, or `None`.
#[must_use]
pub fn needed(fits: &[FormatFit]) -> Option<&FormatFit> {
    fits.iter()
        .filter(|f| f.fits())
        .min_by_key(|f| u8::from(f.backend == BackendKind::Fixed))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn demo_resolutions_worked_by_hand() {
        let s = Scenario::demo().expect("demo loads");
        let fits = format_fits(&s, &s.controller);
        let q = &fits[0];
        assert_eq!(q.measurement_lsb, LSB);
        assert!(q.refused.is_none());
        let sixteen = &fits[1];
        // The 16-bit scale the harness picks: a power of two per m/s.
        let pu = s
            .settings_on(BackendKind::Slim16)
            .scaling
            .measurement
            .per_unit;
        assert_eq!(sixteen.measurement_lsb, 1.0 / pu);
        assert!(sixteen.resolution >= sixteen.measurement_lsb);
        assert!(q.resolution < sixteen.resolution);
    }
}
