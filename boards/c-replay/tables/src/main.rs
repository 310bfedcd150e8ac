//! Writes `tables.h` for the C firmware in `boards/c-replay`: the golden
//! vector file as a byte array, and for every scenario its configuration
//! as an `EkcCoefficients` initialiser, its retune gains and its name.
//! The configurations are the Rust boards' own compile-time ones
//! (`evenkeel_replay::tables::golden::CONFIGS`, built by
//! `evenkeel::config!`) turned into integers with `Config::to_parts`, so the
//! C firmware configures with `ekc_load` and no floating point, and both
//! firmwares replay the same configurations. The timing workloads are
//! `evenkeel_replay::cost`'s.
//!
//! Usage: `evenkeel-c-tables OUT.h`
use std::fmt::Write as _;
use std::process::ExitCode;

use evenkeel::fixed::types::I16F16;
use evenkeel::{Config, FixedCoef, SlimCoef};
use evenkeel_c::initializer::{self, Item};
use evenkeel_c::types::{EKC_FORMAT_Q16_16, EKC_FORMAT_SLIM16, EkcCoefficients};
use evenkeel_replay::cost;
use evenkeel_replay::tables::{golden, slim16};

fn coefficients(c: &Config<I16F16>) -> EkcCoefficients {
    EkcCoefficients::from_parts(EKC_FORMAT_Q16_16, &c.to_parts())
}

fn coef(c: FixedCoef) -> String {
    format!("{{ {}, {} }}", c.mantissa(), c.shift())
}

fn slim_coef(c: SlimCoef) -> String {
    format!("{{ {}, {} }}", c.mantissa(), c.shift())
}

/// The 16-bit set (`shared/vectors/slim16.ekv`): the bytes, each
/// scenario's configuration (`EKC_FORMAT_SLIM16`), retune gains and name,
/// with the prefix `slim_`.
fn slim_tables(out: &mut String) -> std::fmt::Result {
    let vectors = slim16::VECTORS;
    writeln!(out, "#define SLIM_LEN {}", vectors.len())?;
    out.push_str("static const unsigned char slim_vectors[SLIM_LEN] = {");
    for (i, b) in vectors.iter().enumerate() {
        if i % 20 == 0 {
            out.push_str("\n   ");
        }
        write!(out, " {b},")?;
    }
    out.push_str("\n};\n\n");
    let n = slim16::CONFIGS.len();
    writeln!(out, "#define SLIM_SCENARIOS {n}")?;
    for (i, (config, gains)) in slim16::CONFIGS.iter().zip(slim16::GAINS).enumerate() {
        let name = format!("slim_config_{i}");
        initializer::write_coefficients(
            out,
            &Item {
                name: &name,
                coefficients: EkcCoefficients::from_parts(EKC_FORMAT_SLIM16, &config.to_parts()),
            },
        )?;
        if !gains.is_empty() {
            write!(out, "static const GainPair slim_gains_{i}[] = {{")?;
            for (kp, ki_ts) in gains.iter() {
                write!(out, " {{ {}, {} }},", slim_coef(*kp), slim_coef(*ki_ts))?;
            }
            out.push_str(" };\n");
        }
    }
    out.push_str("static const EkcCoefficients *const slim_configs[SLIM_SCENARIOS] = {");
    for i in 0..n {
        write!(out, " &slim_config_{i},")?;
    }
    out.push_str(" };\nstatic const GainPair *const slim_gains[SLIM_SCENARIOS] = {");
    for (i, gains) in slim16::GAINS.iter().enumerate() {
        if gains.is_empty() {
            out.push_str(" 0,");
        } else {
            write!(out, " slim_gains_{i},")?;
        }
    }
    out.push_str(" };\nstatic const unsigned slim_gain_counts[SLIM_SCENARIOS] = {");
    for gains in slim16::GAINS {
        write!(out, " {},", gains.len())?;
    }
    out.push_str(" };\nstatic const char *const slim_names[SLIM_SCENARIOS] = {");
    for name in slim16::NAMES {
        write!(out, " {name:?},")?;
    }
    out.push_str(" };\n\n");
    Ok(())
}

