//! What `design` writes for the user: their own scenario file with only
//! the designed values changed (format-preserving, with `toml_edit`), and a
//! firmware `const` configuration checked by the compiler.

use std::fmt::Write;

use evenkeel::fixed::types::I16F16;
use evenkeel::{AntiWindup, Config, ConfigError, Settings, Slim16};
use evenkeel_c::initializer::{self, Item as CItem};
use evenkeel_c::types::{EKC_FORMAT_Q16_16, EKC_FORMAT_SLIM16, EkcCoefficients};
use toml_edit::{DocumentMut, Item, Value};

use crate::BackendKind;
use crate::report::CAUTION;
use crate::scenario::Scenario;

/// First characters of the header lines `design` puts on a file it
/// writes; a file that already starts with them (an earlier design) gets
/// them replaced, not stacked.
pub const HEADER_MARK: &str = "# evenkeel design:";

/// The `[controller]` values `design` chooses, as scenario keys:
/// `(key, value)`, `None` where the key must be absent (no slew limit, no
/// filter, conditional integration has no tracking time).
#[must_use]
pub fn designed_values(c: &Settings) -> Vec<(&'static str, Option<DesignedValue>)> {
    let f = |x: f64| Some(DesignedValue::Number(x));
    let (aw, tt) = match c.anti_windup {
        AntiWindup::BackCalculation { tracking_time_s } => ("back_calculation", f(tracking_time_s)),
        AntiWindup::ConditionalIntegration => ("conditional_integration", None),
    };
    vec![
        ("kp", f(c.kp)),
        ("ki_per_s", f(c.ki_per_s)),
        ("setpoint_weight", f(c.setpoint_weight)),
        ("output_min", f(c.output_min)),
        ("output_max", f(c.output_max)),
        ("slew_per_s", c.slew_per_s.and_then(f)),
        ("filter_time_s", c.filter_time_s.and_then(f)),
        ("anti_windup", Some(DesignedValue::Text(aw))),
        ("tracking_time_s", tt),
    ]
}

/// A designed value: a number or a word.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DesignedValue {
    /// A number.
    Number(f64),
    /// A string value (`anti_windup`).
    Text(&'static str),
}

impl DesignedValue {
    fn same_as(&self, v: &Value) -> bool {
        match (self, v) {
            (Self::Number(x), Value::Float(f)) => *f.value() == *x,
            #[allow(clippy::cast_precision_loss)]
            (Self::Number(x), Value::Integer(i)) => *i.value() as f64 == *x,
            (Self::Text(t), Value::String(s)) => s.value() == t,
            _ => false,
        }
    }

    fn value(&self) -> Value {
        match self {
            Self::Number(x) => Value::from(*x),
            Self::Text(t) => Value::from(*t),
        }
    }
}

