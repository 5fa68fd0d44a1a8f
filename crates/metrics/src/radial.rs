use beamfloor_core::ImageGeometry;
use ndarray::Array2;

use crate::error::{check_range, check_shape, MetricsError, Result};

/// Statistics of an image in one annulus about the phase centre.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RadialBin {
    /// Inner radius r_i = i · Δr (inclusive), radians.
    pub r_inner_rad: f64,
    /// Outer radius (i + 1) · Δr (exclusive), radians.
    pub r_outer_rad: f64,
    /// Number of pixels counted in the annulus (inside the mask).
    pub n_pixels: usize,
    /// Mean radius of the counted pixels, radians (where to plot the bin).
    pub r_mean_rad: f64,
    /// Mean value, Jy/beam.
    pub mean_jy_per_beam: f64,
    /// RMS about zero, sqrt(Σ x² / N), Jy/beam.
    pub rms_jy_per_beam: f64,
}

/// Radial profile of `image` about the phase centre in annuli of width `bin_width_rad`.
///
/// A pixel at r = sqrt(l² + m²) falls in annulus i = ⌊r / Δr⌋. Only pixels where `mask` is true
/// count; annuli with no such pixel are left out, so the bins returned are those with
/// `n_pixels ≥ 1`, in increasing radius.
pub fn radial_profile(
    image: &Array2<f64>,
    geometry: &ImageGeometry,
    mask: Option<&Array2<bool>>,
    bin_width_rad: f64,
    what: &'static str,
) -> Result<Vec<RadialBin>> {
    check_shape(image, geometry, what)?;
    if let Some(m) = mask {
        check_shape(m, geometry, "mask")?;
    }
    check_range("radial bin width", bin_width_rad, f64::MIN_POSITIVE, f64::MAX, false, "> 0")?;
    // Accumulators per bin: (count, Σr, Σx, Σx²).
    let mut acc: Vec<(usize, f64, f64, f64)> = Vec::new();
    for ((iy, ix), &v) in image.indexed_iter() {
        if mask.is_some_and(|m| !m[[iy, ix]]) {
            continue;
        }
        if !v.is_finite() {
            return Err(MetricsError::NonFinite { what, iy, ix, value: v });
        }
        let (l, m) = geometry.lm_of_pixel(ix as f64, iy as f64);
        let r = (l * l + m * m).sqrt();
        let bin = (r / bin_width_rad).floor() as usize;
        if bin >= acc.len() {
            acc.resize(bin + 1, (0, 0.0, 0.0, 0.0));
        }
        let a = &mut acc[bin];
        a.0 += 1;
        a.1 += r;
        a.2 += v;
        a.3 += v * v;
    }
    Ok(acc
        .iter()
        .enumerate()
        .filter(|(_, a)| a.0 > 0)
        .map(|(i, &(n, sr, sx, sxx))| {
            let nf = n as f64;
            RadialBin {
                r_inner_rad: i as f64 * bin_width_rad,
                r_outer_rad: (i + 1) as f64 * bin_width_rad,
                n_pixels: n,
                r_mean_rad: sr / nf,
                mean_jy_per_beam: sx / nf,
                rms_jy_per_beam: (sxx / nf).sqrt(),
            }
        })
        .collect())
}
