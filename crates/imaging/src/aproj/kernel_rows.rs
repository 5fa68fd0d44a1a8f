//! The innermost loops of [`crate::KernelAProjection`]: one footprint row of complex kernel
//! values against the grid lines it meets, for one or two correlations at once (the two hands
//! of a sample share the grid line, so it is loaded and stored once), and the interpolation
//! of kernel rows from the single-precision tables.
//!
//! One call takes a kernel row to *every* line it updates or reads (one per w plane and
//! image), so the per-call set-up (lane constants, bounds, dispatch) is paid once per row and
//! not once per line (on the w-stacked benchmark this cut the gridding time by a quarter).
//!
//! The lines are taken in groups that share each kernel vector: it (and its swap, below) is
//! loaded once per group instead of once per line. Groups are two lines with AVX2 (16 vector
//! registers: the group's lane constants and the kernel vectors fill them) and four with
//! AVX-512VL (the same 256-bit instructions, 32 registers). On the w-stacked benchmark (8 planes
//! × 2 images = 16 lines per row) this took gridding from 134.7 to 104 ms and degridding from
//! 143.6 to 96 ms on two threads. Timed alone on 16 lines held in the first-level cache (a
//! scratch loop, not kept), the spreading row loop reached about 47 GFLOP/s per core in groups of
//! four and 34 one line at a time: 39 and 28 % of the 119 GFLOP/s that the `fma_peak` benchmark
//! measures on one core. 512-bit vectors (masked tails) gave nothing over the grouped 256-bit
//! loops.
//!
//! Each loop has a scalar path and vector paths picked at run time ([`RowSimd::detect`]). The
//! vector forms keep the complex numbers interleaved (re, im) and write a complex product
//! d += k · v as two real fused multiply-adds over f64 lanes, d += k ⊙ A + swap(k) ⊙ B, with
//! swap(k) = (k_im, k_re), A = (v_re, −v_re, …) and B = (v_im, v_im, …) for d += conj(k) · v —
//! no shuffles of the grid. Dot products keep lane sums ([`LaneSums`]) across the rows of a
//! footprint and reduce them once.
use num_complex::{Complex32, Complex64};

/// Which implementation of the row loops to run.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum RowSimd {
    /// Plain Rust on `Complex64`.
    Scalar,
    /// 256-bit AVX2 with FMA (x86-64 only, checked at run time): two lines per kernel load.
    Avx2Fma,
    /// The same 256-bit loops with AVX-512VL's 32 vector registers: four lines per kernel load.
    Avx512Vl,
}

#[cfg(target_arch = "x86_64")]
fn has_avx2_fma() -> bool {
    std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
}

#[cfg(target_arch = "x86_64")]
fn has_avx512vl() -> bool {
    has_avx2_fma()
        && std::arch::is_x86_feature_detected!("avx512f")
        && std::arch::is_x86_feature_detected!("avx512vl")
}

