//! Longitudinal vehicle: speed from a traction command, against rolling
//! resistance, aerodynamic drag and grade.

use super::{Environment, Lagged, Memo, ParamError, Plant, check, valid_period};

/// Standard acceleration of gravity, 9.80665 m/s² (ISO 80000-3; 3rd CGPM, 1901).
pub const STANDARD_GRAVITY_M_S2: f64 = 9.80665;

/// Physical parameters of a [`Vehicle`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VehicleParams {
    /// Total moving mass `m` in kg (vehicle plus towed load), > 0.
    pub mass_kg: f64,
    /// Actuator gain `c`: traction force in N per unit of command, non-zero.
    pub actuator_gain_n: f64,
    /// Rolling-resistance coefficient `C_rr` (dimensionless), ≥ 0.
    pub crr: f64,
    /// Air density `ρ` in kg/m³, ≥ 0.
    pub air_density_kg_m3: f64,
    /// Drag area `C_d·A` in m², ≥ 0.
    pub cda_m2: f64,
    /// Speed scale `v_ε` in m/s of the smooth sign `s(v) = tanh(v/v_ε)`
    /// applied to rolling resistance, > 0.
    pub creep_speed_m_s: f64,
    /// RK4 sub-steps per [`Plant::advance`] period, ≥ 1.
    pub substeps: u32,
}

impl Default for VehicleParams {
    /// An airport baggage tug with two loaded carts. Invented numbers, chosen
    /// to be plausible, not measured: 2,500 kg, 4 kN per unit command,
    /// `C_rr` 0.015, ρ 1.225 kg/m³ (ISA sea level, from memory), `C_d·A`
    /// 1.6 m², `v_ε` 0.05 m/s, 4 sub-steps.
    fn default() -> Self {
        Self {
            mass_kg: 2500.0,
            actuator_gain_n: 4000.0,
            crr: 0.015,
            air_density_kg_m3: 1.225,
            cda_m2: 1.6,
            creep_speed_m_s: 0.05,
            substeps: 4,
        }
    }
}

/// Longitudinal vehicle
/// `m·v̇ = c·u − C_rr·m·g·cosθ·s(v) − ½·ρ·C_dA·v·|v| − m·g·sinθ + F_d`,
/// with `θ = atan(grade_pct/100)` and `F_d` = [`Environment::force_n`].
/// Output: speed `v` in m/s; [`Plant::rate`]: acceleration in m/s².
///
/// **Rolling resistance near standstill.** A sign function would make the
/// right-hand side discontinuous at `v = 0` and the integrated speed chatter
/// around zero. The model uses the smooth sign `s(v) = tanh(v/v_ε)`: above a
/// few `v_ε` it is ±1, near zero it is a steep linear friction. The price is
/// that there is no stiction: a vehicle parked on a grade creeps downhill at
/// a speed of order `v_ε` (for small grades `v ≈ −v_ε·atanh(grade/C_rr)`,
/// or it rolls away when the grade exceeds `C_rr`).
///
/// **Integration.** Classical RK4 with `substeps` equal sub-steps per period,
/// the command and environment held over the period. Near `v = 0` the model
/// has a time constant of about `v_ε/(C_rr·g)`; keep the sub-step below
/// roughly twice that for a stable, accurate solution.
///
/// ```
/// use evenkeel_harness::plant::{Environment, Plant, Vehicle, VehicleParams};
/// let mut tug = Vehicle::new(VehicleParams::default())?;
/// let uphill = Environment { grade_pct: 3.0, ..Environment::default() };
/// tug.advance(0.0, &uphill, 0.01);
/// assert!(tug.rate() < 0.0); // no traction on a slope: it starts rolling back
/// # Ok::<(), evenkeel_harness::plant::ParamError>(())
/// ```
#[derive(Debug, Clone, PartialEq)]
pub struct Vehicle {
    p: VehicleParams,
    speed_m_s: f64,
    position_m: f64,
    accel_m_s2: f64,
    /// `½·ρ·C_dA/m`, fixed by the parameters.
    drag: f64,
    /// [`slope_terms`] of the last grade: `atan`, `sin` and `cos` run once
    /// per grade value, not once per period and actuator piece.
    slope: Memo<(f64, f64)>,
    /// The smooth sign of the speed at the end of the last step: the next
    /// step starts from that speed, and its first RK4 stage takes the sign
    /// from here instead of evaluating `tanh` again.
    end_sign: Memo<f64>,
    /// `e^(−r/(2n))` of the last lag ratio `r` ([`Plant::advance_lagged`]).
    half_decay: Memo<f64>,
}

