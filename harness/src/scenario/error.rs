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
        // The `=` the key itself came from: an array or inline table
        // opened after it is the key's own value, not a table around it.
        let own_eq = if word.is_empty() {
            prefix.rfind('=')
        } else {
            None
        };
        if let Some(brace) = prefix.rfind(['{', '[']) {
            let outer = prefix.get(..brace)?;
            if let Some(eq) = outer.rfind('=')
                && Some(eq) != own_eq
            {
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

/// A number for an error message: as written for ordinary magnitudes,
/// in scientific notation for very large or very small ones (so `1e-300`
/// is not printed with 300 zeros).
///
/// ```text
/// 0.5 -> "0.5", 1e-300 -> "1e-300", 4e4 -> "40000", 1e300 -> "1e300"
/// ```
#[must_use]
pub(crate) fn number_text(x: f64) -> String {
    let a = x.abs();
    if a == 0.0 || !a.is_finite() || (1e-4..1e7).contains(&a) {
        format!("{x}")
    } else {
        format!("{x:e}")
    }
}

/// Edit distance (insertions, deletions, substitutions and swaps of two
/// neighbours) between `a` and `b`: the optimal-string-alignment form of
/// the Damerau–Levenshtein distance (Damerau, 1964; from memory).
#[must_use]
pub(crate) fn edit_distance(a: &str, b: &str) -> usize {
    let (a, b): (Vec<char>, Vec<char>) = (a.chars().collect(), b.chars().collect());
    let mut d = vec![vec![0usize; b.len() + 1]; a.len() + 1];
    for (i, row) in d.iter_mut().enumerate() {
        row[0] = i;
    }
    for (j, cell) in d[0].iter_mut().enumerate() {
        *cell = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut best = (d[i - 1][j] + 1)
                .min(d[i][j - 1] + 1)
                .min(d[i - 1][j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                best = best.min(d[i - 2][j - 2] + 1);
            }
            d[i][j] = best;
        }
    }
    d[a.len()][b.len()]
}

/// The candidate closest to `word` if it is close enough to be a slip
/// (at most a third of the word's length away, at least 1 edit, at most 3).
#[must_use]
pub fn closest<'a>(word: &str, candidates: &[&'a str]) -> Option<&'a str> {
    let allowed = (word.chars().count() / 3).clamp(1, 3);
    candidates
        .iter()
        .map(|c| (edit_distance(word, c), *c))
        .filter(|(d, _)| *d <= allowed)
        .min()
        .map(|(_, c)| c)
}

/// An unknown-key message of the TOML reader (`unknown field `x`,
/// expected one of `a`, `b``) with the keys that apply (`allowed`, when
/// the reader listed more) and a "did you mean" when one is close.
pub(crate) fn unknown_key(message: &str, allowed: Option<&[&str]>) -> Option<String> {
    let rest = message.strip_prefix("unknown field `")?;
    let (word, tail) = rest.split_once('`')?;
    let listed: Vec<&str> = tail.split('`').skip(1).step_by(2).collect();
    let keys: Vec<&str> = allowed.map_or(listed, <[&str]>::to_vec);
    let mut out = format!(
        "unknown field `{word}`, expected one of {}",
        keys.iter()
            .map(|k| format!("`{k}`"))
            .collect::<Vec<_>>()
            .join(", ")
    );
    if let Some(near) = closest(word, &keys) {
        out.push_str(&format!(" (did you mean `{near}`?)"));
    }
    Some(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "[scenario]\nname = \"x\"\n\n[plant]\nmodel = \"vehicle\"\nmass_kg = -3\n\n[reference]\nsegments = [\n  { to = 1.0, ramp = 2 },\n]\nother = { a = 1 }\n";

    #[test]
    fn numbers_in_messages() {
        assert_eq!(number_text(0.5), "0.5");
        assert_eq!(number_text(1e-300), "1e-300");
        assert_eq!(number_text(40000.0), "40000");
        assert_eq!(number_text(1e300), "1e300");
        assert_eq!(number_text(f64::NAN), "NaN");
    }

    #[test]
    fn did_you_mean() {
        assert_eq!(edit_distance("mass_kgs", "mass_kg"), 1);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("gian", "gain"), 1);
        assert_eq!(
            closest("mass_kgs", &["model", "mass_kg", "crr"]),
            Some("mass_kg")
        );
        assert_eq!(closest("zzzz", &["model", "mass_kg"]), None);
        let m = unknown_key(
            "unknown field `kpp`, expected one of `period_s`, `kp`, `ki_per_s`",
            None,
        )
        .unwrap();
        assert_eq!(
            m,
            "unknown field `kpp`, expected one of `period_s`, `kp`, `ki_per_s` (did you mean `kp`?)"
        );
    }

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
