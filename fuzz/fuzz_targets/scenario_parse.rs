//! Fuzz target 2: the scenario file parser and validator.
//!
//! Any bytes: never a panic, only a typed `ScenarioError` whose message is
//! not empty; an accepted scenario can build its plant and sensor (its
//! parameters were validated) without error.
#![no_main]

use evenkeel_harness::Scenario;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let text = String::from_utf8_lossy(data);
    match Scenario::from_toml(&text, "fuzz.toml") {
        Ok(scenario) => {
            assert!(!scenario.name.is_empty());
            assert!(scenario.setup.duration_s > 0.0 && scenario.setup.duration_s.is_finite());
            assert!(scenario.build_plant().is_ok(), "validated plant refused");
            assert!(scenario.build_sensor().is_ok(), "validated sensor refused");
        }
        Err(e) => assert!(!e.message.is_empty() && !e.to_string().is_empty()),
    }
});
