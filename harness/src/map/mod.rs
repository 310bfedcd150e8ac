//! The robustness map: over the plane of two uncertain parameters, the
//! worst normalised criterion margin of the loop, the pass region's
//! boundary and the criterion that binds in each region — the picture that
//! answers "does it work for every mass and actuator gain".
//!
//! A `levels × levels` grid spans both parameters' ranges; every other
//! uncertain parameter sits at its centre. Each grid point is one closed
//! loop with the real controller (the backend chosen), judged by the
//! scenario's criteria as normalised margins ([`Criterion::margin`]). The
//! boundary is the zero contour of the margin field by marching squares
//! (linear interpolation along the cell edges; Lorensen & Cline's marching
//! cubes in two dimensions, SIGGRAPH 1987).
//!
//! ```
//! use evenkeel_harness::{BackendKind, Scenario};
//! use evenkeel_harness::map::robustness_map;
//! let fan = Scenario::from_path("../shared/scenarios/greenhouse_fan.toml")?;
//! let m = robustness_map(&fan, "inertia_kg_m2", "torque_gain_n_m", 5, BackendKind::Fixed)?;
//! assert_eq!((m.xs.len(), m.ys.len()), (5, 5));
//! assert!(m.cells.iter().flatten().all(|c| c.margin >= 0.0)); // the fan passes everywhere
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
//!
//! [`Criterion::margin`]: crate::criteria::Criterion::margin

mod plot;

pub use plot::{plot, plot_svg};

use crate::design::{Origin, SamplePoint, run_variants};
use crate::outcome::BackendKind;
use crate::scenario::Scenario;
use crate::sweep::{Param, noise_seed};

/// Most grid levels per parameter.
pub const MAX_LEVELS: usize = 200;

/// One grid point.
#[derive(Debug, Clone, PartialEq)]
pub struct Cell {
    /// The worst normalised margin over the criteria (−∞ for a run that
    /// failed to run).
    pub margin: f64,
    /// Index (scenario order) of the criterion that binds; `None` for a
    /// failed run.
    pub binding: Option<usize>,
}

/// The map of one scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct RobustnessMap {
    /// Key of the parameter across.
    pub x: &'static str,
    /// Key of the parameter up.
    pub y: &'static str,
    /// Grid values across.
    pub xs: Vec<f64>,
    /// Grid values up.
    pub ys: Vec<f64>,
    /// `cells[j][i]`: the point `(xs[i], ys[j])`.
    pub cells: Vec<Vec<Cell>>,
    /// The nominal plant (the values written in the scenario).
    pub nominal: (f64, f64),
    /// Criterion names, scenario order.
    pub criteria: Vec<String>,
    /// The zero contour: line segments `((x0, y0), (x1, y1))`.
    pub boundary: Vec<((f64, f64), (f64, f64))>,
    /// Backend used.
    pub backend: BackendKind,
}

impl RobustnessMap {
    /// Grid points that pass every criterion.
    #[must_use]
    pub fn passing(&self) -> usize {
        self.cells
            .iter()
            .flatten()
            .filter(|c| c.margin >= 0.0)
            .count()
    }
}

/// Why a map cannot be drawn.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[non_exhaustive]
pub enum MapError {
    /// A parameter is not in the scenario's `[uncertainty]`.
    #[error("`{0}` is not a parameter of this scenario's [uncertainty] (it has: {1})")]
    NotUncertain(String, String),
    /// The same parameter twice.
    #[error("the map needs two different parameters, got `{0}` twice")]
    Same(String),
    /// Levels out of range.
    #[error("--levels {0}: the map needs 2..={MAX_LEVELS} levels per parameter")]
    Levels(usize),
}

