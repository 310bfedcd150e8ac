//! Gain scheduling: Kp and Ki interpolated linearly between breakpoints of a
//! scheduling variable (payload, speed, valve opening …).

use core::marker::PhantomData;

use fixed::types::I16F16;

use crate::backend::Backend;
use crate::config::Config;
use crate::controller::Controller;
use crate::error::{ConfigError, Setting};
use crate::layout::{Layout, Runtime, Slot};
use crate::q::{self, FixedCoef};
use crate::settings::Settings;

/// One row of a schedule in physical units.
///
/// ```
/// use evenkeel::{Breakpoint, Schedule, ScheduleError, Settings};
/// let base = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);
/// let low = Breakpoint { at: 0.0, kp: 1.0, ki_per_s: 2.0 };
/// let high = Breakpoint { at: 8.0, kp: 3.0, ki_per_s: 4.0 };
/// assert!(Schedule::<f64, 2>::new(&base, &[low, high]).is_ok());
/// // `at` must increase strictly: row 1 is wrong.
/// assert_eq!(Schedule::<f64, 2>::new(&base, &[high, low]).err(), Some(ScheduleError::NotIncreasing { row: 1 }));
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

impl Segment<I16F16> {
    const UNUSED: Self = Self {
        from: I16F16::ZERO,
        to: I16F16::ZERO,
        inverse_width: FixedCoef::ZERO,
        kp: (FixedCoef::ZERO, FixedCoef::ZERO),
        ki_ts: (FixedCoef::ZERO, FixedCoef::ZERO),
    };
}

/// Why a gain schedule was refused, and which row is wrong.
///
/// Rows are counted from 0, as indices into the slice given.
///
/// ```
/// use evenkeel::{Breakpoint, ConfigError, Schedule, ScheduleError, Setting, Settings};
/// let base = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);
/// let rows = [
///     Breakpoint { at: 0.0, kp: 1.0, ki_per_s: 2.0 },
///     Breakpoint { at: 8.0, kp: -3.0, ki_per_s: 4.0 },
/// ];
/// let err = Schedule::<f64, 2>::new(&base, &rows).err();
/// assert_eq!(err, Some(ScheduleError::Row { row: 1, error: ConfigError::Negative(Setting::Kp) }));
/// assert_eq!(err.map(|e| e.to_string()).as_deref(), Some("gain schedule row 1: kp must be zero or positive"));
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum ScheduleError {
    /// Fewer than two rows, or more than the table holds.
    RowCount {
        /// Rows given.
        rows: usize,
        /// Rows the table holds (`N`).
        capacity: usize,
    },
    /// This row's breakpoint is not above the previous row's.
    NotIncreasing {
        /// The row, counted from 0.
        row: usize,
    },
    /// This row, as a configuration (the base settings with the row's
    /// gains), is invalid, or its breakpoint does not fit.
    Row {
        /// The row, counted from 0.
        row: usize,
        /// What is wrong with it.
        error: ConfigError,
    },
}

impl ScheduleError {
    /// A fixed one-line description (usable in `const` context).
    ///
    /// ```
    /// use evenkeel::ScheduleError;
    /// let e = ScheduleError::NotIncreasing { row: 3 };
    /// assert_eq!(e.summary(), "evenkeel schedule: a breakpoint is not above the previous row's");
    /// ```
    #[must_use]
    pub const fn summary(self) -> &'static str {
        match self {
            Self::RowCount { .. } => "evenkeel schedule: needs 2 to N rows",
            Self::NotIncreasing { .. } => {
                "evenkeel schedule: a breakpoint is not above the previous row's"
            }
            Self::Row { .. } => "evenkeel schedule: a row is not a valid configuration",
        }
    }
}

impl core::fmt::Display for ScheduleError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match *self {
            Self::RowCount { rows, capacity } => write!(
                f,
                "gain schedule: {rows} rows given; it needs at least 2 and holds at most {capacity}"
            ),
            Self::NotIncreasing { row } => write!(
                f,
                "gain schedule row {row}: breakpoint `at` must be greater than row {}'s",
                row.saturating_sub(1)
            ),
            Self::Row { row, error } => write!(f, "gain schedule row {row}: {error}"),
        }
    }
}