/// `(g·sinθ, C_rr·g·cosθ)` of a grade, `θ = atan(grade_pct/100)`.
fn slope_terms(p: &VehicleParams, grade_pct: f64) -> (f64, f64) {
    let theta = (grade_pct / 100.0).atan();
    let g = STANDARD_GRAVITY_M_S2;
    (g * theta.sin(), p.crr * g * theta.cos())
}

/// `(c·u + F_d)/m − g·sinθ`: the drive term of command `u`.
fn drive(p: &VehicleParams, u: f64, env: &Environment, downhill: f64) -> f64 {
    (p.actuator_gain_n * env.gain_factor * u + env.force_n) / p.mass_kg - downhill
}

/// Forces that stay constant over one period, per unit mass.
#[derive(Debug, Clone, Copy)]
struct Held {
    /// `(c·u − m·g·sinθ + F_d)/m`
    drive: f64,
    /// `g·sinθ`
    downhill: f64,
    /// `C_rr·g·cosθ`
    rolling: f64,
    /// `½·ρ·C_dA/m`
    drag: f64,
    creep: f64,
    /// `23·v_ε`: beyond it the smooth sign is exactly ±1.
    saturated: f64,
}

impl Held {
    /// The smooth sign `tanh(v/v_ε)`.
    fn sign(&self, v: f64) -> f64 {
        // Above 22, tanh is ±1 exactly in f64 (fdlibm and glibc return
        // ±(1 − tiny) = ±1 there); |v| > 23·v_ε guarantees |v/v_ε| > 22
        // despite rounding, so the shortcut changes no bit and skips a
        // division and a tanh on almost every call at driving speed.
        if v.abs() > self.saturated {
            1.0f64.copysign(v)
        } else {
            (v / self.creep).tanh()
        }
    }

    /// Acceleration at speed `v` whose smooth sign is `sign`.
    fn accel_signed(&self, v: f64, sign: f64) -> f64 {
        self.accel_driven(self.drive, v, sign)
    }

    /// The same with the drive term `drive` in place of the held one.
    fn accel_driven(&self, drive: f64, v: f64, sign: f64) -> f64 {
        drive - self.rolling * sign - self.drag * v * v.abs()
    }

    /// One classical RK4 step of `h` from speed `v` (smooth sign `sign`)
    /// with the drive term `d0` at the start, `dm` at the middle and `d1`
    /// at the end of the step. Returns the distance covered and the new
    /// speed.
    fn rk4(&self, v: f64, sign: f64, h: f64, d0: f64, dm: f64, d1: f64) -> (f64, f64) {
        let a1 = self.accel_driven(d0, v, sign);
        let v2 = v + 0.5 * h * a1;
        let a2 = self.accel_driven(dm, v2, self.sign(v2));
        let v3 = v + 0.5 * h * a2;
        let a3 = self.accel_driven(dm, v3, self.sign(v3));
        let v4 = v + h * a3;
        let a4 = self.accel_driven(d1, v4, self.sign(v4));
        (
            h / 6.0 * (v + 2.0 * v2 + 2.0 * v3 + v4),
            v + h / 6.0 * (a1 + 2.0 * a2 + 2.0 * a3 + a4),
        )
    }
}

