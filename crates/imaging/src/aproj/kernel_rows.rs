//! The innermost loops of [`crate::KernelAProjection`]: one footprint row of complex kernel
//! values against the grid lines it meets, for one or two correlations at once (the two hands
//! of a sample share the grid line, so it is loaded and stored once), and the interpolation
//! of kernel rows from the single-precision tables.
//!
//! One call takes a kernel row to *every* line it updates or reads (one per w plane and
//! image), so the per-call set-up (lane constants, bounds, dispatch) is paid once per row and
//! not once per line (on the w-stacked benchmark this cut the gridding time by a quarter).
//!
//! Each loop has a scalar path and an AVX2 + FMA path picked at run time ([`RowSimd::detect`]).
//! 512-bit versions were measured and gave nothing: with one w plane the loops wait on the
//! kernel tables, with several on the grid lines, not on arithmetic. The vector forms keep the
//! complex numbers interleaved (re, im) and write a complex product d += k · v as two real fused multiply-adds over f64 lanes,
//! d += k ⊙ A + swap(k) ⊙ B, with swap(k) = (k_im, k_re), A = (v_re, −v_re, …) and
//! B = (v_im, v_im, …) for d += conj(k) · v — no shuffles of the grid. Dot products keep lane
//! sums ([`LaneSums`]) across the rows of a footprint and reduce them once.
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

    /// Every implementation this CPU supports (for tests that compare them).
    #[cfg(test)]
    fn supported() -> Vec<Self> {
        let mut all = vec![Self::Scalar];
        #[cfg(target_arch = "x86_64")]
        {
            if std::arch::is_x86_feature_detected!("avx2")
                && std::arch::is_x86_feature_detected!("fma")
            {
                all.push(Self::Avx2Fma);
            }
        }
        all
    }
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

/// The common length n of one or two kernel rows (one per hand); panics otherwise.
#[inline]
fn row_length(krows: &[&[Complex64]]) -> usize {
    let n = krows.first().map_or(0, |k| k.len());
    assert!(
        (1..=2).contains(&krows.len()) && krows.iter().all(|k| k.len() == n),
        "one or two kernel rows of equal length"
    );
    n
}

/// One grid line that a kernel row is spread into: the buffer it lives in, and the sample's
/// value per hand for that line (plane weight and image factor applied; the second unused
/// with one correlation).
#[derive(Clone, Copy, Debug)]
pub(crate) struct LineTarget {
    pub grid: usize,
    pub vals: [Complex64; 2],
}

/// Gridding of one kernel row into several lines: for every target t and i < n,
/// `grids[t.grid][at + i] += Σ_h conj(krows[h][i]) · t.vals[h]`, over the one or two hands
/// of `krows` (each of length n).
#[inline]
pub(crate) fn spread_row(
    simd: RowSimd,
    grids: &mut [&mut [Complex64]],
    at: usize,
    krows: &[&[Complex64]],
    targets: &[LineTarget],
) {
    let n = row_length(krows);
    // Every line is checked once here, so that the vector loops may write n values from `at`.
    for t in targets {
        assert!(at + n <= grids[t.grid].len(), "line {} too short", t.grid);
    }
    match simd {
        #[cfg(target_arch = "x86_64")]
        // SAFETY: Avx2Fma is only constructed after detecting AVX2 and FMA; lengths checked
        // above.
        RowSimd::Avx2Fma => unsafe { avx::spread(grids, at, krows, targets) },
        _ => {
            for t in targets {
                let line = &mut grids[t.grid][at..at + n];
                for (krow, v) in krows.iter().zip(t.vals) {
                    for (d, k) in line.iter_mut().zip(krow.iter()) {
                        *d += k.conj() * v;
                    }
                }
            }
        }
    }
}

