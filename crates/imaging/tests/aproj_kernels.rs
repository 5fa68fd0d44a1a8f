//! A-projection with oversampled uv-domain kernels ([`KernelAProjection`]): adjointness, error
//! against the exact references (the direct beam sum and the image-domain [`AProjection`]) as
//! the oversampling grows, wideband gridding, thread-count independence, the memory estimate,
//! the sensitivity image and the refusals.
mod common;

use beamfloor_beam::{ApertureParams, DishBeam, DishBeamParams, EffectParams, FeedLegs, Taper};
use beamfloor_beam::{PointingParams, SquintParams};
use beamfloor_core::ImageGeometry;
use beamfloor_imaging::{
    kernel_beam_half_width_rad, kernel_table_bytes, AProjection, AProjectionParams,
    ConjugateFrequency, DirectBeamOperator, GridOutput, GridderParams, ImagingOperator,
    KernelAProjection, KernelAProjectionParams, KernelInterpolation, WRange,
};
use beamfloor_predict::VisSet;
use common::{max_rel_err, random_image, random_values, random_visset, rng};
use ndarray::{Array2, Array3};
use num_complex::Complex64;
use rand::Rng;
use std::f64::consts::PI;

const NU0: f64 = 1.5e9;

/// 32 × 2 mrad: ±32 mrad, the 12 m dish's main lobe to its first null at 1 GHz.
fn geometry() -> ImageGeometry {
    ImageGeometry::new(32, 32, 2e-3)
}

/// A 12 m dish with three feed legs (no 180° symmetry, so parallactic rotation changes the
/// pattern), an elliptical taper (10 and 16 dB edge tapers), squint (R and L differ), on a
/// timeline of 3 PA-bin centres; tabulated out to the kernels' half-width.
fn beam(n_antennas: usize, pointing_rms_rad: f64) -> DishBeam {
    let aperture = ApertureParams {
        legs: FeedLegs { count: 3, width_m: 0.6, first_angle_rad: 0.3 },
        taper: Taper::ParabolicOnPedestal { edge_taper_db_x: 10.0, edge_taper_db_y: 16.0 },
        samples_across: 64,
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
        ref_freq_hz: NU0,
        max_abs_lm: kernel_beam_half_width_rad(geometry()).expect("valid geometry"),
        max_freq_hz: 2.6e9,
        ..DishBeamParams::default()
    };
    DishBeam::new(&params, vec![-0.6, 0.1, 0.8], vec![0.0, 600.0, 1200.0]).expect("valid beam")
}

/// Random rows over 4 antennas and 6 time samples (mapped to the 3 bins), 3 channels 1–2 GHz,
/// baselines up to 120 wavelengths (the grid reaches 250).
fn visset(seed: u64, n_rows: usize) -> (VisSet, Vec<usize>) {
    let mut r = rng(seed);
    let mut vis = random_visset(&mut r, n_rows, 3, 1.0e9, 120.0, 30.0);
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

fn params(oversampling: usize, how: KernelInterpolation) -> KernelAProjectionParams {
    KernelAProjectionParams {
        oversampling,
        interpolation: how,
        ..KernelAProjectionParams::default()
    }
}

fn kernel_op<'a>(
    b: &'a DishBeam,
    vis: &VisSet,
    bins: &[usize],
    p: KernelAProjectionParams,
) -> KernelAProjection<'a, DishBeam> {
    let w = WRange::of_visibilities(vis).expect("valid set");
    KernelAProjection::new(geometry(), b, bins.to_vec(), vis.frequencies_hz.clone(), w, p)
        .expect("valid plan")
}

fn ones(n: usize) -> Vec<f64> {
    vec![1.0; n]
}

fn grid_one<O: ImagingOperator>(op: &O, vis: &VisSet, y: &Array3<Complex64>) -> Array2<f64> {
    let out = [GridOutput { source: 0, channel_factors: ones(vis.n_channels()) }];
    op.grid(vis, &[y.view()], &out).expect("grid").remove(0)
}

