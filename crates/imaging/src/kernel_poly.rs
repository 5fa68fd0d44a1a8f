//! Piecewise-polynomial evaluation of the ES kernel taps: the fast path of [`EsKernel::taps`].
//!
//! For a sample at fractional cell s, the W taps sit at distances t_i = i − W/2 + f from the
//! sample, with f = ⌈s − W/2⌉ − (s − W/2) ∈ [0, 1) the same for every tap. So tap i is a smooth
//! function of f alone on one unit interval, and each is replaced by a polynomial in x = 2f − 1,
//! evaluated for all W taps at once by Horner's rule — the approach of Barnett, Magland &
//! af Klinteberg (2019, section 5.1), which removes the `exp` and `sqrt` from every tap.
//! The polynomials interpolate ψ at Chebyshev points (near-minimax), converted to monomials; the
//! degree is the smallest whose measured error over the support is at most ε/10. (The error
//! levels off near e^{−β} for high degrees because φ has a √ behaviour at z = ±1; at that level
//! the kernel itself is already below ε.)
use crate::kernel::EsKernel;

/// Most taps a kernel can have (W ≤ 15 for ε ≥ 1e-14), padded to a vector-friendly width.
pub(crate) const MAX_TAPS: usize = 16;
/// Highest polynomial degree tried.
const MAX_DEGREE: usize = 24;

/// Monomial coefficients of the W per-tap polynomials, highest power first, each power's row
/// padded to [`MAX_TAPS`] lanes (unused lanes are zero).
#[derive(Clone, Debug)]
pub(crate) struct PolyKernel {
    support: usize,
    /// W rounded up to a multiple of 4: the lanes Horner's rule evaluates.
    lanes: usize,
    coeffs: Vec<[f64; MAX_TAPS]>,
    max_error: f64,
}

impl PolyKernel {
    /// Fit the taps of `kernel` with the smallest degree whose error is at most ε/10 (or, when
    /// rounding prevents that at ε near 1e-14, the degree where the error stops halving).
    pub(crate) fn new(kernel: &EsKernel) -> Self {
        let target = kernel.epsilon() / 10.0;
        let mut best: Option<Self> = None;
        for degree in 3..=MAX_DEGREE {
            let fit = Self::fit(kernel, degree);
            let stalled = best.as_ref().is_some_and(|b| fit.max_error > 0.5 * b.max_error);
            let done = fit.max_error <= target || stalled;
            if best.as_ref().is_none_or(|b| fit.max_error < b.max_error) {
                best = Some(fit);
            }
            if done {
                break;
            }
        }
        best.expect("at least one degree is tried")
    }

    fn fit(kernel: &EsKernel, degree: usize) -> Self {
        let w = kernel.support();
        let half = 0.5 * w as f64;
        let n = degree + 1;
        let nodes: Vec<f64> =
            (0..n).map(|j| (std::f64::consts::PI * (j as f64 + 0.5) / n as f64).cos()).collect();
        // Monomial coefficients, lowest power first, per tap.
        let mut mono = vec![vec![0.0; n]; w];
        for (i, m) in mono.iter_mut().enumerate() {
            let values: Vec<f64> =
                nodes.iter().map(|&x| continuous_phi(kernel, tap_z(i, x, half))).collect();
            // Chebyshev coefficients of the interpolant.
            let cheb: Vec<f64> = (0..n)
                .map(|k| {
                    let s: f64 = values
                        .iter()
                        .enumerate()
                        .map(|(j, v)| {
                            v * (std::f64::consts::PI * k as f64 * (j as f64 + 0.5) / n as f64)
                                .cos()
                        })
                        .sum();
                    s * if k == 0 { 1.0 } else { 2.0 } / n as f64
                })
                .collect();
            // T_k in monomials by T_{k+1} = 2x T_k − T_{k−1}.
            let mut t_prev = vec![0.0; n];
            let mut t_cur = vec![0.0; n];
            t_prev[0] = 1.0;
            if n > 1 {
                t_cur[1] = 1.0;
            }
            for (k, &c) in cheb.iter().enumerate() {
                let t = if k == 0 { &t_prev } else { &t_cur };
                for (a, b) in m.iter_mut().zip(t) {
                    *a += c * b;
                }
                if k >= 1 && k + 1 < n {
                    let mut next = vec![0.0; n];
                    for p in 0..n {
                        next[p] = -t_prev[p] + if p > 0 { 2.0 * t_cur[p - 1] } else { 0.0 };
                    }
                    t_prev = std::mem::replace(&mut t_cur, next);
                }
            }
        }
        let mut coeffs = vec![[0.0; MAX_TAPS]; n];
        for (i, m) in mono.iter().enumerate() {
            for (p, &c) in m.iter().enumerate() {
                coeffs[degree - p][i] = c;
            }
        }
        let lanes = w.div_ceil(4) * 4;
        let mut fit = Self { support: w, lanes, coeffs, max_error: 0.0 };
        fit.max_error = fit.measure_error(kernel, 256);
        fit
    }

    /// Largest |polynomial − φ| over `samples` + 1 evenly spaced f per tap (both ends included).
    fn measure_error(&self, kernel: &EsKernel, samples: usize) -> f64 {
        let half = 0.5 * self.support as f64;
        let mut taps = [0.0; MAX_TAPS];
        let mut err = 0.0f64;
        for j in 0..=samples {
            let x = 2.0 * j as f64 / samples as f64 - 1.0;
            self.eval(x, &mut taps);
            for (i, t) in taps.iter().enumerate().take(self.support) {
                err = err.max((t - continuous_phi(kernel, tap_z(i, x, half))).abs());
            }
        }
        err
    }

