use crate::{SkyError, Spectrum};

/// Weighted least-squares polynomial fit: the coefficients c_0..c_{n−1} minimising
/// Σ_k w_k (y_k − Σ_t c_t x_k^t)².
///
/// `weights` multiply the *squared* residuals (inverse variances); samples with zero weight are
/// ignored. (A library that weights the unsquared residual takes √w.) The normal equations are
/// never formed: the design matrix is scaled row-wise by √w and column-wise to unit norm and
/// solved by Householder QR (Golub & Van Loan, Matrix Computations, 4th ed., §5.3), which keeps
/// the error near the conditioning of the problem itself rather than its square.
pub fn fit_polynomial(
    x: &[f64],
    y: &[f64],
    weights: &[f64],
    n_terms: usize,
) -> Result<Vec<f64>, SkyError> {
    if x.len() != y.len() || x.len() != weights.len() {
        return Err(SkyError::LengthMismatch { x: x.len(), y: y.len(), w: weights.len() });
    }
    if n_terms == 0 {
        return Err(SkyError::NoTerms);
    }
    if let Some(&w) = weights.iter().find(|w| !(w.is_finite() && **w >= 0.0)) {
        return Err(SkyError::Weight(w));
    }
    let used: Vec<usize> = (0..x.len()).filter(|&k| weights[k] > 0.0).collect();
    let m = used.len();
    if m < n_terms {
        return Err(SkyError::TooFewSamples { n_terms, n_samples: m });
    }
    // Column-major design matrix a[t][k] = √w_k x_k^t and right-hand side b_k = √w_k y_k.
    let mut a: Vec<Vec<f64>> = (0..n_terms)
        .map(|t| used.iter().map(|&k| weights[k].sqrt() * x[k].powi(t as i32)).collect())
        .collect();
    let mut b: Vec<f64> = used.iter().map(|&k| weights[k].sqrt() * y[k]).collect();
    let scale: Vec<f64> = a
        .iter()
        .map(|col| {
            let norm = col.iter().map(|v| v * v).sum::<f64>().sqrt();
            if norm > 0.0 {
                norm
            } else {
                1.0
            }
        })
        .collect();
    for (col, s) in a.iter_mut().zip(&scale) {
        col.iter_mut().for_each(|v| *v /= s);
    }
    // Householder QR, applying each reflector to the later columns and to b.
    let mut diag = vec![0.0; n_terms];
    for j in 0..n_terms {
        let norm = a[j][j..].iter().map(|v| v * v).sum::<f64>().sqrt();
        // Columns have unit norm, so an absolute threshold is a relative one.
        if norm <= 1e-13 * (m as f64).sqrt() {
            return Err(SkyError::RankDeficient { column: j });
        }
        let alpha = if a[j][j] > 0.0 { -norm } else { norm };
        let mut v: Vec<f64> = a[j][j..].to_vec();
        v[0] -= alpha;
        let v_norm_sq: f64 = v.iter().map(|e| e * e).sum();
        diag[j] = alpha;
        let reflect = |col: &mut [f64]| {
            let dot: f64 = v.iter().zip(col.iter()).map(|(p, q)| p * q).sum();
            let f = 2.0 * dot / v_norm_sq;
            col.iter_mut().zip(&v).for_each(|(c, e)| *c -= f * e);
        };
        for col in a.iter_mut().skip(j + 1) {
            reflect(&mut col[j..]);
        }
        reflect(&mut b[j..]);
    }
    // Back substitution R c' = Qᵀ b (R's diagonal in `diag`, above it in a[t][j], j < t).
    let mut c = vec![0.0; n_terms];
    for j in (0..n_terms).rev() {
        let s: f64 = (j + 1..n_terms).map(|t| a[t][j] * c[t]).sum();
        c[j] = (b[j] - s) / diag[j];
    }
    Ok(c.iter().zip(&scale).map(|(ci, s)| ci / s).collect())
}

