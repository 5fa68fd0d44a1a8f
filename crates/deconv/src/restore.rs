use crate::beam_fit::RestoringBeam;
use crate::convolve::convolve_same;
use crate::hessian::{check_shape, TermHessian};
use crate::DeconvError;
use ndarray::Array2;

/// Restored Taylor images and the residuals in Taylor-coefficient units.
#[derive(Clone, Debug)]
pub struct Restored {
    /// Per Taylor term t: model_t ⊗ beam + residual_coefficients_t (Jy/beam for t = 0).
    pub images: Vec<Array2<f64>>,
    /// Per-pixel principal solution of the residuals, H⁻¹ r: the residual expressed in the
    /// same units as the model's Taylor terms.
    pub residual_coefficients: Vec<Array2<f64>>,
}

/// Restore N Taylor terms: I_t = model_t ⊗ beam + (H⁻¹ r)_t.
///
/// The model (Jy/pixel) is convolved with the peak-1 restoring beam, giving Jy/beam. The
/// residual Taylor images r are weighted sums over channels (r_i ≈ Σ_j H_ij I_j near a
/// component), so they are converted per pixel with the point Hessian before adding
/// (Rau & Cornwell 2011, A&A 532, A71, §3: the restored Taylor images combine the model with
/// the principal solution of the residuals). For N = 1 with PSF peak 1 this is the familiar
/// model ⊗ beam + residual.
pub fn restore(
    model: &[Array2<f64>],
    residuals: &[Array2<f64>],
    hessian: &TermHessian,
    beam: &RestoringBeam,
    cell_rad: f64,
) -> Result<Restored, DeconvError> {
    let n = hessian.nterms();
    if model.len() != n {
        return Err(DeconvError::TermCount { what: "model images", expected: n, got: model.len() });
    }
    let residual_coefficients = hessian.principal_solution(residuals)?;
    let dim = residuals[0].dim();
    let kernel = beam.kernel(cell_rad);
    let mut images = Vec::with_capacity(n);
    for (m, r) in model.iter().zip(&residual_coefficients) {
        check_shape("model image", m, dim)?;
        images.push(convolve_same(m, &kernel) + r);
    }
    Ok(Restored { images, residual_coefficients })
}

/// Knobs of the spectral-index maps.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SpectralMapParams {
    /// Only pixels with restored I0 ≥ significance × noise get values; NaN elsewhere.
    /// Default 5 (common practice for a reliable ratio).
    pub significance: f64,
    /// The image noise level (Jy/beam) the caller trusts, e.g. the residual RMS off source.
    /// Default 0 (every positive I0 counts).
    pub noise_jy: f64,
}

impl Default for SpectralMapParams {
    fn default() -> Self {
        Self { significance: 5.0, noise_jy: 0.0 }
    }
}

/// Spectral index, its error and curvature maps.
#[derive(Clone, Debug)]
pub struct SpectralMaps {
    /// α = I1 / I0.
    pub alpha: Array2<f64>,
    /// First-order error of α from the residuals (see [`spectral_maps`]).
    pub alpha_error: Array2<f64>,
    /// β = I2 / I0 − α(α − 1)/2 (only with three or more terms).
    pub beta: Option<Array2<f64>>,
}

