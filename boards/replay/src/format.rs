//! Decoder for the vector files, format versions 1 to 4
//! (`shared/vectors/FORMAT.md` is the specification).
//!
//! Streams straight from the bytes (flash on a microcontroller): no buffer,
//! no allocation, no panic; a malformed file gives a [`FormatError`].
//! Signals are raw Q16.16 bits (`i32`; in versions 3 and 4 raw 16-bit
//! values, sign-extended) and settings raw `f64` bits (`u64`),
//! so decoding needs no floating point. The build script of this crate
//! includes this file too, to turn each scenario's settings into a
//! compile-time configuration.

/// The first four bytes of a vector file.
pub const MAGIC: [u8; 4] = *b"EKVF";
/// The first format version (`golden.ekv`).
pub const VERSION: u8 = 1;
/// Version 2: version 1 plus breakpoint rows per scenario and the
/// schedule operation (`schedule.ekv`).
pub const VERSION_SCHEDULE: u8 = 2;
/// Version 3: version 1 for the 16-bit backend (`slim16.ekv`): each
/// scenario adds its scaling, every signal is a 16-bit raw value.
pub const VERSION_SLIM16: u8 = 3;
/// Version 4: version 3 plus breakpoint rows per scenario and the
/// schedule operation, its scheduling value a 16-bit raw value
/// (`slim16_schedule.ekv`).
pub const VERSION_SLIM16_SCHEDULE: u8 = 4;
/// Scaling flag (versions 3 and 4): the command is whole actuator counts.
pub const COMMAND_COUNTS: u8 = 1 << 0;
/// The version stores breakpoint rows and the schedule operation (2, 4).
#[must_use]
pub const fn schedules(version: u8) -> bool {
    matches!(version, VERSION_SCHEDULE | VERSION_SLIM16_SCHEDULE)
}

/// The version is a 16-bit one: scaling stored, raw 16-bit signals (3, 4).
#[must_use]
pub const fn sixteen_bit(version: u8) -> bool {
    matches!(version, VERSION_SLIM16 | VERSION_SLIM16_SCHEDULE)
}

/// Length of one encoded breakpoint row (three `f64` bit patterns).
pub const ROW_LEN: usize = 24;
/// Length of the file header in bytes.
pub const HEADER_LEN: usize = 10;

/// Settings flag: a slew limit follows.
pub const HAS_SLEW: u8 = 1 << 0;
/// Settings flag: a filter time constant follows.
pub const HAS_FILTER: u8 = 1 << 1;
/// Settings flag: a deadband follows.
pub const HAS_DEADBAND: u8 = 1 << 2;
/// Settings flag: back-calculation with the tracking time that follows
/// (otherwise conditional integration).
pub const HAS_BACK_CALCULATION: u8 = 1 << 3;

/// Step head, bits 0–2: the operation.
pub const OP_MASK: u8 = 0b0000_0111;
/// Step head: the setpoint changed (a delta follows).
pub const SETPOINT_CHANGED: u8 = 1 << 3;
/// Step head: the feed-forward changed (a delta follows).
pub const FEED_FORWARD_CHANGED: u8 = 1 << 4;
/// Step head: an applied value is reported (a delta follows).
pub const APPLIED: u8 = 1 << 5;
/// Step head: the status differs from the previous step's (a varint follows).
pub const STATUS_CHANGED: u8 = 1 << 6;

/// Why a vector file could not be read.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FormatError {
    /// The file does not start with [`MAGIC`].
    Magic,
    /// A version this decoder does not read.
    Version(u8),
    /// The checksum in the header does not match the contents.
    Checksum,
    /// The file ends inside a record.
    Truncated,
    /// A varint longer than 5 bytes or above `u32::MAX`.
    Varint,
    /// An operation code that is not defined, or a reserved bit set.
    Op(u8),
    /// A step section whose length does not match its step count.
    StepSection,
    /// Bytes left after the last scenario.
    Trailing,
    /// A signal outside 16 bits in a version-3 file.
    Range,
}

impl FormatError {
    /// A fixed one-line description.
    #[must_use]
    pub const fn describe(self) -> &'static str {
        match self {
            Self::Magic => "not a vector file (bad magic)",
            Self::Version(_) => "unsupported format version",
            Self::Checksum => "checksum mismatch",
            Self::Truncated => "file ends inside a record",
            Self::Varint => "malformed varint",
            Self::Op(_) => "unknown step operation or reserved bit",
            Self::StepSection => "step section length does not match its count",
            Self::Trailing => "bytes after the last scenario",
            Self::Range => "signal outside 16 bits in a 16-bit file",
        }
    }
}

