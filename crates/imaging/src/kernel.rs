use crate::error::ImagingError;
use crate::quadrature::gauss_legendre;
use std::f64::consts::PI;

/// The "exponential of semicircle" (ES) spreading kernel of Barnett, Magland & af Klinteberg
/// (2019, SIAM J. Sci. Comput. 41(5), C479–C504, eq. 1.8):
///
/// φ(z) = exp(β (√(1 − z²) − 1)) for |z| ≤ 1, zero outside,
///
/// used with a support of `W` grid cells, ψ(t) = φ(2t / W) for a distance t in cells, on a grid
/// upsampled by σ = 2. For a requested relative accuracy ε the same paper (section 3) gives
/// W = ⌈log10(1/ε)⌉ + 1 and β = 2.30 W at σ = 2.
///
/// The image-domain correction is the kernel's continuous Fourier transform,
/// ψ̂(ξ) = ∫ ψ(t) e^{−2πi t ξ} dt = (W/2) ∫_{−1}^{1} φ(z) cos(π W ξ z) dz (ξ in cycles per cell),
/// computed by Gauss–Legendre quadrature because it has no closed form. The substitution
/// z = sin θ turns the integral into ∫_{−π/2}^{π/2} e^{β (cos θ − 1)} cos(π W ξ sin θ) cos θ dθ,
/// whose integrand is analytic (no √ endpoint behaviour), so the rule converges exponentially.
#[derive(Clone, Debug)]
pub struct EsKernel {
    support: usize,
    beta: f64,
    epsilon: f64,
    /// sin θ_q of the quadrature nodes with θ_q ≥ 0.
    sines: Vec<f64>,
    /// (π/2) w_q e^{β (cos θ_q − 1)} cos θ_q, doubled for θ_q > 0 (its mirror image −θ_q gives
    /// the same term).
    weights: Vec<f64>,
}

/// Smallest accuracy the kernel is planned for (f64 rounding sets the floor below this).
pub const MIN_EPSILON: f64 = 1e-14;
/// Largest accuracy the kernel is planned for.
pub const MAX_EPSILON: f64 = 1e-1;

impl EsKernel {
    /// The kernel for relative accuracy `epsilon` (in [1e-14, 1e-1]) at upsampling σ = 2.
    pub fn for_epsilon(epsilon: f64) -> Result<Self, ImagingError> {
        if !(MIN_EPSILON..=MAX_EPSILON).contains(&epsilon) {
            return Err(ImagingError::Epsilon(epsilon));
        }
        // W = ⌈log10(1/ε)⌉ + 1, β = 2.30 W (Barnett et al. 2019, σ = 2). The small guard keeps
        // ε = 1e-7 from rounding up to W = 9 through log10's last bit.
        let support = ((1.0 / epsilon).log10() - 1e-9).ceil() as usize + 1;
        let beta = 2.30 * support as f64;
        // 4W + 40 nodes resolve the peak e^{β cos θ} and the oscillation cos(π W ξ sin θ) for
        // |ξ| ≤ 1/2 to rounding
        // (checked against a 2000-node rule in the tests).
        let (nodes, gl_weights) = gauss_legendre(4 * support + 40);
        let half_pi = 0.5 * PI;
        // The rule is symmetric (node −x beside x, with the same weight) and the integrand even,
        // so each pair is one node x ≥ 0 with twice the weight: half the cosines per ψ̂.
        let (sines, weights) = nodes
            .iter()
            .zip(&gl_weights)
            .filter(|(&x, _)| x >= 0.0)
            .map(|(&x, &w)| {
                let c = (half_pi * x).cos();
                let pair = if x > 0.0 { 2.0 } else { 1.0 };
                ((half_pi * x).sin(), pair * half_pi * w * (beta * (c - 1.0)).exp() * c)
            })
            .unzip();
        Ok(Self { support, beta, epsilon, sines, weights })
    }

    /// Support W in grid cells.
    pub fn support(&self) -> usize {
        self.support
    }

    /// Shape parameter β.
    pub fn beta(&self) -> f64 {
        self.beta
    }

