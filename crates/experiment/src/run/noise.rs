//! The thermal noise the Stokes I image should show for a given set of imaging weights.

use beamfloor_predict::{NoiseModel, PredictError, VisSet};
use ndarray::Array3;

/// σ_img = σ · √(Σ_k w_k²) / Σ_k w_k over the unflagged (row, channel, correlation) samples k,
/// with σ the radiometer noise per real part of one correlation, SEFD / (η_c √(2 Δν τ))
/// (Thompson, Moran & Swenson, §6.2). The dirty image is Re Σ w_k V_k e^{…} / Σ w_k and each
/// Re V_k carries independent noise of variance σ², so its variance is σ² Σ w² / (Σ w)². For
/// equal weights this is σ / √(2 N_samples per correlation), the natural-weighting value of
/// [`beamfloor_predict::stokes_i_image_noise_jy`].
pub fn image_noise_jy(
    vis: &VisSet,
    weights: &Array3<f64>,
    noise: &NoiseModel,
) -> Result<f64, PredictError> {
    let sigma = noise.sigma_jy(vis.channel_width_hz, vis.integration_s)?;
    let (mut sum_w, mut sum_w2) = (0.0, 0.0);
    for (&w, &flag) in weights.iter().zip(vis.flags.iter()) {
        if !flag {
            sum_w += w;
            sum_w2 += w * w;
        }
    }
    Ok(if sum_w > 0.0 { sigma * sum_w2.sqrt() / sum_w } else { f64::INFINITY })
}
