//! `evenkeel c-config` and `design --c-out`: the C header of a
//! configuration. The header is compiled by the host's `gcc` with a small C
//! program that prints every field of the constant, and the values must be
//! those of the Rust configuration (`Config::to_parts`) of the same
//! settings; the C part is skipped, saying so, only if gcc is missing.

mod common;

use std::path::Path;
use std::process::Command;

use common::{assert_exit, demo, evenkeel, text};
use evenkeel::fixed::types::I16F16;
use evenkeel::{Config, Slim16};
use evenkeel_harness::{BackendKind, Scenario};

/// Every field of `name` as `gcc` sees it, one `field value` per line.
const PRINTER: &str = r#"
#include <stdio.h>
#include "config.h"
int main(void) {
    const EkcCoefficients *c = &NAME;
    printf("format %u\nfeatures %u\n", (unsigned)c->format, (unsigned)c->features);
    printf("kp %ld %u\nsetpoint_weight %ld %u\n", (long)c->kp.mantissa, c->kp.shift,
           (long)c->setpoint_weight.mantissa, c->setpoint_weight.shift);
    printf("ki_ts %ld %u\ntracking_ratio %ld %u\n", (long)c->ki_ts.mantissa, c->ki_ts.shift,
           (long)c->tracking_ratio.mantissa, c->tracking_ratio.shift);
    printf("filter_alpha %ld %u\n", (long)c->filter_alpha.mantissa, c->filter_alpha.shift);
    printf("slew_step %ld\ndeadband %ld\n", (long)c->slew_step, (long)c->deadband);
    printf("output %ld %ld\n", (long)c->output_min, (long)c->output_max);
    printf("measurement %ld %ld\nrest %ld\n", (long)c->measurement_min, (long)c->measurement_max,
           (long)c->rest);
    return 0;
}
"#;

/// What `PRINTER` should print for `settings`: the parts of the Rust
/// Q16.16 configuration, fields that are off as zero.
fn expected(settings: &evenkeel::Settings) -> String {
    printed(1, &Config::<I16F16>::try_new(settings).unwrap().to_parts())
}

/// What `PRINTER` prints for `parts` in C format `format`.
fn printed(format: u32, p: &evenkeel::ConfigParts) -> String {
    format!(
        "format {format}\nfeatures {}\nkp {} {}\nsetpoint_weight {} {}\nki_ts {} {}\ntracking_ratio {} {}\nfilter_alpha {} {}\nslew_step {}\ndeadband {}\noutput {} {}\nmeasurement {} {}\nrest {}\n",
        p.features,
        p.kp.mantissa,
        p.kp.shift,
        p.setpoint_weight.mantissa,
        p.setpoint_weight.shift,
        p.ki_ts.mantissa,
        p.ki_ts.shift,
        p.tracking_ratio.mantissa,
        p.tracking_ratio.shift,
        p.filter_alpha.mantissa,
        p.filter_alpha.shift,
        p.slew_step,
        p.deadband,
        p.output_min,
        p.output_max,
        p.measurement_min,
        p.measurement_max,
        p.rest,
    )
}

/// Compiles `header` (as `config.h`) with [`PRINTER`] for constant `name`
/// and returns what it prints; `None` without gcc.
fn printed_by_gcc(dir: &Path, header: &Path, name: &str) -> Option<String> {
    if Command::new("gcc").arg("--version").output().is_err() {
        eprintln!("SKIPPED the C compile of the header: gcc is not installed");
        return None;
    }
    std::fs::copy(header, dir.join("config.h")).unwrap();
    std::fs::write(dir.join("print.c"), PRINTER).unwrap();
    let include = Path::new(env!("CARGO_MANIFEST_DIR")).join("../c/include");
    let exe = dir.join("print");
    let build = Command::new("gcc")
        .args(["-std=c11", "-Wall", "-Wextra", "-Werror", "-o"])
        .arg(&exe)
        .arg(format!("-DNAME={name}"))
        .arg("-I")
        .arg(&include)
        .arg("-I")
        .arg(dir)
        .arg(dir.join("print.c"))
        .output()
        .unwrap();
    assert!(build.status.success(), "gcc: {}", text(&build.stderr));
    let run = Command::new(&exe).output().unwrap();
    assert!(run.status.success());
    Some(text(&run.stdout))
}

#[test]
fn c_config_writes_the_scenarios_configuration_as_c() {
    let dir = tempfile::tempdir().unwrap();
    for name in ["baggage_tug", "greenhouse_fan", "irrigation_pump"] {
        let path = demo(name);
        let scenario = Scenario::from_path(&path).unwrap();
        let out_file = dir.path().join(format!("{name}.h"));
        let out = evenkeel(
            dir.path(),
            &[
                "c-config",
                &path.display().to_string(),
                "--out",
                &out_file.display().to_string(),
            ],
        );
        assert_exit(&out, 0);
        let header = std::fs::read_to_string(&out_file).unwrap();
        let constant = format!("{}_coefficients", scenario.name.replace(['-', ' '], "_"));
        assert!(
            header.contains(&format!("static const EkcCoefficients {constant} = {{")),
            "{header}"
        );
        assert!(
            header.contains("not a certified safety function"),
            "{header}"
        );
        assert!(header.contains("#include \"evenkeel.h\""), "{header}");
        if let Some(printed) = printed_by_gcc(dir.path(), &out_file, &constant) {
            assert_eq!(printed, expected(&scenario.controller), "{name}");
        }
    }
}

