use crate::SkyError;

/// A curved power-law spectrum S(ν) = S0 (ν/ν0)^(α + β ln(ν/ν0)).
///
/// `flux_jy` is S0 at the reference frequency ν0; α is the spectral index and β the curvature
/// (the form used for wideband sky models by Rau & Cornwell 2011, A&A 532, A71, eq. 2).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Spectrum {
    /// Flux density at the reference frequency, Jy.
    pub flux_jy: f64,
    /// Reference frequency ν0, Hz.
    pub ref_freq_hz: f64,
    /// Spectral index α.
    pub alpha: f64,
    /// Spectral curvature β.
    pub beta: f64,
}

impl Spectrum {
    /// A spectrum with the given S0 (Jy at ν0), ν0 (Hz), α and β; all finite, ν0 > 0.
    pub fn new(flux_jy: f64, ref_freq_hz: f64, alpha: f64, beta: f64) -> Result<Self, SkyError> {
        if !(ref_freq_hz.is_finite() && ref_freq_hz > 0.0) {
            return Err(SkyError::ReferenceFrequency(ref_freq_hz));
        }
        for (name, value) in [("flux_jy", flux_jy), ("alpha", alpha), ("beta", beta)] {
            if !value.is_finite() {
                return Err(SkyError::SpectralParameter { name, value });
            }
        }
        Ok(Self { flux_jy, ref_freq_hz, alpha, beta })
    }

    /// A flat spectrum (α = β = 0) of `flux_jy` referred to `ref_freq_hz`.
    pub fn flat(flux_jy: f64, ref_freq_hz: f64) -> Result<Self, SkyError> {
        Self::new(flux_jy, ref_freq_hz, 0.0, 0.0)
    }

    /// Flux density at `freq_hz`, Jy: S0 exp(α L + β L²) with L = ln(ν/ν0).
    ///
    /// The caller guarantees `freq_hz > 0` (a non-positive frequency gives NaN); use
    /// [`Spectrum::flux_checked`] where the frequency comes from a user.
    #[inline]
    pub fn flux_at(&self, freq_hz: f64) -> f64 {
        let log_ratio = (freq_hz / self.ref_freq_hz).ln();
        self.flux_jy * (log_ratio * (self.alpha + self.beta * log_ratio)).exp()
    }

    /// [`Spectrum::flux_at`] with the frequency checked to be finite and positive.
    pub fn flux_checked(&self, freq_hz: f64) -> Result<f64, SkyError> {
        if !(freq_hz.is_finite() && freq_hz > 0.0) {
            return Err(SkyError::Frequency(freq_hz));
        }
        Ok(self.flux_at(freq_hz))
    }

    /// The first `n_terms` Taylor coefficients I_t of the spectrum about ν0 in x = (ν − ν0)/ν0,
    /// so that S(ν) = Σ_t I_t x^t for |x| < 1.
    ///
    /// Derivation: S = S0 exp(g(x)) with g = α L + β L², L = ln(1 + x) = Σ_{k≥1} (−1)^{k+1} x^k/k.
    /// Writing g = Σ g_k x^k, the identity S' = g' S gives the recursion
    /// I_0 = S0, n I_n = Σ_{k=1..n} k g_k I_{n−k}. The first terms are I_1 = α S0 and
    /// I_2 = (α(α − 1)/2 + β) S0, the multi-term coefficients of Rau & Cornwell (2011, eq. 10).
    pub fn taylor_coefficients(&self, n_terms: usize) -> Vec<f64> {
        if n_terms == 0 {
            return Vec::new();
        }
        // Series of L and of L² (Cauchy product), index k = power of x.
        let log_series: Vec<f64> = (0..n_terms)
            .map(|k| {
                if k == 0 {
                    0.0
                } else if k % 2 == 1 {
                    1.0 / k as f64
                } else {
                    -1.0 / k as f64
                }
            })
            .collect();
        let g: Vec<f64> = (0..n_terms)
            .map(|k| {
                let log_sq: f64 = (0..=k).map(|j| log_series[j] * log_series[k - j]).sum();
                self.alpha * log_series[k] + self.beta * log_sq
            })
            .collect();
        let mut coeffs = vec![0.0; n_terms];
        coeffs[0] = self.flux_jy;
        for n in 1..n_terms {
            let s: f64 = (1..=n).map(|k| k as f64 * g[k] * coeffs[n - k]).sum();
            coeffs[n] = s / n as f64;
        }
        coeffs
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn published_taylor_coefficients() {
        // I1 = α I0 and I2 = (α(α−1)/2 + β) I0 (Rau & Cornwell 2011, A&A 532, A71, eq. 10):
        // I0 = 2, α = −0.7, β = −0.2 → I1 = −1.4, I2 = 2 (0.595 − 0.2) = 0.79 (hand arithmetic).
        let s = Spectrum::new(2.0, 1.5e9, -0.7, -0.2).unwrap();
        let c = s.taylor_coefficients(3);
        assert!((c[0] - 2.0).abs() < 1e-15);
        assert!((c[1] + 1.4).abs() < 1e-15);
        assert!((c[2] - 0.79).abs() < 1e-15);
    }

    #[test]
    fn plain_power_law_is_binomial_series() {
        // β = 0: (1 + x)^α = Σ C(α, t) x^t (binomial series, Abramowitz & Stegun 3.6.9).
        let alpha = -0.8;
        let s = Spectrum::new(1.0, 1e9, alpha, 0.0).unwrap();
        let c = s.taylor_coefficients(8);
        let mut binom = 1.0;
        for (t, ct) in c.iter().enumerate() {
            assert!((ct - binom).abs() < 1e-14, "term {t}: {ct} vs {binom}");
            binom *= (alpha - t as f64) / (t as f64 + 1.0);
        }
    }

    #[test]
    fn series_converges_to_defining_formula() {
        // Summing many terms of the recursion must reproduce S0 (ν/ν0)^(α+β ln(ν/ν0)) inside the
        // radius of convergence |x| < 1 (the series of ln(1 + x)). At |x| ≤ 0.3 the terms fall
        // like 0.3^t, so 60 terms leave a truncation far below the 1e-12 tolerance.
        let s = Spectrum::new(3.5, 1.4e9, -0.9, 0.35).unwrap();
        let c = s.taylor_coefficients(60);
        for &nu in &[1.0e9, 1.2e9, 1.4e9, 1.6e9, 1.82e9] {
            let x = (nu - s.ref_freq_hz) / s.ref_freq_hz;
            let sum: f64 = c.iter().rev().fold(0.0, |acc, &ct| acc * x + ct);
            assert!((sum - s.flux_at(nu)).abs() < 1e-12 * s.flux_jy, "{nu}: {sum}");
        }
    }

    #[test]
    fn flux_and_validation() {
        // S(2ν0) = S0 2^(α + β ln 2), evaluated by hand with powf.
        let s = Spectrum::new(1.5, 1e9, -0.7, 0.1).unwrap();
        let l2 = 2f64.ln();
        assert!((s.flux_at(2e9) - 1.5 * 2f64.powf(-0.7 + 0.1 * l2)).abs() < 1e-14);
        assert_eq!(s.flux_at(1e9), 1.5);
        assert!(matches!(Spectrum::new(1.0, 0.0, 0.0, 0.0), Err(SkyError::ReferenceFrequency(_))));
        assert!(matches!(s.flux_checked(-1.0), Err(SkyError::Frequency(_))));
        assert!(Spectrum::new(f64::NAN, 1e9, 0.0, 0.0).is_err());
    }
}
