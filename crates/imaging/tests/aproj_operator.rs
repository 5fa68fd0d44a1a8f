//! A-projection operator: adjointness, agreement with the direct-sum reference, the sensitivity
//! image, normalisation, the identical-antenna check and the screen cache.
mod common;

use beamfloor_beam::{ApertureParams, DishBeam, DishBeamParams, EffectParams, FeedLegs};
use beamfloor_beam::{PointingParams, SquintParams};
use beamfloor_core::{ImageGeometry, VoltageBeam};
use beamfloor_imaging::{
    dirty_images, flat_noise, flat_sky, screen_cache_bytes, AProjection, AProjectionParams,
    DirectBeamOperator, GridOutput, GridderParams, ImagingOperator, TaylorTerms, WRange,
};
use beamfloor_predict::VisSet;
use common::{max_rel_err, random_image, random_values, random_visset, rng};
use ndarray::{Array2, Array3};
use num_complex::Complex64;
use rand::Rng;
use std::f64::consts::PI;

/// A 12 m dish with three feed legs (no 180° symmetry, so parallactic rotation changes the
/// pattern) and squint (R and L differ), alt-az, on a timeline of 3 PA-bin centres.
fn beam(n_antennas: usize, pointing_rms_rad: f64) -> DishBeam {
    let aperture = ApertureParams {
        legs: FeedLegs { count: 3, width_m: 0.6, first_angle_rad: 0.3 },
        samples_across: 128,
        ..ApertureParams::default()
    };
    let effects = EffectParams {
        squint: SquintParams { fraction_of_hpbw: 0.05, direction_rad: 0.7 },
        pointing: PointingParams {
            random_rms_rad: pointing_rms_rad,
            seed: 3,
            ..Default::default()
        },
        ..EffectParams::default()
    };
    let params = DishBeamParams {
        aperture,
        effects,
        n_antennas,
        ref_freq_hz: 1.5e9,
        max_abs_lm: 0.06,
        max_freq_hz: 2.6e9,
        ..DishBeamParams::default()
    };
    DishBeam::new(&params, vec![-0.6, 0.1, 0.8], vec![0.0, 600.0, 1200.0]).expect("valid beam")
}

/// Random rows over 4 antennas and 6 time samples (mapped to the 3 bins), 3 channels 1–2 GHz.
fn visset(seed: u64, n_rows: usize) -> (VisSet, Vec<usize>) {
    let mut r = rng(seed);
    let mut vis = random_visset(&mut r, n_rows, 3, 1.0e9, 400.0, 60.0);
    vis.hour_angles_rad = vec![0.0; 6];
    vis.parallactic_angles_rad = vec![0.0; 6];
    for k in 0..n_rows {
        vis.time_index[k] = r.random_range(0..6);
        let a = r.random_range(0..3u32);
        vis.antenna1[k] = a;
        vis.antenna2[k] = r.random_range(a + 1..4);
    }
    (vis, vec![0, 0, 1, 1, 2, 2])
}

fn geometry(n: usize) -> ImageGeometry {
    // 64 × 1 mrad covers ±32 mrad: the 12 m dish's main lobe to its first null at 1 GHz.
    ImageGeometry::new(n, n, 64e-3 / n as f64)
}

fn operator<'a>(
    b: &'a DishBeam,
    vis: &VisSet,
    bins: &[usize],
    g: ImageGeometry,
    epsilon: f64,
) -> AProjection<'a, DishBeam> {
    let params = AProjectionParams {
        gridder: GridderParams { epsilon, ..GridderParams::default() },
        ..AProjectionParams::default()
    };
    AProjection::new(
        g,
        b,
        bins.to_vec(),
        vis.frequencies_hz.clone(),
        WRange::of_visibilities(vis).expect("valid set"),
        params,
    )
    .expect("valid plan")
}

fn ones(n: usize) -> Vec<f64> {
    vec![1.0; n]
}

/// ⟨degrid x, y⟩ and ⟨x, grid y⟩ (real inner products, Re Σ conj(a) b).
fn dot_pair<O: ImagingOperator>(op: &O, vis: &VisSet, seed: u64) -> (f64, f64) {
    let g = op.geometry();
    let mut r = rng(seed);
    let x = random_image(&mut r, g.ny, g.nx);
    let y = random_values(&mut r, vis.data.dim());
    let nc = vis.n_channels();
    let gx = op.degrid(vis, std::slice::from_ref(&x), &[ones(nc)]).expect("degrid");
    let gy = op
        .grid(vis, &[y.view()], &[GridOutput { source: 0, channel_factors: ones(nc) }])
        .expect("grid");
    let lhs: f64 = gx.iter().zip(y.iter()).map(|(a, b)| (a.conj() * b).re).sum();
    let rhs: f64 = x.iter().zip(gy[0].iter()).map(|(a, b)| a * b).sum();
    (lhs, rhs)
}

