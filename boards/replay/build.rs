//! Turns the committed golden-vector file into compile-time tables: one
//! `Config<I16F16>` per scenario (through `evenkeel::config!`, so the target
//! never converts settings at run time and links no floating-point routine)
//! and each scenario's retune gains.

use std::fmt::Write as _;
use std::path::PathBuf;
use std::{env, fs};

#[path = "src/format.rs"]
#[allow(dead_code)]
mod format;

use format::{File, HAS_BACK_CALCULATION, HAS_DEADBAND, HAS_FILTER, HAS_SLEW};

fn main() {
    let manifest = PathBuf::from(env::var_os("CARGO_MANIFEST_DIR").expect("set by cargo"));
    let path = manifest.join("../../shared/vectors/golden.ekv");
    println!("cargo:rerun-if-changed={}", path.display());
    println!("cargo:rerun-if-changed=src/format.rs");
    let bytes = fs::read(&path).unwrap_or_else(|e| {
        panic!(
            "cannot read {}: {e}; regenerate it with `cargo run -p evenkeel-tests --bin make-vectors`",
            path.display()
        )
    });
    let path = fs::canonicalize(&path).expect("exists: it was just read");
    let file =
        File::open(&bytes).unwrap_or_else(|e| panic!("{}: {}", path.display(), e.describe()));

    let mut configs = String::new();
    let mut gains = String::new();
    let mut names = String::new();
    let mut layouts = String::new();
    let mut visits = String::new();
    for (index, scenario) in file.scenarios().enumerate() {
        let s = scenario.unwrap_or_else(|e| panic!("{}: {}", path.display(), e.describe()));
        let b = s.settings;
        let f = |bits: u64| format!("f64::from_bits({bits:#018x})");
        let opt = |flag: u8, bits: u64| {
            if b.flags & flag != 0 {
                format!("Some({})", f(bits))
            } else {
                "None".to_owned()
            }
        };
        let anti_windup = if b.flags & HAS_BACK_CALCULATION != 0 {
            format!(
                "AntiWindup::BackCalculation {{ tracking_time_s: {} }}",
                f(b.tracking_time_s)
            )
        } else {
            "AntiWindup::ConditionalIntegration".to_owned()
        };
        let settings = format!(
            "Settings {{ period_s: {}, kp: {}, ki_per_s: {}, \
             setpoint_weight: {}, output_min: {}, output_max: {}, slew_per_s: {}, \
             filter_time_s: {}, deadband: {}, anti_windup: {anti_windup}, \
             measurement_min: {}, measurement_max: {} }}",
            f(b.period_s),
            f(b.kp),
            f(b.ki_per_s),
            f(b.setpoint_weight),
            f(b.output_min),
            f(b.output_max),
            opt(HAS_SLEW, b.slew_per_s),
            opt(HAS_FILTER, b.filter_time_s),
            opt(HAS_DEADBAND, b.deadband),
            f(b.measurement_min),
            f(b.measurement_max),
        );
        writeln!(configs, "    evenkeel::config!(I16F16, {settings}),").expect("write to String");
        // A scenario that re-tunes changes its gains' shifts (the schedule's
        // segments have their own): its layout fixes the features and the
        // other formats and leaves those of Kp and Ki·Ts to run time.
        let shape = if s.gain_count() > 0 {
            format!(
                "match Shape::of(&{settings}) {{ Ok(s) => Ok(s.with_run_time_gain_formats()), Err(e) => Err(e) }}"
            )
        } else {
            format!("Shape::of(&{settings})")
        };
        writeln!(
            layouts,
            "    evenkeel::layout!(pub Scenario{index}: {shape});\n\
             /// Scenario {index} in its compile-time layout.\n\
             pub const LAYOUT_CONFIG_{index}: Config<I16F16, Scenario{index}> = \
             evenkeel::config!(I16F16, Scenario{index}, {settings});"
        )
        .expect("write to String");
        writeln!(
            visits,
            "        {index} => visitor.visit(LAYOUT_CONFIG_{index}),"
        )
        .expect("write to String");
        gains.push_str("    &[");
        for i in 0..s.gain_count() {
            let g = s.gain(i).expect("in range");
            write!(
                gains,
                "(gain({}, {}), gain({}, {})), ",
                g.kp_mantissa, g.kp_shift, g.ki_ts_mantissa, g.ki_ts_shift
            )
            .expect("write to String");
        }
        gains.push_str("],\n");
        let name = String::from_utf8_lossy(s.name);
        writeln!(names, "    {name:?},").expect("write to String");
    }
    let n = file.scenario_count;
    let out = format!(
        "/// The committed vector file, embedded (read from flash in place).\n\
         pub static VECTORS: &[u8] = include_bytes!({path:?});\n\n\
         /// Scenario names, in file order.\n\
         pub static NAMES: [&str; {n}] = [\n{names}];\n\n\
         /// Each scenario's initial configuration, evaluated at compile time.\n\
         pub static CONFIGS: [Config<I16F16>; {n}] = [\n{configs}];\n\n\
         /// Each scenario's retune gains (Kp, Ki·Ts).\n\
         pub static GAINS: [&[(FixedCoef, FixedCoef)]; {n}] = [\n{gains}];\n\n\
         /// Each scenario's compile-time layout and its configuration.\n\
         pub mod layouts {{\n\
         use super::*;\n{layouts}}}\n\n\
         /// Hand scenario `index`'s compile-time configuration to `visitor`;\n\
         /// `false` if there is no such scenario.\n\
         pub fn visit_layout(index: usize, visitor: &mut impl ConfigVisitor) -> bool {{\n\
         use layouts::*;\n\
         match index {{\n{visits}\
         _ => return false,\n\
         }}\n\
         true\n\
         }}\n"
    );
    let dest = PathBuf::from(env::var_os("OUT_DIR").expect("set by cargo")).join("tables.rs");
    fs::write(dest, out).expect("write tables.rs");
}