/// The scenario file `text` with the `[controller]` values of `c` put in,
/// and nothing else changed: comments, key order, inline arrays, the order
/// of the `[uncertainty]` keys (which fixes variant numbering and seeds)
/// and every other table stay byte for byte as written. A value that is
/// already what design chose keeps its spelling (`1.0e-3` stays so); a
/// changed value keeps the comment after it; a key design adds goes at the
/// end of `[controller]`; a key design drops (no filter, say) is removed.
/// `header` lines (each starting with [`HEADER_MARK`]) go on top, in place
/// of those of an earlier design.
///
/// # Errors
/// A message if `text` is not TOML or has no `[controller]` table.
pub fn scenario_toml(text: &str, c: &Settings, header: &[String]) -> Result<String, String> {
    let body: String = {
        let mut lines = text.split_inclusive('\n').peekable();
        while lines.peek().is_some_and(|l| l.starts_with(HEADER_MARK)) {
            lines.next();
        }
        lines.collect()
    };
    let mut doc: DocumentMut = body
        .parse()
        .map_err(|e: toml_edit::TomlError| e.to_string())?;
    let table = doc
        .get_mut("controller")
        .and_then(Item::as_table_like_mut)
        .ok_or("the scenario has no [controller] table")?;
    for (key, want) in designed_values(c) {
        let defaults = match key {
            "setpoint_weight" => want == Some(DesignedValue::Number(1.0)),
            "anti_windup" => want == Some(DesignedValue::Text("conditional_integration")),
            _ => false,
        };
        match (table.get_mut(key), want) {
            (Some(item), Some(w)) => {
                if let Some(old) = item.as_value()
                    && !w.same_as(old)
                {
                    let decor = old.decor().clone();
                    let mut v = w.value();
                    *v.decor_mut() = decor;
                    *item = Item::Value(v);
                } else if item.as_value().is_none() {
                    *item = Item::Value(w.value());
                }
            }
            (Some(_), None) => {
                table.remove(key);
            }
            (None, Some(w)) if !defaults => {
                table.insert(key, Item::Value(w.value()));
            }
            (None, _) => {}
        }
    }
    let mut out = String::new();
    for line in header {
        debug_assert!(line.starts_with(HEADER_MARK));
        out.push_str(line);
        out.push('\n');
    }
    out.push_str(&doc.to_string());
    Ok(out)
}

/// The firmware `const` of what `design` hands over (what the CLI prints
/// and `--rust-out` writes), saying whether it was verified.
#[must_use]
pub fn snippet(s: &Scenario, t: &super::Tuned) -> String {
    rust_snippet(s, &t.settings, &provenance(t))
}

/// Where a design's output comes from and whether it was verified (the
/// words inside "Proposed by `evenkeel design` (…)").
#[must_use]
pub fn provenance(t: &super::Tuned) -> String {
    format!(
        "from {}, {} on the {} backend over {} variants",
        t.start_name(),
        if t.passed() {
            "verified"
        } else {
            "NOT verified: it FAILS"
        },
        t.options.backend.name(),
        t.verification.as_ref().map_or(0, |v| v.variants.len())
    )
}

