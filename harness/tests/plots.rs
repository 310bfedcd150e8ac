//! What the plots show, read from the SVG they write: panel names from
//! the units, named fault lanes, outliers clipped and marked, legends
//! beside the data, the settling band and the overshoot limit, and in a
//! sweep each panel's own worst variant with its parameters.

mod common;

use common::{assert_exit, data, demo, evenkeel};

/// The plot `args` write to `plot.svg` in a fresh directory.
fn svg_of(args: &[&str]) -> String {
    let dir = tempfile::tempdir().unwrap();
    let mut all: Vec<&str> = args.to_vec();
    all.extend(["--plot", "plot.svg"]);
    let out = evenkeel(dir.path(), &all);
    assert!(matches!(out.status.code(), Some(0 | 1)), "{out:?}");
    std::fs::read_to_string(dir.path().join("plot.svg")).unwrap()
}

/// `true` when a `<text>` element reads `label` (the SVG writer puts the
/// text on a line of its own).
fn has_text(svg: &str, label: &str) -> bool {
    svg.contains(&format!(">\n{label}\n</text>"))
}

/// The x position of every `<text>` element whose content is `label`.
fn text_x(svg: &str, label: &str) -> Vec<f64> {
    let mut xs = Vec::new();
    let close = format!(">\n{label}\n</text>");
    let mut from = 0;
    while let Some(i) = svg[from..].find(&close) {
        let end = from + i;
        let start = svg[..end].rfind("<text").unwrap();
        let tag = &svg[start..end];
        let x = tag.split("x=\"").nth(1).unwrap().split('"').next().unwrap();
        xs.push(x.parse().unwrap());
        from = end + close.len();
    }
    xs
}

#[test]
fn a_heater_plots_rates_not_accelerations() {
    let heater = data("design/tank_heater.toml").display().to_string();
    let svg = svg_of(&["check", &heater, "--backend", "f64"]);
    assert!(svg.contains("rate of change (K/s)"), "rate panel named");
    assert!(svg.contains("change of rate (K/s²)"));
    assert!(
        !svg.contains("acceleration ("),
        "no acceleration for a heater"
    );
    assert!(!svg.contains(">jerk ("));
    // A speed loop keeps its motion names.
    let tug = demo("baggage_tug").display().to_string();
    let svg = svg_of(&["check", &tug, "--backend", "f64"]);
    assert!(svg.contains("acceleration (m/s²)") && svg.contains("jerk (m/s³)"));
}

#[test]
fn fault_lanes_are_named_and_outliers_clipped() {
    let faults = demo("faults/irrigation_pump_faults").display().to_string();
    let svg = svg_of(&["check", &faults, "--backend", "fixed"]);
    for kind in [
        "spike",
        "stuck",
        "dropout",
        "out_of_range",
        "payload_change",
    ] {
        assert!(has_text(&svg, &format!("fault: {kind}")), "{kind}");
    }
    assert!(has_text(&svg, "controller fault flag"));
    // The out-of-range reading of 1500 kPa is clipped at the axis and
    // said so, instead of stretching the output axis to 1500.
    assert!(
        has_text(&svg, "clipped at the axis (to 1500)"),
        "clip legend"
    );
    // No y label of the output panel reaches 1000 kPa.
    assert!(!has_text(&svg, "1400") && !has_text(&svg, "1000"));
}

#[test]
fn legends_sit_beside_the_data_and_the_step_limits_are_drawn() {
    let tug = demo("baggage_tug").display().to_string();
    let svg = svg_of(&["check", &tug, "--backend", "fixed"]);
    // The number format may be "2" or "2.000" (the table's format).
    let either = |a: &str, b: &str| has_text(&svg, a) || has_text(&svg, b);
    assert!(either("settling band (±2 %)", "settling band (±2.000 %)"));
    assert!(either("overshoot limit (5 %)", "overshoot limit (5.000 %)"));
    // Page 1200 px wide, legend column 250 px: every legend label starts
    // right of the data area.
    for label in [
        "measurement",
        "reference",
        "command",
        "output limits",
        "jerk",
    ] {
        let xs = text_x(&svg, label);
        assert!(!xs.is_empty(), "{label}");
        assert!(xs.iter().all(|&x| x >= 950.0), "{label} at {xs:?}");
    }
}

