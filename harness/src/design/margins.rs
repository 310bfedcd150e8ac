//! Stability margins of the sampled loop: the plant (actuator lag, first
//! order lag or integrator, dead time) discretised exactly for a
//! zero-order hold, the controller exactly as `evenkeel` computes it, the
//! loop gain evaluated on the unit circle.
//!
//! Loop, with the reference at zero and `Ts` the period:
//!
//! ```text
//! L(z) = C(z) · F(z) · z^(−d) · G(z)
//! C(z) = Kp + Ki·Ts/(z − 1)            (P on the filtered measurement, I updated after the output)
//! F(z) = α·z/(z − (1 − α))             (backward-Euler low-pass, α = Ts/(Tf + Ts))
//! G(z) = C·(zI − Φ)⁻¹·(Γ(Ts−δ) + Φ(Ts−δ)·Γ(δ)·z⁻¹)·z^(−D)   (dead time L = D·Ts + δ)
//! ```
//!
//! `d` is the sensor delay in samples. Margins follow the usual
//! definitions (e.g. Franklin, Powell & Workman, *Digital Control of
//! Dynamic Systems*, 3rd ed., §7; from memory); the delay margin is PM/ωc.

use std::f64::consts::PI;
use std::ops::{Add, Div, Mul, Sub};

/// A complex number (only what the margins need).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct C64 {
    pub re: f64,
    pub im: f64,
}

impl C64 {
    pub const fn new(re: f64, im: f64) -> Self {
        Self { re, im }
    }
    pub fn real(re: f64) -> Self {
        Self { re, im: 0.0 }
    }
    pub fn expj(w: f64) -> Self {
        Self::new(w.cos(), w.sin())
    }
    pub fn abs(self) -> f64 {
        self.re.hypot(self.im)
    }
    pub fn arg(self) -> f64 {
        self.im.atan2(self.re)
    }
    pub fn ln(self) -> Self {
        Self::new(self.abs().ln(), self.arg())
    }
}

impl Add for C64 {
    type Output = Self;
    fn add(self, o: Self) -> Self {
        Self::new(self.re + o.re, self.im + o.im)
    }
}
impl Sub for C64 {
    type Output = Self;
    fn sub(self, o: Self) -> Self {
        Self::new(self.re - o.re, self.im - o.im)
    }
}
impl Mul for C64 {
    type Output = Self;
    fn mul(self, o: Self) -> Self {
        Self::new(
            self.re * o.re - self.im * o.im,
            self.re * o.im + self.im * o.re,
        )
    }
}
impl Div for C64 {
    type Output = Self;
    fn div(self, o: Self) -> Self {
        let d = o.re * o.re + o.im * o.im;
        Self::new(
            (self.re * o.re + self.im * o.im) / d,
            (self.im * o.re - self.re * o.im) / d,
        )
    }
}

/// A polynomial in z, ascending powers.
type Poly = Vec<f64>;

fn pmul(a: &[f64], b: &[f64]) -> Poly {
    let mut out = vec![0.0; a.len() + b.len() - 1];
    for (i, x) in a.iter().enumerate() {
        for (j, y) in b.iter().enumerate() {
            out[i + j] += x * y;
        }
    }
    out
}

fn padd(a: &[f64], b: &[f64]) -> Poly {
    let mut out = vec![0.0; a.len().max(b.len())];
    for (i, x) in a.iter().enumerate() {
        out[i] += x;
    }
    for (i, x) in b.iter().enumerate() {
        out[i] += x;
    }
    out
}

fn shift(a: &[f64], k: usize) -> Poly {
    let mut out = vec![0.0; k];
    out.extend_from_slice(a);
    out
}

fn peval(p: &[f64], z: C64) -> C64 {
    p.iter()
        .rev()
        .fold(C64::real(0.0), |acc, &c| acc * z + C64::real(c))
}

