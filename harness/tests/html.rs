//! The HTML reports in a real browser: headless Chromium (Debian's, as
//! `.ci/run` installs it) renders each page; it must load without a
//! console message and give a screenshot that is not blank. Where no
//! browser is installed the rendering is skipped with a message (the
//! page's own checks still run).

mod common;

use common::{assert_exit, data, evenkeel, render_in_browser};

/// Checks `page` as a file: self-contained (no script, no reference that
/// a browser would fetch) and carrying the caution.
fn self_contained(page: &str) {
    assert!(page.starts_with("<!DOCTYPE html>"));
    assert!(page.contains(evenkeel_harness::CAUTION));
    for banned in ["<script", "<link", " src=", "@import", "url(", "https://"] {
        assert!(!page.contains(banned), "found {banned}");
    }
    // The only URL is the SVG namespace, a name that is never fetched.
    for (i, _) in page.match_indices("http://") {
        assert!(
            page[i..].starts_with("http://www.w3.org/"),
            "{}",
            &page[i..i + 40]
        );
    }
}

/// The share of pixels that differ from the first one: a blank page is 0.
fn ink(png: &std::path::Path) -> f64 {
    let img = image::open(png).unwrap().to_rgb8();
    let first = *img.get_pixel(0, 0);
    let differ = img.pixels().filter(|p| **p != first).count();
    #[allow(clippy::cast_precision_loss)]
    let share = differ as f64 / (img.width() * img.height()) as f64;
    share
}

#[test]
fn design_and_fit_reports_render_in_a_browser() {
    let dir = tempfile::tempdir().unwrap();
    let shuttle = data("design/shuttle.toml").display().to_string();
    let out = evenkeel(dir.path(), &["design", &shuttle, "--html", "design.html"]);
    assert_exit(&out, 0);
    let out = evenkeel(
        dir.path(),
        &["check", &shuttle, "--backend", "f64", "--trace", "log.csv"],
    );
    assert!(out.status.code().is_some());
    let out = evenkeel(
        dir.path(),
        &[
            "fit",
            "log.csv",
            "--model",
            "vehicle",
            "--scenario",
            &shuttle,
            "--html",
            "fit.html",
        ],
    );
    assert_exit(&out, 0);
    for name in ["design.html", "fit.html"] {
        let path = dir.path().join(name);
        let page = std::fs::read_to_string(&path).unwrap();
        self_contained(&page);
        assert!(page.contains("<svg"), "{name}: the plot is inline");
        let sub = dir.path().join(name.replace(".html", ""));
        std::fs::create_dir_all(&sub).unwrap();
        if let Some((shot, console)) = render_in_browser(&path, &sub) {
            assert!(console.is_empty(), "{name}: console messages: {console:?}");
            let share = ink(&shot);
            assert!(share > 0.02, "{name}: the screenshot is blank ({share})");
        }
    }
}

/// Renders `name` (in `dir`) headless: no console message, not blank.
fn renders(dir: &std::path::Path, name: &str) {
    let path = dir.join(name);
    let sub = dir.join(name.replace(".html", "-shot"));
    std::fs::create_dir_all(&sub).unwrap();
    if let Some((shot, console)) = render_in_browser(&path, &sub) {
        assert!(console.is_empty(), "{name}: console messages: {console:?}");
        let share = ink(&shot);
        assert!(share > 0.02, "{name}: the screenshot is blank ({share})");
    }
}

#[test]
fn every_judging_command_writes_one_self_contained_report() {
    let dir = tempfile::tempdir().unwrap();
    let cart = data("map_cart.toml").display().to_string();
    // check: every run's verdict table and plot, exit status unchanged.
    let tug = common::demo("baggage_tug").display().to_string();
    let out = evenkeel(dir.path(), &["check", &tug, "--html", "check.html"]);
    let code = out.status.code();
    assert!(matches!(code, Some(0 | 1)), "{code:?}");
    let page = std::fs::read_to_string(dir.path().join("check.html")).unwrap();
    self_contained(&page);
    let runs = page.matches("<h3>backend ").count();
    assert_eq!(runs, 4, "one section per backend");
    assert_eq!(page.matches("<svg").count(), 4, "one plot per run");
    assert_eq!(
        page.contains("class=\"fail\">FAIL"),
        code == Some(1),
        "the page's verdict is the exit status"
    );
    renders(dir.path(), "check.html");

    // compare: the checks and the plot.
    let out = evenkeel(dir.path(), &["compare", "--html", "compare.html"]);
    assert_exit(&out, 0);
    let page = std::fs::read_to_string(dir.path().join("compare.html")).unwrap();
    self_contained(&page);
    assert!(page.contains("<td class=\"text\">max_command_diff</td>"));
    assert_eq!(page.matches("<svg").count(), 1);
    renders(dir.path(), "compare.html");

    // sweep with a map, then merge of two shards: criteria, envelope, map.
    let out = evenkeel(
        dir.path(),
        &[
            "sweep",
            &cart,
            "--method",
            "corners",
            "--map",
            "mass_kg,actuator_gain_n",
            "--levels",
            "5",
            "--html",
            "sweep.html",
            "-q",
        ],
    );
    assert!(matches!(out.status.code(), Some(0 | 1)));
    let page = std::fs::read_to_string(dir.path().join("sweep.html")).unwrap();
    self_contained(&page);
    assert!(page.contains("Criteria over the variants"));
    assert!(page.contains("Envelope"));
    assert!(page.contains("Robustness map"));
    assert!(page.contains("map over mass_kg and actuator_gain_n (5 x 5 points"));
    assert_eq!(page.matches("<svg").count(), 2, "envelope and map inline");
    renders(dir.path(), "sweep.html");

    for i in 1..=2 {
        let shard = format!("{i}/2");
        let save = format!("s{i}.json");
        let out = evenkeel(
            dir.path(),
            &[
                "sweep", &cart, "--method", "corners", "--shard", &shard, "--save", &save, "-q",
            ],
        );
        assert!(matches!(out.status.code(), Some(0 | 1)));
    }
    let out = evenkeel(
        dir.path(),
        &["merge", "s1.json", "s2.json", "--html", "merge.html"],
    );
    assert!(matches!(out.status.code(), Some(0 | 1)));
    let merged = std::fs::read_to_string(dir.path().join("merge.html")).unwrap();
    self_contained(&merged);
    // The merged shards and the whole sweep give the same table.
    let table = |p: &str| {
        p[p.find("Criteria over the variants").unwrap()..p.find("Envelope").unwrap()].to_owned()
    };
    assert_eq!(table(&merged), table(&page));

    // A report path that is not HTML is refused before anything runs.
    let out = evenkeel(dir.path(), &["check", &cart, "--html", "report.txt"]);
    assert_exit(&out, 2);
    assert!(String::from_utf8_lossy(&out.stderr).contains("must end in .html"));
    assert!(!dir.path().join("report.txt").exists());
}
