//! Floor statistics, peaks and spectral-index extraction against textbook results.
mod common;

use beamfloor_core::ImageGeometry;
use beamfloor_metrics::{
    masked_statistics, median_in_place, peak_abs, spectral_index_from_taylor, valid_region,
    FloorStatistics, MaskParams, MetricsError, MAD_TO_SIGMA,
};
use common::{gaussian_noise, uniform};
use ndarray::Array2;

const N_SIDE: usize = 256;

fn full_mask_256() -> (ImageGeometry, Array2<bool>) {
    let g = ImageGeometry::new(N_SIDE, N_SIDE, 1e-5);
    let params = MaskParams { exclusion_beams: 5.0, edge_margin_fraction: 0.0 };
    let mask = valid_region(&g, &params, None).unwrap();
    assert_eq!(mask.iter().filter(|&&b| b).count(), N_SIDE * N_SIDE);
    (g, mask)
}

#[test]
fn rms_of_unit_gaussian_noise_is_one_within_sampling_error() {
    // For N independent N(0, σ²) samples, the RMS about zero and the sample standard deviation
    // both have standard error σ/sqrt(2N) to leading order (delta method on Var(x²) = 2σ⁴;
    // textbook result, e.g. Kendall & Stuart, The Advanced Theory of Statistics, vol. 1). We
    // allow 3 standard errors: 3/sqrt(2·65536) ≈ 0.0083 (the seed is fixed, so this is a check
    // of correctness, not a flaky bound).
    let (g, mask) = full_mask_256();
    let noise = gaussian_noise(N_SIDE, N_SIDE, 1.0, 1);
    let s = masked_statistics(&noise, &mask, &g, "noise").unwrap();
    let n = (N_SIDE * N_SIDE) as f64;
    let bound = 3.0 / (2.0 * n).sqrt();
    eprintln!(
        "256² N(0,1): rms {} std {} mean {} (bound {bound})",
        s.rms_jy_per_beam, s.rms_mean_removed_jy_per_beam, s.mean_jy_per_beam
    );
    assert_eq!(s.n_pixels, N_SIDE * N_SIDE);
    assert!((s.rms_jy_per_beam - 1.0).abs() < bound, "rms {}", s.rms_jy_per_beam);
    assert!((s.rms_mean_removed_jy_per_beam - 1.0).abs() < bound);
    // The mean has standard error σ/sqrt(N); 3 of them.
    assert!(s.mean_jy_per_beam.abs() < 3.0 / n.sqrt());
    // Scaling: σ = 2.5e-4 gives 2.5e-4 times the same numbers (same seed), to rounding.
    let scaled = noise.mapv(|x| 2.5e-4 * x);
    let s2 = masked_statistics(&scaled, &mask, &g, "noise").unwrap();
    // Relative 1e-13: N = 65536 rounded additions, each ≤ 1.1e-16 relative.
    assert!((s2.rms_jy_per_beam / (2.5e-4 * s.rms_jy_per_beam) - 1.0).abs() < 1e-13);
}

#[test]
fn mad_sigma_is_consistent_for_gaussian_noise() {
    // MAD · 1/Φ⁻¹(3/4) is a consistent estimator of σ for Gaussian data with asymptotic
    // variance 1.3605 σ²/N (Gaussian efficiency 36.75 %; Rousseeuw & Croux 1993, JASA 88, 1273).
    // Standard error for N = 65536: sqrt(1.3605/65536) ≈ 0.0046; we allow 3 of them.
    let (g, mask) = full_mask_256();
    let noise = gaussian_noise(N_SIDE, N_SIDE, 1.0, 2);
    let s = masked_statistics(&noise, &mask, &g, "noise").unwrap();
    let n = (N_SIDE * N_SIDE) as f64;
    eprintln!(
        "256² N(0,1): MAD sigma {} (bound {})",
        s.mad_sigma_jy_per_beam,
        3.0 * (1.3605 / n).sqrt()
    );
    assert!((s.mad_sigma_jy_per_beam - 1.0).abs() < 3.0 * (1.3605 / n).sqrt());
    // Φ⁻¹(3/4) = 0.6744897501960817 (quantile of the standard normal; Abramowitz & Stegun
    // table 26.5, also scipy.stats.norm.ppf(0.75)): the constant is its reciprocal.
    assert!((MAD_TO_SIGMA * 0.674_489_750_196_081_7 - 1.0).abs() < 1e-15);
}

#[test]
fn mad_resists_outliers_where_rms_does_not() {
    // 1 % of the pixels replaced by 100σ: the RMS grows to about sqrt(0.99 + 0.01·10⁴) ≈ 10,
    // while the median and MAD move by O(1 %) (breakdown point of the MAD is 50 %; Rousseeuw &
    // Croux 1993). Bounds: RMS > 9, MAD-σ within 3 % of 1.
    let (g, mask) = full_mask_256();
    let mut noise = gaussian_noise(N_SIDE, N_SIDE, 1.0, 3);
    for (i, v) in noise.iter_mut().enumerate() {
        if i % 100 == 0 {
            *v = 100.0;
        }
    }
    let s = masked_statistics(&noise, &mask, &g, "noise").unwrap();
    assert!(s.rms_jy_per_beam > 9.0);
    assert!((s.mad_sigma_jy_per_beam - 1.0).abs() < 0.03, "{}", s.mad_sigma_jy_per_beam);
}