/// The linear plant seen by the controller at one operating point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LinearPlant {
    /// `true`: `k/s` (output rate per command); `false`: `k/(τs + 1)`.
    pub integrating: bool,
    /// Gain `k`.
    pub gain: f64,
    /// Time constant τ, s (first-order only).
    pub tau_s: f64,
    /// Transport delay before the plant, s.
    pub dead_time_s: f64,
    /// Actuator lag, s (0: none).
    pub actuator_tau_s: f64,
    /// Sensor delay, whole samples.
    pub sensor_delay: usize,
}

impl LinearPlant {
    /// Output rate per unit of command at the first instant of a step
    /// (`k` for an integrator, `k/τ` for a lag): what turns a command slew
    /// into jerk and a command step into acceleration.
    #[must_use]
    pub fn rate_gain(&self) -> f64 {
        if self.integrating {
            self.gain.abs()
        } else {
            (self.gain / self.tau_s).abs()
        }
    }
}

/// Per-sample controller coefficients as stored (e.g. read back from a
/// fixed-point configuration).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LoopCoefficients {
    /// Period, s.
    pub period_s: f64,
    /// Kp.
    pub kp: f64,
    /// Ki·Ts.
    pub ki_ts: f64,
    /// Filter α (1: no filter).
    pub alpha: f64,
}

/// 2×2 matrices as `[[a, b], [c, d]]`.
type M2 = [[f64; 2]; 2];

/// `e^(A·h)` and `∫₀ʰ e^(A·s) ds · B` for a system of at most 2 states, via
/// the exponential of the augmented matrix `[[A, B], [0, 0]]` (3×3):
/// scaling and squaring of a 20-term Taylor series.
fn discretise(a: &M2, b: [f64; 2], h: f64) -> (M2, [f64; 2]) {
    let mut m = [[0.0; 3]; 3];
    for i in 0..2 {
        for j in 0..2 {
            m[i][j] = a[i][j] * h;
        }
        m[i][2] = b[i] * h;
    }
    let norm = m.iter().flatten().map(|x| x.abs()).fold(0.0, f64::max);
    let mut squarings = 0;
    let mut scale = 1.0;
    while norm * scale > 0.5 {
        scale *= 0.5;
        squarings += 1;
    }
    for row in &mut m {
        for x in row.iter_mut() {
            *x *= scale;
        }
    }
    let mul3 = |p: &[[f64; 3]; 3], q: &[[f64; 3]; 3]| {
        let mut o = [[0.0; 3]; 3];
        for i in 0..3 {
            for j in 0..3 {
                o[i][j] = (0..3).map(|k| p[i][k] * q[k][j]).sum();
            }
        }
        o
    };
    let mut e = [[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]];
    let mut term = e;
    for k in 1..=20 {
        term = mul3(&term, &m);
        let f = 1.0 / f64::from(k);
        for row in &mut term {
            for x in row.iter_mut() {
                *x *= f;
            }
        }
        for i in 0..3 {
            for j in 0..3 {
                e[i][j] += term[i][j];
            }
        }
    }
    for _ in 0..squarings {
        e = mul3(&e, &e);
    }
    ([[e[0][0], e[0][1]], [e[1][0], e[1][1]]], [e[0][2], e[1][2]])
}

/// The sampled loop as polynomials: `L(z) = num(z)/den(z)`.
#[derive(Debug, Clone, PartialEq)]
pub struct SampledLoop {
    num: Poly,
    den: Poly,
    /// Period, s.
    pub period_s: f64,
}

