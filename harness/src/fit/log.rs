//! Logged tests as `evenkeel fit` reads them: CSV with a header line,
//! validated with file, line and column in every error.
//!
//! ```text
//! # time = t_s            optional header lines: `# KEY = VALUE`, keys
//! # input = applied       time, input, output, setpoint, label,
//! # output = measurement  time_scale (seconds per time unit)
//! t_s,applied,measurement,reference
//! 0,0.5,199.9,200
//! 0.05,0.5,199.7,200
//! ```
//!
//! Columns are chosen by name: on the command line, else in the header
//! lines, else the names `evenkeel check --trace` writes (`t_s`, `applied`
//! or `command`, `measurement`, `reference`), so a trace can be fitted as
//! it is.

use std::fmt;
use std::path::Path;

/// Largest log accepted, bytes.
pub const MAX_LOG_BYTES: u64 = 256 * 1024 * 1024;

/// Fewest samples a log must have.
pub const MIN_SAMPLES: usize = 20;

/// A sample interval longer than this many times the median is a gap: a
/// warning up to [`GAP_ERROR`] times, an error beyond (the input in such a
/// hole is unknown).
pub const GAP_WARNING: f64 = 1.5;
/// See [`GAP_WARNING`].
pub const GAP_ERROR: f64 = 10.0;

/// A log that cannot be used, located.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LogError {
    /// The file.
    pub file: String,
    /// 1-based line, when known.
    pub line: Option<usize>,
    /// 1-based column in characters, when known.
    pub column: Option<usize>,
    /// What is wrong and what is allowed.
    pub message: String,
}

impl fmt::Display for LogError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.file)?;
        if let Some(l) = self.line {
            write!(f, ":{l}")?;
            if let Some(c) = self.column {
                write!(f, ":{c}")?;
            }
        }
        write!(f, ": {}", self.message)
    }
}

impl std::error::Error for LogError {}

/// Which columns hold what; `None` fields take the header lines' choice,
/// then the defaults.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Columns {
    /// Time column (default `t_s`).
    pub time: Option<String>,
    /// Input: the command or, better, the value the actuator applied
    /// (default `applied`, else `command`).
    pub input: Option<String>,
    /// Measured output (default `measurement`).
    pub output: Option<String>,
    /// Setpoint, optional (default `reference` when present).
    pub setpoint: Option<String>,
    /// A label column (e.g. the payload), optional.
    pub label: Option<String>,
}

/// A validated log.
#[derive(Debug, Clone, PartialEq)]
pub struct Log {
    /// Where it came from.
    pub file: String,
    /// Short name (the file stem).
    pub name: String,
    /// Time, s, strictly increasing.
    pub time_s: Vec<f64>,
    /// Input (command units).
    pub input: Vec<f64>,
    /// Measured output.
    pub output: Vec<f64>,
    /// Setpoint, if logged.
    pub setpoint: Option<Vec<f64>>,
    /// The label's value (first row), if a label column was named.
    pub label: Option<String>,
    /// Things worth knowing that do not stop the fit (gaps, a label that
    /// changes).
    pub warnings: Vec<String>,
}

impl Log {
    /// The median sample interval, s.
    #[must_use]
    pub fn median_dt_s(&self) -> f64 {
        let mut d: Vec<f64> = self.time_s.windows(2).map(|w| w[1] - w[0]).collect();
        d.sort_by(f64::total_cmp);
        d.get(d.len() / 2).copied().unwrap_or(0.0)
    }
}

