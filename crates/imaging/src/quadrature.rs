use std::f64::consts::PI;

/// Gauss–Legendre nodes and weights on [−1, 1] with `n` points.
///
/// The nodes are the roots of the Legendre polynomial P_n, found by Newton's method from the
/// asymptotic first guess x_i ≈ cos(π (i − 1/4) / (n + 1/2)); the weights are
/// w_i = 2 / ((1 − x_i²) P_n'(x_i)²) (Abramowitz & Stegun 1964, eq. 25.4.29). The rule integrates
/// polynomials of degree ≤ 2n − 1 exactly.
pub fn gauss_legendre(n: usize) -> (Vec<f64>, Vec<f64>) {
    let mut nodes = vec![0.0; n];
    let mut weights = vec![0.0; n];
    let nf = n as f64;
    for i in 0..n.div_ceil(2) {
        let mut x = (PI * (i as f64 + 0.75) / (nf + 0.5)).cos();
        let mut dp = 1.0;
        for _ in 0..100 {
            let (p, d) = legendre_and_derivative(n, x);
            dp = d;
            let dx = p / d;
            x -= dx;
            if dx.abs() < 1e-16 {
                break;
            }
        }
        let (_, d) = legendre_and_derivative(n, x);
        if d != 0.0 {
            dp = d;
        }
        let w = 2.0 / ((1.0 - x * x) * dp * dp);
        nodes[i] = -x;
        nodes[n - 1 - i] = x;
        weights[i] = w;
        weights[n - 1 - i] = w;
    }
    (nodes, weights)
}

/// P_n(x) and P_n'(x) by the three-term recurrence (k+1) P_{k+1} = (2k+1) x P_k − k P_{k−1}.
fn legendre_and_derivative(n: usize, x: f64) -> (f64, f64) {
    let (mut p0, mut p1) = (1.0, x);
    if n == 0 {
        return (1.0, 0.0);
    }
    for k in 1..n {
        let kf = k as f64;
        let p2 = ((2.0 * kf + 1.0) * x * p1 - kf * p0) / (kf + 1.0);
        p0 = p1;
        p1 = p2;
    }
    let d = n as f64 * (x * p1 - p0) / (x * x - 1.0);
    (p1, d)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn integrates_polynomials_exactly() {
        // Exactness for degree ≤ 2n−1 (Abramowitz & Stegun 1964, 25.4.29): ∫_{−1}^{1} x^k dx is
        // 2/(k+1) for even k and 0 for odd k.
        for n in [1usize, 2, 5, 16, 40] {
            let (x, w) = gauss_legendre(n);
            for k in 0..(2 * n) {
                let got: f64 = x.iter().zip(&w).map(|(x, w)| w * x.powi(k as i32)).sum();
                let want = if k % 2 == 0 { 2.0 / (k as f64 + 1.0) } else { 0.0 };
                assert!((got - want).abs() < 1e-13, "n={n} k={k}: {got} vs {want}");
            }
        }
    }

    #[test]
    fn integrates_cosine() {
        // ∫_{−1}^{1} cos(a x) dx = 2 sin(a)/a (elementary); 30 nodes resolve a = 20 to 1e-14.
        let (x, w) = gauss_legendre(30);
        let a = 20.0_f64;
        let got: f64 = x.iter().zip(&w).map(|(x, w)| w * (a * x).cos()).sum();
        assert!((got - 2.0 * a.sin() / a).abs() < 1e-14);
    }
}
