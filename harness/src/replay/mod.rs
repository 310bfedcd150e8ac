//! `evenkeel replay`: a log recorded on the device, fed through the host
//! controller with the same backend and settings, compared bit for bit.
//!
//! # The log
//!
//! One record per line; the text form is what the controller crate's
//! `defmt` helper emits (`evenkeel::log::ReplayRecord`), decoded on the
//! host, so a record may sit anywhere in a line (after a timestamp or a
//! level). Every value is the backend's raw representation, so nothing is
//! lost to decimal printing: Q16.16 as its 32-bit integer, the 16-bit
//! backend (`slim16`) as its raw 16-bit value (the counts, on the
//! settings' scaling), `f32`/`f64` as their IEEE 754 bits in hexadecimal;
//! `-` where a value is absent.
//!
//! ```text
//! ekr1 engage k=0 v=32768
//! ekr1 step k=0 r=262144 y=0 a=- f=- u=32900 s=0x0080
//! ekr1 track k=5 r=262144 y=1200 a=- f=- v=0 u=0 s=0x00c0
//! ekr1 reset k=9
//! ```
//!
//! The same records as CSV: a header line `kind,k,r,y,a,f,v,u,s` and one
//! row each.
//!
//! `step` is `Controller::step_with` (setpoint `r`, measurement `y`,
//! optional applied value `a` and feed-forward `f`) giving command `u` and
//! status `s`; `track` is `Controller::track` with the actuator's value
//! `v`; `engage` and `reset` are the calls of those names.

mod parse;

use std::fmt::Write;

use evenkeel::fixed::types::I16F16;
use evenkeel::{Backend, Config, ConfigError, Controller, Input, Settings, Slim16, Status};

pub use parse::{Kind, MARKER, MAX_REPLAY_BYTES, Record, ReplayError, parse, read};

use crate::boundary::Boundary;
use crate::outcome::BackendKind;
use crate::report::CAUTION;

/// A backend value as the log carries it.
pub trait Raw: Backend {
    /// Parses the raw text form.
    fn from_raw(text: &str) -> Option<Self>;
    /// The raw text form.
    fn raw(self) -> String;
}

impl Raw for I16F16 {
    fn from_raw(text: &str) -> Option<Self> {
        text.parse::<i32>().ok().map(I16F16::from_bits)
    }
    fn raw(self) -> String {
        self.to_bits().to_string()
    }
}

impl Raw for Slim16 {
    fn from_raw(text: &str) -> Option<Self> {
        text.parse::<i16>().ok().map(Slim16::from_raw)
    }
    fn raw(self) -> String {
        Slim16::raw(self).to_string()
    }
}

impl Raw for f32 {
    fn from_raw(text: &str) -> Option<Self> {
        let h = text.strip_prefix("0x")?;
        u32::from_str_radix(h, 16).ok().map(f32::from_bits)
    }
    fn raw(self) -> String {
        format!("{:#010x}", self.to_bits())
    }
}

impl Raw for f64 {
    fn from_raw(text: &str) -> Option<Self> {
        let h = text.strip_prefix("0x")?;
        u64::from_str_radix(h, 16).ok().map(f64::from_bits)
    }
    fn raw(self) -> String {
        format!("{:#018x}", self.to_bits())
    }
}

/// One compared sample where the host and the device differ.
#[derive(Debug, Clone, PartialEq)]
pub struct Difference {
    /// Record number in the log (0-based, over every record).
    pub record: usize,
    /// The sample index the record carries (`k`).
    pub k: u64,
    /// Source line of the record.
    pub line: usize,
    /// The device's command (raw, physical through the settings' scaling).
    pub device: (String, f64),
    /// The host's command.
    pub host: (String, f64),
    /// The device's status bits.
    pub device_status: Status,
    /// The host's status bits.
    pub host_status: Status,
    /// The host controller's integral before the step (raw, physical).
    pub integral: (String, f64),
    /// The host controller's last command before the step.
    pub last_command: (String, f64),
    /// The inputs of the record (`r`, `y`, `a`, `f` as written).
    pub inputs: String,
}

/// The outcome of a replay.
#[derive(Debug, Clone, PartialEq)]
pub struct Replay {
    /// The log file.
    pub file: String,
    /// Backend.
    pub backend: BackendKind,
    /// Records in the log.
    pub records: usize,
    /// Compared samples (`step` and `track` records).
    pub compared: usize,
    /// The first difference, if any.
    pub first: Option<Difference>,
    /// Compared samples that differ.
    pub differing: usize,
    /// Largest |command difference| (physical) over the log.
    pub largest_difference: f64,
    /// Sample index of the last difference.
    pub last_difference: Option<u64>,
    /// Compared samples from the last difference to the end that agree.
    pub agreeing_tail: usize,
}

impl Replay {
    /// `true` when every compared sample is bit-exact.
    #[must_use]
    pub fn bit_exact(&self) -> bool {
        self.differing == 0
    }
}

