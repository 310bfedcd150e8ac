//! `[[fault]]` and `[monitor]`: validation into [`Fault`]s and monitor
//! settings, every error located.

use evenkeel::monitor::MonitorSettings;
use serde::Deserialize;

use super::error::{ScenarioError, Source};
use super::schema::{Int, Num, Text};
use crate::fault::{Fault, FaultKind};
use crate::sim::{Setup, default_monitor};
use evenkeel::Settings;

/// One `[[fault]]` entry.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawFault {
    pub kind: Text,
    pub start_s: Num,
    pub duration_s: Num,
    pub value: Option<Num>,
    pub min: Option<Num>,
    pub max: Option<Num>,
}

/// `[monitor]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawMonitor {
    pub amplitude: Option<Num>,
    pub ultimate_period_s: Option<Num>,
    pub supervision_time_s: Option<Num>,
    pub oscillation_count: Option<Int>,
    pub saturation_time_s: Option<Num>,
    pub sluggish_time_s: Option<Num>,
    pub noise_time_s: Option<Num>,
    pub noise_rms_max: Option<Num>,
}

type Res<T> = Result<T, ScenarioError>;

const KINDS: [&str; 8] = [
    "non_finite",
    "stuck",
    "dropout",
    "spike",
    "out_of_range",
    "actuator_override",
    "actuator_clip",
    "payload_change",
];

fn number(
    src: &Source<'_>,
    v: &Num,
    key: &str,
    allowed: &str,
    ok: impl Fn(f64) -> bool,
) -> Res<f64> {
    let x = *v.get_ref();
    if x.is_finite() && ok(x) {
        Ok(x)
    } else {
        Err(src.error(
            Some(v.span()),
            Some(key.to_owned()),
            format!(
                "{} is not allowed: must be {allowed}",
                super::error::number_text(x)
            ),
        ))
    }
}

/// Validates the `[[fault]]` entries against the controller `settings`.
pub(crate) fn faults(src: &Source<'_>, raw: &[RawFault], settings: &Settings) -> Res<Vec<Fault>> {
    let mut out = Vec::with_capacity(raw.len());
    for (i, f) in raw.iter().enumerate() {
        let k = |name: &str| format!("fault[{i}].{name}");
        let kind = f.kind.get_ref().as_str();
        let fail = |span, key: &str, msg: String| src.error(Some(span), Some(key.to_owned()), msg);
        if !KINDS.contains(&kind) {
            return Err(fail(
                f.kind.span(),
                &k("kind"),
                format!(
                    "unknown fault `{kind}`, expected one of {}",
                    KINDS.join(", ")
                ),
            ));
        }
        let start_s = number(src, &f.start_s, &k("start_s"), "finite and >= 0 s", |x| {
            x >= 0.0
        })?;
        let duration_s = number(
            src,
            &f.duration_s,
            &k("duration_s"),
            "finite and > 0 s",
            |x| x > 0.0,
        )?;
        let wants_value = !matches!(kind, "non_finite" | "dropout" | "actuator_clip");
        let wants_range = kind == "actuator_clip";
        for (name, v) in [("value", &f.value), ("min", &f.min), ("max", &f.max)] {
            let belongs = if name == "value" {
                wants_value
            } else {
                wants_range
            };
            if let Some(v) = v
                && !belongs
            {
                return Err(fail(
                    v.span(),
                    &k(name),
                    format!("does not apply to kind = \"{kind}\""),
                ));
            }
        }
        let value = |allowed: &str, ok: &dyn Fn(f64) -> bool| -> Res<f64> {
            let v = f.value.as_ref().ok_or_else(|| {
                fail(
                    f.kind.span(),
                    &k("value"),
                    format!("is required for kind = \"{kind}\""),
                )
            })?;
            number(src, v, &k("value"), allowed, ok)
        };
        let (lo, hi) = (settings.measurement_min, settings.measurement_max);
        let kind = match kind {
            "non_finite" => FaultKind::NonFinite,
            "dropout" => FaultKind::Dropout,
            "stuck" => FaultKind::Stuck(value("a finite number", &|_| true)?),
            "spike" => FaultKind::Spike(value("a finite number", &|_| true)?),
            "out_of_range" => FaultKind::OutOfRange(value(
                &format!("finite and outside the measurement range [{lo}, {hi}]"),
                &|x| x < lo || x > hi,
            )?),
            "actuator_override" => {
                FaultKind::ActuatorOverride(value("a finite number", &|_| true)?)
            }
            "payload_change" => FaultKind::PayloadChange(value(
                "finite and > 0 (factor on the command gain)",
                &|x| x > 0.0,
            )?),
            _ => {
                let need = |name: &str| {
                    fail(
                        f.kind.span(),
                        &k(name),
                        "is required for kind = \"actuator_clip\"".into(),
                    )
                };
                let raw_min = f.min.as_ref().ok_or_else(|| need("min"))?;
                let raw_max = f.max.as_ref().ok_or_else(|| need("max"))?;
                let min = number(src, raw_min, &k("min"), "finite", |_| true)?;
                let max = number(
                    src,
                    raw_max,
                    &k("max"),
                    &format!("finite and > fault[{i}].min"),
                    |x| x > min,
                )?;
                FaultKind::ActuatorClip { min, max }
            }
        };
        out.push(Fault {
            kind,
            start_s,
            duration_s,
        });
    }
    Ok(out)
}