impl SampledLoop {
    /// The loop of `plant` under `c`.
    #[must_use]
    pub fn new(plant: &LinearPlant, c: &LoopCoefficients) -> Self {
        let ts = c.period_s;
        // States: x (plant output) and, with an actuator lag, a.
        let lagged = plant.actuator_tau_s > 0.0;
        let (a, b): (M2, [f64; 2]) = {
            let k = plant.gain;
            let p = if plant.integrating {
                0.0
            } else {
                -1.0 / plant.tau_s
            };
            let kin = if plant.integrating {
                k
            } else {
                k / plant.tau_s
            };
            if lagged {
                let ta = plant.actuator_tau_s;
                ([[p, kin], [0.0, -1.0 / ta]], [0.0, 1.0 / ta])
            } else {
                ([[p, 0.0], [0.0, 0.0]], [kin, 0.0])
            }
        };
        let n = if lagged { 2 } else { 1 };
        // Dead time D·Ts + δ.
        let l = plant.dead_time_s.max(0.0);
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        let mut whole = (l / ts).floor() as usize;
        #[allow(clippy::cast_precision_loss)]
        let mut delta = l - whole as f64 * ts;
        if delta > ts * (1.0 - 1e-9) {
            whole += 1;
            delta = 0.0;
        }
        if delta < ts * 1e-9 {
            delta = 0.0;
        }
        let (phi, _) = discretise(&a, b, ts);
        let (phi_rest, gamma_rest) = discretise(&a, b, ts - delta);
        let (_, gamma_delta) = discretise(&a, b, delta);
        // Input vectors: Γ1 for u_{k−D}, Γ2 for u_{k−D−1}.
        let g1 = gamma_rest;
        let g2 = [
            phi_rest[0][0] * gamma_delta[0] + phi_rest[0][1] * gamma_delta[1],
            phi_rest[1][0] * gamma_delta[0] + phi_rest[1][1] * gamma_delta[1],
        ];
        // C·adj(zI − Φ)·(Γ1·z + Γ2) / (det(zI − Φ)·z) · z^(−D); C = [1, 0].
        let (num_g, den_g): (Poly, Poly) = if n == 1 {
            (vec![g2[0], g1[0]], pmul(&[-phi[0][0], 1.0], &[0.0, 1.0]))
        } else {
            // adj row 0 = [z − φ11, φ01]
            let row0 = [vec![-phi[1][1], 1.0], vec![phi[0][1]]];
            let input = [vec![g2[0], g1[0]], vec![g2[1], g1[1]]];
            let num = padd(&pmul(&row0[0], &input[0]), &pmul(&row0[1], &input[1]));
            let det = padd(
                &pmul(&[-phi[0][0], 1.0], &[-phi[1][1], 1.0]),
                &[-phi[0][1] * phi[1][0]],
            );
            (num, pmul(&det, &[0.0, 1.0]))
        };
        let den_g = shift(&den_g, whole + plant.sensor_delay);
        // Controller and filter: (Kp·(z − 1) + Ki·Ts)·α·z / ((z − 1)·(z − (1 − α))).
        // Without integral action there is no (z − 1) to cancel.
        let (num_c, den_c) = if c.ki_ts == 0.0 {
            (pmul(&[c.kp], &[0.0, c.alpha]), vec![-(1.0 - c.alpha), 1.0])
        } else {
            (
                pmul(&[c.ki_ts - c.kp, c.kp], &[0.0, c.alpha]),
                pmul(&[-1.0, 1.0], &[-(1.0 - c.alpha), 1.0]),
            )
        };
        Self {
            num: pmul(&num_g, &num_c),
            den: pmul(&den_g, &den_c),
            period_s: ts,
        }
    }

    /// `L(e^(jωTs))`.
    #[must_use]
    pub(crate) fn at(&self, w_rad_s: f64) -> C64 {
        let z = C64::expj(w_rad_s * self.period_s);
        peval(&self.num, z) / peval(&self.den, z)
    }

    /// Characteristic polynomial `den + num` of the closed loop.
    fn characteristic(&self) -> Poly {
        let mut p = padd(&self.den, &self.num);
        while p.len() > 1 && p.last().is_some_and(|c| c.abs() < 1e-300) {
            p.pop();
        }
        p
    }

    /// Closed-loop poles (roots of the characteristic polynomial), by the
    /// Weierstrass (Durand–Kerner) iteration.
    #[must_use]
    pub(crate) fn poles(&self) -> Vec<C64> {
        roots(&self.characteristic())
    }
}

