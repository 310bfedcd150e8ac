//! `evenkeel replay` end to end: logs of every backend replay bit-exactly;
//! one altered sample is caught at that sample, with both values, the
//! status bits and the host controller's state; bad logs are refused with
//! their line.

mod common;

use evenkeel::Slim16;
use evenkeel::fixed::types::I16F16;
use evenkeel_harness::Scenario;
use evenkeel_harness::replay::synthesize;

use common::{assert_exit, demo, evenkeel, text};

#[test]
fn logs_of_every_backend_replay_bit_exactly_and_an_altered_sample_is_caught() {
    let dir = tempfile::tempdir().unwrap();
    let pump = demo("irrigation_pump");
    let s = Scenario::from_path(&pump).unwrap();
    for backend in ["fixed", "slim16", "f32", "f64"] {
        let log = match backend {
            "fixed" => synthesize::<I16F16>(&s),
            "slim16" => synthesize::<Slim16>(&s),
            "f32" => synthesize::<f32>(&s),
            _ => synthesize::<f64>(&s),
        }
        .unwrap();
        let name = format!("{backend}.log");
        std::fs::write(dir.path().join(&name), &log).unwrap();
        let args = [
            "replay",
            &name,
            "--scenario",
            pump.to_str().unwrap(),
            "--backend",
            backend,
        ];
        let out = evenkeel(dir.path(), &args);
        assert_exit(&out, 0);
        assert!(
            text(&out.stdout).contains("bit-exact over 2400 samples"),
            "{}",
            text(&out.stdout)
        );
        // Alter the command of sample 700 by one step of its last digit.
        let lines: Vec<String> = log
            .lines()
            .map(|l| {
                if l.contains(" step k=700 ") {
                    let (head, tail) = l.split_once(" u=").unwrap();
                    let (u, rest) = tail.split_once(' ').unwrap();
                    let last = u.chars().last().unwrap();
                    let bumped = if last == '9' || last == 'f' {
                        '0'
                    } else {
                        char::from(last as u8 + 1)
                    };
                    format!("{head} u={}{bumped} {rest}", &u[..u.len() - 1])
                } else {
                    l.to_owned()
                }
            })
            .collect();
        std::fs::write(dir.path().join("altered.log"), lines.join("\n")).unwrap();
        let mut altered = args;
        altered[1] = "altered.log";
        let out = evenkeel(dir.path(), &altered);
        assert_exit(&out, 1);
        let report = text(&out.stdout);
        assert!(
            report.contains("DIFFERS: 1 of 2400 samples; the first at record 701"),
            "{report}"
        );
        assert!(report.contains("k = 700"), "{report}");
        assert!(
            report.contains("host state before the step: integral"),
            "{report}"
        );
        assert!(report.contains("the trajectories met again"), "{report}");
    }
    // A log for one backend replayed as another is refused with its line.
    let out = evenkeel(
        dir.path(),
        &[
            "replay",
            "fixed.log",
            "--scenario",
            pump.to_str().unwrap(),
            "--backend",
            "f32",
        ],
    );
    assert_exit(&out, 2);
    assert!(
        text(&out.stderr).contains("fixed.log:2: `v="),
        "{}",
        text(&out.stderr)
    );
    assert!(text(&out.stderr).contains("is not a raw f32 value"));
}

#[test]
fn a_16_bit_counts_log_with_one_sample_altered_is_caught_at_that_sample() {
    // The chiller pump demo: ADC counts in, PWM counts out, 16-bit
    // controller; the log carries the counts themselves.
    let dir = tempfile::tempdir().unwrap();
    let pump = demo("chiller_pump");
    let s = Scenario::from_path(&pump).unwrap();
    let log = synthesize::<Slim16>(&s).unwrap();
    // Raw values are counts: the ADC's 12 bits, the compare register's 0..1000.
    let first = log.lines().find(|l| l.contains(" step k=200 ")).unwrap();
    let field = |name: &str| -> i32 {
        let v = first.split(&format!(" {name}=")).nth(1).unwrap();
        v.split(' ').next().unwrap().parse().unwrap()
    };
    assert!((0..=4095).contains(&field("y")), "{first}");
    assert!((0..=1000).contains(&field("u")), "{first}");
    std::fs::write(dir.path().join("pump.log"), &log).unwrap();
    let args = [
        "replay",
        "pump.log",
        "--scenario",
        pump.to_str().unwrap(),
        "--backend",
        "slim16",
    ];
    let out = evenkeel(dir.path(), &args);
    assert_exit(&out, 0);
    assert!(
        text(&out.stdout).contains("bit-exact over 3000 samples"),
        "{}",
        text(&out.stdout)
    );
    // Sample 1234's compare value one count higher.
    let altered: Vec<String> = log
        .lines()
        .map(|l| {
            if l.contains(" step k=1234 ") {
                let (head, tail) = l.split_once(" u=").unwrap();
                let (u, rest) = tail.split_once(' ').unwrap();
                let u: i32 = u.parse().unwrap();
                format!("{head} u={} {rest}", u + 1)
            } else {
                l.to_owned()
            }
        })
        .collect();
    std::fs::write(dir.path().join("altered.log"), altered.join("\n")).unwrap();
    let mut bad = args;
    bad[1] = "altered.log";
    let out = evenkeel(dir.path(), &bad);
    assert_exit(&out, 1);
    let report = text(&out.stdout);
    assert!(
        report.contains("DIFFERS: 1 of 3000 samples; the first at record 1235"),
        "{report}"
    );
    assert!(report.contains("k = 1234"), "{report}");
    // One count of command is 0.1 % duty.
    assert!(
        report.contains("largest command difference 0.1"),
        "{report}"
    );
    // A 16-bit value out of range is refused with its line.
    let broken: Vec<String> = log
        .lines()
        .map(|l| {
            if l.contains(" step k=0 ") {
                let (head, tail) = l.split_once(" y=").unwrap();
                let (_, rest) = tail.split_once(' ').unwrap();
                format!("{head} y=70000 {rest}")
            } else {
                l.to_owned()
            }
        })
        .collect();
    let broken = broken.join("\n");
    std::fs::write(dir.path().join("broken.log"), broken).unwrap();
    bad[1] = "broken.log";
    let out = evenkeel(dir.path(), &bad);
    assert_exit(&out, 2);
    assert!(
        text(&out.stderr).contains("is not a raw slim16 value"),
        "{}",
        text(&out.stderr)
    );
}

#[test]
fn a_log_without_records_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("empty.log"), "booting\nready\n").unwrap();
    let pump = demo("irrigation_pump");
    let out = evenkeel(
        dir.path(),
        &["replay", "empty.log", "--scenario", pump.to_str().unwrap()],
    );
    assert_exit(&out, 2);
    assert!(text(&out.stderr).contains("empty.log: no record"));
}