impl Vehicle {
    /// Validates `params` and returns a vehicle at rest at position 0.
    ///
    /// # Errors
    /// [`ParamError::OutOfRange`] naming the first parameter out of range.
    pub fn new(params: VehicleParams) -> Result<Self, ParamError> {
        let p = params;
        check("mass_kg", p.mass_kg, "finite and > 0 kg", p.mass_kg > 0.0)?;
        check(
            "actuator_gain_n",
            p.actuator_gain_n,
            "finite and non-zero N per unit command",
            p.actuator_gain_n != 0.0,
        )?;
        check("crr", p.crr, "finite and >= 0", p.crr >= 0.0)?;
        check(
            "air_density_kg_m3",
            p.air_density_kg_m3,
            "finite and >= 0 kg/m^3",
            p.air_density_kg_m3 >= 0.0,
        )?;
        check("cda_m2", p.cda_m2, "finite and >= 0 m^2", p.cda_m2 >= 0.0)?;
        check(
            "creep_speed_m_s",
            p.creep_speed_m_s,
            "finite and > 0 m/s",
            p.creep_speed_m_s > 0.0,
        )?;
        check("substeps", f64::from(p.substeps), ">= 1", p.substeps >= 1)?;
        Ok(Self {
            p,
            speed_m_s: 0.0,
            position_m: 0.0,
            accel_m_s2: 0.0,
            drag: 0.5 * p.air_density_kg_m3 * p.cda_m2 / p.mass_kg,
            slope: Memo::new(0.0, slope_terms(&p, 0.0)),
            end_sign: Memo::new(0.0, 0.0),   // tanh(0) = 0
            half_decay: Memo::new(0.0, 1.0), // e^0
        })
    }

    /// The validated parameters.
    #[must_use]
    pub fn params(&self) -> &VehicleParams {
        &self.p
    }

    /// Distance travelled since the last reset, in m.
    #[must_use]
    pub fn position_m(&self) -> f64 {
        self.position_m
    }

    fn held(&mut self, u: f64, env: &Environment) -> Held {
        let p = &self.p;
        let (downhill, rolling) = self.slope.get(env.grade_pct, |g| slope_terms(p, g));
        Held {
            drive: drive(p, u, env, downhill),
            downhill,
            rolling,
            drag: self.drag,
            creep: p.creep_speed_m_s,
            saturated: 23.0 * p.creep_speed_m_s,
        }
    }
}

impl Plant for Vehicle {
    fn advance(&mut self, u: f64, env: &Environment, dt_s: f64) {
        if !valid_period(dt_s) {
            return;
        }
        let f = self.held(u, env);
        let h = dt_s / f64::from(self.p.substeps);
        let (mut x, mut v) = (self.position_m, self.speed_m_s);
        // The smooth sign at the start of each sub-step: from the end of
        // the previous one (same speed, same bits).
        let mut sign = self.end_sign.get(v, |v| f.sign(v));
        for _ in 0..self.p.substeps {
            let (dx, v1) = f.rk4(v, sign, h, f.drive, f.drive, f.drive);
            x += dx;
            v = v1;
            sign = f.sign(v);
        }
        self.position_m = x;
        self.speed_m_s = v;
        self.accel_m_s2 = f.accel_signed(v, sign);
        self.end_sign = Memo::new(v, sign);
    }

    /// RK4 with the lagged command's exact value at each stage: at the
    /// start, middle and end of every sub-step, `target + gap·q^j` with
    /// `q = e^(−r/(2n))` the lag's decay over half a sub-step (computed
    /// once per step length). The acceleration reported at the end is the
    /// one of the command at the end.
    fn advance_lagged(&mut self, input: &Lagged, env: &Environment, dt_s: f64) {
        if !valid_period(dt_s) || !input.ratio.is_finite() || input.ratio <= 0.0 {
            self.advance(input.mean, env, dt_s);
            return;
        }
        let n = self.p.substeps;
        let f = self.held(input.target, env);
        let q = self
            .half_decay
            .get(input.ratio, |r| (-r / (2.0 * f64::from(n))).exp());
        let p = &self.p;
        let at = |w: f64| drive(p, input.target + input.gap * w, env, f.downhill);
        let h = dt_s / f64::from(n);
        let (mut x, mut v) = (self.position_m, self.speed_m_s);
        let mut sign = self.end_sign.get(v, |v| f.sign(v));
        let mut w = 1.0;
        let mut d0 = at(w);
        for _ in 0..n {
            let dm = at(w * q);
            w *= q * q;
            let d1 = at(w);
            let (dx, v1) = f.rk4(v, sign, h, d0, dm, d1);
            x += dx;
            v = v1;
            sign = f.sign(v);
            d0 = d1;
        }
        self.position_m = x;
        self.speed_m_s = v;
        self.accel_m_s2 = f.accel_driven(d0, v, sign);
        self.end_sign = Memo::new(v, sign);
    }

