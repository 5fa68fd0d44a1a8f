use crate::convolve::convolve_same;
use crate::hessian::{check_shape, TermHessian};
use crate::refresh::PsfSpectra;
use crate::scales::{scale_function, ScaleSet};
use crate::DeconvError;
use ndarray::Array2;
use std::sync::{Arc, OnceLock};

/// One scale of the minor cycle: its function, bias and N×N Hessian.
#[derive(Clone, Debug)]
pub(crate) struct Level {
    /// Scale width in pixels (0 = point).
    pub width_px: f64,
    /// Unit-sum scale function, odd-sized, centred.
    pub phi: Array2<f64>,
    /// Peak-search weight 1 − b · width / max width.
    pub bias: f64,
    /// False for the point level that is only kept to monitor the unsmoothed residual.
    pub selectable: bool,
    /// H^{ss}_ij = (PSF_{i+j} ⊗ Φ_s ⊗ Φ_s)(0).
    pub hessian: TermHessian,
}

/// Everything the minor cycle needs that does not change between iterations or major cycles:
/// the N Taylor terms, the scales with their Hessians, and the scale-convolved spectral PSFs
/// PSF_k ⊗ Φ_s ⊗ Φ_q for every pair of scales (s, q) and k = 0 … 2N−2.
///
/// Built once per PSF set ("plan once, execute many"); memory is
/// L(L+1)/2 · (2N − 1) PSF-sized grids for L scales (plus one point level if the scale set has
/// none, kept to monitor the unsmoothed residual against the threshold).
///
/// PSF convention: every spectral PSF is an `[py, px]` array (any size; twice the image size in
/// each axis is recommended so a component anywhere subtracts its full sidelobe pattern from
/// the whole image) with its peak at the centre pixel (px/2, py/2), normalised like the
/// residual images (usually PSF_0 peak = 1, so residual term 0 is in Jy/beam). With a PSF only
/// as large as the image, the subtraction is truncated to the overlap.
#[derive(Clone, Debug)]
pub struct MinorCyclePlan {
    pub(crate) nterms: usize,
    pub(crate) psf_dim: (usize, usize),
    pub(crate) levels: Vec<Level>,
    pub(crate) point_level: usize,
    /// Flattened PSF_k ⊗ Φ_s ⊗ Φ_q for s ≤ q, see [`MinorCyclePlan::cross_index`].
    pub(crate) cross: Vec<Vec<f64>>,
    /// The PSFs' FFTs for the exact refresh of the PSF-patch mode, made on first use for the
    /// image size of that call.
    pub(crate) spectra: OnceLock<Arc<PsfSpectra>>,
}

impl MinorCyclePlan {
    /// Högbom CLEAN: one Taylor term, point scale only.
    pub fn hogbom(psf: &Array2<f64>) -> Result<Self, DeconvError> {
        Self::new(std::slice::from_ref(psf), 1, &ScaleSet::point())
    }

    /// Multi-scale CLEAN with one Taylor term (Cornwell 2008).
    pub fn multiscale(psf: &Array2<f64>, scales: &ScaleSet) -> Result<Self, DeconvError> {
        Self::new(std::slice::from_ref(psf), 1, scales)
    }

    /// Point-source multi-term MFS CLEAN with `nterms` Taylor terms from 2N − 1 spectral PSFs.
    pub fn multi_term(psfs: &[Array2<f64>], nterms: usize) -> Result<Self, DeconvError> {
        Self::new(psfs, nterms, &ScaleSet::point())
    }

    /// Multi-scale multi-term MFS CLEAN (Rau & Cornwell 2011, A&A 532, A71): `psfs` are the
    /// 2N − 1 spectral PSFs PSF_0 … PSF_{2N−2}, 1 ≤ N ≤ [`crate::MAX_TERMS`].
    pub fn new(
        psfs: &[Array2<f64>],
        nterms: usize,
        scales: &ScaleSet,
    ) -> Result<Self, DeconvError> {
        if nterms == 0 {
            return Err(DeconvError::NoTerms(nterms));
        }
        if nterms > crate::minor::MAX_TERMS {
            return Err(DeconvError::Parameter {
                name: "nterms",
                value: nterms as f64,
                allowed: "1 ..= 8 (MAX_TERMS)",
            });
        }
        let nk = 2 * nterms - 1;
        if psfs.len() != nk {
            return Err(DeconvError::PsfCount { nterms, expected: nk, got: psfs.len() });
        }
        scales.validate()?;
        let psf_dim = psfs[0].dim();
        for p in psfs {
            check_shape("spectral PSF", p, psf_dim)?;
        }
        let (cy, cx) = (psf_dim.0 / 2, psf_dim.1 / 2);
        let peak = psfs[0][[cy, cx]];
        if !(peak > 0.0 && peak.is_finite()) {
            return Err(DeconvError::PsfPeak { x: cx, y: cy, value: peak });
        }

        let mut widths: Vec<(f64, f64, bool)> =
            scales.widths_px.iter().zip(scales.biases()).map(|(&w, b)| (w, b, true)).collect();
        let point_level =
            match widths.iter().position(|&(w, _, _)| scale_function(w, scales.shape).len() == 1) {
                Some(i) => i,
                None => {
                    widths.push((0.0, 0.0, false));
                    widths.len() - 1
                }
            };
        let phis: Vec<Array2<f64>> =
            widths.iter().map(|&(w, _, _)| scale_function(w, scales.shape)).collect();
        let nl = widths.len();
        let mut cross = vec![Vec::new(); nl * (nl + 1) / 2 * nk];
        for s in 0..nl {
            for q in s..nl {
                let kernel = convolve_full(&phis[s], &phis[q]);
                for (k, psf) in psfs.iter().enumerate() {
                    let conv = if kernel.len() == 1 {
                        psf * kernel[[0, 0]]
                    } else {
                        convolve_same(psf, &kernel)
                    };
                    cross[Self::cross_index_raw(nl, nk, s, q, k)] = conv.iter().copied().collect();
                }
            }
        }
        let mut levels = Vec::with_capacity(nl);
        for (s, (&(width_px, bias, selectable), phi)) in widths.iter().zip(phis).enumerate() {
            let peaks: Vec<f64> = (0..nk)
                .map(|k| cross[Self::cross_index_raw(nl, nk, s, s, k)][cy * psf_dim.1 + cx])
                .collect();
            let hessian = TermHessian::from_peaks(&peaks, nterms, s)?;
            levels.push(Level { width_px, phi, bias, selectable, hessian });
        }
        Ok(Self { nterms, psf_dim, levels, point_level, cross, spectra: OnceLock::new() })
    }

