//! The beam "standard" imaging assumes: time- and frequency-averaged, azimuthally symmetrized.

use crate::{BeamError, DishBeam};
use beamfloor_core::{taylor_weight, ImageGeometry, SPEED_OF_LIGHT_M_PER_S};
use ndarray::Array2;

fn check_freqs(freqs_hz: &[f64]) -> Result<(), BeamError> {
    if freqs_hz.is_empty() {
        return Err(BeamError::Empty("channel frequencies"));
    }
    match freqs_hz.iter().find(|f| !(f.is_finite() && **f > 0.0)) {
        Some(&f) => Err(BeamError::InvalidFrequency(f)),
        None => Ok(()),
    }
}

impl DishBeam {
    /// Symmetrized Stokes-I power beam of one channel at radius `r` (rad):
    /// g(ν)² · ⟨(|E_R|² + |E_L|²)/2⟩_θ evaluated at table radius r ν/c.
    ///
    /// Averaging over azimuth θ removes any rotation exactly (a rotation only shifts θ), so the
    /// set of parallactic angles does not enter; per-antenna pointing errors are excluded, since
    /// they are unknown to the imager. Zero beyond the tabulated radius.
    pub fn symmetrized_power(&self, radius_rad: f64, freq_hz: f64) -> f64 {
        let g = self.ripple_gain(freq_hz);
        let rho = radius_rad * self.pattern_freq_hz(freq_hz) / SPEED_OF_LIGHT_M_PER_S;
        g * g * self.stokes_i.value(rho)
    }

    /// Time- and frequency-averaged, azimuthally symmetrized power beam at each radius (rad):
    /// P̄(r) = (1/N_ν) Σ_ν [`DishBeam::symmetrized_power`](r, ν).
    pub fn average_power_profile(
        &self,
        radii_rad: &[f64],
        freqs_hz: &[f64],
    ) -> Result<Vec<f64>, BeamError> {
        check_freqs(freqs_hz)?;
        let inv_n = 1.0 / freqs_hz.len() as f64;
        Ok(radii_rad
            .iter()
            .map(|&r| freqs_hz.iter().map(|&f| self.symmetrized_power(r, f)).sum::<f64>() * inv_n)
            .collect())
    }

    /// [`DishBeam::average_power_profile`] on every pixel of `geometry`.
    pub fn average_power_image(
        &self,
        geometry: &ImageGeometry,
        freqs_hz: &[f64],
    ) -> Result<Array2<f64>, BeamError> {
        check_freqs(freqs_hz)?;
        let inv_n = 1.0 / freqs_hz.len() as f64;
        Ok(Array2::from_shape_fn((geometry.ny, geometry.nx), |(iy, ix)| {
            let (l, m) = geometry.lm_of_pixel(ix as f64, iy as f64);
            let r = l.hypot(m);
            freqs_hz.iter().map(|&f| self.symmetrized_power(r, f)).sum::<f64>() * inv_n
        }))
    }

    /// Taylor coefficients of the symmetrized power beam over the band, per pixel: the
    /// least-squares fit P(ν) ≈ Σ_t c_t x^t with x = (ν − ν0)/ν0 (ν0 = the reference frequency),
    /// as multi-term MFS uses them to divide the beam out of Taylor images (Rau & Cornwell 2011,
    /// A&A 532, A71). Returns `n_terms` images c_0, c_1, ….
    ///
    /// The fit solves the normal equations (VᵀV) c = Vᵀ P once for the Vandermonde matrix V of
    /// the channels (well conditioned for |x| ≤ 1 and a handful of terms).
    pub fn average_power_taylor(
        &self,
        geometry: &ImageGeometry,
        freqs_hz: &[f64],
        n_terms: usize,
    ) -> Result<Vec<Array2<f64>>, BeamError> {
        check_freqs(freqs_hz)?;
        let pinv = least_squares_operator(freqs_hz, self.params.ref_freq_hz, n_terms)?;
        let nc = freqs_hz.len();
        let mut out = vec![Array2::zeros((geometry.ny, geometry.nx)); n_terms];
        let mut values = vec![0.0; nc];
        for iy in 0..geometry.ny {
            for ix in 0..geometry.nx {
                let (l, m) = geometry.lm_of_pixel(ix as f64, iy as f64);
                let r = l.hypot(m);
                for (v, &f) in values.iter_mut().zip(freqs_hz) {
                    *v = self.symmetrized_power(r, f);
                }
                for (t, img) in out.iter_mut().enumerate() {
                    img[[iy, ix]] =
                        pinv[t * nc..(t + 1) * nc].iter().zip(&values).map(|(a, b)| a * b).sum();
                }
            }
        }
        Ok(out)
    }
}

