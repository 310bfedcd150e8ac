//! Run a scenario on the host and record every input and output bit.

use evenkeel::fixed::types::I16F16;
use evenkeel::{
    Breakpoint, Config, ConfigError, Controller, FixedCoef, Input, Output, Schedule, Settings,
    SlimCoef,
};

/// Breakpoints a scenario's gain schedule may have.
pub const SCHEDULE_ROWS: usize = 4;

/// What happens before (or instead of) the plain step; the replay does the
/// same (`boards/replay/src/replay.rs`, `apply`).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum Op {
    /// Plain step.
    #[default]
    Step,
    /// `engage(actuator)`, then step.
    Engage(i32),
    /// `track(input, actuator)`.
    Track(i32),
    /// `reset()`, then step.
    Reset,
    /// Retune to gain pair `index` of the scenario's table, then step.
    Retune(u32),
    /// `schedule(&table, at)` with the scenario's breakpoint rows, then
    /// step (format version 2).
    Schedule(i32),
}

/// A stored coefficient, `mantissa · 2^-shift`, of either fixed backend
/// (a 16-bit mantissa sign-extended).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Gain {
    /// Mantissa.
    pub mantissa: i32,
    /// Shift.
    pub shift: u32,
}

impl From<FixedCoef> for Gain {
    fn from(c: FixedCoef) -> Self {
        Self {
            mantissa: c.mantissa(),
            shift: c.shift(),
        }
    }
}

impl From<SlimCoef> for Gain {
    fn from(c: SlimCoef) -> Self {
        Self {
            mantissa: i32::from(c.mantissa()),
            shift: c.shift(),
        }
    }
}

/// One recorded step; signals are Q16.16 bits (16-bit raw values,
/// sign-extended, in the 16-bit set).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Recorded {
    /// Operation.
    pub op: Op,
    /// Setpoint.
    pub setpoint: i32,
    /// Measurement.
    pub measurement: i32,
    /// Feed-forward.
    pub feed_forward: i32,
    /// Applied value of the previous command.
    pub applied: Option<i32>,
    /// Command produced.
    pub command: i32,
    /// Status bits produced.
    pub status: u16,
}

/// A finished recording: what the vector file stores for one scenario.
#[derive(Clone, Debug)]
pub struct Recording {
    /// Name.
    pub name: String,
    /// Settings of the initial configuration.
    pub settings: Settings,
    /// Retune gains (Kp, Ki·Ts), in order of first use.
    pub gains: Vec<(Gain, Gain)>,
    /// Breakpoint rows of the schedule applied by [`Op::Schedule`] steps
    /// (empty in the golden set).
    pub rows: Vec<Breakpoint>,
    /// Steps.
    pub steps: Vec<Recorded>,
}

impl Recording {
    /// The index of gain pair (`kp`, `ki_ts`) in the retune table, added
    /// at the end if it is new.
    pub fn gain_index(&mut self, kp: Gain, ki_ts: Gain) -> u32 {
        let index = match self.gains.iter().position(|g| *g == (kp, ki_ts)) {
            Some(i) => i,
            None => {
                self.gains.push((kp, ki_ts));
                self.gains.len() - 1
            }
        };
        u32::try_from(index).expect("small table")
    }
}

/// Inputs of one step beyond setpoint and measurement.
#[derive(Clone, Copy, Debug, Default)]
pub struct Extra {
    /// Feed-forward.
    pub feed_forward: I16F16,
    /// Applied value of the previous command.
    pub applied: Option<I16F16>,
    /// Operation.
    pub event: Event,
}

/// An operation on the controller, in signal units.
#[derive(Clone, Copy, Debug, Default)]
pub enum Event {
    /// Plain step.
    #[default]
    None,
    /// Engage at the actuator value, then step.
    Engage(I16F16),
    /// Track the actuator value.
    Track(I16F16),
    /// Reset, then step.
    Reset,
    /// Apply the gain schedule at this scheduling value, then step; the
    /// golden set records the gains it interpolated (a retune).
    Schedule(I16F16),
    /// Apply the gain schedule at this scheduling value, then step; recorded
    /// as the schedule operation itself (the schedule set).
    ScheduleOp(I16F16),
}

/// Drives a fixed-point controller and records it.
pub struct Recorder {
    pi: Controller<I16F16>,
    schedule: Option<Schedule<I16F16, SCHEDULE_ROWS>>,
    recording: Recording,
}

impl Recorder {
    /// A recorder for `settings`, with an optional gain schedule.
    ///
    /// # Errors
    /// The configuration error of `settings` or of the schedule.
    pub fn new(
        name: &str,
        settings: Settings,
        schedule: Option<Schedule<I16F16, SCHEDULE_ROWS>>,
    ) -> Result<Self, ConfigError> {
        Ok(Self {
            pi: Controller::new(Config::try_new(&settings)?),
            schedule,
            recording: Recording {
                name: name.to_owned(),
                settings,
                gains: Vec::new(),
                rows: Vec::new(),
                steps: Vec::new(),
            },
        })
    }

    /// The last command.
    pub fn last_command(&self) -> I16F16 {
        self.pi.last_command()
    }

    /// One step with setpoint `r` and measurement `y`.
    pub fn step(&mut self, r: I16F16, y: I16F16, extra: Extra) -> Output<I16F16> {
        let mut input = Input::new(r, y).with_feed_forward(extra.feed_forward);
        if let Some(a) = extra.applied {
            input = input.with_applied(a);
        }
        let plain = extra.feed_forward == I16F16::ZERO && extra.applied.is_none();
        let run = |pi: &mut Controller<I16F16>| {
            if plain {
                pi.step(r, y)
            } else {
                pi.step_with(&input)
            }
        };
        let (op, out) = match extra.event {
            Event::None => (Op::Step, run(&mut self.pi)),
            Event::Engage(a) => {
                self.pi.engage(a);
                (Op::Engage(a.to_bits()), run(&mut self.pi))
            }
            Event::Track(a) => (Op::Track(a.to_bits()), self.pi.track(&input, a)),
            Event::Reset => {
                self.pi.reset();
                (Op::Reset, run(&mut self.pi))
            }
            Event::Schedule(at) => {
                let table = self.schedule.as_ref().expect("scenario has a schedule");
                let gains = table.gains(at).expect("schedule has segments");
                self.pi.schedule(table, at);
                let index = self.recording.gain_index(gains.0.into(), gains.1.into());
                (Op::Retune(index), run(&mut self.pi))
            }
            Event::ScheduleOp(at) => {
                let table = self.schedule.as_ref().expect("scenario has a schedule");
                self.pi.schedule(table, at);
                (Op::Schedule(at.to_bits()), run(&mut self.pi))
            }
        };
        self.recording.steps.push(Recorded {
            op,
            setpoint: r.to_bits(),
            measurement: y.to_bits(),
            feed_forward: extra.feed_forward.to_bits(),
            applied: extra.applied.map(I16F16::to_bits),
            command: out.command.to_bits(),
            status: out.status.bits(),
        });
        out
    }

    /// Record the schedule's breakpoint rows with the scenario (the
    /// schedule set stores them; the firmware builds its table from them).
    #[must_use]
    pub fn with_rows(mut self, rows: &[Breakpoint]) -> Self {
        self.recording.rows = rows.to_vec();
        self
    }

    /// The recording so far.
    pub fn finish(self) -> Recording {
        self.recording
    }
}
