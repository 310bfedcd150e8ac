//! What `evenkeel design` hands back: a readable report, a scenario file
//! ready for `check`/`sweep`, and a firmware `const` configuration.

use std::fmt::Write;

use evenkeel::AntiWindup;

use super::Proposal;
use crate::report::{CAUTION, format_number};
use crate::scenario::Scenario;

fn n(x: f64) -> String {
    format_number(Some(x)).replace("inf", "∞")
}

/// The readable report: derivation, proposed settings, fixed-point check,
/// margins at every corner.
#[must_use]
pub fn report(s: &Scenario, p: &Proposal) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "design for {} ({}), method {}",
        s.name,
        s.source,
        p.method.name()
    );
    let _ = writeln!(out, "  derivation:");
    for line in &p.derivation {
        let _ = writeln!(out, "    - {line}");
    }
    let c = &p.settings;
    let _ = writeln!(out, "  proposal:");
    let _ = writeln!(
        out,
        "    period_s = {}   kp = {}   ki_per_s = {}   setpoint_weight = {}",
        c.period_s, c.kp, c.ki_per_s, c.setpoint_weight
    );
    let _ = writeln!(
        out,
        "    output_min = {}   output_max = {}   slew_per_s = {}   filter_time_s = {}",
        c.output_min,
        c.output_max,
        c.slew_per_s.map_or("none".into(), |v| v.to_string()),
        c.filter_time_s.map_or("none".into(), |v| v.to_string())
    );
    if let AntiWindup::BackCalculation { tracking_time_s } = c.anti_windup {
        let _ = writeln!(
            out,
            "    anti_windup = back_calculation   tracking_time_s = {tracking_time_s}"
        );
    }
    let _ = writeln!(
        out,
        "  fixed point (Q16.16, evenkeel::Config::<I16F16>::try_new): {}",
        match (&p.fixed.accepted, p.fixed.holds()) {
            (Err(e), _) => format!("REFUSED: {e}"),
            (Ok(()), true) => "accepted, every coefficient within tolerance".into(),
            (Ok(()), false) => "accepted, but a coefficient is outside its tolerance".into(),
        }
    );
    for k in &p.fixed.coefficients {
        let _ = writeln!(
            out,
            "    {:<16} wanted {:>14}  stored {:>22.15}  rel. error {:>9.2e} (≤ {:.0e}) {}",
            k.name,
            format!("{:.10}", k.wanted),
            k.stored,
            k.relative_error(),
            k.tolerance,
            if k.relative_error() <= k.tolerance {
                "ok"
            } else {
                "TOO COARSE"
            }
        );
    }
    let _ = writeln!(
        out,
        "  sampled loop at every corner (ZOH plant, stored coefficients):"
    );
    let _ = writeln!(
        out,
        "    {:>8} {:>8} {:>10} {:>10} {:>9} {:>8} {:>10} {:>8}  corner",
        "GM", "GM dB", "PM deg", "wc rad/s", "DM s", "zeta min", "bw rad/s", "stable"
    );
    for r in &p.corners {
        let m = &r.margins;
        let _ = writeln!(
            out,
            "    {:>8} {:>8} {:>10} {:>10} {:>9} {:>8} {:>10} {:>8}  {}",
            n(m.gain_margin),
            n(20.0 * m.gain_margin.log10()),
            n(m.phase_margin_deg),
            n(m.gain_crossover_rad_s),
            n(m.delay_margin_s),
            n(m.min_damping),
            n(m.bandwidth_rad_s),
            if m.stable() { "yes" } else { "NO" },
            r.corner.label()
        );
    }
    if let Some(w) = p.worst_corner() {
        let _ = writeln!(
            out,
            "  smallest phase margin {} deg at {}",
            n(w.margins.phase_margin_deg),
            w.corner.label()
        );
    }
    let _ = writeln!(out, "  {CAUTION}");
    out
}