impl core::error::Error for ScheduleError {}

impl From<ScheduleError> for ConfigError {
    /// The row's own error, or [`ConfigError::Schedule`] for the table's
    /// shape.
    fn from(e: ScheduleError) -> Self {
        match e {
            ScheduleError::Row { error, .. } => error,
            _ => ConfigError::Schedule,
        }
    }
}

/// A gain schedule of up to `N` breakpoints (`N − 1` segments), stored in
/// backend `B`'s formats. Apply it with [`Controller::schedule`]; the
/// change is bumpless (see [`Controller::retune`]).
///
/// Fixed point: build it at compile time with [`crate::schedule!`] (or
/// [`Schedule::fixed`], a `const fn`); applying it each step then needs no
/// float routine and has no panic path. Interpolation is in Q16.16 and
/// gives the same bits on every target.
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
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
#[derive(Clone, Copy, Debug)]
pub struct Schedule<B: Backend, const N: usize, L: Layout = Runtime> {
    /// The first `len` are the segments, in order.
    segments: [Segment<B>; N],
    len: usize,
    layout: PhantomData<L>,
}

impl<B: Backend, const N: usize, L: Layout> PartialEq for Schedule<B, N, L> {
    /// Equal segments (the unused slots do not count).
    fn eq(&self, other: &Self) -> bool {
        self.segments.get(..self.len) == other.segments.get(..other.len)
    }
}

impl<B: Backend, const N: usize, L: Layout> Schedule<B, N, L> {
    /// Build from at least two breakpoints with strictly increasing `at`.
    /// Every row is validated as a full configuration (`base` with the row's
    /// gains, in layout `L`), so each scheduled gain is known to fit the
    /// backend.
    ///
    /// ```
    /// use evenkeel::{Breakpoint, Schedule, ScheduleError, Settings};
    /// let base = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);
    /// let rows = [
    ///     Breakpoint { at: 0.0, kp: 1.0, ki_per_s: 2.0 },
    ///     Breakpoint { at: 8.0, kp: 3.0, ki_per_s: 4.0 },
    ///     Breakpoint { at: 16.0, kp: 5.0, ki_per_s: 6.0 },
    /// ];
    /// let table: Schedule<f32, 3> = Schedule::new(&base, &rows)?;
    /// assert!(table.gains(4.0).is_some());
    /// let small = Schedule::<f32, 2>::new(&base, &rows).err();
    /// assert_eq!(small, Some(ScheduleError::RowCount { rows: 3, capacity: 2 })); // N too small
    /// # Ok::<(), evenkeel::ScheduleError>(())
    /// ```
    ///
    /// # Errors
    /// A [`ScheduleError`] naming the first wrong row.
    pub fn new(base: &Settings, rows: &[Breakpoint]) -> Result<Self, ScheduleError> {
        if rows.len() < 2 || rows.len() > N {
            return Err(ScheduleError::RowCount {
                rows: rows.len(),
                capacity: N,
            });
        }
        let mut segments: Option<[Segment<B>; N]> = None;
        let mut len = 0;
        for (row, pair) in (1..).zip(rows.windows(2)) {
            let [lo, hi] = pair else {
                return Err(ScheduleError::RowCount {
                    rows: rows.len(),
                    capacity: N,
                });
            };
            check_rows::<B, L>(base, lo, hi, row)?;
            let fail = |error| ScheduleError::Row { row, error };
            let ts = base.period_s;
            let shape = L::SHAPE;
            let kp = B::coef_pair(lo.kp, hi.kp, 0)
                .map(|(a, b)| pin::<B>(shape.and_then(|s| s.shift(Slot::Kp)), a, b, lo.kp, hi.kp))
                .ok_or(fail(ConfigError::OutOfFormat(Setting::Kp)))?
                .ok_or(fail(ConfigError::Layout(Setting::Kp)))?;
            let ki_ts = B::coef_pair(lo.ki_per_s * ts, hi.ki_per_s * ts, 16)
                .map(|(a, b)| {
                    let shift = shape.and_then(|s| s.shift(Slot::KiTs));
                    pin::<B>(shift, a, b, lo.ki_per_s * ts, hi.ki_per_s * ts)
                })
                .ok_or(fail(ConfigError::OutOfFormat(Setting::Ki)))?
                .ok_or(fail(ConfigError::Layout(Setting::Ki)))?;
            let inverse = 1.0 / (hi.at - lo.at);
            let (inverse_width, _) = B::coef_pair(inverse, inverse, 0)
                .ok_or(fail(ConfigError::OutOfFormat(Setting::Breakpoint)))?;
            let segment = Segment {
                from: checked_signal::<B>(lo.at).map_err(|e| ScheduleError::Row {
                    row: row - 1,
                    error: e,
                })?,
                to: checked_signal::<B>(hi.at).map_err(fail)?,
                inverse_width,
                kp,
                ki_ts,
            };
            let slots = segments.get_or_insert([segment; N]);
            if let Some(slot) = slots.get_mut(len) {
                *slot = segment;
            }
            len += 1;
        }
        let segments = segments.ok_or(ScheduleError::RowCount {
            rows: rows.len(),
            capacity: N,
        })?;
        Ok(Self {
            segments,
            len,
            layout: PhantomData,
        })
    }