    /// Accuracy the kernel was planned for.
    pub fn epsilon(&self) -> f64 {
        self.epsilon
    }

    /// φ(z) on the normalised coordinate z ∈ [−1, 1] (zero outside).
    #[inline]
    pub fn phi(&self, z: f64) -> f64 {
        let s = 1.0 - z * z;
        if s <= 0.0 {
            0.0
        } else {
            (self.beta * (s.sqrt() - 1.0)).exp()
        }
    }

    /// The kernel taps for a sample at fractional grid position `s` (cells): returns the first
    /// cell index g0 = ⌈s − W/2⌉ and fills `taps[i] = ψ(g0 + i − s)` for i in 0..W.
    #[inline]
    pub fn taps(&self, s: f64, taps: &mut [f64]) -> i64 {
        let half = 0.5 * self.support as f64;
        let g0 = (s - half).ceil();
        let scale = 1.0 / half;
        for (i, t) in taps.iter_mut().enumerate().take(self.support) {
            *t = self.phi((g0 + i as f64 - s) * scale);
        }
        g0 as i64
    }

    /// ψ̂(ξ): the kernel's Fourier transform at ξ cycles per cell (the grid correction).
    pub fn fourier(&self, xi: f64) -> f64 {
        let a = PI * self.support as f64 * xi;
        let sum: f64 = self.sines.iter().zip(&self.weights).map(|(&s, &w)| w * (a * s).cos()).sum();
        0.5 * self.support as f64 * sum
    }

    /// ψ̂ on |ξ| ≤ `xi_max` as a Chebyshev series ([`FourierFit`]), for callers that need it at
    /// many points (the w correction of a w-stacked plan: one value per pixel pair). None when
    /// no series of up to [`FourierFit::MAX_TERMS`] terms reaches [`FourierFit::TOLERANCE`]
    /// (the caller then evaluates [`Self::fourier`] directly).
    pub(crate) fn fourier_fit(&self, xi_max: f64) -> Option<FourierFit> {
        FourierFit::new(|xi| self.fourier(xi), xi_max)
    }
}

/// An even function f(ξ) on |ξ| ≤ ξ_max as a Chebyshev series in u = 2 (ξ / ξ_max)² − 1:
/// f ≈ Σ_k c_k T_k(u), with the c_k from f at the Chebyshev points of the first kind
/// (interpolation at those points, Trefethen, *Approximation Theory and Approximation
/// Practice*, 2013, ch. 3 and 4). Writing it in ξ² halves the terms an even function needs.
///
/// The number of terms N doubles from 8 until, at 4 N + 1 points (between the nodes, and at
/// ξ = 0 and ξ_max), the series agrees with f to [`FourierFit::TOLERANCE`] relative to |f|
/// there. ψ̂ is the transform of a function of compact support, so it is entire and its series
/// converges faster than geometrically: 16 terms reach the tolerance on ξ ≤ 1/4 (the w
/// correction's range) for every kernel from ε = 1e-4 to 1e-14 (tests). Where ψ̂ becomes small
/// against ψ̂(0) (beyond ξ ≈ 1/2 for sharp kernels) the series' rounding, relative to ψ̂(0),
/// exceeds the tolerance relative to ψ̂ and the fit is declined.
#[derive(Clone, Debug)]
pub(crate) struct FourierFit {
    xi_max: f64,
    coeffs: Vec<f64>,
}

impl FourierFit {
    /// Largest number of terms tried.
    pub(crate) const MAX_TERMS: usize = 128;
    /// Largest relative difference from f accepted at the check points. ψ̂ by quadrature is
    /// itself good to about 1e-12 (checked against a 2000-node rule), and the series' own
    /// rounding grows with its length (about 1e-14 of f at ξ = 1/2 with 32 terms), so this is
    /// the level at which a longer series stops telling more.
    pub(crate) const TOLERANCE: f64 = 1e-13;

