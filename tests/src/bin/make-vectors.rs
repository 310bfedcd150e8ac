//! Write the golden vectors to `shared/vectors/golden.ekv` (or the path
//! given as the only argument).

use std::path::PathBuf;
use std::process::ExitCode;

use evenkeel_tests::vectors;

fn main() -> ExitCode {
    let path = std::env::args_os().nth(1).map_or_else(
        || {
            PathBuf::from(env!("CARGO_MANIFEST_DIR"))
                .join("..")
                .join(vectors::FILE)
        },
        PathBuf::from,
    );
    let bytes = match vectors::generate() {
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
    ExitCode::SUCCESS
}
