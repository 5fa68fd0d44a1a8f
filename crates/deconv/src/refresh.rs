//! Exact residuals for the minor cycle's PSF-patch mode (Clark 1980, A&A 89, 377: a minor cycle
//! on a PSF patch, then an exact FFT subtraction of the components found).
//!
//! While a minor cycle runs with a PSF patch, each component is subtracted only near itself, so
//! the tracked residuals drift from the exact ones by the sidelobes the patch leaves out. Every
//! so often [`PsfSpectra::residuals`] recomputes them exactly from the residuals at the start
//! of the minor cycle and the model added since:
//!
//! R_i = R⁰_i − Σ_j PSF_{i+j} ⊛ Δ_j,
//!
//! the same linear convolution the whole-PSF path performs one component at a time (PSF origin
//! at its centre pixel, terms whose PSF offset falls outside the PSF grid omitted).
//!
//! The convolution is circular on an FFT grid of P ≥ 2n − 1 pixels per axis (n the image's):
//! every offset y − y' between two image pixels then has its own residue modulo P, so a PSF
//! stored at its offsets (zero where the offset is outside the PSF grid) gives the linear sum
//! exactly, whatever the PSF's size.
use crate::convolve::smooth_size;
use crate::plan::MinorCyclePlan;
use ndarray::Array2;
use rayon::prelude::*;
use rustfft::num_complex::Complex;
use rustfft::{Fft, FftPlanner};
use std::sync::Arc;

type C64 = Complex<f64>;

/// The spectral PSFs' transforms on the FFT grid of one image size, with the FFT plans.
pub(crate) struct PsfSpectra {
    ny: usize,
    nx: usize,
    /// FFT grid (rows, columns).
    py: usize,
    px: usize,
    /// Number of Taylor terms N.
    nterms: usize,
    /// The spectral products folded per (output pair o, input pair p), column-major
    /// (`[kx * py + ky]`): see [`PairProduct`]; index `o * n_pairs + p`.
    products: Vec<PairProduct>,
    row_fwd: Arc<dyn Fft<f64>>,
    row_inv: Arc<dyn Fft<f64>>,
    col_fwd: Arc<dyn Fft<f64>>,
    col_inv: Arc<dyn Fft<f64>>,
}

impl std::fmt::Debug for PsfSpectra {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("PsfSpectra")
            .field("image", &(self.ny, self.nx))
            .field("fft_grid", &(self.py, self.px))
            .field("terms", &self.nterms)
            .finish()
    }
}

impl PsfSpectra {
    /// Transforms of the plan's unsmoothed spectral PSFs for `ny × nx` images.
    pub fn new(plan: &MinorCyclePlan, ny: usize, nx: usize) -> Self {
        let py = smooth_size(2 * ny.max(1) - 1);
        let px = smooth_size(2 * nx.max(1) - 1);
        let mut planner = FftPlanner::<f64>::new();
        let mut me = Self {
            ny,
            nx,
            py,
            px,
            nterms: plan.nterms,
            products: Vec::new(),
            row_fwd: planner.plan_fft_forward(px),
            row_inv: planner.plan_fft_inverse(px),
            col_fwd: planner.plan_fft_forward(py),
            col_inv: planner.plan_fft_inverse(py),
        };
        let (ky, kx) = plan.psf_dim;
        let (cy, cx) = (ky / 2, kx / 2);
        let point = plan.point_level;
        let nk = 2 * plan.nterms - 1;
        let spectra: Vec<Vec<C64>> = (0..nk)
            .map(|k| {
                let psf = &plan.cross[plan.cross_index(point, point, k)];
                // Offsets e = y − y' in [−(n − 1), n − 1] stored at e mod P; the PSF value at
                // offset e sits at index e + centre when that is inside the PSF grid.
                let mut buf = vec![C64::new(0.0, 0.0); py * px];
                let range = |n: usize, c: usize, k: usize| {
                    let lo = c.saturating_sub(n - 1);
                    let hi = (c + n - 1).min(k - 1);
                    lo..=hi
                };
                for iy in range(ny, cy, ky) {
                    let y = (iy + py - cy) % py;
                    for ix in range(nx, cx, kx) {
                        let x = (ix + px - cx) % px;
                        buf[y * px + x].re = psf[iy * kx + ix];
                    }
                }
                me.forward(buf, py)
            })
            .collect();
        me.products = PairProduct::fold(&spectra, plan.nterms);
        me
    }

