//! Validation: raw TOML tables into a [`Scenario`], every error located.

use std::ops::Range;

use evenkeel::{AntiWindup, Settings};

use super::error::{ScenarioError, Source};
use super::schema::{
    Int, Num, RawCompare, RawController, RawLimit, RawPlant, RawProfile, RawScaling, RawScenario,
    Text,
};
use super::{ActuatorSpec, MetricSettings, PlantModel, Scenario};
use crate::compare::CompareSpec;
use crate::criteria::{Bound, Criterion, MetricKey, Scope};
use crate::plant::{RotorParams, SensorParams, VehicleParams};
use crate::profile::{Profile, Segment};
use crate::sim::{Disturbances, LoadShift, Override, Setup};

type Res<T> = Result<T, ScenarioError>;

/// Most samples one run may have (`duration_s / period_s`): a run keeps
/// about 100 bytes per sample (a dozen series), so five million samples
/// keep `check` below 1 GB (measured: BENCHMARKS.md).
pub const MAX_SAMPLES: f64 = 5.0e6;

/// Longest scenario name, characters.
pub const MAX_NAME_CHARS: usize = 256;

/// Parses and validates `text`; `file` names it in errors.
pub(crate) fn parse(text: &str, file: &str) -> Res<Scenario> {
    let src = Source { file, text };
    let raw: RawScenario = toml::from_str(text).map_err(|e| {
        let span = e.span();
        let key = span.as_ref().and_then(|s| src.key_at(s.start));
        let message = e.message().trim_end();
        // In [plant], list the keys of the model chosen, not of all four.
        let plant_keys = key
            .as_deref()
            .filter(|k| k.starts_with("plant."))
            .and_then(|_| toml::from_str::<toml::Table>(text).ok())
            .and_then(|t| {
                let model = t.get("plant")?.get("model")?.as_str()?.to_owned();
                let mut keys = vec!["model", "initial_output"];
                keys.extend(model_keys(&model)?);
                Some(keys)
            });
        let message = super::error::unknown_key(message, plant_keys.as_deref())
            .unwrap_or_else(|| message.to_owned());
        src.error(span, key, message)
    })?;
    Check { src }.scenario(&raw, file)
}

struct Check<'a> {
    src: Source<'a>,
}