#[test]
fn each_sweep_panel_shows_its_own_worst_variant() {
    let tug = demo("baggage_tug").display().to_string();
    let dir = tempfile::tempdir().unwrap();
    let out = evenkeel(
        dir.path(),
        &[
            "sweep", &tug, "--method", "corners", "--json", "s.json", "--plot", "env.svg", "-q",
        ],
    );
    assert_exit(&out, 0);
    let svg = std::fs::read_to_string(dir.path().join("env.svg")).unwrap();
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("s.json")).unwrap()).unwrap();
    // The worst variant of peak_jerk and of peak_accel, from the report.
    let worst_of = |metric: &str| -> u64 {
        json["criteria"]
            .as_array()
            .unwrap()
            .iter()
            .find(|c| c["name"] == metric)
            .unwrap()["worst_variant"]["index"]
            .as_u64()
            .unwrap()
    };
    for metric in ["peak_jerk", "peak_accel"] {
        let label = format!("worst #{} ({metric})", worst_of(metric));
        assert!(has_text(&svg, &label), "{label}");
    }
    // The parameters of the worst variants are written out.
    assert!(svg.contains(">\nmass_kg = "));
    assert!(svg.contains(">\nactuator_gain_n = "));
}

#[test]
fn worst_values_are_ringed_where_and_when_they_happen() {
    // Every criterion the JSON gives a time for gets a ring and a label
    // "name value unit at t = T s" on the run plot, and the rings sit at
    // those times: the panels share one time axis, so the rings' x
    // positions must lie on one line x = a + b·t (to a pixel's rounding).
    let tug = demo("baggage_tug").display().to_string();
    let dir = tempfile::tempdir().unwrap();
    let out = evenkeel(
        dir.path(),
        &[
            "check",
            &tug,
            "--backend",
            "f64",
            "--plot",
            "p.svg",
            "--json",
            "r.json",
        ],
    );
    assert_exit(&out, 0);
    let svg = std::fs::read_to_string(dir.path().join("p.svg")).unwrap();
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("r.json")).unwrap()).unwrap();
    let timed: Vec<(String, f64)> = json["scenarios"][0]["runs"][0]["criteria"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|c| Some((c["name"].as_str()?.to_owned(), c["at_s"].as_f64()?)))
        .collect();
    assert!(timed.len() >= 3, "{timed:?}");
    // The labels, in the order they are drawn, with the ring drawn just
    // before each.
    let mut rings = Vec::new();
    for (name, at) in &timed {
        let label_at = svg
            .find(&format!(">\n{name} "))
            .unwrap_or_else(|| panic!("no label for {name}"));
        let line = svg[label_at + 2..].lines().next().unwrap();
        let t: f64 = line
            .split("at t = ")
            .nth(1)
            .and_then(|s| s.strip_suffix(" s"))
            .unwrap_or_else(|| panic!("{line}"))
            .parse()
            .unwrap();
        assert!(
            (t - at).abs() <= 1e-3 * at.abs().max(1.0),
            "{name}: {t} vs {at}"
        );
        let ring = svg[..label_at].rfind("<circle").unwrap();
        let cx: f64 = svg[ring..]
            .split("cx=\"")
            .nth(1)
            .unwrap()
            .split('"')
            .next()
            .unwrap()
            .parse()
            .unwrap();
        assert!(
            svg[ring..label_at].contains("r=\"6\""),
            "{name}: a ring, not a legend mark"
        );
        rings.push((*at, cx));
    }
    let (lo, hi) = rings.iter().fold((rings[0], rings[0]), |(lo, hi), &r| {
        (
            if r.0 < lo.0 { r } else { lo },
            if r.0 > hi.0 { r } else { hi },
        )
    });
    assert!(
        hi.0 - lo.0 > 10.0,
        "times spread enough to fit a line: {rings:?}"
    );
    let slope = (hi.1 - lo.1) / (hi.0 - lo.0);
    assert!(slope > 0.0);
    for (t, x) in &rings {
        let expected = lo.1 + slope * (t - lo.0);
        assert!(
            (x - expected).abs() <= 1.5,
            "ring at x = {x} for t = {t} s, expected {expected:.1}: {rings:?}"
        );
    }
}