/// Roots of `p` (ascending powers): roots at zero split off exactly, the
/// rest by the Aberth–Ehrlich simultaneous iteration (Aberth, "Iteration
/// methods for finding all zeros of a polynomial simultaneously", Math.
/// Comp. 27, 1973), started on a circle of the roots' geometric-mean
/// radius, until every correction is below 10⁻¹³ of its root (at most 500
/// sweeps).
fn roots(p: &[f64]) -> Vec<C64> {
    let zeros = p.iter().take_while(|c| **c == 0.0).count();
    let p = &p[zeros.min(p.len())..];
    let n = p.len().saturating_sub(1);
    let mut z: Vec<C64> = Vec::with_capacity(n + zeros);
    if n > 0 {
        let lead = p[n];
        let monic: Vec<f64> = p.iter().map(|c| c / lead).collect();
        let slope: Vec<f64> = monic
            .iter()
            .enumerate()
            .skip(1)
            .map(|(k, c)| {
                #[allow(clippy::cast_precision_loss)]
                let k = k as f64;
                k * c
            })
            .collect();
        #[allow(clippy::cast_precision_loss)]
        let radius = {
            let r = monic[0].abs().powf(1.0 / n as f64);
            if r.is_finite() && r > 0.0 { r } else { 1.0 }
        };
        #[allow(clippy::cast_precision_loss)]
        z.extend((0..n).map(|k| {
            let angle = std::f64::consts::TAU * k as f64 / n as f64 + 0.4;
            C64::new(radius * angle.cos(), radius * angle.sin())
        }));
        for _ in 0..500 {
            let mut worst = 0.0f64;
            for i in 0..n {
                let value = peval(&monic, z[i]);
                if value.abs() == 0.0 {
                    continue;
                }
                let newton = value / peval(&slope, z[i]);
                let mut repulsion = C64::real(0.0);
                for j in 0..n {
                    if j != i {
                        repulsion = repulsion + C64::real(1.0) / (z[i] - z[j]);
                    }
                }
                let step = newton / (C64::real(1.0) - newton * repulsion);
                if step.re.is_finite() && step.im.is_finite() {
                    z[i] = z[i] - step;
                    worst = worst.max(step.abs() / z[i].abs().max(1e-300));
                }
            }
            if worst < 1e-13 {
                break;
            }
        }
    }
    z.extend(std::iter::repeat_n(C64::real(0.0), zeros));
    z
}

/// Margins and closed-loop character of one sampled loop.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Margins {
    /// Gain margin (factor by which the loop gain may grow), `∞` if the
    /// phase never reaches −180° below the Nyquist frequency.
    pub gain_margin: f64,
    /// Phase crossover frequency, rad/s (NaN if none).
    pub phase_crossover_rad_s: f64,
    /// Phase margin, degrees (the smallest over the gain crossovers).
    pub phase_margin_deg: f64,
    /// Gain crossover frequency ωc, rad/s (NaN if none).
    pub gain_crossover_rad_s: f64,
    /// Delay margin PM/ωc, s.
    pub delay_margin_s: f64,
    /// Largest closed-loop pole magnitude (< 1: stable).
    pub spectral_radius: f64,
    /// Smallest damping ratio over the closed-loop poles, their
    /// continuous equivalents `s = ln(z)/Ts`.
    pub min_damping: f64,
    /// Time constant of the slowest closed-loop pole, s.
    pub dominant_time_s: f64,
    /// Closed-loop bandwidth (|T| first below −3 dB), rad/s.
    pub bandwidth_rad_s: f64,
    /// Peak sensitivity Ms = max |1/(1 + L)| over the grid: the inverse of
    /// the shortest distance from the Nyquist curve to −1.
    pub sensitivity_peak: f64,
    /// Peak complementary sensitivity Mt = max |L/(1 + L)|.
    pub complementary_peak: f64,
}

impl Margins {
    /// `true` when the closed loop is stable.
    #[must_use]
    pub fn stable(&self) -> bool {
        self.spectral_radius < 1.0
    }
}