/// Reads and validates the log at `path`.
///
/// # Errors
/// [`LogError`] naming the file (and line and column where it applies)
/// for an unreadable, oversized, malformed or unusable log.
pub fn read(path: &Path, cols: &Columns) -> Result<Log, LogError> {
    let file = path.display().to_string();
    let fail = |line, column, message: String| LogError {
        file: file.clone(),
        line,
        column,
        message,
    };
    let meta = std::fs::metadata(path)
        .map_err(|e| fail(None, None, format!("cannot read the file: {e}")))?;
    if !meta.is_file() {
        return Err(fail(
            None,
            None,
            "is not a regular file (a log must be a file)".into(),
        ));
    }
    let size = meta.len();
    if size > MAX_LOG_BYTES {
        return Err(fail(
            None,
            None,
            format!("{size} bytes is more than the {MAX_LOG_BYTES} bytes a log may have"),
        ));
    }
    let text = std::fs::read_to_string(path).map_err(|e| {
        fail(
            None,
            None,
            format!("cannot read the file as UTF-8 text: {e}"),
        )
    })?;
    let name = path
        .file_stem()
        .map_or_else(|| file.clone(), |s| s.to_string_lossy().into_owned());
    parse(&text, &file, &name, cols)
}

/// Parses log text; `file` and `name` label it.
///
/// # Errors
/// As [`read`].
#[allow(clippy::too_many_lines)]
pub fn parse(text: &str, file: &str, name: &str, cols: &Columns) -> Result<Log, LogError> {
    let fail = |line: Option<usize>, column: Option<usize>, message: String| LogError {
        file: file.to_owned(),
        line,
        column,
        message,
    };
    let mut header_keys = Columns::default();
    let mut time_scale = 1.0;
    let mut lines = text.lines().enumerate().map(|(i, l)| (i + 1, l));
    // Header lines, then the column names.
    let (header_line, header) = loop {
        let Some((n, line)) = lines.next() else {
            return Err(fail(None, None, "no header line with column names".into()));
        };
        let t = line.trim();
        if t.is_empty() {
            continue;
        }
        if let Some(rest) = t.strip_prefix('#') {
            if let Some((k, v)) = rest.split_once('=') {
                let (k, v) = (k.trim(), v.trim().to_owned());
                match k {
                    "time" => header_keys.time = Some(v),
                    "input" => header_keys.input = Some(v),
                    "output" => header_keys.output = Some(v),
                    "setpoint" => header_keys.setpoint = Some(v),
                    "label" => header_keys.label = Some(v),
                    "time_scale" => {
                        time_scale = v.parse().ok().filter(|x: &f64| x.is_finite() && *x > 0.0).ok_or_else(|| {
                            fail(Some(n), None, format!("time_scale `{v}` is not allowed: must be a number > 0 (seconds per time unit)"))
                        })?;
                    }
                    other => {
                        return Err(fail(
                            Some(n),
                            Some(line.find(other).map_or(1, |i| i + 1)),
                            format!(
                                "unknown header key `{other}`: expected time, input, output, setpoint, label or time_scale"
                            ),
                        ));
                    }
                }
            }
            continue;
        }
        break (n, line);
    };
    let names: Vec<String> = header.split(',').map(|s| s.trim().to_owned()).collect();
    let find = |want: &str, flag: &str| -> Result<usize, LogError> {
        names.iter().position(|c| c == want).ok_or_else(|| {
            fail(
                Some(header_line),
                None,
                format!(
                    "no column `{want}` ({flag}); the columns are: {}",
                    names.join(", ")
                ),
            )
        })
    };
    let pick = |cli: &Option<String>, head: &Option<String>| cli.clone().or_else(|| head.clone());
    let time_col = find(
        &pick(&cols.time, &header_keys.time).unwrap_or_else(|| "t_s".into()),
        "time",
    )?;
    let input_col = match pick(&cols.input, &header_keys.input) {
        Some(c) => find(&c, "input")?,
        None => find("applied", "input").or_else(|_| {
            find("command", "input").map_err(|e| LogError {
                message: format!(
                    "no column `applied` or `command` (input; name another with --input); the columns are: {}",
                    names.join(", ")
                ),
                ..e
            })
        })?,
    };
    let output_col = find(
        &pick(&cols.output, &header_keys.output).unwrap_or_else(|| "measurement".into()),
        "output",
    )?;
    let setpoint_col = match pick(&cols.setpoint, &header_keys.setpoint) {
        Some(c) => Some(find(&c, "setpoint")?),
        None => names.iter().position(|c| c == "reference"),
    };
    let label_col = match pick(&cols.label, &header_keys.label) {
        Some(c) => Some(find(&c, "label")?),
        None => None,
    };
    let mut log = Log {
        file: file.to_owned(),
        name: name.to_owned(),
        time_s: Vec::new(),
        input: Vec::new(),
        output: Vec::new(),
        setpoint: setpoint_col.map(|_| Vec::new()),
        label: None,
        warnings: Vec::new(),
    };
    let mut label_changes = 0usize;
    for (n, line) in lines {
        if line.trim().is_empty() || line.trim_start().starts_with('#') {
            continue;
        }
        let fields: Vec<&str> = line.split(',').collect();
        if fields.len() != names.len() {
            return Err(fail(
                Some(n),
                None,
                format!("{} fields, the header has {}", fields.len(), names.len()),
            ));
        }
        let column_of = |i: usize| {
            fields[..i]
                .iter()
                .map(|f| f.chars().count() + 1)
                .sum::<usize>()
                + 1
        };
        let number = |i: usize, what: &str| -> Result<f64, LogError> {
            let raw = fields[i].trim();
            match raw.parse::<f64>() {
                Ok(x) if x.is_finite() => Ok(x),
                Ok(_) => Err(fail(
                    Some(n),
                    Some(column_of(i)),
                    format!("{what} `{raw}` is not finite"),
                )),
                Err(_) => Err(fail(
                    Some(n),
                    Some(column_of(i)),
                    format!("{what} `{raw}` is not a number"),
                )),
            }
        };
        let t = number(time_col, "time")? * time_scale;
        if let Some(&last) = log.time_s.last()
            && t <= last
        {
            return Err(fail(
                Some(n),
                Some(column_of(time_col)),
                format!(
                    "time {t} s is {} the previous sample's {last} s: times must increase strictly",
                    if t == last { "the same as" } else { "before" }
                ),
            ));
        }
        log.time_s.push(t);
        log.input.push(number(input_col, "input")?);
        log.output.push(number(output_col, "output")?);
        if let (Some(c), Some(sp)) = (setpoint_col, log.setpoint.as_mut()) {
            sp.push(number(c, "setpoint")?);
        }
        if let Some(c) = label_col {
            let v = fields[c].trim().to_owned();
            match &log.label {
                None => log.label = Some(v),
                Some(l) if *l != v => label_changes += 1,
                Some(_) => {}
            }
        }
    }
    let samples = log.time_s.len();
    if samples < MIN_SAMPLES {
        return Err(fail(
            None,
            None,
            format!("{samples} samples: too short, a log needs at least {MIN_SAMPLES}"),
        ));
    }
    let (lo, hi) = log
        .input
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    if hi - lo <= 0.0 {
        return Err(fail(
            None,
            None,
            format!(
                "the input is {lo} throughout: with no change of the input there is nothing to identify (a step test changes it)"
            ),
        ));
    }
    let dt = log.median_dt_s();
    let mut gaps = 0usize;
    let mut widest = (0.0f64, 0.0f64);
    for w in log.time_s.windows(2) {
        let d = w[1] - w[0];
        if d > GAP_ERROR * dt {
            return Err(fail(
                None,
                None,
                format!(
                    "a gap of {d} s after t = {} s, more than {GAP_ERROR} times the median interval {dt} s: the input in the gap is unknown; split the log there",
                    w[0]
                ),
            ));
        }
        if d > GAP_WARNING * dt {
            gaps += 1;
            if d > widest.0 {
                widest = (d, w[0]);
            }
        }
    }
    if gaps > 0 {
        log.warnings.push(format!(
            "{gaps} gap(s) longer than {GAP_WARNING} times the median interval {dt} s (widest {} s after t = {} s): the input is taken as held through them",
            widest.0, widest.1
        ));
    }
    if label_changes > 0 {
        log.warnings.push(format!(
            "the label changes on {label_changes} rows; the first value `{}` is used",
            log.label.clone().unwrap_or_default()
        ));
    }
    Ok(log)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rows(n: usize, f: impl Fn(usize) -> String) -> String {
        (0..n).map(|i| f(i) + "\n").collect()
    }

    fn good() -> String {
        "t_s,applied,measurement\n".to_owned()
            + &rows(30, |i| format!("{},{},{}", i, if i < 5 { 0 } else { 1 }, i))
    }

    #[test]
    fn reads_a_trace_shaped_log() {
        let log = parse(&good(), "a.csv", "a", &Columns::default()).unwrap();
        assert_eq!(log.time_s.len(), 30);
        assert_eq!(log.input[5], 1.0);
        assert_eq!(log.median_dt_s(), 1.0);
        assert!(log.warnings.is_empty());
    }

    #[test]
    fn header_lines_choose_columns_and_scale_time() {
        let text = "# time = ms\n# input = u\n# output = y\n# time_scale = 0.001\nms,u,y\n"
            .to_owned()
            + &rows(25, |i| format!("{},{},{}", i * 10, i % 2, 0.5));
        let log = parse(&text, "b.csv", "b", &Columns::default()).unwrap();
        assert_eq!(log.time_s[1], 0.01);
    }

    /// Each bad log with the line, column and words of its error.
    #[test]
    fn bad_logs_are_refused_with_their_place() {
        let table: [(String, Option<usize>, Option<usize>, &str); 7] = [
            (
                good().replace("\n7,1,7\n", "\n7,1,NaN\n"),
                Some(9),
                Some(5),
                "output `NaN` is not finite",
            ),
            (
                good().replace("\n7,1,7\n", "\n7,1,x\n"),
                Some(9),
                Some(5),
                "output `x` is not a number",
            ),
            (
                good().replace("\n7,1,7\n", "\n6,1,7\n"),
                Some(9),
                Some(1),
                "the same as the previous",
            ),
            (
                good().replace("\n7,1,7\n", "\n5,1,7\n"),
                Some(9),
                Some(1),
                "before the previous",
            ),
            (
                "t_s,applied,measurement\n".to_owned() + &rows(10, |i| format!("{i},{i},0")),
                None,
                None,
                "too short",
            ),
            (
                "t_s,applied,measurement\n".to_owned() + &rows(30, |i| format!("{i},1,{i}")),
                None,
                None,
                "nothing to identify",
            ),
            (
                "t_s,u,measurement\n".to_owned() + &rows(30, |i| format!("{i},1,{i}")),
                Some(1),
                None,
                "no column `applied` or `command`",
            ),
        ];
        for (text, line, column, words) in table {
            let e = parse(&text, "bad.csv", "bad", &Columns::default()).unwrap_err();
            assert_eq!((e.line, e.column), (line, column), "{e}");
            assert!(e.message.contains(words), "{e}");
        }
    }

    #[test]
    fn gaps_warn_then_fail() {
        let mut t: Vec<f64> = (0..30).map(f64::from).collect();
        t[20..].iter_mut().for_each(|x| *x += 2.0); // one 3 s interval
        let text = "t_s,applied,measurement\n".to_owned()
            + &t.iter()
                .enumerate()
                .map(|(i, x)| format!("{x},{},0\n", i % 2))
                .collect::<String>();
        let log = parse(&text, "g.csv", "g", &Columns::default()).unwrap();
        assert!(log.warnings[0].contains("1 gap(s)"), "{:?}", log.warnings);
        let mut t2: Vec<f64> = (0..30).map(f64::from).collect();
        t2[20..].iter_mut().for_each(|x| *x += 20.0);
        let text2 = "t_s,applied,measurement\n".to_owned()
            + &t2
                .iter()
                .enumerate()
                .map(|(i, x)| format!("{x},{},0\n", i % 2))
                .collect::<String>();
        let e = parse(&text2, "g.csv", "g", &Columns::default()).unwrap_err();
        assert!(e.message.contains("split the log there"), "{e}");
    }
}
