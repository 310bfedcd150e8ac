//! Reading device logs: `ekr1` text records (anywhere in a line, as a
//! decoded `defmt` line has them) or CSV with the same fields.

use std::fmt;
use std::path::Path;

/// Largest log accepted, bytes.
pub const MAX_REPLAY_BYTES: u64 = 512 * 1024 * 1024;

/// The record marker of format version 1.
pub const MARKER: &str = "ekr1";

/// What a record does.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// `Controller::step_with`.
    Step,
    /// `Controller::track`.
    Track,
    /// `Controller::engage`.
    Engage,
    /// `Controller::reset`.
    Reset,
}

impl Kind {
    /// The record's word.
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::Step => "step",
            Self::Track => "track",
            Self::Engage => "engage",
            Self::Reset => "reset",
        }
    }

    fn from_name(s: &str) -> Option<Self> {
        [Self::Step, Self::Track, Self::Engage, Self::Reset]
            .into_iter()
            .find(|k| k.name() == s)
    }
}

/// One record.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Record {
    /// What it does.
    pub kind: Kind,
    /// The sample index it carries.
    pub k: u64,
    /// `(name, raw value)` of its other fields.
    pub fields: Vec<(String, String)>,
    /// Source line (1-based).
    pub line: usize,
}

/// A log that cannot be read, located.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ReplayError {
    /// The file.
    pub file: String,
    /// 1-based line, when known.
    pub line: Option<usize>,
    /// What is wrong.
    pub message: String,
}

impl fmt::Display for ReplayError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.file)?;
        if let Some(l) = self.line {
            write!(f, ":{l}")?;
        }
        write!(f, ": {}", self.message)
    }
}

impl std::error::Error for ReplayError {}

/// Fields a record may carry.
const FIELDS: [&str; 8] = ["k", "r", "y", "a", "f", "v", "u", "s"];

/// Reads the log at `path`.
///
/// # Errors
/// [`ReplayError`] for an unreadable, oversized or malformed log.
pub fn read(path: &Path) -> Result<Vec<Record>, ReplayError> {
    let file = path.display().to_string();
    let fail = |message: String| ReplayError {
        file: file.clone(),
        line: None,
        message,
    };
    let meta = std::fs::metadata(path).map_err(|e| fail(format!("cannot read the file: {e}")))?;
    if !meta.is_file() {
        return Err(fail("is not a regular file (a log must be a file)".into()));
    }
    let size = meta.len();
    if size > MAX_REPLAY_BYTES {
        return Err(fail(format!(
            "{size} bytes is more than the {MAX_REPLAY_BYTES} bytes a replay log may have"
        )));
    }
    let text = std::fs::read_to_string(path)
        .map_err(|e| fail(format!("cannot read the file as UTF-8 text: {e}")))?;
    parse(&text, &file)
}