    /// Interpolated `(Kp, Ki·Ts)` at `at`; held constant beyond the ends.
    /// Loops over at most `N − 1` segments. Fixed point: the fraction
    /// `(at − from) · (1 / width)` is a Q16.16 product (nearest, ties
    /// toward +∞) clamped to [0, 1], and each gain is `lo + (hi − lo) ·
    /// fraction` on the pair's common mantissa scale (see
    /// [`FixedCoef::lerp`]).
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
    /// # Ok::<(), evenkeel::ScheduleError>(())
    /// ```
    pub fn gains(&self, at: B) -> Option<(B::Coef, B::Coef)> {
        let used = self.segments.get(..self.len)?;
        let last = used.last()?;
        let segment = used.iter().find(|s| at <= s.to).unwrap_or(last);
        let raw = at.sub(segment.from).scale(segment.inverse_width);
        let frac = if raw < B::ZERO {
            B::ZERO
        } else if raw > B::ONE {
            B::ONE
        } else {
            raw
        };
        Some((
            B::coef_lerp(segment.kp.0, segment.kp.1, frac),
            B::coef_lerp(segment.ki_ts.0, segment.ki_ts.1, frac),
        ))
    }
}

/// Under a layout, both ends of a pair at the layout's shift (refused if a
/// value loses more than the configuration tolerance there); otherwise
/// the pair as it is.
fn pin<B: Backend>(
    shift: Option<u32>,
    a: B::Coef,
    b: B::Coef,
    a_value: f64,
    b_value: f64,
) -> Option<(B::Coef, B::Coef)> {
    match shift {
        Some(shift) => B::coef_pair_at(a_value, b_value, shift),
        None => Some((a, b)),
    }
}

/// Both rows of a segment, each as a configuration, and their order.
fn check_rows<B: Backend, L: Layout>(
    base: &Settings,
    lo: &Breakpoint,
    hi: &Breakpoint,
    row: usize,
) -> Result<(), ScheduleError> {
    let at_row = |row, error| ScheduleError::Row { row, error };
    if !lo.at.is_finite() {
        return Err(at_row(row - 1, ConfigError::NotFinite(Setting::Breakpoint)));
    }
    if !hi.at.is_finite() {
        return Err(at_row(row, ConfigError::NotFinite(Setting::Breakpoint)));
    }
    row_config::<B, L>(base, lo).map_err(|e| at_row(row - 1, e))?;
    row_config::<B, L>(base, hi).map_err(|e| at_row(row, e))?;
    if hi.at <= lo.at {
        return Err(ScheduleError::NotIncreasing { row });
    }
    Ok(())
}