fn tables() -> Result<String, std::fmt::Error> {
    let mut out = String::new();
    writeln!(
        out,
        "/*\n * tables.h: written by boards/c-replay/tables (boards/run); do not edit.\n * {}\n */\n#ifndef EKC_REPLAY_TABLES_H\n#define EKC_REPLAY_TABLES_H\n\n#include \"evenkeel.h\"\n",
        initializer::CAUTION
    )?;
    writeln!(
        out,
        "typedef struct GainPair {{ EkcCoef kp; EkcCoef ki_ts; }} GainPair;\n"
    )?;
    let vectors = golden::VECTORS;
    writeln!(out, "#define GOLDEN_LEN {}", vectors.len())?;
    out.push_str("static const unsigned char golden_vectors[GOLDEN_LEN] = {");
    for (i, b) in vectors.iter().enumerate() {
        if i % 20 == 0 {
            out.push_str("\n   ");
        }
        write!(out, " {b},")?;
    }
    out.push_str("\n};\n\n");
    let n = golden::CONFIGS.len();
    writeln!(out, "#define GOLDEN_SCENARIOS {n}")?;
    for (i, (config, gains)) in golden::CONFIGS.iter().zip(golden::GAINS).enumerate() {
        let name = format!("golden_config_{i}");
        initializer::write_coefficients(
            &mut out,
            &Item {
                name: &name,
                coefficients: coefficients(config),
            },
        )?;
        if !gains.is_empty() {
            write!(out, "static const GainPair golden_gains_{i}[] = {{")?;
            for (kp, ki_ts) in gains.iter() {
                write!(out, " {{ {}, {} }},", coef(*kp), coef(*ki_ts))?;
            }
            out.push_str(" };\n");
        }
    }
    out.push_str("static const EkcCoefficients *const golden_configs[GOLDEN_SCENARIOS] = {");
    for i in 0..n {
        write!(out, " &golden_config_{i},")?;
    }
    out.push_str(" };\nstatic const GainPair *const golden_gains[GOLDEN_SCENARIOS] = {");
    for (i, gains) in golden::GAINS.iter().enumerate() {
        if gains.is_empty() {
            out.push_str(" 0,");
        } else {
            write!(out, " golden_gains_{i},")?;
        }
    }
    out.push_str(" };\nstatic const unsigned golden_gain_counts[GOLDEN_SCENARIOS] = {");
    for gains in golden::GAINS {
        write!(out, " {},", gains.len())?;
    }
    out.push_str(" };\nstatic const char *const golden_names[GOLDEN_SCENARIOS] = {");
    for name in golden::NAMES {
        write!(out, " {name:?},")?;
    }
    out.push_str(" };\n\n");
    slim_tables(&mut out)?;
    out.push_str("/* The timing workloads of boards/replay/src/cost.rs. */\n");
    writeln!(out, "#define COST_STEPS {}", cost::STEPS)?;
    for (name, c) in [
        ("cost_full", coefficients(&cost::FIXED_FULL)),
        ("cost_minimal", coefficients(&cost::FIXED_MINIMAL)),
        (
            "cost_slim_full",
            EkcCoefficients::from_parts(EKC_FORMAT_SLIM16, &cost::SLIM_FULL_CONFIG.to_parts()),
        ),
        (
            "cost_slim_minimal",
            EkcCoefficients::from_parts(EKC_FORMAT_SLIM16, &cost::SLIM_MINIMAL_CONFIG.to_parts()),
        ),
    ] {
        initializer::write_coefficients(
            &mut out,
            &Item {
                name,
                coefficients: c,
            },
        )?;
    }
    writeln!(out, "#define SLIM_SCALE {}", cost::SLIM_SCALE)?;
    out.push_str("\n#endif\n");
    Ok(out)
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().collect();
    let [_, path] = args.as_slice() else {
        eprintln!("usage: evenkeel-c-tables OUT.h");
        return ExitCode::from(2);
    };
    let Ok(text) = tables() else {
        eprintln!("evenkeel-c-tables: a scenario name is not a C identifier");
        return ExitCode::FAILURE;
    };
    if let Err(e) = std::fs::write(path, text) {
        eprintln!("evenkeel-c-tables: {path}: {e}");
        return ExitCode::FAILURE;
    }
    ExitCode::SUCCESS
}
