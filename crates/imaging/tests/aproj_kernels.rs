//! A-projection with oversampled uv-domain kernels ([`KernelAProjection`]): adjointness, error
//! against the exact references (the direct beam sum and the image-domain [`AProjection`]) as
//! the oversampling grows, wideband gridding, thread-count independence, the memory estimate,
//! the sensitivity image and the refusals.
mod common;

use beamfloor_beam::{ApertureParams, DishBeam, DishBeamParams, EffectParams, FeedLegs, Taper};
use beamfloor_beam::{PointingParams, SquintParams};
use beamfloor_core::{ImageGeometry, VoltageBeam};
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
    beam_on(geometry(), n_antennas, pointing_rms_rad)
}

/// [`beam`] tabulated for the kernels of `geometry`.
fn beam_on(geometry: ImageGeometry, n_antennas: usize, pointing_rms_rad: f64) -> DishBeam {
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
        max_abs_lm: kernel_beam_half_width_rad(geometry).expect("valid geometry"),
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

/// The operator keeps its padded grids between calls: a call after others (which leave
/// values in the reused grids) must give the bits of the first call.
#[test]
fn repeated_calls_give_the_same_bits() {
    let b = beam(4, 0.0);
    let (vis, bins) = visset(12, 60);
    let op = kernel_op(&b, &vis, &bins, params(8, KernelInterpolation::Bilinear));
    let mut r = rng(13);
    let x = random_image(&mut r, 32, 32);
    let y = random_values(&mut r, vis.data.dim());
    let d1 = op.degrid(&vis, std::slice::from_ref(&x), &[ones(3)]).expect("degrid");
    let g1 = grid_one(&op, &vis, &y);
    // A degrid of another image in between leaves other values in the reused grids.
    let other = random_image(&mut r, 32, 32);
    op.degrid(&vis, std::slice::from_ref(&other), &[ones(3)]).expect("degrid");
    let d2 = op.degrid(&vis, std::slice::from_ref(&x), &[ones(3)]).expect("degrid");
    let g2 = grid_one(&op, &vis, &y);
    let g3 = grid_one(&op, &vis, &y);
    assert!(d1.iter().zip(d2.iter()).all(|(a, b)| a == b));
    for g in [&g2, &g3] {
        assert!(g1.iter().zip(g.iter()).all(|(a, b)| a.to_bits() == b.to_bits()));
    }
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

/// The sensitivity moments by their definition, W_k = Σ w x^k |E_i E_j*|² / Σ w with
/// x = (ν − ν0)/ν0, each row's own antennas and its PA bin, summed sample by sample; and the
/// per-channel sensitivities W_c = Σ_{samples of c} w |E_i E_j*|² / Σ_{samples of c} w.
#[test]
fn sensitivity_moments_and_channel_sensitivities_follow_their_definition() {
    let b = beam(4, 0.0);
    let (mut vis, bins) = visset(17, 30);
    let mut r = rng(18);
    vis.weights = Array3::from_shape_fn(vis.data.dim(), |_| r.random_range(0.1..2.0));
    vis.flags[[5, 2, 1]] = true;
    let op = kernel_op(&b, &vis, &bins, params(2, KernelInterpolation::Bilinear));
    let moments = op.sensitivity_moments(&vis, &vis.weights, 5, NU0).expect("moments");
    let g = geometry();
    let mut want = vec![Array2::<f64>::zeros((g.ny, g.nx)); 5];
    let mut want_channel = vec![Array2::<f64>::zeros((g.ny, g.nx)); vis.n_channels()];
    let mut channel_total = vec![0.0; vis.n_channels()];
    let mut total = 0.0;
    for row in 0..vis.n_rows() {
        let bin = bins[vis.time_index[row] as usize];
        let (a1, a2) = (vis.antenna1[row] as usize, vis.antenna2[row] as usize);
        for (c, &f) in vis.frequencies_hz.iter().enumerate() {
            let x = (f - NU0) / NU0;
            for (p, corr) in vis.correlations.iter().enumerate() {
                if vis.flags[[row, c, p]] {
                    continue;
                }
                let wt = vis.weights[[row, c, p]];
                total += wt;
                channel_total[c] += wt;
                for (iy, ix) in (0..g.ny).flat_map(|iy| (0..g.nx).map(move |ix| (iy, ix))) {
                    let (l, m) = g.lm_of_pixel(ix as f64, iy as f64);
                    let a = b.baseline_product(a1, a2, bin, f, corr.receptor(), l, m).norm_sqr();
                    want_channel[c][[iy, ix]] += wt * a;
                    for (k, image) in want.iter_mut().enumerate() {
                        image[[iy, ix]] += wt * x.powi(k as i32) * a;
                    }
                }
            }
        }
    }
    for (k, (got, want)) in moments.iter().zip(&want).enumerate() {
        let want = want / total;
        let err = max_rel_err(common::cx(got), common::cx(&want));
        // Identical antennas: the screens are the same beam values, summed in another order
        // (rounding only).
        assert!(err < 1e-12, "moment {k}: {err:e}");
    }
    let w0 = op.sensitivity_image(&vis, &vis.weights).expect("sensitivity");
    assert!(max_rel_err(common::cx(&w0), common::cx(&moments[0])) < 1e-15);
    let channels = op.channel_sensitivities(&vis, &vis.weights).expect("channels");
    for c in 0..vis.n_channels() {
        assert!((channels.weights[c] - channel_total[c]).abs() < 1e-12 * channel_total[c]);
        let want = &want_channel[c] / channel_total[c];
        let err = max_rel_err(common::cx(&channels.images[c]), common::cx(&want));
        assert!(err < 1e-12, "channel {c}: {err:e}");
    }
}

/// On a field much wider than the beam's finest structure the per-channel sensitivities are
/// built from beam screens sampled every few pixels (as finely as six times their band limit,
/// which the A-kernel's support gives) and interpolated; they must still equal the definition
/// W_c = Σ_{samples of c} w |E_i E_j*|² / Σ w evaluated at every pixel. 400 × 0.15 mrad
/// (±30 mrad, the 12 m dish's main lobe and first sidelobe at 1–2 GHz), one row per bin.
#[test]
fn sampled_screens_give_the_channel_sensitivities_of_the_definition() {
    let g = ImageGeometry::new(400, 400, 1.5e-4);
    let b = beam_on(g, 4, 0.0);
    let (mut vis, bins) = visset(21, 6);
    let mut r = rng(22);
    vis.weights = Array3::from_shape_fn(vis.data.dim(), |_| r.random_range(0.1..2.0));
    let w = WRange::of_visibilities(&vis).expect("valid set");
    let op = KernelAProjection::new(
        g,
        &b,
        bins.clone(),
        vis.frequencies_hz.clone(),
        w,
        params(2, KernelInterpolation::Bilinear),
    )
    .expect("valid plan");
    let channels = op.channel_sensitivities(&vis, &vis.weights).expect("channels");
    let (n_chan, npix) = (vis.n_channels(), g.nx * g.ny);
    let mut want = vec![vec![0.0; npix]; n_chan];
    let mut total = vec![0.0; n_chan];
    for row in 0..vis.n_rows() {
        let bin = bins[vis.time_index[row] as usize];
        let (a1, a2) = (vis.antenna1[row] as usize, vis.antenna2[row] as usize);
        for (c, &f) in vis.frequencies_hz.iter().enumerate() {
            for (p, corr) in vis.correlations.iter().enumerate() {
                let wt = vis.weights[[row, c, p]];
                total[c] += wt;
                for (k, v) in want[c].iter_mut().enumerate() {
                    let (l, m) = g.lm_of_pixel((k % g.nx) as f64, (k / g.nx) as f64);
                    *v += wt * b.baseline_product(a1, a2, bin, f, corr.receptor(), l, m).norm_sqr();
                }
            }
        }
    }
    let mut worst = 0.0f64;
    for c in 0..n_chan {
        let peak = want[c].iter().fold(0.0f64, |m, v| m.max(v.abs()));
        for (got, want) in channels.images[c].iter().zip(&want[c]) {
            worst = worst.max((got - want / total[c]).abs() / (peak / total[c]));
        }
    }
    eprintln!("sampled screens: largest error {worst:.2e} of the peak");
    // 8-point Lagrange interpolation at six samples per Nyquist interval: of order 1e-7 of the
    // peak (measured 4.7e-8 here, with samples every 4 to 7 pixels); a tenth of ε = 1e-6 (the
    // operator's own accuracy target) is our tolerance.
    assert!(worst < 1e-7, "{worst:e}");
}

/// What the moments are for: at a point source's own pixel every phase cancels, so the
/// Taylor-weighted dirty image t there is Σ_s W_{s+t} I_s for a source with spectrum
/// Σ_s I_s x^s (from the forward model's definition). Truth from the exact direct beam sum, the
/// dirty images through the uv-kernel operator at oversampling 16 (its error against the direct
/// sum, ~1e-4 relative, sets the tolerance).
#[test]
fn sensitivity_moments_give_the_taylor_response_at_a_source() {
    let b = beam(4, 0.0);
    let (mut vis, bins) = visset(19, 40);
    let g = geometry();
    let direct = DirectBeamOperator { geometry: g, beam: &b, bin_of_time: bins.clone() };
    let (ix, iy) = (22, 11); // ≈ 22 mrad out: outer main lobe, where the beam changes most with ν
    let spectrum = [1.7, -0.9];
    let images: Vec<Array2<f64>> = spectrum
        .iter()
        .map(|&s| {
            let mut m = Array2::<f64>::zeros((g.ny, g.nx));
            m[[iy, ix]] = s;
            m
        })
        .collect();
    let factors: Vec<Vec<f64>> = (0..2)
        .map(|s| vis.frequencies_hz.iter().map(|f| ((f - NU0) / NU0).powi(s)).collect())
        .collect();
    vis.data = direct.degrid(&vis, &images, &factors).expect("truth");
    let op = kernel_op(&b, &vis, &bins, params(16, KernelInterpolation::Bilinear));
    let taylor = beamfloor_imaging::TaylorTerms { n_terms: 3, ref_freq_hz: NU0 };
    let dirty = beamfloor_imaging::dirty_images(&op, &vis, &vis.weights, &taylor).expect("dirty");
    let w = op.sensitivity_moments(&vis, &vis.weights, 5, NU0).expect("moments");
    for t in 0..3 {
        let want: f64 = (0..2).map(|s| w[s + t][[iy, ix]] * spectrum[s]).sum();
        let got = dirty.residuals[t][[iy, ix]];
        let scale = w[0][[iy, ix]] * spectrum[0];
        assert!((got - want).abs() < 1e-3 * scale, "term {t}: {got} vs {want}");
    }
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

/// Demo-size timing (run by hand: `cargo test --release --test aproj_kernels -- --ignored
/// --nocapture`): 720² image of 18″ pixels, 24 antennas × 35 times × 8 channels × 2 hands,
/// 12 PA bins, ε = 1e-7 with w-stacking, synthetic tracks. Prints the table estimate, the time
/// to build the kernels, one grid and one degrid pass, and the image-domain operator's time
/// for one (bin, channel) pair, scaled to all 96 pairs.
#[test]
#[ignore = "takes minutes; prints timings for the report"]
fn demo_size_timing() {
    use std::time::Instant;
    let n_ant = 24;
    let n_time = 35;
    let n_bins = 12;
    let geometry = ImageGeometry::new(720, 720, 18.0 / 3600.0 * PI / 180.0);
    let mut r = rng(900);
    let ant: Vec<[f64; 2]> = (0..n_ant)
        .map(|_| {
            let (rad, th) =
                (250.0 * r.random_range(0.0f64..1.0).sqrt(), r.random_range(0.0..2.0 * PI));
            [rad * th.cos(), rad * th.sin()]
        })
        .collect();
    let (lat, dec) = (-0.5f64, -0.7f64);
    let mut uvw = Vec::new();
    let (mut a1, mut a2, mut ti) = (Vec::new(), Vec::new(), Vec::new());
    for a in 0..n_ant {
        for b in a + 1..n_ant {
            let (e, n) = (ant[b][0] - ant[a][0], ant[b][1] - ant[a][1]);
            // ENU (up = 0) → equatorial X, Y, Z (Thompson, Moran & Swenson, eq. 4.15).
            let (x, y, z) = (-n * lat.sin(), e, n * lat.cos());
            for t in 0..n_time {
                let h = (-1.5 + 3.0 * t as f64 / (n_time - 1) as f64) * PI / 12.0;
                // Thompson, Moran & Swenson, eq. 4.1.
                uvw.push([
                    h.sin() * x + h.cos() * y,
                    -dec.sin() * h.cos() * x + dec.sin() * h.sin() * y + dec.cos() * z,
                    dec.cos() * h.cos() * x - dec.cos() * h.sin() * y + dec.sin() * z,
                ]);
                a1.push(a as u32);
                a2.push(b as u32);
                ti.push(t as u32);
            }
        }
    }
    let freqs: Vec<f64> = (0..8).map(|c| 1.0e9 + c as f64 * 1.0e9 / 7.0).collect();
    let mut vis = common::visset(Array2::from_shape_fn((uvw.len(), 3), |(i, k)| uvw[i][k]), freqs);
    vis.antenna1 = a1;
    vis.antenna2 = a2;
    vis.time_index = ti;
    vis.hour_angles_rad = vec![0.0; n_time];
    vis.parallactic_angles_rad = vec![0.0; n_time];
    vis.data = random_values(&mut r, vis.data.dim());
    let bins: Vec<usize> = (0..n_time).map(|t| t * n_bins / n_time).collect();
    let t0 = Instant::now();
    let half = kernel_beam_half_width_rad(geometry).expect("geometry");
    let pas: Vec<f64> = (0..n_bins).map(|b| -1.0 + 2.0 * b as f64 / n_bins as f64).collect();
    let beam = DishBeam::new(
        &DishBeamParams {
            aperture: ApertureParams { dish_diameter_m: 13.5, ..ApertureParams::default() },
            effects: EffectParams {
                squint: SquintParams { fraction_of_hpbw: 0.03, direction_rad: 0.5 },
                ..EffectParams::default()
            },
            ref_freq_hz: NU0,
            max_abs_lm: half,
            max_freq_hz: 2.0e9,
            ..DishBeamParams::default()
        },
        pas,
        (0..n_bins).map(|b| 900.0 * b as f64).collect(),
    )
    .expect("beam");
    println!("beam tabulated to {half:.4} rad in {:.1} s", t0.elapsed().as_secs_f64());
    let w = WRange::of_visibilities(&vis).expect("valid set");
    let p = KernelAProjectionParams::default();
    let t0 = Instant::now();
    let est =
        kernel_table_bytes(geometry, &beam, n_bins, &vis.frequencies_hz, &p).expect("estimate");
    println!("estimate {est:?} in {:.1} s", t0.elapsed().as_secs_f64());
    let t0 = Instant::now();
    let op =
        KernelAProjection::new(geometry, &beam, bins.clone(), vis.frequencies_hz.clone(), w, p)
            .expect("plan");
    println!(
        "kernels built in {:.1} s; {} w planes, padded {:?}",
        t0.elapsed().as_secs_f64(),
        op.grid_plan().n_w_planes(),
        op.grid_plan().padded_size()
    );
    let flops = op.flop_count(&vis, 1).expect("flops");
    let t0 = Instant::now();
    let img = grid_one(&op, &vis, &vis.data);
    let tg = t0.elapsed().as_secs_f64();
    let t0 = Instant::now();
    let _ = op.degrid(&vis, &[img], &[ones(8)]).expect("degrid");
    let td = t0.elapsed().as_secs_f64();
    println!(
        "kernel operator: grid {tg:.1} s, degrid {td:.1} s ({:.2e} flops each; {:.1} / {:.1} GFLOP/s wall)",
        flops,
        flops / tg / 1e9,
        flops / td / 1e9
    );
    // The image-domain operator on one (bin, channel) pair: rows of bin 5, channel 4.
    let rows: Vec<usize> =
        (0..vis.n_rows()).filter(|&k| bins[vis.time_index[k] as usize] == 5).collect();
    let mut sub = common::visset(
        Array2::from_shape_fn((rows.len(), 3), |(i, k)| vis.uvw_m[[rows[i], k]]),
        vec![vis.frequencies_hz[4]],
    );
    sub.time_index = rows.iter().map(|&k| vis.time_index[k]).collect();
    sub.hour_angles_rad = vec![0.0; n_time];
    sub.parallactic_angles_rad = vec![0.0; n_time];
    sub.data = random_values(&mut r, sub.data.dim());
    let exact = AProjection::new(
        geometry,
        &beam,
        bins,
        sub.frequencies_hz.clone(),
        w,
        AProjectionParams { assume_identical_antennas: true, ..AProjectionParams::default() },
    )
    .expect("plan");
    let t0 = Instant::now();
    let img = grid_one(&exact, &sub, &sub.data);
    let _ = exact.degrid(&sub, &[img], &[ones(1)]).expect("degrid");
    let te = t0.elapsed().as_secs_f64();
    println!(
        "image-domain operator: grid + degrid of one (bin, channel) pair {te:.1} s; × {} pairs ≈ {:.0} s",
        n_bins * 8,
        te * (n_bins * 8) as f64
    );
}

/// Exports one kernel of a uniformly illuminated disc (Airy power pattern) for
/// `tests/crosscheck/test_aproj_kernels.py`, which recomputes K(t) = ∫∫ ψ̂ ψ̂ A e^{2πi ξ·t} dξ
/// with numpy from scipy's J1 and its own quadrature of the ES kernel's transform.
#[test]
fn export_a_disc_kernel_for_the_crosscheck() {
    let d = 12.0;
    let g = geometry();
    let beam = DishBeam::new(
        &DishBeamParams {
            // 512 samples across: the beam crate measured ≤ 6e-6 of the field against Airy.
            aperture: ApertureParams { samples_across: 512, ..ApertureParams::uniform_disc(d) },
            effects: EffectParams::default(),
            ref_freq_hz: NU0,
            max_abs_lm: kernel_beam_half_width_rad(g).expect("geometry"),
            max_freq_hz: 2.0e9,
            ..DishBeamParams::default()
        },
        vec![0.0],
        vec![0.0],
    )
    .expect("valid beam");
    let freq = 1.5e9;
    let vis = common::visset(Array2::zeros((1, 3)), vec![freq]);
    let p = KernelAProjectionParams {
        gridder: GridderParams { epsilon: 1e-7, w_term: beamfloor_imaging::WTerm::Ignore },
        oversampling: 4,
        ..KernelAProjectionParams::default()
    };
    let w = WRange::of_visibilities(&vis).expect("valid set");
    let op = KernelAProjection::new(g, &beam, vec![0], vec![freq], w, p).expect("plan");
    let view = op.kernel_view(0, 0, beamfloor_core::Pol::R).expect("kernel");
    let o = view.oversampling() as i64;
    // Lattice points along both axes, a diagonal and off-axis, from the centre to the edge.
    let points: Vec<(i64, i64)> = vec![
        (0, 0),
        (1, 0),
        (0, 3),
        (5, 2),
        (-7, 4),
        (2 * o, -o),
        (-3 * o, 0),
        (4 * o, 4 * o),
        (9 * o, 1),
        (-2, 11 * o),
    ];
    let mut values = Vec::new();
    for &(kx, ky) in &points {
        let v = view.value(kx, ky).expect("inside the table");
        values.push(format!("[{kx},{ky},{:e},{:e}]", v.re, v.im));
    }
    // A lattice point outside the table has no value.
    assert!(view.value(view.support() as i64 * o, 0).is_none());
    let plan = op.grid_plan();
    let json = format!(
        "{{\"nx\":{},\"cell_rad\":{:e},\"pad\":{},\"support_w\":{},\"beta\":{:e},\
         \"dish_diameter_m\":{d:e},\"freq_hz\":{freq:e},\"oversampling\":{o},\"support\":{},\
         \"points\":[{}]}}",
        g.nx,
        g.cell_rad,
        plan.padded_size().0,
        plan.kernel().support(),
        plan.kernel().beta(),
        view.support(),
        values.join(",")
    );
    let dir =
        std::env::var_os("BEAMFLOOR_CROSSCHECK_DIR").map(std::path::PathBuf::from).unwrap_or_else(
            || std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/crosscheck"),
        );
    std::fs::create_dir_all(&dir).expect("create export dir");
    std::fs::write(dir.join("aproj_kernels.json"), json).expect("write export");
}
