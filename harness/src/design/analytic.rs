//! The analytic starting point of a design: SIMC or pole placement over
//! the corners, comfort limits from the acceleration and jerk criteria.

use evenkeel::{AntiWindup, Settings};

use super::margins::LinearPlant;
use super::model::{corners, reference_rate};
use super::tuning::{Fopdt, Pi, half_rule, pole_placement, simc};
use super::{DesignError, Method, Proposal, Request, corner_margins, fixed_check};
use crate::criteria::{Bound, MetricKey, Scope};
use crate::scenario::Scenario;
use crate::sweep::Param;

/// `x` rounded to 3 significant digits.
pub(crate) fn round3(x: f64) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    #[allow(clippy::cast_possible_truncation)]
    let e = x.abs().log10().floor() as i32 - 2;
    let scale = 10f64.powi(e);
    let r = (x / scale).round() * scale;
    // Print-clean value (e.g. 0.35, not 0.35000000000000003).
    format!("{r:.12e}").parse().unwrap_or(r)
}

pub(crate) fn criterion_max(s: &Scenario, metric: MetricKey) -> Option<f64> {
    s.criteria
        .iter()
        .filter(|c| c.metric == metric && c.bound == Bound::Max && c.scope == Scope::Run)
        .map(|c| c.limit)
        .reduce(f64::min)
}

