/// Spectral index and curvature read from Taylor-term values at one pixel.
///
/// A curved power law S(ν) = S0 x^(α + β ln x), x = ν/ν0, expanded in t = (ν − ν0)/ν0
/// (ln x = t − t²/2 + O(t³)) is S0 [1 + α t + (β + α(α − 1)/2) t² + O(t³)], so the Taylor
/// terms I_t of multi-term MFS give (Rau & Cornwell 2011, A&A 532, A71, §2.3):
///
/// α = I1 / I0,   β = I2 / I0 − α(α − 1)/2.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpectralIndex {
    /// α; NaN when fewer than two terms are given or I0 is not a positive finite number.
    pub alpha: f64,
    /// β; NaN when fewer than three terms are given or α is NaN.
    pub beta: f64,
}

/// α and β from the Taylor-term values `[I0, I1, I2, ...]` at one pixel (terms past I2 are
/// ignored). I0 must be positive: a spectral index of a negative or zero brightness is not
/// defined, and the result is NaN there, as in the restored α and β images.
pub fn spectral_index_from_taylor(terms: &[f64]) -> SpectralIndex {
    let nan = SpectralIndex { alpha: f64::NAN, beta: f64::NAN };
    let Some(&i0) = terms.first() else { return nan };
    if !(i0.is_finite() && i0 > 0.0) || terms.len() < 2 {
        return nan;
    }
    let alpha = terms[1] / i0;
    let beta = match terms.get(2) {
        Some(&i2) => i2 / i0 - 0.5 * alpha * (alpha - 1.0),
        None => f64::NAN,
    };
    SpectralIndex { alpha, beta }
}
