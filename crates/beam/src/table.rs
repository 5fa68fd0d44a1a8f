use crate::aperture::ApertureSamples;
use crate::lagrange::{derivative_weights, first_node_offset, weights};
use crate::BeamError;
use num_complex::Complex64;
use rayon::prelude::*;
use std::f64::consts::PI;

/// Largest number of table nodes per axis (memory guard: 8001² complex values = 1 GB).
pub const MAX_TABLE_NODES: usize = 8001;

/// Largest imaginary part for which a tabulated pattern is treated as real.
const REAL_THRESHOLD: f64 = 1e-13;

/// How the voltage pattern is tabulated and interpolated.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TableParams {
    /// Table spacing as a fraction of the Nyquist spacing 1/D of the band-limited pattern:
    /// Δp = 1 / (oversampling · D). Default 16.
    pub oversampling: f64,
    /// Points of the separable Lagrange interpolator per axis: 4, 6 or 8. Default 6.
    pub interpolation_points: usize,
}

impl Default for TableParams {
    fn default() -> Self {
        Self { oversampling: 16.0, interpolation_points: 6 }
    }
}

impl TableParams {
    /// Checks the fields.
    pub fn validate(&self) -> Result<(), BeamError> {
        if !(self.oversampling.is_finite() && self.oversampling >= 2.0) {
            return Err(BeamError::InvalidOversampling(self.oversampling));
        }
        if !matches!(self.interpolation_points, 4 | 6 | 8) {
            return Err(BeamError::UnsupportedInterpolationPoints(self.interpolation_points));
        }
        Ok(())
    }
}

/// The normalised voltage pattern E(p, q) = Ã(p, q) / Ã(0, 0) tabulated once on a square grid in
/// (p, q) = (l ν / c, m ν / c) (cycles per metre), and interpolated with separable Lagrange
/// polynomials.
///
/// Nodes are p_i = (i − c) Δ for i = 0..2c (so p = 0 is a node); values are stored q-row-major
/// (`[j · n + i]` at (p_i, q_j)), real and imaginary parts apart; when the aperture is point-symmetric
/// the pattern is real and the imaginary part (then below 1e-13 everywhere, rounding of the
/// sum) is dropped, halving the interpolation work. The table is filled with the *same* direct aperture sum as
/// [`ApertureSamples::direct_pattern`], evaluated separably (first along y, then along x), so the
/// only difference between the two is interpolation.
#[derive(Clone, Debug)]
pub struct PatternTable {
    data: Vec<Complex64>,
    re: Vec<f64>,
    /// Empty when the pattern is real.
    im: Vec<f64>,
    n: usize,
    centre: usize,
    delta: f64,
    inv_delta: f64,
    taps: usize,
}

impl PatternTable {
    /// Tabulates `samples` for every |p|, |q| ≤ `p_max` (cycles per metre); the aperture
    /// diameter `dish_diameter_m` sets the Nyquist spacing.
    pub fn new(
        samples: &ApertureSamples,
        dish_diameter_m: f64,
        p_max: f64,
        params: &TableParams,
    ) -> Result<Self, BeamError> {
        params.validate()?;
        if !(p_max.is_finite() && p_max > 0.0) {
            return Err(BeamError::InvalidCoverage(p_max));
        }
        let delta = 1.0 / (params.oversampling * dish_diameter_m);
        let taps = params.interpolation_points;
        let centre_f = (p_max / delta).ceil() + (taps / 2) as f64;
        let n_f = 2.0 * centre_f + 1.0;
        if n_f > MAX_TABLE_NODES as f64 {
            return Err(BeamError::TableTooLarge {
                n: n_f.min(usize::MAX as f64) as usize,
                limit: MAX_TABLE_NODES,
            });
        }
        let centre = centre_f as usize;
        let n = 2 * centre + 1;
        let na = samples.coords_m.len();
        let nodes: Vec<f64> = (0..n).map(|i| (i as f64 - centre as f64) * delta).collect();
        // Phasors exp(2πi p_i x_a), shared by both axes since the node lists are identical.
        let phasors: Vec<Complex64> = nodes
            .iter()
            .flat_map(|&p| {
                samples.coords_m.iter().map(move |&x| Complex64::from_polar(1.0, 2.0 * PI * p * x))
            })
            .collect();
        let norm = 1.0 / samples.total_weight();
        let phasors = &phasors;
        // g[j][a] = Σ_b w[b][a] exp(2πi q_j y_b)
        let g: Vec<Vec<Complex64>> = (0..n)
            .into_par_iter()
            .map(|j| {
                let ey = &phasors[j * na..(j + 1) * na];
                let mut row = vec![Complex64::new(0.0, 0.0); na];
                for (b, e) in ey.iter().enumerate() {
                    let w = &samples.weights[b * na..(b + 1) * na];
                    for (r, &wv) in row.iter_mut().zip(w) {
                        *r += e * wv;
                    }
                }
                row
            })
            .collect();
        let data: Vec<Complex64> = g
            .par_iter()
            .flat_map_iter(|gj| {
                (0..n).map(move |i| {
                    let ex = &phasors[i * na..(i + 1) * na];
                    let mut acc = Complex64::new(0.0, 0.0);
                    for (e, gv) in ex.iter().zip(gj) {
                        acc += e * gv;
                    }
                    acc * norm
                })
            })
            .collect();
        let re = data.iter().map(|v| v.re).collect();
        let max_im = data.iter().map(|v| v.im.abs()).fold(0.0, f64::max);
        let im =
            if max_im <= REAL_THRESHOLD { Vec::new() } else { data.iter().map(|v| v.im).collect() };
        Ok(Self { data, re, im, n, centre, delta, inv_delta: 1.0 / delta, taps })
    }

