use crate::DeconvError;
use ndarray::Array2;

/// The N×N Hessian of multi-term multi-frequency CLEAN and its inverse.
///
/// For N Taylor terms and spectral PSFs PSF_k = Σ_ν W_ν w_k(ν) B_ν / Σ_ν W_ν (k = 0 … 2N−2,
/// w_k(ν) = ((ν − ν0)/ν0)^k), the normal equations of the least-squares fit of N Taylor-term
/// images couple the terms through H_ij = PSF_{i+j}(0), the spectral PSFs' values at their
/// centre (Rau & Cornwell 2011, A&A 532, A71, eqs. 16–20). For a point component at one pixel the
/// N residual Taylor images r_i there satisfy r = H a, so the principal solution a = H⁻¹ r gives
/// the N Taylor amplitudes. H is symmetric positive definite for any N ≤ number of distinct
/// channels; it is factored once (Cholesky) and its inverse stored, so the per-pixel solve in
/// the minor cycle is an N×N matrix–vector product.
#[derive(Clone, Debug, PartialEq)]
pub struct TermHessian {
    n: usize,
    matrix: Vec<f64>,
    inverse: Vec<f64>,
}

impl TermHessian {
    /// The Hessian H_ij = peaks[i + j] from the 2N − 1 PSF centre values `peaks`.
    ///
    /// `scale` only labels the error when H is not positive definite.
    pub fn from_peaks(peaks: &[f64], nterms: usize, scale: usize) -> Result<Self, DeconvError> {
        if nterms == 0 {
            return Err(DeconvError::NoTerms(nterms));
        }
        if peaks.len() != 2 * nterms - 1 {
            return Err(DeconvError::PsfCount {
                nterms,
                expected: 2 * nterms - 1,
                got: peaks.len(),
            });
        }
        let n = nterms;
        let mut matrix = vec![0.0; n * n];
        for i in 0..n {
            for j in 0..n {
                matrix[i * n + j] = peaks[i + j];
            }
        }
        Self::from_matrix(matrix, n, scale)
    }

    /// A Hessian from an explicit symmetric row-major N×N matrix.
    pub fn from_matrix(matrix: Vec<f64>, n: usize, scale: usize) -> Result<Self, DeconvError> {
        if n == 0 {
            return Err(DeconvError::NoTerms(n));
        }
        if matrix.len() != n * n {
            return Err(DeconvError::TermCount {
                what: "Hessian entries",
                expected: n * n,
                got: matrix.len(),
            });
        }
        let chol = cholesky(&matrix, n, scale)?;
        let mut inverse = vec![0.0; n * n];
        let mut e = vec![0.0; n];
        let mut col = vec![0.0; n];
        for j in 0..n {
            e.iter_mut().enumerate().for_each(|(i, v)| *v = if i == j { 1.0 } else { 0.0 });
            cholesky_solve(&chol, n, &e, &mut col);
            for i in 0..n {
                inverse[i * n + j] = col[i];
            }
        }
        // Symmetrise the rounding so that aᵀ r computed either way agrees.
        for i in 0..n {
            for j in 0..i {
                let s = 0.5 * (inverse[i * n + j] + inverse[j * n + i]);
                inverse[i * n + j] = s;
                inverse[j * n + i] = s;
            }
        }
        Ok(Self { n, matrix, inverse })
    }

    /// Number of Taylor terms N.
    pub fn nterms(&self) -> usize {
        self.n
    }

    /// Entry H_ij.
    pub fn get(&self, i: usize, j: usize) -> f64 {
        self.matrix[i * self.n + j]
    }

    /// Entry (H⁻¹)_ij.
    pub fn inverse_get(&self, i: usize, j: usize) -> f64 {
        self.inverse[i * self.n + j]
    }

    /// Principal solution a = H⁻¹ r for one pixel (`r` and `out` of length N).
    #[inline]
    pub fn solve_into(&self, r: &[f64], out: &mut [f64]) {
        let n = self.n;
        for (i, o) in out.iter_mut().enumerate().take(n) {
            let row = &self.inverse[i * n..(i + 1) * n];
            *o = row.iter().zip(r).map(|(h, x)| h * x).sum();
        }
    }

    /// Per-pixel principal solution of N residual Taylor images: image_t = Σ_j (H⁻¹)_tj r_j.
    ///
    /// This turns residual images (which are weighted sums over channels, Jy/beam for t = 0)
    /// into Taylor-coefficient images with the units of the model's terms.
    pub fn principal_solution(
        &self,
        residuals: &[Array2<f64>],
    ) -> Result<Vec<Array2<f64>>, DeconvError> {
        let n = self.n;
        if residuals.len() != n {
            return Err(DeconvError::TermCount {
                what: "residual images",
                expected: n,
                got: residuals.len(),
            });
        }
        let dim = residuals[0].dim();
        for r in residuals {
            check_shape("residual image", r, dim)?;
        }
        let mut out: Vec<Array2<f64>> = (0..n).map(|_| Array2::zeros(dim)).collect();
        let mut rv = vec![0.0; n];
        let mut av = vec![0.0; n];
        for ((iy, ix), _) in residuals[0].indexed_iter() {
            for t in 0..n {
                rv[t] = residuals[t][[iy, ix]];
            }
            self.solve_into(&rv, &mut av);
            for t in 0..n {
                out[t][[iy, ix]] = av[t];
            }
        }
        Ok(out)
    }
}

