//! The innermost loops of the tiled passes (see `tiles`): kernel taps by Horner's rule, and
//! one footprint spread into or read from a tile buffer, as plain Rust (any CPU) and with AVX2 +
//! FMA intrinsics picked at run time ([`Simd::detect`]). The buffers keep real and imaginary
//! parts in separate arrays, rows `STRIDE` apart, so a footprint row is L/4 vector operations
//! on each; the taps from W to L are zero.
use super::tiles::STRIDE;
use crate::kernel_poly::{PolyKernel, MAX_TAPS};
use num_complex::Complex64;

/// Which instruction set the tile loops run on (picked once per call, the same for every task).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Simd {
    Scalar,
    #[cfg(target_arch = "x86_64")]
    Avx2Fma,
}

impl Simd {
    pub(super) fn detect() -> Self {
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

/// The two innermost loops on a tile buffer (real and imaginary parts in separate arrays,
/// rows `STRIDE` apart), over `L` lanes of taps (the taps from W on are zero):
/// spreading adds v · ky[j] · kx[i] at (dy + j, dx + i), interpolation returns
/// Σ_j ky[j] Σ_i kx[i] · buffer(dy + j, dx + i), for j < w.
pub(super) trait TileRows {
    /// [`PolyKernel::taps`] of `N` positions: the first cells, and the taps in `taps[n]`.
    fn taps<const N: usize>(
        poly: &PolyKernel,
        s: [f64; N],
        taps: [&mut [f64; MAX_TAPS]; N],
    ) -> [i64; N];
    fn spread<const L: usize>(
        re: &mut [f64],
        im: &mut [f64],
        at: (usize, usize, usize),
        kx: &[f64; MAX_TAPS],
        ky: &[f64; MAX_TAPS],
        v: Complex64,
    );
    fn interpolate<const L: usize>(
        re: &[f64],
        im: &[f64],
        at: (usize, usize, usize),
        kx: &[f64; MAX_TAPS],
        ky: &[f64; MAX_TAPS],
    ) -> Complex64;
}

/// Plain Rust (any CPU).
pub(super) struct ScalarRows;

impl TileRows for ScalarRows {
    #[inline(always)]
    fn taps<const N: usize>(
        poly: &PolyKernel,
        s: [f64; N],
        taps: [&mut [f64; MAX_TAPS]; N],
    ) -> [i64; N] {
        let mut g = [0; N];
        for ((g, s), t) in g.iter_mut().zip(s).zip(taps) {
            *g = poly.taps(s, t);
        }
        g
    }

    #[inline(always)]
    fn spread<const L: usize>(
        re: &mut [f64],
        im: &mut [f64],
        (dx, dy, w): (usize, usize, usize),
        kx: &[f64; MAX_TAPS],
        ky: &[f64; MAX_TAPS],
        v: Complex64,
    ) {
        for (j, &k) in ky[..w].iter().enumerate() {
            let o = (dy + j) * STRIDE + dx;
            let (vr, vi) = (v.re * k, v.im * k);
            for (g, &t) in re[o..o + L].iter_mut().zip(&kx[..L]) {
                *g += vr * t;
            }
            for (g, &t) in im[o..o + L].iter_mut().zip(&kx[..L]) {
                *g += vi * t;
            }
        }
    }

    #[inline(always)]
    fn interpolate<const L: usize>(
        re: &[f64],
        im: &[f64],
        (dx, dy, w): (usize, usize, usize),
        kx: &[f64; MAX_TAPS],
        ky: &[f64; MAX_TAPS],
    ) -> Complex64 {
        let (mut ar, mut ai) = ([0.0; L], [0.0; L]);
        for (j, &k) in ky[..w].iter().enumerate() {
            let o = (dy + j) * STRIDE + dx;
            for (l, (&r, &i)) in re[o..o + L].iter().zip(&im[o..o + L]).enumerate() {
                ar[l] += k * r;
                ai[l] += k * i;
            }
        }
        let (mut sr, mut si) = (0.0, 0.0);
        for l in 0..L {
            sr += kx[l] * ar[l];
            si += kx[l] * ai[l];
        }
        Complex64::new(sr, si)
    }
}

/// AVX2 with FMA: four lanes per register (only used after [`Simd::detect`] found both).
#[cfg(target_arch = "x86_64")]
pub(super) struct AvxRows;

#[cfg(target_arch = "x86_64")]
impl TileRows for AvxRows {
    #[inline(always)]
    fn taps<const N: usize>(
        poly: &PolyKernel,
        s: [f64; N],
        taps: [&mut [f64; MAX_TAPS]; N],
    ) -> [i64; N] {
        // SAFETY: as for `spread`.
        match poly.lanes() {
            4 => unsafe { avx::taps::<4, N>(poly, s, taps) },
            8 => unsafe { avx::taps::<8, N>(poly, s, taps) },
            12 => unsafe { avx::taps::<12, N>(poly, s, taps) },
            _ => unsafe { avx::taps::<MAX_TAPS, N>(poly, s, taps) },
        }
    }

    #[inline(always)]
    fn spread<const L: usize>(
        re: &mut [f64],
        im: &mut [f64],
        at: (usize, usize, usize),
        kx: &[f64; MAX_TAPS],
        ky: &[f64; MAX_TAPS],
        v: Complex64,
    ) {
        // SAFETY: AvxRows is only used inside the `#[target_feature(enable = "avx2,fma")]`
        // band functions, which run only when Simd::detect found both features.
        unsafe { avx::spread::<L>(re, im, at, kx, ky, v) }
    }

    #[inline(always)]
    fn interpolate<const L: usize>(
        re: &[f64],
        im: &[f64],
        at: (usize, usize, usize),
        kx: &[f64; MAX_TAPS],
        ky: &[f64; MAX_TAPS],
    ) -> Complex64 {
        // SAFETY: as for `spread`.
        unsafe { avx::interpolate::<L>(re, im, at, kx, ky) }
    }
}

// Lane loops index several arrays with one counter; iterators would hide that.
#[allow(clippy::needless_range_loop)]
#[cfg(target_arch = "x86_64")]
mod avx {
    use super::{PolyKernel, MAX_TAPS, STRIDE};
    use num_complex::Complex64;
    use std::arch::x86_64::*;

    /// Horner's rule for `N` positions at once (independent chains interleaved, so the
    /// evaluation is bound by throughput rather than by the latency of one chain); the same
    /// polynomials and first cells as [`PolyKernel::taps`].
    #[inline]
    #[target_feature(enable = "avx2,fma")]
    pub(super) fn taps<const L: usize, const N: usize>(
        poly: &PolyKernel,
        s: [f64; N],
        taps: [&mut [f64; MAX_TAPS]; N],
    ) -> [i64; N] {
        let half = 0.5 * poly.support() as f64;
        let rows = poly.coefficient_rows();
        let mut g = [0i64; N];
        let mut x = [_mm256_setzero_pd(); N];
        for n in 0..N {
            let g0 = (s[n] - half).ceil();
            x[n] = _mm256_set1_pd(2.0 * (g0 - (s[n] - half)) - 1.0);
            g[n] = g0 as i64;
        }
        let mut acc = [[_mm256_setzero_pd(); MAX_TAPS / 4]; N];
        for a in acc.iter_mut() {
            for q in 0..L / 4 {
                // SAFETY: 4q + 4 ≤ L ≤ MAX_TAPS values of the row.
                a[q] = unsafe { _mm256_loadu_pd(rows[0].as_ptr().add(4 * q)) };
            }
        }
        for row in &rows[1..] {
            for q in 0..L / 4 {
                // SAFETY: as above.
                let c = unsafe { _mm256_loadu_pd(row.as_ptr().add(4 * q)) };
                for n in 0..N {
                    acc[n][q] = _mm256_fmadd_pd(acc[n][q], x[n], c);
                }
            }
        }
        for (a, t) in acc.iter().zip(taps) {
            for q in 0..L / 4 {
                // SAFETY: t holds MAX_TAPS ≥ 4q + 4 values.
                unsafe { _mm256_storeu_pd(t.as_mut_ptr().add(4 * q), a[q]) };
            }
        }
        g
    }

    #[inline]
    #[target_feature(enable = "avx2,fma")]
    pub(super) fn spread<const L: usize>(
        re: &mut [f64],
        im: &mut [f64],
        (dx, dy, w): (usize, usize, usize),
        kx: &[f64; MAX_TAPS],
        ky: &[f64; MAX_TAPS],
        v: Complex64,
    ) {
        let mut k = [_mm256_setzero_pd(); MAX_TAPS / 4];
        for (q, k) in k.iter_mut().enumerate().take(L / 4) {
            // SAFETY: 4q + 4 ≤ L ≤ MAX_TAPS values of kx.
            *k = unsafe { _mm256_loadu_pd(kx.as_ptr().add(4 * q)) };
        }
        for (j, &t) in ky[..w].iter().enumerate() {
            let o = (dy + j) * STRIDE + dx;
            let (r, i) = (&mut re[o..o + L], &mut im[o..o + L]);
            let (vr, vi) = (_mm256_set1_pd(v.re * t), _mm256_set1_pd(v.im * t));
            for (q, &k) in k.iter().enumerate().take(L / 4) {
                // SAFETY: r and i hold L ≥ 4q + 4 values (bounds checked by the slicing).
                unsafe {
                    let pr = r.as_mut_ptr().add(4 * q);
                    _mm256_storeu_pd(pr, _mm256_fmadd_pd(vr, k, _mm256_loadu_pd(pr)));
                    let pi = i.as_mut_ptr().add(4 * q);
                    _mm256_storeu_pd(pi, _mm256_fmadd_pd(vi, k, _mm256_loadu_pd(pi)));
                }
            }
        }
    }

    #[inline]
    #[target_feature(enable = "avx2,fma")]
    pub(super) fn interpolate<const L: usize>(
        re: &[f64],
        im: &[f64],
        (dx, dy, w): (usize, usize, usize),
        kx: &[f64; MAX_TAPS],
        ky: &[f64; MAX_TAPS],
    ) -> Complex64 {
        let mut ar = [_mm256_setzero_pd(); MAX_TAPS / 4];
        let mut ai = [_mm256_setzero_pd(); MAX_TAPS / 4];
        for (j, &t) in ky[..w].iter().enumerate() {
            let o = (dy + j) * STRIDE + dx;
            let (r, i) = (&re[o..o + L], &im[o..o + L]);
            let t = _mm256_set1_pd(t);
            for q in 0..L / 4 {
                // SAFETY: r and i hold L ≥ 4q + 4 values (bounds checked by the slicing).
                unsafe {
                    ar[q] = _mm256_fmadd_pd(t, _mm256_loadu_pd(r.as_ptr().add(4 * q)), ar[q]);
                    ai[q] = _mm256_fmadd_pd(t, _mm256_loadu_pd(i.as_ptr().add(4 * q)), ai[q]);
                }
            }
        }
        let (mut sr, mut si) = (_mm256_setzero_pd(), _mm256_setzero_pd());
        for q in 0..L / 4 {
            // SAFETY: 4q + 4 ≤ L ≤ MAX_TAPS values of kx.
            let k = unsafe { _mm256_loadu_pd(kx.as_ptr().add(4 * q)) };
            sr = _mm256_fmadd_pd(k, ar[q], sr);
            si = _mm256_fmadd_pd(k, ai[q], si);
        }
        let (mut a, mut b) = ([0.0; 4], [0.0; 4]);
        // SAFETY: a and b hold 4 values.
        unsafe {
            _mm256_storeu_pd(a.as_mut_ptr(), sr);
            _mm256_storeu_pd(b.as_mut_ptr(), si);
        }
        Complex64::new((a[0] + a[1]) + (a[2] + a[3]), (b[0] + b[1]) + (b[2] + b[3]))
    }
}

/// Ask the CPU to start loading the cache line of `x` (a hint: it never faults or changes
/// memory). The tiled passes visit samples in tile order, so their uvw and values sit at
/// scattered addresses; fetching a few samples ahead hides most of that latency.
#[inline(always)]
pub(super) fn prefetch<T>(x: &T) {
    #[cfg(target_arch = "x86_64")]
    // SAFETY: _mm_prefetch (SSE, always present on x86-64) does not access the memory.
    unsafe {
        use std::arch::x86_64::{_mm_prefetch, _MM_HINT_T0};
        _mm_prefetch::<_MM_HINT_T0>((x as *const T).cast());
    }
    #[cfg(not(target_arch = "x86_64"))]
    let _ = x;
}