/// The least-squares operator (VᵀV)⁻¹Vᵀ (`n_terms × n_chan`, row-major) of the Vandermonde
/// matrix V[c][t] = ((ν_c − ν0)/ν0)^t, by Gauss–Jordan elimination with partial pivoting.
pub(crate) fn least_squares_operator(
    freqs_hz: &[f64],
    ref_freq_hz: f64,
    n_terms: usize,
) -> Result<Vec<f64>, BeamError> {
    let nc = freqs_hz.len();
    if n_terms == 0 || n_terms > nc {
        return Err(BeamError::InvalidTaylorTerms { terms: n_terms, channels: nc });
    }
    let v: Vec<f64> = freqs_hz
        .iter()
        .flat_map(|&f| (0..n_terms).map(move |t| taylor_weight(f, ref_freq_hz, t)))
        .collect();
    // Augmented [VᵀV | Vᵀ].
    let w = n_terms + nc;
    let mut a = vec![0.0; n_terms * w];
    for i in 0..n_terms {
        for j in 0..n_terms {
            a[i * w + j] = (0..nc).map(|c| v[c * n_terms + i] * v[c * n_terms + j]).sum();
        }
        for c in 0..nc {
            a[i * w + n_terms + c] = v[c * n_terms + i];
        }
    }
    for col in 0..n_terms {
        let piv = (col..n_terms)
            .max_by(|&x, &y| a[x * w + col].abs().total_cmp(&a[y * w + col].abs()))
            .unwrap_or(col);
        if a[piv * w + col].abs() < 1e-300 {
            return Err(BeamError::InvalidTaylorTerms { terms: n_terms, channels: nc });
        }
        for k in 0..w {
            a.swap(col * w + k, piv * w + k);
        }
        let d = a[col * w + col];
        for k in 0..w {
            a[col * w + k] /= d;
        }
        for r in 0..n_terms {
            if r != col {
                let f = a[r * w + col];
                for k in 0..w {
                    a[r * w + k] -= f * a[col * w + k];
                }
            }
        }
    }
    Ok((0..n_terms).flat_map(|t| a[t * w + n_terms..(t + 1) * w].to_vec()).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fit_recovers_a_polynomial_exactly() {
        // Least squares reproduces data that lie exactly on a polynomial of the fitted degree
        // (normal-equation theory); tolerance is rounding of a 3×3 solve, ~1e-13.
        let freqs: Vec<f64> = (0..16).map(|i| 1.0e9 + 6.25e7 * i as f64).collect();
        let nu0 = 1.45e9;
        let op = least_squares_operator(&freqs, nu0, 3).unwrap();
        let y: Vec<f64> = freqs
            .iter()
            .map(|&f| {
                let x = (f - nu0) / nu0;
                0.7 - 1.3 * x + 0.4 * x * x
            })
            .collect();
        let c: Vec<f64> = (0..3).map(|t| (0..16).map(|k| op[t * 16 + k] * y[k]).sum()).collect();
        for (got, want) in c.iter().zip([0.7, -1.3, 0.4]) {
            assert!((got - want).abs() < 1e-12, "{c:?}");
        }
        assert!(matches!(
            least_squares_operator(&freqs[..2], nu0, 3),
            Err(BeamError::InvalidTaylorTerms { terms: 3, channels: 2 })
        ));
    }
}
