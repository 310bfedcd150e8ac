//! Robustness over the unknown plant: run a scenario over every variant of
//! its uncertain parameters (`[uncertainty]`), in parallel, and report per
//! criterion the pass fraction, the worst value and the variant that
//! produced it, with a min/max envelope of the signals.
//!
//! - [`space`](self::Param): uncertain parameters, distributions, designs
//!   (grid, corners, random, Latin hypercube) and seeding
//! - `run`: one variant ([`apply_variant`]), whole results kept in memory ([`run`])
//! - `stream`: the parallel run aggregated as results arrive ([`stream`])
//! - `tally`: the aggregate (pass counts, worst variants), order-free
//! - `envelope`: min/max of the signals at plot resolution
//! - `file`: result files with a SHA-256 digest ([`ResultWriter`], [`ResultReader`])
//! - `merge`: shards ([`Shard`]), [`merge`] of results, [`merge_files`] with every check
//! - `report`: per-criterion summary, table, JSON, JUnit, worst-case files
//! - `plot`: the envelope plot
//!
//! ```
//! use evenkeel_harness::{BackendKind, Scenario};
//! use evenkeel_harness::sweep::{self, Distribution, Method, Param, SweepPlan, Uncertain};
//! let mut tug = Scenario::demo()?;
//! tug.setup.duration_s = 10.0; // short, for the example
//! tug.criteria.retain(|c| c.metric.name() == "peak_jerk");
//! tug.uncertainty = vec![Uncertain {
//!     param: Param::MassKg,
//!     dist: Distribution::Uniform { min: 1500.0, max: 3900.0 },
//! }];
//! let plan = SweepPlan { method: Method::Corners, ..SweepPlan::default() };
//! let result = sweep::run(&tug, &plan, BackendKind::Fixed, None, &|_| {})?;
//! assert_eq!(result.variants.len(), 3); // two corners and the centre
//! assert!(sweep::summarise(&result).all_passed());
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```

mod envelope;
mod file;
mod merge;
mod plot;
mod report;
mod run;
mod space;
mod stream;
mod tally;

pub use envelope::{ENVELOPE_BUCKETS, Envelope, samples_of};
pub use file::{MAX_LINE_BYTES, ResultReader, ResultWriter};
pub use merge::{Shard, fingerprint, merge, merge_files};
pub use plot::{
    PANELS, PanelRuns, panel_of, panel_worst, plot_envelope, plot_envelope_of, plot_envelope_svg,
};
pub use report::{
    CriterionSummary, SweepSummary, json, json_of, junit, junit_of, summarise, summary_of, table,
    table_of, tally, variant_scenario, variant_toml, variant_toml_of,
};
pub(crate) use run::noise_seed;
pub use run::{CriterionRecord, SweepResult, VariantResult, apply_variant, run};
pub use space::{
    Design, Distribution, MAX_LATIN_HYPERCUBE, MAX_VARIANTS, Method, NORMAL_TRUNCATION, Param,
    SweepPlan, Uncertain, design_points, normal_cdf, splitmix64, variant_seed,
};
pub use stream::{HEADER_FORMAT, Streamed, SweepHeader, criteria_records, stream};
pub use tally::{CriterionTally, Tally, VariantPoint, Worst, excess};

/// Why a sweep could not run or its results could not be merged.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SweepError {
    /// The design has more variants than allowed ([`MAX_VARIANTS`],
    /// [`MAX_LATIN_HYPERCUBE`]).
    #[error(
        "the design is too large: {design} has {variants} variants, at most {limit} are allowed"
    )]
    TooLarge {
        /// The design in words.
        design: String,
        /// How many variants it has.
        variants: String,
        /// How many are allowed.
        limit: usize,
    },
    /// The result file of a sweep could not be written.
    #[error("writing the result file: {0}")]
    Write(String),
    /// The scenario cannot run at all (e.g. the backend refuses the settings).
    #[error("{0}")]
    Run(#[from] crate::RunError),
    /// A shard is not `i/n` with 1 ≤ i ≤ n.
    #[error("shard `{0}`: expected I/N with 1 <= I <= N, e.g. 2/8")]
    Shard(String),
    /// Results that do not belong to the same sweep, or that do not
    /// together cover it exactly once.
    #[error("cannot merge: {0}")]
    Merge(String),
    /// A result file that cannot be read.
    #[error("result file: {0}")]
    Format(String),
}