/// FNV-1a, 32 bit, over `bytes`.
#[must_use]
pub fn fnv1a(bytes: &[u8]) -> u32 {
    let mut hash: u32 = 0x811c_9dc5;
    for &b in bytes {
        hash ^= u32::from(b);
        hash = hash.wrapping_mul(0x0100_0193);
    }
    hash
}

/// A read position in a byte slice.
#[derive(Clone, Copy, Debug)]
pub struct Cursor<'a> {
    rest: &'a [u8],
}

impl<'a> Cursor<'a> {
    /// Start reading at the beginning of `bytes`.
    #[must_use]
    pub const fn new(bytes: &'a [u8]) -> Self {
        Self { rest: bytes }
    }

    /// Bytes not read yet.
    #[must_use]
    pub const fn remaining(&self) -> usize {
        self.rest.len()
    }

    /// The next `n` bytes.
    pub fn take(&mut self, n: usize) -> Result<&'a [u8], FormatError> {
        if n > self.rest.len() {
            return Err(FormatError::Truncated);
        }
        let (head, tail) = self.rest.split_at(n);
        self.rest = tail;
        Ok(head)
    }

    fn array<const N: usize>(&mut self) -> Result<[u8; N], FormatError> {
        let (head, tail) = self
            .rest
            .split_first_chunk::<N>()
            .ok_or(FormatError::Truncated)?;
        self.rest = tail;
        Ok(*head)
    }

    /// One byte.
    pub fn u8(&mut self) -> Result<u8, FormatError> {
        Ok(u8::from_le_bytes(self.array()?))
    }
    /// Little-endian `u16`.
    pub fn u16(&mut self) -> Result<u16, FormatError> {
        Ok(u16::from_le_bytes(self.array()?))
    }
    /// Little-endian `u32`.
    pub fn u32(&mut self) -> Result<u32, FormatError> {
        Ok(u32::from_le_bytes(self.array()?))
    }
    /// Little-endian `i32`.
    pub fn i32(&mut self) -> Result<i32, FormatError> {
        Ok(i32::from_le_bytes(self.array()?))
    }
    /// Little-endian `u64` (an `f64` bit pattern in settings).
    pub fn u64(&mut self) -> Result<u64, FormatError> {
        Ok(u64::from_le_bytes(self.array()?))
    }

    /// Unsigned LEB128, at most 5 bytes, value ≤ `u32::MAX`.
    pub fn varint(&mut self) -> Result<u32, FormatError> {
        let mut value: u32 = 0;
        let mut shift: u32 = 0;
        loop {
            let byte = self.u8()?;
            let bits = u32::from(byte & 0x7f);
            if shift == 28 && bits > 0x0f {
                return Err(FormatError::Varint);
            }
            value |= bits << shift;
            if byte & 0x80 == 0 {
                return Ok(value);
            }
            if shift == 28 {
                return Err(FormatError::Varint);
            }
            shift += 7;
        }
    }

    /// A zigzag varint delta added (wrapping) to `previous`.
    pub fn delta(&mut self, previous: i32) -> Result<i32, FormatError> {
        let z = self.varint()?;
        let d = ((z >> 1) as i32) ^ -((z & 1) as i32);
        Ok(previous.wrapping_add(d))
    }
}

/// A checked file: header verified, scenarios not yet read.
#[derive(Clone, Copy, Debug)]
pub struct File<'a> {
    /// Number of scenarios in the file.
    pub scenario_count: u8,
    /// Format version (1 … 4).
    pub version: u8,
    body: &'a [u8],
}

impl<'a> File<'a> {
    /// Check magic, version and checksum.
    ///
    /// # Errors
    /// [`FormatError::Magic`], [`FormatError::Version`],
    /// [`FormatError::Checksum`] or [`FormatError::Truncated`].
    pub fn open(bytes: &'a [u8]) -> Result<Self, FormatError> {
        let mut c = Cursor::new(bytes);
        if c.array::<4>()? != MAGIC {
            return Err(FormatError::Magic);
        }
        let version = c.u8()?;
        if !matches!(
            version,
            VERSION | VERSION_SCHEDULE | VERSION_SLIM16 | VERSION_SLIM16_SCHEDULE
        ) {
            return Err(FormatError::Version(version));
        }
        let scenario_count = c.u8()?;
        let checksum = c.u32()?;
        if fnv1a(c.rest) != checksum {
            return Err(FormatError::Checksum);
        }
        Ok(Self {
            scenario_count,
            version,
            body: c.rest,
        })
    }