impl Check<'_> {
    fn fail(&self, span: Range<usize>, key: &str, message: String) -> ScenarioError {
        self.src.error(Some(span), Some(key.to_owned()), message)
    }

    /// A finite number for which `ok` holds; `allowed` says what is allowed.
    fn num(&self, v: &Num, key: &str, allowed: &str, ok: impl Fn(f64) -> bool) -> Res<f64> {
        let x = *v.get_ref();
        if x.is_finite() && ok(x) {
            Ok(x)
        } else {
            Err(self.fail(
                v.span(),
                key,
                format!(
                    "{} is not allowed: must be {allowed}",
                    super::error::number_text(x)
                ),
            ))
        }
    }

    fn finite(&self, v: &Num, key: &str) -> Res<f64> {
        self.num(v, key, "a finite number", |_| true)
    }

    fn opt(
        &self,
        v: Option<&Num>,
        key: &str,
        default: f64,
        allowed: &str,
        ok: impl Fn(f64) -> bool,
    ) -> Res<f64> {
        v.map_or(Ok(default), |v| self.num(v, key, allowed, ok))
    }

    fn int(&self, v: &Int, key: &str, lo: i64, hi: i64) -> Res<i64> {
        let x = *v.get_ref();
        if (lo..=hi).contains(&x) {
            Ok(x)
        } else {
            Err(self.fail(
                v.span(),
                key,
                format!("{x} is not allowed: must be an integer in [{lo}, {hi}]"),
            ))
        }
    }

    fn substeps(&self, v: Option<&Int>, key: &str, default: u32) -> Res<u32> {
        match v {
            None => Ok(default),
            Some(v) => {
                let n = self.int(v, key, 1, 10_000)?;
                Ok(u32::try_from(n).unwrap_or(default))
            }
        }
    }

    fn scenario(&self, raw: &RawScenario, file: &str) -> Res<Scenario> {
        let meta = &raw.scenario;
        let name = meta.name.get_ref().trim().to_owned();
        if name.is_empty() {
            return Err(self.fail(
                meta.name.span(),
                "scenario.name",
                "must not be empty".into(),
            ));
        }
        if name.chars().count() > MAX_NAME_CHARS {
            return Err(self.fail(
                meta.name.span(),
                "scenario.name",
                format!(
                    "is {} characters long: at most {MAX_NAME_CHARS} are allowed",
                    name.chars().count()
                ),
            ));
        }
        for (text, key) in [
            (Some(&meta.name), "scenario.name"),
            (meta.output_unit.as_ref(), "scenario.output_unit"),
            (meta.command_unit.as_ref(), "scenario.command_unit"),
        ] {
            if let Some(t) = text
                && let Some(c) = t.get_ref().chars().find(|c| c.is_control())
            {
                return Err(self.fail(
                    t.span(),
                    key,
                    format!(
                        "contains the control character U+{:04X}: not allowed in a name or unit",
                        u32::from(c)
                    ),
                ));
            }
        }
        let duration_s = self.num(
            &meta.duration_s,
            "scenario.duration_s",
            "finite and > 0 s",
            |x| x > 0.0,
        )?;
        let seed = match &meta.seed {
            Some(s) => self.int(s, "scenario.seed", 0, i64::MAX)?.unsigned_abs(),
            None => 0,
        };
        let controller = self.controller(&raw.controller)?;
        let controller = match &raw.scaling {
            None => controller,
            Some(sc) => self.scaling(sc, &raw.controller, controller)?,
        };
        // Bounded memory: a run keeps one row of every series per sample.
        let samples = duration_s / controller.period_s;
        if samples > MAX_SAMPLES {
            return Err(self.fail(
                meta.duration_s.span(),
                "scenario.duration_s",
                format!(
                    "{duration_s} s at controller.period_s = {} s is {samples:.3e} samples: at most {MAX_SAMPLES:.0e} are allowed",
                    controller.period_s
                ),
            ));
        }
        let (plant, initial_output) = self.plant(&raw.plant)?;
        let initial_command = match &raw.controller.initial_command {
            None => None,
            Some(v) => Some(self.num(
                v,
                "controller.initial_command",
                "finite and within [controller.output_min, controller.output_max]",
                |x| x >= controller.output_min && x <= controller.output_max,
            )?),
        };
        let text = |t: &Option<Text>, default: &str| {
            t.as_ref()
                .map_or_else(|| default.to_owned(), |t| t.get_ref().clone())
        };
        let default_unit = match plant {
            PlantModel::Vehicle(_) => "m/s",
            PlantModel::Rotor(_) => "rad/s",
            _ => "1",
        };

        let actuator = match &raw.actuator {
            None => None,
            Some(a) => {
                let min = self.finite(&a.min, "actuator.min")?;
                let max = self.num(&a.max, "actuator.max", "finite and > actuator.min", |x| {
                    x > min
                })?;
                Some(ActuatorSpec {
                    tau_s: self.opt(
                        a.tau_s.as_ref(),
                        "actuator.tau_s",
                        0.0,
                        "finite and >= 0 s",
                        |x| x >= 0.0,
                    )?,
                    min,
                    max,
                    substeps: self.substeps(a.substeps.as_ref(), "actuator.substeps", 4)?,
                })
            }
        };
        let sensor = match &raw.sensor {
            None => None,
            Some(s) => Some(SensorParams {
                noise_std: self.opt(
                    s.noise_std.as_ref(),
                    "sensor.noise_std",
                    0.0,
                    "finite and >= 0 (measurement units)",
                    |x| x >= 0.0,
                )?,
                quantum: self.opt(
                    s.quantum.as_ref(),
                    "sensor.quantum",
                    0.0,
                    "finite and >= 0 (0: no quantisation)",
                    |x| x >= 0.0,
                )?,
                delay_samples: match &s.delay_samples {
                    None => 0,
                    Some(d) => usize::try_from(self.int(d, "sensor.delay_samples", 0, 1 << 20)?)
                        .unwrap_or(0),
                },
            }),
        };

        let reference = self.profile(&raw.reference, "reference", initial_output)?;
        let mut disturbances = Disturbances::default();
        if let Some(d) = &raw.disturbance {
            let slots = [
                (
                    &d.grade_pct,
                    "disturbance.grade_pct",
                    &mut disturbances.grade_pct,
                    0.0,
                ),
                (
                    &d.force_n,
                    "disturbance.force_n",
                    &mut disturbances.force_n,
                    0.0,
                ),
                (&d.load, "disturbance.load", &mut disturbances.load, 0.0),
                (
                    &d.gain_factor,
                    "disturbance.gain_factor",
                    &mut disturbances.gain_factor,
                    1.0,
                ),
            ];
            for (raw_profile, key, slot, default) in slots {
                if let Some(p) = raw_profile {
                    *slot = self.profile(p, key, default)?;
                }
            }
        }
        let mut overrides = Vec::with_capacity(raw.overrides.len());
        for (i, o) in raw.overrides.iter().enumerate() {
            let key = |k: &str| format!("override[{i}].{k}");
            overrides.push(Override {
                start_s: self.num(&o.start_s, &key("start_s"), "finite and >= 0 s", |x| {
                    x >= 0.0
                })?,
                duration_s: self.num(
                    &o.duration_s,
                    &key("duration_s"),
                    "finite and > 0 s",
                    |x| x > 0.0,
                )?,
                command: self.finite(&o.command, &key("command"))?,
                ramp_s: self.opt(
                    o.ramp_s.as_ref(),
                    &key("ramp_s"),
                    0.0,
                    "finite and >= 0 s",
                    |x| x >= 0.0,
                )?,
            });
        }
        let load_shift = match &raw.load_shift {
            None => None,
            Some(l) => {
                if !matches!(plant, PlantModel::Vehicle(_)) {
                    return Err(self.fail(
                        l.force_n.span(),
                        "load_shift",
                        "applies to plant.model = \"vehicle\" only".into(),
                    ));
                }
                let pos = "finite and > 0";
                Some(LoadShift {
                    accel_threshold_m_s2: self.num(
                        &l.accel_threshold_m_s2,
                        "load_shift.accel_threshold_m_s2",
                        pos,
                        |x| x > 0.0,
                    )?,
                    jerk_threshold_m_s3: self.num(
                        &l.jerk_threshold_m_s3,
                        "load_shift.jerk_threshold_m_s3",
                        pos,
                        |x| x > 0.0,
                    )?,
                    force_n: self.num(
                        &l.force_n,
                        "load_shift.force_n",
                        "finite and >= 0 N",
                        |x| x >= 0.0,
                    )?,
                    duration_s: self
                        .num(&l.duration_s, "load_shift.duration_s", pos, |x| x > 0.0)?,
                })
            }
        };

        let metric_options = match &raw.metrics {
            None => MetricSettings::default(),
            Some(m) => MetricSettings {
                settling_band: self.opt(
                    m.settling_band.as_ref(),
                    "metrics.settling_band",
                    0.02,
                    "in (0, 1) (fraction of the step)",
                    |x| x > 0.0 && x < 1.0,
                )?,
                steady_window_s: self.opt(
                    m.steady_window_s.as_ref(),
                    "metrics.steady_window_s",
                    1.0,
                    "finite and > 0 s",
                    |x| x > 0.0,
                )?,
                disturbance_band: m
                    .disturbance_band
                    .as_ref()
                    .map(|b| {
                        self.num(
                            b,
                            "metrics.disturbance_band",
                            "finite and > 0 (measurement units)",
                            |x| x > 0.0,
                        )
                    })
                    .transpose()?,
            },
        };

        let mut criteria = Vec::new();
        self.limits(
            &raw.criteria.entries(),
            "criteria",
            Scope::Run,
            &mut criteria,
        )?;
        let pieces: Vec<_> = reference.pieces().collect();
        for (i, seg) in raw.criteria.segment.iter().enumerate() {
            let key = format!("criteria.segment[{i}]");
            let count = i64::try_from(pieces.len()).unwrap_or(i64::MAX);
            if count == 0 {
                return Err(self.fail(
                    seg.index.span(),
                    &format!("{key}.index"),
                    "the reference has no segments to judge".into(),
                ));
            }
            let index = self.int(&seg.index, &format!("{key}.index"), 0, count - 1)?;
            let index = usize::try_from(index).unwrap_or(0);
            let p = &pieces[index];
            if p.to == p.from {
                return Err(self.fail(
                    seg.index.span(),
                    &format!("{key}.index"),
                    format!(
                        "reference.segments[{index}] does not change the reference (it holds {}): a segment judged on its own must be a step or a ramp",
                        p.from
                    ),
                ));
            }
            if p.start_s >= duration_s {
                return Err(self.fail(
                    seg.index.span(),
                    &format!("{key}.index"),
                    format!("reference.segments[{index}] starts at {} s, at or after the end of the run", p.start_s),
                ));
            }
            self.limits(&seg.entries(), &key, Scope::Segment(index), &mut criteria)?;
        }
        for (i, w) in raw.criteria.window.iter().enumerate() {
            let key = format!("criteria.window[{i}]");
            let start_s = self.num(
                &w.start_s,
                &format!("{key}.start_s"),
                "finite and >= 0 s, before scenario.duration_s",
                |x| x >= 0.0 && x < duration_s,
            )?;
            let end_s = self.num(
                &w.end_s,
                &format!("{key}.end_s"),
                &format!("finite and > start_s = {start_s} s"),
                |x| x > start_s,
            )?;
            let band = w
                .band
                .as_ref()
                .map(|b| {
                    self.num(
                        b,
                        &format!("{key}.band"),
                        "finite and > 0 (measurement units)",
                        |x| x > 0.0,
                    )
                })
                .transpose()?;
            let scope = Scope::Window {
                index: i,
                start_s,
                end_s,
                band,
            };
            self.limits(&w.entries(), &key, scope, &mut criteria)?;
        }
        if criteria.is_empty() {
            return Err(self.src.error(
                None,
                Some("criteria".into()),
                "at least one criterion is required",
            ));
        }

        let setup = Setup {
            duration_s,
            reference,
            disturbances,
            overrides,
            actuator_limits: actuator.map(|a| (a.min, a.max)),
            load_shift,
            initial_command,
            faults: super::faults::faults(&self.src, &raw.faults, &controller)?,
            monitor: None,
        };
        let mut setup = setup;
        setup.monitor =
            super::faults::monitor(&self.src, raw.monitor.as_ref(), &controller, &setup)?;
        self.within_run(raw, &setup)?;
        let mut scenario = Scenario {
            name,
            description: meta
                .description
                .as_ref()
                .map_or_else(String::new, |d| d.get_ref().trim().to_owned()),
            source: file.to_owned(),
            seed,
            output_unit: text(&meta.output_unit, default_unit),
            command_unit: text(&meta.command_unit, "1"),
            controller,
            plant,
            initial_output,
            actuator,
            sensor,
            setup,
            metric_options,
            criteria,
            uncertainty: Vec::new(),
            compare: self.compare(raw.compare.as_ref())?,
            sweep: None,
            design: super::design_table::parse(&self.src, raw.design.as_ref())?,
        };
        if let Err(e) = super::sanity::physical(&scenario) {
            let span = plant_fields(&raw.plant)
                .into_iter()
                .find(|(k, _)| *k == e.key)
                .and_then(|(_, span)| span)
                .unwrap_or_else(|| raw.plant.model.span());
            return Err(self.fail(span, &format!("plant.{}", e.key), e.message));
        }
        (scenario.uncertainty, scenario.sweep) = super::uncertainty::parse(
            &self.src,
            raw.uncertainty.as_ref(),
            raw.sweep.as_ref(),
            &scenario,
        )?;
        Ok(scenario)
    }

    /// The limits of one criteria table, judged on `scope`, appended to
    /// `criteria`; `table` names it in errors (`criteria`,
    /// `criteria.segment[0]`).
    fn limits(
        &self,
        entries: &[(&'static str, Option<&Spanned<RawLimit>>)],
        table: &str,
        scope: Scope,
        criteria: &mut Vec<Criterion>,
    ) -> Res<()> {
        let before = criteria.len();
        for &(name, limit) in entries {
            let Some(limit) = limit else { continue };
            let metric = MetricKey::from_name(name)
                .ok_or_else(|| self.fail(limit.span(), name, "is not a metric".into()))?;
            let key = format!("{table}.{name}");
            if scope != Scope::Run && metric.is_fault_check() {
                return Err(self.fail(
                    limit.span(),
                    &key,
                    "is a fault check, which judges the whole run: put it in [criteria]".into(),
                ));
            }
            let l = limit.get_ref();
            let source = l.source.as_ref().map(|s| s.get_ref().clone());
            let mut bounds = Vec::new();
            if let Some(max) = &l.max {
                bounds.push((Bound::Max, self.finite(max, &format!("{key}.max"))?));
            }
            if let Some(min) = &l.min {
                let lo = self.finite(min, &format!("{key}.min"))?;
                if let Some((_, hi)) = bounds.first()
                    && lo > *hi
                {
                    return Err(self.fail(
                        min.span(),
                        &format!("{key}.min"),
                        format!("{lo} is not allowed: must be <= {key}.max = {hi}"),
                    ));
                }
                bounds.push((Bound::Min, lo));
            }
            if bounds.is_empty() {
                return Err(self.fail(limit.span(), &key, "needs `max`, `min` or both".into()));
            }
            for (bound, value) in bounds {
                criteria.push(Criterion {
                    metric,
                    scope,
                    bound,
                    limit: value,
                    source: source.clone(),
                });
            }
        }
        if scope != Scope::Run && criteria.len() == before {
            return Err(self.src.error(
                None,
                Some(table.to_owned()),
                "names no criterion: give at least one metric limit (e.g. settling_time_s = { max = 3.0 })",
            ));
        }
        Ok(())
    }

    /// Refuses what the run never reaches: a profile segment, a fault or
    /// an override window that starts at or after `scenario.duration_s`
    /// (samples are taken at `k·period_s < duration_s`).
    fn within_run(&self, raw: &RawScenario, setup: &Setup) -> Res<()> {
        let end = setup.duration_s;
        let after = |start: f64, what: &str| {
            format!(
                "{what} starts at {start} s, at or after the end of the run (scenario.duration_s = {end} s): it would never act"
            )
        };
        let mut profiles: Vec<(&str, &RawProfile, &Profile)> =
            vec![("reference", &raw.reference, &setup.reference)];
        if let Some(d) = &raw.disturbance {
            let s = &setup.disturbances;
            for (key, rp, p) in [
                ("disturbance.grade_pct", &d.grade_pct, &s.grade_pct),
                ("disturbance.force_n", &d.force_n, &s.force_n),
                ("disturbance.load", &d.load, &s.load),
                ("disturbance.gain_factor", &d.gain_factor, &s.gain_factor),
            ] {
                if let Some(rp) = rp {
                    profiles.push((key, rp, p));
                }
            }
        }
        for (key, rp, p) in profiles {
            for (i, (piece, seg)) in p.pieces().zip(&rp.segments).enumerate() {
                if piece.start_s >= end {
                    let span = [&seg.to, &seg.ramp_s, &seg.hold_s]
                        .into_iter()
                        .flatten()
                        .map(Spanned::span)
                        .next()
                        .unwrap_or_else(|| raw.scenario.duration_s.span());
                    return Err(self.fail(
                        span,
                        &format!("{key}.segments[{i}]"),
                        after(piece.start_s, "this segment"),
                    ));
                }
            }
        }
        for (i, (f, rf)) in setup.faults.iter().zip(&raw.faults).enumerate() {
            if f.start_s >= end {
                return Err(self.fail(
                    rf.start_s.span(),
                    &format!("fault[{i}].start_s"),
                    after(f.start_s, "the fault"),
                ));
            }
        }
        for (i, (o, ro)) in setup.overrides.iter().zip(&raw.overrides).enumerate() {
            if o.start_s >= end {
                return Err(self.fail(
                    ro.start_s.span(),
                    &format!("override[{i}].start_s"),
                    after(o.start_s, "the override window"),
                ));
            }
        }
        Ok(())
    }

    /// `[compare]`: every tolerance finite and > 0 when given.
    fn compare(&self, c: Option<&RawCompare>) -> Res<CompareSpec> {
        let Some(c) = c else {
            return Ok(CompareSpec::default());
        };
        let pos = |v: &Option<Num>, key: &str| {
            v.as_ref()
                .map(|v| self.num(v, &format!("compare.{key}"), "finite and > 0", |x| x > 0.0))
                .transpose()
        };
        Ok(CompareSpec {
            max_command_diff: pos(&c.max_command_diff, "max_command_diff")?,
            rms_command_diff: pos(&c.rms_command_diff, "rms_command_diff")?,
            max_output_diff: pos(&c.max_output_diff, "max_output_diff")?,
            rms_output_diff: pos(&c.rms_output_diff, "rms_output_diff")?,
            max_limit_cycle_amplitude: pos(
                &c.max_limit_cycle_amplitude,
                "max_limit_cycle_amplitude",
            )?,
            max_stall_error: pos(&c.max_stall_error, "max_stall_error")?,
            max_lsb_pct: pos(&c.max_lsb_pct, "max_lsb_pct")?,
            steady_window_s: pos(&c.steady_window_s, "steady_window_s")?,
            source: c.source.as_ref().map(|s| s.get_ref().clone()),
        })
    }

    fn controller(&self, c: &RawController) -> Res<Settings> {
        let k = |name: &str| format!("controller.{name}");
        let period = self.num(&c.period_s, &k("period_s"), "finite and > 0 s", |x| x > 0.0)?;
        let nonneg = "finite and >= 0";
        let kp = self.num(&c.kp, &k("kp"), nonneg, |x| x >= 0.0)?;
        let ki = self.num(&c.ki_per_s, &k("ki_per_s"), "finite and >= 0 per s", |x| {
            x >= 0.0
        })?;
        let lo = self.finite(&c.output_min, &k("output_min"))?;
        let hi = self.num(
            &c.output_max,
            &k("output_max"),
            "finite and > controller.output_min",
            |x| x > lo,
        )?;
        let mut s = Settings::new(period, kp, ki, lo, hi);
        if let Some(v) = &c.slew_per_s {
            s = s.with_slew_per_s(
                self.num(v, &k("slew_per_s"), "finite and > 0 per s", |x| x > 0.0)?,
            );
        }
        if let Some(v) = &c.filter_time_s {
            s = s.with_filter_time_s(self.num(
                v,
                &k("filter_time_s"),
                "finite and > 0 s",
                |x| x > 0.0,
            )?);
        }
        if let Some(v) = &c.deadband {
            s = s.with_deadband(self.num(v, &k("deadband"), nonneg, |x| x >= 0.0)?);
        }
        if let Some(v) = &c.setpoint_weight {
            s = s.with_setpoint_weight(self.num(v, &k("setpoint_weight"), "in [0, 1]", |x| {
                (0.0..=1.0).contains(&x)
            })?);
        }
        let method = c.anti_windup.as_ref();
        match method.map(|m| m.get_ref().as_str()) {
            None | Some("conditional_integration") => {
                if let Some(t) = &c.tracking_time_s {
                    return Err(self.fail(
                        t.span(),
                        &k("tracking_time_s"),
                        "only applies with anti_windup = \"back_calculation\"".into(),
                    ));
                }
            }
            Some("back_calculation") => {
                let Some(t) = &c.tracking_time_s else {
                    return Err(self.fail(
                        method.map_or(0..0, Spanned::span),
                        &k("tracking_time_s"),
                        "is required with anti_windup = \"back_calculation\"".into(),
                    ));
                };
                let tt = self.num(
                    t,
                    &k("tracking_time_s"),
                    "finite and >= controller.period_s",
                    |x| x >= period,
                )?;
                s = s.with_anti_windup(AntiWindup::BackCalculation {
                    tracking_time_s: tt,
                });
            }
            Some(other) => {
                return Err(self.fail(
                    method.map_or(0..0, Spanned::span),
                    &k("anti_windup"),
                    format!(
                        "\"{other}\" is not allowed: must be \"back_calculation\" or \"conditional_integration\""
                    ),
                ));
            }
        }
        match (&c.measurement_min, &c.measurement_max) {
            (None, None) => {}
            (Some(a), Some(b)) => {
                let lo = self.finite(a, &k("measurement_min"))?;
                let hi = self.num(
                    b,
                    &k("measurement_max"),
                    "finite and > controller.measurement_min",
                    |x| x > lo,
                )?;
                s = s.with_measurement_range(lo, hi);
            }
            (Some(v), None) | (None, Some(v)) => {
                return Err(self.fail(
                    v.span(),
                    &k("measurement_min"),
                    "measurement_min and measurement_max must be given together".into(),
                ));
            }
        }
        // Anything the controller crate still refuses, located at its key.
        s.per_sample().map_err(|e| {
            let span = controller_span(c, e.to_string().split(' ').next().unwrap_or(""));
            self.src
                .error(span, Some("controller".into()), e.to_string())
        })?;
        Ok(s)
    }

    /// `[scaling]` applied to the controller settings, checked as the
    /// controller crate checks it.
    fn scaling(&self, sc: &RawScaling, c: &RawController, s: Settings) -> Res<Settings> {
        let k = |name: &str| format!("scaling.{name}");
        let per_unit = |v: Option<&Num>, name: &str| {
            self.opt(
                v,
                &k(name),
                1.0,
                "finite and > 0 (raw units per unit)",
                |x| x > 0.0,
            )
        };
        let offset = |v: Option<&Num>, name: &str| {
            self.opt(v, &k(name), 0.0, "a finite number (raw units)", |_| true)
        };
        let measurement = evenkeel::Scale::new(
            per_unit(sc.measurement_per_unit.as_ref(), "measurement_per_unit")?,
            offset(sc.measurement_offset.as_ref(), "measurement_offset")?,
        );
        let command = evenkeel::Scale::new(
            per_unit(sc.command_per_unit.as_ref(), "command_per_unit")?,
            offset(sc.command_offset.as_ref(), "command_offset")?,
        );
        let mut scaling = evenkeel::Scaling::NONE.with_measurement(measurement);
        if let Some(b) = &sc.adc_bits {
            let bits = self.int(b, &k("adc_bits"), 1, 31)?;
            scaling = scaling.with_adc(u8::try_from(bits).unwrap_or(31), measurement);
        }
        scaling = if sc.command_counts.as_ref().is_some_and(|b| *b.get_ref()) {
            scaling.with_pwm(command)
        } else {
            scaling.with_command(command)
        };
        let s = s.with_scaling(scaling);
        s.per_sample().map_err(|e| {
            let span = match e {
                evenkeel::ConfigError::WeightedOffset => c
                    .setpoint_weight
                    .as_ref()
                    .map(Spanned::span)
                    .or_else(|| sc.measurement_offset.as_ref().map(Spanned::span)),
                _ => sc
                    .measurement_per_unit
                    .as_ref()
                    .or(sc.command_per_unit.as_ref())
                    .map(Spanned::span),
            };
            self.src.error(span, Some("scaling".into()), e.to_string())
        })?;
        Ok(s)
    }

    fn plant(&self, p: &RawPlant) -> Res<(PlantModel, f64)> {
        let model = p.model.get_ref().as_str();
        let k = |name: &str| format!("plant.{name}");
        let Some(allowed) = model_keys(model) else {
            let near = super::error::closest(model, &MODELS)
                .map_or_else(String::new, |m| format!(" (did you mean \"{m}\"?)"));
            return Err(self.fail(
                p.model.span(),
                "plant.model",
                format!(
                    "\"{model}\" is not allowed: must be \"integrator\", \"first_order_lag\", \"vehicle\" or \"rotor\"{near}"
                ),
            ));
        };
        for (name, span) in plant_fields(p) {
            if let Some(span) = span
                && !allowed.contains(&name)
            {
                return Err(self.fail(
                    span,
                    &k(name),
                    format!(
                        "does not apply to plant.model = \"{model}\" (its keys: {})",
                        allowed.join(", ")
                    ),
                ));
            }
        }
        if let Some(n) = &p.substeps
            && !allowed.contains(&"substeps")
        {
            return Err(self.fail(
                n.span(),
                &k("substeps"),
                format!(
                    "does not apply to plant.model = \"{model}\" (its keys: {})",
                    allowed.join(", ")
                ),
            ));
        }
        let need = |v: &Option<Num>, name: &str| -> Res<Num> {
            v.clone().ok_or_else(|| {
                self.fail(
                    p.model.span(),
                    &k(name),
                    format!("is required for plant.model = \"{model}\""),
                )
            })
        };
        let nonzero = "finite and non-zero";
        let initial = self.opt(
            p.initial_output.as_ref(),
            &k("initial_output"),
            0.0,
            "a finite number",
            |_| true,
        )?;
        let plant = match model {
            "integrator" => PlantModel::Integrator {
                gain: self.num(&need(&p.gain, "gain")?, &k("gain"), nonzero, |x| x != 0.0)?,
            },
            "first_order_lag" => PlantModel::FirstOrderLag {
                gain: self.num(&need(&p.gain, "gain")?, &k("gain"), nonzero, |x| x != 0.0)?,
                tau_s: self.num(
                    &need(&p.tau_s, "tau_s")?,
                    &k("tau_s"),
                    "finite and > 0 s",
                    |x| x > 0.0,
                )?,
                dead_time_s: self.opt(
                    p.dead_time_s.as_ref(),
                    &k("dead_time_s"),
                    0.0,
                    "finite and >= 0 s",
                    |x| x >= 0.0,
                )?,
            },
            "vehicle" => {
                let d = VehicleParams::default();
                let nonneg = |v: &Option<Num>, name: &str, default: f64, unit: &str| {
                    self.opt(
                        v.as_ref(),
                        &k(name),
                        default,
                        &format!("finite and >= 0{unit}"),
                        |x| x >= 0.0,
                    )
                };
                PlantModel::Vehicle(VehicleParams {
                    mass_kg: self.num(
                        &need(&p.mass_kg, "mass_kg")?,
                        &k("mass_kg"),
                        "finite and > 0 kg",
                        |x| x > 0.0,
                    )?,
                    actuator_gain_n: self.num(
                        &need(&p.actuator_gain_n, "actuator_gain_n")?,
                        &k("actuator_gain_n"),
                        "finite and non-zero N per unit command",
                        |x| x != 0.0,
                    )?,
                    crr: nonneg(&p.crr, "crr", d.crr, "")?,
                    air_density_kg_m3: nonneg(
                        &p.air_density_kg_m3,
                        "air_density_kg_m3",
                        d.air_density_kg_m3,
                        " kg/m^3",
                    )?,
                    cda_m2: nonneg(&p.cda_m2, "cda_m2", d.cda_m2, " m^2")?,
                    creep_speed_m_s: self.opt(
                        p.creep_speed_m_s.as_ref(),
                        &k("creep_speed_m_s"),
                        d.creep_speed_m_s,
                        "finite and > 0 m/s",
                        |x| x > 0.0,
                    )?,
                    substeps: self.substeps(p.substeps.as_ref(), &k("substeps"), d.substeps)?,
                })
            }
            _ => PlantModel::Rotor(RotorParams {
                inertia_kg_m2: self.num(
                    &need(&p.inertia_kg_m2, "inertia_kg_m2")?,
                    &k("inertia_kg_m2"),
                    "finite and > 0 kg·m²",
                    |x| x > 0.0,
                )?,
                torque_gain_n_m: self.num(
                    &need(&p.torque_gain_n_m, "torque_gain_n_m")?,
                    &k("torque_gain_n_m"),
                    nonzero,
                    |x| x != 0.0,
                )?,
                viscous_n_m_s: self.opt(
                    p.viscous_n_m_s.as_ref(),
                    &k("viscous_n_m_s"),
                    0.0,
                    "finite and >= 0",
                    |x| x >= 0.0,
                )?,
                drag_n_m_s2: self.opt(
                    p.drag_n_m_s2.as_ref(),
                    &k("drag_n_m_s2"),
                    0.0,
                    "finite and >= 0",
                    |x| x >= 0.0,
                )?,
                substeps: self.substeps(p.substeps.as_ref(), &k("substeps"), 4)?,
            }),
        };
        Ok((plant, initial))
    }

    fn profile(&self, p: &RawProfile, key: &str, default_initial: f64) -> Res<Profile> {
        let initial = self.opt(
            p.initial.as_ref(),
            &format!("{key}.initial"),
            default_initial,
            "a finite number",
            |_| true,
        )?;
        let mut segments = Vec::with_capacity(p.segments.len());
        for (i, s) in p.segments.iter().enumerate() {
            let k = |name: &str| format!("{key}.segments[{i}].{name}");
            let dur = "finite and >= 0 s";
            segments.push(Segment {
                to: s
                    .to
                    .as_ref()
                    .map(|v| self.finite(v, &k("to")))
                    .transpose()?,
                ramp_s: self.opt(s.ramp_s.as_ref(), &k("ramp_s"), 0.0, dur, |x| x >= 0.0)?,
                hold_s: self.opt(s.hold_s.as_ref(), &k("hold_s"), 0.0, dur, |x| x >= 0.0)?,
            });
        }
        Ok(Profile::new(initial, segments))
    }
}

use toml::Spanned;

/// The refusal of `backend` (`error`) located at the controller key it
/// names in the scenario `text` (`file`): line, column, key.
pub(crate) fn locate_refusal(
    text: &str,
    file: &str,
    backend: &str,
    error: &evenkeel::ConfigError,
) -> Option<ScenarioError> {
    let raw: RawScenario = toml::from_str(text).ok()?;
    let message = error.to_string();
    let name = message.split(' ').next().unwrap_or("");
    let span = controller_span(&raw.controller, name);
    let src = Source { file, text };
    Some(src.error(
        span,
        Some(format!("controller.{name}")),
        format!("refused by the {backend} backend: {message}"),
    ))
}

/// The plant models.
const MODELS: [&str; 4] = ["integrator", "first_order_lag", "vehicle", "rotor"];

/// The model-specific keys of `[plant]` for `model`.
fn model_keys(model: &str) -> Option<&'static [&'static str]> {
    Some(match model {
        "integrator" => &["gain"],
        "first_order_lag" => &["gain", "tau_s", "dead_time_s"],
        "vehicle" => &[
            "mass_kg",
            "actuator_gain_n",
            "crr",
            "air_density_kg_m3",
            "cda_m2",
            "creep_speed_m_s",
            "substeps",
        ],
        "rotor" => &[
            "inertia_kg_m2",
            "torque_gain_n_m",
            "viscous_n_m_s",
            "drag_n_m_s2",
            "substeps",
        ],
        _ => return None,
    })
}

