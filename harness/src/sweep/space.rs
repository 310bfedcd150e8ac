//! The uncertain parameters of a scenario (`[uncertainty]`) and how a
//! sweep samples them (`[sweep]`).
//!
//! Every variant is a function of `(seed, variant index)` only: random
//! draws come from [`variant_seed`] (a fixed SplitMix64 hash), Latin
//! hypercube permutations from a stream per dimension, so the same seed
//! gives the same variants on any thread count and in any shard.

use std::fmt;

use crate::scenario::{PlantModel, Scenario};

/// A scenario value that a sweep can vary.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum Param {
    /// `plant.gain` (integrator, first-order lag).
    Gain,
    /// `plant.tau_s` (first-order lag).
    TauS,
    /// `plant.dead_time_s` (first-order lag).
    DeadTimeS,
    /// `plant.mass_kg` (vehicle).
    MassKg,
    /// `plant.actuator_gain_n` (vehicle).
    ActuatorGainN,
    /// `plant.crr` (vehicle).
    Crr,
    /// `plant.air_density_kg_m3` (vehicle).
    AirDensity,
    /// `plant.cda_m2` (vehicle).
    CdA,
    /// `plant.inertia_kg_m2` (rotor).
    Inertia,
    /// `plant.torque_gain_n_m` (rotor).
    TorqueGain,
    /// `plant.viscous_n_m_s` (rotor).
    Viscous,
    /// `plant.drag_n_m_s2` (rotor).
    Drag,
    /// `actuator.tau_s`, the actuator lag.
    ActuatorTauS,
    /// `sensor.noise_std`.
    SensorNoiseStd,
    /// Factor on the `[disturbance.grade_pct]` profile (1: as written,
    /// −1: every ramp mirrored, 0: level).
    GradeScale,
    /// Factor on the `[disturbance.load]` profile.
    LoadScale,
}

impl Param {
    /// Every parameter, in the order of `docs/SCENARIO.md`.
    pub const ALL: [Self; 16] = [
        Self::Gain,
        Self::TauS,
        Self::DeadTimeS,
        Self::MassKg,
        Self::ActuatorGainN,
        Self::Crr,
        Self::AirDensity,
        Self::CdA,
        Self::Inertia,
        Self::TorqueGain,
        Self::Viscous,
        Self::Drag,
        Self::ActuatorTauS,
        Self::SensorNoiseStd,
        Self::GradeScale,
        Self::LoadScale,
    ];