/// Slow reference: median by full sort.
fn median_by_sort(values: &[f64]) -> f64 {
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

#[test]
fn median_by_selection_matches_sorting() {
    for (i, n) in [1usize, 2, 3, 4, 7, 10, 101, 1000, 1001].into_iter().enumerate() {
        let values = uniform(n, 100 + i as u64);
        let mut work = values.clone();
        assert_eq!(median_in_place(&mut work), median_by_sort(&values), "n = {n}");
    }
    // Textbook examples: median of {1, 3, 2} is 2, of {4, 1, 3, 2} is 2.5, MAD of
    // {1, 1, 2, 2, 4, 6, 9} is 1 (median 2, deviations {1,1,0,0,2,4,7}).
    assert_eq!(median_in_place(&mut [1.0, 3.0, 2.0]), 2.0);
    assert_eq!(median_in_place(&mut [4.0, 1.0, 3.0, 2.0]), 2.5);
    let s = FloorStatistics::of_values(&mut [1.0, 1.0, 2.0, 2.0, 4.0, 6.0, 9.0]);
    assert!((s.mad_sigma_jy_per_beam - MAD_TO_SIGMA).abs() < 1e-15);
    // RMS of {3, 4} about zero is sqrt(12.5); sample std is sqrt(0.5).
    let s = FloorStatistics::of_values(&mut [3.0, 4.0]);
    assert!((s.rms_jy_per_beam - 12.5f64.sqrt()).abs() < 1e-15);
    assert!((s.rms_mean_removed_jy_per_beam - 0.5f64.sqrt()).abs() < 1e-15);
}

#[test]
fn peak_matches_brute_force_argmax() {
    let g = ImageGeometry::new(64, 48, 2e-5);
    let mut img = gaussian_noise(48, 64, 1.0, 4);
    img[[10, 50]] = -7.5;
    let p = peak_abs(&img, &g, None, "img").unwrap();
    let mut best = (0.0f64, 0, 0);
    for ((iy, ix), &v) in img.indexed_iter() {
        if v.abs() > best.0.abs() {
            best = (v, iy, ix);
        }
    }
    assert_eq!((p.value_jy_per_beam, p.pixel.iy, p.pixel.ix), best);
    assert_eq!((p.l_rad, p.m_rad), g.lm_of_pixel(50.0, 10.0));
    // Masking the peak out moves the peak elsewhere.
    let mut mask = Array2::from_elem((48, 64), true);
    mask[[10, 50]] = false;
    let p2 = peak_abs(&img, &g, Some(&mask), "img").unwrap();
    assert!(p2.value_jy_per_beam.abs() < 7.5);
}

/// Curved power law S(t) = S0 x^(α + β ln x), x = 1 + t.
fn curved_power_law(s0: f64, alpha: f64, beta: f64, t: f64) -> f64 {
    let lx = (1.0 + t).ln();
    s0 * (alpha * lx + beta * lx * lx).exp()
}

#[test]
fn alpha_beta_from_taylor_terms_match_definition() {
    // The Taylor terms of multi-term MFS are the coefficients of S in t = (ν − ν0)/ν0:
    // I0 = S(0), I1 = S'(0), I2 = S''(0)/2 (Rau & Cornwell 2011, eq. 1–2). We take them by
    // central differences, independent of the closed form. Step h = 1e-4: truncation
    // h²·|S'''|/6 stays below 1e-7 relative for |α| ≤ 2.1, |β| ≤ 0.8 (|S'''/S| < 60), roundoff
    // of the second difference ≈ 2e-16/h² = 2e-8; we require α and β back to 1e-6.
    let h = 1e-4;
    for &(s0, alpha, beta) in
        &[(1.0, -0.7, 0.0), (2.5, 0.4, -0.3), (0.01, -2.1, 0.8), (5.0, 0.0, 0.0)]
    {
        let f = |t| curved_power_law(s0, alpha, beta, t);
        let i0 = f(0.0);
        let i1 = (f(h) - f(-h)) / (2.0 * h);
        let i2 = 0.5 * (f(h) - 2.0 * f(0.0) + f(-h)) / (h * h);
        let si = spectral_index_from_taylor(&[i0, i1, i2]);
        assert!((si.alpha - alpha).abs() < 1e-6, "alpha {} vs {alpha}", si.alpha);
        assert!((si.beta - beta).abs() < 1e-6, "beta {} vs {beta}", si.beta);
        // With two terms only α is defined.
        let si2 = spectral_index_from_taylor(&[i0, i1]);
        assert_eq!(si2.alpha, si.alpha);
        assert!(si2.beta.is_nan());
    }
    for terms in [&[][..], &[1.0][..], &[0.0, 1.0, 1.0][..], &[-1.0, 0.5, 0.1][..]] {
        assert!(spectral_index_from_taylor(terms).alpha.is_nan());
    }
}

#[test]
fn bad_inputs_are_errors_carrying_the_value() {
    let g = ImageGeometry::new(16, 16, 1e-5);
    let img = Array2::<f64>::zeros((16, 8));
    let mask = Array2::from_elem((16, 16), true);
    assert_eq!(
        masked_statistics(&img, &mask, &g, "residual"),
        Err(MetricsError::ShapeMismatch {
            what: "residual",
            ny: 16,
            nx: 16,
            found_ny: 16,
            found_nx: 8
        })
    );
    let mut img = Array2::<f64>::zeros((16, 16));
    img[[3, 4]] = f64::NAN;
    assert!(matches!(
        masked_statistics(&img, &mask, &g, "residual"),
        Err(MetricsError::NonFinite { iy: 3, ix: 4, .. })
    ));
    let none = Array2::from_elem((16, 16), false);
    assert_eq!(
        masked_statistics(&img, &none, &g, "residual"),
        Err(MetricsError::EmptyMask { what: "residual" })
    );
    let bad = MaskParams { exclusion_beams: 5.0, edge_margin_fraction: 0.5 };
    assert!(matches!(
        valid_region(&g, &bad, None),
        Err(MetricsError::InvalidParameter { value, .. }) if value == 0.5
    ));
}
