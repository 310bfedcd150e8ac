//! Verification of a proposal: the real controller (any backend) in the
//! closed loop over a sample of the uncertainty box, judged by the
//! scenario's own criteria, and the linear robustness constraints at every
//! linearised corner.
//!
//! The sample is every corner of the box and its centre, then a Latin
//! hypercube of `count` variants (McKay, Beckman & Conover 1979) drawn
//! with `seed`, exactly as `evenkeel sweep` draws them; each variant runs
//! with its own sensor-noise seed.

use evenkeel::Settings;
use rayon::prelude::*;

use super::CornerReport;
use crate::criteria::{Bound, Criterion};
use crate::outcome::BackendKind;
use crate::report::format_number;
use crate::scenario::{DesignSpec, Scenario};
use crate::sweep::{Method, SweepPlan, apply_variant, design_points, noise_seed};

/// Where a sample point comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Origin {
    /// A corner of the uncertainty box.
    Corner,
    /// The centre of the box (the nominal plant without uncertainty).
    Centre,
    /// A Latin-hypercube draw.
    Hypercube,
    /// A point of a regular grid (the robustness map).
    Grid,
}

impl Origin {
    /// `corner`, `centre`, `hypercube` or `grid`.
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::Corner => "corner",
            Self::Centre => "centre",
            Self::Hypercube => "hypercube",
            Self::Grid => "grid",
        }
    }
}

/// One variant of the sample.
#[derive(Debug, Clone, PartialEq)]
pub struct SamplePoint {
    /// Values of the uncertain parameters, in `[uncertainty]` order.
    pub values: Vec<f64>,
    /// Where it comes from.
    pub origin: Origin,
    /// Its sensor-noise seed.
    pub seed: u64,
}

/// The verification sample of `s`: corners and centre, then `count`
/// Latin-hypercube variants drawn with `seed`.
#[must_use]
pub fn sample(s: &Scenario, count: usize, seed: u64) -> Vec<SamplePoint> {
    let dims = s.uncertainty.len();
    let corners = SweepPlan {
        method: Method::Corners,
        seed,
        ..SweepPlan::default()
    };
    let mut out: Vec<SamplePoint> = Vec::new();
    let n_corners = if dims == 0 { 1 } else { (1usize << dims) + 1 };
    for (i, values) in design_points(&s.uncertainty, &corners, n_corners)
        .into_iter()
        .enumerate()
    {
        let origin = if i + 1 == n_corners {
            Origin::Centre
        } else {
            Origin::Corner
        };
        out.push(SamplePoint {
            values,
            origin,
            seed: noise_seed(seed, out.len()),
        });
    }
    if dims > 0 && count > 0 {
        let lhs = SweepPlan {
            method: Method::LatinHypercube,
            count,
            seed,
            ..SweepPlan::default()
        };
        for values in design_points(&s.uncertainty, &lhs, count) {
            out.push(SamplePoint {
                values,
                origin: Origin::Hypercube,
                seed: noise_seed(seed, out.len()),
            });
        }
    }
    out
}

/// A sample point's parameters, `key=value …` (`nominal` without any).
#[must_use]
pub fn point_label(s: &Scenario, values: &[f64]) -> String {
    if values.is_empty() {
        return "nominal".into();
    }
    s.uncertainty
        .iter()
        .zip(values)
        .map(|(u, v)| format!("{}={}", u.param.key(), format_number(Some(*v))))
        .collect::<Vec<_>>()
        .join(" ")
}

/// One variant's closed-loop result.
#[derive(Debug, Clone, PartialEq)]
pub struct VariantCheck {
    /// Index in the sample.
    pub index: usize,
    /// Measured value per criterion, scenario order (`None`: undefined).
    pub measured: Vec<Option<f64>>,
    /// Normalised margin per criterion ([`Criterion::margin`]).
    pub margins: Vec<f64>,
    /// Why the run failed (counts as failing every criterion).
    pub error: Option<String>,
}

