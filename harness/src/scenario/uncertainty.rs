//! `[uncertainty]` and `[sweep]`: validation into [`Uncertain`] values and
//! a [`SweepPlan`], every error located.

use std::collections::BTreeMap;

use serde::Deserialize;
use toml::Spanned;

use super::Scenario;
use super::error::{ScenarioError, Source};
use super::schema::{Int, Num, Text};
use crate::sweep::{Distribution, Method, Param, SweepPlan, Uncertain};

/// `[uncertainty]`: parameter key → distribution.
pub(crate) type RawUncertainty = BTreeMap<String, Spanned<RawDist>>;

/// `{ min, max }`, `{ min, mode, max }` or `{ mean, std }`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawDist {
    pub min: Option<Num>,
    pub max: Option<Num>,
    pub mode: Option<Num>,
    pub mean: Option<Num>,
    pub std: Option<Num>,
}

/// `[sweep]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawSweep {
    pub method: Option<Text>,
    pub count: Option<Int>,
    pub levels: Option<Int>,
    pub seed: Option<Int>,
}

type Res<T> = Result<T, ScenarioError>;

/// Validates both tables against the already validated `scenario`.
pub(crate) fn parse(
    src: &Source<'_>,
    raw: Option<&RawUncertainty>,
    sweep: Option<&RawSweep>,
    scenario: &Scenario,
) -> Res<(Vec<Uncertain>, Option<SweepPlan>)> {
    let mut space = Vec::new();
    if let Some(table) = raw {
        // File order, not alphabetical: it fixes the order of the axes.
        let mut entries: Vec<_> = table.iter().collect();
        entries.sort_by_key(|(_, v)| v.span().start);
        for (name, value) in entries {
            let key = format!("uncertainty.{name}");
            let fail = |msg: String| src.error(Some(value.span()), Some(key.clone()), msg);
            let param = Param::from_key(name).ok_or_else(|| {
                let keys: Vec<_> = Param::ALL.iter().map(|p| p.key()).collect();
                fail(format!(
                    "unknown parameter `{name}`, expected one of {}",
                    keys.join(", ")
                ))
            })?;
            if let Some(why) = param.not_applicable(scenario) {
                return Err(fail(why));
            }
            let dist = distribution(src, value.get_ref(), &key)?;
            let (lo, hi) = dist.support();
            let keeps_sign = matches!(
                param,
                Param::Gain | Param::ActuatorGainN | Param::TorqueGain
            );
            if keeps_sign && lo <= 0.0 && hi >= 0.0 {
                return Err(fail(format!(
                    "the range [{lo}, {hi}] includes 0: a command gain must keep its sign over the whole range (a loop cannot be tuned for both signs)"
                )));
            }
            for end in [lo, hi] {
                let mut s = scenario.clone();
                param.set(&mut s, end);
                let built = s
                    .build_plant()
                    .map(|_| ())
                    .and_then(|()| s.build_sensor().map(|_| ()));
                if let Err(e) = built {
                    return Err(fail(format!("the range reaches {end}, where {e}")));
                }
            }
            space.push(Uncertain { param, dist });
        }
    }
    corners_sane(src, raw, &space, scenario)?;
    let plan = match sweep {
        None => None,
        Some(r) => Some(plan(src, r)?),
    };
    Ok((space, plan))
}

/// Every corner of the box of supports must give a meaningful model
/// ([`super::sanity::physical`]): a light mass at the top gain is where
/// the integrator is stiffest.
fn corners_sane(
    src: &Source<'_>,
    raw: Option<&RawUncertainty>,
    space: &[Uncertain],
    scenario: &Scenario,
) -> Res<()> {
    // 16 parameters at most: 65 536 corners, each a few multiplications.
    let corners = 1usize << space.len().min(16);
    for c in 0..corners {
        let mut s = scenario.clone();
        let mut at = Vec::with_capacity(space.len());
        for (j, u) in space.iter().enumerate() {
            let (lo, hi) = u.dist.support();
            let v = if (c >> j) & 1 == 1 { hi } else { lo };
            u.param.set(&mut s, v);
            at.push(format!("{}={v}", u.param.key()));
        }
        if let Err(e) = super::sanity::physical(&s) {
            let span = raw.and_then(|t| {
                t.iter()
                    .find(|(k, _)| k.as_str() == e.key)
                    .or_else(|| t.iter().min_by_key(|(_, v)| v.span().start))
                    .map(|(_, v)| v.span())
            });
            return Err(src.error(
                span,
                Some("uncertainty".into()),
                format!(
                    "at the corner {}: plant.{}: {}",
                    at.join(", "),
                    e.key,
                    e.message
                ),
            ));
        }
    }
    Ok(())
}

