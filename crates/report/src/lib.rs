//! File formats for beamfloor: FITS images with a WCS, PNG quick-looks and plots, and visibility
//! sets as `.npy` arrays with a JSON manifest.
//!
//! This is the only crate that writes or reads files. It owns the on-disk layouts and their
//! validation; it knows nothing about configs, run folders or how the images were made (the
//! `experiment` crate decides what to write where). Every writer builds its output under a
//! temporary name in the destination folder and renames it into place at the end, so a crash
//! never leaves a half-written file that looks complete.
//!
//! Conventions (shared with `beamfloor_core`):
//! - Images are `[y][x]` (cubes `[plane][y][x]`) on an [`beamfloor_core::ImageGeometry`] grid:
//!   pixel x runs towards decreasing l (east left), the phase centre is pixel `(nx/2, ny/2)`.
//!   FITS gets `RA---SIN`/`DEC--SIN`, `CRPIX = n/2 + 1`, `CDELT1 = −cell`, `CDELT2 = +cell` in
//!   degrees (Greisen & Calabretta 2002; Calabretta & Greisen 2002).
//! - Visibility sets keep the measurement-equation sign V = Σ S E_i E_j* exp(−2πi(ul + vm +
//!   w(n − 1))), uvw in metres for antenna2 − antenna1, data `[row][channel][pol]`, pol `[RR, LL]`.
//! - PNGs use an embedded DejaVu Sans font, so they render the same on any machine.
//!
//! ```no_run
//! use beamfloor_core::ImageGeometry;
//! use beamfloor_report::{
//!     write_fits_image, write_image_png, BrightnessUnit, ColourMap, ColourScale,
//!     FitsImageMeta, ImagePngOptions, Stretch,
//! };
//! # fn main() -> Result<(), beamfloor_report::ReportError> {
//! let g = ImageGeometry::new(256, 256, 2e-5);
//! let image = ndarray::Array2::<f64>::zeros((256, 256));
//! let meta = FitsImageMeta::new(g, 1.2, -0.5, BrightnessUnit::JyPerBeam, "residual");
//! write_fits_image("residual.fits".as_ref(), image.view(), &meta)?;
//! let scale = ColourScale::new(-1e-4, 1e-2, Stretch::Asinh { softening: 1e-4 })?;
//! let opts = ImagePngOptions::new("residual", scale, ColourMap::Sequential, "Jy/beam");
//! write_image_png("residual.png".as_ref(), image.view(), &g, &opts)?;
//! # Ok(()) }
//! ```

mod atomic;
mod colour;
mod colour_bar;
mod error;
mod fits_meta;
mod fits_read;
mod fits_write;
mod html;
mod png_bars;
mod png_canvas;
mod png_image;
mod png_lines;
mod png_uv;
mod visset_io;
mod visset_manifest;

pub use colour::{ColourMap, ColourScale, Stretch, NAN_COLOUR};
pub use error::ReportError;
pub use fits_meta::{
    BrightnessUnit, CubeAxis, FitsImage, FitsImageMeta, RestoringBeam, TAYLOR_AXIS_CTYPE,
};
pub use fits_read::read_fits;
pub use fits_write::{write_fits_cube, write_fits_image};
pub use html::{
    escape_html, render_html, write_html, write_text_file, HtmlBlock, HtmlFigure, HtmlPage,
    HtmlSection,
};
pub use png_bars::{write_bar_chart, BarChart};
pub use png_image::{write_image_png, ImagePngOptions};
pub use png_lines::{write_line_plot, AxisScale, LinePlot, Series};
pub use png_uv::write_uv_coverage_png;
pub use visset_io::{read_visset, write_visset};
pub use visset_manifest::{VISSET_FORMAT, VISSET_MANIFEST, VISSET_VERSION};