    /// The scenarios in file order.
    #[must_use]
    pub fn scenarios(&self) -> Scenarios<'a> {
        Scenarios {
            section: Section::new(
                self.body,
                u16::from(self.scenario_count),
                FormatError::Trailing,
            ),
            version: self.version,
        }
    }
}

/// Settings of one scenario as raw `f64` bit patterns (same fields as
/// `evenkeel::Settings`).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct SettingsBits {
    /// `HAS_*` flags.
    pub flags: u8,
    /// period_s.
    pub period_s: u64,
    /// kp.
    pub kp: u64,
    /// ki_per_s.
    pub ki_per_s: u64,
    /// setpoint_weight.
    pub setpoint_weight: u64,
    /// output_min.
    pub output_min: u64,
    /// output_max.
    pub output_max: u64,
    /// measurement_min.
    pub measurement_min: u64,
    /// measurement_max.
    pub measurement_max: u64,
    /// slew_per_s (if [`HAS_SLEW`]).
    pub slew_per_s: u64,
    /// filter_time_s (if [`HAS_FILTER`]).
    pub filter_time_s: u64,
    /// deadband (if [`HAS_DEADBAND`]).
    pub deadband: u64,
    /// tracking_time_s (if [`HAS_BACK_CALCULATION`]).
    pub tracking_time_s: u64,
    /// Versions 3 and 4: the scaling (`evenkeel::Scaling`); versions 1 and 2:
    /// [`ScalingBits::NONE`].
    pub scaling: ScalingBits,
}

/// A scenario's scaling as raw `f64` bit patterns (same fields as
/// `evenkeel::Scaling`).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct ScalingBits {
    /// measurement.per_unit.
    pub measurement_per_unit: u64,
    /// measurement.offset.
    pub measurement_offset: u64,
    /// measurement_bits (0: not an ADC).
    pub measurement_bits: u8,
    /// command.per_unit.
    pub command_per_unit: u64,
    /// command.offset.
    pub command_offset: u64,
    /// `COMMAND_COUNTS` and nothing else, or 0.
    pub flags: u8,
}

impl ScalingBits {
    /// Raw = physical on both sides (`evenkeel::Scaling::NONE`).
    pub const NONE: Self = Self {
        measurement_per_unit: 0x3ff0_0000_0000_0000, // 1.0
        measurement_offset: 0,
        measurement_bits: 0,
        command_per_unit: 0x3ff0_0000_0000_0000,
        command_offset: 0,
        flags: 0,
    };
}

impl Default for ScalingBits {
    fn default() -> Self {
        Self::NONE
    }
}

/// A gain pair of a retune: (mantissa, shift) of Kp and of Ki·Ts.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct GainBits {
    /// Kp mantissa.
    pub kp_mantissa: i32,
    /// Kp shift.
    pub kp_shift: u8,
    /// Ki·Ts mantissa.
    pub ki_ts_mantissa: i32,
    /// Ki·Ts shift.
    pub ki_ts_shift: u8,
}

/// Length of one encoded [`GainBits`].
pub const GAIN_LEN: usize = 10;

/// One scenario: its name, settings, retune gains and steps.
#[derive(Clone, Copy, Debug)]
pub struct Scenario<'a> {
    /// ASCII name.
    pub name: &'a [u8],
    /// Settings of the initial configuration.
    pub settings: SettingsBits,
    gains: &'a [u8],
    rows: &'a [u8],
    version: u8,
    /// Number of steps.
    pub step_count: u16,
    steps: &'a [u8],
}

impl<'a> Scenario<'a> {
    /// Number of gain pairs in the retune table.
    #[must_use]
    pub const fn gain_count(&self) -> usize {
        self.gains.len() / GAIN_LEN
    }

    /// Gain pair `index` of the retune table.
    #[must_use]
    pub fn gain(&self, index: usize) -> Option<GainBits> {
        let start = index.checked_mul(GAIN_LEN)?;
        let bytes = self.gains.get(start..start.checked_add(GAIN_LEN)?)?;
        let mut c = Cursor::new(bytes);
        Some(GainBits {
            kp_mantissa: c.i32().ok()?,
            kp_shift: c.u8().ok()?,
            ki_ts_mantissa: c.i32().ok()?,
            ki_ts_shift: c.u8().ok()?,
        })
    }

    /// Number of gain-schedule breakpoint rows (versions 2 and 4; 0 in 1 and 3).
    #[must_use]
    pub const fn row_count(&self) -> usize {
        self.rows.len() / ROW_LEN
    }