    fn output(&self) -> f64 {
        self.speed_m_s
    }

    fn rate(&self) -> f64 {
        self.accel_m_s2
    }

    fn states(&self, out: &mut Vec<(&'static str, f64)>) {
        out.push(("speed_m_s", self.speed_m_s));
        out.push(("position_m", self.position_m));
        out.push(("accel_m_s2", self.accel_m_s2));
    }

    /// Speed `output0` m/s, position 0, acceleration 0.
    fn reset(&mut self, output0: f64) {
        self.speed_m_s = output0;
        self.position_m = 0.0;
        self.accel_m_s2 = 0.0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Fixture made by `harness/tests/reference/vehicle_fixture.py`: the
    /// same right-hand side written independently and solved by SciPy's
    /// `solve_ivp(method="DOP853")` at rtol = atol = 1e-13; speed, position
    /// and acceleration after 20 s per case.
    const DOP853_FIXTURE: &str = include_str!(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../shared/vectors/reference/vehicle_dop853.csv"
    ));

    /// RK4 at h = 2.5 ms, global error O(h⁴); the worst case measured here
    /// was 3e-11 m/s (rolling back through v = 0, where tanh(v/v_ε) is
    /// steepest), so this bound has a margin of about 30.
    const VEHICLE_TOL_M_S: f64 = 1e-9;

    /// Fixture made by `harness/tests/reference/lagged_vehicle_fixture.py`:
    /// the vehicle behind a first-order actuator lag, the command held per
    /// 10 ms period, solved by SciPy's `solve_ivp(method="DOP853")` period
    /// by period at rtol = atol = 1e-13.
    const LAGGED_FIXTURE: &str = include_str!(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../shared/vectors/reference/lagged_vehicle_dop853.csv"
    ));

    /// The vehicle seeing only each piece's mean command (the
    /// [`Plant::advance_lagged`] default), for comparison.
    struct MeanOnly(Vehicle);

    impl Plant for MeanOnly {
        fn advance(&mut self, u: f64, env: &Environment, dt_s: f64) {
            self.0.advance(u, env, dt_s);
        }
        fn output(&self) -> f64 {
            self.0.output()
        }
        fn rate(&self) -> f64 {
            self.0.rate()
        }
        fn states(&self, out: &mut Vec<(&'static str, f64)>) {
            self.0.states(out);
        }
        fn reset(&mut self, output0: f64) {
            self.0.reset(output0);
        }
    }

    /// Largest differences (speed, position, acceleration) from the lagged
    /// fixture with the actuator's period cut into `pieces`.
    fn lagged_errors(pieces: u32) -> (f64, f64, f64) {
        lagged_errors_of(pieces, Vehicle::position_m, |v| v)
    }

    /// The same for the vehicle that sees only each piece's mean.
    fn mean_errors(pieces: u32) -> (f64, f64, f64) {
        lagged_errors_of(pieces, |v: &MeanOnly| v.0.position_m(), MeanOnly)
    }

