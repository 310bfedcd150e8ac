//! Golden vectors: the committed file is what the generator produces today,
//! it decodes to the recorded steps, and replaying it through the controller
//! (with the same code the board firmwares run) gives every bit back.
//!
//! A failure of `committed_file_matches_generator` means the controller's
//! numbers (or a scenario) changed: if that is intended, regenerate with
//! `cargo run -p evenkeel-tests --bin make-vectors`, say why in the commit,
//! and run `boards/run`.

use std::path::PathBuf;

use evenkeel::Status;
use evenkeel_replay::format::{self, File, FormatError};
use evenkeel_replay::replay::{self, Mismatch, Report};
use evenkeel_tests::vectors::{self, Op};

fn committed() -> Vec<u8> {
    read(vectors::FILE)
}

fn read(file: &str) -> Vec<u8> {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("..")
        .join(file);
    std::fs::read(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// The schedule set is what the generator produces today (a failure means
/// the schedule's numbers changed: see the comment at the top).
#[test]
fn committed_schedule_file_matches_generator() {
    let fresh = vectors::generate_schedules().expect("scenarios are valid");
    assert!(
        fresh == read(vectors::SCHEDULE_FILE),
        "schedule vectors differ from the generator"
    );
    assert_eq!(fresh.get(4), Some(&2), "format version 2");
}

/// Regression (issue 12): a schedule applied each step on target linked
/// float routines and a panic path. The schedule set replays through
/// `Controller::schedule` with tables built at compile time, here exactly
/// as on the boards (where `boards/run` also checks the symbols and links
/// with the panic-path check).
#[test]
fn schedule_applied_every_step_replays_bit_exactly() {
    let mut report = Collect::default();
    let summary = replay::run_schedules(&mut report).expect("file reads to the end");
    assert!(report.mismatches.is_empty(), "{:#?}", report.mismatches);
    let recordings = vectors::schedules().expect("valid");
    assert_eq!(summary.scenarios as usize, 2 * recordings.len());
    assert_eq!(report.scenarios, report.compile_time);
    let scheduled = recordings
        .iter()
        .flat_map(|r| &r.steps)
        .filter(|s| matches!(s.op, Op::Schedule(_)))
        .count();
    assert!(scheduled > 1000, "only {scheduled} scheduled steps");
}

#[test]
fn committed_file_matches_generator() {
    let fresh = vectors::generate().expect("scenarios are valid");
    let file = committed();
    if fresh != file {
        let at = fresh.iter().zip(&file).position(|(a, b)| a != b);
        panic!(
            "golden vectors differ from the generator (first difference at byte {at:?}, \
             lengths {} vs {}): a numeric change? See the comment at the top of this test.",
            fresh.len(),
            file.len()
        );
    }
}

#[derive(Default)]
struct Collect {
    mismatches: Vec<String>,
    scenarios: Vec<(String, u32)>,
    compile_time: Vec<(String, u32)>,
}

impl Report for Collect {
    fn mismatch(&mut self, m: &Mismatch<'_>) {
        self.mismatches.push(format!("{m:?}"));
    }
    fn scenario(&mut self, name: &str, layout: &'static str, steps: u32, _mismatches: u32) {
        if layout == replay::RUN_TIME {
            self.scenarios.push((name.to_owned(), steps));
        } else {
            self.compile_time.push((name.to_owned(), steps));
        }
    }
}

#[test]
fn committed_file_replays_bit_exactly() {
    let mut report = Collect::default();
    let summary = replay::run(&mut report).expect("file reads to the end");
    assert!(
        report.mismatches.is_empty(),
        "{:#?}",
        &report.mismatches[..report.mismatches.len().min(20)]
    );
    let recordings = vectors::scenarios().expect("valid");
    // Every scenario twice: run-time configuration and compile-time layout.
    assert_eq!(summary.scenarios as usize, 2 * recordings.len());
    assert_eq!(report.scenarios, report.compile_time);
    for (rec, (name, steps)) in recordings.iter().zip(&report.scenarios) {
        assert_eq!((&rec.name, rec.steps.len()), (name, *steps as usize));
    }
    assert_eq!(summary.mismatches, 0);
}

#[test]
fn decoder_reads_what_the_encoder_wrote() {
    let recordings = vectors::scenarios().expect("valid");
    let bytes = vectors::encode(&recordings).expect("fits");
    let file = File::open(&bytes).expect("valid header");
    let mut count = 0;
    for (scenario, rec) in file.scenarios().zip(&recordings) {
        let scenario = scenario.expect("valid scenario");
        assert_eq!(scenario.name, rec.name.as_bytes());
        assert_eq!(f64::from_bits(scenario.settings.kp), rec.settings.kp);
        assert_eq!(scenario.gain_count(), rec.gains.len());
        for (i, (kp, ki)) in rec.gains.iter().enumerate() {
            let g = scenario.gain(i).expect("present");
            assert_eq!(
                (g.kp_mantissa, u32::from(g.kp_shift)),
                (kp.mantissa, kp.shift)
            );
            assert_eq!(
                (g.ki_ts_mantissa, u32::from(g.ki_ts_shift)),
                (ki.mantissa, ki.shift)
            );
        }
        let steps: Vec<_> = scenario
            .steps()
            .collect::<Result<_, _>>()
            .expect("valid steps");
        assert_eq!(steps.len(), rec.steps.len());
        for (got, want) in steps.iter().zip(&rec.steps) {
            let op = match want.op {
                Op::Step => format::Op::Step,
                Op::Engage(actuator) => format::Op::Engage { actuator },
                Op::Track(actuator) => format::Op::Track { actuator },
                Op::Reset => format::Op::Reset,
                Op::Retune(index) => format::Op::Retune { index },
                Op::Schedule(at) => format::Op::Schedule { at },
            };
            let want = format::Step {
                op,
                schedule_at: got.schedule_at,
                setpoint: want.setpoint,
                measurement: want.measurement,
                feed_forward: want.feed_forward,
                applied: want.applied,
                command: want.command,
                status: want.status,
            };
            assert_eq!(*got, want);
        }
        count += 1;
    }
    assert_eq!(count, recordings.len());
}

#[test]
fn damaged_files_are_refused() {
    let good = committed();
    let mut flipped = good.clone();
    let last = flipped.len() - 1;
    flipped[last] ^= 0x01;
    assert_eq!(File::open(&flipped).err(), Some(FormatError::Checksum));
    let mut bad_magic = good.clone();
    bad_magic[0] = b'X';
    assert_eq!(File::open(&bad_magic).err(), Some(FormatError::Magic));
    let mut bad_version = good.clone();
    bad_version[4] = 9;
    assert_eq!(
        File::open(&bad_version).err(),
        Some(FormatError::Version(9))
    );
    assert_eq!(File::open(&good[..7]).err(), Some(FormatError::Truncated));
    // A consistent checksum over a truncated body: the decoder reports the
    // cut instead of panicking.
    let mut cut = good[..good.len() - 5].to_vec();
    let sum = vectors::fnv1a(&cut[format::HEADER_LEN..]);
    cut[6..10].copy_from_slice(&sum.to_le_bytes());
    let file = File::open(&cut).expect("checksum matches");
    let failed = file.scenarios().any(|s| match s {
        Err(_) => true,
        Ok(s) => s.steps().any(|step| step.is_err()),
    });
    assert!(failed);
    // After the first error an iterator ends instead of reading on from a
    // position it no longer trusts.
    for scenario in file.scenarios() {
        let Ok(scenario) = scenario else { continue };
        let mut steps = scenario.steps();
        if steps.by_ref().any(|step| step.is_err()) {
            assert!(steps.next().is_none());
        }
    }
    let mut scenarios = file.scenarios();
    if scenarios.by_ref().any(|s| s.is_err()) {
        assert!(scenarios.next().is_none());
    }
    // Bytes after the last scenario, under a valid checksum.
    let mut extra = good.clone();
    extra.push(0);
    let sum = vectors::fnv1a(&extra[format::HEADER_LEN..]);
    extra[6..10].copy_from_slice(&sum.to_le_bytes());
    let file = File::open(&extra).expect("checksum matches");
    let last = file.scenarios().last();
    assert_eq!(last.and_then(Result::err), Some(FormatError::Trailing));
}

#[test]
fn vectors_cover_every_flag_and_operation() {
    let recordings = vectors::scenarios().expect("valid");
    let mut flags = 0u16;
    let mut ops = [false; 5];
    for step in recordings.iter().flat_map(|r| &r.steps) {
        flags |= step.status;
        let i = match step.op {
            Op::Step => 0,
            Op::Engage(_) => 1,
            Op::Track(_) => 2,
            Op::Reset => 3,
            Op::Retune(_) => 4,
            Op::Schedule(_) => continue,
        };
        ops[i] = true;
    }
    // NON_FINITE cannot happen with fixed point; every other flag must.
    let want = 0x07ff & !Status::NON_FINITE.bits();
    assert_eq!(
        flags & want,
        want,
        "missing flags: {}",
        Status::from_bits(want & !flags)
    );
    assert_eq!(ops, [true; 5]);
    let total: usize = recordings.iter().map(|r| r.steps.len()).sum();
    assert!(
        committed().len() < 48 * 1024,
        "keep the file small: it is embedded in M0 flash"
    );
    assert!(total > 4000);
}

// The 16-bit set (`slim16.ekv`, format version 3): the `Slim16` backend's
// own golden vectors.

/// The committed 16-bit set is what the generator produces today (a
/// failure means the 16-bit backend's numbers or a scenario changed: see
/// the comment at the top).
#[test]
fn committed_slim16_file_matches_generator() {
    let fresh = vectors::generate_slim16().expect("scenarios are valid");
    let file = read(vectors::SLIM16_FILE);
    let at = fresh.iter().zip(&file).position(|(a, b)| a != b);
    assert!(
        fresh == file,
        "16-bit vectors differ from the generator (first difference at byte {at:?}, \
         lengths {} vs {})",
        fresh.len(),
        file.len()
    );
    assert_eq!(fresh.get(4), Some(&3), "format version 3");
}

#[test]
fn slim16_file_replays_bit_exactly() {
    let mut report = Collect::default();
    let summary = replay::run_slim16(&mut report).expect("file reads to the end");
    assert!(
        report.mismatches.is_empty(),
        "{:#?}",
        &report.mismatches[..report.mismatches.len().min(20)]
    );
    let recordings = vectors::slim16_scenarios().expect("valid");
    assert_eq!(summary.scenarios as usize, 2 * recordings.len());
    assert_eq!(report.scenarios, report.compile_time);
    for (rec, (name, steps)) in recordings.iter().zip(&report.scenarios) {
        assert_eq!((&rec.name, rec.steps.len()), (name, *steps as usize));
    }
    let total: usize = recordings.iter().map(|r| r.steps.len()).sum();
    assert_eq!(summary.steps as usize, 2 * total);
    assert_eq!(summary.mismatches, 0);
}

/// The replay compares: a recording with one command changed by one LSB
/// is reported at that step, on both passes.
#[test]
fn slim16_replay_reports_a_changed_command() {
    use evenkeel::Controller;
    use evenkeel_replay::tables::slim16;
    let recordings = vectors::slim16_scenarios().expect("valid");
    let file = read(vectors::SLIM16_FILE);
    let file = File::open(&file).expect("valid");
    let (scenario, rec) = file
        .scenarios()
        .zip(&recordings)
        .next()
        .expect("a scenario");
    let scenario = scenario.expect("valid");
    let mut pi = Controller::new(slim16::CONFIGS[0]);
    let mut differ = 0;
    for (k, (step, want)) in scenario.steps().zip(&rec.steps).enumerate() {
        let mut step = step.expect("valid");
        if k == 77 {
            step.command = step.command.wrapping_add(1);
        }
        let out = replay::apply(&mut pi, slim16::GAINS[0], None, &step).expect("applies");
        assert_eq!(i32::from(out.command.raw()), want.command);
        differ += usize::from(i32::from(out.command.raw()) != step.command);
    }
    assert_eq!(differ, 1);
}

#[test]
fn slim16_decoder_reads_what_the_encoder_wrote() {
    let recordings = vectors::slim16_scenarios().expect("valid");
    let bytes = vectors::encode_version(&recordings, 3).expect("fits");
    let file = File::open(&bytes).expect("valid header");
    assert_eq!(file.version, 3);
    let mut count = 0;
    for (scenario, rec) in file.scenarios().zip(&recordings) {
        let scenario = scenario.expect("valid scenario");
        assert_eq!(scenario.name, rec.name.as_bytes());
        let (got, want) = (scenario.settings.scaling, rec.settings.scaling);
        assert_eq!(
            [
                got.measurement_per_unit,
                got.measurement_offset,
                got.command_per_unit,
                got.command_offset
            ],
            [
                want.measurement.per_unit.to_bits(),
                want.measurement.offset.to_bits(),
                want.command.per_unit.to_bits(),
                want.command.offset.to_bits()
            ]
        );
        assert_eq!(got.measurement_bits, want.measurement_bits);
        assert_eq!(got.flags & format::COMMAND_COUNTS != 0, want.command_counts);
        assert_eq!(f64::from_bits(scenario.settings.kp), rec.settings.kp);
        assert_eq!(scenario.row_count(), 0);
        for (i, (kp, ki)) in rec.gains.iter().enumerate() {
            let g = scenario.gain(i).expect("present");
            assert_eq!(
                (g.kp_mantissa, u32::from(g.kp_shift)),
                (kp.mantissa, kp.shift)
            );
            assert_eq!(
                (g.ki_ts_mantissa, u32::from(g.ki_ts_shift)),
                (ki.mantissa, ki.shift)
            );
        }
        let steps: Vec<_> = scenario
            .steps()
            .collect::<Result<_, _>>()
            .expect("valid steps");
        assert_eq!(steps.len(), rec.steps.len());
        for (got, want) in steps.iter().zip(&rec.steps) {
            assert_eq!(
                (got.setpoint, got.measurement, got.feed_forward),
                (want.setpoint, want.measurement, want.feed_forward)
            );
            assert_eq!(
                (got.applied, got.command, got.status),
                (want.applied, want.command, want.status)
            );
        }
        count += 1;
    }
    assert_eq!(count, recordings.len());
}

/// A version-3 file of one scenario with one step whose command is 8192
/// raw (delta varint `80 80 01`), and the offset of that varint.
fn one_step_slim16_file() -> (Vec<u8>, usize) {
    use evenkeel::Settings;
    use evenkeel_tests::vectors::{Recorded, Recording};
    let rec = Recording {
        name: "one".to_owned(),
        settings: Settings::new(0.01, 1.0, 1.0, -1.0, 1.0),
        gains: Vec::new(),
        rows: Vec::new(),
        steps: vec![Recorded {
            command: 8192,
            ..Recorded::default()
        }],
    };
    let bytes = vectors::encode_version(&[rec], 3).expect("fits");
    let at = bytes.len() - 3;
    assert_eq!(&bytes[at..], [0x80, 0x80, 0x01]);
    (bytes, at)
}

fn reseal(bytes: &mut [u8]) {
    let sum = vectors::fnv1a(&bytes[format::HEADER_LEN..]);
    bytes[6..10].copy_from_slice(&sum.to_le_bytes());
}

fn first_step(bytes: &[u8]) -> Result<format::Step, FormatError> {
    let file = File::open(bytes).expect("checksum matches");
    let scenario = file.scenarios().next().expect("one scenario")?;
    scenario.steps().next().expect("one step")
}

#[test]
fn slim16_files_with_wide_signals_or_schedules_are_refused() {
    let (good, at) = one_step_slim16_file();
    assert_eq!(first_step(&good).map(|s| s.command), Ok(8192));
    // Command 40 000: zigzag 80 000 = varint 80 f1 04, the same length.
    let mut wide = good.clone();
    wide[at..].copy_from_slice(&[0x80, 0xf1, 0x04]);
    reseal(&mut wide);
    assert_eq!(first_step(&wide), Err(FormatError::Range));
    // The schedule operation (5) belongs to version 2 only.
    let mut scheduled = good.clone();
    let head = at - 2; // head, measurement delta, command
    assert_eq!(scheduled[head], 0);
    scheduled[head] = 5;
    reseal(&mut scheduled);
    assert_eq!(first_step(&scheduled), Err(FormatError::Op(5)));
    // The encoder refuses what the decoder would.
    let mut recs = vectors::slim16_scenarios().expect("valid");
    recs.truncate(1);
    recs[0].steps[3].command = 40_000;
    assert!(matches!(
        vectors::encode_version(&recs, 3),
        Err(vectors::EncodeError::NotSixteenBit(_))
    ));
}

#[test]
fn slim16_vectors_cover_every_flag_operation_and_feature() {
    use evenkeel::AntiWindup;
    let recordings = vectors::slim16_scenarios().expect("valid");
    let mut flags = 0u16;
    let mut ops = [false; 5];
    for step in recordings.iter().flat_map(|r| &r.steps) {
        flags |= step.status;
        let i = match step.op {
            Op::Step => 0,
            Op::Engage(_) => 1,
            Op::Track(_) => 2,
            Op::Reset => 3,
            Op::Retune(_) => 4,
            Op::Schedule(_) => panic!("no schedule in the 16-bit set"),
        };
        ops[i] = true;
    }
    let want = 0x07ff & !Status::NON_FINITE.bits();
    assert_eq!(
        flags & want,
        want,
        "missing flags: {}",
        Status::from_bits(want & !flags)
    );
    assert_eq!(ops, [true; 5]);
    let settings: Vec<_> = recordings.iter().map(|r| r.settings).collect();
    let any = |f: &dyn Fn(&evenkeel::Settings) -> bool| settings.iter().any(f);
    assert!(any(&|s| s.slew_per_s.is_some()));
    assert!(any(&|s| s.filter_time_s.is_some()));
    assert!(any(&|s| s.deadband.is_some()));
    assert!(any(&|s| s.setpoint_weight != 1.0));
    assert!(any(&|s| matches!(
        s.anti_windup,
        AntiWindup::BackCalculation { .. }
    )));
    assert!(any(&|s| matches!(
        s.anti_windup,
        AntiWindup::ConditionalIntegration
    )));
    // Counts in and out, with offsets on either side, and raw units.
    assert!(any(&|s| s.scaling.measurement_bits == 12
        && s.scaling.measurement.offset != 0.0
        && s.scaling.command_counts));
    assert!(any(&|s| s.scaling.command.offset != 0.0));
    assert!(any(&|s| s.scaling.is_none()));
    // Every extreme raw value as an input.
    let inputs: Vec<i32> = recordings
        .iter()
        .flat_map(|r| &r.steps)
        .flat_map(|s| [s.setpoint, s.measurement, s.feed_forward])
        .collect();
    for x in [i32::from(i16::MIN), i32::from(i16::MAX), -1, 0] {
        assert!(inputs.contains(&x), "no input {x}");
    }
    let total: usize = recordings.iter().map(|r| r.steps.len()).sum();
    assert!(total > 5000, "only {total} steps");
    assert!(
        read(vectors::SLIM16_FILE).len() < 32 * 1024,
        "keep the file small: it is embedded in M0 flash"
    );
}

/// The sub-LSB scenario's command changes exactly where its comment works
/// out by hand (`tests/src/vectors/slim_scenarios.rs`, `sub_lsb_integral`):
/// 0 → 1 at step 256 from 1-LSB errors at Ki·Ts = 1e-4, held through 100
/// steps of a 1-LSB error that Ki·Ts = 3e-5 cannot integrate, 1 → 0 at
/// step 445 from a 3-LSB error that it can.
#[test]
fn slim16_sub_lsb_integral_moves_stalls_and_returns() {
    let recordings = vectors::slim16_scenarios().expect("valid");
    let rec = recordings
        .iter()
        .find(|r| r.name == "slim_sub_lsb_integral")
        .expect("present");
    let changes: Vec<(usize, i32)> = rec
        .steps
        .iter()
        .enumerate()
        .scan(0, |last, (k, s)| {
            let changed = s.command != *last;
            *last = s.command;
            Some(changed.then_some((k, s.command)))
        })
        .flatten()
        .collect();
    assert_eq!(changes, [(256, 1), (445, 0)]);
}

/// The committed 16-bit schedule set is what the generator produces today
/// (see the comment at the top).
#[test]
fn committed_slim16_schedule_file_matches_generator() {
    let fresh = vectors::generate_slim16_schedules().expect("scenarios are valid");
    assert!(
        fresh == read(vectors::SLIM16_SCHEDULE_FILE),
        "16-bit schedule vectors differ from the generator"
    );
    assert_eq!(fresh.get(4), Some(&4), "format version 4");
}

/// The 16-bit schedule set replays through `Controller::schedule` with
/// tables built at compile time (`schedule!(Slim16: …)`), as on the
/// boards, in both configurations; and it schedules across every segment,
/// at or beyond both ends (the extremes set has rows at both ends of the
/// 16-bit range), with gains that move.
#[test]
fn slim16_schedule_set_replays_bit_exactly_and_covers_the_table() {
    use evenkeel::{Schedule, Slim16};
    let mut report = Collect::default();
    let summary = replay::run_slim16_schedules(&mut report).expect("file reads to the end");
    assert!(report.mismatches.is_empty(), "{:#?}", report.mismatches);
    let recordings = vectors::slim16_schedules().expect("valid");
    assert_eq!(summary.scenarios as usize, 2 * recordings.len());
    assert_eq!(report.scenarios, report.compile_time);
    let mut scheduled = 0;
    for rec in &recordings {
        let table: Schedule<Slim16, 4> =
            Schedule::slim16(&rec.settings, &rec.rows).expect("valid rows");
        let (first, last) = (rec.rows[0].at, rec.rows[rec.rows.len() - 1].at);
        let mut kps = std::collections::BTreeSet::new();
        let (mut below, mut above, mut segments) = (0, 0, std::collections::BTreeSet::new());
        for step in &rec.steps {
            let Op::Schedule(at) = step.op else { continue };
            scheduled += 1;
            let at = f64::from(at);
            below += usize::from(at <= first);
            above += usize::from(at >= last);
            segments.insert(rec.rows.iter().filter(|r| r.at < at).count());
            let raw = i16::try_from(at as i32).expect("16 bits");
            let (kp, _) = table.gains(Slim16::from_raw(raw)).expect("non-empty");
            kps.insert((kp.mantissa(), kp.shift()));
        }
        assert!(
            below > 0 && above > 0,
            "{}: {below} below, {above} above",
            rec.name
        );
        assert!(
            (1..rec.rows.len()).all(|k| segments.contains(&k)),
            "{}: every segment, {segments:?}",
            rec.name
        );
        assert!(kps.len() > 50, "{}: only {} gains", rec.name, kps.len());
    }
    assert!(scheduled > 1000, "only {scheduled} scheduled steps");
}

/// Version 4 carries 16-bit scheduling values: one outside 16 bits is
/// refused, as any other signal there.
#[test]
fn slim16_schedule_files_with_wide_values_are_refused() {
    let mut recs = vectors::slim16_schedules().expect("valid");
    recs.truncate(1);
    let step = recs[0]
        .steps
        .iter_mut()
        .find(|s| matches!(s.op, Op::Schedule(_)))
        .expect("a schedule step");
    step.op = Op::Schedule(40_000);
    assert!(matches!(
        vectors::encode_version(&recs, 4),
        Err(vectors::EncodeError::NotSixteenBit(_))
    ));
    // The same file as version 3 is refused for its schedule.
    let recs = vectors::slim16_schedules().expect("valid");
    assert!(matches!(
        vectors::encode_version(&recs, 3),
        Err(vectors::EncodeError::NeedsSchedule(_))
    ));
}
