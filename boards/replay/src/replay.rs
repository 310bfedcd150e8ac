//! Replay every scenario of the embedded vector file and compare each
//! output bit for bit.

use evenkeel::fixed::types::I16F16;
use evenkeel::{Controller, FixedCoef, Input, Output};

use crate::format::{File, FormatError, Op, Step};
use crate::probe;
use crate::tables::{CONFIGS, GAINS, NAMES, VECTORS};

/// One output that differs from the vector.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Mismatch<'a> {
    /// Scenario name.
    pub scenario: &'a str,
    /// Step index within the scenario, from 0.
    pub step: u16,
    /// Expected command, Q16.16 bits.
    pub want_command: i32,
    /// Command produced here, Q16.16 bits.
    pub got_command: i32,
    /// Expected status bits.
    pub want_status: u16,
    /// Status bits produced here.
    pub got_status: u16,
}

/// Where the replay sends what it finds (semihosting text on a board, a
/// collecting sink in the host test).
pub trait Report {
    /// A step whose output differs.
    fn mismatch(&mut self, mismatch: &Mismatch<'_>);
    /// A scenario finished.
    fn scenario(&mut self, name: &str, steps: u32, mismatches: u32);
}

/// Totals of a replay.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Summary {
    /// Scenarios replayed.
    pub scenarios: u32,
    /// Steps replayed.
    pub steps: u32,
    /// Steps whose command or status differ.
    pub mismatches: u32,
}

/// Why a replay could not run to the end.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ReplayError {
    /// The vector file is malformed.
    Format(FormatError),
    /// The file and the compile-time tables disagree (scenario count or
    /// name).
    Tables,
    /// A retune refers to a gain the scenario does not have.
    GainIndex,
}

impl ReplayError {
    /// A fixed one-line description.
    #[must_use]
    pub const fn describe(self) -> &'static str {
        match self {
            Self::Format(e) => e.describe(),
            Self::Tables => "vector file and compiled tables disagree",
            Self::GainIndex => "retune gain index out of range",
        }
    }
}

impl From<FormatError> for ReplayError {
    fn from(e: FormatError) -> Self {
        Self::Format(e)
    }
}

/// Replay the embedded vector file, reporting each mismatch as it is found.
///
/// # Errors
/// A [`ReplayError`] if the file cannot be read to the end; mismatches are
/// not errors (see [`Summary::mismatches`]).
pub fn run(report: &mut impl Report) -> Result<Summary, ReplayError> {
    let file = File::open(VECTORS)?;
    if usize::from(file.scenario_count) != CONFIGS.len() {
        return Err(ReplayError::Tables);
    }
    let mut summary = Summary::default();
    let tables = NAMES.iter().zip(CONFIGS.iter()).zip(GAINS.iter());
    for (scenario, ((&name, &config), &gains)) in file.scenarios().zip(tables) {
        let scenario = scenario?;
        if scenario.name != name.as_bytes() {
            return Err(ReplayError::Tables);
        }
        let mut pi = probe::new(config);
        let mut steps: u32 = 0;
        let mut mismatches: u32 = 0;
        for (index, step) in (0..=u16::MAX).zip(scenario.steps()) {
            let step = step?;
            let out = apply(&mut pi, gains, &step)?;
            let got_command = out.command.to_bits();
            let got_status = out.status.bits();
            if got_command != step.command || got_status != step.status {
                mismatches = mismatches.saturating_add(1);
                report.mismatch(&Mismatch {
                    scenario: name,
                    step: index,
                    want_command: step.command,
                    got_command,
                    want_status: step.status,
                    got_status,
                });
            }
            steps = steps.saturating_add(1);
        }
        report.scenario(name, steps, mismatches);
        summary.scenarios = summary.scenarios.saturating_add(1);
        summary.steps = summary.steps.saturating_add(steps);
        summary.mismatches = summary.mismatches.saturating_add(mismatches);
    }
    Ok(summary)
}

/// Perform one recorded step (the vector generator does exactly the same).
///
/// A step without feed-forward or applied value goes through
/// [`Controller::step`], any other through [`Controller::step_with`].
///
/// # Errors
/// [`ReplayError::GainIndex`] for a retune to a gain not in `gains`.
pub fn apply(
    pi: &mut Controller<I16F16>,
    gains: &[(FixedCoef, FixedCoef)],
    step: &Step,
) -> Result<Output<I16F16>, ReplayError> {
    let q = I16F16::from_bits;
    let (r, y) = (q(step.setpoint), q(step.measurement));
    let mut input = Input::new(r, y).with_feed_forward(q(step.feed_forward));
    if let Some(applied) = step.applied {
        input = input.with_applied(q(applied));
    }
    let plain = step.feed_forward == 0 && step.applied.is_none();
    let run = |pi: &mut Controller<I16F16>| {
        if plain {
            probe::step(pi, r, y)
        } else {
            probe::step_with(pi, &input)
        }
    };
    Ok(match step.op {
        Op::Step => run(pi),
        Op::Engage { actuator } => {
            probe::engage(pi, q(actuator));
            run(pi)
        }
        Op::Track { actuator } => probe::track(pi, &input, q(actuator)),
        Op::Reset => {
            probe::reset(pi);
            run(pi)
        }
        Op::Retune { index } => {
            let index = usize::try_from(index).map_err(|_| ReplayError::GainIndex)?;
            let &(kp, ki_ts) = gains.get(index).ok_or(ReplayError::GainIndex)?;
            probe::retune(pi, kp, ki_ts);
            run(pi)
        }
    })
}
