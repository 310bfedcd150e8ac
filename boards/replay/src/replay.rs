//! Replay every scenario of the embedded vector files and compare each
//! output bit for bit.

use evenkeel::fixed::types::I16F16;
use evenkeel::{Backend, Config, Controller, Input, Layout, Output, Schedule, Slim16};

use crate::format::{File, FormatError, Op, Scenario, Step};
use crate::probe;
use crate::tables::{ConfigVisitor, SCHEDULE_ROWS, golden, schedule, slim16, slim16_schedule};

/// A signal as the vector files store it: Q16.16 bits, or a 16-bit raw
/// value sign-extended (format versions 3 and 4).
pub trait Word: Backend {
    /// The signal stored as `word`; `None` if it does not fit the backend.
    fn from_word(word: i32) -> Option<Self>;
    /// The stored form of the signal.
    fn word(self) -> i32;
}

impl Word for I16F16 {
    fn from_word(word: i32) -> Option<Self> {
        Some(I16F16::from_bits(word))
    }
    fn word(self) -> i32 {
        self.to_bits()
    }
}

impl Word for Slim16 {
    fn from_word(word: i32) -> Option<Self> {
        i16::try_from(word).ok().map(Slim16::from_raw)
    }
    fn word(self) -> i32 {
        i32::from(self.raw())
    }
}

/// One output that differs from the vector.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Mismatch<'a> {
    /// Scenario name.
    pub scenario: &'a str,
    /// Which configuration ran it: [`RUN_TIME`] or [`COMPILE_TIME`].
    pub layout: &'static str,
    /// Step index within the scenario, from 0.
    pub step: u16,
    /// Expected command, as stored ([`Word::word`]).
    pub want_command: i32,
    /// Command produced here, as stored.
    pub got_command: i32,
    /// Expected status bits.
    pub want_status: u16,
    /// Status bits produced here.
    pub got_status: u16,
}

/// Name of the pass with the run-time configuration (`Config<B>`).
pub const RUN_TIME: &str = "run-time config";
/// Name of the pass with the compile-time layout (`Config<B, L>`).
pub const COMPILE_TIME: &str = "compile-time layout";

/// Where the replay sends what it finds (semihosting text on a board, a
/// collecting sink in the host test).
pub trait Report {
    /// A step whose output differs.
    fn mismatch(&mut self, mismatch: &Mismatch<'_>);
    /// A scenario finished with one configuration.
    fn scenario(&mut self, name: &str, layout: &'static str, steps: u32, mismatches: u32);
}

/// Totals of a replay (both passes: every scenario runs once with its
/// run-time configuration and once with its compile-time layout).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Summary {
    /// Scenario runs (twice the scenarios in the file).
    pub scenarios: u32,
    /// Steps replayed, over both passes.
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
    /// name, or a schedule step in a scenario without a schedule).
    Tables,
    /// A retune refers to a gain the scenario does not have, or the
    /// controller refused it.
    GainIndex,
}

impl ReplayError {
    /// A fixed one-line description.
    #[must_use]
    pub const fn describe(self) -> &'static str {
        match self {
            Self::Format(e) => e.describe(),
            Self::Tables => "vector file and compiled tables disagree",
            Self::GainIndex => "retune gain index out of range, or gain refused",
        }
    }
}

impl From<FormatError> for ReplayError {
    fn from(e: FormatError) -> Self {
        Self::Format(e)
    }
}

/// The replay of one generated tables module (each has its own layout
/// types, so the loop is written once here and expanded per module).
macro_rules! replay_file {
    ($tables:ident, $report:expr) => {{
        let report = $report;
        let file = File::open($tables::VECTORS)?;
        if usize::from(file.scenario_count) != $tables::CONFIGS.len() {
            return Err(ReplayError::Tables);
        }
        let mut summary = Summary::default();
        let tables = $tables::NAMES
            .iter()
            .zip($tables::CONFIGS.iter())
            .zip($tables::GAINS.iter().zip($tables::SCHEDULES.iter()));
        for (index, (scenario, ((&name, &config), (&gains, &table)))) in
            file.scenarios().zip(tables).enumerate()
        {
            let scenario = scenario?;
            if scenario.name != name.as_bytes() {
                return Err(ReplayError::Tables);
            }
            let mut pass = Pass {
                scenario,
                name,
                gains,
                report: &mut *report,
                summary: &mut summary,
                result: Ok(()),
            };
            pass.replay_with(config, table, RUN_TIME);
            if !$tables::visit_layout(index, &mut pass) {
                return Err(ReplayError::Tables);
            }
            pass.result?;
        }
        Ok(summary)
    }};
}

/// Replay the embedded golden vectors (`golden.ekv`), reporting each
/// mismatch as it is found: every scenario with its run-time configuration,
/// then with its compile-time layout.
///
/// # Errors
/// A [`ReplayError`] if the file cannot be read to the end; mismatches are
/// not errors (see [`Summary::mismatches`]).
pub fn run(report: &mut impl Report) -> Result<Summary, ReplayError> {
    replay_file!(golden, report)
}

/// Replay the embedded schedule set (`schedule.ekv`): every step applies
/// the scenario's compile-time schedule with `Controller::schedule`.
///
/// # Errors
/// As [`run`].
pub fn run_schedules(report: &mut impl Report) -> Result<Summary, ReplayError> {
    replay_file!(schedule, report)
}

