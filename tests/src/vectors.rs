//! Golden vectors: scenarios run on the host with the fixed-point backend,
//! recorded bit for bit, and written in our own compact format
//! (`shared/vectors/FORMAT.md`). The board firmwares and
//! `tests/golden.rs` replay the committed file.

mod encode;
mod record;
mod scenarios;

pub use encode::{EncodeError, encode, encode_version, fnv1a};
pub use record::{Event, Extra, Op, Recorded, Recorder, Recording};
pub use scenarios::{all as scenarios, schedules};

/// Where the committed file lives, relative to the repository root.
pub const FILE: &str = "shared/vectors/golden.ekv";
/// Where the committed schedule set lives (format version 2).
pub const SCHEDULE_FILE: &str = "shared/vectors/schedule.ekv";

/// Record every schedule scenario and encode the schedule file.
///
/// # Errors
/// A message if a scenario is invalid or does not fit the format.
pub fn generate_schedules() -> Result<Vec<u8>, Box<dyn std::error::Error>> {
    Ok(encode_version(&schedules()?, encode::VERSION_SCHEDULE)?)
}

/// Record every scenario and encode the file.
///
/// # Errors
/// A message if a scenario is invalid or does not fit the format.
pub fn generate() -> Result<Vec<u8>, Box<dyn std::error::Error>> {
    Ok(encode(&scenarios()?)?)
}