/// Every model-specific plant key with its span when present.
fn plant_fields(p: &RawPlant) -> [(&'static str, Option<Range<usize>>); 13] {
    let s = |v: &Option<Num>| v.as_ref().map(Spanned::span);
    [
        ("gain", s(&p.gain)),
        ("tau_s", s(&p.tau_s)),
        ("dead_time_s", s(&p.dead_time_s)),
        ("mass_kg", s(&p.mass_kg)),
        ("actuator_gain_n", s(&p.actuator_gain_n)),
        ("crr", s(&p.crr)),
        ("air_density_kg_m3", s(&p.air_density_kg_m3)),
        ("cda_m2", s(&p.cda_m2)),
        ("creep_speed_m_s", s(&p.creep_speed_m_s)),
        ("inertia_kg_m2", s(&p.inertia_kg_m2)),
        ("torque_gain_n_m", s(&p.torque_gain_n_m)),
        ("viscous_n_m_s", s(&p.viscous_n_m_s)),
        ("drag_n_m_s2", s(&p.drag_n_m_s2)),
    ]
}

/// Span of the controller key called `name` (as `evenkeel::Setting::name`).
fn controller_span(c: &RawController, name: &str) -> Option<Range<usize>> {
    let s = |v: &Option<Num>| v.as_ref().map(Spanned::span);
    match name {
        "period_s" => Some(c.period_s.span()),
        "kp" => Some(c.kp.span()),
        "ki_per_s" => Some(c.ki_per_s.span()),
        "output_min" => Some(c.output_min.span()),
        "output_max" => Some(c.output_max.span()),
        "slew_per_s" => s(&c.slew_per_s),
        "filter_time_s" => s(&c.filter_time_s),
        "deadband" => s(&c.deadband),
        "setpoint_weight" => s(&c.setpoint_weight),
        "tracking_time_s" => s(&c.tracking_time_s),
        "measurement_min" => s(&c.measurement_min),
        "measurement_max" => s(&c.measurement_max),
        _ => None,
    }
    .or(Some(c.period_s.span()))
}
