//! `[design]`: what `evenkeel design` may change and the robustness it
//! must keep, validated into a [`DesignSpec`].

use serde::Deserialize;

use super::error::{ScenarioError, Source};
use super::schema::{Num, Text};

/// Whether `evenkeel design` may move the output limits written in
/// `[controller]`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LimitChoice {
    /// `"as_written"`: keep `output_min` and `output_max` as they are.
    AsWritten,
    /// `"may_narrow"` (default): design may narrow them (never widen),
    /// e.g. to keep the acceleration limit; it says so before anything
    /// else in its report.
    MayNarrow,
}

impl LimitChoice {
    /// The value as written in the file.
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::AsWritten => "as_written",
            Self::MayNarrow => "may_narrow",
        }
    }
}

/// `[design]`, validated; every key has a default.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DesignSpec {
    /// `output_limits`.
    pub output_limits: LimitChoice,
    /// `ms_max`: largest peak sensitivity allowed at any corner (default 2).
    pub ms_max: f64,
    /// `gain_margin_min`: smallest gain margin (factor) allowed (default 2,
    /// i.e. 6 dB).
    pub gain_margin_min: f64,
    /// `phase_margin_min_deg`: smallest phase margin allowed (default 30°).
    pub phase_margin_min_deg: f64,
    /// `target_margin`: normalised criterion margin the search aims for
    /// before it stops (default 0.05: 5 % of every limit to spare).
    pub target_margin: f64,
}

impl Default for DesignSpec {
    /// The usual robustness targets of a PI loop, common practice: Ms ≤ 2
    /// (1.2–2 typical), gain margin ≥ 2 (6 dB), phase margin ≥ 30°
    /// (Åström & Hägglund, *Advanced PID Control*, 2006, §4; from memory).
    fn default() -> Self {
        Self {
            output_limits: LimitChoice::MayNarrow,
            ms_max: 2.0,
            gain_margin_min: 2.0,
            phase_margin_min_deg: 30.0,
            target_margin: 0.05,
        }
    }
}

/// `[design]` as written.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawDesign {
    pub output_limits: Option<Text>,
    pub ms_max: Option<Num>,
    pub gain_margin_min: Option<Num>,
    pub phase_margin_min_deg: Option<Num>,
    pub target_margin: Option<Num>,
}

/// Validates `[design]`; `None` gives the defaults.
pub(crate) fn parse(
    src: &Source<'_>,
    raw: Option<&RawDesign>,
) -> Result<DesignSpec, ScenarioError> {
    let mut spec = DesignSpec::default();
    let Some(raw) = raw else {
        return Ok(spec);
    };
    if let Some(t) = &raw.output_limits {
        spec.output_limits = match t.get_ref().as_str() {
            "as_written" => LimitChoice::AsWritten,
            "may_narrow" => LimitChoice::MayNarrow,
            other => {
                return Err(src.error(
                    Some(t.span()),
                    Some("design.output_limits".into()),
                    format!("`{other}` is not allowed: must be \"as_written\" or \"may_narrow\""),
                ));
            }
        };
    }
    let num = |v: &Option<Num>, key: &str, allowed: &str, ok: fn(f64) -> bool, default: f64| {
        let Some(v) = v else { return Ok(default) };
        let x = *v.get_ref();
        if x.is_finite() && ok(x) {
            Ok(x)
        } else {
            Err(src.error(
                Some(v.span()),
                Some(format!("design.{key}")),
                format!(
                    "{} is not allowed: must be {allowed}",
                    super::error::number_text(x)
                ),
            ))
        }
    };
    spec.ms_max = num(
        &raw.ms_max,
        "ms_max",
        "finite and > 1",
        |x| x > 1.0,
        spec.ms_max,
    )?;
    spec.gain_margin_min = num(
        &raw.gain_margin_min,
        "gain_margin_min",
        "finite and > 1 (a factor, not dB)",
        |x| x > 1.0,
        spec.gain_margin_min,
    )?;
    spec.phase_margin_min_deg = num(
        &raw.phase_margin_min_deg,
        "phase_margin_min_deg",
        "in (0, 90) degrees",
        |x| x > 0.0 && x < 90.0,
        spec.phase_margin_min_deg,
    )?;
    spec.target_margin = num(
        &raw.target_margin,
        "target_margin",
        "in [0, 0.5]",
        |x| (0.0..=0.5).contains(&x),
        spec.target_margin,
    )?;
    Ok(spec)
}