    fn lagged_errors_of<P: Plant>(
        pieces: u32,
        position: impl Fn(&P) -> f64,
        wrap: impl Fn(Vehicle) -> P,
    ) -> (f64, f64, f64) {
        use crate::plant::{Actuated, Actuator};
        let p = VehicleParams {
            cda_m2: 3.0,
            ..VehicleParams::default()
        };
        let env = Environment {
            grade_pct: 2.5,
            force_n: -150.0,
            load: 0.0,
            gain_factor: 1.0,
        };
        let actuator = Actuator::new(0.05, -1.0, 1.0).unwrap();
        let mut tug = Actuated::new(actuator, wrap(Vehicle::new(p).unwrap()), pieces).unwrap();
        let command = |k: u32| {
            let t = f64::from(k) * 0.01;
            if k >= 1200 {
                0.0
            } else {
                1.3 * (0.5 * t + 0.05 * t * t).sin()
            }
        };
        let (mut ev, mut ex, mut ea) = (0.0f64, 0.0f64, 0.0f64);
        let mut rows = LAGGED_FIXTURE
            .lines()
            .filter(|l| !l.starts_with('#'))
            .skip(1);
        let mut checked = 0;
        for k in 0..1500 {
            tug.advance(command(k), &env, 0.01);
            if (k + 1) % 50 == 0 {
                let row = rows.next().unwrap();
                let f: Vec<f64> = row.split(',').map(|x| x.parse().unwrap()).collect();
                assert_eq!(f[0], f64::from(k + 1), "{row}");
                ev = ev.max((tug.output() - f[1]).abs());
                ex = ex.max((position(tug.plant()) - f[2]).abs());
                ea = ea.max((tug.rate() - f[4]).abs());
                assert!((tug.actuator().value() - f[3]).abs() < 1e-12, "{row}");
                checked += 1;
            }
        }
        assert_eq!(checked, 30);
        (ev, ex, ea)
    }

    #[test]
    fn lagged_actuator_and_vehicle_match_dop853() {
        // One RK4 step of 10 ms per period, the lagged command exact at
        // each stage. Measured at worst over the 30 rows: 2.6e-10 m/s,
        // 8.4e-10 m, 6.8e-11 m/s²; bounds with a margin of about 4.
        let (ev, ex, ea) = lagged_errors(1);
        assert!(ev < 1e-9 && ex < 4e-9 && ea < 3e-10, "{ev:e} {ex:e} {ea:e}");
        // Fourth order: halving the step divides the error by about 16
        // (measured 16.6; a held mean per piece is second order).
        let (ev2, _, _) = lagged_errors(2);
        assert!(ev2 < ev / 10.0, "{ev:e} -> {ev2:e}");
        // Four pieces that each hold the mean command (the scheme before
        // the stages saw the lag) are worse on every quantity, at four
        // times the work: measured 4.5e-7 m/s, 5.1e-6 m, 3.7e-3 m/s².
        let (mv, mx, ma) = mean_errors(4);
        assert!(
            mv > 100.0 * ev && mx > 100.0 * ex && ma > 1e4 * ea,
            "{mv:e} {mx:e} {ma:e}"
        );
    }

    #[test]
    fn vehicle_matches_dop853_uphill_with_drag() {
        // The fixture's parameters (its third comment line).
        let p = VehicleParams {
            cda_m2: 3.0, // exaggerated drag so that the quadratic term matters
            ..VehicleParams::default()
        };
        let env = Environment {
            grade_pct: 2.5,
            force_n: -150.0,
            load: 0.0,
            gain_factor: 1.0,
        };
        let mut cases = 0;
        for line in DOP853_FIXTURE
            .lines()
            .filter(|l| !l.starts_with('#'))
            .skip(1)
        {
            let f: Vec<&str> = line.split(',').collect();
            assert_eq!(f.len(), 7, "{line}");
            let num = |i: usize| f[i].parse::<f64>().unwrap();
            let (u, v0, t_end) = (num(1), num(2), num(3));
            let (v_ref, x_ref, a_ref) = (num(4), num(5), num(6));
            let mut tug = Vehicle::new(p).unwrap();
            tug.reset(v0);
            let periods = (t_end / 0.01).round() as usize;
            assert_eq!(periods, 2000);
            for _ in 0..periods {
                tug.advance(u, &env, 0.01);
            }
            assert!(
                (tug.output() - v_ref).abs() < VEHICLE_TOL_M_S,
                "{}: {} vs {v_ref}",
                f[0],
                tug.output()
            );
            assert!((tug.position_m() - x_ref).abs() < 20.0 * VEHICLE_TOL_M_S);
            assert!((tug.rate() - a_ref).abs() < 1e-8);
            cases += 1;
        }
        assert_eq!(cases, 3); // drive, coast (rolling back through 0), reverse
    }

