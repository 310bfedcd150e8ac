//! `evenkeel c-config`: a scenario's `[controller]`, as written, as a C
//! header for firmware (the precomputed Q16.16 coefficients, loaded with
//! `ekc_load`, or with `--backend slim16` the 16-bit ones, loaded with
//! `ekc_slim_load`: no floating point on the target).

use std::path::PathBuf;

use clap::{Args, ValueEnum};
use evenkeel_harness::design;
use evenkeel_harness::{BackendKind, Scenario};

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
    /// C format: `fixed` (Q16.16, `EkcLoop`) or `slim16` (16-bit,
    /// `EkcSlimLoop`, on the scenario's `[scaling]` or the power-of-two
    /// scales the harness picks for it).
    #[arg(long, value_enum, default_value = "fixed")]
    backend: CBackend,
}

/// The backends the C interface has.
#[derive(Clone, Copy, ValueEnum)]
enum CBackend {
    Fixed,
    Slim16,
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
        match args.backend {
            CBackend::Fixed => BackendKind::Fixed,
            CBackend::Slim16 => BackendKind::Slim16,
        },
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
