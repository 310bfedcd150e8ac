//! Gain scheduling: Kp and Ki interpolated linearly between breakpoints of a
//! scheduling variable (payload, speed, valve opening …).

use heapless::Vec;

use crate::backend::Backend;
use crate::config::Config;
use crate::controller::Controller;
use crate::error::{ConfigError, Setting};
use crate::settings::Settings;

/// One row of a schedule in physical units.
///
/// ```
/// use evenkeel::{Breakpoint, ConfigError, Schedule, Settings};
/// let base = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);
/// let low = Breakpoint { at: 0.0, kp: 1.0, ki_per_s: 2.0 };
/// let high = Breakpoint { at: 8.0, kp: 3.0, ki_per_s: 4.0 };
/// assert!(Schedule::<f64, 2>::new(&base, &[low, high]).is_ok());
/// // `at` must increase strictly.
/// assert_eq!(Schedule::<f64, 2>::new(&base, &[high, low]).err(), Some(ConfigError::Schedule));
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Breakpoint {
    /// Value of the scheduling variable.
    pub at: f64,
    /// Kp at this point.
    pub kp: f64,
    /// Ki at this point, per second.
    pub ki_per_s: f64,
}

#[derive(Clone, Copy, Debug, PartialEq)]
struct Segment<B: Backend> {
    from: B,
    to: B,
    inverse_width: B::Coef,
    kp: (B::Coef, B::Coef),
    ki_ts: (B::Coef, B::Coef),
}

/// A gain schedule of up to `N` breakpoints (`N − 1` segments), stored in
/// backend `B`'s formats. Apply it with [`Controller::schedule`]; the
/// change is bumpless (see [`Controller::retune`]).
///
/// ```
/// use evenkeel::{Breakpoint, Config, Controller, Schedule, Settings};
/// let base = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);
/// let table: Schedule<f64, 4> = Schedule::new(&base, &[
///     Breakpoint { at: 1000.0, kp: 2.0, ki_per_s: 1.0 },
///     Breakpoint { at: 3000.0, kp: 6.0, ki_per_s: 3.0 },
/// ])?;
/// let mut pi = Controller::new(Config::try_new(&base)?);
/// pi.schedule(&table, 2000.0);
/// assert_eq!(pi.config().kp(), 4.0);
/// # Ok::<(), evenkeel::ConfigError>(())
/// ```
#[derive(Clone, Debug)]
pub struct Schedule<B: Backend, const N: usize> {
    segments: Vec<Segment<B>, N>,
}

impl<B: Backend, const N: usize> Schedule<B, N> {
    /// Build from at least two breakpoints with strictly increasing `at`.
    /// Every row is validated as a full configuration (`base` with the row's
    /// gains), so each scheduled gain is known to fit the backend.
    ///
    /// ```
    /// use evenkeel::{Breakpoint, ConfigError, Schedule, Settings};
    /// let base = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);
    /// let rows = [
    ///     Breakpoint { at: 0.0, kp: 1.0, ki_per_s: 2.0 },
    ///     Breakpoint { at: 8.0, kp: 3.0, ki_per_s: 4.0 },
    ///     Breakpoint { at: 16.0, kp: 5.0, ki_per_s: 6.0 },
    /// ];
    /// let table: Schedule<f32, 3> = Schedule::new(&base, &rows)?;
    /// assert!(table.gains(4.0).is_some());
    /// assert_eq!(Schedule::<f32, 2>::new(&base, &rows).err(), Some(ConfigError::Schedule)); // N too small
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    ///
    /// # Errors
    /// [`ConfigError::Schedule`] for fewer than two rows, more than `N`, or
    /// breakpoints not strictly increasing; otherwise the row's
    /// configuration error.
    pub fn new(base: &Settings, rows: &[Breakpoint]) -> Result<Self, ConfigError> {
        if rows.len() < 2 || rows.len() > N {
            return Err(ConfigError::Schedule);
        }
        let mut segments = Vec::new();
        for pair in rows.windows(2) {
            let [lo, hi] = pair else {
                return Err(ConfigError::Schedule);
            };
            if !(lo.at.is_finite() && hi.at.is_finite()) {
                return Err(ConfigError::NotFinite(Setting::Breakpoint));
            }
            if hi.at <= lo.at {
                return Err(ConfigError::Schedule);
            }
            row_config::<B>(base, lo)?;
            row_config::<B>(base, hi)?;
            let ts = base.period_s;
            let kp = B::coef_pair(lo.kp, hi.kp, 0).ok_or(ConfigError::OutOfFormat(Setting::Kp))?;
            let ki_ts = B::coef_pair(lo.ki_per_s * ts, hi.ki_per_s * ts, 16)
                .ok_or(ConfigError::OutOfFormat(Setting::Ki))?;
            let inverse = 1.0 / (hi.at - lo.at);
            let (inverse_width, _) = B::coef_pair(inverse, inverse, 0)
                .ok_or(ConfigError::OutOfFormat(Setting::Breakpoint))?;
            let segment = Segment {
                from: checked_signal::<B>(lo.at)?,
                to: checked_signal::<B>(hi.at)?,
                inverse_width,
                kp,
                ki_ts,
            };
            segments.push(segment).map_err(|_| ConfigError::Schedule)?;
        }
        Ok(Self { segments })
    }

