//! The committed header `include/evenkeel.h` is what cbindgen makes of the
//! source now, documents every item, and carries every status bit with the
//! controller's value.
//!
//! `EKC_WRITE_HEADER=1 cargo test -p evenkeel-c --test header` rewrites it.

use std::fs;
use std::path::{Path, PathBuf};

use evenkeel::Status;

fn dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn header_path() -> PathBuf {
    dir().join("include/evenkeel.h")
}

fn fresh_header() -> Vec<u8> {
    let config = cbindgen::Config::from_file(dir().join("cbindgen.toml")).expect("cbindgen.toml");
    let bindings = cbindgen::Builder::new()
        .with_crate(dir())
        .with_config(config)
        .generate()
        .expect("cbindgen parses the crate");
    let mut bytes = Vec::new();
    bindings.write(&mut bytes);
    bytes
}

fn committed() -> String {
    fs::read_to_string(header_path()).expect("include/evenkeel.h is committed")
}

#[test]
fn committed_header_is_current() {
    let fresh = fresh_header();
    if std::env::var_os("EKC_WRITE_HEADER").is_some() {
        fs::write(header_path(), &fresh).expect("write include/evenkeel.h");
        return;
    }
    let committed = fs::read(header_path()).expect("include/evenkeel.h is committed");
    assert!(
        committed == fresh,
        "{} differs from what cbindgen makes of c/src now: regenerate it with \
         `EKC_WRITE_HEADER=1 cargo test -p evenkeel-c --test header` and commit it",
        Path::new("c/include/evenkeel.h").display()
    );
}

/// The value of a `#define NAME value` line: a decimal or hex integer, or
/// `(1 << n)`.
fn define(header: &str, name: &str) -> Option<i64> {
    let line = header
        .lines()
        .find(|l| l.split_whitespace().take(2).eq(["#define", name]))?;
    let value: String = line
        .split_whitespace()
        .skip(2)
        .collect::<Vec<_>>()
        .join(" ");
    let value = value.trim_start_matches('(').trim_end_matches(')');
    if let Some((a, b)) = value.split_once("<<") {
        let a: i64 = a.trim().parse().ok()?;
        let b: u32 = b.trim().parse().ok()?;
        return Some(a << b);
    }
    if let Some(hex) = value.strip_prefix("0x") {
        return i64::from_str_radix(hex, 16).ok();
    }
    value.parse().ok()
}

#[test]
fn every_status_bit_is_in_the_header_with_the_rust_value() {
    let header = committed();
    let mut seen = 0;
    for bit in 0..16 {
        let flag = Status::from_bits(1 << bit);
        let Some(name) = flag.names().next() else {
            continue; // not a flag
        };
        let c_name = format!("EKC_STATUS_{}", name.to_ascii_uppercase());
        assert_eq!(
            define(&header, &c_name),
            Some(i64::from(flag.bits())),
            "{c_name}"
        );
        seen += 1;
    }
    assert_eq!(seen, 11);
    let in_header = header
        .lines()
        .filter(|l| l.starts_with("#define EKC_STATUS_"))
        .count();
    assert_eq!(in_header, seen, "a status bit the controller does not have");
}

#[test]
fn every_item_has_a_comment_and_the_caution_is_there() {
    let header = committed();
    assert!(header.contains("not a certified safety function"));
    assert!(header.contains("IEC 61508"));
    let lines: Vec<&str> = header.lines().collect();
    let mut items = 0;
    for (i, line) in lines.iter().enumerate() {
        let is_item = line.starts_with("#define EKC_")
            || line.starts_with("typedef ")
            || line.starts_with("EkcCode ekc_")
            || line.starts_with("EkcStepResult ekc_")
            || line.starts_with("size_t ekc_")
            || line.starts_with("static inline ");
        if !is_item {
            continue;
        }
        items += 1;
        // A guarded definition: its comment is above the `#ifndef`.
        let above = if i > 0 && lines[i - 1].starts_with("#ifndef ") {
            2
        } else {
            1
        };
        let before = i.checked_sub(above).map(|j| lines[j].trim_end());
        assert_eq!(before, Some(" */"), "no comment before `{line}`");
    }
    // 12 functions per loop type, 2 common; 8 structs and 1 typedef.
    let functions = lines
        .iter()
        .filter(|l| l.contains(" ekc_") && l.ends_with(");"))
        .count();
    assert_eq!(functions, 26, "functions in the header");
    assert!(items > 26 + 9);
    // Every struct field is commented too.
    for (i, line) in lines.iter().enumerate() {
        let field = line.starts_with("  ") && line.trim_end().ends_with(';') && !line.contains('(');
        if field {
            assert_eq!(
                lines[i - 1].trim(),
                "*/",
                "no comment before field `{line}`"
            );
        }
    }
}
