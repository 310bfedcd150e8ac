//! Turns the committed vector files into compile-time tables, one module
//! per file: one `Config<I16F16>` per scenario (`Config<Slim16>` for the
//! 16-bit files, versions 3 and 4) (through `evenkeel::config!`,
//! so the target never converts settings at run time and links no
//! floating-point routine), the same in the scenario's compile-time layout,
//! each scenario's retune gains, and its gain schedule (through
//! `evenkeel::schedule!`) when the file stores breakpoint rows.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::{env, fs};

#[path = "src/format.rs"]
#[allow(dead_code)]
mod format;

use format::{
    COMMAND_COUNTS, File, HAS_BACK_CALCULATION, HAS_DEADBAND, HAS_FILTER, HAS_SLEW, sixteen_bit,
};

/// The backend a file's scenarios run on.
struct Backend {
    /// Signal type.
    signal: &'static str,
    /// Coefficient type.
    coef: &'static str,
    /// The `const fn` in `lib.rs` that rebuilds a stored gain.
    gain: &'static str,
}

const FIXED: Backend = Backend {
    signal: "I16F16",
    coef: "FixedCoef",
    gain: "gain",
};
const SLIM16: Backend = Backend {
    signal: "Slim16",
    coef: "SlimCoef",
    gain: "slim_gain",
};

fn main() {
    let manifest = PathBuf::from(env::var_os("CARGO_MANIFEST_DIR").expect("set by cargo"));
    println!("cargo:rerun-if-changed=src/format.rs");
    let mut out = String::new();
    for (module, file, backend) in [
        ("golden", "golden.ekv", FIXED),
        ("schedule", "schedule.ekv", FIXED),
        ("slim16", "slim16.ekv", SLIM16),
        ("slim16_schedule", "slim16_schedule.ekv", SLIM16),
    ] {
        let path = manifest.join("../../shared/vectors").join(file);
        println!("cargo:rerun-if-changed={}", path.display());
        out.push_str(&tables(module, &path, &backend));
    }
    let dest = PathBuf::from(env::var_os("OUT_DIR").expect("set by cargo")).join("tables.rs");
    fs::write(dest, out).expect("write tables.rs");
}