impl<const N: usize, L: Layout> Schedule<I16F16, N, L> {
    /// The fixed-point schedule, usable in `const` context (so a firmware
    /// keeps it in flash and links no float routine to build it): the same
    /// segments as [`Schedule::new`] gives for `I16F16`.
    ///
    /// ```
    /// use evenkeel::{Breakpoint, Schedule, ScheduleError, Settings};
    /// use fixed::types::I16F16;
    /// const BASE: Settings = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);
    /// const ROWS: [Breakpoint; 2] = [
    ///     Breakpoint { at: 0.0, kp: 1.0, ki_per_s: 2.0 },
    ///     Breakpoint { at: 8.0, kp: 3.0, ki_per_s: 4.0 },
    /// ];
    /// const TABLE: Result<Schedule<I16F16, 2>, ScheduleError> = Schedule::fixed(&BASE, &ROWS);
    /// assert_eq!(TABLE.as_ref().ok(), Schedule::new(&BASE, &ROWS).as_ref().ok());
    /// ```
    ///
    /// # Errors
    /// As [`Schedule::new`].
    pub const fn fixed(base: &Settings, rows: &[Breakpoint]) -> Result<Self, ScheduleError> {
        if rows.len() < 2 || rows.len() > N {
            return Err(ScheduleError::RowCount {
                rows: rows.len(),
                capacity: N,
            });
        }
        let mut segments = [Segment::<I16F16>::UNUSED; N];
        let mut slots: &mut [Segment<I16F16>] = &mut segments;
        let mut rest = rows;
        let mut row = 1;
        while let [lo, hi, ..] = rest {
            let segment = match fixed_segment::<L>(base, lo, hi, row) {
                Ok(s) => s,
                Err(e) => return Err(e),
            };
            if let [slot, more @ ..] = slots {
                *slot = segment;
                slots = more;
            }
            if let [_, tail @ ..] = rest {
                rest = tail;
            }
            row += 1;
        }
        Ok(Self {
            segments,
            len: rows.len() - 1,
            layout: PhantomData,
        })
    }
}

/// One fixed-point segment between rows `row − 1` and `row`, exactly as
/// [`Schedule::new`] computes it for `I16F16`.
const fn fixed_segment<L: Layout>(
    base: &Settings,
    lo: &Breakpoint,
    hi: &Breakpoint,
    row: usize,
) -> Result<Segment<I16F16>, ScheduleError> {
    macro_rules! at_row {
        ($row:expr, $e:expr) => {
            match $e {
                Ok(v) => v,
                Err(error) => return Err(ScheduleError::Row { row: $row, error }),
            }
        };
    }
    if !lo.at.is_finite() {
        return Err(ScheduleError::Row {
            row: row - 1,
            error: ConfigError::NotFinite(Setting::Breakpoint),
        });
    }
    if !hi.at.is_finite() {
        return Err(ScheduleError::Row {
            row,
            error: ConfigError::NotFinite(Setting::Breakpoint),
        });
    }
    at_row!(row - 1, Config::<I16F16, L>::new(&with_row(base, lo)));
    at_row!(row, Config::<I16F16, L>::new(&with_row(base, hi)));
    if hi.at <= lo.at {
        return Err(ScheduleError::NotIncreasing { row });
    }
    let ts = base.period_s;
    let shape = L::SHAPE;
    let kp = match layout_shift(shape, Slot::Kp) {
        Some(shift) => q::coef_pair_at(lo.kp, hi.kp, shift),
        None => q::coef_pair(lo.kp, hi.kp, 0),
    };
    let kp = at_row!(row, ok_or(kp, ConfigError::OutOfFormat(Setting::Kp)));
    let (ki_lo, ki_hi) = (lo.ki_per_s * ts, hi.ki_per_s * ts);
    let ki_ts = match layout_shift(shape, Slot::KiTs) {
        Some(shift) => q::coef_pair_at(ki_lo, ki_hi, shift),
        None => q::coef_pair(ki_lo, ki_hi, 16),
    };
    let ki_ts = at_row!(row, ok_or(ki_ts, ConfigError::OutOfFormat(Setting::Ki)));
    let inverse = 1.0 / (hi.at - lo.at);
    let inverse_width = match q::coef_pair(inverse, inverse, 0) {
        Some((c, _)) => c,
        None => {
            return Err(ScheduleError::Row {
                row,
                error: ConfigError::OutOfFormat(Setting::Breakpoint),
            });
        }
    };
    let from = at_row!(row - 1, fixed_breakpoint(lo.at));
    let to = at_row!(row, fixed_breakpoint(hi.at));
    Ok(Segment {
        from,
        to,
        inverse_width,
        kp,
        ki_ts,
    })
}

