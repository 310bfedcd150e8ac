//! Sweeps: determinism over thread counts, shards merging into the
//! unsharded result, and the design proposals holding over each demo's
//! whole uncertainty range.

mod common;

use evenkeel_harness::design::{self, Request};
use evenkeel_harness::sweep::{self, Method, Shard, SweepPlan, SweepResult};
use evenkeel_harness::{BackendKind, Scenario};

fn demo(name: &str) -> Scenario {
    Scenario::from_path(common::demo(name)).unwrap()
}

fn pump_plan() -> SweepPlan {
    SweepPlan {
        method: Method::LatinHypercube,
        count: 10,
        seed: 42,
        ..SweepPlan::default()
    }
}

fn run_with_threads(
    s: &Scenario,
    plan: &SweepPlan,
    threads: usize,
    shard: Option<Shard>,
) -> SweepResult {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap()
        .install(|| sweep::run(s, plan, BackendKind::Fixed, shard, &|_| {}).unwrap())
}

#[test]
fn same_seed_same_report_on_any_thread_count() {
    let pump = demo("irrigation_pump");
    let one = run_with_threads(&pump, &pump_plan(), 1, None);
    let three = run_with_threads(&pump, &pump_plan(), 3, None);
    assert_eq!(one, three);
    assert_eq!(sweep::json(&one), sweep::json(&three));
    assert_eq!(sweep::table(&one), sweep::table(&three));
    // Another seed draws other variants.
    let other = SweepPlan {
        seed: 43,
        ..pump_plan()
    };
    let again = run_with_threads(&pump, &other, 2, None);
    assert_ne!(one.variants[0].values, again.variants[0].values);
}

#[test]
fn shards_merge_into_the_unsharded_result() {
    let pump = demo("irrigation_pump");
    let whole = run_with_threads(&pump, &pump_plan(), 2, None);
    // Shards run separately, written and read back as files would be.
    let mut parts: Vec<SweepResult> = (1..=3)
        .rev()
        .map(|i| {
            let part = run_with_threads(&pump, &pump_plan(), 1, Some(Shard { index: i, count: 3 }));
            serde_json::from_str(&serde_json::to_string(&part).unwrap()).unwrap()
        })
        .collect();
    assert_eq!(parts.iter().map(|p| p.variants.len()).sum::<usize>(), 10);
    let merged = sweep::merge(parts.clone()).unwrap();
    assert_eq!(merged, whole);
    assert_eq!(sweep::json(&merged), sweep::json(&whole));
    assert_eq!(sweep::junit(&merged), sweep::junit(&whole));
    // A missing or doubled shard is refused.
    let missing = parts.split_off(1);
    assert!(sweep::merge(missing).is_err());
    let mut doubled = parts.clone();
    doubled.extend(parts);
    assert!(sweep::merge(doubled).is_err());
    // So is a shard of another sweep.
    let other = run_with_threads(
        &pump,
        &SweepPlan {
            seed: 1,
            ..pump_plan()
        },
        1,
        Some(Shard { index: 1, count: 3 }),
    );
    let mut mixed: Vec<SweepResult> = (2..=3)
        .map(|i| run_with_threads(&pump, &pump_plan(), 1, Some(Shard { index: i, count: 3 })))
        .collect();
    mixed.push(other);
    assert!(sweep::merge(mixed).is_err());
}

#[test]
fn design_proposals_pass_the_sweep_over_each_demo_range() {
    for name in ["baggage_tug", "greenhouse_fan", "irrigation_pump"] {
        let mut s = demo(name);
        let proposal = design::design(&s, &Request::default()).unwrap();
        assert!(proposal.fixed.holds(), "{name}: {:?}", proposal.fixed);
        assert!(
            proposal.corners.iter().all(|c| c.margins.stable()),
            "{name}"
        );
        s.controller = proposal.settings;
        // Every corner of the box and its centre, then a space-filling sample.
        for plan in [
            SweepPlan {
                method: Method::Corners,
                ..SweepPlan::default()
            },
            SweepPlan {
                method: Method::LatinHypercube,
                count: 8,
                seed: 7,
                ..SweepPlan::default()
            },
        ] {
            let result = sweep::run(&s, &plan, BackendKind::Fixed, None, &|_| {}).unwrap();
            let summary = sweep::summarise(&result);
            assert!(summary.all_passed(), "{name}:\n{}", sweep::table(&result));
        }
    }
}

#[test]
fn committed_demo_settings_pass_their_whole_range() {
    for name in ["baggage_tug", "greenhouse_fan", "irrigation_pump"] {
        let s = demo(name);
        let plan = SweepPlan {
            method: Method::Corners,
            ..SweepPlan::default()
        };
        let result = sweep::run(&s, &plan, BackendKind::Fixed, None, &|_| {}).unwrap();
        assert!(
            sweep::summarise(&result).all_passed(),
            "{name}:\n{}",
            sweep::table(&result)
        );
    }
}

#[test]
fn the_worst_variant_reruns_alone_from_its_scenario_file() {
    let pump = demo("irrigation_pump");
    let text = std::fs::read_to_string(&pump.source).unwrap();
    let result = run_with_threads(&pump, &pump_plan(), 2, None);
    let summary = sweep::summarise(&result);
    let worst = summary.worst_index.unwrap();
    let file = sweep::variant_toml(&text, &pump, &result, worst).unwrap();
    let alone = Scenario::from_toml(&file, "worst.toml").unwrap();
    assert!(alone.uncertainty.is_empty());
    let run = alone.run::<evenkeel::fixed::types::I16F16>().unwrap();
    let v = &result.variants[worst];
    let measured: Vec<_> = run.verdicts.iter().map(|x| x.measured).collect();
    assert_eq!(measured, v.measured);
}
