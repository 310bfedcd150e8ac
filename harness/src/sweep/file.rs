//! Result files (`sweep --save`, read by `merge`): one JSON value per
//! line, a SHA-256 digest of every byte before it on the last line.
//!
//! ```text
//! {"format":"evenkeel sweep result, version 2", …header…}
//! {"variant":{"index":0,"seed":…,"values":[…],"measured":[…],"pass":[…],"reasons":[…],…}}
//! …one line per variant, in index order…
//! {"envelope":{…}}
//! {"sha256":"…64 hex digits…"}
//! ```
//!
//! The digest catches corruption and casual edits; it is **not** a
//! signature: anyone can recompute it after an edit. `merge` also
//! recomputes every verdict from the measured values and the scenario's
//! criteria and checks the structure, so an edited file that carries a
//! recomputed digest still cannot claim a pass its values do not give.

use std::io::{BufRead, Write};

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use super::envelope::Envelope;
use super::run::VariantResult;
use super::stream::{HEADER_FORMAT, SweepHeader};

/// Longest line a result file may have, bytes: a variant line of 16
/// parameters and 34 criteria is below 4 KiB, the envelope line below
/// 400 KiB.
pub const MAX_LINE_BYTES: usize = 4 << 20;

/// One line after the header.
#[derive(Debug, Serialize, Deserialize)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
enum Line {
    Variant(VariantResult),
    Envelope(Envelope),
    Sha256(String),
}

/// Writes a result file line by line, hashing as it goes.
pub struct ResultWriter<'a> {
    out: &'a mut dyn Write,
    hash: Sha256,
}

impl<'a> ResultWriter<'a> {
    /// Starts the file with `header`.
    ///
    /// # Errors
    /// The I/O or encoding error, in words.
    pub fn new(out: &'a mut dyn Write, header: &SweepHeader) -> Result<Self, String> {
        let mut w = Self {
            out,
            hash: Sha256::new(),
        };
        w.line(&serde_json::to_string(header).map_err(|e| e.to_string())?)?;
        Ok(w)
    }

    fn line(&mut self, text: &str) -> Result<(), String> {
        let mut bytes = text.as_bytes().to_vec();
        bytes.push(b'\n');
        self.hash.update(&bytes);
        self.out.write_all(&bytes).map_err(|e| e.to_string())
    }

    /// One variant.
    ///
    /// # Errors
    /// As [`ResultWriter::new`].
    pub fn variant(&mut self, v: &VariantResult) -> Result<(), String> {
        let text = serde_json::to_string(&Line::Variant(v.clone())).map_err(|e| e.to_string())?;
        self.line(&text)
    }

    /// The envelope and the digest: the end of the file.
    ///
    /// # Errors
    /// As [`ResultWriter::new`].
    pub fn finish(mut self, envelope: &Envelope) -> Result<(), String> {
        let text =
            serde_json::to_string(&Line::Envelope(envelope.clone())).map_err(|e| e.to_string())?;
        self.line(&text)?;
        let digest = hex(&self.hash.clone().finalize());
        let last = serde_json::to_string(&Line::Sha256(digest)).map_err(|e| e.to_string())?;
        writeln!(self.out, "{last}").map_err(|e| e.to_string())
    }
}

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

/// What a result file holds, read line by line.
pub struct ResultReader<R: BufRead> {
    input: R,
    name: String,
    line_no: usize,
    hash: Sha256,
    /// The envelope, once read.
    pub envelope: Option<Envelope>,
    done: bool,
}

impl<R: BufRead> ResultReader<R> {
    /// Reads the header of `input` (`name` names it in errors).
    ///
    /// # Errors
    /// A message naming the file and line.
    pub fn open(input: R, name: &str) -> Result<(Self, SweepHeader), String> {
        let mut r = Self {
            input,
            name: name.to_owned(),
            line_no: 0,
            hash: Sha256::new(),
            envelope: None,
            done: false,
        };
        let first = r
            .next_line()?
            .ok_or_else(|| format!("{name}: empty, not a sweep result file"))?;
        let header: SweepHeader = serde_json::from_slice(&first).map_err(|e| {
            format!("{name}:1: not a sweep result file of this version (written by `evenkeel sweep --save`): {e}")
        })?;
        if header.format != HEADER_FORMAT {
            return Err(format!(
                "{name}:1: format `{}`, this version reads `{HEADER_FORMAT}`",
                header.format
            ));
        }
        r.hash.update(&first);
        Ok((r, header))
    }

    /// The next line with its newline, at most [`MAX_LINE_BYTES`].
    fn next_line(&mut self) -> Result<Option<Vec<u8>>, String> {
        let mut buf = Vec::new();
        let limit = u64::try_from(MAX_LINE_BYTES + 1).unwrap_or(u64::MAX);
        let n = std::io::Read::take(self.input.by_ref(), limit)
            .read_until(b'\n', &mut buf)
            .map_err(|e| format!("{}: {e}", self.name))?;
        self.line_no += 1;
        if n == 0 {
            return Ok(None);
        }
        if buf.len() > MAX_LINE_BYTES {
            return Err(format!(
                "{}:{}: a line longer than {MAX_LINE_BYTES} bytes: not a sweep result file",
                self.name, self.line_no
            ));
        }
        if buf.last() != Some(&b'\n') {
            return Err(format!(
                "{}:{}: the file ends inside a line (cut short?)",
                self.name, self.line_no
            ));
        }
        Ok(Some(buf))
    }

    /// The next variant, or `None` after the last one (the envelope and
    /// the digest read and the digest verified).
    ///
    /// # Errors
    /// A message naming the file and line: unreadable line, a line after
    /// the digest, a missing envelope or digest, a digest that does not
    /// match.
    pub fn next_variant(&mut self) -> Result<Option<VariantResult>, String> {
        if self.done {
            return Ok(None);
        }
        loop {
            let Some(bytes) = self.next_line()? else {
                return Err(format!(
                    "{}: ends before its digest line (cut short?)",
                    self.name
                ));
            };
            let line: Line = serde_json::from_slice(&bytes)
                .map_err(|e| format!("{}:{}: {e}", self.name, self.line_no))?;
            match line {
                Line::Variant(v) => {
                    if self.envelope.is_some() {
                        return Err(format!(
                            "{}:{}: a variant after the envelope",
                            self.name, self.line_no
                        ));
                    }
                    self.hash.update(&bytes);
                    return Ok(Some(v));
                }
                Line::Envelope(e) => {
                    if self.envelope.is_some() {
                        return Err(format!("{}:{}: a second envelope", self.name, self.line_no));
                    }
                    self.hash.update(&bytes);
                    self.envelope = Some(e);
                }
                Line::Sha256(d) => {
                    if self.envelope.is_none() {
                        return Err(format!(
                            "{}:{}: the digest comes before the envelope",
                            self.name, self.line_no
                        ));
                    }
                    let want = hex(&self.hash.clone().finalize());
                    if d != want {
                        return Err(format!(
                            "{}:{}: the SHA-256 digest does not match the content: the file was changed or damaged after `evenkeel sweep` wrote it",
                            self.name, self.line_no
                        ));
                    }
                    if self.next_line()?.is_some() {
                        return Err(format!(
                            "{}:{}: text after the digest line",
                            self.name, self.line_no
                        ));
                    }
                    self.done = true;
                    return Ok(None);
                }
            }
        }
    }
}