/// The layout's fixed shift for `slot`, if it fixes one.
const fn layout_shift(shape: Option<crate::layout::Shape>, slot: Slot) -> Option<u32> {
    match shape {
        Some(s) => s.shift(slot),
        None => None,
    }
}

const fn ok_or<T: Copy>(x: Option<T>, e: ConfigError) -> Result<T, ConfigError> {
    match x {
        Some(v) => Ok(v),
        None => Err(e),
    }
}

/// A breakpoint as a Q16.16 signal: nearest (ties to even), and refused
/// beyond 1e-3 relative of the written value (outside the range).
const fn fixed_breakpoint(x: f64) -> Result<I16F16, ConfigError> {
    let v = q::signal_nearest_even(x);
    let err = v.to_bits() as f64 / 65_536.0 - x;
    let mag = if x < 0.0 { -x } else { x };
    let tolerance = 1e-3 * if mag > 1.0 { mag } else { 1.0 };
    if err <= tolerance && -err <= tolerance {
        Ok(v)
    } else {
        Err(ConfigError::OutOfFormat(Setting::Breakpoint))
    }
}

const fn with_row(base: &Settings, row: &Breakpoint) -> Settings {
    Settings {
        kp: row.kp,
        ki_per_s: row.ki_per_s,
        ..*base
    }
}

fn row_config<B: Backend, L: Layout>(
    base: &Settings,
    row: &Breakpoint,
) -> Result<Config<B, L>, ConfigError> {
    Config::try_new(&with_row(base, row))
}

fn checked_signal<B: Backend>(x: f64) -> Result<B, ConfigError> {
    let v = B::from_f64(x);
    if (v.to_f64() - x).abs() <= 1e-3 * x.abs().max(1.0) {
        Ok(v)
    } else {
        Err(ConfigError::OutOfFormat(Setting::Breakpoint))
    }
}

/// A gain schedule in fixed point, built by the compiler; an invalid table
/// does not compile.
///
/// `schedule!(N, BASE, ROWS)` gives a `Schedule<I16F16, N>`;
/// `schedule!(N, Layout, BASE, ROWS)` one for a compile-time layout.
///
/// ```
/// use evenkeel::{Breakpoint, Schedule, Settings};
/// use fixed::types::I16F16;
/// const BASE: Settings = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);
/// const ROWS: [Breakpoint; 2] = [
///     Breakpoint { at: 0.0, kp: 1.0, ki_per_s: 2.0 },
///     Breakpoint { at: 8.0, kp: 3.0, ki_per_s: 4.0 },
/// ];
/// static TABLE: Schedule<I16F16, 2> = evenkeel::schedule!(2, BASE, ROWS);
/// assert!(TABLE.gains(I16F16::from_num(4)).is_some());
/// ```
///
/// ```compile_fail,E0080
/// use evenkeel::{Breakpoint, Schedule, Settings};
/// use fixed::types::I16F16;
/// const BASE: Settings = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);
/// const ROWS: [Breakpoint; 2] = [ // not increasing
///     Breakpoint { at: 8.0, kp: 1.0, ki_per_s: 2.0 },
///     Breakpoint { at: 0.0, kp: 3.0, ki_per_s: 4.0 },
/// ];
/// static TABLE: Schedule<I16F16, 2> = evenkeel::schedule!(2, BASE, ROWS);
/// ```
#[macro_export]
macro_rules! schedule {
    ($n:expr, $base:expr, $rows:expr) => {
        $crate::schedule!($n, $crate::Runtime, $base, $rows)
    };
    ($n:expr, $layout:ty, $base:expr, $rows:expr) => {
        const {
            match $crate::Schedule::<$crate::fixed::types::I16F16, { $n }, $layout>::fixed(
                &$base, &$rows,
            ) {
                Ok(table) => table,
                // Evaluated by the compiler only: an invalid table stops the build.
                Err(error) => panic!("{}", error.summary()),
            }
        }
    };
}