    /// The key in `[uncertainty]`.
    #[must_use]
    pub const fn key(self) -> &'static str {
        match self {
            Self::Gain => "gain",
            Self::TauS => "tau_s",
            Self::DeadTimeS => "dead_time_s",
            Self::MassKg => "mass_kg",
            Self::ActuatorGainN => "actuator_gain_n",
            Self::Crr => "crr",
            Self::AirDensity => "air_density_kg_m3",
            Self::CdA => "cda_m2",
            Self::Inertia => "inertia_kg_m2",
            Self::TorqueGain => "torque_gain_n_m",
            Self::Viscous => "viscous_n_m_s",
            Self::Drag => "drag_n_m_s2",
            Self::ActuatorTauS => "actuator_tau_s",
            Self::SensorNoiseStd => "sensor_noise_std",
            Self::GradeScale => "grade_scale",
            Self::LoadScale => "load_scale",
        }
    }

    /// The parameter with `[uncertainty]` key `key`.
    #[must_use]
    pub fn from_key(key: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|p| p.key() == key)
    }

    /// The dotted path of the value it replaces in a scenario file
    /// (`plant.mass_kg`, `actuator.tau_s`, …).
    #[must_use]
    pub const fn path(self) -> &'static str {
        match self {
            Self::ActuatorTauS => "actuator.tau_s",
            Self::SensorNoiseStd => "sensor.noise_std",
            Self::GradeScale => "disturbance.grade_pct (factor)",
            Self::LoadScale => "disturbance.load (factor)",
            _ => self.plant_path(),
        }
    }

    const fn plant_path(self) -> &'static str {
        match self {
            Self::Gain => "plant.gain",
            Self::TauS => "plant.tau_s",
            Self::DeadTimeS => "plant.dead_time_s",
            Self::MassKg => "plant.mass_kg",
            Self::ActuatorGainN => "plant.actuator_gain_n",
            Self::Crr => "plant.crr",
            Self::AirDensity => "plant.air_density_kg_m3",
            Self::CdA => "plant.cda_m2",
            Self::Inertia => "plant.inertia_kg_m2",
            Self::TorqueGain => "plant.torque_gain_n_m",
            Self::Viscous => "plant.viscous_n_m_s",
            _ => "plant.drag_n_m_s2",
        }
    }

    /// Why this parameter does not apply to `s`, if it does not.
    #[must_use]
    pub fn not_applicable(self, s: &Scenario) -> Option<String> {
        let model_ok = match (&s.plant, self) {
            (PlantModel::Integrator { .. }, Self::Gain)
            | (PlantModel::FirstOrderLag { .. }, Self::Gain | Self::TauS | Self::DeadTimeS)
            | (
                PlantModel::Vehicle(_),
                Self::MassKg | Self::ActuatorGainN | Self::Crr | Self::AirDensity | Self::CdA,
            )
            | (
                PlantModel::Rotor(_),
                Self::Inertia | Self::TorqueGain | Self::Viscous | Self::Drag,
            ) => true,
            (_, Self::ActuatorTauS) => {
                return s
                    .actuator
                    .is_none()
                    .then(|| "needs an [actuator] table".to_owned());
            }
            (_, Self::SensorNoiseStd) => {
                return s
                    .sensor
                    .is_none()
                    .then(|| "needs a [sensor] table".to_owned());
            }
            (_, Self::GradeScale | Self::LoadScale) => return None,
            _ => false,
        };
        (!model_ok).then(|| "does not apply to this plant.model".to_owned())
    }

    /// The value in `s` (the nominal one before a sweep changes it).
    #[must_use]
    pub fn get(self, s: &Scenario) -> f64 {
        match (&s.plant, self) {
            (
                PlantModel::Integrator { gain } | PlantModel::FirstOrderLag { gain, .. },
                Self::Gain,
            ) => *gain,
            (PlantModel::FirstOrderLag { tau_s, .. }, Self::TauS) => *tau_s,
            (PlantModel::FirstOrderLag { dead_time_s, .. }, Self::DeadTimeS) => *dead_time_s,
            (PlantModel::Vehicle(p), Self::MassKg) => p.mass_kg,
            (PlantModel::Vehicle(p), Self::ActuatorGainN) => p.actuator_gain_n,
            (PlantModel::Vehicle(p), Self::Crr) => p.crr,
            (PlantModel::Vehicle(p), Self::AirDensity) => p.air_density_kg_m3,
            (PlantModel::Vehicle(p), Self::CdA) => p.cda_m2,
            (PlantModel::Rotor(p), Self::Inertia) => p.inertia_kg_m2,
            (PlantModel::Rotor(p), Self::TorqueGain) => p.torque_gain_n_m,
            (PlantModel::Rotor(p), Self::Viscous) => p.viscous_n_m_s,
            (PlantModel::Rotor(p), Self::Drag) => p.drag_n_m_s2,
            (_, Self::ActuatorTauS) => s.actuator.map_or(0.0, |a| a.tau_s),
            (_, Self::SensorNoiseStd) => s.sensor.map_or(0.0, |p| p.noise_std),
            _ => 1.0,
        }
    }

    /// Puts `value` into `s`. Profile factors multiply the profile as
    /// written; a parameter that does not apply is ignored (the loader
    /// refuses those).
    pub fn set(self, s: &mut Scenario, value: f64) {
        match (&mut s.plant, self) {
            (
                PlantModel::Integrator { gain } | PlantModel::FirstOrderLag { gain, .. },
                Self::Gain,
            ) => {
                *gain = value;
            }
            (PlantModel::FirstOrderLag { tau_s, .. }, Self::TauS) => *tau_s = value,
            (PlantModel::FirstOrderLag { dead_time_s, .. }, Self::DeadTimeS) => {
                *dead_time_s = value;
            }
            (PlantModel::Vehicle(p), Self::MassKg) => p.mass_kg = value,
            (PlantModel::Vehicle(p), Self::ActuatorGainN) => p.actuator_gain_n = value,
            (PlantModel::Vehicle(p), Self::Crr) => p.crr = value,
            (PlantModel::Vehicle(p), Self::AirDensity) => p.air_density_kg_m3 = value,
            (PlantModel::Vehicle(p), Self::CdA) => p.cda_m2 = value,
            (PlantModel::Rotor(p), Self::Inertia) => p.inertia_kg_m2 = value,
            (PlantModel::Rotor(p), Self::TorqueGain) => p.torque_gain_n_m = value,
            (PlantModel::Rotor(p), Self::Viscous) => p.viscous_n_m_s = value,
            (PlantModel::Rotor(p), Self::Drag) => p.drag_n_m_s2 = value,
            (_, Self::ActuatorTauS) => {
                if let Some(a) = &mut s.actuator {
                    a.tau_s = value;
                }
            }
            (_, Self::SensorNoiseStd) => {
                if let Some(p) = &mut s.sensor {
                    p.noise_std = value;
                }
            }
            (_, Self::GradeScale) => s.setup.disturbances.grade_pct.scale(value),
            (_, Self::LoadScale) => s.setup.disturbances.load.scale(value),
            _ => {}
        }
    }
}

