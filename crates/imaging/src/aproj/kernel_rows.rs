//! The innermost loops of [`crate::KernelAProjection`]: one footprint row of complex kernel
//! values against one contiguous row of the padded grid, for one or two correlations at once
//! (the two hands of a sample share the grid row, so it is loaded and stored once).
//!
//! Each loop has a scalar path and an AVX2 + FMA path picked at run time ([`RowSimd::detect`]).
//! The vector form keeps the complex numbers interleaved (re, im) and writes a complex product
//! d += k · v as two real fused multiply-adds over f64 lanes, d += k ⊙ A + swap(k) ⊙ B, with
//! swap(k) = (k_im, k_re) and the constant lane pairs A, B below — no shuffles of the grid.
use num_complex::{Complex32, Complex64};

/// Which implementation of the row loops to run.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum RowSimd {
    /// Plain Rust on `Complex64`.
    Scalar,
    /// 256-bit AVX2 with FMA (x86-64 only, checked at run time).
    Avx2Fma,
}

impl RowSimd {
    /// The fastest implementation this CPU supports.
    pub(crate) fn detect() -> Self {
        #[cfg(target_arch = "x86_64")]
        {
            if std::arch::is_x86_feature_detected!("avx2")
                && std::arch::is_x86_feature_detected!("fma")
            {
                return Self::Avx2Fma;
            }
        }
        Self::Scalar
    }
}

/// Lane constants (A, B) of d += conj(k) · v (gridding): re = k_re v_re + k_im v_im,
/// im = k_im (−v_re) + k_re v_im.
#[inline]
fn conj_lanes(v: Complex64) -> ([f64; 2], [f64; 2]) {
    ([v.re, -v.re], [v.im, v.im])
}

#[inline]
fn wide(c: Complex32) -> Complex64 {
    Complex64::new(c.re as f64, c.im as f64)
}

/// `out = w0 a + w1 b + w2 c + w3 d` (bilinear interpolation of four single-precision kernel
/// rows, in double precision).
#[inline]
pub(crate) fn bilinear_row(
    simd: RowSimd,
    out: &mut [Complex64],
    rows: [&[Complex32]; 4],
    w: [f64; 4],
) {
    let n = out.len();
    let [a, b, c, d] = rows;
    let (a, b, c, d) = (&a[..n], &b[..n], &c[..n], &d[..n]);
    match simd {
        #[cfg(target_arch = "x86_64")]
        // SAFETY: Avx2Fma is only ever constructed after detecting AVX2 and FMA; all slices
        // have length n (checked by the slicing above).
        RowSimd::Avx2Fma => unsafe { avx::bilinear(out, a, b, c, d, w) },
        _ => {
            for i in 0..n {
                out[i] =
                    wide(a[i]) * w[0] + wide(b[i]) * w[1] + wide(c[i]) * w[2] + wide(d[i]) * w[3];
            }
        }
    }
}

/// `out = a` in double precision (nearest-point lookup).
#[inline]
pub(crate) fn widen_row(out: &mut [Complex64], a: &[Complex32]) {
    for (o, &x) in out.iter_mut().zip(a) {
        *o = wide(x);
    }
}

/// `dst[i] += Σ_h conj(krows[h][i]) · vals[h]` for one or two correlations (gridding).
#[inline]
pub(crate) fn accumulate_conj(
    simd: RowSimd,
    dst: &mut [Complex64],
    krows: &[&[Complex64]],
    vals: &[Complex64],
) {
    let n = dst.len();
    match (simd, krows.len()) {
        #[cfg(target_arch = "x86_64")]
        // SAFETY: as in `bilinear_row`; every kernel row is sliced to n.
        (RowSimd::Avx2Fma, 1) => unsafe {
            let (a, b) = conj_lanes(vals[0]);
            avx::accumulate1(dst, &krows[0][..n], a, b)
        },
        #[cfg(target_arch = "x86_64")]
        // SAFETY: as above.
        (RowSimd::Avx2Fma, 2) => unsafe {
            let ((a0, b0), (a1, b1)) = (conj_lanes(vals[0]), conj_lanes(vals[1]));
            avx::accumulate2(dst, &krows[0][..n], a0, b0, &krows[1][..n], a1, b1)
        },
        _ => {
            for (krow, &v) in krows.iter().zip(vals) {
                for (d, k) in dst.iter_mut().zip(&krow[..n]) {
                    *d += k.conj() * v;
                }
            }
        }
    }
}