#[test]
fn grid_is_the_adjoint_of_degrid() {
    // Definition of the adjoint; the pair shares every screen and the gridder's exact adjoint
    // pair, so only rounding separates the two sides: 1e-10 relative is ~1e5 ulps of headroom.
    let b = beam(4, 0.0);
    for seed in [1, 2] {
        let (vis, bins) = visset(seed, 40);
        let op = operator(&b, &vis, &bins, geometry(32), 1e-6);
        let (lhs, rhs) = dot_pair(&op, &vis, 10 + seed);
        assert!((lhs - rhs).abs() <= 1e-10 * lhs.abs().max(rhs.abs()), "{lhs} vs {rhs}");
    }
}

/// Degrid and grid of random data through the A operator and the direct-sum reference.
fn errors_against_direct(epsilon: f64) -> (f64, f64) {
    let b = beam(4, 0.0);
    let (vis, bins) = visset(5, 30);
    let g = geometry(64);
    let op = operator(&b, &vis, &bins, g, epsilon);
    let direct = DirectBeamOperator { geometry: g, beam: &b, bin_of_time: bins.clone() };
    let mut r = rng(6);
    let x = random_image(&mut r, g.ny, g.nx);
    let nc = vis.n_channels();
    let fast = op.degrid(&vis, std::slice::from_ref(&x), &[ones(nc)]).expect("degrid");
    let slow = direct.degrid(&vis, &[x], &[ones(nc)]).expect("direct degrid");
    let degrid_err = max_rel_err(fast.iter().copied(), slow.iter().copied());
    let y = random_values(&mut r, vis.data.dim());
    let out = [GridOutput { source: 0, channel_factors: ones(nc) }];
    let fast = op.grid(&vis, &[y.view()], &out).expect("grid");
    let slow = direct.grid(&vis, &[y.view()], &out).expect("direct grid");
    let grid_err = max_rel_err(common::cx(&fast[0]), common::cx(&slow[0]));
    (degrid_err, grid_err)
}

#[test]
fn matches_the_direct_beam_sum_and_improves_with_kernel_support() {
    // The A-term is applied exactly on the pixel grid, so the only approximation left is the
    // exponential-of-semicircle gridder's: its error should follow the requested ε (support
    // W = 4, 6, 8 cells for ε = 1e-3, 1e-5, 1e-7; Barnett et al. 2019 §3). Measured max errors
    // relative to the largest reference value are printed; the bound 20 ε allows for the
    // maximum-norm (vs the paper's typical l2 error) over a few hundred samples.
    let mut last = (f64::INFINITY, f64::INFINITY);
    for epsilon in [1e-3, 1e-5, 1e-7] {
        let (d, g) = errors_against_direct(epsilon);
        println!("epsilon {epsilon:e}: degrid max rel err {d:.2e}, grid max rel err {g:.2e}");
        assert!(d < 20.0 * epsilon && g < 20.0 * epsilon, "eps {epsilon}: {d:e} {g:e}");
        assert!(d < last.0 && g < last.1, "error must shrink as the support grows");
        last = (d, g);
    }
}

#[test]
fn sensitivity_image_is_the_weighted_mean_of_the_beam_power_squared() {
    // Direct evaluation of W = Σ w |E_i E_j*|² / Σ w with the row's own antennas (the definition).
    let b = beam(4, 0.0);
    let (mut vis, bins) = visset(7, 30);
    let mut r = rng(8);
    vis.weights = Array3::from_shape_fn(vis.data.dim(), |_| r.random_range(0.1..2.0));
    vis.flags[[3, 1, 0]] = true;
    let g = geometry(32);
    let op = operator(&b, &vis, &bins, g, 1e-6);
    let w = op.sensitivity_image(&vis, &vis.weights).expect("sensitivity");
    let mut want = Array2::<f64>::zeros((g.ny, g.nx));
    let mut total = 0.0;
    for row in 0..vis.n_rows() {
        let bin = bins[vis.time_index[row] as usize];
        for (c, &f) in vis.frequencies_hz.iter().enumerate() {
            for (k, corr) in vis.correlations.iter().enumerate() {
                if vis.flags[[row, c, k]] {
                    continue;
                }
                let wt = vis.weights[[row, c, k]];
                total += wt;
                for ((iy, ix), v) in want.indexed_iter_mut() {
                    let (l, m) = g.lm_of_pixel(ix as f64, iy as f64);
                    let (a1, a2) = (vis.antenna1[row] as usize, vis.antenna2[row] as usize);
                    *v += wt * b.baseline_product(a1, a2, bin, f, corr.receptor(), l, m).norm_sqr();
                }
            }
        }
    }
    want /= total;
    let err = max_rel_err(common::cx(&w), common::cx(&want));
    // Same beam values summed in a different order: rounding only.
    assert!(err < 1e-12, "{err:e}");
}