/// The module `module` for the vector file at `path`, whose scenarios run
/// on `backend`.
fn tables(module: &str, path: &Path, backend: &Backend) -> String {
    let bytes = fs::read(path).unwrap_or_else(|e| {
        panic!(
            "cannot read {}: {e}; regenerate it with `cargo run -p evenkeel-tests --bin make-vectors`",
            path.display()
        )
    });
    let path = fs::canonicalize(path).expect("exists: it was just read");
    let file =
        File::open(&bytes).unwrap_or_else(|e| panic!("{}: {}", path.display(), e.describe()));
    assert_eq!(
        sixteen_bit(file.version),
        backend.signal == SLIM16.signal,
        "{}: format version {} for backend {}",
        path.display(),
        file.version,
        backend.signal
    );
    let Backend { signal, coef, gain } = backend;

    let mut configs = String::new();
    let mut gains = String::new();
    let mut names = String::new();
    let mut schedules = String::new();
    let mut layouts = String::new();
    let mut visits = String::new();
    let f = |bits: u64| format!("f64::from_bits({bits:#018x})");
    for (index, scenario) in file.scenarios().enumerate() {
        let s = scenario.unwrap_or_else(|e| panic!("{}: {}", path.display(), e.describe()));
        let b = s.settings;
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
        let c = b.scaling;
        let scaling = format!(
            "evenkeel::Scaling {{ measurement: evenkeel::Scale::new({}, {}), \
             measurement_bits: {}, command: evenkeel::Scale::new({}, {}), command_counts: {} }}",
            f(c.measurement_per_unit),
            f(c.measurement_offset),
            c.measurement_bits,
            f(c.command_per_unit),
            f(c.command_offset),
            c.flags & COMMAND_COUNTS != 0,
        );
        let settings = format!(
            "Settings {{ period_s: {}, kp: {}, ki_per_s: {}, \
             setpoint_weight: {}, output_min: {}, output_max: {}, slew_per_s: {}, \
             filter_time_s: {}, deadband: {}, anti_windup: {anti_windup}, \
             measurement_min: {}, measurement_max: {}, scaling: {scaling} }}",
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
        writeln!(configs, "    evenkeel::config!({signal}, {settings}),").expect("write to String");
        let mut rows = String::new();
        for i in 0..s.row_count() {
            let [at, kp, ki] = s.row(i).expect("in range");
            write!(
                rows,
                "Breakpoint {{ at: {}, kp: {}, ki_per_s: {} }}, ",
                f(at),
                f(kp),
                f(ki)
            )
            .expect("write to String");
        }
        // A scenario that re-tunes or schedules changes its gains' shifts
        // (each schedule segment has its own): its layout fixes the features
        // and the other formats and leaves those of Kp and Ki·Ts to run time.
        let shape = if s.gain_count() > 0 || s.row_count() > 0 {
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
             pub const LAYOUT_CONFIG_{index}: Config<{signal}, Scenario{index}> = \
             evenkeel::config!({signal}, Scenario{index}, {settings});"
        )
        .expect("write to String");
        if s.row_count() > 0 {
            writeln!(
                schedules,
                "    Some(&evenkeel::schedule!({signal}: SCHEDULE_ROWS, {settings}, [{rows}])),"
            )
            .expect("write to String");
            writeln!(
                layouts,
                "    /// Scenario {index}'s schedule in its compile-time layout.\n\
                 pub static LAYOUT_SCHEDULE_{index}: Schedule<{signal}, SCHEDULE_ROWS, Scenario{index}> = \
                 evenkeel::schedule!({signal}: SCHEDULE_ROWS, Scenario{index}, {settings}, [{rows}]);"
            )
            .expect("write to String");
            writeln!(
                visits,
                "        {index} => visitor.visit(LAYOUT_CONFIG_{index}, Some(&LAYOUT_SCHEDULE_{index})),"
            )
            .expect("write to String");
        } else {
            schedules.push_str("    None,\n");
            writeln!(
                visits,
                "        {index} => visitor.visit(LAYOUT_CONFIG_{index}, None),"
            )
            .expect("write to String");
        }
        gains.push_str("    &[");
        for i in 0..s.gain_count() {
            let g = s.gain(i).expect("in range");
            write!(
                gains,
                "({gain}({}, {}), {gain}({}, {})), ",
                g.kp_mantissa, g.kp_shift, g.ki_ts_mantissa, g.ki_ts_shift
            )
            .expect("write to String");
        }
        gains.push_str("],\n");
        let name = String::from_utf8_lossy(s.name);
        writeln!(names, "    {name:?},").expect("write to String");
    }
    let n = file.scenario_count;
    format!(
        "/// Tables of `{file}`.\n\
         pub mod {module} {{\n\
         use super::*;\n\
         /// The committed vector file, embedded (read from flash in place).\n\
         pub static VECTORS: &[u8] = include_bytes!({path:?});\n\n\
         /// Scenario names, in file order.\n\
         pub static NAMES: [&str; {n}] = [\n{names}];\n\n\
         /// Each scenario's initial configuration, evaluated at compile time.\n\
         pub static CONFIGS: [Config<{signal}>; {n}] = [\n{configs}];\n\n\
         /// Each scenario's retune gains (Kp, Ki·Ts).\n\
         pub static GAINS: [&[({coef}, {coef})]; {n}] = [\n{gains}];\n\n\
         /// Each scenario's gain schedule, if it has one, built at compile time.\n\
         pub static SCHEDULES: [Option<&Schedule<{signal}, SCHEDULE_ROWS>>; {n}] = [\n{schedules}];\n\n\
         /// Each scenario's compile-time layout, its configuration and schedule.\n\
         pub mod layouts {{\n\
         use super::*;\n{layouts}}}\n\n\
         /// Hand scenario `index`'s compile-time configuration (and schedule)\n\
         /// to `visitor`; `false` if there is no such scenario.\n\
         pub fn visit_layout(index: usize, visitor: &mut impl ConfigVisitor<{signal}>) -> bool {{\n\
         use layouts::*;\n\
         match index {{\n{visits}\
         _ => return false,\n\
         }}\n\
         true\n\
         }}\n\
         }}\n\n",
        file = path.display()
    )
}