/// Running sums of Σ g · k for one line and the one or two hands, kept as lane sums so that
/// the vector loops reduce them once per footprint instead of once per row: per hand,
/// P = Σ g ⊙ k and Q = Σ g ⊙ swap(k) over interleaved (re, im) lanes, so that
/// Σ g · k = (Σ P_even − Σ P_odd) + i Σ Q. Start from `LaneSums::default()` (zero).
#[derive(Clone, Copy, Debug, Default)]
pub(crate) struct LaneSums {
    p: [[f64; 4]; 2],
    q: [[f64; 4]; 2],
}

impl LaneSums {
    /// Σ g · k of hand `h`.
    pub(crate) fn value(&self, h: usize) -> Complex64 {
        let (p, q) = (&self.p[h], &self.q[h]);
        let re = (p[0] - p[1]) + (p[2] - p[3]);
        Complex64::new(re, q.iter().sum())
    }
}

/// Degridding of one kernel row against several lines: for every target line `g = lines[j]`,
/// `sums[j]` (per hand h) += Σ_{i<n} grids[g][at + i] · krows[h][i].
#[inline]
pub(crate) fn dot_row(
    simd: RowSimd,
    grids: &[&[Complex64]],
    at: usize,
    krows: &[&[Complex64]],
    lines: &[usize],
    sums: &mut [LaneSums],
) {
    let n = row_length(krows);
    assert!(sums.len() >= lines.len(), "one running sum per line");
    for &g in lines {
        assert!(at + n <= grids[g].len(), "line {g} too short");
    }
    match simd {
        #[cfg(target_arch = "x86_64")]
        // SAFETY: Avx2Fma is only constructed after detecting AVX2 and FMA; lengths checked
        // above.
        RowSimd::Avx2Fma => unsafe { avx::dot(grids, at, krows, lines, sums) },
        _ => {
            for (&g, s) in lines.iter().zip(sums.iter_mut()) {
                let line = &grids[g][at..at + n];
                for (h, krow) in krows.iter().enumerate() {
                    for (x, k) in line.iter().zip(krow.iter()) {
                        s.p[h][0] += x.re * k.re;
                        s.p[h][1] += x.im * k.im;
                        s.q[h][0] += x.re * k.im;
                        s.q[h][1] += x.im * k.re;
                    }
                }
            }
        }
    }
}

#[cfg(target_arch = "x86_64")]
mod avx {
    use super::{LaneSums, LineTarget};
    use num_complex::{Complex32, Complex64};
    use std::arch::x86_64::*;

    /// Two single-precision complex numbers at `p` as four f64 lanes.
    #[inline(always)]
    unsafe fn load2(p: *const f32) -> __m256d {
        _mm256_cvtps_pd(_mm_loadu_ps(p))
    }

    #[inline(always)]
    unsafe fn swap(x: __m256d) -> __m256d {
        _mm256_permute_pd(x, 0b0101)
    }

