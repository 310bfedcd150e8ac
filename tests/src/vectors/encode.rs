//! Writer for the vector files, format versions 1 (golden), 2 (with
//! schedule rows and the schedule operation), 3 (the 16-bit backend:
//! scaling, raw 16-bit signals) and 4 (version 3 with schedule rows and
//! the schedule operation)
//! (`shared/vectors/FORMAT.md`; the reader is `boards/replay/src/format.rs`).

use evenkeel::{AntiWindup, Settings};

use super::record::{Op, Recorded, Recording};

/// First four bytes of a vector file.
pub const MAGIC: [u8; 4] = *b"EKVF";
/// Format version of the golden file.
pub const VERSION: u8 = 1;
/// Format version of files with schedule rows and schedule steps.
pub const VERSION_SCHEDULE: u8 = 2;
/// Format version of the 16-bit set (`Slim16`): version 1 plus each
/// scenario's scaling; signals are raw 16-bit values.
pub const VERSION_SLIM16: u8 = 3;
/// Format version of the 16-bit schedule set: version 3 plus breakpoint
/// rows and the schedule operation (its scheduling value raw, 16 bits).
pub const VERSION_SLIM16_SCHEDULE: u8 = 4;

/// The version stores breakpoint rows and may schedule.
const fn schedules(version: u8) -> bool {
    matches!(version, VERSION_SCHEDULE | VERSION_SLIM16_SCHEDULE)
}

/// The version is a 16-bit one (scaling stored, raw 16-bit signals).
const fn sixteen_bit_version(version: u8) -> bool {
    matches!(version, VERSION_SLIM16 | VERSION_SLIM16_SCHEDULE)
}

/// Scaling flag (version 3): the command is whole actuator counts.
const COMMAND_COUNTS: u8 = 1 << 0;

const HAS_SLEW: u8 = 1 << 0;
const HAS_FILTER: u8 = 1 << 1;
const HAS_DEADBAND: u8 = 1 << 2;
const HAS_BACK_CALCULATION: u8 = 1 << 3;

const SETPOINT_CHANGED: u8 = 1 << 3;
const FEED_FORWARD_CHANGED: u8 = 1 << 4;
const APPLIED: u8 = 1 << 5;
const STATUS_CHANGED: u8 = 1 << 6;

/// Why recordings cannot be written.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum EncodeError {
    /// More than 255 scenarios.
    TooManyScenarios,
    /// A name longer than 255 bytes or not ASCII.
    Name(String),
    /// A scenario with more than 255 retune gains or rows, or 65 535 steps.
    TooLarge(String),
    /// Schedule rows or steps in a version-1 or version-3 file.
    NeedsSchedule(String),
    /// A signal outside 16 bits in a version-3 file.
    NotSixteenBit(String),
}

impl std::fmt::Display for EncodeError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Self::TooManyScenarios => f.write_str("more than 255 scenarios"),
            Self::Name(n) => write!(f, "scenario name {n:?} is not short ASCII"),
            Self::TooLarge(n) => write!(f, "scenario {n} has too many gains, rows or steps"),
            Self::NeedsSchedule(n) => {
                write!(f, "scenario {n} has a schedule: format version 2 or 4")
            }
            Self::NotSixteenBit(n) => write!(f, "scenario {n} has a signal outside 16 bits"),
        }
    }
}

impl std::error::Error for EncodeError {}

/// The whole version-1 file for `recordings`, in order.
///
/// # Errors
/// [`EncodeError`] if a count or name does not fit the format.
pub fn encode(recordings: &[Recording]) -> Result<Vec<u8>, EncodeError> {
    encode_version(recordings, VERSION)
}

/// The whole file for `recordings` in format `version` (1 … 4).
///
/// # Errors
/// [`EncodeError`] if a count or name does not fit the format.
pub fn encode_version(recordings: &[Recording], version: u8) -> Result<Vec<u8>, EncodeError> {
    let mut body = Vec::new();
    for r in recordings {
        let scheduled = r.steps.iter().any(|s| matches!(s.op, Op::Schedule(_)));
        if !schedules(version) && (scheduled || !r.rows.is_empty()) {
            return Err(EncodeError::NeedsSchedule(r.name.clone()));
        }
        if sixteen_bit_version(version) && !r.steps.iter().all(sixteen_bit) {
            return Err(EncodeError::NotSixteenBit(r.name.clone()));
        }
        scenario(&mut body, r, version)?;
    }
    let count = u8::try_from(recordings.len()).map_err(|_| EncodeError::TooManyScenarios)?;
    let mut file = Vec::with_capacity(body.len() + 10);
    file.extend_from_slice(&MAGIC);
    file.push(version);
    file.push(count);
    file.extend_from_slice(&fnv1a(&body).to_le_bytes());
    file.extend_from_slice(&body);
    Ok(file)
}

/// Every signal of `s` is a 16-bit raw value.
fn sixteen_bit(s: &Recorded) -> bool {
    let actuator = match s.op {
        Op::Engage(a) | Op::Track(a) | Op::Schedule(a) => a,
        _ => 0,
    };
    [
        actuator,
        s.setpoint,
        s.measurement,
        s.feed_forward,
        s.applied.unwrap_or(0),
        s.command,
    ]
    .into_iter()
    .all(|x| i16::try_from(x).is_ok())
}

/// FNV-1a, 32 bit.
#[must_use]
pub fn fnv1a(bytes: &[u8]) -> u32 {
    bytes.iter().fold(0x811c_9dc5_u32, |h, &b| {
        (h ^ u32::from(b)).wrapping_mul(0x0100_0193)
    })
}