impl Spectrum {
    /// The `n_terms` Taylor coefficients about ν0 that a finite-order multi-term fit recovers from
    /// the given channels: the weighted least-squares fit of S(ν_k) by Σ_t I_t x_k^t with
    /// x_k = (ν_k − ν0)/ν0 (see [`fit_polynomial`] for the weighting). Metrics compare a
    /// deconvolved Taylor image with these rather than with the infinite series of
    /// [`Spectrum::taylor_coefficients`], because the fit absorbs the higher-order terms.
    pub fn fitted_taylor_coefficients(
        &self,
        frequencies_hz: &[f64],
        weights: &[f64],
        n_terms: usize,
    ) -> Result<Vec<f64>, SkyError> {
        if let Some(&f) = frequencies_hz.iter().find(|f| !(f.is_finite() && **f > 0.0)) {
            return Err(SkyError::Frequency(f));
        }
        let x: Vec<f64> =
            frequencies_hz.iter().map(|f| (f - self.ref_freq_hz) / self.ref_freq_hz).collect();
        let y: Vec<f64> = frequencies_hz.iter().map(|&f| self.flux_at(f)).collect();
        fit_polynomial(&x, &y, weights, n_terms)
    }
}

/// Spectral index from Taylor coefficients: α̂ = I1 / I0 (Rau & Cornwell 2011, eq. 10).
pub fn alpha_from_taylor(coefficients: &[f64]) -> Result<f64, SkyError> {
    match coefficients {
        [i0, i1, ..] if *i0 != 0.0 => Ok(i1 / i0),
        _ => Err(SkyError::Coefficients(coefficients.to_vec())),
    }
}

