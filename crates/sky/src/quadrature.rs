//! Gauss–Legendre quadrature nodes and weights, used to integrate Gaussians over pixels.

/// Nodes and weights of the n-point Gauss–Legendre rule on [−1, 1], found by Newton's method on
/// the Legendre polynomial P_n from the Chebyshev-like first guess cos(π (i + 3/4)/(n + 1/2)),
/// with w_i = 2 / ((1 − x_i²) P_n'(x_i)²) (Abramowitz & Stegun 25.4.29; Press et al., Numerical
/// Recipes, §4.6). The rule integrates polynomials of degree ≤ 2n − 1 exactly.
pub(crate) fn gauss_legendre(n: usize) -> (Vec<f64>, Vec<f64>) {
    let mut nodes = vec![0.0; n];
    let mut weights = vec![0.0; n];
    for i in 0..n {
        let mut x = (std::f64::consts::PI * (i as f64 + 0.75) / (n as f64 + 0.5)).cos();
        let mut derivative = 1.0;
        for _ in 0..100 {
            // Three-term recurrence (k+1) P_{k+1} = (2k+1) x P_k − k P_{k−1}.
            let (mut p0, mut p1) = (1.0, x);
            for k in 1..n {
                let p2 = ((2 * k + 1) as f64 * x * p1 - k as f64 * p0) / (k + 1) as f64;
                p0 = p1;
                p1 = p2;
            }
            let pn = if n == 0 { 1.0 } else { p1 };
            let pn_minus_1 = p0;
            derivative = n as f64 * (x * pn - pn_minus_1) / (x * x - 1.0);
            let dx = pn / derivative;
            x -= dx;
            if dx.abs() < 1e-16 {
                break;
            }
        }
        nodes[i] = x;
        weights[i] = 2.0 / ((1.0 - x * x) * derivative * derivative);
    }
    (nodes, weights)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exact_for_polynomials_up_to_degree_2n_minus_1() {
        // ∫_{−1}^{1} x^k dx = 2/(k+1) for even k, 0 for odd k.
        let (x, w) = gauss_legendre(8);
        assert!((w.iter().sum::<f64>() - 2.0).abs() < 1e-14);
        for k in 0..16 {
            let got: f64 = x.iter().zip(&w).map(|(xi, wi)| wi * xi.powi(k)).sum();
            let want = if k % 2 == 0 { 2.0 / (k as f64 + 1.0) } else { 0.0 };
            assert!((got - want).abs() < 1e-14, "degree {k}: {got}");
        }
        // Known value: the 2-point rule has nodes ±1/√3 and weights 1 (A&S table 25.4).
        let (x2, w2) = gauss_legendre(2);
        assert!((x2[0].abs() - 1.0 / 3f64.sqrt()).abs() < 1e-15 && (w2[0] - 1.0).abs() < 1e-15);
    }
}
