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

/// The JUnit XML document for `outcomes`.
#[must_use]
pub fn junit(outcomes: &[Outcome]) -> String {
    let runs = outcomes.iter().flat_map(|o| o.runs.iter());
    let tests: usize = runs.clone().map(|r| r.verdicts.len()).sum();
    let failures: usize = runs
        .map(|r| r.verdicts.iter().filter(|v| !v.pass).count())
        .sum();
    let mut x = JunitXml::new("evenkeel check", tests, failures);
    for o in outcomes {
        let name = &o.scenario.name;
        for r in &o.runs {
            let failed = r.verdicts.iter().filter(|v| !v.pass).count();
            x.open_suite(
                &format!("{name} [{}]", r.backend),
                r.verdicts.len(),
                failed,
                Some(&o.scenario.source),
            );
            let class = format!("{name}.{}", r.backend);
            for v in &r.verdicts {
                let c = &v.criterion;
                let limit = format!("{} {}", c.bound.symbol(), format_number(Some(c.limit)));
                let why = v
                    .undefined
                    .map_or_else(String::new, |u| format!(" ({})", u.reason()));
                let msg = format!(
                    "{} measured {}{why}, required {limit}",
                    c.metric.name(),
                    format_number(v.measured)
                );
                let name = format!("{} {limit}", c.metric.name());
                if v.pass && v.undefined.is_some() {
                    x.skipped(&class, &name, &msg);
                } else {
                    let failure = (!v.pass).then(|| Failure::new("criterion", &msg));
                    x.case(&class, &name, failure);
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
        let _ = write!(
            self.0,
            "    <testcase classname=\"{}\" name=\"{}\"",
            xml_escape(class),
            xml_escape(name)
        );
        match failure {
            None => self.0.push_str("/>\n"),
            Some(f) => {
                let _ = writeln!(
                    self.0,
                    ">\n      <failure message=\"{}\" type=\"{}\">{}</failure>\n    </testcase>",
                    xml_escape(f.message),
                    xml_escape(f.kind),
                    xml_escape(f.text)
                );
            }
        }
    }

    /// A test case that does not apply to the run (passes), with why.
    pub(crate) fn skipped(&mut self, class: &str, name: &str, message: &str) {
        let _ = writeln!(
            self.0,
            "    <testcase classname=\"{}\" name=\"{}\">\n      <skipped message=\"{}\"/>\n    </testcase>",
            xml_escape(class),
            xml_escape(name),
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
