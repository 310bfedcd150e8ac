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
use crate::slim::{self, Slim16, SlimCoef};

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
/// [`Schedule::fixed`] for `I16F16`, [`Schedule::slim16`] for
/// [`crate::Slim16`], both `const fn`);
/// applying it each step then needs no float routine and has no panic
/// path, and gives the same bits on every target. Q16.16 interpolates
/// with a Q16.16 fraction; the 16-bit format with a fraction of 2⁻¹⁴ and
/// takes its breakpoints in raw units of the scheduling variable
/// (controller/FORMATS.md §7). The rows' gains are physical and are
/// stored in the loop's raw units (its [`crate::Scaling`]), exactly as a
/// configuration of the row's gains stores them.
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
    /// backend. The gains are stored in the loop's raw units (as the row's
    /// configuration stores them), both ends of a segment at one shift; a
    /// segment whose shared shift loses more than
    /// [`SCHEDULE_GAIN_TOLERANCE`] of an end's gain is refused at that row
    /// (`ConfigError::TooFine`). For [`crate::Slim16`], `at` is a raw
    /// value of the scheduling variable (a whole number).
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
            // The rows' gains in the loop's raw units (as the rows'
            // configurations have them): command raw per measurement raw.
            let p_lo = raw_gains(base, lo).map_err(|e| ScheduleError::Row {
                row: row - 1,
                error: e,
            })?;
            let p_hi = raw_gains(base, hi).map_err(fail)?;
            let shape = L::SHAPE;
            let kp = B::coef_pair(p_lo.0, p_hi.0, 0)
                .map(|(a, b)| pin::<B>(shape.and_then(|s| s.shift(Slot::Kp)), a, b, p_lo.0, p_hi.0))
                .ok_or(fail(ConfigError::OutOfFormat(Setting::Kp)))?
                .ok_or(fail(ConfigError::Layout(Setting::Kp)))?;
            let ki_ts = B::coef_pair(p_lo.1, p_hi.1, 16)
                .map(|(a, b)| {
                    let shift = shape.and_then(|s| s.shift(Slot::KiTs));
                    pin::<B>(shift, a, b, p_lo.1, p_hi.1)
                })
                .ok_or(fail(ConfigError::OutOfFormat(Setting::Ki)))?
                .ok_or(fail(ConfigError::Layout(Setting::Ki)))?;
            for (end, (c, v), which) in [
                (row - 1, (kp.0, p_lo.0), Setting::Kp),
                (row, (kp.1, p_hi.0), Setting::Kp),
                (row - 1, (ki_ts.0, p_lo.1), Setting::Ki),
                (row, (ki_ts.1, p_hi.1), Setting::Ki),
            ] {
                if !near(B::coef_to_f64(c), v) {
                    return Err(ScheduleError::Row {
                        row: end,
                        error: ConfigError::TooFine(which),
                    });
                }
            }
            let from = checked_signal::<B>(lo.at).map_err(|e| ScheduleError::Row {
                row: row - 1,
                error: e,
            })?;
            let to = checked_signal::<B>(hi.at).map_err(fail)?;
            let inverse_width = B::schedule_inverse(from, to, hi.at - lo.at)
                .ok_or(fail(ConfigError::OutOfFormat(Setting::Breakpoint)))?;
            let segment = Segment {
                from,
                to,
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
    /// `(at − from) · (1 / width)` is a product with the difference exact
    /// (nearest, ties toward +∞) clamped to [0, 1] (Q16.16; 2⁻¹⁴ units for
    /// `Slim16`, whose 1/width is rounded up so the fraction is exactly one
    /// at `to`), see [`Backend::schedule_fraction`]; each gain is `lo +
    /// (hi − lo) · fraction` on the pair's common mantissa scale (see
    /// [`FixedCoef::lerp`], [`SlimCoef::lerp`]).
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
        let frac = B::schedule_fraction(at, segment.from, segment.inverse_width);
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

/// The `const` builder of one fixed-point format (`Schedule::fixed` for
/// `I16F16`, `Schedule::slim16` for `Slim16`): the
/// same segments as [`Schedule::new`] gives for it, in the same order of
/// checks (test `const_builder_equals_run_time_builder`).
macro_rules! const_builder {
    ($name:ident, $signal:ty, $coef:ty, $pair:path, $pair_at:path, $breakpoint:path, $inverse:path, $doc:literal) => {
        impl Segment<$signal> {
            const UNUSED: Self = Self {
                from: <$signal>::ZERO,
                to: <$signal>::ZERO,
                inverse_width: <$coef>::ZERO,
                kp: (<$coef>::ZERO, <$coef>::ZERO),
                ki_ts: (<$coef>::ZERO, <$coef>::ZERO),
            };

            /// One segment between rows `row − 1` and `row`, exactly as
            /// [`Schedule::new`] computes it.
            const fn fixed<L: Layout>(
                base: &Settings,
                lo: &Breakpoint,
                hi: &Breakpoint,
                row: usize,
            ) -> Result<Self, ScheduleError> {
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
                at_row!(row - 1, Config::<$signal, L>::new(&with_row(base, lo)));
                at_row!(row, Config::<$signal, L>::new(&with_row(base, hi)));
                if hi.at <= lo.at {
                    return Err(ScheduleError::NotIncreasing { row });
                }
                let (kp_lo, ki_lo) = at_row!(row - 1, raw_gains(base, lo));
                let (kp_hi, ki_hi) = at_row!(row, raw_gains(base, hi));
                let shape = L::SHAPE;
                // As `Schedule::new`: the natural pair must exist, then
                // a layout pins it to its shift.
                let kp = at_row!(row, ok_or($pair(kp_lo, kp_hi, 0), ConfigError::OutOfFormat(Setting::Kp)));
                let kp = match layout_shift(shape, Slot::Kp) {
                    Some(shift) => at_row!(
                        row,
                        ok_or($pair_at(kp_lo, kp_hi, shift), ConfigError::Layout(Setting::Kp))
                    ),
                    None => kp,
                };
                let ki_ts = at_row!(row, ok_or($pair(ki_lo, ki_hi, 16), ConfigError::OutOfFormat(Setting::Ki)));
                let ki_ts = match layout_shift(shape, Slot::KiTs) {
                    Some(shift) => at_row!(
                        row,
                        ok_or($pair_at(ki_lo, ki_hi, shift), ConfigError::Layout(Setting::Ki))
                    ),
                    None => ki_ts,
                };
                if !near(kp.0.to_f64(), kp_lo) {
                    at_row!(row - 1, Err(ConfigError::TooFine(Setting::Kp)));
                }
                if !near(kp.1.to_f64(), kp_hi) {
                    at_row!(row, Err(ConfigError::TooFine(Setting::Kp)));
                }
                if !near(ki_ts.0.to_f64(), ki_lo) {
                    at_row!(row - 1, Err(ConfigError::TooFine(Setting::Ki)));
                }
                if !near(ki_ts.1.to_f64(), ki_hi) {
                    at_row!(row, Err(ConfigError::TooFine(Setting::Ki)));
                }
                let from = at_row!(row - 1, $breakpoint(lo.at));
                let to = at_row!(row, $breakpoint(hi.at));
                let inverse_width = at_row!(
                    row,
                    ok_or($inverse(from, to, hi.at - lo.at), ConfigError::OutOfFormat(Setting::Breakpoint))
                );
                Ok(Self {
                    from,
                    to,
                    inverse_width,
                    kp,
                    ki_ts,
                })
            }
        }

        impl<const N: usize, L: Layout> Schedule<$signal, N, L> {
            #[doc = $doc]
            ///
            /// # Errors
            /// As [`Schedule::new`].
            pub const fn $name(base: &Settings, rows: &[Breakpoint]) -> Result<Self, ScheduleError> {
                if rows.len() < 2 || rows.len() > N {
                    return Err(ScheduleError::RowCount {
                        rows: rows.len(),
                        capacity: N,
                    });
                }
                let mut segments = [Segment::<$signal>::UNUSED; N];
                let mut slots: &mut [Segment<$signal>] = &mut segments;
                let mut rest = rows;
                let mut row = 1;
                while let [lo, hi, ..] = rest {
                    let segment = match Segment::<$signal>::fixed::<L>(base, lo, hi, row) {
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
    };
}

const_builder!(
    fixed,
    I16F16,
    FixedCoef,
    q::coef_pair,
    q::coef_pair_at,
    fixed_breakpoint,
    fixed_inverse,
    "The fixed-point schedule, usable in `const` context (so a firmware \
     keeps it in flash and links no float routine to build it): the same \
     segments as [`Schedule::new`] gives for `I16F16`.\n\n\
     ```\n\
     use evenkeel::{Breakpoint, Schedule, ScheduleError, Settings};\n\
     use fixed::types::I16F16;\n\
     const BASE: Settings = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);\n\
     const ROWS: [Breakpoint; 2] = [\n\
     \x20   Breakpoint { at: 0.0, kp: 1.0, ki_per_s: 2.0 },\n\
     \x20   Breakpoint { at: 8.0, kp: 3.0, ki_per_s: 4.0 },\n\
     ];\n\
     const TABLE: Result<Schedule<I16F16, 2>, ScheduleError> = Schedule::fixed(&BASE, &ROWS);\n\
     assert_eq!(TABLE.as_ref().ok(), Schedule::new(&BASE, &ROWS).as_ref().ok());\n\
     ```"
);

const_builder!(
    slim16,
    Slim16,
    SlimCoef,
    slim::coef_pair,
    slim::coef_pair_at,
    slim_breakpoint,
    slim_inverse,
    "The 16-bit schedule, usable in `const` context: the same segments as \
     [`Schedule::new`] gives for [`Slim16`]. Breakpoints are raw values of \
     the scheduling variable (whole numbers, −32 768 … 32 767); the gains \
     are physical, in the loop's scaling, like the base settings'.\n\n\
     ```\n\
     use evenkeel::{Breakpoint, Schedule, ScheduleError, Settings, Slim16};\n\
     const BASE: Settings = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);\n\
     const ROWS: [Breakpoint; 2] = [\n\
     \x20   Breakpoint { at: 0.0, kp: 1.0, ki_per_s: 2.0 },\n\
     \x20   Breakpoint { at: 800.0, kp: 3.0, ki_per_s: 4.0 },\n\
     ];\n\
     const TABLE: Result<Schedule<Slim16, 2>, ScheduleError> = Schedule::slim16(&BASE, &ROWS);\n\
     assert_eq!(TABLE.as_ref().ok(), Schedule::new(&BASE, &ROWS).as_ref().ok());\n\
     ```"
);

/// `1 / width` for a Q16.16 segment (what [`Schedule::new`] takes).
const fn fixed_inverse(_from: I16F16, _to: I16F16, width: f64) -> Option<FixedCoef> {
    match q::coef_pair(1.0 / width, 1.0 / width, 0) {
        Some((c, _)) => Some(c),
        None => None,
    }
}

/// `2¹⁴ / (to − from)` for a 16-bit segment (see [`SlimCoef::fraction_inverse`]).
const fn slim_inverse(from: Slim16, to: Slim16, _width: f64) -> Option<SlimCoef> {
    SlimCoef::fraction_inverse(from, to)
}

/// A breakpoint as a 16-bit raw value: nearest (ties to even), and refused
/// beyond 1e-3 relative of the written value (outside the range).
const fn slim_breakpoint(x: f64) -> Result<Slim16, ConfigError> {
    let v = slim::raw_nearest_even(x);
    let err = v as f64 - x;
    let mag = if x < 0.0 { -x } else { x };
    let tolerance = 1e-3 * if mag > 1.0 { mag } else { 1.0 };
    if err <= tolerance && -err <= tolerance {
        Ok(Slim16::from_raw(v))
    } else {
        Err(ConfigError::OutOfFormat(Setting::Breakpoint))
    }
}

/// A row's Kp and Ki·Ts in the loop's raw units (command raw per
/// measurement raw, Ki·Ts per sample), as its configuration has them.
const fn raw_gains(base: &Settings, row: &Breakpoint) -> Result<(f64, f64), ConfigError> {
    match with_row(base, row).per_sample() {
        Ok(p) => Ok((p.kp, p.ki_ts)),
        Err(e) => Err(e),
    }
}

/// Largest relative error of a scheduled gain at a row, where it is stored
/// at the segment's common shift (the row's own configuration is checked
/// to its format's tolerance; the pair shares the coarser end's shift).
pub const SCHEDULE_GAIN_TOLERANCE: f64 = 1e-3;

/// `stored` within [`SCHEDULE_GAIN_TOLERANCE`] of `value`.
const fn near(stored: f64, value: f64) -> bool {
    let err = stored - value;
    let bound = SCHEDULE_GAIN_TOLERANCE * if value < 0.0 { -value } else { value };
    err <= bound && -err <= bound
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
/// `schedule!(N, Layout, BASE, ROWS)` one for a compile-time layout. The
/// format may be named first: `schedule!(I16F16: N, …)` is the same, and
/// `schedule!(Slim16: N, BASE, ROWS)` (or with a layout) gives a
/// `Schedule<Slim16, N>` (breakpoints in raw units of the scheduling
/// variable).
///
/// ```
/// use evenkeel::{Breakpoint, Schedule, Settings, Slim16};
/// const BASE: Settings = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);
/// const ROWS: [Breakpoint; 2] = [
///     Breakpoint { at: 0.0, kp: 1.0, ki_per_s: 2.0 },
///     Breakpoint { at: 800.0, kp: 3.0, ki_per_s: 4.0 },
/// ];
/// static TABLE: Schedule<Slim16, 2> = evenkeel::schedule!(Slim16: 2, BASE, ROWS);
/// let (kp, _) = TABLE.gains(Slim16::from_raw(400)).ok_or("empty")?;
/// assert_eq!(kp.to_f64(), 2.0);
/// # Ok::<(), &str>(())
/// ```
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
    (I16F16: $n:expr, $base:expr, $rows:expr) => {
        $crate::schedule!($n, $crate::Runtime, $base, $rows)
    };
    (I16F16: $n:expr, $layout:ty, $base:expr, $rows:expr) => {
        $crate::schedule!($n, $layout, $base, $rows)
    };
    (Slim16: $n:expr, $base:expr, $rows:expr) => {
        $crate::schedule!(Slim16: $n, $crate::Runtime, $base, $rows)
    };
    (Slim16: $n:expr, $layout:ty, $base:expr, $rows:expr) => {
        const {
            match $crate::Schedule::<$crate::Slim16, { $n }, $layout>::slim16(&$base, &$rows) {
                Ok(table) => table,
                // Evaluated by the compiler only: an invalid table stops the build.
                Err(error) => panic!("{}", error.summary()),
            }
        }
    };
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
    use crate::{Scale, Scaling};
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

    /// A loop read by a 12-bit ADC (40.95 counts per unit, 0 … 100) and
    /// driving a PWM compare value (10 counts per unit, 0 … 1000): raw
    /// gains are 10 / 40.95 of the physical ones.
    const COUNTED: Settings = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0)
        .with_measurement_range(0.0, 100.0)
        .with_scaling(
            Scaling::NONE
                .with_adc(12, Scale::new(40.95, 0.0))
                .with_pwm(Scale::new(10.0, 0.0)),
        );
    const COUNTED_ROWS: [Breakpoint; 3] = [
        Breakpoint {
            at: 100.0,
            kp: 4.0,
            ki_per_s: 2.0,
        },
        Breakpoint {
            at: 900.0,
            kp: 6.0,
            ki_per_s: 3.0,
        },
        Breakpoint {
            at: 2500.0,
            kp: 12.0,
            ki_per_s: 5.0,
        },
    ];

    /// At each breakpoint the schedule gives the gains that a
    /// configuration of that row's gains has, in the loop's raw units (the
    /// scaling applies to scheduled gains as to configured ones); between
    /// rows, the interpolation of those.
    #[test]
    fn scheduled_gains_are_the_rows_configured_gains() {
        fn check<B: Backend>(tolerance: f64) {
            let table = Schedule::<B, 3>::new(&COUNTED, &COUNTED_ROWS).expect("valid");
            for row in COUNTED_ROWS {
                let own = Config::<B>::try_new(&with_row(&COUNTED, &row)).expect("valid row");
                let (kp, ki_ts) = table.gains(B::from_f64(row.at)).expect("non-empty");
                for (got, want) in [(kp, own.kp()), (ki_ts, own.ki_ts())] {
                    let (got, want) = (B::coef_to_f64(got), B::coef_to_f64(want));
                    assert!(
                        (got - want).abs() <= tolerance * want,
                        "{} at {}: {got} against {want}",
                        B::NAME,
                        row.at
                    );
                }
            }
            // Half-way between rows 0 and 1: the mean of their raw gains.
            let (kp, _) = table.gains(B::from_f64(500.0)).expect("non-empty");
            let want = 5.0 * 10.0 / 40.95;
            assert!((B::coef_to_f64(kp) - want).abs() <= 2.0 * tolerance * want);
        }
        check::<f64>(1e-12);
        check::<I16F16>(1e-6);
        // Exact at the breakpoints: the fraction is 0 or exactly one there,
        // and each end keeps its mantissa (the pair's shift is the row's).
        check::<Slim16>(SCHEDULE_GAIN_TOLERANCE);
        let table = Schedule::<Slim16, 3>::new(&COUNTED, &COUNTED_ROWS).expect("valid");
        assert_eq!(
            Schedule::<Slim16, 3>::slim16(&COUNTED, &COUNTED_ROWS).ok(),
            Some(table)
        );
    }

    /// A Q16.16 segment wider than 32 768: the difference `at − from` is
    /// taken exactly, not saturated.
    #[test]
    fn a_wide_segment_interpolates_over_its_whole_width() {
        let base = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);
        let rows = [
            Breakpoint {
                at: -30_000.0,
                kp: 1.0,
                ki_per_s: 1.0,
            },
            Breakpoint {
                at: 30_000.0,
                kp: 7.0,
                ki_per_s: 1.0,
            },
        ];
        let table: Schedule<I16F16, 2> = Schedule::fixed(&base, &rows).expect("valid");
        // 40 000 / 60 000 of the way: Kp = 1 + 6 · 2/3 = 5 (the saturated
        // difference would give 1 + 6 · 32 768 / 60 000 = 4.28).
        let (kp, _) = table.gains(I16F16::from_num(10_000)).expect("non-empty");
        assert!((kp.to_f64() - 5.0).abs() < 1e-4, "kp {}", kp.to_f64());
        let table: Schedule<Slim16, 2> = Schedule::slim16(&base, &rows).expect("valid");
        let (kp, _) = table.gains(Slim16::from_raw(10_000)).expect("non-empty");
        assert!((kp.to_f64() - 5.0).abs() < 1e-3, "kp {}", kp.to_f64());
    }

    /// Pseudo-random numbers in [0, 1) (xorshift32), the same on every host.
    fn uniform(seed: u32) -> impl FnMut() -> f64 {
        let mut seed = seed;
        move || {
            seed ^= seed << 13;
            seed ^= seed >> 17;
            seed ^= seed << 5;
            f64::from(seed) / 4_294_967_296.0
        }
    }

    /// The 16-bit interpolation is its definition, computed here in
    /// `i128` from the stored segment: `f = clamp(⌊(d·m + 2^(s−1)) / 2^s⌋,
    /// 0, 2¹⁴)` with `d = at − from` exact, then each gain
    /// `lo + ⌊(span · f + 2¹³) / 2¹⁴⌋`. And against exact rational interpolation of the
    /// stored ends, `lo + span · d / width`: within half a mantissa step
    /// plus |span| · 1.5 / 2¹⁴ (the fraction's rounding, ½, and its 1/width
    /// rounded up, < 1 at d = width).
    #[test]
    fn slim_interpolation_is_its_exact_definition() {
        let base = Settings::new(0.01, 1.0, 1.0, -1000.0, 1000.0);
        let mut next = uniform(2024);
        let mut checked = 0;
        for _ in 0..400 {
            let from = (-32_000.0 + 60_000.0 * next()).round();
            let to = (from + 1.0 + (32_000.0 - from) * next())
                .round()
                .min(32_767.0);
            if to <= from {
                continue;
            }
            let rows = [
                Breakpoint {
                    at: from,
                    kp: 0.05 + 40.0 * next(),
                    ki_per_s: 0.5 + 20.0 * next(),
                },
                Breakpoint {
                    at: to,
                    kp: 0.05 + 40.0 * next(),
                    ki_per_s: 0.5 + 20.0 * next(),
                },
            ];
            let Ok(table) = Schedule::<Slim16, 2>::new(&base, &rows) else {
                continue;
            };
            let seg = table.segments[0];
            let (m, s) = (
                i128::from(seg.inverse_width.mantissa()),
                seg.inverse_width.shift(),
            );
            let width = i128::from(seg.to.raw()) - i128::from(seg.from.raw());
            for k in 0..60 {
                let at = if k < 2 {
                    [seg.from.raw(), seg.to.raw()][k]
                } else {
                    (-32_768.0 + 65_535.0 * next()).round() as i16
                };
                let (kp, ki_ts) = table.gains(Slim16::from_raw(at)).expect("non-empty");
                let d = i128::from(at) - i128::from(seg.from.raw());
                let f = ((d * m + (1 << s >> 1)) >> s).clamp(0, 1 << 14);
                for (got, (lo, hi)) in [(kp, seg.kp), (ki_ts, seg.ki_ts)] {
                    let (lo_m, hi_m) = (i128::from(lo.mantissa()), i128::from(hi.mantissa()));
                    let span = hi_m - lo_m;
                    let want = (lo_m + ((span * f + (1 << 13)) >> 14)).clamp(-32_768, 32_767);
                    assert_eq!(i128::from(got.mantissa()), want, "at {at} in {from} … {to}");
                    assert_eq!(got.shift(), lo.shift());
                    let exact =
                        lo_m as f64 + span as f64 * (d.clamp(0, width) as f64) / width as f64;
                    let bound = 0.5 + span.unsigned_abs() as f64 * 1.5 / 16_384.0;
                    assert!(
                        (got.mantissa() as f64 - exact).abs() <= bound + 1e-9,
                        "at {at}: {} against {exact}",
                        got.mantissa()
                    );
                    if d <= 0 {
                        assert_eq!(got, lo);
                    }
                    if d >= width {
                        assert_eq!(got, hi);
                    }
                }
            }
            checked += 1;
        }
        assert!(checked > 300, "only {checked} valid tables");
    }

    /// The 16-bit `const` builder gives the run-time builder's segments
    /// and errors, bit for bit, on pseudo-random tables (some of them
    /// invalid: breakpoints not whole, gain pairs too far apart).
    #[test]
    fn slim_const_builder_equals_run_time_builder() {
        const TABLE: Schedule<Slim16, 3> = crate::schedule!(Slim16: 3, COUNTED, COUNTED_ROWS);
        assert_eq!(Some(TABLE), Schedule::new(&COUNTED, &COUNTED_ROWS).ok());
        let mut next = uniform(777);
        let (mut valid, mut invalid) = (0, 0);
        for _ in 0..500 {
            let mut at = (-3000.0 + 6000.0 * next()).round();
            let mut rows = [COUNTED_ROWS[0]; 4];
            for row in &mut rows {
                *row = Breakpoint {
                    at: if next() < 0.05 { at + 0.25 } else { at },
                    kp: 0.01 + 100.0 * next() * next(),
                    ki_per_s: 0.01 + 50.0 * next() * next(),
                };
                at += (1.0 + 8000.0 * next()).round();
            }
            let run_time = Schedule::<Slim16, 4>::new(&COUNTED, &rows);
            assert_eq!(run_time, Schedule::<Slim16, 4>::slim16(&COUNTED, &rows));
            match run_time {
                Ok(_) => valid += 1,
                Err(_) => invalid += 1,
            }
        }
        assert!(
            valid > 100 && invalid > 20,
            "{valid} valid, {invalid} invalid"
        );
    }

    /// A pair whose ends are too far apart for the 16-bit mantissa at their
    /// common shift is refused at the coarse end's row, by both builders.
    #[test]
    fn slim_refuses_a_gain_pair_it_cannot_hold() {
        let base = Settings::new(0.01, 1.0, 1.0, 0.0, 100.0);
        let rows = [
            Breakpoint {
                at: 0.0,
                kp: 0.001,
                ki_per_s: 1.0,
            },
            Breakpoint {
                at: 100.0,
                kp: 30.0,
                ki_per_s: 1.0,
            },
        ];
        // At 30's shift (10) 0.001 is one mantissa step of 2⁻¹⁰: 2.4 %.
        let want = Some(ScheduleError::Row {
            row: 0,
            error: ConfigError::TooFine(Setting::Kp),
        });
        assert_eq!(Schedule::<Slim16, 2>::new(&base, &rows).err(), want);
        assert_eq!(Schedule::<Slim16, 2>::slim16(&base, &rows).err(), want);
        // Q16.16 holds the same pair (31-bit mantissas).
        assert!(Schedule::<I16F16, 2>::fixed(&base, &rows).is_ok());
    }

    /// Scheduling a 16-bit controller retunes it bumplessly, as for Q16.16.
    #[test]
    fn slim_scheduling_is_bumpless() {
        let table: Schedule<Slim16, 3> = Schedule::new(&COUNTED, &COUNTED_ROWS).expect("valid");
        let mut pi = Controller::new(Config::<Slim16>::try_new(&COUNTED).expect("valid"));
        let (r, y) = (Slim16::from_raw(2000), Slim16::from_raw(1900));
        for _ in 0..20 {
            pi.step(r, y);
        }
        let before = pi.step(r, y).command.raw();
        pi.schedule(&table, Slim16::from_raw(2500));
        let after = pi.step(r, y).command.raw();
        // Kp went from 1 to 12 (physical): unbumped the command would jump
        // by 11 · 10/40.95 · 100 ≈ 269 counts; here one integration step
        // (Ki·Ts·e = 5 · 0.01 · 24.4 ≈ 1.2 counts) and rounding remain.
        assert!((after - before).abs() <= 3, "{before} → {after}");
        assert_eq!(
            pi.config().kp(),
            table.gains(Slim16::from_raw(2500)).expect("non-empty").0
        );
    }
}
