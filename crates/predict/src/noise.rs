use crate::{NoiseModel, PredictError, VisSet};
use beamfloor_core::{derive_seed, SeedPurpose};
use ndarray::Array3;
use num_complex::Complex64;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use rayon::prelude::*;

impl NoiseModel {
    /// Thermal noise of one visibility, Jy, per real and per imaginary part of one polarization
    /// product, from the radiometer equation (Thompson, Moran & Swenson, Interferometry and
    /// Synthesis in Radio Astronomy, 3rd ed., §6.2, eq. 6.50 with SEFD = 2 k T_sys / A_eff):
    ///
    /// σ = SEFD / (η_c √(2 Δν τ)).
    ///
    /// Example: SEFD 420 Jy, η_c = 1, Δν = 1 MHz, τ = 10 s give σ = 0.093915 Jy.
    pub fn sigma_jy(&self, channel_width_hz: f64, integration_s: f64) -> Result<f64, PredictError> {
        let checks = [
            ("sefd_jy", self.sefd_jy, self.sefd_jy > 0.0, "finite and > 0"),
            (
                "correlator_efficiency",
                self.correlator_efficiency,
                self.correlator_efficiency > 0.0 && self.correlator_efficiency <= 1.0,
                "in (0, 1]",
            ),
            ("channel_width_hz", channel_width_hz, channel_width_hz > 0.0, "finite and > 0"),
            ("integration_s", integration_s, integration_s > 0.0, "finite and > 0"),
        ];
        for (name, value, ok, expected) in checks {
            if !(ok && value.is_finite()) {
                return Err(PredictError::Parameter { name, value, expected });
            }
        }
        Ok(self.sefd_jy
            / (self.correlator_efficiency * (2.0 * channel_width_hz * integration_s).sqrt()))
    }
}

/// Add independent Gaussian noise of standard deviation `sigma_jy` to the real and imaginary part
/// of every sample of `data` (`[row][channel][pol]`).
///
/// Row r draws from `ChaCha8Rng::seed_from_u64(derive_seed(seed, SeedPurpose::Noise, r))`, channel
/// by channel, polarization by polarization, real part before imaginary, so the noise of a row
/// does not depend on thread count or on which other rows exist.
pub fn add_thermal_noise(data: &mut Array3<Complex64>, sigma_jy: f64, seed: u64) {
    let row_len = data.shape()[1] * data.shape()[2];
    if row_len == 0 {
        return;
    }
    let noise_row = |(row, samples): (usize, &mut [Complex64])| {
        let mut rng = ChaCha8Rng::seed_from_u64(derive_seed(seed, SeedPurpose::Noise, row as u64));
        for s in samples {
            let re: f64 = StandardNormal.sample(&mut rng);
            let im: f64 = StandardNormal.sample(&mut rng);
            *s += Complex64::new(sigma_jy * re, sigma_jy * im);
        }
    };
    match data.as_slice_mut() {
        Some(slice) => slice.par_chunks_mut(row_len).enumerate().for_each(noise_row),
        None => {
            for (row, mut lane) in data.outer_iter_mut().enumerate() {
                let mut samples: Vec<Complex64> = lane.iter().copied().collect();
                noise_row((row, &mut samples));
                lane.iter_mut().zip(samples).for_each(|(d, s)| *d = s);
            }
        }
    }
}

/// Naturally weighted Stokes I image noise, Jy/beam, implied by visibility noise `sigma_jy` (per
/// real and imaginary part of one polarization product) over `n_unflagged_per_correlation`
/// samples (row × channel) that are unflagged in both RR and LL:
///
/// σ_I = σ / √(2 N).
///
/// Derivation: I = (RR + LL)/2 has independent noise σ/√2 in each of its real and imaginary
/// parts. A pixel of the naturally weighted dirty image (equal weights, normalised so a point of
/// flux S gives S) is the mean over the N Stokes I samples of Re(V_k e^{iθ_k}) — each sample's
/// Hermitian conjugate contributes the same real part, so it adds no independent noise — and a
/// phase rotation keeps the real part's variance at σ²/2; the mean of N independent such terms
/// has variance σ²/(2N). This agrees with Thompson, Moran & Swenson (3rd ed., eq. 6.62),
/// σ_I = SEFD / (η_c √(n_p N_a(N_a − 1) Δν τ_total)), for n_p = 2 polarizations, N_a(N_a − 1)/2
/// baselines and N = baselines × channels × time samples.
pub fn stokes_i_image_noise_jy(sigma_jy: f64, n_unflagged_per_correlation: usize) -> f64 {
    sigma_jy / (2.0 * n_unflagged_per_correlation as f64).sqrt()
}