    /// Lane constants (A, B) of d += conj(k) · v: A = (v_re, −v_re, …), B = (v_im, v_im, …).
    #[inline(always)]
    unsafe fn lanes(v: Complex64) -> (__m256d, __m256d) {
        (_mm256_setr_pd(v.re, -v.re, v.re, -v.re), _mm256_set1_pd(v.im))
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

    /// See [`super::spread_row`]. Safety: AVX2 and FMA present; every kernel row has n values
    /// and every target line n from `at` (checked by the caller).
    #[target_feature(enable = "avx2,fma")]
    pub(super) unsafe fn spread(
        grids: &mut [&mut [Complex64]],
        at: usize,
        krows: &[&[Complex64]],
        targets: &[LineTarget],
    ) {
        let n = krows[0].len();
        let two = krows.len() == 2;
        let p0 = krows[0].as_ptr() as *const f64;
        let p1 = krows[krows.len() - 1].as_ptr() as *const f64;
        for t in targets {
            let pd = grids[t.grid].as_mut_ptr().add(at) as *mut f64;
            let (a0, b0) = lanes(t.vals[0]);
            let (a1, b1) = lanes(t.vals[1]);
            let mut e = 0;
            while e + 4 <= 2 * n {
                let x0 = _mm256_loadu_pd(p0.add(e));
                let mut d = _mm256_loadu_pd(pd.add(e));
                d = _mm256_fmadd_pd(x0, a0, d);
                d = _mm256_fmadd_pd(swap(x0), b0, d);
                if two {
                    let x1 = _mm256_loadu_pd(p1.add(e));
                    d = _mm256_fmadd_pd(x1, a1, d);
                    d = _mm256_fmadd_pd(swap(x1), b1, d);
                }
                _mm256_storeu_pd(pd.add(e), d);
                e += 4;
            }
            if e < 2 * n {
                let lo = |v: __m256d| _mm256_castpd256_pd128(v);
                let x0 = _mm_loadu_pd(p0.add(e));
                let mut d = _mm_loadu_pd(pd.add(e));
                d = _mm_fmadd_pd(x0, lo(a0), d);
                d = _mm_fmadd_pd(_mm_permute_pd(x0, 0b01), lo(b0), d);
                if two {
                    let x1 = _mm_loadu_pd(p1.add(e));
                    d = _mm_fmadd_pd(x1, lo(a1), d);
                    d = _mm_fmadd_pd(_mm_permute_pd(x1, 0b01), lo(b1), d);
                }
                _mm_storeu_pd(pd.add(e), d);
            }
        }
    }

    /// See [`super::dot_row`]. Safety: as [`spread`].
    #[target_feature(enable = "avx2,fma")]
    pub(super) unsafe fn dot(
        grids: &[&[Complex64]],
        at: usize,
        krows: &[&[Complex64]],
        lines: &[usize],
        sums: &mut [LaneSums],
    ) {
        let n = krows[0].len();
        let two = krows.len() == 2;
        let p0 = krows[0].as_ptr() as *const f64;
        let p1 = krows[krows.len() - 1].as_ptr() as *const f64;
        for (&g, s) in lines.iter().zip(sums.iter_mut()) {
            let pg = grids[g].as_ptr().add(at) as *const f64;
            let mut a = _mm256_loadu_pd(s.p[0].as_ptr());
            let mut b = _mm256_loadu_pd(s.q[0].as_ptr());
            let mut c = _mm256_loadu_pd(s.p[1].as_ptr());
            let mut d = _mm256_loadu_pd(s.q[1].as_ptr());
            let mut e = 0;
            while e + 4 <= 2 * n {
                let gv = _mm256_loadu_pd(pg.add(e));
                let x0 = _mm256_loadu_pd(p0.add(e));
                a = _mm256_fmadd_pd(gv, x0, a);
                b = _mm256_fmadd_pd(gv, swap(x0), b);
                if two {
                    let x1 = _mm256_loadu_pd(p1.add(e));
                    c = _mm256_fmadd_pd(gv, x1, c);
                    d = _mm256_fmadd_pd(gv, swap(x1), d);
                }
                e += 4;
            }
            if e < 2 * n {
                // The odd last cell in the low two lanes (the high two add zero).
                let gv = _mm256_castpd128_pd256(_mm_loadu_pd(pg.add(e)));
                let gv = _mm256_insertf128_pd(gv, _mm_setzero_pd(), 1);
                let x0 = _mm256_insertf128_pd(
                    _mm256_castpd128_pd256(_mm_loadu_pd(p0.add(e))),
                    _mm_setzero_pd(),
                    1,
                );
                a = _mm256_fmadd_pd(gv, x0, a);
                b = _mm256_fmadd_pd(gv, swap(x0), b);
                if two {
                    let x1 = _mm256_insertf128_pd(
                        _mm256_castpd128_pd256(_mm_loadu_pd(p1.add(e))),
                        _mm_setzero_pd(),
                        1,
                    );
                    c = _mm256_fmadd_pd(gv, x1, c);
                    d = _mm256_fmadd_pd(gv, swap(x1), d);
                }
            }
            _mm256_storeu_pd(s.p[0].as_mut_ptr(), a);
            _mm256_storeu_pd(s.q[0].as_mut_ptr(), b);
            _mm256_storeu_pd(s.p[1].as_mut_ptr(), c);
            _mm256_storeu_pd(s.q[1].as_mut_ptr(), d);
        }
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
        // Every implementation this CPU has is checked; lengths 1..=19 cover the 2-wide body
        // and the odd tail, several registers per row, two lines per
        // call at different offsets, and sums carried over from an earlier row. Spreading
        // adds at most five terms per value, so 1e-14 is rounding (FMA changes the last bit);
        // the dot products use the textbook rounding bound below.
        for simd in RowSimd::supported() {
            for n in 1..=19 {
                let (k0, k1) = (values(n, 0.1), values(n, 0.7));
                // Two grids of 2n + 3 values; the row goes to offset `at` of each.
                let at = 3;
                let grid_a = values(2 * n + 3, 1.9);
                let grid_b = values(2 * n + 3, 2.3);
                let v = [Complex64::new(0.3, -1.2), Complex64::new(-0.8, 0.4)];
                let w = [Complex64::new(-0.5, 0.25), Complex64::new(1.1, 0.6)];
                for h in 1..=2 {
                    let krows: Vec<&[Complex64]> = [&k0[..], &k1[..]][..h].to_vec();
                    let (mut ga, mut gb) = (grid_a.clone(), grid_b.clone());
                    let targets = [
                        LineTarget { grid: 1, vals: v },
                        LineTarget { grid: 0, vals: w },
                        LineTarget { grid: 1, vals: w },
                    ];
                    spread_row(simd, &mut [&mut ga[..], &mut gb[..]], at, &krows, &targets);
                    for i in 0..2 * n + 3 {
                        let (mut want_a, mut want_b) = (grid_a[i], grid_b[i]);
                        if (at..at + n).contains(&i) {
                            for (hh, kr) in krows.iter().enumerate() {
                                let k = kr[i - at].conj();
                                want_a += k * w[hh];
                                want_b += k * v[hh] + k * w[hh];
                            }
                        }
                        assert!((ga[i] - want_a).norm() < 1e-14, "{simd:?} n={n} h={h} a");
                        assert!((gb[i] - want_b).norm() < 1e-14, "{simd:?} n={n} h={h} b");
                    }
                    // Two rows into the same sums (offsets at and at + 1), lines (1, 0).
                    let grids = [&grid_a[..], &grid_b[..]];
                    let mut sums = [LaneSums::default(); 2];
                    dot_row(simd, &grids, at, &krows, &[1, 0], &mut sums);
                    dot_row(simd, &grids, at + 1, &krows, &[1, 0], &mut sums);
                    for (line, s) in [(&grid_b, &sums[0]), (&grid_a, &sums[1])] {
                        for (hh, kr) in krows.iter().enumerate() {
                            let want: Complex64 = (0..n)
                                .map(|i| line[at + i] * kr[i] + line[at + 1 + i] * kr[i])
                                .sum();
                            // Rounding bound of a dot product of m real terms, m u Σ|x||y|
                            // (Higham, Accuracy and Stability of Numerical Algorithms, 2nd
                            // ed., §3.1), with m = 4 · 2n real products per complex sum.
                            let scale: f64 = (0..n)
                                .map(|i| {
                                    (line[at + i].norm() + line[at + 1 + i].norm()) * kr[i].norm()
                                })
                                .sum();
                            let bound = 8.0 * n as f64 * f64::EPSILON * 2.0 * scale;
                            let err = (s.value(hh) - want).norm();
                            assert!(err < bound, "{simd:?} n={n} h={h}: {err:e} ≥ {bound:e}");
                        }
                    }
                }
                let mut out = vec![Complex64::new(0.0, 0.0); n];
                let wts = [0.1, 0.2, 0.3, 0.4];
                let narrow = |v: &[Complex64]| -> Vec<Complex32> {
                    v.iter().map(|c| Complex32::new(c.re as f32, c.im as f32)).collect()
                };
                let (a, b, c) = (narrow(&k0), narrow(&k1), narrow(&grid_a[..n]));
                bilinear_row(simd, &mut out, [&a, &b, &c, &a], wts);
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
