//! Writing a figure to a file: SVG or PNG by extension, atomically.

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::{PlotError, SIZE, register};
use crate::report::write_atomic;

/// A plot that draws itself on a page of [`SIZE`] pixels, on any back end.
pub(crate) trait Figure {
    /// Draws the whole page onto `root`.
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError>;
}

/// Draws `figure` as an SVG document in memory (for the HTML report).
///
/// # Errors
/// [`PlotError::Draw`] for a drawing failure.
pub(crate) fn render_svg(figure: &impl Figure) -> Result<String, PlotError> {
    register();
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        figure.draw(&root)?;
        root.present().map_err(|e| PlotError::Draw(e.to_string()))?;
    }
    Ok(svg)
}

/// Draws `figure` into `path` (`.svg` or `.png`), atomically.
///
/// # Errors
/// [`PlotError`] for a wrong extension, a drawing or a writing failure.
pub(crate) fn write_figure(figure: &impl Figure, path: &Path) -> Result<(), PlotError> {
    register();
    let ext = path
        .extension()
        .map(|e| e.to_string_lossy().to_ascii_lowercase());
    let io = |source| PlotError::Io {
        path: path.display().to_string(),
        source,
    };
    match ext.as_deref() {
        Some("svg") => {
            let mut svg = String::new();
            {
                let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
                figure.draw(&root)?;
                root.present().map_err(|e| PlotError::Draw(e.to_string()))?;
            }
            write_atomic(path, svg.as_bytes()).map_err(io)
        }
        Some("png") => {
            let (w, h) = SIZE;
            let mut rgb = vec![0u8; (w * h * 3) as usize];
            {
                let root = BitMapBackend::with_buffer(&mut rgb, SIZE).into_drawing_area();
                figure.draw(&root)?;
                root.present().map_err(|e| PlotError::Draw(e.to_string()))?;
            }
            let mut png = Vec::new();
            encode_png(&mut png, &rgb, w, h).map_err(|e| PlotError::Draw(e.to_string()))?;
            write_atomic(path, &png).map_err(io)
        }
        _ => Err(PlotError::Extension(path.display().to_string())),
    }
}

/// `rgb` (8-bit RGB, `w` × `h` pixels, row by row) as a PNG file in `out`.
fn encode_png(out: &mut Vec<u8>, rgb: &[u8], w: u32, h: u32) -> Result<(), image::ImageError> {
    use image::ImageEncoder;
    image::codecs::png::PngEncoder::new(out).write_image(rgb, w, h, image::ColorType::Rgb8)
}