impl VariantCheck {
    /// The smallest margin over the criteria (−∞ for a failed run).
    #[must_use]
    pub fn worst(&self) -> f64 {
        if self.error.is_some() {
            return f64::NEG_INFINITY;
        }
        self.margins.iter().copied().fold(f64::INFINITY, f64::min)
    }
}

/// Runs `settings` on `backend` at the sample points `which` of `points`,
/// in parallel; results in the order of `which`.
#[must_use]
pub fn run_variants(
    s: &Scenario,
    settings: &Settings,
    points: &[SamplePoint],
    which: &[usize],
    backend: BackendKind,
) -> Vec<VariantCheck> {
    let mut base = s.clone();
    base.controller = *settings;
    which
        .par_iter()
        .map(|&index| run_variant(&base, &points[index], index, backend))
        .collect()
}

/// One closed-loop run of `base` (with the settings already in) at `p`.
pub(crate) fn run_variant(
    base: &Scenario,
    p: &SamplePoint,
    index: usize,
    backend: BackendKind,
) -> VariantCheck {
    let v = apply_variant(base, &p.values, p.seed);
    let run = v.run_kind(backend);
    match run {
        Ok(run) => VariantCheck {
            index,
            measured: run.verdicts.iter().map(|x| x.measured).collect(),
            margins: run
                .verdicts
                .iter()
                // A metric that does not apply passes: as far from its
                // limit as the margin goes (1).
                .map(|x| {
                    if x.measured.is_none() && x.pass {
                        1.0
                    } else {
                        x.criterion.margin(x.measured)
                    }
                })
                .collect(),
            error: None,
        },
        Err(e) => VariantCheck {
            index,
            measured: vec![None; base.criteria.len()],
            margins: vec![f64::NEG_INFINITY; base.criteria.len()],
            error: Some(e.to_string()),
        },
    }
}

/// The worst margin of one criterion over the variants.
#[derive(Debug, Clone, PartialEq)]
pub struct CriterionMargin {
    /// The criterion.
    pub criterion: Criterion,
    /// Smallest normalised margin over the variants.
    pub worst_margin: f64,
    /// Measured value there.
    pub worst_value: Option<f64>,
    /// Sample index of the variant that binds it.
    pub binding: usize,
    /// Variants that fail it.
    pub failing: usize,
}

/// Per-criterion worst margins of `variants` (criteria in scenario order).
#[must_use]
pub fn criterion_margins(
    criteria: &[Criterion],
    variants: &[VariantCheck],
) -> Vec<CriterionMargin> {
    criteria
        .iter()
        .enumerate()
        .map(|(k, c)| {
            let mut out = CriterionMargin {
                criterion: c.clone(),
                worst_margin: f64::INFINITY,
                worst_value: None,
                binding: 0,
                failing: 0,
            };
            for v in variants {
                let m = v.margins.get(k).copied().unwrap_or(f64::NEG_INFINITY);
                if m.is_nan() || m < 0.0 {
                    out.failing += 1;
                }
                if m < out.worst_margin || out.worst_margin == f64::INFINITY {
                    out.worst_margin = m;
                    out.worst_value = v.measured.get(k).copied().flatten();
                    out.binding = v.index;
                }
            }
            out
        })
        .collect()
}

/// A linear robustness constraint at its worst corner.
#[derive(Debug, Clone, PartialEq)]
pub struct ConstraintMargin {
    /// `gain_margin`, `phase_margin_deg`, `ms` or `stable`.
    pub name: &'static str,
    /// Which side passes.
    pub bound: Bound,
    /// The limit (`[design]`).
    pub limit: f64,
    /// The worst value over the corners.
    pub worst: f64,
    /// The corner that binds it.
    pub corner: String,
    /// Normalised margin, as for a criterion (capped at 1).
    pub margin: f64,
}

