//! Write the golden vectors to `shared/vectors/golden.ekv`, the schedule
//! set to `shared/vectors/schedule.ekv`, the 16-bit set to
//! `shared/vectors/slim16.ekv` and the 16-bit schedule set to
//! `shared/vectors/slim16_schedule.ekv` (or to the paths given as
//! arguments, in that order).

use std::path::PathBuf;
use std::process::ExitCode;

use evenkeel_tests::vectors;

fn main() -> ExitCode {
    let mut args = std::env::args_os().skip(1);
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("..");
    let golden = args
        .next()
        .map_or_else(|| root.join(vectors::FILE), PathBuf::from);
    let schedule = args
        .next()
        .map_or_else(|| root.join(vectors::SCHEDULE_FILE), PathBuf::from);
    let slim16 = args
        .next()
        .map_or_else(|| root.join(vectors::SLIM16_FILE), PathBuf::from);
    let slim16_schedule = args
        .next()
        .map_or_else(|| root.join(vectors::SLIM16_SCHEDULE_FILE), PathBuf::from);
    for (path, bytes) in [
        (golden, vectors::generate()),
        (schedule, vectors::generate_schedules()),
        (slim16, vectors::generate_slim16()),
        (slim16_schedule, vectors::generate_slim16_schedules()),
    ] {
        let bytes = match bytes {
            Ok(b) => b,
            Err(e) => {
                eprintln!("make-vectors: {e}");
                return ExitCode::FAILURE;
            }
        };
        if let Err(e) = std::fs::write(&path, &bytes) {
            eprintln!("make-vectors: {}: {e}", path.display());
            return ExitCode::FAILURE;
        }
        println!(
            "make-vectors: wrote {} bytes to {}",
            bytes.len(),
            path.display()
        );
    }
    ExitCode::SUCCESS
}
