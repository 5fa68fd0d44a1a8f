//! Helpers shared by the integration tests.
#![allow(dead_code)]

use beamfloor_core::{derive_seed, ImageGeometry, SeedPurpose};
use beamfloor_metrics::SourceTruth;
use ndarray::Array2;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};

/// Seeded N(0, σ²) image of shape [ny, nx].
pub fn gaussian_noise(ny: usize, nx: usize, sigma: f64, index: u64) -> Array2<f64> {
    let mut rng = ChaCha8Rng::seed_from_u64(derive_seed(20260, SeedPurpose::Test, index));
    Array2::from_shape_fn((ny, nx), |_| {
        let z: f64 = StandardNormal.sample(&mut rng);
        sigma * z
    })
}

/// Seeded uniform values in [0, 1).
pub fn uniform(n: usize, index: u64) -> Vec<f64> {
    use rand::Rng;
    let mut rng = ChaCha8Rng::seed_from_u64(derive_seed(20260, SeedPurpose::Test, index));
    (0..n).map(|_| rng.random::<f64>()).collect()
}

/// A point source with a flat spectrum.
pub fn point(name: &str, l: f64, m: f64, flux: f64) -> SourceTruth {
    SourceTruth {
        name: name.into(),
        l_rad: l,
        m_rad: m,
        flux_ref_jy: flux,
        alpha_power_law: 0.0,
        beta_power_law: 0.0,
        alpha_fit: 0.0,
        beta_fit: 0.0,
        extent_rad: 0.0,
    }
}

/// Add a circular Gaussian of peak `amp` and FWHM `fwhm` centred on (l, m):
/// amp · exp(−4 ln 2 · d² / fwhm²) (FWHM definition of a Gaussian).
pub fn add_gaussian(img: &mut Array2<f64>, g: &ImageGeometry, l: f64, m: f64, amp: f64, fwhm: f64) {
    for ((iy, ix), v) in img.indexed_iter_mut() {
        let (pl, pm) = g.lm_of_pixel(ix as f64, iy as f64);
        let d2 = (pl - l).powi(2) + (pm - m).powi(2);
        *v += amp * (-4.0 * std::f64::consts::LN_2 * d2 / (fwhm * fwhm)).exp();
    }
}