/// Why a replay cannot run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum RunReplayError {
    /// The settings are refused by the backend.
    #[error("the settings are refused by the {0} backend: {1}")]
    Config(&'static str, ConfigError),
    /// A record's value cannot be read in the backend's raw form.
    #[error("{0}")]
    Log(ReplayError),
}

fn value<B: Raw>(file: &str, r: &Record, field: &str, text: &str) -> Result<B, RunReplayError> {
    B::from_raw(text).ok_or_else(|| {
        RunReplayError::Log(ReplayError {
            file: file.to_owned(),
            line: Some(r.line),
            message: format!(
                "`{field}={text}` is not a raw {} value ({})",
                B::NAME,
                match B::NAME {
                    "fixed" => "a 32-bit integer, the Q16.16 bits",
                    "slim16" => "a 16-bit integer, −32768 … 32767, the raw value",
                    "f32" => "0x and 8 hex digits, the IEEE 754 bits",
                    _ => "0x and 16 hex digits, the IEEE 754 bits",
                }
            ),
        })
    })
}

fn optional<B: Raw>(
    file: &str,
    r: &Record,
    field: &str,
    text: Option<&str>,
) -> Result<Option<B>, RunReplayError> {
    match text {
        None | Some("-") => Ok(None),
        Some(t) => value(file, r, field, t).map(Some),
    }
}

/// Replays `records` through a host controller configured from `settings`
/// on backend `B`.
///
/// # Errors
/// [`RunReplayError`] for settings the backend refuses or a value the
/// backend cannot read.
pub fn replay<B: Raw>(
    file: &str,
    settings: &Settings,
    records: &[Record],
    backend: BackendKind,
) -> Result<Replay, RunReplayError> {
    let config = Config::<B>::try_new(settings).map_err(|e| RunReplayError::Config(B::NAME, e))?;
    let mut pi = Controller::new(config);
    let io = Boundary::new(settings.scaling);
    let mut out = Replay {
        file: file.to_owned(),
        backend,
        records: records.len(),
        compared: 0,
        first: None,
        differing: 0,
        largest_difference: 0.0,
        last_difference: None,
        agreeing_tail: 0,
    };
    for (n, r) in records.iter().enumerate() {
        let field = |name: &str| {
            r.fields
                .iter()
                .find(|(k, _)| k == name)
                .map(|(_, v)| v.as_str())
        };
        let need = |name: &str| {
            field(name).ok_or_else(|| {
                RunReplayError::Log(ReplayError {
                    file: file.to_owned(),
                    line: Some(r.line),
                    message: format!("a `{}` record needs `{name}=`", r.kind.name()),
                })
            })
        };
        match r.kind {
            Kind::Reset => pi.reset(),
            Kind::Engage => {
                let v: B = value(file, r, "v", need("v")?)?;
                pi.engage(v);
            }
            Kind::Step | Kind::Track => {
                let setpoint: B = value(file, r, "r", need("r")?)?;
                let measurement: B = value(file, r, "y", need("y")?)?;
                let mut input = Input::new(setpoint, measurement);
                if let Some(a) = optional::<B>(file, r, "a", field("a"))? {
                    input = input.with_applied(a);
                }
                if let Some(f) = optional::<B>(file, r, "f", field("f"))? {
                    input = input.with_feed_forward(f);
                }
                let device: B = value(file, r, "u", need("u")?)?;
                let status_text = need("s")?;
                let device_status = status_text
                    .strip_prefix("0x")
                    .and_then(|h| u16::from_str_radix(h, 16).ok())
                    .map(Status::from_bits)
                    .ok_or_else(|| {
                        RunReplayError::Log(ReplayError {
                            file: file.to_owned(),
                            line: Some(r.line),
                            message: format!(
                                "`s={status_text}` is not status bits (0x and up to 4 hex digits)"
                            ),
                        })
                    })?;
                let (integral, last) = (pi.integral(), pi.last_command());
                let host = if r.kind == Kind::Step {
                    pi.step_with(&input)
                } else {
                    let v: B = value(file, r, "v", need("v")?)?;
                    pi.track(&input, v)
                };
                out.compared += 1;
                let same = host.command.raw() == device.raw() && host.status == device_status;
                if same {
                    out.agreeing_tail += 1;
                } else {
                    out.differing += 1;
                    out.agreeing_tail = 0;
                    out.last_difference = Some(r.k);
                    let d = (io.commanded(host.command) - io.commanded(device)).abs();
                    if d.is_finite() {
                        out.largest_difference = out.largest_difference.max(d);
                    }
                    if out.first.is_none() {
                        out.first = Some(Difference {
                            record: n,
                            k: r.k,
                            line: r.line,
                            device: (device.raw(), io.commanded(device)),
                            host: (host.command.raw(), io.commanded(host.command)),
                            device_status,
                            host_status: host.status,
                            integral: (integral.raw(), io.commanded(integral)),
                            last_command: (last.raw(), io.commanded(last)),
                            inputs: ["r", "y", "a", "f", "v"]
                                .iter()
                                .filter_map(|k| field(k).map(|v| format!("{k}={v}")))
                                .collect::<Vec<_>>()
                                .join(" "),
                        });
                    }
                }
            }
        }
    }
    Ok(out)
}