    /// Node spacing Δ in p (cycles per metre).
    pub fn spacing(&self) -> f64 {
        self.delta
    }

    /// Nodes per axis.
    pub fn nodes_per_axis(&self) -> usize {
        self.n
    }

    /// Largest |p| and |q| at which the interpolator has all its nodes; beyond it
    /// [`PatternTable::value`] returns 0.
    pub fn covered_half_width(&self) -> f64 {
        (self.centre as f64 - (self.taps / 2) as f64) * self.delta
    }

    /// Interpolated E(p, q); 0 outside [`PatternTable::covered_half_width`].
    #[inline]
    pub fn value(&self, p: f64, q: f64) -> Complex64 {
        match self.taps {
            4 => self.value_n::<4>(p, q),
            6 => self.value_n::<6>(p, q),
            _ => self.value_n::<8>(p, q),
        }
    }

    #[inline(always)]
    fn locate<const N: usize>(&self, p: f64) -> Option<(usize, f64)> {
        // u ≥ 0 on every usable position, where truncation is floor (and cheaper than a call).
        let u = p * self.inv_delta + self.centre as f64;
        if !(u >= 0.0 && u < self.n as f64) {
            return None;
        }
        let iu = u as usize;
        let start = iu.checked_sub(first_node_offset(N) as usize)?;
        (start + N <= self.n).then_some((start, u - iu as f64))
    }

    #[inline(always)]
    fn value_n<const N: usize>(&self, p: f64, q: f64) -> Complex64 {
        let (Some((i0, tu)), Some((j0, tv))) = (self.locate::<N>(p), self.locate::<N>(q)) else {
            return Complex64::new(0.0, 0.0);
        };
        let wu = weights::<N>(tu);
        let wv = weights::<N>(tv);
        let re = combine::<N>(&self.re, self.n, i0, j0, &wu, &wv);
        let im =
            if self.im.is_empty() { 0.0 } else { combine::<N>(&self.im, self.n, i0, j0, &wu, &wv) };
        Complex64::new(re, im)
    }

    /// True when the tabulated pattern is real (point-symmetric aperture).
    pub fn is_real(&self) -> bool {
        self.im.is_empty()
    }

    /// Interpolated E and its gradient (∂E/∂p, ∂E/∂q), from the analytic derivative of the
    /// interpolating polynomial (the pattern is band-limited, so this is as accurate as the
    /// value up to a factor ~ πD / Δ-independent constant). Zero outside the table.
    pub fn value_and_gradient(&self, p: f64, q: f64) -> (Complex64, Complex64, Complex64) {
        match self.taps {
            4 => self.gradient_n::<4>(p, q),
            6 => self.gradient_n::<6>(p, q),
            _ => self.gradient_n::<8>(p, q),
        }
    }

    fn gradient_n<const N: usize>(&self, p: f64, q: f64) -> (Complex64, Complex64, Complex64) {
        let zero = Complex64::new(0.0, 0.0);
        let (Some((i0, tu)), Some((j0, tv))) = (self.locate::<N>(p), self.locate::<N>(q)) else {
            return (zero, zero, zero);
        };
        let (wu, wv) = (weights::<N>(tu), weights::<N>(tv));
        let (du, dv) = (derivative_weights::<N>(tu), derivative_weights::<N>(tv));
        let (mut v, mut gp, mut gq) = (zero, zero, zero);
        for b in 0..N {
            let start = (j0 + b) * self.n + i0;
            let row = &self.data[start..start + N];
            let (mut r, mut rd) = (zero, zero);
            for a in 0..N {
                r += row[a] * wu[a];
                rd += row[a] * du[a];
            }
            v += r * wv[b];
            gp += rd * wv[b];
            gq += r * dv[b];
        }
        (v, gp * self.inv_delta, gq * self.inv_delta)
    }
}

