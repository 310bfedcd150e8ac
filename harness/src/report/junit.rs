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
    let mut x = String::new();
    x.push_str("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    let _ = writeln!(
        x,
        "<testsuites name=\"evenkeel check\" tests=\"{tests}\" failures=\"{failures}\" errors=\"0\">"
    );
    for o in outcomes {
        let name = &o.scenario.name;
        for r in &o.runs {
            let failed = r.verdicts.iter().filter(|v| !v.pass).count();
            let _ = writeln!(
                x,
                "  <testsuite name=\"{}\" tests=\"{}\" failures=\"{failed}\" errors=\"0\">",
                xml_escape(&format!("{name} [{}]", r.backend)),
                r.verdicts.len()
            );
            let _ = writeln!(
                x,
                "    <properties>\n      <property name=\"source\" value=\"{}\"/>\n      <property name=\"caution\" value=\"{}\"/>\n    </properties>",
                xml_escape(&o.scenario.source),
                xml_escape(CAUTION)
            );
            for v in &r.verdicts {
                let c = &v.criterion;
                let limit = format!("{} {}", c.bound.symbol(), format_number(Some(c.limit)));
                let case = format!("{} {limit}", c.metric.name());
                let class = format!("{name}.{}", r.backend);
                let _ = write!(
                    x,
                    "    <testcase classname=\"{}\" name=\"{}\"",
                    xml_escape(&class),
                    xml_escape(&case)
                );
                if v.pass {
                    x.push_str("/>\n");
                } else {
                    let msg = format!(
                        "{} measured {}, required {limit}",
                        c.metric.name(),
                        format_number(v.measured)
                    );
                    let _ = writeln!(
                        x,
                        ">\n      <failure message=\"{m}\" type=\"criterion\">{m}</failure>\n    </testcase>",
                        m = xml_escape(&msg)
                    );
                }
            }
            let _ = writeln!(
                x,
                "    <system-out>{}</system-out>\n  </testsuite>",
                xml_escape(CAUTION)
            );
        }
    }
    x.push_str("</testsuites>\n");
    x
}
