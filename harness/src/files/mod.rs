//! Every file the CLI writes: derived names, checks before a run, and
//! all-or-nothing writing.
//!
//! - [`safe_stem`]: the one function that turns a name (a scenario's, a
//!   criterion's) into a piece of a file name; nothing else builds names
//! - [`OutputPlan`]: the outputs of one run, checked before it starts: no
//!   output is an input or another output, only regular files are
//!   replaced, `-` is standard output (once), every directory exists
//! - [`Staging`]: outputs written to temporary files beside their targets
//!   and renamed together once all are written; removed on error, on drop
//!   and (through [`abandon_staged`], called from a signal handler) on
//!   SIGINT or SIGTERM

mod plan;
mod staging;
mod stem;

pub use plan::{OutputPlan, PlanError, printable, shown};
pub use staging::{Staging, abandon_staged, register_temp, unregister_temp};
pub use stem::{MAX_STEM_BYTES, safe_stem};