/// Computes the map of `s` over `x` and `y` (keys of `[uncertainty]`),
/// `levels` values each, on `backend`.
///
/// # Errors
/// [`MapError`] for a parameter not in `[uncertainty]`, the same one
/// twice, or levels out of range.
pub fn robustness_map(
    s: &Scenario,
    x: &str,
    y: &str,
    levels: usize,
    backend: BackendKind,
) -> Result<RobustnessMap, MapError> {
    let keys: Vec<&str> = s.uncertainty.iter().map(|u| u.param.key()).collect();
    let find = |k: &str| {
        s.uncertainty
            .iter()
            .position(|u| u.param.key() == k)
            .ok_or_else(|| MapError::NotUncertain(k.to_owned(), keys.join(", ")))
    };
    let (ix, iy) = (find(x)?, find(y)?);
    if ix == iy {
        return Err(MapError::Same(x.to_owned()));
    }
    if !(2..=MAX_LEVELS).contains(&levels) {
        return Err(MapError::Levels(levels));
    }
    let axis = |i: usize| -> Vec<f64> {
        let (lo, hi) = s.uncertainty[i].dist.support();
        #[allow(clippy::cast_precision_loss)]
        (0..levels)
            .map(|k| {
                if k + 1 == levels {
                    hi
                } else {
                    lo + (hi - lo) * k as f64 / (levels - 1) as f64
                }
            })
            .collect()
    };
    let (xs, ys) = (axis(ix), axis(iy));
    let centre: Vec<f64> = s.uncertainty.iter().map(|u| u.dist.centre()).collect();
    let mut points = Vec::with_capacity(levels * levels);
    for &vy in &ys {
        for &vx in &xs {
            let mut values = centre.clone();
            values[ix] = vx;
            values[iy] = vy;
            points.push(SamplePoint {
                values,
                origin: Origin::Grid,
                seed: noise_seed(s.seed, points.len()),
            });
        }
    }
    let all: Vec<usize> = (0..points.len()).collect();
    let runs = run_variants(s, &s.controller, &points, &all, backend);
    let cells: Vec<Vec<Cell>> = runs
        .chunks(levels)
        .map(|row| {
            row.iter()
                .map(|v| {
                    if v.error.is_some() {
                        return Cell {
                            margin: f64::NEG_INFINITY,
                            binding: None,
                        };
                    }
                    let (k, m) = v
                        .margins
                        .iter()
                        .copied()
                        .enumerate()
                        .fold((0, f64::INFINITY), |a, b| if b.1 < a.1 { b } else { a });
                    Cell {
                        margin: m,
                        binding: Some(k),
                    }
                })
                .collect()
        })
        .collect();
    let px = s.uncertainty[ix].param;
    let py = s.uncertainty[iy].param;
    let boundary = contour(&xs, &ys, &cells);
    Ok(RobustnessMap {
        x: px.key(),
        y: py.key(),
        nominal: (nominal(s, px), nominal(s, py)),
        xs,
        ys,
        cells,
        criteria: s
            .criteria
            .iter()
            .map(crate::criteria::Criterion::label)
            .collect(),
        boundary,
        backend,
    })
}

/// The value of `p` as written in the scenario (the nominal plant).
fn nominal(s: &Scenario, p: Param) -> f64 {
    p.get(s)
}

/// The zero contour of the margin field by marching squares.
fn contour(xs: &[f64], ys: &[f64], cells: &[Vec<Cell>]) -> Vec<((f64, f64), (f64, f64))> {
    let value = |i: usize, j: usize| cells[j][i].margin.max(-10.0);
    let mut out = Vec::new();
    for j in 0..ys.len().saturating_sub(1) {
        for i in 0..xs.len().saturating_sub(1) {
            // Corners anticlockwise from the lower left; edges between them.
            let c = [(i, j), (i + 1, j), (i + 1, j + 1), (i, j + 1)];
            let v: Vec<f64> = c.iter().map(|&(a, b)| value(a, b)).collect();
            let mut crossings = Vec::new();
            for e in 0..4 {
                let (a, b) = (e, (e + 1) % 4);
                if (v[a] >= 0.0) != (v[b] >= 0.0) {
                    let t = v[a] / (v[a] - v[b]);
                    let (pa, pb) = (c[a], c[b]);
                    let lerp = |p: f64, q: f64| p + t * (q - p);
                    crossings.push((lerp(xs[pa.0], xs[pb.0]), lerp(ys[pa.1], ys[pb.1])));
                }
            }
            // Two crossings: one segment; four (a saddle): two, paired in order.
            for pair in crossings.chunks(2) {
                if let [p, q] = pair {
                    out.push((*p, *q));
                }
            }
        }
    }
    out
}