    /// Whether these spectra were made for `ny × nx` images.
    pub fn fits(&self, ny: usize, nx: usize) -> bool {
        (self.ny, self.nx) == (ny, nx)
    }

    /// R_i = start_i − Σ_j PSF_{i+j} ⊛ delta_j for the N terms (all images `ny × nx`), with
    /// working buffers kept in `scratch` between calls.
    pub fn residuals(
        &self,
        start: &[Array2<f64>],
        delta: &[Array2<f64>],
        scratch: &mut RefreshScratch,
    ) -> Vec<Array2<f64>> {
        let (ny, nx, py, px) = (self.ny, self.nx, self.py, self.px);
        let n = delta.len();
        let zero = C64::new(0.0, 0.0);
        // Input terms in pairs: the transform Z of a + i b gives both, A(k) = (Z(k) +
        // conj Z(−k)) / 2 and B(k) = (Z(k) − conj Z(−k)) / 2i, since a and b are real.
        let n_pairs = n.div_ceil(2);
        scratch.packed.resize_with(n_pairs, Vec::new);
        for (pair, packed) in scratch.packed.iter_mut().enumerate() {
            // The model added between refreshes is a few hundred pixels: most rows are zero,
            // and only the others are gathered (compactly) and transformed.
            let (a, b) = (&delta[2 * pair], delta.get(2 * pair + 1));
            let nonzero = |d: &Array2<f64>, y: usize| d.row(y).iter().any(|&v| v != 0.0);
            scratch.live.clear();
            scratch
                .live
                .extend((0..ny).filter(|&y| nonzero(a, y) || b.is_some_and(|b| nonzero(b, y))));
            scratch.rows.clear();
            scratch.rows.resize(scratch.live.len() * px, zero);
            for (line, &y) in scratch.rows.chunks_mut(px).zip(&scratch.live) {
                for (c, &v) in line.iter_mut().zip(a.row(y)) {
                    c.re = v;
                }
                if let Some(b) = b {
                    for (c, &v) in line.iter_mut().zip(b.row(y)) {
                        c.im = v;
                    }
                }
            }
            self.forward_rows_into(&mut scratch.rows, &scratch.live, packed);
        }
        // Output terms in pairs too: the inverse transform of X_a + i X_b is x_a + i x_b with
        // both real, so one inverse FFT gives two convolutions.
        let norm = 1.0 / (py * px) as f64;
        let mut out: Vec<Array2<f64>> = start.to_vec();
        let packed = &scratch.packed;
        for (o, first) in (0..n).step_by(2).enumerate() {
            let second = (first + 1 < n).then_some(first + 1);
            let products = &self.products[o * n_pairs..(o + 1) * n_pairs];
            scratch.acc.resize(px * py, zero);
            let col_fft = &self.col_inv;
            let fft_scratch = || vec![zero; col_fft.get_inplace_scratch_len()];
            scratch.acc.par_chunks_mut(py).enumerate().for_each_init(
                fft_scratch,
                |fft_scratch, (kx, col)| {
                    // Column kx of every product and packed input, and the mirrored column
                    // (−kx mod P) of the inputs: Z(−k) for ky sits at (P − ky) mod P there. The
                    // column's inverse transform follows while it is in cache.
                    let (base, base_m) = (kx * py, ((px - kx) % px) * py);
                    for (p, (product, z)) in products.iter().zip(packed).enumerate() {
                        let (u, z_k) = (&product.u[base..base + py], &z[base..base + py]);
                        let z_m = &z[base_m..base_m + py];
                        // acc (+)= U Z(k) (+ V conj Z(−k)); ky = 0 is its own mirror.
                        let first_term = p == 0;
                        let add = |acc: &mut C64, v: C64| {
                            if first_term {
                                *acc = v;
                            } else {
                                *acc += v;
                            }
                        };
                        match &product.v {
                            Some(v) => {
                                let v = &v[base..base + py];
                                add(&mut col[0], u[0] * z_k[0] + v[0] * z_m[0].conj());
                                let mirrored = z_m[1..].iter().rev();
                                for ((((acc, &u), &v), &zk), &zm) in col[1..]
                                    .iter_mut()
                                    .zip(&u[1..])
                                    .zip(&v[1..])
                                    .zip(&z_k[1..])
                                    .zip(mirrored)
                                {
                                    add(acc, u * zk + v * zm.conj());
                                }
                            }
                            None => {
                                for ((acc, &u), &zk) in col.iter_mut().zip(u).zip(z_k) {
                                    add(acc, u * zk);
                                }
                            }
                        }
                    }
                    col_fft.process_with_scratch(col, fft_scratch);
                },
            );
            self.inverse_rows_into(&scratch.acc, &mut scratch.rows);
            for y in 0..ny {
                for x in 0..nx {
                    let v = scratch.rows[y * nx + x] * norm;
                    out[first][[y, x]] -= v.re;
                    if let Some(b) = second {
                        out[b][[y, x]] -= v.im;
                    }
                }
            }
        }
        out
    }