/// Spectral curvature from Taylor coefficients: β̂ = I2 / I0 − α̂(α̂ − 1)/2 with α̂ = I1 / I0
/// (Rau & Cornwell 2011, eq. 10, solved for β).
pub fn beta_from_taylor(coefficients: &[f64]) -> Result<f64, SkyError> {
    match coefficients {
        [i0, i1, i2, ..] if *i0 != 0.0 => {
            let alpha = i1 / i0;
            Ok(i2 / i0 - alpha * (alpha - 1.0) / 2.0)
        }
        _ => Err(SkyError::Coefficients(coefficients.to_vec())),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exact_polynomial_is_recovered() {
        // Data that are exactly a cubic must be fitted exactly by 4 terms, whatever the weights
        // (the residual is zero, so any weighting gives the same minimiser). 1e-12: the problem's
        // condition number on [−1/3, 1/3] is ~1e2, times machine epsilon.
        let truth = [0.7, -1.3, 0.4, 2.2];
        let x: Vec<f64> = (0..11).map(|i| -1.0 / 3.0 + i as f64 / 15.0).collect();
        let y: Vec<f64> =
            x.iter().map(|&xi| truth.iter().rev().fold(0.0, |a, &c| a * xi + c)).collect();
        let w: Vec<f64> = (0..11).map(|i| 1.0 + (i % 3) as f64).collect();
        let c = fit_polynomial(&x, &y, &w, 4).unwrap();
        for (a, b) in c.iter().zip(&truth) {
            assert!((a - b).abs() < 1e-12, "{c:?}");
        }
    }

    #[test]
    #[allow(clippy::needless_range_loop)] // index form mirrors the textbook elimination
    fn matches_dense_normal_equations() {
        // Slow reference: the normal equations (AᵀWA) c = AᵀWy solved by Gaussian elimination with
        // partial pivoting. For 3 terms on [−1/3, 1/3] the squared conditioning is ~1e4, so the
        // two agree to ~1e-11 relative.
        let x: Vec<f64> = (0..9).map(|i| -0.3 + 0.07 * i as f64).collect();
        let y: Vec<f64> = x.iter().map(|&v: &f64| (1.0 + v).powf(-0.7) + 0.01 * v.sin()).collect();
        let w: Vec<f64> = (0..9).map(|i| 0.5 + 0.1 * i as f64).collect();
        let c = fit_polynomial(&x, &y, &w, 3).unwrap();
        let n = 3;
        let mut m = vec![vec![0.0; n + 1]; n];
        for k in 0..x.len() {
            for r in 0..n {
                for s in 0..n {
                    m[r][s] += w[k] * x[k].powi((r + s) as i32);
                }
                m[r][n] += w[k] * x[k].powi(r as i32) * y[k];
            }
        }
        for col in 0..n {
            let p = (col..n).max_by(|&a, &b| m[a][col].abs().total_cmp(&m[b][col].abs())).unwrap();
            m.swap(col, p);
            for r in col + 1..n {
                let f = m[r][col] / m[col][col];
                for s in col..=n {
                    m[r][s] -= f * m[col][s];
                }
            }
        }
        let mut r = vec![0.0; n];
        for i in (0..n).rev() {
            let s: f64 = (i + 1..n).map(|j| m[i][j] * r[j]).sum();
            r[i] = (m[i][n] - s) / m[i][i];
        }
        for (a, b) in c.iter().zip(&r) {
            assert!((a - b).abs() < 1e-11 * b.abs().max(1.0), "{c:?} vs {r:?}");
        }
    }

    #[test]
    fn fitted_approaches_analytic_for_narrow_band() {
        // Over a narrow band the fit's truncation error vanishes and it must agree with the
        // analytic Taylor coefficients (Rau & Cornwell 2011, eq. 10). With a ±2% fractional band
        // the omitted x³ term leaks into I1 by ~I3·(3/5)·0.02² ≈ 1e-4 (tolerance 5e-4) and x⁴
        // into I2 and I0 by less; the fit must still differ from the analytic values, since it
        // is a least-squares fit and not the series.
        let s = Spectrum::new(2.0, 1.5e9, -0.7, -0.2).unwrap();
        let freqs: Vec<f64> = (0..11).map(|i| 1.47e9 + 6e6 * i as f64).collect();
        let c = s.fitted_taylor_coefficients(&freqs, &[1.0; 11], 3).unwrap();
        let a = s.taylor_coefficients(3);
        assert!((c[0] - a[0]).abs() < 1e-6 && (c[1] - a[1]).abs() < 5e-4);
        assert!((c[1] - a[1]).abs() > 1e-8);
        assert!((c[2] - a[2]).abs() < 1e-3, "{c:?} {a:?}");
        assert!((alpha_from_taylor(&c).unwrap() + 0.7).abs() < 1e-4);
        assert!((beta_from_taylor(&c).unwrap() + 0.2).abs() < 1e-3);
    }

    #[test]
    fn rejects_bad_input() {
        assert!(matches!(
            fit_polynomial(&[0.0], &[1.0, 2.0], &[1.0], 1),
            Err(SkyError::LengthMismatch { .. })
        ));
        assert!(matches!(
            fit_polynomial(&[0.0, 1.0], &[1.0, 2.0], &[1.0, 0.0], 2),
            Err(SkyError::TooFewSamples { .. })
        ));
        assert!(matches!(
            fit_polynomial(&[0.5, 0.5, 0.5], &[1.0; 3], &[1.0; 3], 2),
            Err(SkyError::RankDeficient { column: 1 })
        ));
        assert!(matches!(fit_polynomial(&[0.5], &[1.0], &[-1.0], 1), Err(SkyError::Weight(_))));
        assert!(alpha_from_taylor(&[0.0, 1.0]).is_err());
        assert!(beta_from_taylor(&[1.0, 1.0]).is_err());
        // α̂ and β̂ invert the published relations exactly (Rau & Cornwell 2011, eq. 10).
        assert!((alpha_from_taylor(&[2.0, -1.4, 0.79]).unwrap() + 0.7).abs() < 1e-15);
        assert!((beta_from_taylor(&[2.0, -1.4, 0.79]).unwrap() + 0.2).abs() < 1e-15);
    }
}