#[test]
fn grid_is_the_adjoint_of_degrid() {
    // Definition of the adjoint, ⟨degrid x, y⟩ = ⟨x, grid y⟩: the pair uses the same
    // interpolated kernels (conjugated), w weights and screens, so only rounding separates the
    // two sides; 1e-10 relative is ~1e5 ulps of headroom.
    let b = beam(4, 0.0);
    let (vis, bins) = visset(1, 40);
    for how in [KernelInterpolation::Bilinear, KernelInterpolation::Nearest] {
        let op = kernel_op(&b, &vis, &bins, params(4, how));
        let mut r = rng(2);
        let x = random_image(&mut r, 32, 32);
        let y = random_values(&mut r, vis.data.dim());
        let gx = op.degrid(&vis, std::slice::from_ref(&x), &[ones(3)]).expect("degrid");
        let lhs: f64 = gx.iter().zip(y.iter()).map(|(a, b)| (a.conj() * b).re).sum();
        let gy = grid_one(&op, &vis, &y);
        let rhs: f64 = x.iter().zip(gy.iter()).map(|(a, b)| a * b).sum();
        assert!((lhs - rhs).abs() <= 1e-10 * lhs.abs().max(rhs.abs()), "{how:?}: {lhs} vs {rhs}");
    }
}

/// Max relative errors (degrid, grid) of `op` against `reference` on random data.
fn errors<A: ImagingOperator>(
    op: &A,
    reference: (&Array3<Complex64>, &Array2<f64>),
    vis: &VisSet,
    x: &Array2<f64>,
    y: &Array3<Complex64>,
) -> (f64, f64) {
    let d = op.degrid(vis, std::slice::from_ref(x), &[ones(vis.n_channels())]).expect("degrid");
    let g = grid_one(op, vis, y);
    (
        max_rel_err(d.iter().copied(), reference.0.iter().copied()),
        max_rel_err(common::cx(&g), common::cx(reference.1)),
    )
}

#[test]
fn error_against_the_exact_operators_falls_with_oversampling() {
    let b = beam(4, 0.0);
    let (vis, bins) = visset(5, 30);
    let g = geometry();
    let mut r = rng(6);
    let x = random_image(&mut r, g.ny, g.nx);
    let y = random_values(&mut r, vis.data.dim());
    let nc = vis.n_channels();
    let direct = DirectBeamOperator { geometry: g, beam: &b, bin_of_time: bins.clone() };
    let direct_d = direct.degrid(&vis, std::slice::from_ref(&x), &[ones(nc)]).expect("degrid");
    let direct_g = grid_one(&direct, &vis, &y);
    let w = WRange::of_visibilities(&vis).expect("valid set");
    let exact = AProjection::new(
        g,
        &b,
        bins.clone(),
        vis.frequencies_hz.clone(),
        w,
        AProjectionParams::default(),
    )
    .expect("valid plan");
    let exact_d = exact.degrid(&vis, std::slice::from_ref(&x), &[ones(nc)]).expect("degrid");
    let exact_g = grid_one(&exact, &vis, &y);
    for how in [KernelInterpolation::Nearest, KernelInterpolation::Bilinear] {
        let mut last = f64::INFINITY;
        for o in [2, 4, 8, 16, 32] {
            let op = kernel_op(&b, &vis, &bins, params(o, how));
            let (dd, dg) = errors(&op, (&direct_d, &direct_g), &vis, &x, &y);
            let (ed, eg) = errors(&op, (&exact_d, &exact_g), &vis, &x, &y);
            println!(
                "{how:?} O = {o:2}: vs direct sum degrid {dd:.2e} grid {dg:.2e}; vs image-domain degrid {ed:.2e} grid {eg:.2e}; supports {:?}",
                op.table_estimate()
            );
            // The kernel operator and the image-domain one apply the same beam; their
            // difference is the kernel's, so both comparisons must agree to its error.
            assert!((ed - dd).abs() <= 1e-2 * dd && (eg - dg).abs() <= 1e-2 * dg);
            let worst = dd.max(dg);
            // Non-increasing in O (slack 1.2 for the maximum norm's noise). Bilinear must fall
            // close to the 1/O² of linear interpolation (error h²/8 |K''| for spacing h = 1/O,
            // e.g. Press et al., Numerical Recipes, §3.1): at least 2.8× per doubling (4×
            // in theory; measured 3.8–4.4×).
            let factor = if how == KernelInterpolation::Bilinear { 1.0 / 2.8 } else { 1.2 };
            if o > 2 {
                assert!(worst <= factor * last, "{how:?} O = {o}: {worst:e} after {last:e}");
            }
            if how == KernelInterpolation::Bilinear && o == 16 {
                // The default. After dividing out the hat's mean gain sinc²(ξ/O) the residual
                // per axis is the aliased copies Σ_{m≠0} sinc²(ξ/O + m) ≈ (πξ/O)²/3 ≤ 8e-4 at
                // the field edge ξ = 1/4 if they added coherently; over many samples their
                // phases e^{−2πi m O s} scatter, and 6.3e-5 was measured. 2e-4 keeps 3×
                // headroom and is still below the 1e-4–1e-3 error that nearest lookup needs
                // O ≈ 100 for.
                assert!(worst < 2e-4, "default: {worst:e}");
            }
            last = worst;
        }
    }
}