/// Σ_b wv[b] Σ_a wu[a] t[(j0 + b) n + i0 + a]: the N rows are first combined along q into N
/// column sums (independent accumulators, which vectorise), then along p.
#[inline(always)]
fn combine<const N: usize>(
    t: &[f64],
    n: usize,
    i0: usize,
    j0: usize,
    wu: &[f64; N],
    wv: &[f64; N],
) -> f64 {
    let mut col = [0.0; N];
    for (b, &wb) in wv.iter().enumerate() {
        let start = (j0 + b) * n + i0;
        let row: &[f64; N] = t[start..start + N].try_into().expect("N-element row");
        for a in 0..N {
            col[a] += row[a] * wb;
        }
    }
    let mut acc = 0.0;
    for a in 0..N {
        acc += col[a] * wu[a];
    }
    acc
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::aperture::{ApertureParams, FeedLegs};
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    fn max_error_vs_direct(ap: &ApertureParams, tp: &TableParams, n_points: usize) -> f64 {
        let s = ApertureSamples::new(ap).unwrap();
        let p_max = 6.0 / ap.dish_diameter_m;
        let t = PatternTable::new(&s, ap.dish_diameter_m, p_max, tp).unwrap();
        let mut rng = ChaCha8Rng::seed_from_u64(beamfloor_core::derive_seed(
            7,
            beamfloor_core::SeedPurpose::Test,
            1,
        ));
        let mut worst: f64 = 0.0;
        for _ in 0..n_points {
            let p = rng.random_range(-p_max..p_max);
            let q = rng.random_range(-p_max..p_max);
            worst = worst.max((t.value(p, q) - s.direct_pattern(p, q)).norm());
        }
        worst
    }

    #[test]
    fn interpolation_matches_direct_sum() {
        // Fast path vs slow reference: the table interpolated at random points against the direct
        // sum over the same aperture samples. Requirement 1e-7 of the peak (E = 1). An asymmetric
        // aperture (3 legs, elliptical taper) makes the pattern complex, testing both parts.
        let mut ap = ApertureParams { samples_across: 64, ..ApertureParams::default() };
        ap.legs = FeedLegs { count: 3, width_m: 0.3, first_angle_rad: 0.2 };
        ap.taper =
            crate::Taper::ParabolicOnPedestal { edge_taper_db_x: 8.0, edge_taper_db_y: 14.0 };
        let err = max_error_vs_direct(&ap, &TableParams::default(), 400);
        assert!(err < 1e-7, "max |table − direct| = {err:e}");
        // The default, point-symmetric aperture takes the real-table path: same budget.
        let sym = ApertureParams { samples_across: 64, ..ApertureParams::default() };
        let s = ApertureSamples::new(&sym).unwrap();
        assert!(PatternTable::new(&s, 12.0, 0.3, &TableParams::default()).unwrap().is_real());
        let err_sym = max_error_vs_direct(&sym, &TableParams::default(), 400);
        assert!(err_sym < 1e-7, "symmetric aperture: {err_sym:e}");
        // A coarse table must be worse, so the test can fail.
        let coarse = TableParams { oversampling: 3.0, interpolation_points: 4 };
        let err_c = max_error_vs_direct(&ap, &coarse, 100);
        assert!(err_c > 1e-5, "coarse error {err_c:e} suspiciously small");
    }

    #[test]
    fn gradient_matches_centred_difference_of_direct_sum() {
        // Slow reference for the derivative: centred difference of the direct sum with step
        // h = 1e-4 / D; truncation error ~ (πD h)² |E| / 6 ~ 1.6e-8 × |∇E| and rounding
        // ~ 1e-16 / h ~ 1e-11, so 1e-6 relative to the gradient scale D is comfortable.
        let ap = ApertureParams { samples_across: 64, ..ApertureParams::default() };
        let s = ApertureSamples::new(&ap).unwrap();
        let d = ap.dish_diameter_m;
        let t = PatternTable::new(&s, d, 3.0 / d, &TableParams::default()).unwrap();
        let h = 1e-4 / d;
        for &(p, q) in &[(0.031, -0.017), (0.09, 0.05), (-0.12, 0.003)] {
            let (_, gp, gq) = t.value_and_gradient(p, q);
            let fp = (s.direct_pattern(p + h, q) - s.direct_pattern(p - h, q)) / (2.0 * h);
            let fq = (s.direct_pattern(p, q + h) - s.direct_pattern(p, q - h)) / (2.0 * h);
            assert!((gp - fp).norm() < 1e-6 * d, "{gp} vs {fp}");
            assert!((gq - fq).norm() < 1e-6 * d, "{gq} vs {fq}");
        }
    }

    #[test]
    fn outside_the_table_is_zero() {
        let ap = ApertureParams { samples_across: 32, ..ApertureParams::default() };
        let s = ApertureSamples::new(&ap).unwrap();
        let t = PatternTable::new(&s, 12.0, 0.2, &TableParams::default()).unwrap();
        let hw = t.covered_half_width();
        assert!(hw >= 0.2);
        assert_eq!(t.value(hw + 2.0 * t.spacing(), 0.0), Complex64::new(0.0, 0.0));
        assert!((t.value(0.0, 0.0) - 1.0).norm() < 1e-14);
    }
}