/// `--backend slim16`: the 16-bit coefficients of the settings the
/// harness runs the 16-bit backend with (the scenario's `[scaling]`, or the
/// power-of-two scales it picks), every field as gcc sees it; and `design
/// --backend slim16 --c-out` writes the same format.
#[test]
fn c_config_writes_the_16_bit_configuration_as_c() {
    let dir = tempfile::tempdir().unwrap();
    for name in ["baggage_tug", "greenhouse_fan", "irrigation_pump"] {
        let path = demo(name);
        let scenario = Scenario::from_path(&path).unwrap();
        let out_file = dir.path().join(format!("{name}_16.h"));
        let out = evenkeel(
            dir.path(),
            &[
                "c-config",
                &path.display().to_string(),
                "--backend",
                "slim16",
                "--out",
                &out_file.display().to_string(),
            ],
        );
        assert_exit(&out, 0);
        let header = std::fs::read_to_string(&out_file).unwrap();
        let constant = format!("{}_coefficients", scenario.name.replace(['-', ' '], "_"));
        assert!(header.contains(".format = EKC_FORMAT_SLIM16"), "{header}");
        assert!(header.contains("ekc_slim_load(&pi, &"), "{header}");
        assert!(header.contains("16-bit raw signals (int16_t)"), "{header}");
        assert!(
            header.contains("not a certified safety function"),
            "{header}"
        );
        let settings = scenario.settings_on(BackendKind::Slim16);
        let parts = Config::<Slim16>::try_new(&settings).unwrap().to_parts();
        // The 16-bit configuration differs from the Q16.16 one (else this
        // test could not tell the formats apart).
        assert_ne!(printed(2, &parts), expected(&scenario.controller), "{name}");
        if let Some(printed_c) = printed_by_gcc(dir.path(), &out_file, &constant) {
            assert_eq!(printed_c, printed(2, &parts), "{name}");
        }
    }
    let path = demo("baggage_tug").display().to_string();
    let target = dir.path().join("tug16.h");
    let out = evenkeel(
        dir.path(),
        &[
            "design",
            &path,
            "--backend",
            "slim16",
            "--c-out",
            &target.display().to_string(),
        ],
    );
    assert_exit(&out, 0);
    let header = std::fs::read_to_string(&target).unwrap();
    assert!(header.contains(".format = EKC_FORMAT_SLIM16"), "{header}");
    assert!(header.contains("Proposed by `evenkeel design`"), "{header}");
}

#[test]
fn c_config_to_standard_output_and_with_a_name() {
    let dir = tempfile::tempdir().unwrap();
    let path = demo("baggage_tug").display().to_string();
    let out = evenkeel(dir.path(), &["c-config", &path, "--name", "tug_speed"]);
    assert_exit(&out, 0);
    let header = text(&out.stdout);
    assert!(
        header.contains("static const EkcCoefficients tug_speed = {"),
        "{header}"
    );
    assert!(
        header.contains("#ifndef EVENKEEL_CONFIG_EVENKEEL_CONFIG_H"),
        "{header}"
    );
    // Nothing else is written.
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
}

#[test]
fn c_config_refuses_bad_input_clearly() {
    let dir = tempfile::tempdir().unwrap();
    let path = demo("baggage_tug").display().to_string();
    let out = evenkeel(dir.path(), &["c-config", &path, "--name", "2fast"]);
    assert_exit(&out, 2);
    assert!(
        text(&out.stderr).contains("not a C identifier"),
        "{}",
        text(&out.stderr)
    );
    // Settings the Q16.16 format refuses: the setting is named.
    let source = std::fs::read_to_string(demo("baggage_tug")).unwrap();
    let wide = dir.path().join("wide.toml");
    let edited = source
        .lines()
        .map(|l| {
            if l.trim_start().starts_with("output_max") {
                "output_max = 40000.0"
            } else {
                l
            }
        })
        .collect::<Vec<_>>()
        .join("\n");
    std::fs::write(&wide, edited).unwrap();
    let target = dir.path().join("wide.h");
    let out = evenkeel(
        dir.path(),
        &[
            "c-config",
            "wide.toml",
            "--out",
            &target.display().to_string(),
        ],
    );
    let stderr = text(&out.stderr);
    assert_exit(&out, 2);
    assert!(
        stderr.contains("wide.toml") && stderr.contains("output_max"),
        "{stderr}"
    );
    assert!(!target.exists());
    // The input is never the output.
    let before = std::fs::read_to_string(&wide).unwrap();
    let out = evenkeel(dir.path(), &["c-config", "wide.toml", "--out", "wide.toml"]);
    assert_exit(&out, 2);
    assert_eq!(std::fs::read_to_string(&wide).unwrap(), before);
}

#[test]
fn design_writes_the_proposal_as_c() {
    let dir = tempfile::tempdir().unwrap();
    let path = demo("baggage_tug").display().to_string();
    let target = dir.path().join("tug.h");
    let out = evenkeel(
        dir.path(),
        &["design", &path, "--c-out", &target.display().to_string()],
    );
    assert_exit(&out, 0);
    let header = std::fs::read_to_string(&target).unwrap();
    assert!(
        header.contains("Proposed by `evenkeel design` (from"),
        "{header}"
    );
    assert!(header.contains("#ifndef EVENKEEL_CONFIG_TUG_H"), "{header}");
    assert!(
        header.contains("not a certified safety function"),
        "{header}"
    );
}