#[test]
fn flat_sky_recovers_a_point_source_flux() {
    // At a source's own pixel every phase cancels, so the dirty image there is exactly
    // Σ w A_grid A_data S / Σ w = W · S (from the forward model's definition), whatever the PSF.
    let b = beam(4, 0.0);
    let (mut vis, bins) = visset(9, 40);
    let g = geometry(64);
    let direct = DirectBeamOperator { geometry: g, beam: &b, bin_of_time: bins.clone() };
    let (ix, iy) = (40, 21); // ≈ 11 mrad out: well into the main lobe's outer half at 2 GHz
    let mut model = Array2::<f64>::zeros((g.ny, g.nx));
    model[[iy, ix]] = 2.5;
    vis.data = direct.degrid(&vis, &[model], &[ones(3)]).expect("truth");
    let op = operator(&b, &vis, &bins, g, 1e-8);
    let taylor = TaylorTerms { n_terms: 1, ref_freq_hz: 1.5e9 };
    let dirty = dirty_images(&op, &vis, &vis.weights, &taylor).expect("dirty");
    let w = op.sensitivity_image(&vis, &vis.weights).expect("sensitivity");
    let sky = flat_sky(&dirty.residuals[0], &w, 0.05).expect("flat sky");
    // Gridder ε = 1e-8 relative to Σ|V| sets the tolerance (with margin).
    assert!((sky[[iy, ix]] - 2.5).abs() < 1e-6, "{}", sky[[iy, ix]]);
    let noise = flat_noise(&dirty.residuals[0], &w, 0.05).expect("flat noise");
    assert!((noise[[iy, ix]] - 2.5 * w[[iy, ix]].sqrt()).abs() < 1e-6);
    // Blanking: every pixel with W below 5% of the peak is NaN, every other finite.
    let peak = w.iter().copied().fold(0.0, f64::max);
    for (s, &wv) in sky.iter().zip(w.iter()) {
        assert_eq!(s.is_nan(), wv < 0.05 * peak);
    }
}

#[test]
fn refuses_a_beam_whose_antennas_differ_unless_told() {
    // Random pointing offsets of 2 arcmin make the antennas' patterns differ.
    let b = beam(4, 2.0 / 60.0 * PI / 180.0);
    let (vis, bins) = visset(11, 10);
    let g = geometry(16);
    let w = WRange::of_visibilities(&vis).expect("valid set");
    let make = |assume| {
        let params = AProjectionParams { assume_identical_antennas: assume, ..Default::default() };
        AProjection::new(g, &b, bins.clone(), vis.frequencies_hz.clone(), w, params)
    };
    assert!(make(false).is_err());
    assert!(make(true).is_ok());
}

#[test]
fn uncached_screens_give_the_same_operator_and_the_memory_report_is_exact() {
    let b = beam(4, 0.0);
    let (vis, bins) = visset(12, 20);
    let g = geometry(32);
    let cached = operator(&b, &vis, &bins, g, 1e-6);
    // 3 bins × 3 channels × 2 hands screens of 32² f64 (definition of the cache layout).
    assert_eq!(screen_cache_bytes(g, 3, 3, false), 3 * 3 * 2 * 32 * 32 * 8);
    assert_eq!(cached.cache_bytes_needed(), screen_cache_bytes(g, 3, 3, false));
    assert!(cached.is_cached());
    let params = AProjectionParams {
        gridder: GridderParams { epsilon: 1e-6, ..GridderParams::default() },
        max_cache_bytes: 0,
        ..AProjectionParams::default()
    };
    let w = WRange::of_visibilities(&vis).expect("valid set");
    let lean = AProjection::new(g, &b, bins.clone(), vis.frequencies_hz.clone(), w, params)
        .expect("valid plan");
    assert!(!lean.is_cached());
    let x = random_image(&mut rng(13), g.ny, g.nx);
    let a = cached.degrid(&vis, std::slice::from_ref(&x), &[ones(3)]).expect("degrid");
    let c = lean.degrid(&vis, &[x], &[ones(3)]).expect("degrid");
    // Same screens computed the same way: identical to the last bit.
    assert!(a.iter().zip(c.iter()).all(|(p, q)| p == q));
    let _: Complex64 = a[[0, 0, 0]];
}

#[test]
fn a_time_index_without_a_bin_is_an_error() {
    let b = beam(4, 0.0);
    let (vis, _) = visset(14, 10);
    let op = operator(&b, &vis, &[0, 1, 2], geometry(16), 1e-6);
    let err = op.degrid(&vis, &[Array2::zeros((16, 16))], &[ones(3)]);
    assert!(err.is_err());
}
