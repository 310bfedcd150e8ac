//! Errors of scenario files, located by file, line, column and key.

use std::fmt;
use std::ops::Range;

/// A scenario that cannot be read or is invalid.
///
/// Displays as `FILE:LINE:COLUMN: key `KEY`: MESSAGE`, the message saying
/// what is allowed.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ScenarioError {
    /// The file (or `<built-in>` / `<string>`).
    pub file: String,
    /// 1-based line, when known.
    pub line: Option<usize>,
    /// 1-based column in characters, when known.
    pub column: Option<usize>,
    /// Dotted key path (`plant.mass_kg`, `reference.segments[2].hold_s`).
    pub key: Option<String>,
    /// What is wrong and what is allowed.
    pub message: String,
}

impl fmt::Display for ScenarioError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.file)?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
            if let Some(col) = self.column {
                write!(f, ":{col}")?;
            }
        }
        f.write_str(": ")?;
        if let Some(key) = &self.key {
            write!(f, "key `{key}`: ")?;
        }
        f.write_str(&self.message)
    }
}

impl std::error::Error for ScenarioError {}

/// Source text with its file name, to turn byte spans into locations.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Source<'a> {
    pub file: &'a str,
    pub text: &'a str,
}

impl Source<'_> {
    /// An error at `span` (byte range into the text).
    pub fn error(
        &self,
        span: Option<Range<usize>>,
        key: Option<String>,
        message: impl Into<String>,
    ) -> ScenarioError {
        let (line, column) = match span {
            Some(s) => {
                let (l, c) = self.line_column(s.start);
                (Some(l), Some(c))
            }
            None => (None, None),
        };
        ScenarioError {
            file: self.file.to_owned(),
            line,
            column,
            key,
            message: message.into(),
        }
    }

    /// 1-based line and character column of byte `offset`.
    pub fn line_column(&self, offset: usize) -> (usize, usize) {
        let before = self.text.get(..offset.min(self.text.len())).unwrap_or("");
        let line = before.matches('\n').count() + 1;
        let line_start = before.rfind('\n').map_or(0, |i| i + 1);
        let column = before.get(line_start..).map_or(0, |s| s.chars().count()) + 1;
        (line, column)
    }

    /// Best-effort dotted key of the value or key at byte `offset`: the
    /// innermost `[table]` header above it, the array or inline table that
    /// holds it, and the key itself (the word at the offset when it is
    /// followed by `=`, else the word before the last `=` on the line).
    pub fn key_at(&self, offset: usize) -> Option<String> {
        let text = self.text;
        let offset = offset.min(text.len());
        let before = text.get(..offset)?;
        let line_start = before.rfind('\n').map_or(0, |i| i + 1);
        let prefix = text.get(line_start..offset)?;
        let rest = text.get(offset..)?;
        let is_key_char = |c: char| c.is_ascii_alphanumeric() || c == '_' || c == '-';
        let word_before = |s: &str| -> String {
            let head = s.trim_end();
            let start = head.rfind(|c: char| !is_key_char(c)).map_or(0, |i| i + 1);
            head.get(start..).unwrap_or("").to_owned()
        };
        let header_of = |line: &str| {
            line.trim()
                .trim_start_matches('[')
                .split(']')
                .next()
                .unwrap_or("")
                .trim()
                .to_owned()
        };
        // A table header itself (e.g. a missing key reported at its table).
        let line_end = rest.find('\n').map_or(text.len(), |i| offset + i);
        let whole = text.get(line_start..line_end)?;
        if whole.trim_start().starts_with('[') {
            return Some(header_of(whole)).filter(|h| !h.is_empty());
        }
        let word_len = rest.find(|c: char| !is_key_char(c)).unwrap_or(rest.len());
        let word = rest.get(..word_len)?;
        let key = if !word.is_empty() && rest.get(word_len..)?.trim_start().starts_with('=') {
            word.to_owned()
        } else {
            word_before(prefix.get(..prefix.rfind('=')?)?)
        };
        // The array or inline table holding it: on this line (`k = [{ … }]`
        // or `k = { … }`), or a multi-line array opened above (`k = [`).
        let mut path = Vec::new();
        let mut header = None;
        if let Some(brace) = prefix.rfind(['{', '[']) {
            let outer = prefix.get(..brace)?;
            if let Some(eq) = outer.rfind('=') {
                path.push(word_before(outer.get(..eq)?));
            } else if outer.trim().is_empty() {
                for line in before.get(..line_start)?.lines().rev() {
                    let t = line.trim();
                    if t.starts_with('[') {
                        break;
                    }
                    if t.ends_with('[') {
                        if let Some(eq) = t.rfind('=') {
                            path.push(word_before(t.get(..eq)?));
                        }
                        break;
                    }
                }
            }
        }
        for line in before.lines().rev() {
            if line.trim_start().starts_with('[') {
                header = Some(header_of(line));
                break;
            }
        }
        let mut parts: Vec<String> = header.into_iter().filter(|h| !h.is_empty()).collect();
        parts.extend(path.into_iter().filter(|p| !p.is_empty()));
        if !key.is_empty() {
            parts.push(key);
        }
        (!parts.is_empty()).then(|| parts.join("."))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "[scenario]\nname = \"x\"\n\n[plant]\nmodel = \"vehicle\"\nmass_kg = -3\n\n[reference]\nsegments = [\n  { to = 1.0, ramp = 2 },\n]\nother = { a = 1 }\n";

    #[test]
    fn locates_lines_columns_and_keys() {
        let src = Source {
            file: "a.toml",
            text: TEXT,
        };
        let at = TEXT.find("-3").unwrap();
        assert_eq!(src.line_column(at), (6, 11));
        assert_eq!(src.key_at(at).as_deref(), Some("plant.mass_kg"));
        let key = TEXT.find("mass_kg").unwrap();
        assert_eq!(src.key_at(key).as_deref(), Some("plant.mass_kg"));
        let header = TEXT.find("[plant]").unwrap();
        assert_eq!(src.key_at(header).as_deref(), Some("plant"));
        let e = src.error(Some(at..at + 2), src.key_at(at), "must be > 0 kg");
        let inline = TEXT.find("ramp").unwrap();
        assert_eq!(
            src.key_at(inline).as_deref(),
            Some("reference.segments.ramp")
        );
        let value = TEXT.find("1.0").unwrap();
        assert_eq!(src.key_at(value).as_deref(), Some("reference.segments.to"));
        let a = TEXT.find("a = 1").unwrap();
        assert_eq!(src.key_at(a).as_deref(), Some("reference.other.a"));
        assert_eq!(
            e.to_string(),
            "a.toml:6:11: key `plant.mass_kg`: must be > 0 kg"
        );
    }
}