    /// Unnormalised 2-D FFT of a `rows × px` row-major buffer (rows beyond `rows` up to `py` are
    /// zero), returned column-major (`[kx * py + ky]`).
    fn forward(&self, mut buf: Vec<C64>, rows: usize) -> Vec<C64> {
        let mut cols = Vec::new();
        let all: Vec<usize> = (0..rows).collect();
        self.forward_rows_into(&mut buf, &all, &mut cols);
        cols
    }

    /// [`Self::forward`] of an image whose only non-zero rows are `rows` (ascending, < py),
    /// given compactly: row `rows[r]` is `buf[r * px..(r + 1) * px]`. Into `cols` (resized);
    /// `buf` is overwritten.
    fn forward_rows_into(&self, buf: &mut [C64], rows: &[usize], cols: &mut Vec<C64>) {
        let (py, px) = (self.py, self.px);
        let row_fft = &self.row_fwd;
        buf[..rows.len() * px].par_chunks_mut(px).for_each_init(
            || vec![C64::new(0.0, 0.0); row_fft.get_inplace_scratch_len()],
            |scratch, row| row_fft.process_with_scratch(row, scratch),
        );
        cols.resize(px * py, C64::new(0.0, 0.0));
        let buf = &*buf;
        let col_fft = &self.col_fwd;
        // Each column is gathered and transformed while it is in cache.
        cols.par_chunks_mut(py).enumerate().for_each_init(
            || vec![C64::new(0.0, 0.0); col_fft.get_inplace_scratch_len()],
            |scratch, (kx, col)| {
                col.fill(C64::new(0.0, 0.0));
                for (r, &y) in rows.iter().enumerate() {
                    col[y] = buf[r * px + kx];
                }
                col_fft.process_with_scratch(col, scratch);
            },
        );
    }

    /// The row half of the unnormalised inverse of [`Self::forward`], after the column
    /// transforms (done in `cols`, column-major): the first `ny` rows, first `nx` columns,
    /// row-major, into `out` (resized).
    fn inverse_rows_into(&self, cols: &[C64], out: &mut Vec<C64>) {
        let (ny, nx, py, px) = (self.ny, self.nx, self.py, self.px);
        let row_fft = &self.row_inv;
        out.resize(ny * nx, C64::new(0.0, 0.0));
        out.par_chunks_mut(nx).enumerate().for_each_init(
            || {
                let scratch = vec![C64::new(0.0, 0.0); row_fft.get_inplace_scratch_len()];
                (vec![C64::new(0.0, 0.0); px], scratch)
            },
            |(row, scratch), (y, dst)| {
                for (kx, r) in row.iter_mut().enumerate() {
                    *r = cols[kx * py + y];
                }
                row_fft.process_with_scratch(row, scratch);
                dst.copy_from_slice(&row[..nx]);
            },
        );
    }
}

