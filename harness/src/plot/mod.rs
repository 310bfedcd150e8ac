//! Plots of one run: SVG or PNG (by file extension), five stacked panels
//! sharing the time axis, the caution in the footer.
//!
//! 1. reference, measurement and true output;
//! 2. command with its output limits;
//! 3. the output's rate of change with the `peak_accel` limit (called
//!    acceleration for a speed loop, rate otherwise);
//! 4. its change (jerk for a speed loop) with the `peak_jerk` limit;
//! 5. fault and diagnostic lanes, each named beside its lane: one per
//!    kind of injected fault, the controller's fault flags (`non_finite`,
//!    `measurement_range`, `setpoint_range`, `downstream`), and the loop
//!    monitor's alarms ([`evenkeel::monitor::Diagnostics`]).
//!
//! Legends sit in a column beside each panel, outside the data. The
//! output panel shows the settling band and the overshoot limit of the
//! judged step. Axis ranges are robust: a handful of samples far outside
//! the rest (an out-of-range reading, a spike) are drawn clipped at the
//! edge with a triangle, and the legend says how many and how far.
//!
//! The worst value of each criterion that is one (peak command, slew,
//! rate, jerk, overshoot, fault return jump and overshoot, the first
//! limit violation, tracking errors) is marked where and when it
//! occurred, labelled with the criterion, the value and the time.
//!
//! The sweep envelope ([`crate::sweep::plot_envelope`]) and the comparison
//! ([`crate::compare::plot`]) are drawn with the same private parts:
//!
//! - `file`: a `Figure` (a whole page) written to an SVG or PNG file
//! - `page`: title and caution footer, time panels, limit lines, legend
//! - `run`: the plot of one run ([`plot`])
//! - `series`: series reduced to a drawable size, axis ranges, limits
//!
//! Text uses the vendored DejaVu Sans (`assets/`, Bitstream Vera licence),
//! so no system font library is needed.

use std::sync::Once;

use plotters::style::{FontStyle, register_font};

mod file;
mod page;
mod run;
mod series;

pub(crate) use file::{Figure, render_svg, write_figure};
pub(crate) use page::{
    LabelledLine, LegendEntry, Mark, WorstMark, draw_clipped, draw_dashed_segments, draw_error,
    draw_grid, draw_labelled_line, draw_legend_box, draw_limit_lines, draw_marks, draw_page,
    draw_side_legend, time_panel, with_legend_column,
};
pub use run::{plot, plot_svg};
pub(crate) use series::{
    MAX_POINTS, clamp_points, derivative_units, is_motion, max_limit, mirrored, reduce,
    robust_span, span,
};

/// Family name the vendored font is registered under.
const FONT: &str = "sans-serif";
/// Page size in pixels, width × height.
const SIZE: (u32, u32) = (1200, 1500);

/// A plot that could not be drawn or written.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum PlotError {
    /// The extension is neither `.svg` nor `.png`.
    #[error("plot file must end in .svg or .png: {0}")]
    Extension(String),
    /// Drawing failed.
    #[error("drawing the plot failed: {0}")]
    Draw(String),
    /// Writing the file failed.
    #[error("writing {path}")]
    Io {
        /// The file.
        path: String,
        /// The cause.
        source: std::io::Error,
    },
}

/// Registers the vendored font under [`FONT`], once per process.
fn register() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        // The font is vendored and valid; a failure would only lose labels.
        let _ = register_font(
            FONT,
            FontStyle::Normal,
            include_bytes!("../../assets/DejaVuSans.ttf"),
        );
    });
}
