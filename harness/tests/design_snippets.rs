//! The firmware `const` that `evenkeel design` prints is compiled: the
//! snippets of the three demos are committed under
//! `tests/data/design/snippets/`, `include!`d below (so the compiler checks
//! them, `evenkeel::config!` included), and this test asserts that `design`
//! still prints exactly them and that the compiled configuration is the
//! proposal's. After a deliberate change to the design, regenerate with
//! `EVENKEEL_BLESS=1 cargo test -p evenkeel-harness --test design_snippets`.

mod common;

use evenkeel::Config;
use evenkeel::fixed::types::I16F16;
use evenkeel_harness::Scenario;
use evenkeel_harness::design::{self, Options, Request};

mod baggage_tug {
    include!("data/design/snippets/baggage_tug.rs");
}
mod greenhouse_fan {
    include!("data/design/snippets/greenhouse_fan.rs");
}
mod irrigation_pump {
    include!("data/design/snippets/irrigation_pump.rs");
}

#[test]
fn design_prints_the_snippets_that_compile() {
    let bless = std::env::var_os("EVENKEEL_BLESS").is_some();
    for (name, compiled) in [
        ("baggage_tug", baggage_tug::CONFIG),
        ("greenhouse_fan", greenhouse_fan::CONFIG),
        ("irrigation_pump", irrigation_pump::CONFIG),
    ] {
        let s = Scenario::from_path(common::demo(name)).unwrap();
        let tuned = design::tune(&s, &Request::default(), &Options::for_scenario(&s)).unwrap();
        assert!(tuned.passed(), "{name}");
        let fresh = design::snippet(&s, &tuned);
        let path = common::data(&format!("design/snippets/{name}.rs"));
        if bless {
            std::fs::write(&path, &fresh).unwrap();
        }
        assert_eq!(
            std::fs::read_to_string(&path).unwrap(),
            fresh,
            "{name}: design prints another snippet than the compiled one; regenerate (see the module doc)"
        );
        assert_eq!(
            Config::<I16F16>::try_new(&tuned.settings).unwrap(),
            compiled,
            "{name}"
        );
    }
}
