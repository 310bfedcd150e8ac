//! Run a 16-bit (`Slim16`) scenario on the host and record every input
//! and output bit, as [`super::record`] does for Q16.16.

use evenkeel::{
    Breakpoint, Config, ConfigError, Controller, Input, Output, Schedule, Settings, Slim16,
};

use super::record::{Op, Recorded, Recording, SCHEDULE_ROWS};

/// An operation on a 16-bit controller, in raw units.
#[derive(Clone, Copy, Debug, Default)]
pub enum SlimEvent {
    /// Plain step.
    #[default]
    None,
    /// Engage at the actuator value, then step.
    Engage(Slim16),
    /// Track the actuator value.
    Track(Slim16),
    /// Reset, then step.
    Reset,
    /// Retune to the gains of these physical values (the scenario's other
    /// settings unchanged), then step.
    Retune {
        /// Proportional gain, command units per measurement unit.
        kp: f64,
        /// Integral gain per second.
        ki_per_s: f64,
    },
    /// Apply the scenario's gain schedule at this raw scheduling value
    /// (`Controller::schedule`), then step; recorded as the schedule
    /// operation.
    Schedule(Slim16),
}

/// Inputs of one 16-bit step beyond setpoint and measurement.
#[derive(Clone, Copy, Debug, Default)]
pub struct SlimExtra {
    /// Feed-forward, raw.
    pub feed_forward: Slim16,
    /// Applied value of the previous command, raw.
    pub applied: Option<Slim16>,
    /// Operation.
    pub event: SlimEvent,
}

/// Drives a 16-bit controller and records it.
pub struct SlimRecorder {
    pi: Controller<Slim16>,
    schedule: Option<Schedule<Slim16, SCHEDULE_ROWS>>,
    recording: Recording,
}

impl SlimRecorder {
    /// A recorder for `settings` (with their scaling).
    ///
    /// # Errors
    /// The configuration error of `settings`.
    pub fn new(name: &str, settings: Settings) -> Result<Self, ConfigError> {
        Ok(Self {
            pi: Controller::new(Config::try_new(&settings)?),
            schedule: None,
            recording: Recording {
                name: name.to_owned(),
                settings,
                gains: Vec::new(),
                rows: Vec::new(),
                steps: Vec::new(),
            },
        })
    }

    /// A recorder for `settings` with the gain schedule of `rows`, built
    /// by the `const` builder as the firmware builds it; the rows are
    /// recorded with the scenario.
    ///
    /// # Errors
    /// The configuration error of `settings` or of the schedule.
    pub fn scheduled(
        name: &str,
        settings: Settings,
        rows: &[Breakpoint],
    ) -> Result<Self, ConfigError> {
        let table = Schedule::slim16(&settings, rows)?;
        let mut rec = Self::new(name, settings)?;
        rec.schedule = Some(table);
        rec.recording.rows = rows.to_vec();
        Ok(rec)
    }

    /// The last command.
    pub fn last_command(&self) -> Slim16 {
        self.pi.last_command()
    }

    /// One step with setpoint `r` and measurement `y`.
    ///
    /// # Errors
    /// The configuration error of a retune's gains.
    pub fn step(
        &mut self,
        r: Slim16,
        y: Slim16,
        extra: SlimExtra,
    ) -> Result<Output<Slim16>, ConfigError> {
        let mut input = Input::new(r, y).with_feed_forward(extra.feed_forward);
        if let Some(a) = extra.applied {
            input = input.with_applied(a);
        }
        // Exactly what the replay does (`boards/replay/src/replay.rs`).
        let plain = extra.feed_forward == Slim16::ZERO && extra.applied.is_none();
        let run = |pi: &mut Controller<Slim16>| {
            if plain {
                pi.step(r, y)
            } else {
                pi.step_with(&input)
            }
        };
        let word = |x: Slim16| i32::from(x.raw());
        let (op, out) = match extra.event {
            SlimEvent::None => (Op::Step, run(&mut self.pi)),
            SlimEvent::Engage(a) => {
                self.pi.engage(a);
                (Op::Engage(word(a)), run(&mut self.pi))
            }
            SlimEvent::Track(a) => (Op::Track(word(a)), self.pi.track(&input, a)),
            SlimEvent::Reset => {
                self.pi.reset();
                (Op::Reset, run(&mut self.pi))
            }
            SlimEvent::Retune { kp, ki_per_s } => {
                let settings = Settings {
                    kp,
                    ki_per_s,
                    ..self.recording.settings
                };
                let tuned = Config::<Slim16>::try_new(&settings)?;
                let (kp, ki_ts) = (tuned.kp(), tuned.ki_ts());
                // What the replay does with the stored pair.
                self.pi.retune(self.pi.config().with_gains(kp, ki_ts)?);
                let index = self.recording.gain_index(kp.into(), ki_ts.into());
                (Op::Retune(index), run(&mut self.pi))
            }
            SlimEvent::Schedule(at) => {
                let table = self.schedule.as_ref().ok_or(ConfigError::Schedule)?;
                self.pi.schedule(table, at);
                (Op::Schedule(word(at)), run(&mut self.pi))
            }
        };
        self.recording.steps.push(Recorded {
            op,
            setpoint: word(r),
            measurement: word(y),
            feed_forward: word(extra.feed_forward),
            applied: extra.applied.map(word),
            command: word(out.command),
            status: out.status.bits(),
        });
        Ok(out)
    }

    /// The recording so far.
    pub fn finish(self) -> Recording {
        self.recording
    }
}