fn number(src: &Source<'_>, v: &Num, key: &str) -> Res<f64> {
    let x = *v.get_ref();
    if x.is_finite() {
        Ok(x)
    } else {
        Err(src.error(
            Some(v.span()),
            Some(key.to_owned()),
            format!(
                "{} is not allowed: must be a finite number",
                super::error::number_text(x)
            ),
        ))
    }
}

fn distribution(src: &Source<'_>, d: &RawDist, key: &str) -> Res<Distribution> {
    let get = |v: &Option<Num>, k: &str| {
        v.as_ref()
            .map(|v| number(src, v, &format!("{key}.{k}")).map(|x| (x, v.span())))
            .transpose()
    };
    let (min, max, mode) = (
        get(&d.min, "min")?,
        get(&d.max, "max")?,
        get(&d.mode, "mode")?,
    );
    let (mean, std) = (get(&d.mean, "mean")?, get(&d.std, "std")?);
    let shape = "must be { min, max } (uniform), { min, mode, max } (triangular) or { mean, std } (normal, truncated at 3 std)";
    match (min, max, mode, mean, std) {
        (Some((lo, _)), Some((hi, span)), mode, None, None) => {
            if hi <= lo {
                return Err(src.error(
                    Some(span),
                    Some(format!("{key}.max")),
                    format!("{hi} is not allowed: must be > {key}.min = {lo}"),
                ));
            }
            match mode {
                None => Ok(Distribution::Uniform { min: lo, max: hi }),
                Some((m, _)) if (lo..=hi).contains(&m) => Ok(Distribution::Triangular {
                    min: lo,
                    mode: m,
                    max: hi,
                }),
                Some((m, span_m)) => {
                    let _ = span;
                    Err(src.error(
                        Some(span_m),
                        Some(format!("{key}.mode")),
                        format!("{m} is not allowed: must lie in [{lo}, {hi}]"),
                    ))
                }
            }
        }
        (None, None, None, Some((mean, _)), Some((std, span))) => {
            if std > 0.0 {
                Ok(Distribution::Normal { mean, std })
            } else {
                Err(src.error(
                    Some(span),
                    Some(format!("{key}.std")),
                    format!("{std} is not allowed: must be > 0"),
                ))
            }
        }
        _ => Err(src.error(None, Some(key.to_owned()), shape)),
    }
}

fn plan(src: &Source<'_>, r: &RawSweep) -> Res<SweepPlan> {
    let mut plan = SweepPlan::default();
    if let Some(m) = &r.method {
        plan.method = Method::from_name(m.get_ref()).ok_or_else(|| {
            let names: Vec<_> = Method::ALL
                .iter()
                .map(|m| format!("\"{}\"", m.name()))
                .collect();
            src.error(
                Some(m.span()),
                Some("sweep.method".into()),
                format!(
                    "`{}` is not a method, expected one of {}",
                    m.get_ref(),
                    names.join(", ")
                ),
            )
        })?;
    }
    let int = |v: &Int, key: &str, lo: i64, hi: i64| -> Res<i64> {
        let x = *v.get_ref();
        if (lo..=hi).contains(&x) {
            Ok(x)
        } else {
            Err(src.error(
                Some(v.span()),
                Some(key.to_owned()),
                format!("{x} is not allowed: must be an integer in [{lo}, {hi}]"),
            ))
        }
    };
    if let Some(c) = &r.count {
        plan.count = usize::try_from(int(c, "sweep.count", 1, 100_000_000)?).unwrap_or(1);
    }
    if let Some(l) = &r.levels {
        plan.levels = usize::try_from(int(l, "sweep.levels", 2, 1000)?).unwrap_or(2);
    }
    if let Some(s) = &r.seed {
        plan.seed = int(s, "sweep.seed", 0, i64::MAX)?.unsigned_abs();
    }
    Ok(plan)
}
