//! The robustness map against a pass region known in closed form (the
//! test scenario `tests/data/map_cart.toml` derives it): an integrating
//! plant c/(m·s) under PI with setpoint weight 0 overshoots by at most
//! 10 % exactly when c ≥ 4ζ*²·(Ki/Kp²)·m, ζ* = 0.5912 (the standard
//! second-order overshoot formula; Ogata §5-3, from memory). The outlined
//! boundary must lie within one grid cell of that line, and `sweep --map`
//! must draw it.

mod common;

use evenkeel_harness::map::robustness_map;
use evenkeel_harness::{BackendKind, Scenario};

/// ζ giving 10 % overshoot: −ln 0.1/√(π² + ln² 0.1).
fn zeta_for_ten_percent() -> f64 {
    let l = 0.1f64.ln();
    -l / (std::f64::consts::PI.powi(2) + l * l).sqrt()
}

#[test]
fn the_map_boundary_lies_within_one_cell_of_the_closed_form() {
    let s = Scenario::from_path(common::data("map_cart.toml")).unwrap();
    let levels = 21;
    let m = robustness_map(&s, "mass_kg", "actuator_gain_n", levels, BackendKind::F64).unwrap();
    let z = zeta_for_ten_percent();
    assert!((z - 0.5912).abs() < 1e-4);
    let slope = 4.0 * z * z * s.controller.ki_per_s / (s.controller.kp * s.controller.kp);
    let cell_y = m.ys[1] - m.ys[0];
    let cell_x = m.xs[1] - m.xs[0];
    assert!(!m.boundary.is_empty());
    for &(a, b) in &m.boundary {
        for (x, y) in [a, b] {
            // Distance from the line c = slope·m, in cells (the smaller of
            // the two directions).
            let dy = (y - slope * x).abs() / cell_y;
            let dx = (x - y / slope).abs() / cell_x;
            assert!(
                dx.min(dy) <= 1.0,
                "boundary point ({x}, {y}) is {dy:.2} cells off the line"
            );
        }
    }
    // Away from the line (more than a cell), every point is on the side
    // the formula says.
    for (j, row) in m.cells.iter().enumerate() {
        for (i, c) in row.iter().enumerate() {
            let (x, y) = (m.xs[i], m.ys[j]);
            if (y - slope * x).abs() > cell_y {
                assert_eq!(
                    c.margin >= 0.0,
                    y > slope * x,
                    "({x}, {y}) margin {}",
                    c.margin
                );
            }
        }
    }
    assert!(m.passing() > 0 && m.passing() < levels * levels);
}

#[test]
fn sweep_map_draws_the_map_and_judges_its_points() {
    let dir = tempfile::tempdir().unwrap();
    let cart = common::data("map_cart.toml").display().to_string();
    let out = common::evenkeel(
        dir.path(),
        &[
            "sweep",
            &cart,
            "--method",
            "corners",
            "-q",
            "--map",
            "mass_kg,actuator_gain_n",
            "--levels",
            "6",
            "--map-plot",
            "map.svg",
        ],
    );
    // Part of the plane fails: exit 1.
    common::assert_exit(&out, 1);
    let svg = std::fs::read_to_string(dir.path().join("map.svg")).unwrap();
    assert!(
        svg.contains("robustness map") && svg.contains("overshoot_pct"),
        "map drawn"
    );
    let out = common::evenkeel(dir.path(), &["sweep", &cart, "--map", "mass_kg,crr", "-q"]);
    common::assert_exit(&out, 2);
    assert!(
        common::text(&out.stderr)
            .contains("`crr` is not a parameter of this scenario's [uncertainty]")
    );
}
