use beamfloor_core::ImageGeometry;
use ndarray::Array2;

use crate::error::{check_shape, MetricsError, Result};
use crate::mask::{disc_pixels, pixel_distance_rad};
use crate::spectral::spectral_index_from_taylor;
use crate::statistics::Pixel;
use crate::truth::SourceTruth;

/// Scores of one true source in one strategy's images. NaN marks a value that cannot be formed
/// (source outside the image, I0 not positive, too few Taylor terms).
#[derive(Debug, Clone, PartialEq)]
pub struct SourceScores {
    /// The source's name.
    pub name: String,
    /// True l, radians.
    pub l_rad: f64,
    /// True m, radians.
    pub m_rad: f64,
    /// The pixel nearest the true position (rounded pixel coordinates); None outside the image.
    pub pixel: Option<Pixel>,
    /// True integrated flux density at ν0, Jy.
    pub true_flux_jy: f64,
    /// What the restored I0 should read at `pixel`: the truth-convolved image there when given
    /// (exact for extended sources and off-pixel positions), otherwise `true_flux_jy` (exact for a
    /// point source on a pixel centre), Jy/beam.
    pub reference_jy_per_beam: f64,
    /// Restored I0 at `pixel` (nearest pixel, no interpolation: the runner places sources on
    /// pixel centres, where interpolation would only blur), Jy/beam.
    pub restored_at_pixel_jy_per_beam: f64,
    /// (restored at pixel − reference) / reference.
    pub flux_error_fraction: f64,
    /// Extreme restored I0 within the peak-search radius, in the direction of the true flux's
    /// sign (the maximum for a positive source), Jy/beam. Catches a source imaged off position.
    pub restored_peak_near_jy_per_beam: f64,
    /// Distance of that extreme from the true position, radians.
    pub restored_peak_offset_rad: f64,
    /// (peak near − reference) / reference.
    pub peak_flux_error_fraction: f64,
    /// Largest |residual I0| within `near_radius_rad` of the true position, Jy/beam.
    pub max_abs_residual_near_jy_per_beam: f64,
    /// The radius used for it (the source's mask exclusion radius), radians.
    pub near_radius_rad: f64,
    /// α = I1/I0 from the restored Taylor images at `pixel`.
    pub alpha_measured: f64,
    /// α measured − α of the band-limited Taylor fit (what a perfect imager reaches).
    pub alpha_error_vs_fit: f64,
    /// α measured − α of the source's own power law.
    pub alpha_error_vs_power_law: f64,
    /// β = I2/I0 − α(α − 1)/2 at `pixel`.
    pub beta_measured: f64,
    /// β measured − β of the Taylor fit.
    pub beta_error_vs_fit: f64,
    /// β measured − β of the power law.
    pub beta_error_vs_power_law: f64,
}

/// Score one source.
///
/// `restored_taylor` are the restored Taylor-term images [I0, I1, I2, ...] (at least I0);
/// `residual_i0` the residual I0 image; `truth_convolved_i0` the true sky ⊗ restoring beam if
/// the runner has it. The near-residual search covers the disc of radius `near_radius_rad`,
/// the restored-peak search the disc of radius `peak_search_radius_rad`.
pub fn score_source(
    geometry: &ImageGeometry,
    source: &SourceTruth,
    restored_taylor: &[Array2<f64>],
    residual_i0: &Array2<f64>,
    truth_convolved_i0: Option<&Array2<f64>>,
    near_radius_rad: f64,
    peak_search_radius_rad: f64,
) -> Result<SourceScores> {
    let restored_i0 = restored_taylor.first().ok_or(MetricsError::NoTaylorTerms)?;
    for t in restored_taylor {
        check_shape(t, geometry, "restored Taylor image")?;
    }
    check_shape(residual_i0, geometry, "residual image")?;
    if let Some(t) = truth_convolved_i0 {
        check_shape(t, geometry, "truth-convolved image")?;
    }
    let (l, m) = (source.l_rad, source.m_rad);
    let pixel = nearest_pixel(geometry, l, m);

    let (reference, at_pixel, spectral) = match pixel {
        Some(p) => {
            let at = finite(restored_i0, p, "restored Taylor image")?;
            let reference = match truth_convolved_i0 {
                Some(t) => finite(t, p, "truth-convolved image")?,
                None => source.flux_ref_jy,
            };
            let terms: Vec<f64> = restored_taylor.iter().map(|t| t[[p.iy, p.ix]]).collect();
            (reference, at, spectral_index_from_taylor(&terms))
        }
        None => (f64::NAN, f64::NAN, spectral_index_from_taylor(&[])),
    };

    // Residual: largest |value| in the near disc.
    let mut max_res = f64::NAN;
    for (iy, ix) in disc_pixels(geometry, l, m, near_radius_rad)? {
        let v = finite(residual_i0, Pixel { ix, iy }, "residual image")?.abs();
        if max_res.is_nan() || v > max_res {
            max_res = v;
        }
    }

    // Restored: extreme in the direction of the true flux's sign within the search disc.
    let sign = if source.flux_ref_jy < 0.0 { -1.0 } else { 1.0 };
    let mut best: Option<(f64, f64)> = None; // (value, offset)
    for (iy, ix) in disc_pixels(geometry, l, m, peak_search_radius_rad)? {
        let v = finite(restored_i0, Pixel { ix, iy }, "restored Taylor image")?;
        if best.is_none_or(|(b, _)| sign * v > sign * b) {
            best = Some((v, pixel_distance_rad(geometry, ix, iy, l, m)));
        }
    }
    let (peak_near, offset) = best.unwrap_or((f64::NAN, f64::NAN));

    Ok(SourceScores {
        name: source.name.clone(),
        l_rad: l,
        m_rad: m,
        pixel,
        true_flux_jy: source.flux_ref_jy,
        reference_jy_per_beam: reference,
        restored_at_pixel_jy_per_beam: at_pixel,
        flux_error_fraction: (at_pixel - reference) / reference,
        restored_peak_near_jy_per_beam: peak_near,
        restored_peak_offset_rad: offset,
        peak_flux_error_fraction: (peak_near - reference) / reference,
        max_abs_residual_near_jy_per_beam: max_res,
        near_radius_rad,
        alpha_measured: spectral.alpha,
        alpha_error_vs_fit: spectral.alpha - source.alpha_fit,
        alpha_error_vs_power_law: spectral.alpha - source.alpha_power_law,
        beta_measured: spectral.beta,
        beta_error_vs_fit: spectral.beta - source.beta_fit,
        beta_error_vs_power_law: spectral.beta - source.beta_power_law,
    })
}

/// The pixel whose centre is nearest (l, m): rounded fractional pixel coordinates; None when
/// that falls outside the image.
pub fn nearest_pixel(geometry: &ImageGeometry, l: f64, m: f64) -> Option<Pixel> {
    let (x, y) = geometry.pixel_of_lm(l, m);
    let (xr, yr) = (x.round(), y.round());
    let inside = xr >= 0.0 && yr >= 0.0 && xr < geometry.nx as f64 && yr < geometry.ny as f64;
    inside.then_some(Pixel { ix: xr as usize, iy: yr as usize })
}

fn finite(image: &Array2<f64>, p: Pixel, what: &'static str) -> Result<f64> {
    let v = image[[p.iy, p.ix]];
    if v.is_finite() {
        Ok(v)
    } else {
        Err(MetricsError::NonFinite { what, iy: p.iy, ix: p.ix, value: v })
    }
}
