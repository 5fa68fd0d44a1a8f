//! Multi-term MFS: Hessian from DFT PSFs and the least-squares spectral fit of a point source.
use crate::dft;
use beamfloor_deconv::{
    fit_restoring_beam, restore, run_minor_cycle, spectral_maps, BeamFitParams, CleanParams,
    MinorCyclePlan, SpectralMapParams, TermHessian,
};
use ndarray::Array2;

#[test]
fn hessian_of_eleven_channels() {
    // H_ij = PSF_{i+j}(0) = mean over channels of w^{i+j}, w = (ν−ν0)/ν0 (Rau & Cornwell 2011,
    // A&A 532, A71, eq. 20 with equal channel weights). By hand: mean(w²) = 0.1/1.5² = 0.044444,
    // mean(w⁴) = 0.0178/1.5⁴ = 0.003516, odd moments vanish by symmetry of the band.
    let plan = MinorCyclePlan::multi_term(&dft::shared_psfs()[..5], 3).unwrap();
    let h = plan.point_hessian();
    let want = [[1.0, 0.0, 0.044444], [0.0, 0.044444, 0.0], [0.044444, 0.0, 0.003516]];
    let exact =
        [[1.0, 0.0, 0.1 / 2.25], [0.0, 0.1 / 2.25, 0.0], [0.1 / 2.25, 0.0, 0.0178 / 5.0625]];
    for i in 0..3 {
        for j in 0..3 {
            // Quoted values carry 6 decimals: half a unit of the last is 5e-7.
            assert!((h.get(i, j) - want[i][j]).abs() < 5e-7, "H[{i}][{j}] = {}", h.get(i, j));
            // The DFT at the phase centre is exact up to summation rounding (~1e-15).
            assert!((h.get(i, j) - exact[i][j]).abs() < 1e-13, "H[{i}][{j}] = {}", h.get(i, j));
        }
    }
}

#[test]
fn per_pixel_solve_matches_cofactor_inverse() {
    // Slow reference: the 2×2 inverse by cofactors applied to every pixel of two residual images.
    let psfs = &dft::shared_psfs()[..3];
    let plan = MinorCyclePlan::multi_term(psfs, 2).unwrap();
    let h = plan.point_hessian();
    let (a, b, d) = (h.get(0, 0), h.get(0, 1), h.get(1, 1));
    let det = a * d - b * b;
    let r0 = Array2::from_shape_fn((16, 16), |(y, x)| ((x * 3 + y) as f64).sin());
    let r1 = Array2::from_shape_fn((16, 16), |(y, x)| 0.05 * ((x + 2 * y) as f64).cos());
    let sol = h.principal_solution(&[r0.clone(), r1.clone()]).unwrap();
    for ((p, &x0), &x1) in r0.indexed_iter().zip(r1.iter()) {
        let want0 = (d * x0 - b * x1) / det;
        let want1 = (-b * x0 + a * x1) / det;
        // cond(H) ≈ 1/0.0444 ≈ 23: 1e-13 relative is rounding.
        assert!((sol[0][p] - want0).abs() < 1e-13 * want0.abs().max(1.0));
        assert!((sol[1][p] - want1).abs() < 1e-13 * want1.abs().max(1.0));
    }
}

/// Dirty Taylor images of S0 = 1 Jy at 1.5 GHz, α = −0.7, at the phase centre.
pub fn point_source_dirty(nterms: usize) -> Vec<Array2<f64>> {
    let (freqs, nu0) = dft::channels();
    let bl = dft::baselines_m();
    let vis = dft::predict(&[(0.0, 0.0, dft::power_law(1.0, -0.7, &freqs, nu0))], &bl, &freqs);
    dft::image_taylor(&vis, &bl, &freqs, nu0, nterms, &dft::geometry())
}

