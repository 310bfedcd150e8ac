//! Names reduced to a safe piece of a file name.

/// Longest stem [`safe_stem`] returns, in bytes (ASCII, so also in
/// characters): a file name built from a few stems stays far below the
/// 255 bytes most file systems allow.
pub const MAX_STEM_BYTES: usize = 64;

/// `name` reduced to a piece of a file name that cannot leave the
/// directory it is put in: ASCII letters, digits, `-` and `_` are kept,
/// every other character (path separators, dots, spaces, control and
/// non-ASCII characters) becomes `_`; at most [`MAX_STEM_BYTES`] are kept;
/// an empty name gives `_`.
///
/// Different names can give the same stem (`"été"` and `"_t_"`): the
/// [`OutputPlan`](super::OutputPlan) refuses such a collision before
/// anything runs.
///
/// ```
/// use evenkeel_harness::files::safe_stem;
/// assert_eq!(safe_stem("irrigation pump"), "irrigation_pump");
/// assert_eq!(safe_stem("../../escape"), "______escape");
/// assert_eq!(safe_stem("/etc/passwd"), "_etc_passwd");
/// assert_eq!(safe_stem("été"), "_t_");
/// assert_eq!(safe_stem(""), "_");
/// assert_eq!(safe_stem(&"x".repeat(10_000)).len(), 64);
/// ```
#[must_use]
pub fn safe_stem(name: &str) -> String {
    let mut out: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .take(MAX_STEM_BYTES)
        .collect();
    if out.is_empty() {
        out.push('_');
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn no_stem_can_name_another_directory() {
        for name in [
            "..",
            ".",
            "../../escape",
            "/abs/path",
            "a\\b",
            "a\0b",
            "\u{1b}[31mred",
            "name with spaces",
            "日本",
        ] {
            let s = safe_stem(name);
            assert!(
                s.bytes()
                    .all(|b| b.is_ascii_alphanumeric() || b == b'-' || b == b'_'),
                "{name:?} -> {s:?}"
            );
            assert!(!s.is_empty() && s != "." && s != "..");
        }
    }
}