/// `out[h] = Σ_i grid[i] · krows[h][i]` for one or two correlations (degridding).
#[inline]
pub(crate) fn dot_rows(
    simd: RowSimd,
    grid: &[Complex64],
    krows: &[&[Complex64]],
    out: &mut [Complex64],
) {
    let n = grid.len();
    match (simd, krows.len()) {
        #[cfg(target_arch = "x86_64")]
        // SAFETY: as in `bilinear_row`.
        (RowSimd::Avx2Fma, 1) => unsafe { out[0] += avx::dot1(grid, &krows[0][..n]) },
        #[cfg(target_arch = "x86_64")]
        // SAFETY: as above.
        (RowSimd::Avx2Fma, 2) => unsafe {
            let (x, y) = avx::dot2(grid, &krows[0][..n], &krows[1][..n]);
            out[0] += x;
            out[1] += y;
        },
        _ => {
            for (o, krow) in out.iter_mut().zip(krows) {
                *o += grid.iter().zip(&krow[..n]).map(|(g, k)| g * k).sum::<Complex64>();
            }
        }
    }
}

#[cfg(target_arch = "x86_64")]
mod avx {
    use num_complex::{Complex32, Complex64};
    use std::arch::x86_64::*;

    #[inline(always)]
    unsafe fn pair(a: [f64; 2]) -> __m256d {
        _mm256_setr_pd(a[0], a[1], a[0], a[1])
    }

    /// Two single-precision complex numbers at `p` as four f64 lanes.
    #[inline(always)]
    unsafe fn load2(p: *const f32) -> __m256d {
        _mm256_cvtps_pd(_mm_loadu_ps(p))
    }

    /// See [`super::bilinear_row`]. Safety: AVX2 and FMA present; equal lengths.
    #[target_feature(enable = "avx2,fma")]
    pub(super) unsafe fn bilinear(
        out: &mut [Complex64],
        a: &[Complex32],
        b: &[Complex32],
        c: &[Complex32],
        d: &[Complex32],
        w: [f64; 4],
    ) {
        let n = out.len();
        let (po, pa, pb, pc, pd) = (
            out.as_mut_ptr() as *mut f64,
            a.as_ptr() as *const f32,
            b.as_ptr() as *const f32,
            c.as_ptr() as *const f32,
            d.as_ptr() as *const f32,
        );
        let (w0, w1, w2, w3) = (
            _mm256_set1_pd(w[0]),
            _mm256_set1_pd(w[1]),
            _mm256_set1_pd(w[2]),
            _mm256_set1_pd(w[3]),
        );
        let mut e = 0;
        while e + 4 <= 2 * n {
            let mut s = _mm256_mul_pd(load2(pa.add(e)), w0);
            s = _mm256_fmadd_pd(load2(pb.add(e)), w1, s);
            s = _mm256_fmadd_pd(load2(pc.add(e)), w2, s);
            s = _mm256_fmadd_pd(load2(pd.add(e)), w3, s);
            _mm256_storeu_pd(po.add(e), s);
            e += 4;
        }
        if e < 2 * n {
            let i = e / 2;
            out[i] = super::wide(a[i]) * w[0]
                + super::wide(b[i]) * w[1]
                + super::wide(c[i]) * w[2]
                + super::wide(d[i]) * w[3];
        }
    }

