//! `evenkeel replay`: a thin layer over `evenkeel_harness::replay`.

use std::path::PathBuf;

use clap::Args;
use evenkeel_harness::Scenario;
use evenkeel_harness::replay;
use serde_json::json;

use super::output::Outputs;
use super::robust::OneBackend;

#[derive(Args)]
pub struct ReplayArgs {
    /// The device log: `ekr1` records (decoded defmt text lines, or any
    /// text with them) or CSV with the header `kind,k,r,y,a,f,v,u,s`.
    log: PathBuf,
    /// The scenario whose `[controller]` (and `[scaling]`) the device ran.
    #[arg(long, value_name = "FILE")]
    scenario: PathBuf,
    /// The device's numeric backend.
    #[arg(long, value_enum, default_value_t = OneBackend::Fixed)]
    backend: OneBackend,
    /// Write the result as JSON to PATH (`-`: standard output).
    #[arg(long, value_name = "PATH")]
    json: Option<PathBuf>,
}

/// `evenkeel replay`: `Ok(true)` when the log is bit-exact.
pub fn run(args: &ReplayArgs) -> anyhow::Result<bool> {
    let mut out = Outputs::new(&[args.log.as_path(), args.scenario.as_path()]);
    out.file("--json", args.json.as_deref())?;
    let scenario = Scenario::from_path(&args.scenario)?;
    let records = replay::read(&args.log)?;
    let file = args.log.display().to_string();
    let kind = args.backend.kind();
    let r = replay::replay_on(kind, &file, &scenario.settings_on(kind), &records)?;
    let text = replay::report(&r);
    out.json(args.json.as_deref(), || {
        json!({
            "caution": evenkeel_harness::CAUTION,
            "log": r.file,
            "backend": r.backend.name(),
            "records": r.records,
            "compared": r.compared,
            "bit_exact": r.bit_exact(),
            "differing": r.differing,
            "largest_difference": r.largest_difference,
            "last_difference_k": r.last_difference,
            "first_difference": r.first.as_ref().map(|d| json!({
                "record": d.record, "k": d.k, "line": d.line,
                "device_command": d.device.0, "host_command": d.host.0,
                "device_status": d.device_status.bits(), "host_status": d.host_status.bits(),
                "integral": d.integral.0, "last_command": d.last_command.0, "inputs": d.inputs,
            })),
        })
    })?;
    out.finish(&text)?;
    Ok(r.bit_exact())
}