/// Parses log text; `file` names it in errors. Lines without a record
/// (other log output) are skipped; a CSV header `kind,k,r,y,a,f,v,u,s`
/// switches to CSV rows.
///
/// # Errors
/// [`ReplayError`] for a malformed record, or a log with no record.
pub fn parse(text: &str, file: &str) -> Result<Vec<Record>, ReplayError> {
    let fail = |line: usize, message: String| ReplayError {
        file: file.to_owned(),
        line: Some(line),
        message,
    };
    let mut out: Vec<Record> = Vec::new();
    let mut csv: Option<Vec<String>> = None;
    for (i, raw) in text.lines().enumerate() {
        let n = i + 1;
        let line = raw.trim();
        if line.is_empty() || line.starts_with('#') {
            continue;
        }
        if csv.is_none() && line.starts_with("kind,") {
            let head: Vec<String> = line.split(',').map(|s| s.trim().to_owned()).collect();
            for h in &head[1..] {
                if !FIELDS.contains(&h.as_str()) {
                    return Err(fail(
                        n,
                        format!(
                            "unknown column `{h}`: expected kind, then any of {}",
                            FIELDS.join(", ")
                        ),
                    ));
                }
            }
            csv = Some(head);
            continue;
        }
        let (kind, pairs): (&str, Vec<(String, String)>) = if let Some(head) = &csv {
            let cells: Vec<&str> = line.split(',').map(str::trim).collect();
            if cells.len() != head.len() {
                return Err(fail(
                    n,
                    format!("{} fields, the header has {}", cells.len(), head.len()),
                ));
            }
            (
                cells[0],
                head[1..]
                    .iter()
                    .zip(&cells[1..])
                    .filter(|(_, v)| !v.is_empty())
                    .map(|(k, v)| (k.clone(), (*v).to_owned()))
                    .collect(),
            )
        } else {
            let Some(at) = line.find(MARKER) else {
                continue; // other output of the firmware
            };
            let mut words = line[at + MARKER.len()..].split_whitespace();
            let Some(kind) = words.next() else {
                return Err(fail(
                    n,
                    "a record without a kind (step, track, engage, reset)".into(),
                ));
            };
            let mut pairs = Vec::new();
            for w in words {
                let Some((k, v)) = w.split_once('=') else {
                    return Err(fail(n, format!("`{w}` is not NAME=VALUE")));
                };
                if !FIELDS.contains(&k) {
                    return Err(fail(
                        n,
                        format!("unknown field `{k}`: expected one of {}", FIELDS.join(", ")),
                    ));
                }
                pairs.push((k.to_owned(), v.to_owned()));
            }
            (kind, pairs)
        };
        let kind = Kind::from_name(kind).ok_or_else(|| {
            fail(
                n,
                format!("unknown record `{kind}`: expected step, track, engage or reset"),
            )
        })?;
        let k = pairs
            .iter()
            .find(|(name, _)| name == "k")
            .ok_or_else(|| fail(n, "a record needs its sample index `k=`".into()))?
            .1
            .parse::<u64>()
            .map_err(|_| fail(n, "`k=` must be a whole number".into()))?;
        if let Some(last) = out.last()
            && k < last.k
        {
            return Err(fail(
                n,
                format!(
                    "sample index {k} comes after {}: records must be in order",
                    last.k
                ),
            ));
        }
        out.push(Record {
            kind,
            k,
            fields: pairs.into_iter().filter(|(name, _)| name != "k").collect(),
            line: n,
        });
    }
    if out.is_empty() {
        return Err(ReplayError {
            file: file.to_owned(),
            line: None,
            message: format!(
                "no record: expected lines with `{MARKER} step …` or a CSV header `kind,k,r,y,a,f,v,u,s`"
            ),
        });
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn text_records_inside_other_output_and_csv_rows() {
        let text = "boot\n0.000 INFO ekr1 engage k=0 v=32768\nnoise\n[INFO] ekr1 step k=0 r=1 y=2 a=- f=- u=3 s=0x0080\n";
        let r = parse(text, "t").unwrap();
        assert_eq!(r.len(), 2);
        assert_eq!((r[1].kind, r[1].k, r[1].line), (Kind::Step, 0, 4));
        assert_eq!(r[1].fields[0], ("r".to_owned(), "1".to_owned()));
        let csv = "kind,k,r,y,u,s\nstep,0,1,2,3,0x0000\nstep,1,1,2,3,0x0000\n";
        assert_eq!(parse(csv, "c").unwrap().len(), 2);
    }

    #[test]
    fn malformed_records_name_their_line() {
        for (text, line, words) in [
            ("ekr1 jump k=0\n", 1, "unknown record `jump`"),
            ("x\nekr1 step r=1\n", 2, "needs its sample index"),
            ("ekr1 step k=0 q=1\n", 1, "unknown field `q`"),
            ("ekr1 step k=2\nekr1 step k=1\n", 2, "comes after 2"),
            ("ekr1 step k=0 r\n", 1, "is not NAME=VALUE"),
            ("kind,k,z\n", 1, "unknown column `z`"),
            ("hello\n", 0, "no record"),
        ] {
            let e = parse(text, "bad.log").unwrap_err();
            assert_eq!(e.line.unwrap_or(0), line, "{e}");
            assert!(e.message.contains(words), "{e}");
        }
    }
}
