//! Cross-crate and external-reference tests live in `tests/`. The
//! repository README is this crate's documentation, so its examples are
//! compiled and run by `cargo test`.
#![doc = include_str!("../../README.md")]

pub mod vectors;
