//! The sharding recipe of `docs/SHARDS.md`, run as documented: the script
//! `docs/examples/sweep-shards-local.sh` starts every shard as its own
//! process and merges them; the merged report must equal, byte for byte,
//! the report of one unsharded sweep.

mod common;

use std::process::Command;

use common::{demo, evenkeel, text};

#[test]
fn the_documented_shard_recipe_merges_into_the_unsharded_report() {
    let dir = tempfile::tempdir().unwrap();
    let script = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../docs/examples/sweep-shards-local.sh");
    let scenario = demo("irrigation_pump").display().to_string();
    let out = Command::new("bash")
        .arg(&script)
        .current_dir(dir.path())
        .env("EVENKEEL", env!("CARGO_BIN_EXE_evenkeel"))
        .env("SCENARIO", &scenario)
        .env("SHARDS", "3")
        .env("COUNT", "12")
        .env("SEED", "5")
        .env("OUT", "out")
        .output()
        .unwrap();
    assert!(
        out.status.code().is_some_and(|c| c <= 1),
        "{}\n{}",
        text(&out.stdout),
        text(&out.stderr)
    );
    let whole = evenkeel(
        dir.path(),
        &[
            "sweep",
            &scenario,
            "--method",
            "latin-hypercube",
            "--count",
            "12",
            "--seed",
            "5",
            "-q",
            "--json",
            "whole.json",
        ],
    );
    assert_eq!(whole.status.code(), out.status.code());
    let merged = std::fs::read(dir.path().join("out/merged.json")).unwrap();
    let one = std::fs::read(dir.path().join("whole.json")).unwrap();
    assert_eq!(
        merged, one,
        "the merged report differs from the unsharded one"
    );
    for i in 1..=3 {
        assert!(dir.path().join(format!("out/shard-{i}.json")).exists());
    }
}