    /// d += k ⊙ A + swap(k) ⊙ B over one row. Safety: AVX2 and FMA present; k.len() ≥ d.len().
    #[target_feature(enable = "avx2,fma")]
    pub(super) unsafe fn accumulate1(
        dst: &mut [Complex64],
        k: &[Complex64],
        a: [f64; 2],
        b: [f64; 2],
    ) {
        let n = dst.len();
        let (pd, pk) = (dst.as_mut_ptr() as *mut f64, k.as_ptr() as *const f64);
        let (va, vb) = (pair(a), pair(b));
        let mut e = 0;
        while e + 4 <= 2 * n {
            let kv = _mm256_loadu_pd(pk.add(e));
            let mut d = _mm256_loadu_pd(pd.add(e));
            d = _mm256_fmadd_pd(kv, va, d);
            d = _mm256_fmadd_pd(_mm256_permute_pd(kv, 0b0101), vb, d);
            _mm256_storeu_pd(pd.add(e), d);
            e += 4;
        }
        if e < 2 * n {
            let kv = _mm_loadu_pd(pk.add(e));
            let mut d = _mm_loadu_pd(pd.add(e));
            d = _mm_fmadd_pd(kv, _mm_setr_pd(a[0], a[1]), d);
            d = _mm_fmadd_pd(_mm_permute_pd(kv, 0b01), _mm_setr_pd(b[0], b[1]), d);
            _mm_storeu_pd(pd.add(e), d);
        }
    }

    /// Two correlations sharing the grid row. Safety: as [`accumulate1`].
    #[allow(clippy::too_many_arguments)]
    #[target_feature(enable = "avx2,fma")]
    pub(super) unsafe fn accumulate2(
        dst: &mut [Complex64],
        k0: &[Complex64],
        a0: [f64; 2],
        b0: [f64; 2],
        k1: &[Complex64],
        a1: [f64; 2],
        b1: [f64; 2],
    ) {
        let n = dst.len();
        let pd = dst.as_mut_ptr() as *mut f64;
        let (p0, p1) = (k0.as_ptr() as *const f64, k1.as_ptr() as *const f64);
        let (va0, vb0, va1, vb1) = (pair(a0), pair(b0), pair(a1), pair(b1));
        let mut e = 0;
        while e + 4 <= 2 * n {
            let (x0, x1) = (_mm256_loadu_pd(p0.add(e)), _mm256_loadu_pd(p1.add(e)));
            let mut d = _mm256_loadu_pd(pd.add(e));
            d = _mm256_fmadd_pd(x0, va0, d);
            d = _mm256_fmadd_pd(_mm256_permute_pd(x0, 0b0101), vb0, d);
            d = _mm256_fmadd_pd(x1, va1, d);
            d = _mm256_fmadd_pd(_mm256_permute_pd(x1, 0b0101), vb1, d);
            _mm256_storeu_pd(pd.add(e), d);
            e += 4;
        }
        if e < 2 * n {
            let i = e / 2;
            accumulate1(&mut dst[i..], &k0[i..], a0, b0);
            accumulate1(&mut dst[i..], &k1[i..], a1, b1);
        }
    }

    /// Horizontal (re, im) of the lane sums P = Σ g ⊙ k, Q = Σ g ⊙ swap(k):
    /// re = P0 − P1 (+ P2 − P3), im = Q0 + Q1 (+ Q2 + Q3).
    #[inline(always)]
    unsafe fn finish(p: __m256d, q: __m256d) -> Complex64 {
        let mut pa = [0.0; 4];
        let mut qa = [0.0; 4];
        _mm256_storeu_pd(pa.as_mut_ptr(), p);
        _mm256_storeu_pd(qa.as_mut_ptr(), q);
        Complex64::new((pa[0] - pa[1]) + (pa[2] - pa[3]), (qa[0] + qa[1]) + (qa[2] + qa[3]))
    }

    /// Σ g · k. Safety: AVX2 and FMA present; k.len() ≥ g.len().
    #[target_feature(enable = "avx2,fma")]
    pub(super) unsafe fn dot1(g: &[Complex64], k: &[Complex64]) -> Complex64 {
        let n = g.len();
        let (pg, pk) = (g.as_ptr() as *const f64, k.as_ptr() as *const f64);
        let (mut p, mut q) = (_mm256_setzero_pd(), _mm256_setzero_pd());
        let mut e = 0;
        while e + 4 <= 2 * n {
            let gv = _mm256_loadu_pd(pg.add(e));
            let kv = _mm256_loadu_pd(pk.add(e));
            p = _mm256_fmadd_pd(gv, kv, p);
            q = _mm256_fmadd_pd(gv, _mm256_permute_pd(kv, 0b0101), q);
            e += 4;
        }
        let mut s = finish(p, q);
        if e < 2 * n {
            s += g[e / 2] * k[e / 2];
        }
        s
    }