/// Validates `[monitor]`; missing keys take [`default_monitor`]'s values
/// (and the time settings follow a given `ultimate_period_s`).
#[allow(clippy::cast_possible_truncation)] // f32 diagnostics settings
pub(crate) fn monitor(
    src: &Source<'_>,
    raw: Option<&RawMonitor>,
    settings: &Settings,
    setup: &Setup,
) -> Res<Option<MonitorSettings>> {
    let Some(m) = raw else { return Ok(None) };
    let pos = "finite and > 0";
    let get = |v: &Option<Num>, name: &str| -> Res<Option<f32>> {
        v.as_ref()
            .map(|v| {
                number(src, v, &format!("monitor.{name}"), pos, |x| {
                    x > 0.0 && x < 1e30
                })
            })
            .transpose()
            .map(|x| x.map(|x| x as f32))
    };
    let base = default_monitor(settings, setup);
    let mut s = MonitorSettings::new(
        base.period_s,
        get(&m.amplitude, "amplitude")?.unwrap_or(base.amplitude),
        get(&m.ultimate_period_s, "ultimate_period_s")?.unwrap_or(base.ultimate_period_s),
    );
    if let Some(t) = get(&m.supervision_time_s, "supervision_time_s")? {
        s.supervision_time_s = t;
    }
    if let Some(t) = get(&m.saturation_time_s, "saturation_time_s")? {
        s.saturation_time_s = t;
    }
    if let Some(t) = get(&m.sluggish_time_s, "sluggish_time_s")? {
        s.sluggish_time_s = t;
    }
    if let Some(t) = get(&m.noise_time_s, "noise_time_s")? {
        s.noise_time_s = t;
    }
    if let Some(t) = get(&m.noise_rms_max, "noise_rms_max")? {
        s.noise_rms_max = t;
    }
    if let Some(n) = &m.oscillation_count {
        let max = evenkeel::monitor::MAX_EVENTS - 1;
        let x = *n.get_ref();
        s.oscillation_count = u8::try_from(x)
            .ok()
            .filter(|c| (1..=max).contains(&usize::from(*c)))
            .ok_or_else(|| {
                src.error(
                    Some(n.span()),
                    Some("monitor.oscillation_count".into()),
                    format!("{x} is not allowed: must be an integer in [1, {max}]"),
                )
            })?;
    }
    // Any remaining problem (e.g. times too short for f32): name the table.
    s.validate()
        .map_err(|e| src.error(None, Some("monitor".into()), e.to_string()))?;
    Ok(Some(s))
}