/// The constraints of `spec` over the linearised corners: gain margin,
/// phase margin and peak sensitivity Ms, and closed-loop stability. No
/// corner (invalid settings) fails every constraint.
#[must_use]
pub fn constraints(corners: &[CornerReport], spec: &DesignSpec) -> Vec<ConstraintMargin> {
    let mut out = Vec::new();
    let mut add = |name, bound, limit: f64, pick: &dyn Fn(&CornerReport) -> f64| {
        let crit = Criterion {
            metric: crate::criteria::MetricKey::Iae, // only its bound and limit are used
            scope: crate::criteria::Scope::Run,
            bound,
            limit,
            source: None,
        };
        let mut worst = None::<(f64, f64, String)>;
        for c in corners {
            let x = pick(c);
            let m = if x.is_nan() {
                -1.0
            } else {
                crit.margin(Some(x)).min(1.0)
            };
            if worst.as_ref().is_none_or(|w| m < w.1) {
                worst = Some((x, m, c.corner.label()));
            }
        }
        let (x, m, corner) = worst.unwrap_or((f64::NAN, -1.0, "none".into()));
        out.push(ConstraintMargin {
            name,
            bound,
            limit,
            worst: x,
            corner,
            margin: m,
        });
    };
    add("gain_margin", Bound::Min, spec.gain_margin_min, &|c| {
        if c.margins.stable() {
            c.margins.gain_margin
        } else {
            0.0
        }
    });
    add(
        "phase_margin_deg",
        Bound::Min,
        spec.phase_margin_min_deg,
        &|c| {
            if c.margins.stable() {
                c.margins.phase_margin_deg
            } else {
                -180.0
            }
        },
    );
    add("ms", Bound::Max, spec.ms_max, &|c| {
        if c.margins.stable() {
            c.margins.sensitivity_peak
        } else {
            f64::INFINITY
        }
    });
    // Stability: every closed-loop pole inside the unit circle (margin 1
    // when stable, −1 when not, so it never binds a stable loop).
    let unstable = corners.iter().find(|c| !c.margins.stable());
    out.insert(
        0,
        ConstraintMargin {
            name: "stable",
            bound: Bound::Max,
            limit: 1.0,
            worst: corners
                .iter()
                .map(|c| c.margins.spectral_radius)
                .fold(if corners.is_empty() { f64::NAN } else { 0.0 }, f64::max),
            corner: unstable.map_or_else(|| "every corner".to_owned(), |c| c.corner.label()),
            margin: if unstable.is_none() && !corners.is_empty() {
                1.0
            } else {
                -1.0
            },
        },
    );
    out
}

/// The verification of one proposal over the whole sample.
#[derive(Debug, Clone, PartialEq)]
pub struct Verification {
    /// Backend the controller ran on.
    pub backend: BackendKind,
    /// The sample.
    pub points: Vec<SamplePoint>,
    /// One result per sample point.
    pub variants: Vec<VariantCheck>,
    /// Per criterion: worst margin and the variant that binds it.
    pub criteria: Vec<CriterionMargin>,
}

impl Verification {
    /// Runs `settings` over every point of `points`.
    #[must_use]
    pub fn run(
        s: &Scenario,
        settings: &Settings,
        points: Vec<SamplePoint>,
        backend: BackendKind,
    ) -> Self {
        let all: Vec<usize> = (0..points.len()).collect();
        let variants = run_variants(s, settings, &points, &all, backend);
        let criteria = criterion_margins(&s.criteria, &variants);
        Self {
            backend,
            points,
            variants,
            criteria,
        }
    }

    /// `true` when every variant met every criterion.
    #[must_use]
    pub fn passed(&self) -> bool {
        self.variants.iter().all(|v| v.worst() >= 0.0)
    }

    /// Variants that met every criterion.
    #[must_use]
    pub fn passing(&self) -> usize {
        self.variants.iter().filter(|v| v.worst() >= 0.0).count()
    }

    /// The smallest margin over variants and criteria.
    #[must_use]
    pub fn worst_margin(&self) -> f64 {
        self.criteria
            .iter()
            .map(|c| c.worst_margin)
            .fold(f64::INFINITY, f64::min)
    }
}