    /// (Σ g · k0, Σ g · k1). Safety: as [`dot1`].
    #[target_feature(enable = "avx2,fma")]
    pub(super) unsafe fn dot2(
        g: &[Complex64],
        k0: &[Complex64],
        k1: &[Complex64],
    ) -> (Complex64, Complex64) {
        let n = g.len();
        let pg = g.as_ptr() as *const f64;
        let (p0, p1) = (k0.as_ptr() as *const f64, k1.as_ptr() as *const f64);
        let (mut a, mut b) = (_mm256_setzero_pd(), _mm256_setzero_pd());
        let (mut c, mut d) = (_mm256_setzero_pd(), _mm256_setzero_pd());
        let mut e = 0;
        while e + 4 <= 2 * n {
            let gv = _mm256_loadu_pd(pg.add(e));
            let (x0, x1) = (_mm256_loadu_pd(p0.add(e)), _mm256_loadu_pd(p1.add(e)));
            a = _mm256_fmadd_pd(gv, x0, a);
            b = _mm256_fmadd_pd(gv, _mm256_permute_pd(x0, 0b0101), b);
            c = _mm256_fmadd_pd(gv, x1, c);
            d = _mm256_fmadd_pd(gv, _mm256_permute_pd(x1, 0b0101), d);
            e += 4;
        }
        let (mut s0, mut s1) = (finish(a, b), finish(c, d));
        if e < 2 * n {
            let i = e / 2;
            s0 += g[i] * k0[i];
            s1 += g[i] * k1[i];
        }
        (s0, s1)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn values(n: usize, seed: f64) -> Vec<Complex64> {
        (0..n)
            .map(|i| {
                Complex64::new((seed + 0.37 * i as f64).sin(), (seed * 1.3 + 0.11 * i as f64).cos())
            })
            .collect()
    }

    #[test]
    fn vector_paths_match_the_complex_arithmetic() {
        // Reference: the textbook complex product and sum on Complex64, element by element.
        // Lengths 1..=9 cover the 2-wide body and the odd tail; 1e-14 is rounding (FMA
        // changes the last bit of products of O(1) numbers summed over ≤ 9 terms).
        for simd in [RowSimd::Scalar, RowSimd::detect()] {
            for n in 1..=9 {
                let (k0, k1, g) = (values(n, 0.1), values(n, 0.7), values(n, 1.9));
                let v = [Complex64::new(0.3, -1.2), Complex64::new(-0.8, 0.4)];
                for h in 1..=2 {
                    let krows: Vec<&[Complex64]> = [&k0[..], &k1[..]][..h].to_vec();
                    let mut d = g.clone();
                    accumulate_conj(simd, &mut d, &krows, &v[..h]);
                    let mut out = [Complex64::new(0.0, 0.0); 2];
                    dot_rows(simd, &g, &krows, &mut out);
                    for i in 0..n {
                        let mut want = g[i];
                        for (kr, vv) in krows.iter().zip(&v) {
                            want += kr[i].conj() * vv;
                        }
                        assert!((d[i] - want).norm() < 1e-14, "{simd:?} n={n} h={h}");
                    }
                    for (o, kr) in out.iter().zip(&krows).take(h) {
                        let want: Complex64 = g.iter().zip(kr.iter()).map(|(a, b)| a * b).sum();
                        assert!((o - want).norm() < 1e-14, "{simd:?} n={n} h={h}");
                    }
                }
                let mut out = vec![Complex64::new(0.0, 0.0); n];
                let w = [0.1, 0.2, 0.3, 0.4];
                let narrow = |v: &[Complex64]| -> Vec<Complex32> {
                    v.iter().map(|c| Complex32::new(c.re as f32, c.im as f32)).collect()
                };
                let (a, b, c) = (narrow(&k0), narrow(&k1), narrow(&g));
                bilinear_row(simd, &mut out, [&a, &b, &c, &a], w);
                for i in 0..n {
                    let want =
                        wide(a[i]) * 0.1 + wide(b[i]) * 0.2 + wide(c[i]) * 0.3 + wide(a[i]) * 0.4;
                    assert!((out[i] - want).norm() < 1e-15);
                }
                widen_row(&mut out, &b);
                assert!(out.iter().zip(&b).all(|(o, x)| *o == wide(*x)));
            }
        }
    }
}
