//! Wideband A-projection: conjugate-frequency choices on a uniform circular aperture (Airy
//! pattern), the fitted choice's optimality by its own criterion, the non-adjoint gridding pair
//! and its true adjoint. Exports the beam-level band variations for
//! `tests/crosscheck/test_aproj.py`, which recomputes them from 2 J1(x)/x with scipy.
mod common;

use beamfloor_beam::{ApertureParams, DishBeam, DishBeamParams, EffectParams};
use beamfloor_core::{ImageGeometry, Pol, VoltageBeam};
use beamfloor_imaging::{
    first_null_radius_rad, fitted_conjugate_frequencies, main_lobe_mismatch,
    reciprocal_conjugate_frequency, AProjection, AProjectionParams, ConjugateFitParams,
    ConjugateFrequency, GridOutput, ImagingOperator, WRange,
};
use common::{random_image, random_values, random_visset, rng};
use std::path::PathBuf;

const NU0: f64 = 1.5e9;
const D: f64 = 12.0;

/// The Airy beam: a uniformly illuminated, unblocked 12 m disc, sampled finely (512 across:
/// the beam crate measured ≤ 6e-6 of the field against the analytic Airy pattern), no effects
/// besides frequency scaling.
fn airy_beam() -> DishBeam {
    let params = DishBeamParams {
        aperture: ApertureParams { samples_across: 512, ..ApertureParams::uniform_disc(D) },
        // Default effects: frequency scaling only (rotation does nothing to a circular disc).
        effects: EffectParams::default(),
        ref_freq_hz: NU0,
        max_abs_lm: 0.05,
        max_freq_hz: 3.0e9,
        ..DishBeamParams::default()
    };
    DishBeam::new(&params, vec![0.0], vec![0.0]).expect("valid beam")
}

fn band() -> Vec<f64> {
    (0..21).map(|i| 1.0e9 + 5.0e7 * i as f64).collect()
}

fn fit_params() -> ConjugateFitParams {
    ConjugateFitParams {
        ref_freq_hz: NU0,
        search_min_hz: 0.5e9,
        search_max_hz: 2.9e9,
        null_search_max_rad: 0.04,
        bin: 0,
        n_radii: 48,
        n_azimuths: 4,
    }
}

/// √(2ν0² − ν²): the exact conjugate for a Gaussian power pattern exp(−a r² ν²), since then
/// P(ν) P(ν_c) = exp(−a r² (ν² + ν_c²)) = P(ν0)² (derivation from the Gaussian's definition).
fn gaussian_conjugate(f: f64) -> f64 {
    (2.0 * NU0 * NU0 - f * f).sqrt()
}

/// (max − min)/mean over the band of P(r; ν) P(r; ν_c(ν)) at radius r along l.
fn band_variation(b: &DishBeam, r: f64, conj: &[f64]) -> f64 {
    let v: Vec<f64> = band()
        .iter()
        .zip(conj)
        .map(|(&f, &c)| b.power(0, 0, f, Pol::R, r, 0.0) * b.power(0, 0, c, Pol::R, r, 0.0))
        .collect();
    let (lo, hi) = v.iter().fold((f64::INFINITY, 0.0f64), |(a, z), &x| (a.min(x), z.max(x)));
    (hi - lo) / (v.iter().sum::<f64>() / v.len() as f64)
}

fn export_dir() -> PathBuf {
    std::env::var_os("BEAMFLOOR_CROSSCHECK_DIR").map(PathBuf::from).unwrap_or_else(|| {
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/crosscheck")
    })
}

