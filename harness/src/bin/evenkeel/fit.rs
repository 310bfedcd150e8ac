//! `evenkeel fit`: a thin layer over `evenkeel_harness::fit`.

use std::path::{Path, PathBuf};

use anyhow::Context;
use clap::{Args, ValueEnum};
use evenkeel_harness::Scenario;
use evenkeel_harness::fit::{self, Columns, FitRequest, ModelKind};

use super::output::{self, Outputs};

#[derive(Args)]
pub struct FitArgs {
    /// Logged tests (CSV with a header line): step tests or closed-loop runs.
    #[arg(required = true)]
    logs: Vec<PathBuf>,
    /// The plant model to fit.
    #[arg(long, value_enum)]
    model: ModelArg,
    /// Also fit an actuator lag (`[actuator] tau_s`).
    #[arg(long)]
    actuator_lag: bool,
    /// Hold a value instead of fitting it, KEY=VALUE with a scenario key
    /// (`mass_kg=600`); repeatable.
    #[arg(long, value_name = "KEY=VALUE")]
    fix: Vec<String>,
    /// Time column (default `t_s`).
    #[arg(long, value_name = "COLUMN")]
    time: Option<String>,
    /// Input column: the applied value or the command (default `applied`,
    /// else `command`).
    #[arg(long, value_name = "COLUMN")]
    input: Option<String>,
    /// Measured output column (default `measurement`).
    #[arg(long, value_name = "COLUMN")]
    output: Option<String>,
    /// Setpoint column (default `reference` when present).
    #[arg(long, value_name = "COLUMN")]
    setpoint: Option<String>,
    /// A label column (e.g. the payload), shown per log.
    #[arg(long, value_name = "COLUMN")]
    label: Option<String>,
    /// Widen each end of the uncertainty box by this fraction of the
    /// nominal.
    #[arg(long, default_value_t = 0.05)]
    margin: f64,
    /// A scenario to take held values from and to write the fit into.
    #[arg(long, value_name = "FILE")]
    scenario: Option<PathBuf>,
    /// Write the scenario with the fit (the --scenario file with only its
    /// plant and uncertainty values changed, else a new one) to PATH.
    #[arg(long, value_name = "PATH")]
    scenario_out: Option<PathBuf>,
    /// Unit of the measured output, for reports (default: the scenario's).
    #[arg(long)]
    output_unit: Option<String>,
    /// Write the fit as JSON to PATH (`-`: standard output).
    #[arg(long, value_name = "PATH")]
    json: Option<PathBuf>,
    /// Measured against fitted and the residuals per log, SVG or PNG.
    #[arg(long, value_name = "PATH")]
    plot: Option<PathBuf>,
    /// One self-contained HTML report (tables, the plot inline, the
    /// caution) to PATH.
    #[arg(long, value_name = "PATH")]
    html: Option<PathBuf>,
}

#[derive(Clone, Copy, ValueEnum)]
enum ModelArg {
    Integrator,
    FirstOrderLag,
    Vehicle,
    Rotor,
}

/// `evenkeel fit`: `Ok(true)` when every log's fit can be handed over.
pub fn run(args: &FitArgs) -> anyhow::Result<bool> {
    let inputs: Vec<&Path> = args
        .logs
        .iter()
        .map(PathBuf::as_path)
        .chain(args.scenario.as_deref())
        .collect();
    let mut out = Outputs::new(&inputs);
    out.file("--json", args.json.as_deref())?;
    out.plot("--plot", args.plot.as_deref())?;
    out.file("--html", args.html.as_deref())?;
    out.file("--scenario-out", args.scenario_out.as_deref())?;
    anyhow::ensure!(
        args.margin.is_finite() && (0.0..=10.0).contains(&args.margin),
        "--margin {}: must be in [0, 10] (a fraction of the nominal)",
        args.margin
    );
    let mut fixed = Vec::new();
    for f in &args.fix {
        let (k, v) = f
            .split_once('=')
            .with_context(|| format!("--fix {f}: expected KEY=VALUE, e.g. mass_kg=600"))?;
        let v: f64 = v
            .trim()
            .parse()
            .ok()
            .filter(|x: &f64| x.is_finite())
            .with_context(|| format!("--fix {f}: `{v}` is not a finite number"))?;
        fixed.push((k.trim().to_owned(), v));
    }
    let base = args
        .scenario
        .as_ref()
        .map(Scenario::from_path)
        .transpose()?;
    let unit = args
        .output_unit
        .clone()
        .or_else(|| base.as_ref().map(|b| b.output_unit.clone()))
        .unwrap_or_else(|| "output units".into());
    let request = FitRequest {
        model: match args.model {
            ModelArg::Integrator => ModelKind::Integrator,
            ModelArg::FirstOrderLag => ModelKind::FirstOrderLag,
            ModelArg::Vehicle => ModelKind::Vehicle,
            ModelArg::Rotor => ModelKind::Rotor,
        },
        actuator_lag: args.actuator_lag,
        fixed,
        base,
    };
    let columns = Columns {
        time: args.time.clone(),
        input: args.input.clone(),
        output: args.output.clone(),
        setpoint: args.setpoint.clone(),
        label: args.label.clone(),
    };
    let logs = args
        .logs
        .iter()
        .map(|p| fit::read_log(p, &columns))
        .collect::<Result<Vec<_>, _>>()?;
    let outcome = fit::fit(&request, &logs, args.margin).map_err(anyhow::Error::msg)?;
    let mut text = fit::report(&outcome, &unit);
    if let Some(path) = &args.scenario_out {
        if outcome.passed() {
            let body = match &args.scenario {
                Some(base) => {
                    let source = std::fs::read_to_string(base)
                        .with_context(|| format!("reading {}", base.display()))?;
                    fit::scenario_edit(&source, &outcome)
                        .map_err(|e| anyhow::anyhow!("{}: {e}", base.display()))?
                }
                None => {
                    let name = path
                        .file_stem()
                        .map_or_else(|| "fitted".to_owned(), |s| s.to_string_lossy().into_owned());
                    fit::new_scenario(&outcome, &logs, &name, &unit).map_err(anyhow::Error::msg)?
                }
            };
            // The scenario written must load: check before handing it over.
            Scenario::from_toml(&body, &path.display().to_string())
                .context("the scenario written from the fit does not load (please report)")?;
            out.bytes(path, body.as_bytes())?;
            text.push_str(&format!("wrote {}\n", output::shown(path)));
        } else {
            text.push_str(&format!(
                "{} not written: a fit cannot be handed over (see PROBLEM above)\n",
                path.display()
            ));
        }
    }
    if let Some(path) = &args.plot {
        out.drawn(path, |p| Ok(fit::plot(&outcome, &logs, &unit, p)?))?;
    }
    if let Some(path) = &args.html {
        let svg = fit::plot_svg(&outcome, &logs, &unit)?;
        out.bytes(path, fit::html(&outcome, &unit, Some(&svg)).as_bytes())?;
    }
    out.json(args.json.as_deref(), || fit::json(&outcome))?;
    out.finish(&text)?;
    Ok(outcome.passed())
}