    fn cross_index_raw(nl: usize, nk: usize, s: usize, q: usize, k: usize) -> usize {
        let (a, b) = if s <= q { (s, q) } else { (q, s) };
        // Row-major index into the upper triangle (a ≤ b).
        let pair = a * nl - a * (a + 1) / 2 + b;
        pair * nk + k
    }

    /// Index of PSF_k ⊗ Φ_s ⊗ Φ_q in `cross` (symmetric in s, q).
    pub(crate) fn cross_index(&self, s: usize, q: usize, k: usize) -> usize {
        Self::cross_index_raw(self.levels.len(), 2 * self.nterms - 1, s, q, k)
    }

    /// Number of Taylor terms N.
    pub fn nterms(&self) -> usize {
        self.nterms
    }

    /// Shape `[py, px]` of the PSFs.
    pub fn psf_dim(&self) -> (usize, usize) {
        self.psf_dim
    }

    /// The point-scale Hessian H_ij = PSF_{i+j}(0): converts residual Taylor images to
    /// Taylor-coefficient images (see [`TermHessian::principal_solution`]).
    pub fn point_hessian(&self) -> &TermHessian {
        &self.levels[self.point_level].hessian
    }

    /// Half-width h (pixels) of the smallest centred (2h + 1)² square of the PSF grid outside
    /// which every |PSF_0 ⊗ Φ_s ⊗ Φ_q| is at most `sidelobe` times its centre value (the PSF
    /// patch of [`crate::CleanParams::psf_patch_sidelobe`]). When no square inside the PSF grid
    /// qualifies, the half-width of the whole grid.
    pub fn psf_patch_half_width(&self, sidelobe: f64) -> usize {
        let (py, px) = self.psf_dim;
        let (cy, cx) = (py / 2, px / 2);
        let reach = cy.max(cx).max(py - 1 - cy).max(px - 1 - cx);
        // ring[d]: largest |value| / centre at Chebyshev distance d from the centre.
        let mut ring = vec![0.0f64; reach + 1];
        let nl = self.levels.len();
        for s in 0..nl {
            for q in s..nl {
                let kern = &self.cross[self.cross_index(s, q, 0)];
                let centre = kern[cy * px + cx].abs();
                for (i, &v) in kern.iter().enumerate() {
                    let d = (i / px).abs_diff(cy).max((i % px).abs_diff(cx));
                    let r = if centre > 0.0 { v.abs() / centre } else { f64::INFINITY };
                    ring[d] = ring[d].max(r);
                }
            }
        }
        // Smallest h with every ring beyond h at or below the sidelobe level.
        let mut h = reach;
        while h > 0 && ring[h] <= sidelobe {
            h -= 1;
        }
        if h == reach && ring[reach] > sidelobe {
            return reach.max(py).max(px);
        }
        h
    }

    /// The PSFs' FFTs for `ny × nx` images (cached for the first size asked for).
    pub(crate) fn spectra(&self, ny: usize, nx: usize) -> Arc<PsfSpectra> {
        let cached = self.spectra.get_or_init(|| Arc::new(PsfSpectra::new(self, ny, nx)));
        if cached.fits(ny, nx) {
            cached.clone()
        } else {
            Arc::new(PsfSpectra::new(self, ny, nx))
        }
    }

    /// Scale widths (pixels) of the selectable scales with their Hessians, in the order given.
    pub fn scale_hessians(&self) -> Vec<(f64, &TermHessian)> {
        self.levels.iter().filter(|l| l.selectable).map(|l| (l.width_px, &l.hessian)).collect()
    }
}

/// Full linear convolution of two small odd-sized centred kernels (result odd-sized, centred).
fn convolve_full(a: &Array2<f64>, b: &Array2<f64>) -> Array2<f64> {
    let (ay, ax) = a.dim();
    let (by, bx) = b.dim();
    let mut out = Array2::zeros((ay + by - 1, ax + bx - 1));
    for ((y1, x1), &va) in a.indexed_iter() {
        if va == 0.0 {
            continue;
        }
        for ((y2, x2), &vb) in b.indexed_iter() {
            out[[y1 + y2, x1 + x2]] += va * vb;
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cross_index_is_a_bijection_on_pairs() {
        let (nl, nk) = (4, 5);
        let mut seen = std::collections::HashSet::new();
        for s in 0..nl {
            for q in s..nl {
                for k in 0..nk {
                    let i = MinorCyclePlan::cross_index_raw(nl, nk, s, q, k);
                    assert_eq!(i, MinorCyclePlan::cross_index_raw(nl, nk, q, s, k));
                    assert!(i < nl * (nl + 1) / 2 * nk && seen.insert(i));
                }
            }
        }
    }
}
