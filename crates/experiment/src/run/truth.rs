//! The truth the strategies are scored against, in the metrics crate's terms.

use beamfloor_core::ImageGeometry;
use beamfloor_deconv::RestoringBeam;
use beamfloor_metrics::SourceTruth;
use beamfloor_sky::{
    alpha_from_taylor, beta_from_taylor, taylor_smoothed_truth, Component, EllipticalGaussian,
    Shape, TaylorCoefficients,
};
use ndarray::{Array2, Array3};

use super::RunError;

/// Σ of the imaging weights per channel: the weights of the channel fit that multi-term MFS
/// effectively performs.
pub fn channel_weights(weights: &Array3<f64>) -> Vec<f64> {
    (0..weights.shape()[1]).map(|c| weights.slice(ndarray::s![.., c, ..]).sum()).collect()
}

/// The metrics' view of each sky component: position, the power law's own α and β, and the α
/// and β that an N-term weighted least-squares fit over the observed channels recovers (NaN
/// where N is too small to carry them).
pub fn source_truths(
    sky: &[Component],
    freqs_hz: &[f64],
    channel_weights: &[f64],
    n_terms: usize,
) -> Result<Vec<SourceTruth>, RunError> {
    sky.iter()
        .map(|c| {
            let sky_err = |source| RunError::Sky { what: format!("source \"{}\"", c.name), source };
            let fit = c
                .spectrum
                .fitted_taylor_coefficients(freqs_hz, channel_weights, n_terms)
                .map_err(sky_err)?;
            Ok(SourceTruth {
                name: c.name.clone(),
                l_rad: c.l,
                m_rad: c.m,
                flux_ref_jy: c.spectrum.flux_jy,
                alpha_power_law: c.spectrum.alpha,
                beta_power_law: c.spectrum.beta,
                alpha_fit: alpha_from_taylor(&fit).unwrap_or(f64::NAN),
                beta_fit: beta_from_taylor(&fit).unwrap_or(f64::NAN),
                extent_rad: match c.shape {
                    Shape::Point => 0.0,
                    Shape::Gaussian(g) => g.major_fwhm_rad,
                },
            })
        })
        .collect()
}

/// The true sky's I0 (the fitted Taylor coefficient 0) convolved with the restoring beam, on
/// `geometry`, Jy/beam: what a perfect imager restores in the sky frame.
pub fn truth_convolved_i0(
    sky: &[Component],
    geometry: &ImageGeometry,
    beam: &RestoringBeam,
    freqs_hz: &[f64],
    channel_weights: &[f64],
    n_terms: usize,
) -> Result<Array2<f64>, RunError> {
    let sky_err = |source| RunError::Sky { what: "truth ⊗ restoring beam".into(), source };
    let gaussian = EllipticalGaussian::new(
        beam.major_fwhm_rad,
        beam.minor_fwhm_rad.min(beam.major_fwhm_rad),
        beam.position_angle_rad,
    )
    .map_err(sky_err)?;
    let coefficients =
        TaylorCoefficients::Fitted { frequencies_hz: freqs_hz, weights: channel_weights, n_terms };
    let mut images =
        taylor_smoothed_truth(sky, geometry, &gaussian, &coefficients).map_err(sky_err)?;
    Ok(images.swap_remove(0))
}