impl fmt::Display for Param {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.key())
    }
}

/// How an uncertain value is spread.
#[derive(Debug, Clone, Copy, PartialEq)]
#[non_exhaustive]
pub enum Distribution {
    /// Uniform on `[min, max]` (`{ min, max }`).
    Uniform {
        /// Lower end.
        min: f64,
        /// Upper end.
        max: f64,
    },
    /// Triangular on `[min, max]` peaking at `mode` (`{ min, mode, max }`).
    Triangular {
        /// Lower end.
        min: f64,
        /// Most likely value.
        mode: f64,
        /// Upper end.
        max: f64,
    },
    /// Normal, truncated at `mean ± 3·std` (`{ mean, std }`).
    Normal {
        /// Mean.
        mean: f64,
        /// Standard deviation, > 0.
        std: f64,
    },
}

/// Truncation of [`Distribution::Normal`], in standard deviations.
pub const NORMAL_TRUNCATION: f64 = 3.0;

impl Distribution {
    /// The support `(lo, hi)`; grids and corners span it.
    #[must_use]
    pub fn support(self) -> (f64, f64) {
        match self {
            Self::Uniform { min, max } | Self::Triangular { min, max, .. } => (min, max),
            Self::Normal { mean, std } => (
                mean - NORMAL_TRUNCATION * std,
                mean + NORMAL_TRUNCATION * std,
            ),
        }
    }

    /// The centre value of corner-plus-centre designs: midpoint, mode or mean.
    #[must_use]
    pub fn centre(self) -> f64 {
        match self {
            Self::Uniform { min, max } => 0.5 * (min + max),
            Self::Triangular { mode, .. } => mode,
            Self::Normal { mean, .. } => mean,
        }
    }