/// Replay the embedded 16-bit set (`slim16.ekv`, format version 3) through
/// the `Slim16` backend, each scenario with its run-time configuration and
/// with its compile-time layout.
///
/// # Errors
/// As [`run`].
pub fn run_slim16(report: &mut impl Report) -> Result<Summary, ReplayError> {
    replay_file!(slim16, report)
}

/// Replay the embedded 16-bit schedule set (`slim16_schedule.ekv`, format
/// version 4): every schedule step applies the scenario's compile-time
/// schedule (`schedule!(Slim16: …)`) with `Controller::schedule`.
///
/// # Errors
/// As [`run`].
pub fn run_slim16_schedules(report: &mut impl Report) -> Result<Summary, ReplayError> {
    replay_file!(slim16_schedule, report)
}

/// One scenario, replayed with whatever configuration it is handed.
struct Pass<'a, 'r, B: Backend, R: Report> {
    scenario: Scenario<'a>,
    name: &'a str,
    gains: &'a [(B::Coef, B::Coef)],
    report: &'r mut R,
    summary: &'r mut Summary,
    result: Result<(), ReplayError>,
}

impl<B: Word, R: Report> Pass<'_, '_, B, R> {
    fn replay_with<L: Layout>(
        &mut self,
        config: Config<B, L>,
        table: Option<&Schedule<B, SCHEDULE_ROWS, L>>,
        layout: &'static str,
    ) {
        if self.result.is_err() {
            return;
        }
        self.result = self.replay(config, table, layout);
    }

    fn replay<L: Layout>(
        &mut self,
        config: Config<B, L>,
        table: Option<&Schedule<B, SCHEDULE_ROWS, L>>,
        layout: &'static str,
    ) -> Result<(), ReplayError> {
        let mut pi = probe::new(config);
        let mut steps: u32 = 0;
        let mut mismatches: u32 = 0;
        for (index, step) in (0..=u16::MAX).zip(self.scenario.steps()) {
            let step = step?;
            let out = apply(&mut pi, self.gains, table, &step)?;
            let got_command = out.command.word();
            let got_status = out.status.bits();
            if got_command != step.command || got_status != step.status {
                mismatches = mismatches.saturating_add(1);
                self.report.mismatch(&Mismatch {
                    scenario: self.name,
                    layout,
                    step: index,
                    want_command: step.command,
                    got_command,
                    want_status: step.status,
                    got_status,
                });
            }
            steps = steps.saturating_add(1);
        }
        self.report.scenario(self.name, layout, steps, mismatches);
        let s = &mut *self.summary;
        s.scenarios = s.scenarios.saturating_add(1);
        s.steps = s.steps.saturating_add(steps);
        s.mismatches = s.mismatches.saturating_add(mismatches);
        Ok(())
    }
}

impl<B: Word, R: Report> ConfigVisitor<B> for Pass<'_, '_, B, R> {
    fn visit<L: Layout>(
        &mut self,
        config: Config<B, L>,
        table: Option<&'static Schedule<B, SCHEDULE_ROWS, L>>,
    ) {
        self.replay_with(config, table, COMPILE_TIME);
    }
}

/// Perform one recorded step (the vector generator does exactly the same).
///
/// A step without feed-forward or applied value goes through
/// [`Controller::step`], any other through [`Controller::step_with`].
///
/// # Errors
/// [`ReplayError::GainIndex`] for a retune to a gain not in `gains`;
/// [`FormatError::Range`] for a stored signal the backend cannot hold.
pub fn apply<B: Word, L: Layout>(
    pi: &mut Controller<B, L>,
    gains: &[(B::Coef, B::Coef)],
    table: Option<&Schedule<B, SCHEDULE_ROWS, L>>,
    step: &Step,
) -> Result<Output<B>, ReplayError> {
    let q = |word| B::from_word(word).ok_or(ReplayError::Format(FormatError::Range));
    let (r, y) = (q(step.setpoint)?, q(step.measurement)?);
    let mut input = Input::new(r, y).with_feed_forward(q(step.feed_forward)?);
    if let Some(applied) = step.applied {
        input = input.with_applied(q(applied)?);
    }
    let plain = step.feed_forward == 0 && step.applied.is_none();
    let run = |pi: &mut Controller<B, L>| {
        if plain {
            probe::step(pi, r, y)
        } else {
            probe::step_with(pi, &input)
        }
    };
    Ok(match step.op {
        Op::Step => run(pi),
        Op::Engage { actuator } => {
            probe::engage(pi, q(actuator)?);
            run(pi)
        }
        Op::Track { actuator } => probe::track(pi, &input, q(actuator)?),
        Op::Reset => {
            probe::reset(pi);
            run(pi)
        }
        Op::Retune { index } => {
            let index = usize::try_from(index).map_err(|_| ReplayError::GainIndex)?;
            let &(kp, ki_ts) = gains.get(index).ok_or(ReplayError::GainIndex)?;
            if !probe::retune(pi, kp, ki_ts) {
                return Err(ReplayError::GainIndex);
            }
            run(pi)
        }
        Op::Schedule { at } => {
            let table = table.ok_or(ReplayError::Tables)?;
            probe::schedule(pi, table, q(at)?);
            run(pi)
        }
    })
}
