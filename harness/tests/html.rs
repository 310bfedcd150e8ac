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