/// Spectral index and curvature from restored Taylor images.
///
/// With I(ν) = I0 (ν/ν0)^(α + β ln(ν/ν0)) expanded in x = (ν − ν0)/ν0 (ln(ν/ν0) = x − x²/2 + …):
/// I = I0 [1 + α x + (α(α − 1)/2 + β) x² + …], hence α = I1/I0 and β = I2/I0 − α(α − 1)/2
/// (Rau & Cornwell 2011, A&A 532, A71, eqs. 2 and 39–40).
///
/// The α error propagates the residual Taylor coefficients R_t (`residual_coefficients`, the
/// per-pixel H⁻¹ r) as independent errors of I0 and I1 to first order:
/// δα = √((R1 / I0)² + (α R0 / I0)²) = |α| √((R1/I1)² + (R0/I0)²).
/// Where I0 < significance × noise (or I0 ≤ 0) every map is NaN.
pub fn spectral_maps(
    restored: &[Array2<f64>],
    residual_coefficients: &[Array2<f64>],
    params: &SpectralMapParams,
) -> Result<SpectralMaps, DeconvError> {
    if restored.len() < 2 {
        return Err(DeconvError::TermCount {
            what: "restored images for α (at least)",
            expected: 2,
            got: restored.len(),
        });
    }
    if residual_coefficients.len() < 2 {
        return Err(DeconvError::TermCount {
            what: "residual coefficients for α (at least)",
            expected: 2,
            got: residual_coefficients.len(),
        });
    }
    if !(params.significance >= 0.0 && params.noise_jy >= 0.0) {
        return Err(DeconvError::Parameter {
            name: "significance × noise_jy",
            value: params.significance * params.noise_jy,
            allowed: "both >= 0",
        });
    }
    let dim = restored[0].dim();
    for im in restored.iter().chain(residual_coefficients.iter()) {
        check_shape("restored / residual image", im, dim)?;
    }
    let floor = params.significance * params.noise_jy;
    let (i0, i1) = (&restored[0], &restored[1]);
    let significant = |v: f64| v > 0.0 && v >= floor;
    let alpha =
        Array2::from_shape_fn(dim, |p| if significant(i0[p]) { i1[p] / i0[p] } else { f64::NAN });
    let (r0, r1) = (&residual_coefficients[0], &residual_coefficients[1]);
    let alpha_error = Array2::from_shape_fn(dim, |p| {
        let a = alpha[p];
        if a.is_nan() {
            f64::NAN
        } else {
            ((r1[p] / i0[p]).powi(2) + (a * r0[p] / i0[p]).powi(2)).sqrt()
        }
    });
    let beta = restored.get(2).map(|i2| {
        Array2::from_shape_fn(dim, |p| {
            let a = alpha[p];
            if a.is_nan() {
                f64::NAN
            } else {
                i2[p] / i0[p] - 0.5 * a * (a - 1.0)
            }
        })
    });
    Ok(SpectralMaps { alpha, alpha_error, beta })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn alpha_beta_invert_the_expansion() {
        // Taylor coefficients of S0 (ν/ν0)^(α+β ln(ν/ν0)) to second order:
        // I1 = S0 α, I2 = S0 (α(α−1)/2 + β) (expansion in the doc comment above).
        let (s0, a, b) = (2.0, -0.8, 0.15);
        let dim = (3, 3);
        let imgs = vec![
            Array2::from_elem(dim, s0),
            Array2::from_elem(dim, s0 * a),
            Array2::from_elem(dim, s0 * (0.5 * a * (a - 1.0) + b)),
        ];
        let mut res = vec![Array2::zeros(dim); 3];
        res[0][[1, 1]] = 0.02;
        res[1][[1, 1]] = -0.01;
        let maps = spectral_maps(&imgs, &res, &SpectralMapParams::default()).unwrap();
        assert!((maps.alpha[[0, 0]] - a).abs() < 1e-14);
        assert!((maps.beta.as_ref().unwrap()[[0, 0]] - b).abs() < 1e-14);
        assert_eq!(maps.alpha_error[[0, 0]], 0.0);
        // δα = |α| √((R1/I1)² + (R0/I0)²), the textbook ratio-error form.
        let want = a.abs() * ((-0.01 / (s0 * a)).powi(2) + (0.02 / s0).powi(2)).sqrt();
        assert!((maps.alpha_error[[1, 1]] - want).abs() < 1e-15);
        let masked =
            spectral_maps(&imgs, &res, &SpectralMapParams { significance: 5.0, noise_jy: 0.5 })
                .unwrap();
        assert!(masked.alpha.iter().all(|v| v.is_nan()), "2 Jy < 5 × 0.5 Jy");
    }
}