#[test]
fn conjugate_choices_flatten_the_band_and_the_fit_is_best_by_its_criterion() {
    let b = airy_beam();
    let freqs = band();
    let p = fit_params();
    let fitted = fitted_conjugate_frequencies(&b, &freqs, &p).expect("fit");
    let reciprocal: Vec<f64> =
        freqs.iter().map(|&f| reciprocal_conjugate_frequency(f, NU0)).collect();
    let gaussian: Vec<f64> = freqs.iter().map(|&f| gaussian_conjugate(f)).collect();
    let r0 = first_null_radius_rad(&b, &p).expect("null");
    // Airy first null at 1.2197 λ/D (Born & Wolf, Principles of Optics, §8.5.2); the scan step
    // is 1e-5 rad, the table error far smaller.
    let want_r0 = 1.219_67 * 299_792_458.0 / NU0 / D;
    assert!((r0 - want_r0).abs() < 2e-5, "{r0} vs {want_r0}");
    // By construction the fit minimises the criterion; it must not lose to either closed form
    // at any channel (golden section converges to 1e-7 relative in ν_c, and a 1e-9 relative
    // slack absorbs rounding of a criterion that is flat at its minimum).
    for (k, &f) in freqs.iter().enumerate() {
        let d = |c: f64| main_lobe_mismatch(&b, f, c, r0, &p);
        let (df, dr, dg) = (d(fitted[k]), d(reciprocal[k]), d(gaussian[k]));
        assert!(df <= dr * (1.0 + 1e-9) + 1e-18, "channel {k}: {df:e} vs reciprocal {dr:e}");
        assert!(df <= dg * (1.0 + 1e-9) + 1e-18, "channel {k}: {df:e} vs gaussian {dg:e}");
    }
    // At ν0 every choice is ν0 itself.
    assert!((fitted[10] - NU0).abs() < 1e-3 * NU0, "{}", fitted[10]);

    let levels = [0.8, 0.5, 0.3, 0.1];
    let radii: Vec<f64> =
        levels.iter().map(|&x| b.power_level_radius_rad(NU0, x).expect("radius")).collect();
    let same = freqs.clone();
    let table: Vec<[f64; 4]> = radii
        .iter()
        .map(|&r| {
            [
                band_variation(&b, r, &same),
                band_variation(&b, r, &reciprocal),
                band_variation(&b, r, &gaussian),
                band_variation(&b, r, &fitted),
            ]
        })
        .collect();
    for (lv, row) in levels.iter().zip(&table) {
        println!(
            "level {lv}: P² {:.3}  reciprocal {:.3}  sqrt(2ν0²−ν²) {:.3}  fitted {:.3}",
            row[0], row[1], row[2], row[3]
        );
    }
    // Every conjugate choice flattens the band relative to plain A-projection inside the
    // half-power radius (the purpose of the method, Bhatnagar et al. 2013).
    for row in &table[..2] {
        assert!(row[1] < row[0] && row[2] < row[0] && row[3] < row[0], "{row:?}");
    }
    let fmt = |v: &[f64]| v.iter().map(|x| format!("{x:e}")).collect::<Vec<_>>().join(",");
    let json = format!(
        "{{\"ref_freq_hz\":{NU0:e},\"dish_diameter_m\":{D:e},\"frequencies_hz\":[{}],\
         \"levels\":[{}],\"radii_rad\":[{}],\"first_null_rad\":{r0:e},\
         \"fitted_hz\":[{}],\"n_radii\":{},\
         \"variation_same\":[{}],\"variation_reciprocal\":[{}],\"variation_gaussian\":[{}],\
         \"variation_fitted\":[{}]}}",
        fmt(&freqs),
        fmt(&levels),
        fmt(&radii),
        fmt(&fitted),
        p.n_radii,
        fmt(&table.iter().map(|r| r[0]).collect::<Vec<_>>()),
        fmt(&table.iter().map(|r| r[1]).collect::<Vec<_>>()),
        fmt(&table.iter().map(|r| r[2]).collect::<Vec<_>>()),
        fmt(&table.iter().map(|r| r[3]).collect::<Vec<_>>()),
    );
    let dir = export_dir();
    std::fs::create_dir_all(&dir).expect("create export dir");
    std::fs::write(dir.join("aproj_wideband.json"), json).expect("write export");
}

#[test]
fn wideband_gridding_is_not_the_adjoint_but_forward_adjoint_is() {
    let b = airy_beam();
    let mut r = rng(40);
    let vis = random_visset(&mut r, 30, 3, 1.0e9, 300.0, 40.0);
    let g = ImageGeometry::new(32, 32, 2e-3);
    let params = AProjectionParams {
        conjugate: ConjugateFrequency::Reciprocal { ref_freq_hz: NU0 },
        ..AProjectionParams::default()
    };
    let w = WRange::of_visibilities(&vis).expect("valid set");
    let op = AProjection::new(g, &b, vec![0], vis.frequencies_hz.clone(), w, params)
        .expect("valid plan");
    assert!(op.is_wideband());
    // 2 sets of 1 bin × 3 channels × 2 hands of 32² f64.
    assert_eq!(op.cache_bytes_needed(), 2 * 3 * 2 * 32 * 32 * 8);
    let adj = op.forward_adjoint();
    let x = random_image(&mut r, 32, 32);
    let y = random_values(&mut r, vis.data.dim());
    let ones = vec![vec![1.0; 3]];
    let gx = op.degrid(&vis, std::slice::from_ref(&x), &ones).expect("degrid");
    let lhs: f64 = gx.iter().zip(y.iter()).map(|(a, b)| (a.conj() * b).re).sum();
    let out = [GridOutput { source: 0, channel_factors: vec![1.0; 3] }];
    let inner = |o: &AProjection<'_, DishBeam>| -> f64 {
        let gy = o.grid(&vis, &[y.view()], &out).expect("grid");
        x.iter().zip(gy[0].iter()).map(|(a, b)| a * b).sum()
    };
    // The true adjoint: dot-product test to 1e-10 (rounding only, as for plain A-projection).
    let rhs = inner(&adj);
    assert!((lhs - rhs).abs() <= 1e-10 * lhs.abs(), "{lhs} vs {rhs}");
    // The conjugate-frequency gridder differs on purpose: the kernel beams at 1 and 2 GHz
    // change by tens of per cent over this ±32 mrad field, far above rounding.
    let wide = inner(&op);
    assert!((lhs - wide).abs() > 1e-3 * lhs.abs(), "{lhs} vs {wide}");
    // Sanity of the reciprocal map (ν0²/ν by definition).
    assert_eq!(op.gridding_frequencies_hz()[0], NU0 * NU0 / 1.0e9);
    assert_eq!(b.n_antennas(), 1);
}