impl<B: Backend, L: Layout> Controller<B, L> {
    /// Apply the schedule's gains at scheduling value `at`, bumplessly.
    /// Does nothing if `at` is not finite.
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
    /// # Ok::<(), Box<dyn std::error::Error>>(())
    /// ```
    pub fn schedule<const N: usize>(&mut self, table: &Schedule<B, N, L>, at: B) {
        const {
            assert!(
                !crate::layout::is_frozen::<L>(),
                "a frozen configuration (evenkeel::frozen!) cannot be scheduled"
            );
        }
        if !at.is_finite() {
            return;
        }
        if let Some((kp, ki_ts)) = table.gains(at) {
            // Interpolated between two validated rows of one format: valid.
            let config = self.config().with_gains_unchecked(kp, ki_ts);
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

    /// Both builders (run time and `const`) on one table.
    fn both<const N: usize>(rows: &[Breakpoint]) -> Option<ScheduleError> {
        let run_time = Schedule::<I16F16, N>::new(&BASE, rows).err();
        let compile_time = Schedule::<I16F16, N>::fixed(&BASE, rows).err();
        assert_eq!(run_time, compile_time, "the two builders disagree");
        run_time
    }

    #[test]
    fn rejects_bad_tables() {
        let unsorted = [ROWS[1], ROWS[0]];
        assert_eq!(
            Schedule::<f32, 4>::new(&BASE, &unsorted).err(),
            Some(ScheduleError::NotIncreasing { row: 1 })
        );
        assert_eq!(
            both::<4>(&unsorted),
            Some(ScheduleError::NotIncreasing { row: 1 })
        );
        assert_eq!(
            both::<2>(&ROWS),
            Some(ScheduleError::RowCount {
                rows: 3,
                capacity: 2
            })
        );
        assert_eq!(
            both::<4>(&ROWS[..1]),
            Some(ScheduleError::RowCount {
                rows: 1,
                capacity: 4
            })
        );
        let negative = [
            ROWS[0],
            ROWS[1],
            Breakpoint {
                kp: -1.0,
                ..ROWS[2]
            },
        ];
        let row_2 = |error| Some(ScheduleError::Row { row: 2, error });
        assert_eq!(
            Schedule::<f32, 4>::new(&BASE, &negative).err(),
            row_2(ConfigError::Negative(Setting::Kp))
        );
        assert_eq!(
            both::<4>(&negative),
            row_2(ConfigError::Negative(Setting::Kp))
        );
        // Each row's Ki is checked with the row's own value, not the base's.
        let negative_ki = [
            ROWS[0],
            ROWS[1],
            Breakpoint {
                ki_per_s: -1.0,
                ..ROWS[2]
            },
        ];
        assert_eq!(
            both::<4>(&negative_ki),
            row_2(ConfigError::Negative(Setting::Ki))
        );
        let first_row_bad = [
            Breakpoint {
                kp: f64::INFINITY,
                ..ROWS[0]
            },
            ROWS[1],
        ];
        assert_eq!(
            both::<4>(&first_row_bad),
            Some(ScheduleError::Row {
                row: 0,
                error: ConfigError::NotFinite(Setting::Kp)
            })
        );
    }

    /// Regression (issue 12): schedule errors said only "invalid schedule";
    /// they now name the row, in the value and in the message.
    #[test]
    fn schedule_errors_name_the_row() {
        extern crate std;
        use std::string::ToString;
        let rows = [
            ROWS[0],
            ROWS[1],
            Breakpoint {
                at: 2000.0,
                ..ROWS[2]
            },
        ];
        let e = both::<3>(&rows).expect("row 2 is below row 1");
        assert_eq!(e, ScheduleError::NotIncreasing { row: 2 });
        assert_eq!(
            e.to_string(),
            "gain schedule row 2: breakpoint `at` must be greater than row 1's"
        );
        let negative = [
            Breakpoint {
                kp: -1.0,
                ..ROWS[0]
            },
            ROWS[1],
        ];
        let e = both::<3>(&negative).expect("row 0 is negative");
        assert_eq!(
            e.to_string(),
            "gain schedule row 0: kp must be zero or positive"
        );
        assert_eq!(
            ConfigError::from(e),
            ConfigError::Negative(Setting::Kp),
            "the row's own error converts"
        );
        let too_many = both::<2>(&ROWS).expect("three rows, two slots");
        assert_eq!(
            too_many.to_string(),
            "gain schedule: 3 rows given; it needs at least 2 and holds at most 2"
        );
        assert_eq!(ConfigError::from(too_many), ConfigError::Schedule);
    }

    #[test]
    fn rejects_bad_breakpoints() {
        let with_at = |at: f64| [ROWS[0], Breakpoint { at, ..ROWS[1] }];
        let row_1 = |error| Some(ScheduleError::Row { row: 1, error });
        assert_eq!(
            both::<2>(&with_at(f64::NAN)),
            row_1(ConfigError::NotFinite(Setting::Breakpoint))
        );
        // Two rows at one point: a zero-width segment.
        assert_eq!(
            both::<2>(&with_at(1500.0)),
            Some(ScheduleError::NotIncreasing { row: 1 })
        );
        // Beyond Q16.16 (largest 32767.99998).
        assert_eq!(
            both::<2>(&with_at(40_000.0)),
            row_1(ConfigError::OutOfFormat(Setting::Breakpoint))
        );
        // In range but not a multiple of 2⁻¹⁶: rounded, accepted.
        assert_eq!(both::<2>(&with_at(2100.3)), None);
        let first_nan = [
            Breakpoint {
                at: f64::NAN,
                ..ROWS[0]
            },
            ROWS[1],
        ];
        assert_eq!(
            Schedule::<f64, 2>::new(&BASE, &first_nan).err(),
            Some(ScheduleError::Row {
                row: 0,
                error: ConfigError::NotFinite(Setting::Breakpoint)
            })
        );
    }

    /// The `const` builder gives the run-time builder's segments bit for
    /// bit, on the test table and on pseudo-random ones.
    #[test]
    fn const_builder_equals_run_time_builder() {
        const TABLE: Schedule<I16F16, 3> = crate::schedule!(3, BASE, ROWS);
        assert_eq!(Some(TABLE), Schedule::new(&BASE, &ROWS).ok());
        let mut seed: u32 = 12345;
        let mut next = move || {
            seed ^= seed << 13;
            seed ^= seed >> 17;
            seed ^= seed << 5;
            f64::from(seed) / 4_294_967_296.0
        };
        let mut compared = 0;
        for _ in 0..500 {
            let mut at = -3000.0 + 6000.0 * next();
            let mut rows = [ROWS[0]; 4];
            for row in &mut rows {
                *row = Breakpoint {
                    at,
                    kp: 200.0 * next(),
                    ki_per_s: 50.0 * next(),
                };
                at += 0.01 + 4000.0 * next();
            }
            let run_time = Schedule::<I16F16, 4>::new(&BASE, &rows);
            assert_eq!(run_time, Schedule::<I16F16, 4>::fixed(&BASE, &rows));
            if let Ok(table) = run_time {
                compared += 1;
                for k in 0..40 {
                    let x = I16F16::from_num(-4000 + 400 * k);
                    assert!(table.gains(x).is_some());
                }
            }
        }
        assert!(compared > 400, "only {compared} valid tables");
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
