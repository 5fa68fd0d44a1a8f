//! Lagrange interpolation weights on equispaced nodes, the interpolator of the pattern table.
//!
//! For N nodes at offsets x_j = j − (N/2 − 1), j = 0..N, around a fractional position
//! t ∈ [0, 1), the weight of node j is L_j(t) = Π_{k≠j} (t − x_k) / (x_j − x_k)
//! (Abramowitz & Stegun 25.2.2). A band-limited function with highest angular frequency ω,
//! sampled at spacing Δ, is reproduced with error ≲ |f^(N)| Δ^N Π|t − x_k| / N!.

/// 1 / Π_{k≠j} (x_j − x_k) for the N equispaced nodes; computed once at compile time.
const fn inverse_denominators<const N: usize>() -> [f64; N] {
    let mut out = [0.0; N];
    let mut j = 0;
    while j < N {
        let mut d = 1.0;
        let mut k = 0;
        while k < N {
            if k != j {
                d *= (j as f64) - (k as f64);
            }
            k += 1;
        }
        out[j] = 1.0 / d;
        j += 1;
    }
    out
}

struct Denominators<const N: usize>;

impl<const N: usize> Denominators<N> {
    const INV: [f64; N] = inverse_denominators::<N>();
}

/// Offset of the first node relative to floor(u): nodes run floor(u) − (N/2 − 1) ..= floor(u) + N/2.
pub(crate) const fn first_node_offset(n: usize) -> isize {
    n as isize / 2 - 1
}

/// Interpolation weights L_j(t) for the N nodes (prefix/suffix products: O(N), no division by
/// t − x_j, so exact at the nodes).
#[inline(always)]
pub(crate) fn weights<const N: usize>(t: f64) -> [f64; N] {
    let shift = first_node_offset(N) as f64;
    let mut w = [0.0; N];
    let mut acc = 1.0;
    for (j, wj) in w.iter_mut().enumerate() {
        *wj = acc;
        acc *= t - (j as f64 - shift);
    }
    let mut acc = 1.0;
    for j in (0..N).rev() {
        w[j] *= acc * Denominators::<N>::INV[j];
        acc *= t - (j as f64 - shift);
    }
    w
}

/// Derivatives dL_j/dt of the interpolation weights (O(N³); used off the hot path).
pub(crate) fn derivative_weights<const N: usize>(t: f64) -> [f64; N] {
    let shift = first_node_offset(N) as f64;
    let mut d = [0.0; N];
    for (j, dj) in d.iter_mut().enumerate() {
        let mut sum = 0.0;
        for m in 0..N {
            if m == j {
                continue;
            }
            let mut prod = 1.0;
            for k in 0..N {
                if k != j && k != m {
                    prod *= t - (k as f64 - shift);
                }
            }
            sum += prod;
        }
        *dj = sum * Denominators::<N>::INV[j];
    }
    d
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reproduces_polynomials_exactly() {
        // Lagrange interpolation through N nodes is exact for polynomials of degree < N
        // (Abramowitz & Stegun 25.2.2); its derivative is exact for them too.
        let f = |x: f64| 0.3 - 1.7 * x + 0.25 * x.powi(3) - 0.01 * x.powi(5);
        let df = |x: f64| -1.7 + 0.75 * x * x - 0.05 * x.powi(4);
        for &t in &[0.0, 0.13, 0.5, 0.999] {
            let w = weights::<6>(t);
            let dw = derivative_weights::<6>(t);
            let (mut v, mut dv) = (0.0, 0.0);
            for j in 0..6 {
                let x = j as f64 - 2.0;
                v += w[j] * f(x);
                dv += dw[j] * f(x);
            }
            assert!((v - f(t)).abs() < 1e-13, "{t}: {v} vs {}", f(t));
            assert!((dv - df(t)).abs() < 1e-12, "{t}: {dv} vs {}", df(t));
        }
        let w = weights::<4>(0.0);
        assert_eq!(w, [0.0, 1.0, 0.0, 0.0]);
        let w8 = weights::<8>(0.37);
        assert!((w8.iter().sum::<f64>() - 1.0).abs() < 1e-14);
    }
}