/// Check that `a` has shape `dim` (`[ny, nx]`).
pub(crate) fn check_shape(
    what: &'static str,
    a: &Array2<f64>,
    dim: (usize, usize),
) -> Result<(), DeconvError> {
    if a.dim() != dim {
        return Err(DeconvError::ShapeMismatch {
            what,
            expected_ny: dim.0,
            expected_nx: dim.1,
            got_ny: a.dim().0,
            got_nx: a.dim().1,
        });
    }
    Ok(())
}

/// Lower Cholesky factor L (row-major) with H = L Lᵀ (Golub & Van Loan, Matrix Computations,
/// alg. 4.2.1).
fn cholesky(h: &[f64], n: usize, scale: usize) -> Result<Vec<f64>, DeconvError> {
    let mut l = vec![0.0; n * n];
    for j in 0..n {
        let mut d = h[j * n + j];
        for k in 0..j {
            d -= l[j * n + k] * l[j * n + k];
        }
        // A pivot this small relative to its diagonal means H is singular to working precision
        // (e.g. two Taylor terms with proportional PSFs); its inverse would be noise.
        if !(d > 1e-12 * h[j * n + j].abs() && d.is_finite()) {
            return Err(DeconvError::HessianNotPositiveDefinite { scale, pivot: j, value: d });
        }
        let djj = d.sqrt();
        l[j * n + j] = djj;
        for i in j + 1..n {
            let mut s = h[i * n + j];
            for k in 0..j {
                s -= l[i * n + k] * l[j * n + k];
            }
            l[i * n + j] = s / djj;
        }
    }
    Ok(l)
}

/// Solve L Lᵀ x = b by forward and back substitution.
fn cholesky_solve(l: &[f64], n: usize, b: &[f64], x: &mut [f64]) {
    let mut y = vec![0.0; n];
    for i in 0..n {
        let mut s = b[i];
        for k in 0..i {
            s -= l[i * n + k] * y[k];
        }
        y[i] = s / l[i * n + i];
    }
    for i in (0..n).rev() {
        let mut s = y[i];
        for k in i + 1..n {
            s -= l[k * n + i] * x[k];
        }
        x[i] = s / l[i * n + i];
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_by_two_matches_cofactor_inverse() {
        // Textbook 2×2 inverse by cofactors: [[a, b], [b, d]]⁻¹ = [[d, −b], [−b, a]] / (ad − b²).
        let (a, b, d) = (1.0, 0.013, 0.044_444_444_444_444_44);
        let h = TermHessian::from_matrix(vec![a, b, b, d], 2, 0).unwrap();
        let det = a * d - b * b;
        let r = [0.7, -0.02];
        let mut got = [0.0; 2];
        h.solve_into(&r, &mut got);
        let want = [(d * r[0] - b * r[1]) / det, (-b * r[0] + a * r[1]) / det];
        // The condition number is ~25, so agreement to ~1e-14 relative is what rounding allows.
        for k in 0..2 {
            assert!((got[k] - want[k]).abs() < 1e-13 * want[k].abs().max(1.0), "{got:?} {want:?}");
        }
    }

    #[test]
    fn three_by_three_matches_adjugate() {
        // 3×3 inverse as adjugate / determinant (cofactor expansion, any linear-algebra text).
        let m = [1.0, 0.01, 0.0444, 0.01, 0.0444, 0.002, 0.0444, 0.002, 0.0035];
        let h = TermHessian::from_matrix(m.to_vec(), 3, 0).unwrap();
        let c = |i: usize, j: usize| m[i * 3 + j];
        let cof = |i: usize, j: usize| {
            let rows: Vec<usize> = (0..3).filter(|&r| r != i).collect();
            let cols: Vec<usize> = (0..3).filter(|&r| r != j).collect();
            let minor = c(rows[0], cols[0]) * c(rows[1], cols[1])
                - c(rows[0], cols[1]) * c(rows[1], cols[0]);
            if (i + j).is_multiple_of(2) {
                minor
            } else {
                -minor
            }
        };
        let det: f64 = (0..3).map(|j| c(0, j) * cof(0, j)).sum();
        for i in 0..3 {
            for j in 0..3 {
                let want = cof(j, i) / det;
                // cond(H) ≈ 2e3 here: 1e-11 relative leaves room for that amplification of 1e-16.
                assert!((h.inverse_get(i, j) - want).abs() < 1e-11 * want.abs().max(1.0), "{i}{j}");
            }
        }
    }

    #[test]
    fn numerically_singular_matrix_is_rejected() {
        // [[1, a], [a, a²]] is exactly singular; rounding leaves a pivot of ~1e-19.
        let a = 0.05;
        assert!(TermHessian::from_matrix(vec![1.0, a, a, a * a], 2, 0).is_err());
    }

    #[test]
    fn indefinite_matrix_is_rejected_with_pivot() {
        let err = TermHessian::from_matrix(vec![1.0, 2.0, 2.0, 1.0], 2, 3).unwrap_err();
        match err {
            DeconvError::HessianNotPositiveDefinite { scale, pivot, value } => {
                assert_eq!((scale, pivot), (3, 1));
                assert!((value + 3.0).abs() < 1e-12); // 1 − 2² = −3
            }
            e => panic!("unexpected {e}"),
        }
    }
}