    /// The value at probability `p ∈ [0, 1]` (inverse distribution function).
    ///
    /// Uniform and triangular use + − × ÷ and `sqrt` only (correctly rounded
    /// in IEEE 754, so identical everywhere); the normal inverts the
    /// distribution function by bisection.
    ///
    /// ```
    /// use evenkeel_harness::sweep::Distribution;
    /// let d = Distribution::Triangular { min: 0.0, mode: 1.0, max: 2.0 };
    /// assert_eq!(d.quantile(0.5), 1.0);
    /// let n = Distribution::Normal { mean: 10.0, std: 2.0 };
    /// assert!((n.quantile(0.5) - 10.0).abs() < 1e-12);
    /// // Φ(1) = 0.8413: one std above the mean, moved by the truncation at ±3 std.
    /// assert!((n.quantile(0.841_344_746) - 12.0).abs() < 0.02);
    /// ```
    #[must_use]
    pub fn quantile(self, p: f64) -> f64 {
        let p = p.clamp(0.0, 1.0);
        match self {
            Self::Uniform { min, max } => min + p * (max - min),
            Self::Triangular { min, mode, max } => {
                let width = max - min;
                if width <= 0.0 {
                    return min;
                }
                let split = (mode - min) / width;
                if p < split {
                    min + (p * width * (mode - min)).sqrt()
                } else {
                    max - ((1.0 - p) * width * (max - mode)).sqrt()
                }
            }
            Self::Normal { mean, std } => {
                let lo = normal_cdf(-NORMAL_TRUNCATION);
                let target = lo + p * (normal_cdf(NORMAL_TRUNCATION) - lo);
                let (mut a, mut b) = (-NORMAL_TRUNCATION, NORMAL_TRUNCATION);
                for _ in 0..60 {
                    let m = 0.5 * (a + b);
                    if normal_cdf(m) < target {
                        a = m;
                    } else {
                        b = m;
                    }
                }
                mean + std * 0.5 * (a + b)
            }
        }
    }
}

/// Standard normal distribution function Φ(x) for |x| ≤ 8, by the Taylor
/// series Φ(x) = ½ + φ(x)·(x + x³/3 + x⁵/(3·5) + …) (Marsaglia, "Evaluating
/// the Normal Distribution", J. Stat. Software 11(4), 2004; from memory).
/// Absolute error below 1e-15 in that range.
#[must_use]
pub fn normal_cdf(x: f64) -> f64 {
    let x = x.clamp(-8.0, 8.0);
    let (mut term, mut sum) = (x, x);
    let x2 = x * x;
    let mut i = 1.0;
    while sum + term != sum {
        i += 2.0;
        term *= x2 / i;
        sum += term;
    }
    0.5 + sum * (-0.5 * x2 - 0.918_938_533_204_672_8).exp() // ln √(2π)
}

/// One uncertain value: which, and how it is spread.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Uncertain {
    /// The parameter.
    pub param: Param,
    /// Its distribution.
    pub dist: Distribution,
}

/// How variants are chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum Method {
    /// Every combination of `levels` equally spaced values per parameter.
    Grid,
    /// Every corner of the support box, plus its centre (2ⁿ + 1 variants).
    Corners,
    /// `count` independent random draws.
    Random,
    /// `count` variants by Latin hypercube sampling (McKay, Beckman &
    /// Conover, Technometrics 21(2), 1979; from memory): each parameter's
    /// range cut into `count` equal-probability strata, each used once.
    LatinHypercube,
}

impl Method {
    /// Every method.
    pub const ALL: [Self; 4] = [
        Self::Grid,
        Self::Corners,
        Self::Random,
        Self::LatinHypercube,
    ];

    /// The name in `[sweep] method` and on the command line.
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::Grid => "grid",
            Self::Corners => "corners",
            Self::Random => "random",
            Self::LatinHypercube => "latin_hypercube",
        }
    }

    /// The method called `name`.
    #[must_use]
    pub fn from_name(name: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|m| m.name() == name)
    }
}

/// The `[sweep]` table: method, size and seed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct SweepPlan {
    /// How variants are chosen.
    pub method: Method,
    /// Variants for `random` and `latin_hypercube`.
    pub count: usize,
    /// Values per parameter for `grid` (≥ 2).
    pub levels: usize,
    /// Seed of the draws and of every variant's sensor noise.
    pub seed: u64,
}

impl Default for SweepPlan {
    fn default() -> Self {
        Self {
            method: Method::Corners,
            count: 100,
            levels: 3,
            seed: 0,
        }
    }
}