impl RowSimd {
    /// The fastest implementation this CPU supports.
    pub(crate) fn detect() -> Self {
        #[cfg(target_arch = "x86_64")]
        {
            if has_avx512vl() {
                return Self::Avx512Vl;
            }
            if has_avx2_fma() {
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
            if has_avx2_fma() {
                all.push(Self::Avx2Fma);
            }
            if has_avx512vl() {
                all.push(Self::Avx512Vl);
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
        // SAFETY: both vector kinds are only ever constructed after detecting AVX2 and FMA;
        // all slices have length n (checked by the slicing above).
        RowSimd::Avx2Fma | RowSimd::Avx512Vl => unsafe { avx::bilinear(out, a, b, c, d, w) },
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
        // SAFETY: Avx2Fma is only constructed after detecting AVX2 and FMA, Avx512Vl after
        // detecting those and AVX-512F/VL; lengths checked above.
        RowSimd::Avx2Fma => unsafe { avx::spread(grids, at, krows, targets) },
        #[cfg(target_arch = "x86_64")]
        // SAFETY: as above.
        RowSimd::Avx512Vl => unsafe { avx::spread_wide(grids, at, krows, targets) },
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
        // SAFETY: Avx2Fma is only constructed after detecting AVX2 and FMA, Avx512Vl after
        // detecting those and AVX-512F/VL; lengths checked above.
        RowSimd::Avx2Fma => unsafe { avx::dot(grids, at, krows, lines, sums) },
        #[cfg(target_arch = "x86_64")]
        // SAFETY: as above.
        RowSimd::Avx512Vl => unsafe { avx::dot_wide(grids, at, krows, lines, sums) },
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
        spread_groups::<2>(grids, at, krows, targets)
    }

    /// [`spread`] in groups of four lines (AVX-512VL's 32 registers hold their lane
    /// constants). Safety: as [`spread`], and AVX-512F and AVX-512VL present.
    #[target_feature(enable = "avx2,fma,avx512f,avx512vl")]
    pub(super) unsafe fn spread_wide(
        grids: &mut [&mut [Complex64]],
        at: usize,
        krows: &[&[Complex64]],
        targets: &[LineTarget],
    ) {
        spread_groups::<4>(grids, at, krows, targets)
    }

    /// The kernel row(s) at `p0` (and `p1`, the second hand, when `two`) of n values.
    #[derive(Clone, Copy)]
    struct Row {
        p0: *const f64,
        p1: *const f64,
        n: usize,
        two: bool,
    }

    impl Row {
        fn of(krows: &[&[Complex64]]) -> Self {
            Row {
                p0: krows[0].as_ptr() as *const f64,
                p1: krows[krows.len() - 1].as_ptr() as *const f64,
                n: krows[0].len(),
                two: krows.len() == 2,
            }
        }
    }

    /// Targets in groups of G lines (then the rest one by one): each kernel vector (and its
    /// swap) is loaded once per group instead of once per line.
    #[inline(always)]
    unsafe fn spread_groups<const G: usize>(
        grids: &mut [&mut [Complex64]],
        at: usize,
        krows: &[&[Complex64]],
        targets: &[LineTarget],
    ) {
        let row = Row::of(krows);
        let groups = targets.chunks_exact(G);
        let rest = groups.remainder();
        for group in groups {
            spread_group::<G>(grids, at, row, group);
        }
        for t in rest {
            spread_group::<1>(grids, at, row, std::slice::from_ref(t));
        }
    }

    #[inline(always)]
    unsafe fn spread_group<const G: usize>(
        grids: &mut [&mut [Complex64]],
        at: usize,
        row: Row,
        group: &[LineTarget],
    ) {
        let Row { p0, p1, n, two } = row;
        let mut pd = [std::ptr::null_mut::<f64>(); G];
        let mut c = [[_mm256_setzero_pd(); 4]; G];
        for g in 0..G {
            pd[g] = grids[group[g].grid].as_mut_ptr().add(at) as *mut f64;
            let (a0, b0) = lanes(group[g].vals[0]);
            let (a1, b1) = lanes(group[g].vals[1]);
            c[g] = [a0, b0, a1, b1];
        }
        let mut e = 0;
        while e + 4 <= 2 * n {
            let x0 = _mm256_loadu_pd(p0.add(e));
            let s0 = swap(x0);
            let x1 = _mm256_loadu_pd(p1.add(e));
            let s1 = swap(x1);
            for g in 0..G {
                let mut d = _mm256_loadu_pd(pd[g].add(e));
                d = _mm256_fmadd_pd(x0, c[g][0], d);
                d = _mm256_fmadd_pd(s0, c[g][1], d);
                if two {
                    d = _mm256_fmadd_pd(x1, c[g][2], d);
                    d = _mm256_fmadd_pd(s1, c[g][3], d);
                }
                _mm256_storeu_pd(pd[g].add(e), d);
            }
            e += 4;
        }
        if e < 2 * n {
            let lo = |v: __m256d| _mm256_castpd256_pd128(v);
            let x0 = _mm_loadu_pd(p0.add(e));
            let s0 = _mm_permute_pd(x0, 0b01);
            let x1 = _mm_loadu_pd(p1.add(e));
            let s1 = _mm_permute_pd(x1, 0b01);
            for g in 0..G {
                let mut d = _mm_loadu_pd(pd[g].add(e));
                d = _mm_fmadd_pd(x0, lo(c[g][0]), d);
                d = _mm_fmadd_pd(s0, lo(c[g][1]), d);
                if two {
                    d = _mm_fmadd_pd(x1, lo(c[g][2]), d);
                    d = _mm_fmadd_pd(s1, lo(c[g][3]), d);
                }
                _mm_storeu_pd(pd[g].add(e), d);
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
        dot_groups::<2>(grids, at, krows, lines, sums)
    }

    /// [`dot`] in groups of four lines (their 16 running sums fit AVX-512VL's 32 registers).
    /// Safety: as [`spread_wide`].
    #[target_feature(enable = "avx2,fma,avx512f,avx512vl")]
    pub(super) unsafe fn dot_wide(
        grids: &[&[Complex64]],
        at: usize,
        krows: &[&[Complex64]],
        lines: &[usize],
        sums: &mut [LaneSums],
    ) {
        dot_groups::<4>(grids, at, krows, lines, sums)
    }

    /// Lines in groups of G (then the rest one by one), as [`spread_groups`].
    #[inline(always)]
    unsafe fn dot_groups<const G: usize>(
        grids: &[&[Complex64]],
        at: usize,
        krows: &[&[Complex64]],
        lines: &[usize],
        sums: &mut [LaneSums],
    ) {
        let row = Row::of(krows);
        let sums = &mut sums[..lines.len()];
        let groups = lines.chunks_exact(G).zip(sums.chunks_exact_mut(G));
        for (group, gs) in groups {
            dot_group::<G>(grids, at, row, group, gs);
        }
        let done = lines.len() / G * G;
        for (g, s) in lines[done..].iter().zip(&mut sums[done..]) {
            dot_group::<1>(grids, at, row, std::slice::from_ref(g), std::slice::from_mut(s));
        }
    }

    /// The odd last cell of a row at `p` in the low two lanes (the high two zero, so that they
    /// add nothing).
    #[inline(always)]
    unsafe fn load_last(p: *const f64) -> __m256d {
        _mm256_insertf128_pd(_mm256_castpd128_pd256(_mm_loadu_pd(p)), _mm_setzero_pd(), 1)
    }

    /// One vector of every line of a group against the kernel vectors x0 and x1 (hand 1 only
    /// when `two`).
    #[inline(always)]
    unsafe fn dot_step<const G: usize>(
        acc: &mut [[__m256d; 4]; G],
        x0: __m256d,
        x1: __m256d,
        gv: [__m256d; G],
        two: bool,
    ) {
        let (s0, s1) = (swap(x0), swap(x1));
        for (a, gv) in acc.iter_mut().zip(gv) {
            a[0] = _mm256_fmadd_pd(gv, x0, a[0]);
            a[1] = _mm256_fmadd_pd(gv, s0, a[1]);
            if two {
                a[2] = _mm256_fmadd_pd(gv, x1, a[2]);
                a[3] = _mm256_fmadd_pd(gv, s1, a[3]);
            }
        }
    }

    #[inline(always)]
    unsafe fn dot_group<const G: usize>(
        grids: &[&[Complex64]],
        at: usize,
        row: Row,
        group: &[usize],
        sums: &mut [LaneSums],
    ) {
        let Row { p0, p1, n, two } = row;
        let mut pg = [std::ptr::null::<f64>(); G];
        // Per line: P and Q of hand 0, then of hand 1.
        let mut acc = [[_mm256_setzero_pd(); 4]; G];
        for g in 0..G {
            pg[g] = grids[group[g]].as_ptr().add(at) as *const f64;
            let s = &sums[g];
            acc[g] = [
                _mm256_loadu_pd(s.p[0].as_ptr()),
                _mm256_loadu_pd(s.q[0].as_ptr()),
                _mm256_loadu_pd(s.p[1].as_ptr()),
                _mm256_loadu_pd(s.q[1].as_ptr()),
            ];
        }
        let mut e = 0;
        while e + 4 <= 2 * n {
            let (x0, x1) = (_mm256_loadu_pd(p0.add(e)), _mm256_loadu_pd(p1.add(e)));
            let mut gv = [_mm256_setzero_pd(); G];
            for g in 0..G {
                gv[g] = _mm256_loadu_pd(pg[g].add(e));
            }
            dot_step(&mut acc, x0, x1, gv, two);
            e += 4;
        }
        if e < 2 * n {
            let (x0, x1) = (load_last(p0.add(e)), load_last(p1.add(e)));
            let mut gv = [_mm256_setzero_pd(); G];
            for g in 0..G {
                gv[g] = load_last(pg[g].add(e));
            }
            dot_step(&mut acc, x0, x1, gv, two);
        }
        for (s, a) in sums.iter_mut().zip(&acc) {
            _mm256_storeu_pd(s.p[0].as_mut_ptr(), a[0]);
            _mm256_storeu_pd(s.q[0].as_mut_ptr(), a[1]);
            _mm256_storeu_pd(s.p[1].as_mut_ptr(), a[2]);
            _mm256_storeu_pd(s.q[1].as_mut_ptr(), a[3]);
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
        // and the odd tail, several registers per row; 1..=9 lines per call (groups of two and
        // four lines and the rest one by one), several on the same grid at different offsets,
        // and sums carried over from an earlier row. Both use the textbook rounding bound of a
        // sum of products.
        for simd in RowSimd::supported() {
            for n in 1..=19 {
                let (k0, k1) = (values(n, 0.1), values(n, 0.7));
                for m in 1..=9 {
                    // Three grids of 2n + 3 values; the row goes to offset `at` of each, and
                    // line t goes to grid t mod 3 with its own sample values.
                    let at = 3;
                    let grids0: Vec<Vec<Complex64>> =
                        (0..3).map(|g| values(2 * n + 3, 1.9 + 0.4 * g as f64)).collect();
                    let vals: Vec<[Complex64; 2]> = (0..m)
                        .map(|t| {
                            let t = t as f64;
                            [Complex64::new(0.3 - t, -1.2 + 0.5 * t), Complex64::new(-0.8, 0.4 * t)]
                        })
                        .collect();
                    for h in 1..=2 {
                        let krows: Vec<&[Complex64]> = [&k0[..], &k1[..]][..h].to_vec();
                        let mut grids = grids0.clone();
                        let targets: Vec<LineTarget> =
                            (0..m).map(|t| LineTarget { grid: t % 3, vals: vals[t] }).collect();
                        let mut lines: Vec<&mut [Complex64]> =
                            grids.iter_mut().map(|g| &mut g[..]).collect();
                        spread_row(simd, &mut lines, at, &krows, &targets);
                        for (g, (got, before)) in grids.iter().zip(&grids0).enumerate() {
                            for i in 0..2 * n + 3 {
                                let (mut want, mut scale) = (before[i], before[i].norm());
                                if (at..at + n).contains(&i) {
                                    for t in targets.iter().filter(|t| t.grid == g) {
                                        for (hh, kr) in krows.iter().enumerate() {
                                            want += kr[i - at].conj() * t.vals[hh];
                                            scale += kr[i - at].norm() * t.vals[hh].norm();
                                        }
                                    }
                                }
                                // At most 4 · 3 · 2 + 1 real roundings per value (Higham,
                                // §3.1, as below).
                                let err = (got[i] - want).norm();
                                let bound = 25.0 * f64::EPSILON * 2.0 * scale;
                                assert!(err < bound, "{simd:?} n={n} m={m} h={h} grid {g}");
                            }
                        }
                        // Two rows into the same sums (offsets at and at + 1), line t reading
                        // grid (t + 1) mod 3.
                        let views: Vec<&[Complex64]> = grids0.iter().map(|g| &g[..]).collect();
                        let which: Vec<usize> = (0..m).map(|t| (t + 1) % 3).collect();
                        let mut sums = vec![LaneSums::default(); m];
                        dot_row(simd, &views, at, &krows, &which, &mut sums);
                        dot_row(simd, &views, at + 1, &krows, &which, &mut sums);
                        for (&g, s) in which.iter().zip(&sums) {
                            let line = &grids0[g];
                            for (hh, kr) in krows.iter().enumerate() {
                                let want: Complex64 = (0..n)
                                    .map(|i| line[at + i] * kr[i] + line[at + 1 + i] * kr[i])
                                    .sum();
                                // Rounding bound of a dot product of m real terms, m u Σ|x||y|
                                // (Higham, Accuracy and Stability of Numerical Algorithms, 2nd
                                // ed., §3.1), with m = 4 · 2n real products per complex sum.
                                let scale: f64 = (0..n)
                                    .map(|i| {
                                        (line[at + i].norm() + line[at + 1 + i].norm())
                                            * kr[i].norm()
                                    })
                                    .sum();
                                let bound = 8.0 * n as f64 * f64::EPSILON * 2.0 * scale;
                                let err = (s.value(hh) - want).norm();
                                assert!(err < bound, "{simd:?} n={n} m={m} h={h}: {err:e}");
                            }
                        }
                    }
                }
                let grid_a = values(2 * n + 3, 1.9);
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