/// Unwrapped phase along `w` (starting in (−2π, 0]).
fn unwrap(values: &[C64]) -> Vec<f64> {
    let mut out = Vec::with_capacity(values.len());
    let mut last = f64::NAN;
    for v in values {
        let mut p = v.arg();
        if last.is_nan() {
            if p > 0.0 {
                p -= 2.0 * PI;
            }
        } else {
            while p - last > PI {
                p -= 2.0 * PI;
            }
            while p - last < -PI {
                p += 2.0 * PI;
            }
        }
        out.push(p);
        last = p;
    }
    out
}

/// Bisection for `f(w) = 0` between `a` and `b` (a sign change).
fn bisect(mut a: f64, mut b: f64, f: impl Fn(f64) -> f64) -> f64 {
    let fa0 = f(a);
    for _ in 0..60 {
        let m = (a * b).sqrt();
        if (f(m) > 0.0) == (fa0 > 0.0) {
            a = m;
        } else {
            b = m;
        }
    }
    (a * b).sqrt()
}

/// Frequency points of the analysis grid per decade.
const POINTS_PER_DECADE: f64 = 400.0;

/// Margins of `lp` on a log grid from 10⁻⁵·π/Ts to the Nyquist frequency,
/// crossings refined by bisection.
#[must_use]
pub fn margins(lp: &SampledLoop) -> Margins {
    let nyquist = PI / lp.period_s;
    let lo = nyquist * 1e-5;
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let n = (5.0 * POINTS_PER_DECADE) as usize;
    #[allow(clippy::cast_precision_loss)]
    let w: Vec<f64> = (0..=n)
        .map(|i| {
            lo * (nyquist / lo).powf(i as f64 / n as f64) * if i == n { 1.0 - 1e-9 } else { 1.0 }
        })
        .collect();
    let l: Vec<C64> = w.iter().map(|&x| lp.at(x)).collect();
    let phase = unwrap(&l);
    let mag: Vec<f64> = l.iter().map(|v| v.abs()).collect();

    let mut gm = f64::INFINITY;
    let mut wpc = f64::NAN;
    let mut pm = f64::INFINITY;
    let mut wgc = f64::NAN;
    for i in 0..n {
        // Phase crossings of −180° + k·360°.
        let (p0, p1) = (phase[i], phase[i + 1]);
        let (lo_p, hi_p) = (p0.min(p1), p0.max(p1));
        let mut k = ((lo_p + PI) / (2.0 * PI)).ceil();
        while -PI + 2.0 * PI * k <= hi_p {
            let t = -PI + 2.0 * PI * k;
            k += 1.0;
            if t <= lo_p || p0 == p1 {
                continue;
            }
            let wc = bisect(w[i], w[i + 1], |x| {
                let mut p = lp.at(x).arg();
                while p - p0 > PI {
                    p -= 2.0 * PI;
                }
                while p - p0 < -PI {
                    p += 2.0 * PI;
                }
                p - t
            });
            let m = lp.at(wc).abs();
            if m < 1.0 && 1.0 / m < gm {
                gm = 1.0 / m;
                wpc = wc;
            }
        }
        if (mag[i] - 1.0) * (mag[i + 1] - 1.0) < 0.0 {
            let wc = bisect(w[i], w[i + 1], |x| lp.at(x).abs().ln());
            let mut p = lp.at(wc).arg().to_degrees() + 180.0;
            while p > 180.0 {
                p -= 360.0;
            }
            while p <= -180.0 {
                p += 360.0;
            }
            if p < pm {
                pm = p;
                wgc = wc;
            }
        }
    }
    let poles = lp.poles();
    let ts = lp.period_s;
    let radius = poles.iter().map(|p| p.abs()).fold(0.0, f64::max);
    let mut min_damping = f64::INFINITY;
    let mut dominant = 0.0f64;
    for p in &poles {
        if p.abs() < 1e-9 {
            continue; // pure delays: s → −∞
        }
        let s = p.ln();
        let s = C64::new(s.re / ts, s.im / ts);
        let zeta = -s.re / s.abs();
        min_damping = min_damping.min(zeta);
        if s.re < 0.0 {
            dominant = dominant.max(-1.0 / s.re);
        }
    }
    // −3 dB bandwidth of T = L/(1 + L); peaks of S and T.
    let mut bandwidth = f64::NAN;
    let (mut ms, mut mt) = (0.0f64, 0.0f64);
    for (&x, v) in w.iter().zip(&l) {
        let one_plus = C64::real(1.0) + *v;
        let t = (*v / one_plus).abs();
        ms = ms.max(1.0 / one_plus.abs());
        mt = mt.max(t);
        if bandwidth.is_nan() && t < std::f64::consts::FRAC_1_SQRT_2 {
            bandwidth = x;
        }
    }
    Margins {
        gain_margin: gm,
        phase_crossover_rad_s: wpc,
        phase_margin_deg: pm,
        gain_crossover_rad_s: wgc,
        delay_margin_s: if wgc.is_finite() {
            pm.to_radians() / wgc
        } else {
            f64::INFINITY
        },
        spectral_radius: radius,
        min_damping,
        dominant_time_s: dominant,
        bandwidth_rad_s: bandwidth,
        sensitivity_peak: ms,
        complementary_peak: mt,
    }
}

