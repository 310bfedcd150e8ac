//! The per-corner table of `evenkeel design` (gain margin, phase margin,
//! gain crossover, Ms and Mt of the sampled loop at every linearised
//! corner) against python-control 0.10 on a scenario of our own, the
//! rail-shuttle test scenario: fixture
//! `shared/vectors/reference/design_corners.csv`, made by
//! `harness/tests/reference/design_corners_fixture.py` (which names the
//! python-control calls and the loop it builds).

mod common;

use evenkeel::Settings;
use evenkeel_harness::Scenario;
use evenkeel_harness::design::corner_margins;

/// Relative agreement asked of gain margin, crossover, Ms and Mt: both
/// sides evaluate on their own grids and refine; 1e-3 is well above the
/// grid effects of either. Phase margin: 0.05°.
const REL_TOL: f64 = 1e-3;
const PM_TOL_DEG: f64 = 0.05;

#[test]
fn corner_margins_ms_and_mt_match_python_control() {
    let mut s = Scenario::from_path(common::data("design/shuttle.toml")).unwrap();
    // The fixture's settings: Kp 1.3, Ki 0.6, Tf 0.05 s at Ts = 10 ms.
    s.controller = Settings::new(0.01, 1.3, 0.6, -1.0, 1.0).with_filter_time_s(0.05);
    let corners = corner_margins(&s, &s.controller);
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../shared/vectors/reference/design_corners.csv"
    );
    let rows: Vec<Vec<f64>> = std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("mass_kg"))
        .map(|l| l.split(',').map(|x| x.parse().unwrap()).collect())
        .collect();
    assert_eq!(rows.len(), 8);
    assert_eq!(corners.len(), 8);
    let rel = |a: f64, b: f64| ((a - b) / b).abs();
    for w in &rows {
        let c = corners
            .iter()
            .find(|c| {
                let v = &c.corner.values;
                v[0].1 == w[0] && v[1].1 == w[1] && c.corner.operating_output == w[2]
            })
            .unwrap_or_else(|| panic!("no corner {w:?}"));
        let m = &c.margins;
        let label = c.corner.label();
        assert!(
            rel(m.gain_margin, w[3]) < REL_TOL,
            "{label}: GM {} vs {}",
            m.gain_margin,
            w[3]
        );
        assert!(
            (m.phase_margin_deg - w[4]).abs() < PM_TOL_DEG,
            "{label}: PM {} vs {}",
            m.phase_margin_deg,
            w[4]
        );
        assert!(
            rel(m.gain_crossover_rad_s, w[5]) < REL_TOL,
            "{label}: wc {} vs {}",
            m.gain_crossover_rad_s,
            w[5]
        );
        assert!(
            rel(m.sensitivity_peak, w[6]) < REL_TOL,
            "{label}: Ms {} vs {}",
            m.sensitivity_peak,
            w[6]
        );
        assert!(
            rel(m.complementary_peak, w[7]) < REL_TOL,
            "{label}: Mt {} vs {}",
            m.complementary_peak,
            w[7]
        );
    }
}