/// Minor-cycle MT-MFS on the point source; returns (α̂, β̂ or NaN, restored I0) at the source.
fn clean_point_source(nterms: usize) -> (f64, f64, f64) {
    let psfs = &dft::shared_psfs()[..2 * nterms - 1];
    let plan = MinorCyclePlan::multi_term(psfs, nterms).unwrap();
    let mut residuals = point_source_dirty(nterms);
    let g = dft::geometry();
    let mut model: Vec<Array2<f64>> = (0..nterms).map(|_| Array2::zeros((g.ny, g.nx))).collect();
    let params =
        CleanParams { loop_gain: 0.1, threshold: 1e-3, max_iterations: 500, ..Default::default() };
    let out = run_minor_cycle(&plan, &mut residuals, &mut model, &params, None).unwrap();
    assert!(out.end_peak <= 1e-3, "{out:?}");
    let beam = fit_restoring_beam(&psfs[0], g.cell_rad, &BeamFitParams::default()).unwrap();
    let restored = restore(&model, &residuals, plan.point_hessian(), &beam, g.cell_rad).unwrap();
    let maps = spectral_maps(
        &restored.images,
        &restored.residual_coefficients,
        &SpectralMapParams::default(),
    )
    .unwrap();
    let c = [g.ny / 2, g.nx / 2];
    let beta = maps.beta.map(|b| b[c]).unwrap_or(f64::NAN);
    (maps.alpha[c], beta, restored.images[0][c])
}

// Expected values are the least-squares Taylor polynomial of (ν/ν0)^−0.7 over the 11 channels,
// computed with numpy.polynomial.polynomial.polyfit(w, S, N−1) (and re-checked by
// tests/crosscheck/test_deconv.py): N = 2: c = [1.028346, −0.746141], α̂ = −0.725574;
// N = 3: c = [0.999196, −0.746141, 0.655869], α̂ = −0.746742, β̂ = +0.004214;
// N = 4: α̂ = −0.698523. They differ from the true −0.7 (truncation bias of the finite
// expansion): matching them shows the minor cycle converges to the least-squares answer.
// Tolerance 1e-3 as the brief asks; the restored value at the source combines model and
// H⁻¹·residual, so it equals the least-squares value up to the off-source cleaning near it.

#[test]
fn two_terms_converge_to_least_squares_alpha() {
    let (a, _, i0) = clean_point_source(2);
    assert!((a - (-0.725574)).abs() < 1e-3, "alpha = {a}");
    // Measured α̂ = −0.72564. I0 is looser: two terms cannot represent the spectrum's
    // curvature, whose imprint (frequency-scaled PSFs) leaves ~1e-3 Jy/beam structure around
    // the source; cleaning it to the 1e-3 threshold puts small components beside the source
    // that move the restored I0 by a few 1e-3 (measured 1.02511, i.e. −3.2e-3).
    assert!((i0 - 1.028346).abs() < 5e-3, "I0 = {i0}");
}

#[test]
fn three_terms_converge_to_least_squares_alpha_beta() {
    let (a, b, i0) = clean_point_source(3);
    assert!((a - (-0.746742)).abs() < 1e-3, "alpha = {a}");
    assert!((b - 0.004214).abs() < 1e-3, "beta = {b}");
    assert!((i0 - 0.999196).abs() < 1e-3, "I0 = {i0}");
}

#[test]
fn four_terms_converge_to_least_squares_alpha() {
    let (a, _, _) = clean_point_source(4);
    assert!((a - (-0.698523)).abs() < 1e-3, "alpha = {a}");
}

#[test]
fn hessian_rejects_more_terms_than_the_band_supports() {
    // Sanity of the positive-definiteness check: a Hessian from PSF peaks of a single channel
    // (all moments 0 except the zeroth) is singular for N = 2.
    assert!(TermHessian::from_peaks(&[1.0, 0.0, 0.0], 2, 0).is_err());
}