    #[test]
    fn grade_change_takes_effect_at_once() {
        // The grade terms are kept between periods: a new grade must not
        // reuse the old one's (same result as a fresh vehicle at that grade).
        let level = Environment::default();
        let steep = Environment {
            grade_pct: 8.0,
            ..Environment::default()
        };
        let mut a = Vehicle::new(VehicleParams::default()).unwrap();
        let mut b = a.clone();
        a.advance(0.3, &level, 0.01);
        b.advance(0.3, &level, 0.01);
        let mut fresh = Vehicle::new(VehicleParams::default()).unwrap();
        fresh.reset(a.output());
        a.advance(0.3, &steep, 0.01);
        fresh.advance(0.3, &steep, 0.01);
        assert_eq!(a.output().to_bits(), fresh.output().to_bits());
        assert!(a.rate() < b.rate()); // uphill decelerates
        b.advance(0.3, &level, 0.01);
        assert!(a.output() < b.output());
    }

    #[test]
    fn vehicle_on_level_ground_reaches_force_balance() {
        // Steady state: c·u = C_rr·m·g + ½ρC_dA·v² (tanh(v/v_ε) = 1 to 1e-80).
        let p = VehicleParams {
            cda_m2: 20.0, // large drag: settles within the run (time scale ~17 s)
            ..VehicleParams::default()
        };
        let mut tug = Vehicle::new(p).unwrap();
        for _ in 0..60_000 {
            tug.advance(0.2, &Environment::default(), 0.01);
        }
        let g = STANDARD_GRAVITY_M_S2;
        let v = ((0.2 * p.actuator_gain_n - p.crr * p.mass_kg * g)
            / (0.5 * p.air_density_kg_m3 * p.cda_m2))
            .sqrt();
        assert!((tug.output() - v).abs() < 1e-9, "{} vs {v}", tug.output());
    }

    #[test]
    fn vehicle_at_rest_does_not_chatter() {
        let mut tug = Vehicle::new(VehicleParams::default()).unwrap();
        let mut max_abs = 0.0_f64;
        for _ in 0..1000 {
            tug.advance(0.0, &Environment::default(), 0.01);
            max_abs = max_abs.max(tug.output().abs());
        }
        assert_eq!(max_abs, 0.0);
    }

    #[test]
    fn vehicle_rejects_bad_parameters() {
        let bad = [
            (
                "mass_kg",
                VehicleParams {
                    mass_kg: -1.0,
                    ..VehicleParams::default()
                },
            ),
            (
                "mass_kg",
                VehicleParams {
                    mass_kg: f64::NAN,
                    ..VehicleParams::default()
                },
            ),
            (
                "crr",
                VehicleParams {
                    crr: -0.01,
                    ..VehicleParams::default()
                },
            ),
            (
                "cda_m2",
                VehicleParams {
                    cda_m2: f64::INFINITY,
                    ..VehicleParams::default()
                },
            ),
            (
                "creep_speed_m_s",
                VehicleParams {
                    creep_speed_m_s: 0.0,
                    ..VehicleParams::default()
                },
            ),
            (
                "substeps",
                VehicleParams {
                    substeps: 0,
                    ..VehicleParams::default()
                },
            ),
            (
                "actuator_gain_n",
                VehicleParams {
                    actuator_gain_n: 0.0,
                    ..VehicleParams::default()
                },
            ),
        ];
        for (name, p) in bad {
            match Vehicle::new(p) {
                Err(ParamError::OutOfRange { name: n, .. }) => assert_eq!(n, name),
                other => panic!("{name}: {other:?}"),
            }
        }
    }
}
