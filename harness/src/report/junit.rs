//! JUnit XML: one test suite per scenario and backend, one test case per
//! criterion.

use std::fmt::Write;

use super::{CAUTION, format_number};
use crate::outcome::Outcome;

/// Escapes text for XML attribute values and character data.
///
/// ```
/// assert_eq!(evenkeel_harness::report::xml_escape("a<b & \"c\""), "a&lt;b &amp; &quot;c&quot;");
/// ```
#[must_use]
pub fn xml_escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            // Characters XML 1.0 cannot carry at all.
            c if (c as u32) < 0x20 && !matches!(c, '\t' | '\n' | '\r') => out.push('\u{FFFD}'),
            c => out.push(c),
        }
    }
    out
}

/// The JUnit XML document for `outcomes`: one suite per scenario and
/// backend, one test case per criterion named by the criterion alone
/// (`rise_time_s max`, no limit in the name, so a CI history survives a
/// changed limit). Each case carries the properties `metric`, `bound`,
/// `limit`, `measured` (or `undefined`, the reason's key), `unit`,
/// `at_s` (when the worst value occurred, if it is one) and `source` (when
/// the scenario gives one); numbers shortest round-trip.
#[must_use]
pub fn junit(outcomes: &[Outcome]) -> String {
    let runs = outcomes.iter().flat_map(|o| o.runs.iter());
    let tests: usize = runs.clone().map(|r| r.verdicts.len()).sum();
    let failures: usize = runs
        .map(|r| r.verdicts.iter().filter(|v| !v.pass).count())
        .sum();
    let mut x = JunitXml::new("evenkeel check", tests, failures);
    for o in outcomes {
        let s = &o.scenario;
        let name = &s.name;
        for r in &o.runs {
            let failed = r.verdicts.iter().filter(|v| !v.pass).count();
            x.open_suite(
                &format!("{name} [{}]", r.backend),
                r.verdicts.len(),
                failed,
                Some(&s.source),
            );
            let class = format!("{name}.{}", r.backend);
            for v in &r.verdicts {
                let c = &v.criterion;
                let unit = c.metric.unit(&s.output_unit, &s.command_unit);
                let limit = format!("{} {}", c.bound.symbol(), format_number(Some(c.limit)));
                let why = v
                    .undefined
                    .map_or_else(String::new, |u| format!(" ({})", u.reason()));
                let at = v
                    .at_s
                    .map_or_else(String::new, |t| format!(" at t = {t} s"));
                let measured = v.measured.map_or_else(
                    || "undefined".to_owned(),
                    |m| format!("{} {unit}", format_number(Some(m))),
                );
                let msg = format!(
                    "{} measured {measured}{at}{why}, required {limit} {unit}",
                    c.label()
                );
                let mut props = vec![
                    ("metric", c.metric.name().to_owned()),
                    ("bound", c.bound.name().to_owned()),
                    ("limit", c.limit.to_string()),
                ];
                match (v.measured, v.undefined) {
                    (Some(m), _) => props.push(("measured", m.to_string())),
                    (None, Some(u)) => props.push(("undefined", u.key().to_owned())),
                    (None, None) => {}
                }
                props.push(("unit", unit.clone()));
                if let Some(t) = v.at_s {
                    props.push(("at_s", t.to_string()));
                }
                if let Some(source) = &c.source {
                    props.push(("source", source.clone()));
                }
                let case = format!("{} {}", c.label(), c.bound.name());
                if v.pass && v.undefined.is_some() {
                    x.skipped_with(&class, &case, &props, &msg);
                } else {
                    let failure = (!v.pass).then(|| Failure::new("criterion", &msg));
                    x.case_with(&class, &case, &props, failure);
                }
            }
            x.close_suite();
        }
    }
    x.finish()
}

/// A JUnit XML document written front to back: `check`, `compare` and
/// `sweep` each fill one. Every suite ends with [`CAUTION`] as its output.
pub(crate) struct JunitXml(String);

/// Why a test case failed: the `type` attribute, the `message` attribute
/// and the element text (the message again unless there is more to say).
pub(crate) struct Failure<'a> {
    kind: &'a str,
    message: &'a str,
    text: &'a str,
}

