//! Golden vectors: scenarios run on the host with the fixed-point
//! backends, recorded bit for bit, and written in our own compact format
//! (`shared/vectors/FORMAT.md`). The board firmwares and
//! `tests/golden.rs` replay the committed files.

mod encode;
mod record;
mod scenarios;
mod slim_record;
mod slim_scenarios;

pub use encode::{EncodeError, encode, encode_version, fnv1a};
pub use record::{Event, Extra, Gain, Op, Recorded, Recorder, Recording};
pub use scenarios::{all as scenarios, schedules};
pub use slim_record::{SlimEvent, SlimExtra, SlimRecorder};
pub use slim_scenarios::{all as slim16_scenarios, schedules as slim16_schedules};

/// Where the committed file lives, relative to the repository root.
pub const FILE: &str = "shared/vectors/golden.ekv";
/// Where the committed schedule set lives (format version 2).
pub const SCHEDULE_FILE: &str = "shared/vectors/schedule.ekv";

/// Where the committed 16-bit set lives (format version 3).
pub const SLIM16_FILE: &str = "shared/vectors/slim16.ekv";

/// Where the committed 16-bit schedule set lives (format version 4).
pub const SLIM16_SCHEDULE_FILE: &str = "shared/vectors/slim16_schedule.ekv";

/// Record every 16-bit schedule scenario and encode the 16-bit schedule
/// file.
///
/// # Errors
/// A message if a scenario is invalid or does not fit the format.
pub fn generate_slim16_schedules() -> Result<Vec<u8>, Box<dyn std::error::Error>> {
    Ok(encode_version(
        &slim16_schedules()?,
        encode::VERSION_SLIM16_SCHEDULE,
    )?)
}

/// Record every 16-bit scenario and encode the 16-bit file.
///
/// # Errors
/// A message if a scenario is invalid or does not fit the format.
pub fn generate_slim16() -> Result<Vec<u8>, Box<dyn std::error::Error>> {
    Ok(encode_version(
        &slim16_scenarios()?,
        encode::VERSION_SLIM16,
    )?)
}

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
