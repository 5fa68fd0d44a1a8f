use beamfloor_core::ImageGeometry;
use ndarray::Array2;

use crate::error::{check_shape, Result};
use crate::statistics::{masked_statistics, peak_abs, Peak};

/// Error image E = restored − (truth ⊗ restoring beam), pixel by pixel, Jy/beam.
///
/// The runner renders the true sky convolved with the same restoring beam (and, for a model
/// that is "sky × beam", multiplied by the same beam) on the same grid; any difference is an
/// error of the whole chain — deconvolution, imaging and beam correction together.
pub fn error_image(
    restored: &Array2<f64>,
    truth_convolved: &Array2<f64>,
    geometry: &ImageGeometry,
) -> Result<Array2<f64>> {
    check_shape(restored, geometry, "restored image")?;
    check_shape(truth_convolved, geometry, "truth-convolved image")?;
    Ok(restored - truth_convolved)
}

/// Summary of an error image.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ErrorImageScores {
    /// RMS about zero of E over the valid region (edge margin and validity mask; sources
    /// included, since errors on sources are what this image is for), Jy/beam.
    pub rms_jy_per_beam: f64,
    /// Pixels in the valid region.
    pub n_pixels: usize,
    /// Largest |E| in the valid region (signed value and position).
    pub peak: Peak,
    /// RMS about zero of E over the source-free mask, Jy/beam; NaN if that mask is empty.
    pub rms_source_free_jy_per_beam: f64,
}

/// [`ErrorImageScores`] of an error image over the valid region and the source-free mask.
pub fn score_error_image(
    error: &Array2<f64>,
    geometry: &ImageGeometry,
    valid: &Array2<bool>,
    source_free: &Array2<bool>,
) -> Result<ErrorImageScores> {
    let stats = masked_statistics(error, valid, geometry, "error image")?;
    let peak = peak_abs(error, geometry, Some(valid), "error image")?;
    let rms_free = if source_free.iter().any(|&b| b) {
        masked_statistics(error, source_free, geometry, "error image")?.rms_jy_per_beam
    } else {
        check_shape(source_free, geometry, "source-free mask")?;
        f64::NAN
    };
    Ok(ErrorImageScores {
        rms_jy_per_beam: stats.rms_jy_per_beam,
        n_pixels: stats.n_pixels,
        peak,
        rms_source_free_jy_per_beam: rms_free,
    })
}