    fn new(f: impl Fn(f64) -> f64, xi_max: f64) -> Option<Self> {
        if !(xi_max.is_finite() && xi_max > 0.0) {
            return None;
        }
        let xi_of = |u: f64| xi_max * (0.5 * (u + 1.0)).max(0.0).sqrt();
        let mut n = 8;
        while n <= Self::MAX_TERMS {
            // Values at the nodes u_j = cos(π (j + ½) / n), then the discrete cosine transform
            // c_k = (2 / n) Σ_j f(u_j) cos(π k (j + ½) / n), with c_0 halved.
            let values: Vec<f64> =
                (0..n).map(|j| f(xi_of((PI * (j as f64 + 0.5) / n as f64).cos()))).collect();
            let coeffs: Vec<f64> = (0..n)
                .map(|k| {
                    let sum: f64 = values
                        .iter()
                        .enumerate()
                        .map(|(j, v)| v * (PI * (k * (2 * j + 1)) as f64 / (2 * n) as f64).cos())
                        .sum();
                    sum * if k == 0 { 1.0 } else { 2.0 } / n as f64
                })
                .collect();
            let fit = Self { xi_max, coeffs };
            let checks: Vec<f64> =
                (0..=4 * n).map(|i| xi_of((PI * i as f64 / (4 * n) as f64).cos())).collect();
            let mut got = vec![0.0; checks.len()];
            fit.eval_into(&checks, &mut got);
            if checks.iter().zip(&got).all(|(&xi, &got)| {
                let want = f(xi);
                (got - want).abs() <= Self::TOLERANCE * want.abs()
            }) {
                return Some(fit);
            }
            n *= 2;
        }
        None
    }

    /// Number of terms.
    #[cfg(test)]
    pub(crate) fn terms(&self) -> usize {
        self.coeffs.len()
    }