/// The scenario file `text` with its `[controller]` replaced by the
/// proposal (other tables, `[uncertainty]` and `[sweep]` kept), ready for
/// `evenkeel check` and `evenkeel sweep`. Comments are not kept.
///
/// # Errors
/// A message if `text` is not TOML.
pub fn scenario_toml(text: &str, p: &Proposal) -> Result<String, String> {
    let mut doc: toml::Table = toml::from_str(text).map_err(|e| e.to_string())?;
    let old = doc
        .get("controller")
        .and_then(toml::Value::as_table)
        .cloned()
        .unwrap_or_default();
    let c = &p.settings;
    let mut t = toml::Table::new();
    let f = toml::Value::Float;
    t.insert("period_s".into(), f(c.period_s));
    t.insert("kp".into(), f(c.kp));
    t.insert("ki_per_s".into(), f(c.ki_per_s));
    t.insert("output_min".into(), f(c.output_min));
    t.insert("output_max".into(), f(c.output_max));
    if let Some(v) = c.slew_per_s {
        t.insert("slew_per_s".into(), f(v));
    }
    if let Some(v) = c.filter_time_s {
        t.insert("filter_time_s".into(), f(v));
    }
    t.insert("setpoint_weight".into(), f(c.setpoint_weight));
    if let AntiWindup::BackCalculation { tracking_time_s } = c.anti_windup {
        t.insert(
            "anti_windup".into(),
            toml::Value::String("back_calculation".into()),
        );
        t.insert("tracking_time_s".into(), f(tracking_time_s));
    }
    for key in [
        "deadband",
        "measurement_min",
        "measurement_max",
        "initial_command",
    ] {
        if let Some(v) = old.get(key) {
            t.insert(key.into(), v.clone());
        }
    }
    doc.insert("controller".into(), toml::Value::Table(t));
    let head = format!(
        "# Controller proposed by `evenkeel design` ({}); the rest as in the source scenario.\n# {CAUTION}\n\n",
        p.method.name()
    );
    Ok(head + &toml::to_string(&doc).map_err(|e| e.to_string())?)
}

/// A Rust `const` configuration for firmware, checked by the compiler
/// through `evenkeel::config!`.
#[must_use]
pub fn rust_snippet(s: &Scenario, p: &Proposal) -> String {
    let c = &p.settings;
    let mut out = format!(
        "// Proposed by `evenkeel design` ({}) for scenario `{}`.\n// {CAUTION}\nuse evenkeel::fixed::types::I16F16;\nuse evenkeel::{{AntiWindup, Config, Settings}};\n\n",
        p.method.name(),
        s.name
    );
    let _ = write!(
        out,
        "pub const SETTINGS: Settings = Settings::new({:?}, {:?}, {:?}, {:?}, {:?})",
        c.period_s, c.kp, c.ki_per_s, c.output_min, c.output_max
    );
    if c.setpoint_weight != 1.0 {
        let _ = write!(out, "\n    .with_setpoint_weight({:?})", c.setpoint_weight);
    }
    if let Some(v) = c.slew_per_s {
        let _ = write!(out, "\n    .with_slew_per_s({v:?})");
    }
    if let Some(v) = c.filter_time_s {
        let _ = write!(out, "\n    .with_filter_time_s({v:?})");
    }
    if let Some(v) = c.deadband {
        let _ = write!(out, "\n    .with_deadband({v:?})");
    }
    if (c.measurement_min, c.measurement_max) != (-30_000.0, 30_000.0) {
        let _ = write!(
            out,
            "\n    .with_measurement_range({:?}, {:?})",
            c.measurement_min, c.measurement_max
        );
    }
    if let AntiWindup::BackCalculation { tracking_time_s } = c.anti_windup {
        let _ = write!(
            out,
            "\n    .with_anti_windup(AntiWindup::BackCalculation {{ tracking_time_s: {tracking_time_s:?} }})"
        );
    }
    out.push_str(";\npub const CONFIG: Config<I16F16> = evenkeel::config!(I16F16, SETTINGS);\n");
    out
}