    /// Breakpoint row `index`: `at`, `kp`, `ki_per_s` as `f64` bit patterns.
    #[must_use]
    pub fn row(&self, index: usize) -> Option<[u64; 3]> {
        let start = index.checked_mul(ROW_LEN)?;
        let bytes = self.rows.get(start..start.checked_add(ROW_LEN)?)?;
        let mut c = Cursor::new(bytes);
        Some([c.u64().ok()?, c.u64().ok()?, c.u64().ok()?])
    }

    /// The steps, decoded one at a time.
    #[must_use]
    pub fn steps(&self) -> Steps<'a> {
        Steps {
            section: Section::new(self.steps, self.step_count, FormatError::StepSection),
            state: Step::default(),
            version: self.version,
        }
    }
}

/// Iterator over the scenarios of a [`File`].
#[derive(Clone, Copy, Debug)]
pub struct Scenarios<'a> {
    section: Section<'a>,
    version: u8,
}

/// A counted run of records (the scenarios of a file, the steps of a
/// scenario): `left` more to read from `cursor`. Bytes after the last record
/// are the error `leftover`; after any error the section is closed, so the
/// iterator over it ends.
#[derive(Clone, Copy, Debug)]
struct Section<'a> {
    cursor: Cursor<'a>,
    left: u16,
    leftover: FormatError,
}

impl<'a> Section<'a> {
    const fn new(bytes: &'a [u8], count: u16, leftover: FormatError) -> Self {
        Self {
            cursor: Cursor::new(bytes),
            left: count,
            leftover,
        }
    }

    /// The next record, decoded by `read`; `None` at a clean end.
    fn next_with<T>(
        &mut self,
        read: impl FnOnce(&mut Cursor<'a>) -> Result<T, FormatError>,
    ) -> Option<Result<T, FormatError>> {
        if self.left == 0 {
            if self.cursor.remaining() != 0 {
                self.close();
                return Some(Err(self.leftover));
            }
            return None;
        }
        self.left -= 1;
        let item = read(&mut self.cursor);
        if item.is_err() {
            self.close();
        }
        Some(item)
    }

    fn close(&mut self) {
        self.left = 0;
        self.cursor = Cursor::new(&[]);
    }
}

impl<'a> Scenarios<'a> {
    fn read(c: &mut Cursor<'a>, version: u8) -> Result<Scenario<'a>, FormatError> {
        let name_len = c.u8()?;
        let name = c.take(usize::from(name_len))?;
        let flags = c.u8()?;
        if flags & !(HAS_SLEW | HAS_FILTER | HAS_DEADBAND | HAS_BACK_CALCULATION) != 0 {
            return Err(FormatError::Op(flags));
        }
        let mut s = SettingsBits {
            flags,
            period_s: c.u64()?,
            kp: c.u64()?,
            ki_per_s: c.u64()?,
            setpoint_weight: c.u64()?,
            output_min: c.u64()?,
            output_max: c.u64()?,
            measurement_min: c.u64()?,
            measurement_max: c.u64()?,
            ..SettingsBits::default()
        };
        if flags & HAS_SLEW != 0 {
            s.slew_per_s = c.u64()?;
        }
        if flags & HAS_FILTER != 0 {
            s.filter_time_s = c.u64()?;
        }
        if flags & HAS_DEADBAND != 0 {
            s.deadband = c.u64()?;
        }
        if flags & HAS_BACK_CALCULATION != 0 {
            s.tracking_time_s = c.u64()?;
        }
        if sixteen_bit(version) {
            s.scaling = ScalingBits {
                measurement_per_unit: c.u64()?,
                measurement_offset: c.u64()?,
                command_per_unit: c.u64()?,
                command_offset: c.u64()?,
                measurement_bits: c.u8()?,
                flags: c.u8()?,
            };
            if s.scaling.flags & !COMMAND_COUNTS != 0 {
                return Err(FormatError::Op(s.scaling.flags));
            }
        }
        let gain_count = c.u8()?;
        let gains = c.take(usize::from(gain_count) * GAIN_LEN)?;
        let rows = if schedules(version) {
            let row_count = c.u8()?;
            c.take(usize::from(row_count) * ROW_LEN)?
        } else {
            &[]
        };
        let step_count = c.u16()?;
        let steps_len = c.u32()?;
        let steps = c.take(usize::try_from(steps_len).map_err(|_| FormatError::Truncated)?)?;
        Ok(Scenario {
            name,
            settings: s,
            gains,
            rows,
            version,
            step_count,
            steps,
        })
    }
}

impl<'a> Iterator for Scenarios<'a> {
    type Item = Result<Scenario<'a>, FormatError>;