/// The spectral sum of one output pair over one packed input pair, folded into at most two
/// spectra so that the product costs two complex multiplications per frequency.
///
/// Output terms go in pairs too (first = 2o, second = 2o + 1): the inverse transform of
/// Y_first + i Y_second gives both real images at once, with Y_t = Σ_j S_{t+j} X_j (S_k the
/// FFT of PSF_k, X_j that of Δ_j). The inputs are packed Z = FFT(Δ_{2p} + i Δ_{2p+1}), from which
/// X_{2p} = (Z(k) + conj Z(−k)) / 2 and X_{2p+1} = −i (Z(k) − conj Z(−k)) / 2 (both Δ real).
/// With T_j = S_{first+j} + i S_{second+j} (S_{first+j} alone without a second output), the
/// pair's share of Y_first + i Y_second is T_{2p} X_{2p} + T_{2p+1} X_{2p+1}
/// = U Z(k) + V conj Z(−k), U = (T_{2p} − i T_{2p+1}) / 2, V = (T_{2p} + i T_{2p+1}) / 2.
/// Without a second input Δ_{2p+1} the packed Z is X_{2p} itself: U = T_{2p}, no V.
struct PairProduct {
    u: Vec<C64>,
    v: Option<Vec<C64>>,
}

impl PairProduct {
    /// All (output pair, input pair) products of N terms from the 2N − 1 spectra, index
    /// `o * n_pairs + p`.
    fn fold(spectra: &[Vec<C64>], n: usize) -> Vec<Self> {
        let n_pairs = n.div_ceil(2);
        let i = C64::new(0.0, 1.0);
        let len = spectra[0].len();
        let mut out = Vec::with_capacity(n_pairs * n_pairs);
        for first in (0..n).step_by(2) {
            let second = (first + 1 < n).then_some(first + 1);
            // T_j(k) = S_{first+j}(k) + i S_{second+j}(k).
            let t = |j: usize, k: usize| -> C64 {
                let s = spectra[first + j][k];
                second.map_or(s, |b| s + i * spectra[b + j][k])
            };
            for a in (0..n).step_by(2) {
                let product = if a + 1 < n {
                    let u = (0..len).into_par_iter().map(|k| (t(a, k) - i * t(a + 1, k)) * 0.5);
                    let v = (0..len).into_par_iter().map(|k| (t(a, k) + i * t(a + 1, k)) * 0.5);
                    Self { u: u.collect(), v: Some(v.collect()) }
                } else {
                    Self { u: (0..len).into_par_iter().map(|k| t(a, k)).collect(), v: None }
                };
                out.push(product);
            }
        }
        out
    }
}

