//! One self-contained HTML report: verdict tables, plots inline as SVG,
//! and the caution; no scripts, no network, no external fonts or styles,
//! so it opens in any browser and works as a CI artifact.

use std::fmt::Write;

use super::CAUTION;

/// Escapes text for HTML element content and attribute values.
///
/// ```
/// use evenkeel_harness::report::html_escape;
/// assert_eq!(html_escape("a<b & \"c\""), "a&lt;b &amp; &quot;c&quot;");
/// ```
#[must_use]
pub fn html_escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c if (c as u32) < 0x20 && !matches!(c, '\t' | '\n' | '\r') => out.push('\u{FFFD}'),
            c => out.push(c),
        }
    }
    out
}

/// A cell that reads as a number, a limit or a variant (`1.5`, `-2`,
/// `<= 3`, `#4 …`): right-aligned; anything else is text, left-aligned.
fn numeric(cell: &str) -> bool {
    cell.chars()
        .next()
        .is_some_and(|c| c.is_ascii_digit() || "+-.<>=#≤≥".contains(c))
}

/// The page's own style sheet (inline; system fonts only).
const STYLE: &str = "body{font-family:sans-serif;margin:2em auto;max-width:1250px;color:#111;line-height:1.4}\
h1{font-size:1.5em}h2{font-size:1.25em;border-bottom:1px solid #ccc;padding-bottom:.2em;margin-top:2em}\
h3{font-size:1.05em}pre{background:#f6f6f6;padding:.8em;overflow-x:auto;font-size:.85em}\
table{border-collapse:collapse;margin:.6em 0;font-size:.9em}td,th{border:1px solid #ccc;padding:.25em .6em;text-align:right}\
th{background:#eee}td.text,th.text{text-align:left}.pass{color:#11661f;font-weight:bold}.fail{color:#b3121b;font-weight:bold}\
.caution{border:2px solid #b3121b;padding:.6em;background:#fff4f4}figure{margin:1em 0}figure svg{max-width:100%;height:auto;border:1px solid #ddd}\
figcaption{font-size:.9em;color:#444}nav a{margin-right:1em}";

/// A report page being written: title, a table of contents, sections.
#[derive(Debug, Clone, Default)]
pub struct HtmlPage {
    title: String,
    verdict: Option<bool>,
    toc: Vec<(String, String)>,
    body: String,
}

impl HtmlPage {
    /// A page titled `title`; `verdict` (pass or fail) is shown beside it.
    #[must_use]
    pub fn new(title: &str, verdict: Option<bool>) -> Self {
        Self {
            title: title.to_owned(),
            verdict,
            ..Self::default()
        }
    }

    /// A section heading (level 2, listed in the contents) or a sub-heading
    /// (level 3).
    pub fn heading(&mut self, level: u8, text: &str) {
        let level = level.clamp(2, 3);
        if level == 2 {
            let id = format!("s{}", self.toc.len() + 1);
            let _ = writeln!(self.body, "<h2 id=\"{id}\">{}</h2>", html_escape(text));
            self.toc.push((id, text.to_owned()));
        } else {
            let _ = writeln!(self.body, "<h3>{}</h3>", html_escape(text));
        }
    }

    /// A paragraph of text.
    pub fn paragraph(&mut self, text: &str) {
        let _ = writeln!(self.body, "<p>{}</p>", html_escape(text));
    }

    /// A verdict line, coloured.
    pub fn verdict(&mut self, pass: bool, text: &str) {
        let _ = writeln!(
            self.body,
            "<p class=\"{}\">{}</p>",
            if pass { "pass" } else { "fail" },
            html_escape(text)
        );
    }

    /// Preformatted text (a report as the terminal shows it).
    pub fn preformatted(&mut self, text: &str) {
        let _ = writeln!(self.body, "<pre>{}</pre>", html_escape(text));
    }

    /// A table: `head` cells, then rows; a cell that reads `PASS`/`pass`
    /// or `FAIL` is coloured; the first column is left-aligned text.
    pub fn table(&mut self, head: &[&str], rows: &[Vec<String>]) {
        self.body.push_str("<table>\n<tr>");
        for (i, h) in head.iter().enumerate() {
            let class = if i == 0 { " class=\"text\"" } else { "" };
            let _ = write!(self.body, "<th{class}>{}</th>", html_escape(h));
        }
        self.body.push_str("</tr>\n");
        for row in rows {
            self.body.push_str("<tr>");
            for (i, c) in row.iter().enumerate() {
                let class = match c.as_str() {
                    "pass" | "PASS" => " class=\"pass\"",
                    "FAIL" | "fail" => " class=\"fail\"",
                    _ if i == 0 || !numeric(c) => " class=\"text\"",
                    _ => "",
                };
                let _ = write!(self.body, "<td{class}>{}</td>", html_escape(c));
            }
            self.body.push_str("</tr>\n");
        }
        self.body.push_str("</table>\n");
    }

    /// An SVG drawing inline, with a caption. The drawing's own XML
    /// declaration, if any, is dropped (it is not allowed inside HTML).
    pub fn svg(&mut self, svg: &str, caption: &str) {
        let start = svg.find("<svg").unwrap_or(0);
        let _ = writeln!(
            self.body,
            "<figure>{}<figcaption>{}</figcaption></figure>",
            &svg[start..],
            html_escape(caption)
        );
    }

    /// The finished document.
    #[must_use]
    pub fn finish(self) -> String {
        let mut out =
            String::from("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n");
        let _ = writeln!(out, "<title>{}</title>", html_escape(&self.title));
        let _ = writeln!(out, "<style>{STYLE}</style>\n</head>\n<body>");
        let badge = match self.verdict {
            Some(true) => " <span class=\"pass\">PASS</span>",
            Some(false) => " <span class=\"fail\">FAIL</span>",
            None => "",
        };
        let _ = writeln!(out, "<h1>{}{badge}</h1>", html_escape(&self.title));
        let _ = writeln!(out, "<p class=\"caution\">{}</p>", html_escape(CAUTION));
        if self.toc.len() > 1 {
            out.push_str("<nav>");
            for (id, text) in &self.toc {
                let _ = write!(out, "<a href=\"#{id}\">{}</a>", html_escape(text));
            }
            out.push_str("</nav>\n");
        }
        out.push_str(&self.body);
        let _ = writeln!(
            out,
            "<p class=\"caution\">{}</p>\n<p><small>written by evenkeel {}</small></p>\n</body>\n</html>",
            html_escape(CAUTION),
            env!("CARGO_PKG_VERSION")
        );
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_page_is_self_contained_and_escaped() {
        let mut p = HtmlPage::new("loop <1>", Some(false));
        p.heading(2, "verdicts");
        p.table(
            &["criterion", "verdict"],
            &[vec!["rise_time_s".into(), "FAIL".into()]],
        );
        p.svg(
            "<?xml version=\"1.0\"?>\n<svg xmlns=\"http://www.w3.org/2000/svg\"></svg>",
            "a plot",
        );
        p.preformatted("a < b");
        let html = p.finish();
        assert!(html.starts_with("<!DOCTYPE html>"));
        assert!(html.contains("<title>loop &lt;1&gt;</title>"));
        assert!(html.contains("<td class=\"fail\">FAIL</td>"));
        assert!(!html.contains("<?xml"));
        assert!(html.contains("a &lt; b"));
        assert_eq!(html.matches(CAUTION).count(), 2);
        // Nothing fetched from anywhere: no script, no external reference
        // (the SVG namespace is a name, not a fetch).
        for banned in ["<script", "<link", "src=", "@import", "url("] {
            assert!(!html.contains(banned), "{banned}");
        }
    }
}