#[test]
fn wideband_gridding_matches_the_image_domain_operator() {
    let b = beam(4, 0.0);
    let (vis, bins) = visset(7, 30);
    let g = geometry();
    let conjugate = ConjugateFrequency::Reciprocal { ref_freq_hz: NU0 };
    let w = WRange::of_visibilities(&vis).expect("valid set");
    let exact = AProjection::new(
        g,
        &b,
        bins.clone(),
        vis.frequencies_hz.clone(),
        w,
        AProjectionParams { conjugate: conjugate.clone(), ..AProjectionParams::default() },
    )
    .expect("valid plan");
    let op = kernel_op(
        &b,
        &vis,
        &bins,
        KernelAProjectionParams { conjugate, ..params(16, KernelInterpolation::Bilinear) },
    );
    assert!(op.is_wideband());
    let y = random_values(&mut rng(8), vis.data.dim());
    let err =
        max_rel_err(common::cx(&grid_one(&op, &vis, &y)), common::cx(&grid_one(&exact, &vis, &y)));
    println!("wideband gridding vs image-domain: {err:.2e}");
    // Same kernel error as plain A-projection at the default O = 16 (the bound of the
    // oversampling test; measured 1.9e-5).
    assert!(err < 2e-4, "{err:e}");
    // The true adjoint of the wideband degrid passes the dot-product test (definition).
    let adj = op.forward_adjoint();
    assert!(!adj.is_wideband());
    let x = random_image(&mut rng(9), g.ny, g.nx);
    let gx = op.degrid(&vis, std::slice::from_ref(&x), &[ones(3)]).expect("degrid");
    let lhs: f64 = gx.iter().zip(y.iter()).map(|(a, b)| (a.conj() * b).re).sum();
    let rhs: f64 = x.iter().zip(grid_one(&adj, &vis, &y).iter()).map(|(a, b)| a * b).sum();
    assert!((lhs - rhs).abs() <= 1e-10 * lhs.abs(), "{lhs} vs {rhs}");
}

#[test]
fn results_do_not_depend_on_the_thread_count() {
    let b = beam(4, 0.0);
    let (vis, bins) = visset(10, 60);
    let op = kernel_op(&b, &vis, &bins, params(8, KernelInterpolation::Bilinear));
    let mut r = rng(11);
    let x = random_image(&mut r, 32, 32);
    let y = random_values(&mut r, vis.data.dim());
    let run = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().expect("pool");
        pool.install(|| {
            (
                op.degrid(&vis, std::slice::from_ref(&x), &[ones(3)]).expect("degrid"),
                grid_one(&op, &vis, &y),
            )
        })
    };
    let (d1, g1) = run(1);
    let (d2, g2) = run(2);
    // Bitwise: every cell and every output sums its terms in the same order.
    assert!(d1.iter().zip(d2.iter()).all(|(a, b)| a == b));
    assert!(g1.iter().zip(g2.iter()).all(|(a, b)| a.to_bits() == b.to_bits()));
}