impl<'a> Failure<'a> {
    /// A failure whose text is its message.
    pub(crate) fn new(kind: &'a str, message: &'a str) -> Self {
        Self {
            kind,
            message,
            text: message,
        }
    }

    /// The same with a longer text.
    pub(crate) fn with_text(self, text: &'a str) -> Self {
        Self { text, ..self }
    }
}

impl JunitXml {
    /// The XML declaration and the root element for `tests` cases in all.
    pub(crate) fn new(name: &str, tests: usize, failures: usize) -> Self {
        let mut x = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
        let _ = writeln!(
            x,
            "<testsuites name=\"{}\" tests=\"{tests}\" failures=\"{failures}\" errors=\"0\">",
            xml_escape(name)
        );
        Self(x)
    }

    /// Opens a suite; with `source`, its properties name the scenario file
    /// and the caution.
    pub(crate) fn open_suite(
        &mut self,
        name: &str,
        tests: usize,
        failures: usize,
        source: Option<&str>,
    ) {
        let _ = writeln!(
            self.0,
            "  <testsuite name=\"{}\" tests=\"{tests}\" failures=\"{failures}\" errors=\"0\">",
            xml_escape(name)
        );
        if let Some(source) = source {
            let _ = writeln!(
                self.0,
                "    <properties>\n      <property name=\"source\" value=\"{}\"/>\n      <property name=\"caution\" value=\"{}\"/>\n    </properties>",
                xml_escape(source),
                xml_escape(CAUTION)
            );
        }
    }

    /// One test case, passed when `failure` is `None`.
    pub(crate) fn case(&mut self, class: &str, name: &str, failure: Option<Failure<'_>>) {
        self.case_with(class, name, &[], failure);
    }

    /// One test case with its own properties (`name`, `value` pairs).
    pub(crate) fn case_with(
        &mut self,
        class: &str,
        name: &str,
        properties: &[(&str, String)],
        failure: Option<Failure<'_>>,
    ) {
        let _ = write!(
            self.0,
            "    <testcase classname=\"{}\" name=\"{}\"",
            xml_escape(class),
            xml_escape(name)
        );
        if properties.is_empty() && failure.is_none() {
            self.0.push_str("/>\n");
            return;
        }
        self.0.push_str(">\n");
        self.properties(properties);
        if let Some(f) = failure {
            let _ = writeln!(
                self.0,
                "      <failure message=\"{}\" type=\"{}\">{}</failure>",
                xml_escape(f.message),
                xml_escape(f.kind),
                xml_escape(f.text)
            );
        }
        self.0.push_str("    </testcase>\n");
    }

    /// The `<properties>` of a test case, if any.
    fn properties(&mut self, properties: &[(&str, String)]) {
        if properties.is_empty() {
            return;
        }
        self.0.push_str("      <properties>\n");
        for (name, value) in properties {
            let _ = writeln!(
                self.0,
                "        <property name=\"{}\" value=\"{}\"/>",
                xml_escape(name),
                xml_escape(value)
            );
        }
        self.0.push_str("      </properties>\n");
    }

    /// A test case that does not apply to the run (passes), with why and
    /// the case's properties.
    pub(crate) fn skipped_with(
        &mut self,
        class: &str,
        name: &str,
        properties: &[(&str, String)],
        message: &str,
    ) {
        let _ = writeln!(
            self.0,
            "    <testcase classname=\"{}\" name=\"{}\">",
            xml_escape(class),
            xml_escape(name)
        );
        self.properties(properties);
        let _ = writeln!(
            self.0,
            "      <skipped message=\"{}\"/>\n    </testcase>",
            xml_escape(message)
        );
    }

    /// Closes the open suite, with the caution as its output.
    pub(crate) fn close_suite(&mut self) {
        let _ = writeln!(
            self.0,
            "    <system-out>{}</system-out>\n  </testsuite>",
            xml_escape(CAUTION)
        );
    }

    /// The finished document.
    pub(crate) fn finish(mut self) -> String {
        self.0.push_str("</testsuites>\n");
        self.0
    }
}