/// Working buffers of [`PsfSpectra::residuals`], kept between the refreshes of a minor cycle
/// (each is an FFT grid of several tens of MB at realistic sizes; allocating them afresh made
/// the kernel map and clear their pages every time).
#[derive(Debug, Default)]
pub(crate) struct RefreshScratch {
    rows: Vec<C64>,
    /// The rows of the model increment with a non-zero value.
    live: Vec<usize>,
    packed: Vec<Vec<C64>>,
    acc: Vec<C64>,
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The defining sum R_i = start_i − Σ_j Σ_{p'} PSF_{i+j}[p − p' + c] Δ_j[p'] (PSF terms
    /// outside the PSF grid omitted), evaluated directly: the slow reference.
    fn direct(
        psfs: &[Array2<f64>],
        start: &[Array2<f64>],
        delta: &[Array2<f64>],
    ) -> Vec<Array2<f64>> {
        let (ky, kx) = psfs[0].dim();
        let (cy, cx) = ((ky / 2) as isize, (kx / 2) as isize);
        start
            .iter()
            .enumerate()
            .map(|(i, s)| {
                let mut r = s.clone();
                for (j, d) in delta.iter().enumerate() {
                    for ((y, x), out) in r.indexed_iter_mut() {
                        for ((yp, xp), &v) in d.indexed_iter() {
                            let dy = y as isize - yp as isize + cy;
                            let dx = x as isize - xp as isize + cx;
                            if dy >= 0 && dx >= 0 && (dy as usize) < ky && (dx as usize) < kx {
                                *out -= v * psfs[i + j][[dy as usize, dx as usize]];
                            }
                        }
                    }
                }
                r
            })
            .collect()
    }

    fn image(ny: usize, nx: usize, seed: usize) -> Array2<f64> {
        Array2::from_shape_fn((ny, nx), |(y, x)| {
            (((y * 13 + x * 7 + seed * 5) % 17) as f64 - 8.0) / 8.0
        })
    }

    /// FFT path against the direct sum, for PSFs twice the image (the usual case), smaller
    /// than the image (truncated), larger than twice the image, odd and even sizes, N = 1–3
    /// (every form of the folded products), with dense and sparse model increments.
    #[test]
    fn exact_residuals_match_the_direct_sum() {
        for &(ny, nx, ky, kx, nterms) in
            &[(12, 10, 24, 20, 2), (9, 14, 7, 11, 1), (10, 10, 35, 30, 3), (11, 8, 22, 16, 3)]
        {
            let psfs: Vec<Array2<f64>> = (0..2 * nterms - 1)
                .map(|k| {
                    let mut p = Array2::from_shape_fn((ky, kx), |(y, x)| {
                        ((y * 3 + x * 5 + k) as f64 * 0.37).sin() * 0.3
                    });
                    // Centre values: moments of five channel offsets, so the Hessian they
                    // form is positive definite.
                    let xs = [-0.3f64, -0.1, 0.1, 0.3, 0.2];
                    p[[ky / 2, kx / 2]] = xs.iter().map(|x| x.powi(k as i32)).sum::<f64>() / 5.0;
                    p
                })
                .collect();
            let plan = MinorCyclePlan::multi_term(&psfs, nterms).unwrap();
            let spectra = PsfSpectra::new(&plan, ny, nx);
            assert!(spectra.fits(ny, nx));
            let start: Vec<_> = (0..nterms).map(|i| image(ny, nx, i)).collect();
            let dense: Vec<_> = (0..nterms).map(|i| image(ny, nx, 10 + i) * 0.1).collect();
            // As in a minor cycle: a few components, on some rows only (the others' transforms
            // are skipped), in different rows for different terms.
            let sparse: Vec<_> = (0..nterms)
                .map(|i| {
                    let mut d = Array2::zeros((ny, nx));
                    d[[1 + i, 2]] = 0.7;
                    d[[ny - 2, nx / 2 + i]] = -0.4;
                    d
                })
                .collect();
            let mut scratch = RefreshScratch::default();
            for delta in [&dense, &sparse, &dense] {
                let fast = spectra.residuals(&start, delta, &mut scratch);
                // A second call with the same scratch gives the same bits.
                assert_eq!(fast, spectra.residuals(&start, delta, &mut scratch));
                let slow = direct(&psfs, &start, delta);
                for (f, s) in fast.iter().zip(&slow) {
                    let scale = s.iter().fold(1.0f64, |m, v| m.max(v.abs()));
                    for (a, b) in f.iter().zip(s.iter()) {
                        // FFT round-off is of order log(P) · ε · Σ|terms|; 1e-12 of the largest
                        // value is generous at these sizes (common practice, no published
                        // bound).
                        assert!(
                            (a - b).abs() < 1e-12 * scale,
                            "{a} vs {b} ({ny}x{nx}, psf {ky}x{kx})"
                        );
                    }
                }
            }
        }
    }
}
