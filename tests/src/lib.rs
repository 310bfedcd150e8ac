//! Cross-crate and external-reference tests live in `tests/`; this library is empty.
