use crate::lagrange::{first_node_offset, weights};

/// An even radial function sampled at ρ_i = i Δ (i = 0..n) and interpolated with 6-point
/// Lagrange polynomials (using f(−ρ) = f(ρ) near the origin); 0 beyond the last usable node.
#[derive(Clone, Debug)]
pub(crate) struct SampledProfile {
    values: Vec<f64>,
    delta: f64,
}

impl SampledProfile {
    /// Samples `f` at n nodes of spacing `delta`.
    pub(crate) fn new(n: usize, delta: f64, f: impl Fn(f64) -> f64 + Sync) -> Self {
        use rayon::prelude::*;
        let values = (0..n).into_par_iter().map(|i| f(i as f64 * delta)).collect();
        Self { values, delta }
    }

    /// Largest radius at which every interpolation node exists.
    pub(crate) fn max_radius(&self) -> f64 {
        (self.values.len() as f64 - 4.0).max(0.0) * self.delta
    }

    /// Interpolated value at |rho|.
    pub(crate) fn value(&self, rho: f64) -> f64 {
        let u = rho.abs() / self.delta;
        let fu = u.floor();
        let start = fu as isize - first_node_offset(6);
        if start + 6 > self.values.len() as isize || u.is_nan() {
            return 0.0;
        }
        let w = weights::<6>(u - fu);
        w.iter()
            .enumerate()
            .map(|(j, wj)| wj * self.values[(start + j as isize).unsigned_abs()])
            .sum()
    }
}