    /// Number of lanes [`Self::taps`] fills (W rounded up to a multiple of 4; the lanes from W on
    /// are zero).
    pub(crate) fn lanes(&self) -> usize {
        self.lanes
    }

    /// Support W of the fitted kernel.
    pub(crate) fn support(&self) -> usize {
        self.support
    }

    /// The monomial coefficients, highest power first, one row of [`MAX_TAPS`] lanes per power
    /// (for vectorised evaluations of the same polynomials).
    pub(crate) fn coefficient_rows(&self) -> &[[f64; MAX_TAPS]] {
        &self.coeffs
    }

    /// Measured maximum error over the support (at fit time, 257 points per tap).
    #[cfg(test)]
    pub(crate) fn max_error(&self) -> f64 {
        self.max_error
    }

    /// Polynomial degree.
    #[cfg(test)]
    pub(crate) fn degree(&self) -> usize {
        self.coeffs.len() - 1
    }

    #[inline(always)]
    fn eval(&self, x: f64, taps: &mut [f64; MAX_TAPS]) {
        match self.lanes {
            4 => self.eval_lanes::<4>(x, taps),
            8 => self.eval_lanes::<8>(x, taps),
            12 => self.eval_lanes::<12>(x, taps),
            _ => self.eval_lanes::<MAX_TAPS>(x, taps),
        }
    }

    /// Horner's rule on the first `L` lanes (a fixed count, so the loop is unrolled and
    /// vectorised); the remaining lanes keep the zeros of the padded coefficients.
    #[inline(always)]
    fn eval_lanes<const L: usize>(&self, x: f64, taps: &mut [f64; MAX_TAPS]) {
        let mut acc = [0.0; L];
        acc.copy_from_slice(&self.coeffs[0][..L]);
        for c in &self.coeffs[1..] {
            for (t, &c) in acc.iter_mut().zip(&c[..L]) {
                *t = *t * x + c;
            }
        }
        taps[..L].copy_from_slice(&acc);
    }

    /// Same contract as [`EsKernel::taps`]: returns g0 = ⌈s − W/2⌉ and fills `taps[i]` ≈
    /// ψ(g0 + i − s) for i < W (lanes W.. are zero if they were zero on entry).
    #[inline(always)]
    pub(crate) fn taps(&self, s: f64, taps: &mut [f64; MAX_TAPS]) -> i64 {
        let half = 0.5 * self.support as f64;
        let g0 = (s - half).ceil();
        let f = g0 - (s - half);
        self.eval(2.0 * f - 1.0, taps);
        g0 as i64
    }
}

/// z of tap i at polynomial variable x = 2f − 1: t = i − W/2 + f, z = t / (W/2).
#[inline]
fn tap_z(i: usize, x: f64, half: f64) -> f64 {
    (i as f64 - half + 0.5 * (x + 1.0)) / half
}

/// φ on the closed support [−1, 1] (its limit e^{−β} at the ends, where [`EsKernel::phi`] returns
/// the zero of the open interval's outside; the two differ only on a set of measure zero).
fn continuous_phi(kernel: &EsKernel, z: f64) -> f64 {
    let s = (1.0 - z * z).max(0.0);
    (kernel.beta() * (s.sqrt() - 1.0)).exp()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn polynomial_taps_match_exact_kernel() {
        // Reference: the exact φ(z) = exp(β(√(1−z²) − 1)) of Barnett, Magland & af Klinteberg
        // (2019, eq. 1.8) through EsKernel::taps, at 4001 sample positions per unit cell
        // (independent of the 257 points the fit checks itself on). The approximation must stay
        // 10× below ε so that it adds at most 10% to the kernel's own error; at ε = 1e-14 f64
        // rounding of Horner's rule (a few 1e-16 × the coefficient sizes) sets the floor, so
        // there the bound is 1e-14 itself.
        for eps in [1e-2, 1e-4, 1e-6, 1e-7, 1e-9, 1e-12, 1e-14] {
            let k = EsKernel::for_epsilon(eps).unwrap();
            let p = PolyKernel::new(&k);
            let bound = if eps < 1e-13 { eps } else { eps / 10.0 };
            let mut exact = vec![0.0; k.support()];
            let mut fast = [0.0; MAX_TAPS];
            let mut worst = 0.0f64;
            for j in 0..4001 {
                let s = 37.0 + j as f64 / 4001.0 + 1e-7;
                let g_exact = k.taps(s, &mut exact);
                let g_fast = p.taps(s, &mut fast);
                assert_eq!(g_exact, g_fast);
                for (a, b) in exact.iter().zip(&fast) {
                    worst = worst.max((a - b).abs());
                }
                assert!(fast[k.support()..].iter().all(|&v| v == 0.0));
            }
            assert!(worst <= bound, "eps {eps}: degree {} error {worst}", p.degree());
            assert!(p.max_error() <= bound, "eps {eps}: fit error {}", p.max_error());
        }
    }

    #[test]
    fn degree_grows_with_accuracy() {
        // More digits need a higher degree (smooth function, Chebyshev convergence).
        let lo = PolyKernel::new(&EsKernel::for_epsilon(1e-3).unwrap()).degree();
        let hi = PolyKernel::new(&EsKernel::for_epsilon(1e-10).unwrap()).degree();
        assert!(lo < hi, "{lo} {hi}");
    }
}