/// Number of (row, channel) samples of `vis` unflagged in every correlation (for
/// [`stokes_i_image_noise_jy`]).
pub fn unflagged_samples_per_correlation(vis: &VisSet) -> usize {
    vis.flags
        .outer_iter()
        .map(|row| row.outer_iter().filter(|c| c.iter().all(|f| !f)).count())
        .sum()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn radiometer_check_value() {
        // SEFD 420 Jy, η_c = 1, Δν = 1 MHz, τ = 10 s: 420 / √(2e7) = 0.0939149... Jy
        // (Thompson, Moran & Swenson §6.2 formula, evaluated by hand).
        let n = NoiseModel { sefd_jy: 420.0, correlator_efficiency: 1.0 };
        let s = n.sigma_jy(1e6, 10.0).unwrap();
        assert!((s - 0.093915).abs() < 5e-7, "{s}");
        let bad = NoiseModel { sefd_jy: 420.0, correlator_efficiency: 1.5 };
        assert!(matches!(bad.sigma_jy(1e6, 10.0), Err(PredictError::Parameter { .. })));
        assert!(n.sigma_jy(0.0, 10.0).is_err());
    }

    #[test]
    fn noise_statistics_and_reproducibility() {
        // 40 000 complex samples: the sample standard deviation of 80 000 normal draws has a
        // relative standard error 1/√(2·80 000) ≈ 0.25%, so 2% is an 8σ bound; the mean within
        // 5 standard errors.
        let sigma = 0.093915;
        let mut a = Array3::<Complex64>::zeros((1000, 20, 2));
        add_thermal_noise(&mut a, sigma, 7);
        let vals: Vec<f64> = a.iter().flat_map(|c| [c.re, c.im]).collect();
        let n = vals.len() as f64;
        let mean = vals.iter().sum::<f64>() / n;
        let std = (vals.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
        assert!((std / sigma - 1.0).abs() < 0.02, "std {std}");
        assert!(mean.abs() < 5.0 * sigma / n.sqrt(), "mean {mean}");
        // Re and Im uncorrelated (correlation coefficient within 5/√N of zero).
        let cov: f64 = a.iter().map(|c| c.re * c.im).sum::<f64>() / (n / 2.0);
        assert!((cov / (sigma * sigma)).abs() < 5.0 / (n / 2.0).sqrt());
        // Same seed, same noise; the noise of a row does not depend on the other rows.
        let mut b = Array3::<Complex64>::zeros((10, 20, 2));
        add_thermal_noise(&mut b, sigma, 7);
        assert_eq!(b.outer_iter().next(), a.outer_iter().next());
        let mut c = Array3::<Complex64>::zeros((10, 20, 2));
        add_thermal_noise(&mut c, sigma, 8);
        assert_ne!(b, c);
    }

    #[test]
    fn stokes_i_noise_by_monte_carlo() {
        // Slow reference for σ_I = σ/√(2N): form I = (RR+LL)/2 from noise-only data and average
        // its real part over N samples (the natural-weight dirty image at the phase centre), many
        // times. With 400 trials the sample std has 3.5% standard error; 15% tolerance is > 4σ.
        let (sigma, n_rows, n_chan) = (1.0, 50, 4);
        let trials = 400;
        let mut pixel = Vec::with_capacity(trials);
        for t in 0..trials {
            let mut d = Array3::<Complex64>::zeros((n_rows, n_chan, 2));
            add_thermal_noise(&mut d, sigma, 1000 + t as u64);
            let sum: f64 = d
                .outer_iter()
                .flat_map(|r| r.outer_iter().map(|c| 0.5 * (c[0].re + c[1].re)).collect::<Vec<_>>())
                .sum();
            pixel.push(sum / (n_rows * n_chan) as f64);
        }
        let std = (pixel.iter().map(|p| p * p).sum::<f64>() / trials as f64).sqrt();
        let want = stokes_i_image_noise_jy(sigma, n_rows * n_chan);
        assert!((std / want - 1.0).abs() < 0.15, "{std} vs {want}");
    }
}
