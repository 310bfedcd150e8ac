//! The hand-written 16-bit steps of the boards' cost workloads
//! (`boards/replay/src/floor.rs`) give the same command and status bits as
//! `Controller<Slim16, L>` for their configuration, on any input: random
//! walks over the whole raw range with extremes mixed in, and the
//! workloads themselves (the firmware checks those on target too).

use evenkeel::{Controller, Input, Slim16, Status};
use evenkeel_replay::cost::{self, SLIM_FULL_LAYOUT, SLIM_MINIMAL_LAYOUT};
use evenkeel_replay::floor::{self, Step};
use proptest::prelude::*;
use proptest::strategy::ValueTree;

fn library(out: evenkeel::Output<Slim16>) -> Step {
    Step {
        command: out.command.raw(),
        status: out.status.bits(),
    }
}

/// Inputs biased towards the edges: extremes, the range limits and small
/// values, besides any `i16`.
fn raw() -> impl Strategy<Value = i16> {
    prop_oneof![
        Just(i16::MIN),
        Just(i16::MAX),
        Just(-30_720),
        Just(30_720),
        Just(-30_721),
        Just(30_721),
        -6000i16..6000,
        -8i16..8,
        any::<i16>(),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    #[test]
    fn minimal_floor_matches_the_library(steps in prop::collection::vec((raw(), raw()), 1..200)) {
        let mut pi = Controller::new(SLIM_MINIMAL_LAYOUT);
        let mut hand = floor::Minimal::new();
        for (k, (r, y)) in steps.into_iter().enumerate() {
            let want = library(pi.step(Slim16::from_raw(r), Slim16::from_raw(y)));
            let got = floor::minimal_step(&mut hand, r, y);
            prop_assert_eq!(want, got, "step {} (r {}, y {})", k, r, y);
        }
    }

    #[test]
    fn full_floor_matches_the_library(steps in prop::collection::vec((raw(), raw(), raw(), raw()), 1..200)) {
        let mut pi = Controller::new(SLIM_FULL_LAYOUT);
        let mut hand = floor::Full::new();
        for (k, (r, y, ff, a)) in steps.into_iter().enumerate() {
            let input = Input::new(Slim16::from_raw(r), Slim16::from_raw(y))
                .with_feed_forward(Slim16::from_raw(ff))
                .with_applied(Slim16::from_raw(a));
            let want = library(pi.step_with(&input));
            let got = floor::full_step(&mut hand, r, y, ff, a);
            prop_assert_eq!(want, got, "step {} (r {}, y {}, ff {}, applied {})", k, r, y, ff, a);
        }
    }
}

/// The firmware's own comparison over the two workloads finds no
/// difference on the host either.
#[test]
fn workloads_match() {
    for check in [cost::check_minimal_floor(), cost::check_full_floor()] {
        assert_eq!(
            (check.steps, check.mismatches),
            (cost::STEPS, 0),
            "{check:?}"
        );
    }
}

/// The random walks reach every flag the two configurations can raise
/// (a comparison that never saw one would prove nothing about it).
#[test]
fn random_inputs_reach_every_flag() {
    let mut runner = proptest::test_runner::TestRunner::deterministic();
    let walk = prop::collection::vec((raw(), raw(), raw(), raw()), 200);
    let mut seen = Status::NONE;
    for _ in 0..64 {
        let steps = walk.new_tree(&mut runner).expect("strategy").current();
        let mut pi = Controller::new(SLIM_FULL_LAYOUT);
        let mut minimal = Controller::new(SLIM_MINIMAL_LAYOUT);
        for (r, y, ff, a) in steps {
            let (r, y) = (Slim16::from_raw(r), Slim16::from_raw(y));
            let input = Input::new(r, y)
                .with_feed_forward(Slim16::from_raw(ff))
                .with_applied(Slim16::from_raw(a));
            seen |= pi.step_with(&input).status;
            seen |= minimal.step(r, y).status;
        }
    }
    for flag in [
        Status::CLAMP_HIGH,
        Status::CLAMP_LOW,
        Status::SLEW,
        Status::DOWNSTREAM,
        Status::INTEGRATOR_HELD,
        Status::DEADBAND,
        Status::MEASUREMENT_RANGE,
        Status::SETPOINT_RANGE,
    ] {
        assert!(seen.contains(flag), "{flag:?} never seen");
    }
}