/// A Rust `const` configuration for firmware, checked by the compiler
/// through `evenkeel::config!`.
#[must_use]
pub fn rust_snippet(s: &Scenario, c: &Settings, what: &str) -> String {
    let mut out = format!(
        "// Proposed by `evenkeel design` ({what}) for scenario `{}`.\n// {CAUTION}\nuse evenkeel::fixed::types::I16F16;\nuse evenkeel::{{AntiWindup, Config, Settings}};\n\n",
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
    let default = Settings::new(c.period_s, c.kp, c.ki_per_s, c.output_min, c.output_max);
    if (c.measurement_min, c.measurement_max) != (default.measurement_min, default.measurement_max)
    {
        let _ = write!(
            out,
            "\n    .with_measurement_range({:?}, {:?})",
            c.measurement_min, c.measurement_max
        );
    }
    if !c.scaling.is_none() {
        let sc = c.scaling;
        let m = sc.measurement;
        let u = sc.command;
        let measurement = if sc.measurement_bits > 0 {
            format!(
                "with_adc({}, evenkeel::Scale::new({:?}, {:?}))",
                sc.measurement_bits, m.per_unit, m.offset
            )
        } else {
            format!(
                "with_measurement(evenkeel::Scale::new({:?}, {:?}))",
                m.per_unit, m.offset
            )
        };
        let command = format!(
            "{}(evenkeel::Scale::new({:?}, {:?}))",
            if sc.command_counts {
                "with_pwm"
            } else {
                "with_command"
            },
            u.per_unit,
            u.offset
        );
        let _ = write!(
            out,
            "\n    .with_scaling(evenkeel::Scaling::NONE.{measurement}.{command})"
        );
    }
    match c.anti_windup {
        AntiWindup::BackCalculation { tracking_time_s } => {
            let _ = write!(
                out,
                "\n    .with_anti_windup(AntiWindup::BackCalculation {{ tracking_time_s: {tracking_time_s:?} }})"
            );
        }
        AntiWindup::ConditionalIntegration => {
            out.push_str("\n    .with_anti_windup(AntiWindup::ConditionalIntegration)");
        }
    }
    out.push_str(";\npub const CONFIG: Config<I16F16> = evenkeel::config!(I16F16, SETTINGS);\n");
    out
}

/// The C identifier `design` and `c-config` give the configuration of
/// scenario `name` (`<name>_coefficients`, other characters as `_`).
#[must_use]
pub fn c_name(name: &str) -> String {
    let mut buf = [0u8; 64];
    let len = initializer::c_identifier(name, &mut buf);
    let base = String::from_utf8_lossy(buf.get(..len).unwrap_or_default()).into_owned();
    format!("{base}_coefficients")
}

/// A C header for firmware: the configuration of `c` in the C format of
/// backend `kind` as a `static const EkcCoefficients` initialiser (the
/// precomputed per-sample coefficients and limits, exactly those of
/// `evenkeel::config!`), loaded with `ekc_load` (Q16.16, `EkcLoop`) or
/// `ekc_slim_load` (16-bit, `EkcSlimLoop`) from `evenkeel.h` (crate
/// `evenkeel-c`) with no floating point on the target.
/// [`BackendKind::Slim16`] uses the 16-bit settings of `c` in scenario
/// `s` ([`Scenario::settings_on`]: its `[scaling]`, or the power-of-two
/// scales the harness picks), and the header states that scaling; every
/// other kind gives Q16.16. `file_name` makes the include guard; `name` is
/// the C identifier (see [`c_name`]).
///
/// # Errors
/// A message naming the first setting the format refuses, or a `name`
/// that is not a C identifier.
pub fn c_header(
    s: &Scenario,
    c: &Settings,
    kind: BackendKind,
    what: &str,
    file_name: &str,
    name: &str,
) -> Result<String, String> {
    if !initializer::is_c_identifier(name) {
        return Err(format!(
            "`{name}` is not a C identifier (letters, digits, _; not starting with a digit or ekc_/EKC_/Ekc)"
        ));
    }
    let slim = kind == BackendKind::Slim16;
    let (c, coefficients) = if slim {
        let scenario = Scenario {
            controller: *c,
            ..s.clone()
        };
        let c = scenario.settings_on(BackendKind::Slim16);
        let config = Config::<Slim16>::try_new(&c)
            .map_err(|e: ConfigError| format!("the 16-bit format refuses the settings: {e}"))?;
        (
            c,
            EkcCoefficients::from_parts(EKC_FORMAT_SLIM16, &config.to_parts()),
        )
    } else {
        let config = Config::<I16F16>::try_new(c)
            .map_err(|e: ConfigError| format!("the Q16.16 format refuses the settings: {e}"))?;
        (
            *c,
            EkcCoefficients::from_parts(EKC_FORMAT_Q16_16, &config.to_parts()),
        )
    };
    let anti_windup = match c.anti_windup {
        AntiWindup::BackCalculation { tracking_time_s } => {
            format!("back-calculation, tracking_time_s = {tracking_time_s:?}")
        }
        AntiWindup::ConditionalIntegration => "conditional integration".to_owned(),
    };
    let optional =
        |key: &str, v: Option<f64>| v.map_or(String::new(), |v| format!(", {key} = {v:?}"));
    let mut lines = vec![
        format!("{what} for scenario `{}`.", s.name),
        format!(
            "Settings: period_s = {:?}, kp = {:?}, ki_per_s = {:?}, setpoint_weight = {:?}, output {:?} to {:?}, measurement {:?} to {:?}{}{}{}, {anti_windup}.",
            c.period_s,
            c.kp,
            c.ki_per_s,
            c.setpoint_weight,
            c.output_min,
            c.output_max,
            c.measurement_min,
            c.measurement_max,
            optional("slew_per_s", c.slew_per_s),
            optional("filter_time_s", c.filter_time_s),
            optional("deadband", c.deadband),
        ),
    ];
    if slim {
        let (m, u) = (c.scaling.measurement, c.scaling.command);
        lines.push(format!(
            "16-bit raw signals (int16_t): measurement and setpoint raw = {:?} * value + {:?}, command raw = {:?} * value + {:?}.",
            m.per_unit, m.offset, u.per_unit, u.offset
        ));
        lines.push("On the target: `static EkcSlimLoop pi;`".to_owned());
        lines.push(format!(
            "then `ekc_slim_load(&pi, &{name})`: no floating point (evenkeel.h, crate evenkeel-c)."
        ));
    } else {
        lines
            .push("Q16.16 signals (value · 65536). On the target: `static EkcLoop pi;`".to_owned());
        lines.push(format!(
            "then `ekc_load(&pi, &{name})`: no floating point (evenkeel.h, crate evenkeel-c)."
        ));
    }
    let lines: Vec<&str> = lines.iter().map(String::as_str).collect();
    let mut out = String::new();
    initializer::write_header(&mut out, file_name, &lines, &[CItem { name, coefficients }])
        .map_err(|_| format!("`{name}` is not a C identifier"))?;
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "# my heater\n[scenario]\nname = \"h\"   # keep me\n\n[controller]\nperiod_s = 0.5\nkp = 1.0e-3     # per K\nki_per_s = 2.0  # per K s\noutput_min = 0.0\noutput_max = 1.0\nfilter_time_s = 2.0 # noisy probe\n\n[uncertainty]\ntau_s = { min = 10.0, max = 30.0 }\ngain = { min = 1.0, max = 2.0 }\n";

    #[test]
    fn only_designed_values_change() {
        let c = Settings::new(0.5, 0.001, 0.25, 0.0, 0.9).with_anti_windup(
            AntiWindup::BackCalculation {
                tracking_time_s: 4.0,
            },
        );
        let out = scenario_toml(TEXT, &c, &[format!("{HEADER_MARK} test")]).unwrap();
        // Unchanged values keep their spelling and comments.
        assert!(out.contains("kp = 1.0e-3     # per K\n"), "{out}");
        assert!(out.contains("name = \"h\"   # keep me\n"), "{out}");
        // Changed values keep their comment.
        assert!(out.contains("ki_per_s = 0.25  # per K s\n"), "{out}");
        assert!(out.contains("output_max = 0.9\n"), "{out}");
        // Dropped and added keys.
        assert!(!out.contains("filter_time_s"), "{out}");
        assert!(
            out.contains("anti_windup = \"back_calculation\"\n"),
            "{out}"
        );
        assert!(out.contains("tracking_time_s = 4.0\n"), "{out}");
        assert!(!out.contains("setpoint_weight"), "{out}");
        // Everything after [controller] byte for byte, key order kept.
        let tail = &TEXT[TEXT.find("\n[uncertainty]").unwrap()..];
        assert!(out.ends_with(tail), "{out}");
        assert!(
            out.starts_with("# evenkeel design: test\n# my heater\n"),
            "{out}"
        );
        // A second design replaces the header, not stacks it.
        let again = scenario_toml(&out, &c, &[format!("{HEADER_MARK} again")]).unwrap();
        assert!(
            again.starts_with("# evenkeel design: again\n# my heater\n"),
            "{again}"
        );
    }

    #[test]
    fn snippet_states_every_setting() {
        let s = Scenario::demo().unwrap();
        let text = rust_snippet(&s, &s.controller, "simc");
        assert!(
            text.contains("Settings::new(0.01, 1.03, 0.325, -1.0, 1.0)"),
            "{text}"
        );
        assert!(text.contains(".with_setpoint_weight(0.68)"), "{text}");
        assert!(
            text.contains("evenkeel::config!(I16F16, SETTINGS)"),
            "{text}"
        );
        assert!(text.contains(CAUTION));
    }
}
