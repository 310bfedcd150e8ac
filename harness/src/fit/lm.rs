//! Nonlinear least squares: the Levenberg–Marquardt method (Levenberg,
//! Quart. Appl. Math. 2, 1944; Marquardt, SIAM J. Appl. Math. 11, 1963)
//! with Marquardt's diagonal scaling, the damping update of Nielsen
//! (IMM report, DTU, 1999), bounds by projection and a central-difference
//! Jacobian. Small dense problems only (a handful of parameters).

/// Solves `a·x = b` for a small square `a` by Gaussian elimination with
/// partial pivoting; `None` if `a` is singular to working precision.
#[must_use]
pub fn solve(a: &[Vec<f64>], b: &[f64]) -> Option<Vec<f64>> {
    let n = b.len();
    let mut m: Vec<Vec<f64>> = a
        .iter()
        .zip(b)
        .map(|(row, &bi)| {
            let mut r = row.clone();
            r.push(bi);
            r
        })
        .collect();
    let scale = m
        .iter()
        .flat_map(|r| r[..n].iter())
        .fold(0.0f64, |s, x| s.max(x.abs()));
    for col in 0..n {
        let pivot = (col..n).max_by(|&i, &j| m[i][col].abs().total_cmp(&m[j][col].abs()))?;
        if m[pivot][col].abs() <= 1e-300_f64.max(scale * 1e-15) {
            return None;
        }
        m.swap(col, pivot);
        let (top, rest) = m.split_at_mut(col + 1);
        let pivot_row = &top[col];
        for row in rest.iter_mut() {
            let f = row[col] / pivot_row[col];
            if f != 0.0 {
                for (x, p) in row[col..].iter_mut().zip(&pivot_row[col..]) {
                    *x -= f * p;
                }
            }
        }
    }
    let mut x = vec![0.0; n];
    for i in (0..n).rev() {
        let s: f64 = (i + 1..n).map(|k| m[i][k] * x[k]).sum();
        x[i] = (m[i][n] - s) / m[i][i];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

/// The inverse of a small square matrix (`None` if singular).
#[must_use]
pub fn inverse(a: &[Vec<f64>]) -> Option<Vec<Vec<f64>>> {
    let n = a.len();
    let mut cols = Vec::with_capacity(n);
    for j in 0..n {
        let e: Vec<f64> = (0..n).map(|i| if i == j { 1.0 } else { 0.0 }).collect();
        cols.push(solve(a, &e)?);
    }
    Some(
        (0..n)
            .map(|i| (0..n).map(|j| cols[j][i]).collect())
            .collect(),
    )
}

/// What a minimisation ended with.
#[derive(Debug, Clone, PartialEq)]
pub struct Minimum {
    /// The parameters.
    pub x: Vec<f64>,
    /// Residuals there.
    pub residuals: Vec<f64>,
    /// Jacobian of the residuals there (rows: residuals, columns: parameters).
    pub jacobian: Vec<Vec<f64>>,
    /// Sum of squared residuals.
    pub ssr: f64,
    /// Iterations taken.
    pub iterations: usize,
    /// `true` when a stopping test (step, gradient or cost change) was met
    /// before the iteration limit.
    pub converged: bool,
}

/// A least-squares problem: residuals of a parameter vector (`None` where
/// they cannot be computed, e.g. a model that cannot be built there).
pub trait Residuals {
    /// Residuals at `x`.
    fn residuals(&self, x: &[f64]) -> Option<Vec<f64>>;
}

impl<F: Fn(&[f64]) -> Option<Vec<f64>>> Residuals for F {
    fn residuals(&self, x: &[f64]) -> Option<Vec<f64>> {
        self(x)
    }
}

/// Bounds and finite-difference steps of each parameter.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Coordinate {
    /// Lower bound.
    pub lo: f64,
    /// Upper bound.
    pub hi: f64,
    /// Finite-difference step.
    pub h: f64,
}

fn ssr(r: &[f64]) -> f64 {
    r.iter().map(|x| x * x).sum()
}

/// Central-difference Jacobian of `f` at `x` (one-sided at a bound).
fn jacobian(
    f: &dyn Residuals,
    x: &[f64],
    r0: &[f64],
    coords: &[Coordinate],
) -> Option<Vec<Vec<f64>>> {
    let m = r0.len();
    let mut jac = vec![vec![0.0; x.len()]; m];
    for (j, c) in coords.iter().enumerate() {
        let (mut up, mut down) = (x.to_vec(), x.to_vec());
        up[j] = (x[j] + c.h).min(c.hi);
        down[j] = (x[j] - c.h).max(c.lo);
        let span = up[j] - down[j];
        if span <= 0.0 {
            continue;
        }
        let ru = if up[j] == x[j] {
            r0.to_vec()
        } else {
            f.residuals(&up)?
        };
        let rd = if down[j] == x[j] {
            r0.to_vec()
        } else {
            f.residuals(&down)?
        };
        for i in 0..m {
            jac[i][j] = (ru[i] - rd[i]) / span;
        }
    }
    Some(jac)
}

/// Normal equations `JᵀJ` and `Jᵀr`.
#[must_use]
pub fn normal(jac: &[Vec<f64>], r: &[f64]) -> (Vec<Vec<f64>>, Vec<f64>) {
    let p = jac.first().map_or(0, Vec::len);
    let mut a = vec![vec![0.0; p]; p];
    let mut g = vec![0.0; p];
    for (row, &ri) in jac.iter().zip(r) {
        for i in 0..p {
            g[i] += row[i] * ri;
            for j in 0..p {
                a[i][j] += row[i] * row[j];
            }
        }
    }
    (a, g)
}

/// Minimises the sum of squared residuals of `f` from `x0` within the
/// bounds of `coords`, at most `max_iterations` steps. `None` if the
/// residuals cannot be computed at `x0`.
#[must_use]
pub fn minimise(
    f: &dyn Residuals,
    x0: &[f64],
    coords: &[Coordinate],
    max_iterations: usize,
) -> Option<Minimum> {
    let clamp = |x: &mut Vec<f64>| {
        for (v, c) in x.iter_mut().zip(coords) {
            *v = v.clamp(c.lo, c.hi);
        }
    };
    let mut x = x0.to_vec();
    clamp(&mut x);
    let mut r = f.residuals(&x)?;
    let mut cost = ssr(&r);
    let mut jac = jacobian(f, &x, &r, coords)?;
    let (mut a, mut g) = normal(&jac, &r);
    let mut lambda = 1e-3
        * a.iter()
            .enumerate()
            .map(|(i, row)| row[i])
            .fold(0.0, f64::max);
    if lambda <= 0.0 {
        lambda = 1e-3;
    }
    let mut nu = 2.0;
    let mut converged = false;
    let mut iterations = 0;
    while iterations < max_iterations {
        iterations += 1;
        let gmax = g.iter().map(|v| v.abs()).fold(0.0, f64::max);
        if gmax <= 1e-14 * cost.max(1e-300) {
            converged = true;
            break;
        }
        let mut damped = a.clone();
        for (i, row) in damped.iter_mut().enumerate() {
            row[i] += lambda * a[i][i].max(1e-12);
        }
        let minus_g: Vec<f64> = g.iter().map(|v| -v).collect();
        let Some(step) = solve(&damped, &minus_g) else {
            lambda *= nu;
            nu *= 2.0;
            continue;
        };
        let mut trial: Vec<f64> = x.iter().zip(&step).map(|(a, b)| a + b).collect();
        clamp(&mut trial);
        let taken: Vec<f64> = trial.iter().zip(&x).map(|(a, b)| a - b).collect();
        let small = taken
            .iter()
            .zip(&x)
            .all(|(d, v)| d.abs() <= 1e-10 * (v.abs() + 1e-10));
        let rt = f.residuals(&trial);
        let cost_t = rt.as_deref().map_or(f64::INFINITY, ssr);
        // Predicted reduction of the linear model: −(2·gᵀδ + δᵀAδ).
        let a_d: Vec<f64> = a
            .iter()
            .map(|row| row.iter().zip(&taken).map(|(p, q)| p * q).sum())
            .collect();
        let predicted = -(2.0 * g.iter().zip(&taken).map(|(p, q)| p * q).sum::<f64>()
            + taken.iter().zip(&a_d).map(|(p, q)| p * q).sum::<f64>());
        let rho = if predicted > 0.0 {
            (cost - cost_t) / predicted
        } else {
            -1.0
        };
        if rho > 0.0 && cost_t.is_finite() {
            let relative = (cost - cost_t) / cost.max(1e-300);
            x = trial;
            r = rt.unwrap_or_default();
            cost = cost_t;
            jac = jacobian(f, &x, &r, coords)?;
            (a, g) = normal(&jac, &r);
            lambda *= (1.0f64 / 3.0).max(1.0 - (2.0 * rho - 1.0).powi(3));
            nu = 2.0;
            if small || relative < 1e-13 {
                converged = true;
                break;
            }
        } else {
            if small {
                converged = true;
                break;
            }
            lambda *= nu;
            nu *= 2.0;
            if !lambda.is_finite() {
                break;
            }
        }
    }
    Some(Minimum {
        x,
        residuals: r,
        jacobian: jac,
        ssr: cost,
        iterations,
        converged,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn solves_and_inverts_a_small_system() {
        let a = vec![vec![4.0, 1.0], vec![2.0, 3.0]];
        let x = solve(&a, &[1.0, 2.0]).unwrap();
        assert!(
            (x[0] - 0.1).abs() < 1e-15 && (x[1] - 0.6).abs() < 1e-15,
            "{x:?}"
        );
        let inv = inverse(&a).unwrap();
        assert!((inv[0][0] - 0.3).abs() < 1e-15 && (inv[1][0] + 0.2).abs() < 1e-15);
        assert!(solve(&[vec![1.0, 2.0], vec![2.0, 4.0]], &[1.0, 1.0]).is_none());
    }

    /// The Rosenbrock function as residuals (10(y − x²), 1 − x): minimum
    /// at (1, 1) (Rosenbrock, Comput. J. 3, 1960).
    #[test]
    fn finds_the_rosenbrock_minimum() {
        let f = |x: &[f64]| Some(vec![10.0 * (x[1] - x[0] * x[0]), 1.0 - x[0]]);
        let c = Coordinate {
            lo: -10.0,
            hi: 10.0,
            h: 1e-6,
        };
        let m = minimise(&f, &[-1.2, 1.0], &[c, c], 200).unwrap();
        assert!(m.converged);
        assert!(
            (m.x[0] - 1.0).abs() < 1e-8 && (m.x[1] - 1.0).abs() < 1e-8,
            "{m:?}"
        );
    }

    #[test]
    fn fits_an_exponential_within_bounds() {
        // y = 3·e^(−t/2) sampled; the rate bounded to [0.1, 10].
        let t: Vec<f64> = (0..30).map(|k| f64::from(k) * 0.2).collect();
        let y: Vec<f64> = t.iter().map(|t| 3.0 * (-t / 2.0).exp()).collect();
        let f = |x: &[f64]| {
            Some(
                t.iter()
                    .zip(&y)
                    .map(|(t, y)| x[0] * (-t / x[1]).exp() - y)
                    .collect(),
            )
        };
        let c = [
            Coordinate {
                lo: -100.0,
                hi: 100.0,
                h: 1e-6,
            },
            Coordinate {
                lo: 0.1,
                hi: 10.0,
                h: 1e-6,
            },
        ];
        let m = minimise(&f, &[1.0, 0.5], &c, 200).unwrap();
        assert!(
            (m.x[0] - 3.0).abs() < 1e-8 && (m.x[1] - 2.0).abs() < 1e-8,
            "{m:?}"
        );
        assert!(m.ssr < 1e-16);
    }
}