/// Designs a controller for `s` as `req` asks.
///
/// # Errors
/// [`DesignError`] for a bad request or an invalid proposal.
#[allow(clippy::too_many_lines)]
pub fn design(s: &Scenario, req: &Request) -> Result<Proposal, DesignError> {
    let ts = s.controller.period_s;
    let mut why = Vec::new();
    let corners = corners(s);
    let models: Vec<LinearPlant> = corners.iter().map(|c| c.plant).collect();
    let rate_max = models
        .iter()
        .map(LinearPlant::rate_gain)
        .fold(0.0, f64::max);
    let rate_min = models
        .iter()
        .map(LinearPlant::rate_gain)
        .fold(f64::INFINITY, f64::min);
    if !(rate_min > 0.0 && rate_max.is_finite()) {
        return Err(DesignError::Request(
            "the plant has no gain at some corner".into(),
        ));
    }
    why.push(format!(
        "plant: {} corners (uncertainty box x gain-factor extremes x operating points); output rate per unit command {:.4} .. {:.4} {}/s",
        corners.len(),
        rate_min,
        rate_max,
        s.output_unit
    ));

    // Closed-loop target.
    let tau_c_spec = match req.closed_loop_time_s {
        Some(t) if t > 0.0 && t.is_finite() => {
            why.push(format!("closed-loop time constant τc = {t} s (requested)"));
            t
        }
        Some(t) => {
            return Err(DesignError::Request(format!(
                "closed-loop time {t} s must be > 0"
            )));
        }
        None => {
            let settle = criterion_max(s, MetricKey::SettlingTime).map(|t| t / 8.0);
            let rise = criterion_max(s, MetricKey::RiseTime).map(|t| t / 4.4);
            let t = match (settle, rise) {
                (Some(a), Some(b)) => a.min(b),
                (Some(a), None) | (None, Some(a)) => a,
                (None, None) => 20.0 * ts,
            };
            // Lag-dominant corners (τ1 > 4(τc + θ)) close an integrating-like
            // loop whose slow mode is 2(τc + θ), not τc: halve τc there.
            let lag_dominant = models.iter().any(|m| {
                #[allow(clippy::cast_precision_loss)]
                let theta = m.dead_time_s + m.actuator_tau_s + m.sensor_delay as f64 * ts;
                m.integrating || m.tau_s > 4.0 * (t + theta)
            });
            let t = if lag_dominant { t / 2.0 } else { t };
            why.push(format!(
                "closed-loop time constant τc = {} s at the slowest corner: min(settling limit/8, rise limit/4.4), i.e. a first-order loop settles (2 %) in 4τc with a factor 2 to spare{}",
                round3(t),
                if lag_dominant {
                    "; halved because the plant is integrating or lag-dominant (τ1 > 4(τc+θ)), where SIMC's closed loop has its slow mode at 2(τc+θ)"
                } else {
                    ""
                }
            ));
            t
        }
    };
    if !(req.damping > 0.0 && req.damping.is_finite()) {
        return Err(DesignError::Request("damping must be > 0".into()));
    }

    // Noise at the controller input.
    let noise_hi = s
        .uncertainty
        .iter()
        .find(|u| u.param == Param::SensorNoiseStd)
        .map(|u| u.dist.support().1);
    let sigma = s.sensor.map_or(0.0, |p| {
        let n = noise_hi.unwrap_or(p.noise_std);
        (n * n + p.quantum * p.quantum / 12.0).sqrt()
    });
    let (phys_lo, phys_hi) = s
        .actuator
        .map_or((s.controller.output_min, s.controller.output_max), |a| {
            (a.min, a.max)
        });

    // Gains, with the filter in the effective delay; the filter depends on
    // Kp, so iterate a few times (converges in 2–3 rounds).
    let mut tf: Option<f64> = None;
    let mut pi = Pi { kp: 0.0, ti_s: 1.0 };
    let mut b = 1.0;
    let mut gain_notes = Vec::new();
    for _ in 0..4 {
        gain_notes.clear();
        let reduce = |m: &LinearPlant| {
            let tau1 = if m.integrating {
                f64::INFINITY
            } else {
                m.tau_s
            };
            #[allow(clippy::cast_precision_loss)]
            let sensor = m.sensor_delay as f64 * ts;
            half_rule(
                m.gain.abs(),
                tau1,
                &[m.actuator_tau_s, tf.unwrap_or(0.0)],
                &[m.dead_time_s, sensor, ts / 2.0],
            )
        };
        let fo: Vec<Fopdt> = models.iter().map(reduce).collect();
        match req.method {
            Method::Simc => {
                let perf = fo
                    .iter()
                    .map(|m| simc(m, tau_c_spec).kp)
                    .fold(0.0, f64::max);
                let robust = fo
                    .iter()
                    .map(|m| simc(m, m.delay_s).kp)
                    .fold(f64::INFINITY, f64::min);
                let kp = if perf > robust {
                    gain_notes.push(format!(
                        "Kp limited to {} by SIMC's tight-control bound τc ≥ θ at the fastest corner; the slowest corner will be slower than asked",
                        round3(robust)
                    ));
                    robust
                } else {
                    perf
                };
                // Each corner's implied τc, and SIMC's integral time there.
                let mut ti: f64 = 0.0;
                let mut slow = (0.0, f64::INFINITY, 0.0); // (τc, τ1, θ)
                for m in &fo {
                    let tc = if m.tau1_s.is_finite() {
                        m.tau1_s / (m.gain * kp) - m.delay_s
                    } else {
                        1.0 / (m.gain * kp) - m.delay_s
                    };
                    ti = ti.max(simc(m, tc.max(m.delay_s)).ti_s);
                    if tc > slow.0 {
                        slow = (tc, m.tau1_s, m.delay_s);
                    }
                }
                pi = Pi { kp, ti_s: ti };
                gain_notes.push(format!(
                    "SIMC (Skogestad 2003): Kc = τ1/(k(τc+θ)) [integrating: 1/(k'(τc+θ))] with τc = {} s at the slowest corner, half rule for the actuator lag, filter, dead time, sensor delay and Ts/2; τI = min(τ1, 4(τc+θ)), the largest over the corners so that none is under-damped",
                    round3(tau_c_spec)
                ));
                let lag_regime = slow.1 <= 4.0 * (slow.0 + slow.2);
                b = if lag_regime {
                    1.0
                } else {
                    (2.0 * (slow.0 + slow.2) / pi.ti_s).min(1.0)
                };
            }
            Method::PolePlacement => {
                let (idx, m) = fo
                    .iter()
                    .enumerate()
                    .min_by(|a, b| {
                        let r = |m: &Fopdt| m.gain / m.tau1_s.min(1e300);
                        let ra = if a.1.tau1_s.is_finite() {
                            r(a.1)
                        } else {
                            a.1.gain
                        };
                        let rb = if b.1.tau1_s.is_finite() {
                            r(b.1)
                        } else {
                            b.1.gain
                        };
                        ra.total_cmp(&rb)
                    })
                    .map_or((0, fo[0]), |(i, m)| (i, *m));
                let w0 = 1.0 / tau_c_spec;
                let (kp, ki) = pole_placement(m.gain, m.tau1_s, req.damping, w0);
                let kp = if kp < 0.0 {
                    gain_notes.push("pole placement asked for a negative Kp (the plant is already faster than the target): Kp set to 0".into());
                    0.0
                } else {
                    kp
                };
                pi = Pi {
                    kp,
                    ti_s: if ki > 0.0 {
                        kp.max(1e-12) / ki
                    } else {
                        f64::INFINITY
                    },
                };
                if kp == 0.0 {
                    pi.ti_s = 1.0 / ki; // Ki carried by ti with kp = 1 below
                }
                gain_notes.push(format!(
                    "pole placement: closed-loop poles at s² + 2ζω0 s + ω0², ζ = {}, ω0 = 1/τc = {} rad/s, on the slowest corner ({}); first order: Kp = (2ζω0τ − 1)/k, Ki = ω0²τ/k; integrating: Kp = 2ζω0/k, Ki = ω0²/k",
                    req.damping,
                    round3(w0),
                    corners[idx].label()
                ));
                b = (1.0 / (req.damping * w0 * pi.ti_s)).min(1.0);
            }
        }
        // Filter: command noise std Kp·σ·√(α/(2−α)) at most 0.5 % of the
        // output range (first-order filtered white noise), Tf ≤ τc/4.
        tf = if sigma > 0.0 && pi.kp > 0.0 {
            let budget = 0.005 * (phys_hi - phys_lo);
            let r = (budget / (pi.kp * sigma)).powi(2);
            let alpha = (2.0 * r / (1.0 + r)).min(1.0);
            let t = (ts * (1.0 - alpha) / alpha).min(tau_c_spec / 4.0);
            (t >= 0.5 * ts).then(|| round3(t.max(ts)))
        } else {
            None
        };
    }
    why.extend(gain_notes);
    let kp = round3(pi.kp);
    let ki = round3(if pi.kp > 0.0 {
        pi.kp / pi.ti_s
    } else {
        1.0 / pi.ti_s
    });
    let b = b.clamp(0.0, 1.0);
    why.push(format!(
        "Kp = {kp} per {}, Ki = {ki} per ({}·s) (Ti = {} s); all values rounded to 3 significant digits",
        s.output_unit,
        s.output_unit,
        round3(pi.ti_s)
    ));
    let tt = round3((pi.ti_s / 2.0).max(ts));
    why.push(format!(
        "anti-windup: back-calculation with tracking time Tt = Ti/2 = {tt} s (Åström & Hägglund 2006 suggest Tt between Td and Ti; from memory)"
    ));
    match tf {
        Some(t) => why.push(format!(
            "measurement filter Tf = {t} s: sensor noise {} {} (std, incl. quantisation) gives command noise ≤ 0.5 % of the output range; capped at τc/4",
            round3(sigma),
            s.output_unit
        )),
        None => why.push("no measurement filter: no sensor noise modelled, or the noise is small enough unfiltered".into()),
    }

    // Comfort limits.
    let accel = req
        .accel_limit
        .or_else(|| criterion_max(s, MetricKey::PeakAccel));
    let jerk = req
        .jerk_limit
        .or_else(|| criterion_max(s, MetricKey::PeakJerk));
    let slew_crit = criterion_max(s, MetricKey::PeakSlew);
    let mut slew = None;
    if let Some(j) = jerk {
        let r = 0.8 * j / rate_max;
        why.push(format!(
            "slew limit from the jerk limit {j}: jerk = (output rate per command)·slew, at the lightest/highest-gain corner ({}/s per unit) → {} per s with 20 % margin",
            round3(rate_max),
            round3(r)
        ));
        slew = Some(r);
    }
    if let Some(c) = slew_crit {
        let r = 0.9 * c;
        if slew.is_none_or(|s| r < s) {
            why.push(format!(
                "slew limit from the peak_slew_per_s criterion {c}: 90 % of it"
            ));
            slew = Some(r);
        }
    }
    let slew = slew.map(round3);
    let hold_lo = corners
        .iter()
        .map(|c| c.hold.0)
        .fold(f64::INFINITY, f64::min);
    let hold_hi = corners
        .iter()
        .map(|c| c.hold.1)
        .fold(f64::NEG_INFINITY, f64::max);
    let a_ref = reference_rate(s, tau_c_spec);
    let need = 1.2 * a_ref / rate_min;
    let (mut out_lo, mut out_hi) = (phys_lo, phys_hi);
    if let Some(a) = accel {
        let comfort = 0.9 * a / rate_max;
        let headroom = comfort.max(need);
        why.push(format!(
            "output limits from the acceleration limit {a}: the hold commands span {} .. {}; headroom beyond them a_max/(output rate per command) = {} at the lightest/highest-gain corner (10 % margin){}",
            round3(hold_lo),
            round3(hold_hi),
            round3(comfort),
            if need > comfort {
                format!(", widened to {} so the slowest corner can follow the reference ({} {}/s, +20 %) — there the slew limit and the loop's gentleness keep the acceleration", round3(need), round3(a_ref), s.output_unit)
            } else {
                String::new()
            }
        ));
        out_lo = out_lo.max(hold_lo - headroom);
        out_hi = out_hi.min(hold_hi + headroom);
    }
    if let Some(u0) = s.setup.initial_command {
        out_lo = out_lo.min(u0);
        out_hi = out_hi.max(u0);
    }
    let (out_lo, out_hi) = (round3(out_lo), round3(out_hi));
    why.push(format!(
        "output limits [{out_lo}, {out_hi}] within the actuator range [{phys_lo}, {phys_hi}]"
    ));
    why.push(format!(
        "setpoint weight b = {}: the setpoint zero −1/(b·Ti) placed on the dominant closed-loop pole (1 when the integral time cancels the plant lag), so a setpoint step does not overshoot (common practice)",
        round3(b)
    ));
    // evenkeel keeps the integral within the output range widened by its
    // span; in steady state I = u_hold + Kp·(1 − b)·r, so a small b with a
    // large setpoint would pin the integrator at its limit.
    let span = out_hi - out_lo;
    let (r_lo, r_hi) = s.setup.reference.range();
    let mut room = f64::INFINITY;
    if r_hi > 0.0 {
        room = room.min((out_hi + span - hold_hi) / r_hi);
    }
    if r_lo < 0.0 {
        room = room.min((hold_lo - (out_lo - span)) / -r_lo);
    }
    let b_min = if kp > 0.0 {
        1.0 - 0.8 * room.max(0.0) / kp
    } else {
        0.0
    };
    let b = if b < b_min {
        let raised = round3(b_min.min(1.0) + 0.005).min(1.0);
        why.push(format!(
            "setpoint weight raised to {raised}: the controller's integrator range (output range widened by its span) must hold u_hold + Kp·(1 − b)·r for setpoints up to {} (20 % margin)",
            round3(r_hi.max(-r_lo))
        ));
        raised
    } else {
        b
    };

    let mut b = round3(b);
    let scaling = s.controller.scaling;
    if b != 1.0 && scaling.measurement.offset != 0.0 {
        why.push(format!(
            "setpoint weight set to 1 (not {b}): the measurement's raw scale has an offset ([scaling] measurement_offset), with which a weight below 1 is refused (b·r − y in raw units would carry (1 − b)·offset)"
        ));
        b = 1.0;
    }
    let mut settings = Settings::new(ts, kp, ki, out_lo, out_hi)
        .with_scaling(scaling)
        .with_setpoint_weight(b)
        .with_anti_windup(AntiWindup::BackCalculation {
            tracking_time_s: tt,
        })
        .with_measurement_range(s.controller.measurement_min, s.controller.measurement_max);
    if let Some(r) = slew {
        settings = settings.with_slew_per_s(r);
    }
    if let Some(t) = tf {
        settings = settings.with_filter_time_s(t);
    }
    if let Some(d) = s.controller.deadband {
        settings = settings.with_deadband(d);
    }
    settings.per_sample().map_err(DesignError::Config)?;
    Ok(Proposal {
        method: req.method,
        settings,
        derivation: why,
        corners: corner_margins(s, &settings),
        fixed: fixed_check(&settings),
    })
}
