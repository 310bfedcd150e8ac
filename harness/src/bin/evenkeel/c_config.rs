//! `evenkeel c-config`: a scenario's `[controller]`, as written, as a C
//! header for firmware (the precomputed Q16.16 coefficients, loaded with
//! `ekc_load`: no floating point on the target).

use std::path::PathBuf;

use clap::Args;
use evenkeel_harness::Scenario;
use evenkeel_harness::design;

use super::output::{self, Outputs};

#[derive(Args)]
pub struct CConfigArgs {
    /// Scenario file (TOML); its `[controller]` settings are used as
    /// written (nothing is designed or verified).
    scenario: PathBuf,
    /// Write the header to PATH (`-`: standard output).
    #[arg(long, short, value_name = "PATH.h", default_value = "-")]
    out: PathBuf,
    /// C identifier of the constant (default: `<scenario name>_coefficients`).
    #[arg(long, value_name = "IDENT")]
    name: Option<String>,
}

/// `evenkeel c-config`: `Ok(true)` once the header is written.
pub fn run(args: &CConfigArgs) -> anyhow::Result<bool> {
    let mut out = Outputs::new(&[args.scenario.as_path()]);
    out.file("--out", Some(&args.out))?;
    let scenario = Scenario::from_path(&args.scenario)?;
    let name = args
        .name
        .clone()
        .unwrap_or_else(|| design::c_name(&scenario.name));
    let header = design::c_header(
        &scenario,
        &scenario.controller,
        "Written by `evenkeel c-config` from the [controller] as written (not designed or verified by this command)",
        &output::header_file_name(&args.out),
        &name,
    )
    .map_err(|e| {
        anyhow::anyhow!(
            "{}: [controller]: {e}",
            output::shown(&args.scenario)
        )
    })?;
    out.bytes(&args.out, header.as_bytes())?;
    out.finish("")?;
    Ok(true)
}
