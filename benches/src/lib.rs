//! Host benchmarks of evenkeel (criterion), kept out of the root workspace
//! so that its tests do not build criterion. The benchmarks are in
//! `benches/`; method and figures in `BENCHMARKS.md`. No library code.

#![forbid(unsafe_code)]