/// Replays on the backend `kind`.
///
/// # Errors
/// As [`replay`].
pub fn replay_on(
    kind: BackendKind,
    file: &str,
    settings: &Settings,
    records: &[Record],
) -> Result<Replay, RunReplayError> {
    match kind {
        BackendKind::Fixed => replay::<I16F16>(file, settings, records, kind),
        BackendKind::Slim16 => replay::<Slim16>(file, settings, records, kind),
        BackendKind::F32 => replay::<f32>(file, settings, records, kind),
        BackendKind::F64 => replay::<f64>(file, settings, records, kind),
    }
}

fn names(s: Status) -> String {
    let v: Vec<&str> = s.names().collect();
    if v.is_empty() {
        "-".into()
    } else {
        v.join("|")
    }
}

/// The readable report.
#[must_use]
pub fn report(r: &Replay) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "replay of {} on the {} backend",
        r.file,
        r.backend.name()
    );
    if r.bit_exact() {
        let _ = writeln!(
            out,
            "  bit-exact over {} samples ({} records): every command and status bit equal",
            r.compared, r.records
        );
    } else if let Some(d) = &r.first {
        let _ = writeln!(
            out,
            "  DIFFERS: {} of {} samples; the first at record {} (line {}, k = {}):",
            r.differing, r.compared, d.record, d.line, d.k
        );
        let _ = writeln!(out, "    inputs        {}", d.inputs);
        let _ = writeln!(
            out,
            "    device        u = {} ({})   status {:#06x} {}",
            d.device.0,
            d.device.1,
            d.device_status.bits(),
            names(d.device_status)
        );
        let _ = writeln!(
            out,
            "    host          u = {} ({})   status {:#06x} {}",
            d.host.0,
            d.host.1,
            d.host_status.bits(),
            names(d.host_status)
        );
        let _ = writeln!(
            out,
            "    host state before the step: integral {} ({}), last command {} ({})",
            d.integral.0, d.integral.1, d.last_command.0, d.last_command.1
        );
        let _ = writeln!(
            out,
            "  afterwards: largest command difference {}, last difference at k = {}, {} agreeing samples after it{}",
            r.largest_difference,
            r.last_difference.unwrap_or(d.k),
            r.agreeing_tail,
            if r.agreeing_tail > 0 {
                " (the trajectories met again)"
            } else {
                " (they did not meet again)"
            }
        );
    }
    let _ = writeln!(out, "  {CAUTION}");
    out
}

/// The records a device running `s`'s controller (backend `B`) would log
/// in a plain closed loop with the scenario's plant, sensor and reference
/// (no overrides, faults or disturbance profiles): an `engage` at the
/// scenario's initial command, then one `step` per period. For tests and
/// for trying `replay` without hardware.
///
/// # Errors
/// A message if the plant, sensor or settings cannot be built.
pub fn synthesize<B: Raw>(s: &crate::Scenario) -> Result<String, String> {
    let settings = s.settings_for::<B>();
    let config = Config::<B>::try_new(&settings).map_err(|e| e.to_string())?;
    let io = Boundary::new(settings.scaling);
    let mut pi = Controller::new(config);
    let mut plant = s.build_plant().map_err(|e| e.to_string())?;
    let mut sensor = s.build_sensor().map_err(|e| e.to_string())?;
    let ts = s.controller.period_s;
    #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
    let n = (s.setup.duration_s / ts).round() as u64;
    let mut out = format!(
        "# {} records of scenario `{}` ({}), made on the host\n",
        B::NAME,
        s.name,
        s.source
    );
    let u0: B = io.command(s.setup.initial_command.unwrap_or(0.0));
    pi.engage(u0);
    let _ = writeln!(out, "{MARKER} engage k=0 v={}", u0.raw());
    let env = crate::plant::Environment::default();
    for k in 0..n {
        let t = crate::metrics::sample_time_s(usize::try_from(k).unwrap_or(usize::MAX), ts);
        let y_true = plant.output();
        let y = sensor.as_mut().map_or(y_true, |m| m.measure(y_true));
        let input = Input::new(io.setpoint(s.setup.reference.at(t)), io.measurement(y));
        let o = pi.step_with(&input);
        let _ = writeln!(
            out,
            "{MARKER} step k={k} r={} y={} a=- f={} u={} s={:#06x}",
            input.setpoint.raw(),
            input.measurement.raw(),
            input.feed_forward.raw(),
            o.command.raw(),
            o.status.bits()
        );
        plant.advance(io.drive(o.command), &env, ts);
    }
    Ok(out)
}
