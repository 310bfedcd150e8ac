//! Builds `tests/c/host_test.c` with the host's `gcc` against this crate's
//! host static library and runs it: hand-derived steps and every error
//! code, through the C header. Skipped, saying so, only when `gcc` is
//! not installed.

use std::path::PathBuf;
use std::process::Command;

/// The static library cargo built with this test: `libevenkeel_c-<hash>.a`
/// in the test's own `deps/` directory (the newest, if several builds
/// left one).
fn static_library() -> Option<PathBuf> {
    let exe = std::env::current_exe().expect("test executable path");
    let deps = exe
        .parent()
        .expect("test executable in target/<profile>/deps");
    std::fs::read_dir(deps)
        .expect("read deps/")
        .filter_map(Result::ok)
        .filter(|e| {
            let name = e.file_name();
            let name = name.to_string_lossy();
            name.starts_with("libevenkeel_c-") && name.ends_with(".a")
        })
        .filter_map(|e| Some((e.metadata().ok()?.modified().ok()?, e.path())))
        .max()
        .map(|(_, path)| path)
}

#[test]
fn host_c_program_passes() {
    if Command::new("gcc").arg("--version").output().is_err() {
        eprintln!("SKIPPED host_c_program_passes: gcc is not installed (apt-get install gcc)");
        return;
    }
    let lib = static_library()
        .expect("libevenkeel_c-*.a not found beside the test: cargo builds it with the crate (crate-type staticlib)");
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let out_dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR"));
    let exe = out_dir.join("ekc_host_test");
    let build = Command::new("gcc")
        .args([
            "-std=c11",
            "-O1",
            "-Wall",
            "-Wextra",
            "-Wpedantic",
            "-Werror",
            "-o",
        ])
        .arg(&exe)
        .arg("-I")
        .arg(dir.join("include"))
        .arg(dir.join("tests/c/host_test.c"))
        .arg(&lib)
        // What the Rust standard library needs on a GNU/Linux host.
        .args(["-lpthread", "-ldl", "-lm", "-lrt", "-lutil"])
        .output()
        .expect("run gcc");
    assert!(
        build.status.success(),
        "gcc failed:\n{}{}",
        String::from_utf8_lossy(&build.stdout),
        String::from_utf8_lossy(&build.stderr)
    );
    let run = Command::new(&exe).output().expect("run the C test");
    let stdout = String::from_utf8_lossy(&run.stdout);
    assert!(
        run.status.success(),
        "the C test failed ({}):\n{stdout}{}",
        run.status,
        String::from_utf8_lossy(&run.stderr)
    );
    assert!(
        stdout.contains("host C test: all checks passed"),
        "{stdout}"
    );
}