fn scenario(out: &mut Vec<u8>, r: &Recording, version: u8) -> Result<(), EncodeError> {
    let name = r.name.as_bytes();
    let name_len = u8::try_from(name.len()).map_err(|_| EncodeError::Name(r.name.clone()))?;
    if !r.name.is_ascii() {
        return Err(EncodeError::Name(r.name.clone()));
    }
    out.push(name_len);
    out.extend_from_slice(name);
    settings(out, &r.settings, version);
    let too_large = || EncodeError::TooLarge(r.name.clone());
    out.push(u8::try_from(r.gains.len()).map_err(|_| too_large())?);
    for (kp, ki_ts) in &r.gains {
        for c in [kp, ki_ts] {
            out.extend_from_slice(&c.mantissa.to_le_bytes());
            out.push(u8::try_from(c.shift).map_err(|_| too_large())?);
        }
    }
    if schedules(version) {
        out.push(u8::try_from(r.rows.len()).map_err(|_| too_large())?);
        for row in &r.rows {
            for x in [row.at, row.kp, row.ki_per_s] {
                out.extend_from_slice(&x.to_bits().to_le_bytes());
            }
        }
    }
    let steps = steps(&r.steps);
    out.extend_from_slice(
        &u16::try_from(r.steps.len())
            .map_err(|_| too_large())?
            .to_le_bytes(),
    );
    out.extend_from_slice(
        &u32::try_from(steps.len())
            .map_err(|_| too_large())?
            .to_le_bytes(),
    );
    out.extend_from_slice(&steps);
    Ok(())
}

fn settings(out: &mut Vec<u8>, s: &Settings, version: u8) {
    let tracking = match s.anti_windup {
        AntiWindup::BackCalculation { tracking_time_s } => Some(tracking_time_s),
        AntiWindup::ConditionalIntegration => None,
    };
    let optional = [
        (HAS_SLEW, s.slew_per_s),
        (HAS_FILTER, s.filter_time_s),
        (HAS_DEADBAND, s.deadband),
        (HAS_BACK_CALCULATION, tracking),
    ];
    let flags = optional
        .iter()
        .filter(|(_, v)| v.is_some())
        .fold(0, |f, (bit, _)| f | bit);
    out.push(flags);
    for x in [
        s.period_s,
        s.kp,
        s.ki_per_s,
        s.setpoint_weight,
        s.output_min,
        s.output_max,
        s.measurement_min,
        s.measurement_max,
    ] {
        out.extend_from_slice(&x.to_bits().to_le_bytes());
    }
    for x in optional.iter().filter_map(|(_, v)| *v) {
        out.extend_from_slice(&x.to_bits().to_le_bytes());
    }
    if sixteen_bit_version(version) {
        let c = &s.scaling;
        for x in [
            c.measurement.per_unit,
            c.measurement.offset,
            c.command.per_unit,
            c.command.offset,
        ] {
            out.extend_from_slice(&x.to_bits().to_le_bytes());
        }
        out.push(c.measurement_bits);
        out.push(if c.command_counts { COMMAND_COUNTS } else { 0 });
    }
}

fn steps(recorded: &[Recorded]) -> Vec<u8> {
    let mut out = Vec::new();
    let mut prev = Recorded::default();
    let mut prev_at = 0;
    for s in recorded {
        let (code, actuator, index, at) = match s.op {
            Op::Step => (0, None, None, None),
            Op::Engage(a) => (1, Some(a), None, None),
            Op::Track(a) => (2, Some(a), None, None),
            Op::Reset => (3, None, None, None),
            Op::Retune(i) => (4, None, Some(i), None),
            Op::Schedule(at) => (5, None, None, Some(at)),
        };
        let mut head = code;
        if s.setpoint != prev.setpoint {
            head |= SETPOINT_CHANGED;
        }
        if s.feed_forward != prev.feed_forward {
            head |= FEED_FORWARD_CHANGED;
        }
        if s.applied.is_some() {
            head |= APPLIED;
        }
        if s.status != prev.status {
            head |= STATUS_CHANGED;
        }
        out.push(head);
        if let Some(a) = actuator {
            delta(&mut out, prev.command, a);
        }
        if let Some(i) = index {
            varint(&mut out, i);
        }
        if let Some(at) = at {
            delta(&mut out, prev_at, at);
            prev_at = at;
        }
        if head & SETPOINT_CHANGED != 0 {
            delta(&mut out, prev.setpoint, s.setpoint);
        }
        if head & FEED_FORWARD_CHANGED != 0 {
            delta(&mut out, prev.feed_forward, s.feed_forward);
        }
        delta(&mut out, prev.measurement, s.measurement);
        if let Some(a) = s.applied {
            delta(&mut out, prev.command, a);
        }
        delta(&mut out, prev.command, s.command);
        if head & STATUS_CHANGED != 0 {
            varint(&mut out, u32::from(s.status));
        }
        prev = *s;
    }
    out
}

/// Zigzag LEB128 of the wrapping difference `value − previous` (Q16.16 bits).
fn delta(out: &mut Vec<u8>, previous: i32, value: i32) {
    let d = value.wrapping_sub(previous);
    varint(out, ((d << 1) ^ (d >> 31)) as u32);
}

/// Unsigned LEB128.
fn varint(out: &mut Vec<u8>, mut x: u32) {
    while x >= 0x80 {
        out.push((x as u8 & 0x7f) | 0x80);
        x >>= 7;
    }
    out.push(x as u8);
}