    /// `out[i]` = the series at `xi[i]` (|ξ| ≤ ξ_max; beyond it the value is an extrapolation),
    /// by Clenshaw's recurrence b_k = c_k + 2u b_{k+1} − b_{k+2}, f = c_0 + u b_1 − b_2, run for
    /// the whole batch at once (one pass over it per term, which vectorises; one point at a time
    /// the recurrence waits on its own latency).
    pub(crate) fn eval_into(&self, xi: &[f64], out: &mut [f64]) {
        assert_eq!(xi.len(), out.len(), "one output per point");
        let n = xi.len();
        let u: Vec<f64> = xi
            .iter()
            .map(|&x| {
                let t = x / self.xi_max;
                2.0 * t * t - 1.0
            })
            .collect();
        let (mut b1, mut b2) = (vec![0.0; n], vec![0.0; n]);
        for &c in self.coeffs[1..].iter().rev() {
            for ((b1, b2), &u) in b1.iter_mut().zip(b2.iter_mut()).zip(&u) {
                let b0 = c + 2.0 * u * *b1 - *b2;
                *b2 = *b1;
                *b1 = b0;
            }
        }
        for (((o, &u), b1), b2) in out.iter_mut().zip(&u).zip(&b1).zip(&b2) {
            *o = self.coeffs[0] + u * b1 - b2;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parameters_follow_barnett_rule() {
        // W = ⌈log10(1/ε)⌉ + 1, β = 2.30 W (Barnett, Magland & af Klinteberg 2019, σ = 2).
        for (eps, w) in [(1e-4, 5), (1e-7, 8), (1e-10, 11), (1e-14, 15)] {
            let k = EsKernel::for_epsilon(eps).unwrap();
            assert_eq!(k.support(), w, "eps {eps}");
            assert!((k.beta() - 2.30 * w as f64).abs() < 1e-12);
        }
        assert!(EsKernel::for_epsilon(0.0).is_err());
        assert!(EsKernel::for_epsilon(0.5).is_err());
    }

    #[test]
    fn fourier_matches_fine_quadrature() {
        // Reference: the integral in z (no substitution) with a 2000-node Gauss–Legendre rule.
        // Its own error from the √ endpoint behaviour (size e^{−β}) was measured at 5e-13 of ψ̂
        // for ε = 1e-4 (largest e^{−β}), hence the 3e-12 tolerance. Also
        // ψ̂(0) against a composite Simpson sum of 200001 points.
        for eps in [1e-4, 1e-10, 1e-14] {
            let k = EsKernel::for_epsilon(eps).unwrap();
            let (x, w) = gauss_legendre(2000);
            for xi in [0.0, 0.1, 0.25, 0.4, 0.5] {
                let a = PI * k.support() as f64 * xi;
                let fine: f64 = 0.5
                    * k.support() as f64
                    * x.iter().zip(&w).map(|(&z, &w)| w * k.phi(z) * (a * z).cos()).sum::<f64>();
                let got = k.fourier(xi);
                assert!(
                    (got - fine).abs() < 3e-12 * fine.abs().max(1e-3),
                    "{eps} {xi}: {got} {fine}"
                );
            }
            let n = 200_000;
            let h = 2.0 / n as f64;
            let mut simpson = 0.0;
            for i in 0..=n {
                let c = if i == 0 || i == n {
                    1.0
                } else if i % 2 == 1 {
                    4.0
                } else {
                    2.0
                };
                simpson += c * k.phi(-1.0 + i as f64 * h);
            }
            simpson *= h / 3.0 * 0.5 * k.support() as f64;
            // Simpson's rule loses accuracy at the √ endpoints, where φ ~ e^{−β}; 1e-9 covers it.
            assert!((k.fourier(0.0) - simpson).abs() < 1e-9 * simpson);
        }
    }

    #[test]
    fn fourier_series_matches_the_quadrature() {
        // Reference: ψ̂ by quadrature (`fourier`, checked above against a 2000-node rule) at
        // 2001 evenly spaced points of [−ξ_max, ξ_max] (most of them between the fit's own
        // check points). ξ_max = 1/4 is the w correction's range (1/(2σ)): a series must exist
        // there. At ξ_max = 1/2, ψ̂(ξ_max) falls to 1e-4 of ψ̂(0) for the sharpest kernel and
        // the series' rounding (relative to ψ̂(0)) no longer meets the tolerance relative to
        // ψ̂(ξ_max): there the fit may decline, but what it returns must still be accurate.
        let mut fitted = 0;
        for eps in [1e-4, 1e-7, 1e-10, 1e-14] {
            let k = EsKernel::for_epsilon(eps).unwrap();
            for xi_max in [0.25, 0.5] {
                let Some(fit) = k.fourier_fit(xi_max) else {
                    assert!(xi_max > 0.25, "{eps}: no series on ξ ≤ 1/4");
                    continue;
                };
                fitted += 1;
                // Measured: 16 terms wherever a series is found here (the type's doc says so).
                assert_eq!(fit.terms(), 16, "{eps} {xi_max}");
                let xi: Vec<f64> = (0..=2000).map(|i| xi_max * (i as f64 / 1000.0 - 1.0)).collect();
                let mut got = vec![0.0; xi.len()];
                fit.eval_into(&xi, &mut got);
                for (&x, &got) in xi.iter().zip(&got) {
                    let want = k.fourier(x);
                    let tol = FourierFit::TOLERANCE * want.abs();
                    assert!((got - want).abs() <= tol, "{eps} {x}: {got} {want}");
                }
            }
        }
        assert!(fitted >= 5, "series found in {fitted} of 8 cases");
        // No range, no series.
        let k = EsKernel::for_epsilon(1e-7).unwrap();
        assert!(k.fourier_fit(0.0).is_none() && k.fourier_fit(f64::NAN).is_none());
    }

    #[test]
    fn taps_cover_support() {
        // Definition check: taps are ψ at the distances of the W cells nearest the sample.
        let k = EsKernel::for_epsilon(1e-6).unwrap();
        let mut t = vec![0.0; k.support()];
        let g0 = k.taps(10.3, &mut t);
        assert_eq!(g0, 7); // ⌈10.3 − 3.5⌉
        for (i, v) in t.iter().enumerate() {
            let d = (g0 + i as i64) as f64 - 10.3;
            assert!((v - k.phi(d / 3.5)).abs() < 1e-15);
            assert!(d.abs() <= 3.5);
        }
    }
}