#[test]
fn memory_estimate_is_the_allocated_size_and_the_cap_refuses() {
    let b = beam(4, 0.0);
    let (vis, bins) = visset(12, 10);
    for (o, k) in [(4, 1), (5, 2)] {
        let p = KernelAProjectionParams {
            max_channels_per_group: k,
            ..params(o, KernelInterpolation::Bilinear)
        };
        let est = kernel_table_bytes(geometry(), &b, 3, &vis.frequencies_hz, &p).expect("estimate");
        let op = kernel_op(&b, &vis, &bins, p.clone());
        assert_eq!(est, op.table_estimate());
        assert_eq!(est.bytes, op.table_bytes_allocated());
        // 3 bins × ⌈3 / k⌉ groups × 2 hands; each table (O + 1)² S² single-precision complex
        // values (the documented layout).
        assert_eq!(est.n_tables, 3 * 3usize.div_ceil(k) * 2);
        let by_support: usize = op.supports().iter().map(|s| (o + 1) * (o + 1) * s * s * 8).sum();
        assert_eq!(est.bytes, by_support);
        assert_eq!(op.n_channel_groups(), 3usize.div_ceil(k));
        let capped = KernelAProjectionParams { max_table_bytes: est.bytes - 1, ..p };
        let w = WRange::of_visibilities(&vis).expect("valid set");
        let err = KernelAProjection::new(
            geometry(),
            &b,
            bins.clone(),
            vis.frequencies_hz.clone(),
            w,
            capped,
        )
        .expect_err("over the cap");
        let msg = err.to_string();
        for knob in ["oversampling", "PA bins", "max_channels_per_group"] {
            assert!(msg.contains(knob), "{msg}");
        }
    }
}

#[test]
fn sensitivity_image_equals_the_image_domain_operators() {
    let b = beam(4, 0.0);
    let (mut vis, bins) = visset(13, 30);
    let mut r = rng(14);
    vis.weights = Array3::from_shape_fn(vis.data.dim(), |_| r.random_range(0.1..2.0));
    vis.flags[[3, 1, 0]] = true;
    let op = kernel_op(&b, &vis, &bins, params(2, KernelInterpolation::Bilinear));
    let w = WRange::of_visibilities(&vis).expect("valid set");
    let exact = AProjection::new(
        geometry(),
        &b,
        bins.clone(),
        vis.frequencies_hz.clone(),
        w,
        AProjectionParams::default(),
    )
    .expect("valid plan");
    let a = op.sensitivity_image(&vis, &vis.weights).expect("sensitivity");
    let e = exact.sensitivity_image(&vis, &vis.weights).expect("sensitivity");
    // One channel per group: the same screens summed in the same order (rounding only).
    assert!(max_rel_err(common::cx(&a), common::cx(&e)) < 1e-14);
}

#[test]
fn refuses_bad_inputs() {
    let (vis, bins) = visset(15, 10);
    let w = WRange::of_visibilities(&vis).expect("valid set");
    let f = vis.frequencies_hz.clone();
    // Random pointing offsets of 2 arcmin make the antennas' patterns differ.
    let differ = beam(4, 2.0 / 60.0 * PI / 180.0);
    let make = |b: &DishBeam, p: KernelAProjectionParams| {
        KernelAProjection::new(geometry(), b, bins.clone(), f.clone(), w, p).map(|_| ())
    };
    assert!(make(&differ, params(2, KernelInterpolation::Bilinear)).is_err());
    let trusted = KernelAProjectionParams {
        assume_identical_antennas: true,
        ..params(2, KernelInterpolation::Bilinear)
    };
    assert!(make(&differ, trusted).is_ok());
    let b = beam(4, 0.0);
    assert!(make(&b, params(0, KernelInterpolation::Bilinear)).is_err());
    assert!(make(&b, params(257, KernelInterpolation::Bilinear)).is_err());
    let none = KernelAProjectionParams {
        max_channels_per_group: 0,
        ..params(2, KernelInterpolation::Bilinear)
    };
    assert!(make(&b, none).is_err());
    // A beam tabulated only over the image (not out to the kernels' half-width) returns 0
    // beyond its table and is refused.
    let small = DishBeam::new(
        &DishBeamParams { max_abs_lm: 0.035, max_freq_hz: 2.6e9, ..DishBeamParams::default() },
        vec![0.0; 3],
        vec![0.0, 600.0, 1200.0],
    )
    .expect("valid beam");
    let err = make(&small, params(2, KernelInterpolation::Bilinear)).expect_err("beam too small");
    assert!(err.to_string().contains("kernel_beam_half_width_rad"), "{err}");
    let _ = GridderParams::default();
}