#[test]
fn multiscale_multi_term_recovers_extended_spectrum() {
    // A Gaussian of FWHM 12 px and 10 Jy total at 1.5 GHz with α = −0.7 everywhere, predicted
    // pixel by pixel with the direct DFT, cleaned with N = 3. The least-squares Taylor fit of
    // each pixel's spectrum is c = [0.999196, −0.746141, 0.655869] × S (numpy polyfit, as
    // above), so the model's term-0 flux should approach 9.99196 Jy and α̂ −0.746742. (With
    // N = 2 the unfitted curvature, seen through beams that widen towards low frequency, biases
    // α̂ of a resolved source by several 1e-2; measured −0.767 vs −0.7256, so N = 3 is used.)
    let (freqs, nu0) = dft::channels();
    let bl = dft::baselines_m();
    let g = dft::geometry();
    let (c, fwhm) = ((g.nx / 2) as f64, 12.0);
    let mut points = Vec::new();
    let mut total = 0.0;
    let mut shape = Vec::new();
    for iy in 0..g.ny {
        for ix in 0..g.nx {
            let r2 = (ix as f64 - c).powi(2) + (iy as f64 - c).powi(2);
            let v = (-4.0 * std::f64::consts::LN_2 * r2 / (fwhm * fwhm)).exp();
            if v > 1e-4 {
                shape.push((ix, iy, v));
                total += v;
            }
        }
    }
    for &(ix, iy, v) in &shape {
        let (l, m) = g.lm_of_pixel(ix as f64, iy as f64);
        points.push((l, m, dft::power_law(10.0 * v / total, -0.7, &freqs, nu0)));
    }
    let vis = dft::predict(&points, &bl, &freqs);
    let dirty = dft::image_taylor(&vis, &bl, &freqs, nu0, 3, &g);
    let psfs = &dft::shared_psfs()[..5];
    let beam = fit_restoring_beam(&psfs[0], g.cell_rad, &BeamFitParams::default()).unwrap();
    let peak = dirty[0].iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let run = |plan: &MinorCyclePlan| {
        let mut residuals = dirty.clone();
        let mut model: Vec<Array2<f64>> = (0..3).map(|_| Array2::zeros((g.ny, g.nx))).collect();
        let params = CleanParams {
            loop_gain: 0.1,
            threshold: 3e-4 * peak,
            max_iterations: 10000,
            ..Default::default()
        };
        let out = run_minor_cycle(plan, &mut residuals, &mut model, &params, None).unwrap();
        let restored =
            restore(&model, &residuals, plan.point_hessian(), &beam, g.cell_rad).unwrap();
        let maps = spectral_maps(
            &restored.images,
            &restored.residual_coefficients,
            &SpectralMapParams::default(),
        )
        .unwrap();
        (model[0].sum(), maps.alpha[[g.ny / 2, g.nx / 2]], out.iterations)
    };
    let scales = beamfloor_deconv::ScaleSet::gaussian(&[0.0, 3.0, 6.0, 12.0]);
    let (f_ms, a_ms, it_ms) = run(&MinorCyclePlan::new(psfs, 3, &scales).unwrap());
    let (f_pt, a_pt, it_pt) = run(&MinorCyclePlan::multi_term(psfs, 3).unwrap());
    eprintln!("MS-MFS flux {f_ms:.4} alpha {a_ms:.4} ({it_ms} it); point MT-MFS flux {f_pt:.4} alpha {a_pt:.4} ({it_pt} it)");
    let want_flux = 10.0 * 0.999196;
    // Measured at a threshold of 3e-4 × peak: MS-MFS flux 9.9800, α̂ −0.7544 (513 components);
    // point MT-MFS flux 9.9723, α̂ −0.8352 (2855 components). The MS-MFS α̂ offset shrinks as
    // the threshold drops (−0.759 at 1e-3, −0.752 at 1e-4): it is unconverged residual, not
    // bias, so 0.015 leaves room for it. Both fluxes within 0.5 %.
    assert!((f_ms - want_flux).abs() < 5e-3 * want_flux, "MS-MFS flux {f_ms}");
    assert!((f_pt - want_flux).abs() < 5e-3 * want_flux, "point flux {f_pt}");
    assert!((a_ms - (-0.746742)).abs() < 0.015, "MS-MFS alpha {a_ms}");
    assert!(
        (a_ms + 0.746742).abs() < 0.25 * (a_pt + 0.746742).abs(),
        "MS-MFS {a_ms} vs point {a_pt}"
    );
    assert!(3 * it_ms < it_pt, "components: MS-MFS {it_ms}, point {it_pt}");
}
