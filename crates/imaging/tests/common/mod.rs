//! Helpers shared by the integration tests: synthetic visibility sets with seeded randomness.
#![allow(dead_code)]
use beamfloor_core::{derive_seed, Correlation, SeedPurpose, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3};
use num_complex::Complex64;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// A seeded generator for test stream `index`.
pub fn rng(index: u64) -> ChaCha8Rng {
    ChaCha8Rng::seed_from_u64(derive_seed(20261201, SeedPurpose::Test, index))
}

/// A visibility set with the given uvw (metres) and channels, both hands, zero data, unit
/// weights and no flags.
pub fn visset(uvw_m: Array2<f64>, frequencies_hz: Vec<f64>) -> VisSet {
    let nr = uvw_m.nrows();
    let nc = frequencies_hz.len();
    VisSet {
        frequencies_hz,
        channel_width_hz: 1e6,
        integration_s: 10.0,
        hour_angles_rad: vec![0.0],
        parallactic_angles_rad: vec![0.0],
        phase_centre_ra_rad: 0.0,
        phase_centre_dec_rad: 0.5,
        antenna1: vec![0; nr],
        antenna2: vec![1; nr],
        time_index: vec![0; nr],
        uvw_m,
        data: Array3::zeros((nr, nc, 2)),
        weights: Array3::ones((nr, nc, 2)),
        flags: Array3::from_elem((nr, nc, 2), false),
        correlations: Correlation::BOTH.to_vec(),
        seed: 0,
        truth_hash: String::new(),
    }
}

/// `n_rows` random baselines whose (u, v) at the top channel stay within `max_uv_lambda`
/// wavelengths and |w| within `max_w_lambda`, over `n_chan` channels from `f_lo` to `2 f_lo`.
pub fn random_visset(
    rng: &mut ChaCha8Rng,
    n_rows: usize,
    n_chan: usize,
    f_lo: f64,
    max_uv_lambda: f64,
    max_w_lambda: f64,
) -> VisSet {
    let freqs: Vec<f64> = (0..n_chan)
        .map(|c| f_lo * (1.0 + if n_chan > 1 { c as f64 / (n_chan - 1) as f64 } else { 0.0 }))
        .collect();
    let to_m = SPEED_OF_LIGHT_M_PER_S / freqs[n_chan - 1];
    let uvw = Array2::from_shape_fn((n_rows, 3), |(_, k)| {
        let lim = if k < 2 { max_uv_lambda } else { max_w_lambda };
        rng.random_range(-lim..lim) * to_m
    });
    visset(uvw, freqs)
}

/// Complex standard-normal-ish values (uniform in the unit square, enough for these tests).
pub fn random_values(rng: &mut ChaCha8Rng, shape: (usize, usize, usize)) -> Array3<Complex64> {
    Array3::from_shape_fn(shape, |_| {
        Complex64::new(rng.random_range(-1.0..1.0), rng.random_range(-1.0..1.0))
    })
}

/// A random real image.
pub fn random_image(rng: &mut ChaCha8Rng, ny: usize, nx: usize) -> Array2<f64> {
    Array2::from_shape_fn((ny, nx), |_| rng.random_range(-1.0..1.0))
}

/// Maximum absolute difference divided by the maximum absolute value of the reference.
pub fn max_rel_err<'a>(
    got: impl IntoIterator<Item = Complex64>,
    want: impl IntoIterator<Item = Complex64> + Clone + 'a,
) -> f64 {
    let peak = want.clone().into_iter().map(|w| w.norm()).fold(0.0, f64::max);
    let diff = got.into_iter().zip(want).map(|(g, w)| (g - w).norm()).fold(0.0, f64::max);
    diff / peak
}

/// ‖got − want‖₂ / ‖want‖₂.
pub fn l2_rel_err(
    got: impl IntoIterator<Item = Complex64>,
    want: impl IntoIterator<Item = Complex64> + Clone,
) -> f64 {
    let norm: f64 = want.clone().into_iter().map(|w| w.norm_sqr()).sum::<f64>().sqrt();
    let diff: f64 = got.into_iter().zip(want).map(|(g, w)| (g - w).norm_sqr()).sum::<f64>().sqrt();
    diff / norm
}

/// Real arrays as complex iterators (for the error helpers).
pub fn cx(a: &Array2<f64>) -> Vec<Complex64> {
    a.iter().map(|&x| Complex64::new(x, 0.0)).collect()
}