    /// Interpolated `(Kp, Ki·Ts)` at `at`; held constant beyond the ends.
    /// Loops over at most `N − 1` segments.
    ///
    /// ```
    /// use evenkeel::{Breakpoint, Schedule, Settings};
    /// let base = Settings::new(0.25, 1.0, 1.0, 0.0, 100.0);
    /// let table: Schedule<f64, 2> = Schedule::new(&base, &[
    ///     Breakpoint { at: 0.0, kp: 1.0, ki_per_s: 2.0 },
    ///     Breakpoint { at: 8.0, kp: 3.0, ki_per_s: 4.0 },
    /// ])?;
    /// assert_eq!(table.gains(2.0), Some((1.5, 0.625))); // a quarter of the way
    /// assert_eq!(table.gains(100.0), Some((3.0, 1.0))); // held beyond the last row
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn gains(&self, at: B) -> Option<(B::Coef, B::Coef)> {
        let last = self.segments.last()?;
        let segment = self.segments.iter().find(|s| at <= s.to).unwrap_or(last);
        let raw = at.sub(segment.from).scale(segment.inverse_width);
        let one = B::from_f64(1.0);
        let frac = if raw < B::ZERO {
            B::ZERO
        } else if raw > one {
            one
        } else {
            raw
        };
        Some((
            B::coef_lerp(segment.kp.0, segment.kp.1, frac),
            B::coef_lerp(segment.ki_ts.0, segment.ki_ts.1, frac),
        ))
    }
}

fn row_config<B: Backend>(base: &Settings, row: &Breakpoint) -> Result<Config<B>, ConfigError> {
    let settings = Settings {
        kp: row.kp,
        ki_per_s: row.ki_per_s,
        ..*base
    };
    Config::try_new(&settings)
}

fn checked_signal<B: Backend>(x: f64) -> Result<B, ConfigError> {
    let v = B::from_f64(x);
    if (v.to_f64() - x).abs() <= 1e-3 * x.abs().max(1.0) {
        Ok(v)
    } else {
        Err(ConfigError::OutOfFormat(Setting::Breakpoint))
    }
}