    fn next(&mut self) -> Option<Self::Item> {
        let version = self.version;
        self.section.next_with(|c| Self::read(c, version))
    }
}

/// What happens before (or instead of) the plain step.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum Op {
    /// `step_with(input)`.
    #[default]
    Step,
    /// `engage(actuator)`, then `step_with(input)`.
    Engage {
        /// Actuator value, Q16.16 bits.
        actuator: i32,
    },
    /// `track(input, actuator)`.
    Track {
        /// Actuator value, Q16.16 bits.
        actuator: i32,
    },
    /// `reset()`, then `step_with(input)`.
    Reset,
    /// `retune(config.with_gains(gains[index]))`, then `step_with(input)`.
    Retune {
        /// Index into the scenario's gain table.
        index: u32,
    },
    /// Version 2: `schedule(&table, at)` with the scenario's breakpoint
    /// rows, then `step_with(input)`.
    Schedule {
        /// Scheduling value, Q16.16 bits.
        at: i32,
    },
}

/// One decoded step: the inputs and the expected output. All signals are
/// Q16.16 bits.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Step {
    /// The operation.
    pub op: Op,
    /// The last scheduling value so far (0 before the first schedule
    /// operation): what the next one is a delta from.
    pub schedule_at: i32,
    /// Setpoint.
    pub setpoint: i32,
    /// Measurement.
    pub measurement: i32,
    /// Feed-forward (0 when unused).
    pub feed_forward: i32,
    /// Applied value of the previous command, if reported.
    pub applied: Option<i32>,
    /// Expected command.
    pub command: i32,
    /// Expected status bits.
    pub status: u16,
}

/// Iterator over the steps of a [`Scenario`].
#[derive(Clone, Copy, Debug)]
pub struct Steps<'a> {
    section: Section<'a>,
    state: Step,
    version: u8,
}

impl Steps<'_> {
    /// The step after `prev`: the format stores most fields as deltas.
    fn read(c: &mut Cursor<'_>, prev: Step, version: u8) -> Result<Step, FormatError> {
        let head = c.u8()?;
        if head & 0x80 != 0 {
            return Err(FormatError::Op(head));
        }
        let op = match head & OP_MASK {
            0 => Op::Step,
            1 => Op::Engage {
                actuator: c.delta(prev.command)?,
            },
            2 => Op::Track {
                actuator: c.delta(prev.command)?,
            },
            3 => Op::Reset,
            4 => Op::Retune { index: c.varint()? },
            5 if schedules(version) => Op::Schedule {
                at: c.delta(prev.schedule_at)?,
            },
            other => return Err(FormatError::Op(other)),
        };
        let setpoint = if head & SETPOINT_CHANGED != 0 {
            c.delta(prev.setpoint)?
        } else {
            prev.setpoint
        };
        let feed_forward = if head & FEED_FORWARD_CHANGED != 0 {
            c.delta(prev.feed_forward)?
        } else {
            prev.feed_forward
        };
        let measurement = c.delta(prev.measurement)?;
        let applied = if head & APPLIED != 0 {
            Some(c.delta(prev.command)?)
        } else {
            None
        };
        let command = c.delta(prev.command)?;
        let status = if head & STATUS_CHANGED != 0 {
            u16::try_from(c.varint()?).map_err(|_| FormatError::Varint)?
        } else {
            prev.status
        };
        let schedule_at = match op {
            Op::Schedule { at } => at,
            _ => prev.schedule_at,
        };
        if sixteen_bit(version) {
            let actuator = match op {
                Op::Engage { actuator } | Op::Track { actuator } => actuator,
                Op::Schedule { at } => at,
                _ => 0,
            };
            let fits = |x: i32| i16::try_from(x).is_ok();
            if !(fits(actuator)
                && fits(setpoint)
                && fits(feed_forward)
                && fits(measurement)
                && fits(applied.unwrap_or(0))
                && fits(command))
            {
                return Err(FormatError::Range);
            }
        }
        Ok(Step {
            op,
            schedule_at,
            setpoint,
            measurement,
            feed_forward,
            applied,
            command,
            status,
        })
    }
}

impl Iterator for Steps<'_> {
    type Item = Result<Step, FormatError>;

    fn next(&mut self) -> Option<Self::Item> {
        let (prev, version) = (self.state, self.version);
        let item = self.section.next_with(|c| Self::read(c, prev, version));
        if let Some(Ok(step)) = item {
            self.state = step;
        }
        item
    }
}