/// Largest number of variants a sweep accepts.
pub const MAX_VARIANTS: usize = 100_000_000;

/// Largest number of variants of a Latin hypercube: it keeps one
/// permutation per parameter (4 bytes per variant each, 40 MB per
/// parameter at this size).
pub const MAX_LATIN_HYPERCUBE: usize = 10_000_000;

impl SweepPlan {
    /// Number of variants over `dims` uncertain parameters; `None` if it
    /// exceeds [`MAX_VARIANTS`] (or [`MAX_LATIN_HYPERCUBE`]).
    #[must_use]
    pub fn variants(&self, dims: usize) -> Option<usize> {
        self.size(dims).ok()
    }

    /// As [`SweepPlan::variants`], the refusal saying how many variants
    /// the design has and how many are allowed.
    ///
    /// ```
    /// use evenkeel_harness::sweep::{Method, SweepPlan};
    /// let grid = SweepPlan { method: Method::Grid, levels: 1000, ..SweepPlan::default() };
    /// let e = grid.size(4).unwrap_err().to_string();
    /// assert!(e.contains("1000000000000 variants") && e.contains("at most 100000000"), "{e}");
    /// ```
    ///
    /// # Errors
    /// [`SweepError::TooLarge`](super::SweepError::TooLarge).
    pub fn size(&self, dims: usize) -> Result<usize, super::SweepError> {
        let d = u32::try_from(dims).unwrap_or(u32::MAX);
        let (n, what, limit): (Option<u128>, String, usize) = match self.method {
            Method::Grid => (
                (self.levels as u128).checked_pow(d),
                format!("a grid of {} levels over {dims} parameters", self.levels),
                MAX_VARIANTS,
            ),
            Method::Corners => (
                if dims == 0 {
                    Some(1)
                } else {
                    2u128.checked_pow(d).map(|c| c + 1)
                },
                format!("the corners of {dims} parameters and the centre"),
                MAX_VARIANTS,
            ),
            Method::Random => (
                Some(self.count as u128),
                "a random sample".to_owned(),
                MAX_VARIANTS,
            ),
            Method::LatinHypercube => (
                Some(self.count as u128),
                "a Latin hypercube (it keeps a permutation per parameter)".to_owned(),
                MAX_LATIN_HYPERCUBE,
            ),
        };
        match n.and_then(|n| usize::try_from(n).ok()) {
            Some(n) if n <= limit => Ok(n),
            _ => Err(super::SweepError::TooLarge {
                design: what,
                variants: n.map_or_else(|| "more than 3.4e38".to_owned(), |n| n.to_string()),
                limit,
            }),
        }
    }
}

/// SplitMix64 finaliser (Steele, Lea & Flood, "Fast splittable
/// pseudorandom number generators", OOPSLA 2014; constants from memory).
#[must_use]
pub const fn splitmix64(x: u64) -> u64 {
    let mut z = x.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The seed of variant `index` of a sweep with seed `seed`: a fixed hash,
/// so a variant can be re-run alone, in any shard, on any thread.
///
/// ```
/// use evenkeel_harness::sweep::variant_seed;
/// assert_eq!(variant_seed(7, 3), variant_seed(7, 3));
/// assert_ne!(variant_seed(7, 3), variant_seed(7, 4));
/// ```
#[must_use]
pub const fn variant_seed(seed: u64, index: u64) -> u64 {
    splitmix64(splitmix64(seed) ^ index)
}

/// A stream of uniform numbers in [0, 1) from a seed (SplitMix64).
#[derive(Debug, Clone)]
struct Stream(u64);

impl Stream {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        splitmix64(self.0)
    }
    /// 53 random bits as a float in [0, 1).
    fn uniform(&mut self) -> f64 {
        // Exact: 53 bits fit the mantissa.
        #[allow(clippy::cast_precision_loss)]
        let x = (self.next_u64() >> 11) as f64;
        x * (1.0 / 9_007_199_254_740_992.0)
    }
    /// Uniform integer in 0..n (n ≥ 1), by rejection (no modulo bias).
    fn below(&mut self, n: u64) -> u64 {
        let zone = u64::MAX - u64::MAX % n;
        loop {
            let x = self.next_u64();
            if x < zone {
                return x % n;
            }
        }
    }
}