impl<B: Backend> Controller<B> {
    /// Apply the schedule's gains at scheduling value `at`, bumplessly.
    /// Does nothing if the schedule is empty or `at` is not finite.
    ///
    /// ```
    /// use evenkeel::{Breakpoint, Config, Controller, Schedule, Settings};
    /// let base = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);
    /// let table: Schedule<f64, 2> = Schedule::new(&base, &[
    ///     Breakpoint { at: 0.0, kp: 2.0, ki_per_s: 1.0 },
    ///     Breakpoint { at: 8.0, kp: 6.0, ki_per_s: 1.0 },
    /// ])?;
    /// let mut pi = Controller::new(Config::try_new(&base)?);
    /// pi.schedule(&table, f64::NAN); // ignored
    /// assert_eq!(pi.config().kp(), 1.0);
    /// pi.schedule(&table, 2.0);
    /// assert_eq!(pi.config().kp(), 3.0);
    /// # Ok::<(), evenkeel::ConfigError>(())
    /// ```
    pub fn schedule<const N: usize>(&mut self, table: &Schedule<B, N>, at: B) {
        if !at.is_finite() {
            return;
        }
        if let Some((kp, ki_ts)) = table.gains(at) {
            let config = self.config().with_gains(kp, ki_ts);
            self.retune(config);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use fixed::types::I16F16;

    const BASE: Settings = Settings::new(0.01, 1.0, 1.0, 0.0, 1000.0);
    const ROWS: [Breakpoint; 3] = [
        Breakpoint {
            at: 1500.0,
            kp: 40.0,
            ki_per_s: 8.0,
        },
        Breakpoint {
            at: 2700.0,
            kp: 70.0,
            ki_per_s: 14.0,
        },
        Breakpoint {
            at: 3900.0,
            kp: 100.0,
            ki_per_s: 20.0,
        },
    ];

    #[test]
    fn fixed_interpolation_matches_exact_values() {
        let table: Schedule<I16F16, 3> = Schedule::new(&BASE, &ROWS).expect("valid");
        for (at, kp, ki_ts) in [
            (1000.0, 40.0, 0.08), // held below the first breakpoint
            (1500.0, 40.0, 0.08),
            (2100.0, 55.0, 0.11),
            (3300.0, 85.0, 0.17),
            (5000.0, 100.0, 0.2), // held above the last
        ] {
            let (k, i) = table.gains(I16F16::from_num(at)).expect("non-empty");
            // Interpolation fraction is Q16.16: relative error ≤ 2^-16.
            assert!(
                (k.to_f64() - kp).abs() <= kp * 3e-5,
                "kp at {at}: {}",
                k.to_f64()
            );
            assert!((i.to_f64() - ki_ts).abs() <= ki_ts * 3e-5, "ki at {at}");
        }
    }

    #[test]
    fn rejects_bad_tables() {
        let unsorted = [ROWS[1], ROWS[0]];
        assert_eq!(
            Schedule::<f32, 4>::new(&BASE, &unsorted).err(),
            Some(ConfigError::Schedule)
        );
        assert_eq!(
            Schedule::<f32, 2>::new(&BASE, &ROWS).err(),
            Some(ConfigError::Schedule)
        );
        assert_eq!(
            Schedule::<f32, 4>::new(&BASE, &ROWS[..1]).err(),
            Some(ConfigError::Schedule)
        );
        let negative = [
            ROWS[0],
            Breakpoint {
                kp: -1.0,
                ..ROWS[1]
            },
        ];
        assert_eq!(
            Schedule::<f32, 4>::new(&BASE, &negative).err(),
            Some(ConfigError::Negative(Setting::Kp))
        );
        // Each row's Ki is checked with the row's own value, not the base's.
        let negative_ki = [
            ROWS[0],
            Breakpoint {
                ki_per_s: -1.0,
                ..ROWS[1]
            },
        ];
        assert_eq!(
            Schedule::<f32, 4>::new(&BASE, &negative_ki).err(),
            Some(ConfigError::Negative(Setting::Ki))
        );
    }

    #[test]
    fn rejects_bad_breakpoints() {
        let with_at = |at: f64| [ROWS[0], Breakpoint { at, ..ROWS[1] }];
        assert_eq!(
            Schedule::<I16F16, 2>::new(&BASE, &with_at(f64::NAN)).err(),
            Some(ConfigError::NotFinite(Setting::Breakpoint))
        );
        // Two rows at one point: a zero-width segment.
        assert_eq!(
            Schedule::<I16F16, 2>::new(&BASE, &with_at(1500.0)).err(),
            Some(ConfigError::Schedule)
        );
        // Beyond Q16.16 (largest 32767.99998).
        assert_eq!(
            Schedule::<I16F16, 2>::new(&BASE, &with_at(40_000.0)).err(),
            Some(ConfigError::OutOfFormat(Setting::Breakpoint))
        );
        // In range but not a multiple of 2⁻¹⁶: rounded, accepted.
        assert!(Schedule::<I16F16, 2>::new(&BASE, &with_at(2100.3)).is_ok());
        let first_nan = [
            Breakpoint {
                at: f64::NAN,
                ..ROWS[0]
            },
            ROWS[1],
        ];
        assert_eq!(
            Schedule::<f64, 2>::new(&BASE, &first_nan).err(),
            Some(ConfigError::NotFinite(Setting::Breakpoint))
        );
    }

    /// A non-finite scheduling variable (a failed sensor) leaves the gains
    /// as they were.
    #[test]
    fn non_finite_variable_keeps_the_gains() {
        let table: Schedule<f64, 3> = Schedule::new(&BASE, &ROWS).expect("valid");
        let mut pi = Controller::new(Config::<f64>::try_new(&BASE).expect("valid"));
        pi.schedule(&table, f64::NAN);
        assert_eq!(pi.config().kp(), 1.0);
        pi.schedule(&table, 2100.0);
        assert!((pi.config().kp() - 55.0).abs() < 1e-9);
        pi.schedule(&table, f64::INFINITY);
        assert!((pi.config().kp() - 55.0).abs() < 1e-9);
    }

    #[test]
    fn scheduling_is_bumpless() {
        let table: Schedule<I16F16, 3> = Schedule::new(&BASE, &ROWS).expect("valid");
        let mut pi = Controller::new(Config::<I16F16>::try_new(&BASE).expect("valid"));
        let (r, y) = (I16F16::from_num(4), I16F16::from_num(3.5));
        let before = pi.step(r, y).command;
        pi.schedule(&table, I16F16::from_num(3000));
        let after = pi.step(r, y).command;
        // Kp jumped from 1 to 77.5: without the integrator correction the
        // command would jump by 76.5·0.5; here only one integration step
        // (Ki·Ts·e = 0.01·0.5) plus rounding separates them.
        let diff = (after - before).to_num::<f64>();
        assert!((diff - 0.005).abs() < 1e-4, "diff {diff}");
    }
}