/// One point of a loop's frequency response.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ResponsePoint {
    /// Frequency, rad/s.
    pub w_rad_s: f64,
    /// `L(e^(jωTs))`, real part.
    pub re: f64,
    /// Imaginary part.
    pub im: f64,
    /// `|L|`.
    pub magnitude: f64,
    /// Phase of `L`, degrees, unwrapped along the grid (starting in
    /// (−360°, 0°]).
    pub phase_deg: f64,
}

/// The loop's frequency response on `n` log-spaced points from
/// 10⁻³·π/Ts to just below the Nyquist frequency (for plots).
#[must_use]
pub fn frequency_response(lp: &SampledLoop, n: usize) -> Vec<ResponsePoint> {
    let nyquist = PI / lp.period_s;
    let lo = nyquist * 1e-3;
    let n = n.max(2);
    #[allow(clippy::cast_precision_loss)]
    let w: Vec<f64> = (0..n)
        .map(|i| lo * (nyquist * (1.0 - 1e-6) / lo).powf(i as f64 / (n - 1) as f64))
        .collect();
    let l: Vec<C64> = w.iter().map(|&x| lp.at(x)).collect();
    let phase = unwrap(&l);
    w.iter()
        .zip(&l)
        .zip(&phase)
        .map(|((&w_rad_s, v), &p)| ResponsePoint {
            w_rad_s,
            re: v.re,
            im: v.im,
            magnitude: v.abs(),
            phase_deg: p.to_degrees(),
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn discretisation_of_a_lag_is_exact() {
        // ẋ = −x/τ + k/τ·u: Φ = e^(−h/τ), Γ = k·(1 − e^(−h/τ)).
        let (tau, k, h) = (1.5, 2.0, 0.1);
        let (phi, gamma) = discretise(&[[-1.0 / tau, 0.0], [0.0, 0.0]], [k / tau, 0.0], h);
        assert!((phi[0][0] - (-h / tau).exp()).abs() < 1e-15);
        assert!((gamma[0] - k * (1.0 - (-h / tau).exp())).abs() < 1e-15);
    }

    #[test]
    fn roots_of_a_known_polynomial() {
        // (z − 0.5)(z² + 0.25) = z³ − 0.5z² + 0.25z − 0.125
        let r = roots(&[-0.125, 0.25, -0.5, 1.0]);
        let mut mags: Vec<f64> = r.iter().map(|z| z.abs()).collect();
        mags.sort_by(f64::total_cmp);
        for m in mags {
            assert!((m - 0.5).abs() < 1e-10, "{m}");
        }
    }

    /// Π (z − r_k) with real coefficients, ascending powers.
    fn expand(known: &[C64]) -> Vec<f64> {
        let mut poly = vec![C64::real(1.0)];
        for r in known {
            let mut next = vec![C64::real(0.0); poly.len() + 1];
            for (i, c) in poly.iter().enumerate() {
                next[i + 1] = next[i + 1] + *c;
                next[i] = next[i] - *c * *r;
            }
            poly = next;
        }
        poly.iter().map(|c| c.re).collect()
    }

    #[test]
    fn roots_of_a_polynomial_with_known_roots() {
        // 20 roots on rings of radius 0.6 .. 0.99 (conjugate pairs), one
        // near 1 and two at zero, multiplied out, then recovered.
        let mut known = vec![C64::real(0.998), C64::real(0.0), C64::real(0.0)];
        for k in 0..10 {
            let r = 0.6 + 0.39 * f64::from(k) / 9.0;
            let a = 0.1 + 3.0 * f64::from(k) / 10.0;
            known.push(C64::new(r * a.cos(), r * a.sin()));
            known.push(C64::new(r * a.cos(), -r * a.sin()));
        }
        let found = roots(&expand(&known));
        assert_eq!(found.len(), known.len());
        for r in &known {
            let nearest = found
                .iter()
                .map(|f| (*f - *r).abs())
                .fold(f64::INFINITY, f64::min);
            assert!(nearest < 1e-8, "{r:?}: {nearest}");
        }
    }

    #[test]
    fn roots_of_a_long_dead_time_loop_have_a_tiny_backward_error() {
        // PI on a lag with 100 samples of dead time: degree 103. Each root
        // found makes |p(z)| tiny against Σ|c_k|·|z|^k (the backward
        // error a root finder can promise; the roots themselves are
        // ill-conditioned at this degree).
        let plant = LinearPlant {
            integrating: false,
            gain: 60.0,
            tau_s: 250.0,
            dead_time_s: 100.0,
            actuator_tau_s: 0.0,
            sensor_delay: 0,
        };
        let c = LoopCoefficients {
            period_s: 1.0,
            kp: 0.02,
            ki_ts: 6.8e-5,
            alpha: 1.0,
        };
        let lp = SampledLoop::new(&plant, &c);
        let p = lp.characteristic();
        let found = roots(&p);
        assert_eq!(found.len(), p.len() - 1);
        for z in &found {
            let scale = p.iter().rev().fold(0.0, |acc, c| acc * z.abs() + c.abs());
            let value = peval(&p, *z).abs();
            let residual = if value == 0.0 { 0.0 } else { value / scale };
            assert!(residual < 1e-12, "{z:?}: {residual}");
        }
        assert!(margins(&lp).stable());
    }

    #[test]
    fn pure_gain_integrator_loop_has_the_textbook_margins() {
        // Integrator k/s under P control Kp, no delay: L(z) = Kp·k·Ts/(z − 1).
        // Phase −90° − ωTs/2; |L| = 1 at 2·sin(ωTs/2) = Kp·k·Ts; phase −180°
        // at Nyquist where |L| = Kp·k·Ts/2, so GM = 2/(Kp·k·Ts).
        let plant = LinearPlant {
            integrating: true,
            gain: 1.0,
            tau_s: 1.0,
            dead_time_s: 0.0,
            actuator_tau_s: 0.0,
            sensor_delay: 0,
        };
        let c = LoopCoefficients {
            period_s: 0.1,
            kp: 2.0,
            ki_ts: 0.0,
            alpha: 1.0,
        };
        let m = margins(&SampledLoop::new(&plant, &c));
        let wc = 2.0 * (0.2f64 / 2.0).asin() / 0.1;
        assert!((m.gain_crossover_rad_s - wc).abs() < 1e-6, "{m:?}");
        assert!((m.phase_margin_deg - (90.0 - (wc * 0.05).to_degrees())).abs() < 1e-4);
        assert!(m.stable());
        // The phase reaches −180° only at Nyquist itself (not inside the grid).
        assert!(m.gain_margin > 9.0, "{m:?}");
    }
}