/// The design: every variant's parameter values, in index order.
///
/// Built whole from [`Design`] (`variants × dims` numbers); a sweep run
/// asks [`Design::point`] for one variant at a time instead.
///
/// ```
/// use evenkeel_harness::sweep::{Distribution, Method, Param, SweepPlan, Uncertain, design_points};
/// let u = [Uncertain { param: Param::MassKg, dist: Distribution::Uniform { min: 1.0, max: 3.0 } }];
/// let plan = SweepPlan { method: Method::Corners, ..SweepPlan::default() };
/// assert_eq!(design_points(&u, &plan, 3), vec![vec![1.0], vec![3.0], vec![2.0]]);
/// ```
#[must_use]
pub fn design_points(space: &[Uncertain], plan: &SweepPlan, variants: usize) -> Vec<Vec<f64>> {
    let design = Design::new(space, plan, variants);
    (0..variants).map(|i| design.point(i)).collect()
}

/// The variants of a sweep, computed one at a time from `(seed, index)`.
///
/// Grid, corners and random draws keep nothing per variant; a Latin
/// hypercube keeps one stratum index (4 bytes) per variant and parameter,
/// its permutations, so that every shard sees the same ones (at most
/// [`MAX_LATIN_HYPERCUBE`] variants, 40 MB per parameter; 12 MB for 10⁶
/// variants of three parameters).
#[derive(Debug, Clone)]
pub struct Design {
    space: Vec<Uncertain>,
    plan: SweepPlan,
    variants: usize,
    /// Latin hypercube only: per parameter, the stratum of each variant.
    strata: Vec<Vec<u32>>,
}

impl Design {
    /// The design of `plan` over `space` with `variants` variants.
    #[must_use]
    pub fn new(space: &[Uncertain], plan: &SweepPlan, variants: usize) -> Self {
        let strata = if plan.method == Method::LatinHypercube {
            (0..space.len())
                .map(|j| {
                    // One permutation of the strata per parameter, Fisher–Yates.
                    let mut perm: Vec<u32> = (0..variants)
                        .map(|i| u32::try_from(i).unwrap_or(u32::MAX))
                        .collect();
                    let mut s = Stream(variant_seed(plan.seed ^ 0x4C48_5300, j as u64));
                    for k in (1..variants).rev() {
                        let r = usize::try_from(s.below(k as u64 + 1)).unwrap_or(0);
                        perm.swap(k, r);
                    }
                    perm
                })
                .collect()
        } else {
            Vec::new()
        };
        Self {
            space: space.to_vec(),
            plan: *plan,
            variants,
            strata,
        }
    }

    /// The parameter values of variant `i` (`i < variants`).
    #[must_use]
    pub fn point(&self, i: usize) -> Vec<f64> {
        let (space, plan, variants) = (&self.space, &self.plan, self.variants);
        let dims = space.len();
        match plan.method {
            Method::Grid => {
                let levels = plan.levels.max(2);
                let mut rest = i;
                space
                    .iter()
                    .map(|u| {
                        let level = rest % levels;
                        rest /= levels;
                        let (lo, hi) = u.dist.support();
                        // Exact for small integers.
                        #[allow(clippy::cast_precision_loss)]
                        let f = level as f64 / (levels - 1) as f64;
                        if level + 1 == levels {
                            hi
                        } else {
                            lo + f * (hi - lo)
                        }
                    })
                    .collect()
            }
            Method::Corners => {
                let corners = variants.saturating_sub(1);
                space
                    .iter()
                    .enumerate()
                    .map(|(j, u)| {
                        let (lo, hi) = u.dist.support();
                        if i >= corners || dims == 0 {
                            u.dist.centre()
                        } else if (i >> j) & 1 == 1 {
                            hi
                        } else {
                            lo
                        }
                    })
                    .collect()
            }
            Method::Random => {
                let mut s = Stream(variant_seed(plan.seed, i as u64));
                space.iter().map(|u| u.dist.quantile(s.uniform())).collect()
            }
            Method::LatinHypercube => space
                .iter()
                .enumerate()
                .map(|(j, u)| {
                    let mut jitter = Stream(variant_seed(plan.seed, ((j as u64) << 40) ^ i as u64));
                    let stratum = self.strata[j][i];
                    #[allow(clippy::cast_precision_loss)]
                    let p = (f64::from(stratum) + jitter.uniform()) / variants as f64;
                    u.dist.quantile(p)
                })
                .collect(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn space() -> Vec<Uncertain> {
        vec![
            Uncertain {
                param: Param::MassKg,
                dist: Distribution::Uniform {
                    min: 1500.0,
                    max: 3900.0,
                },
            },
            Uncertain {
                param: Param::GradeScale,
                dist: Distribution::Normal {
                    mean: 0.0,
                    std: 1.0,
                },
            },
        ]
    }

    #[test]
    fn normal_cdf_matches_tabulated_values() {
        // Standard normal table (Abramowitz & Stegun, Table 26.1; from memory).
        for (x, want) in [
            (0.0, 0.5),
            (1.0, 0.841_344_746_068_543),
            (-2.0, 0.022_750_131_948_179),
            (3.0, 0.998_650_101_968_370),
        ] {
            assert!((normal_cdf(x) - want).abs() < 1e-12, "{x}");
        }
    }

    #[test]
    fn latin_hypercube_uses_every_stratum_once() {
        let plan = SweepPlan {
            method: Method::LatinHypercube,
            count: 50,
            seed: 9,
            ..SweepPlan::default()
        };
        let points = design_points(&space(), &plan, 50);
        let mut strata: Vec<usize> = points
            .iter()
            .map(|p| {
                #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
                let s = ((p[0] - 1500.0) / 2400.0 * 50.0).floor() as usize;
                s
            })
            .collect();
        strata.sort_unstable();
        assert_eq!(strata, (0..50).collect::<Vec<_>>());
        // Same seed, same design; another seed, another one.
        assert_eq!(points, design_points(&space(), &plan, 50));
        let other = SweepPlan { seed: 10, ..plan };
        assert_ne!(points, design_points(&space(), &other, 50));
    }

    #[test]
    fn grid_and_corners_span_the_support() {
        let grid = SweepPlan {
            method: Method::Grid,
            levels: 3,
            ..SweepPlan::default()
        };
        assert_eq!(grid.variants(2), Some(9));
        let points = design_points(&space(), &grid, 9);
        assert_eq!(points[0], vec![1500.0, -3.0]);
        assert_eq!(points[4], vec![2700.0, 0.0]);
        assert_eq!(points[8], vec![3900.0, 3.0]);
        let corners = SweepPlan::default();
        assert_eq!(corners.variants(2), Some(5));
        let points = design_points(&space(), &corners, 5);
        assert_eq!(points[3], vec![3900.0, 3.0]);
        assert_eq!(points[4], vec![2700.0, 0.0]);
    }

    #[test]
    fn random_draws_stay_in_the_support_and_depend_on_the_index_only() {
        let plan = SweepPlan {
            method: Method::Random,
            count: 200,
            seed: 1,
            ..SweepPlan::default()
        };
        let points = design_points(&space(), &plan, 200);
        assert!(
            points
                .iter()
                .all(|p| (1500.0..=3900.0).contains(&p[0]) && (-3.0..=3.0).contains(&p[1]))
        );
        // The first 10 of a 10-variant run equal the first 10 of 200.
        assert_eq!(design_points(&space(), &plan, 10), points[..10].to_vec());
    }
}
