//! Högbom and multi-scale minor cycles on images made with the DFT PSF.
use crate::dft;
use beamfloor_deconv::{
    convolve_same, run_minor_cycle, CleanParams, MinorCyclePlan, MinorStop, ScaleSet,
};
use ndarray::{s, Array2};

/// The dirty image of point components (x, y, flux) for a PSF twice the image size.
fn dirty_of_points(psf: &Array2<f64>, n: usize, points: &[(usize, usize, f64)]) -> Array2<f64> {
    let mut d = Array2::zeros((n, n));
    for &(x, y, f) in points {
        // Image pixel (iy, ix) sees PSF pixel (iy − y + n, ix − x + n) (PSF centre at n).
        d.scaled_add(f, &psf.slice(s![n - y..2 * n - y, n - x..2 * n - x]));
    }
    d
}

/// Textbook Högbom loop (Högbom 1974, A&AS 15, 417), written as plainly as possible: the slow
/// reference for the general minor-cycle engine with one term and the point scale.
fn hogbom_reference(
    psf: &Array2<f64>,
    dirty: &Array2<f64>,
    gain: f64,
    threshold: f64,
    max_iter: usize,
) -> (Array2<f64>, Array2<f64>) {
    let n = dirty.dim().0;
    let (pc, peak0) = (psf.dim().0 / 2, psf[[psf.dim().0 / 2, psf.dim().1 / 2]]);
    let mut r = dirty.clone();
    let mut m = Array2::zeros(r.dim());
    for _ in 0..max_iter {
        let (mut best, mut by, mut bx) = (0.0f64, 0, 0);
        for ((y, x), &v) in r.indexed_iter() {
            if v.abs() > best.abs() {
                (best, by, bx) = (v, y, x);
            }
        }
        if best.abs() <= threshold {
            break;
        }
        let a = gain * best / peak0;
        m[[by, bx]] += a;
        for y in 0..n {
            for x in 0..n {
                let (py, px) = (y + pc - by, x + pc - bx);
                r[[y, x]] -= a * psf[[py, px]];
            }
        }
    }
    (m, r)
}

#[test]
fn hogbom_engine_matches_textbook_loop() {
    let psf = &dft::shared_psfs()[0];
    let dirty = dirty_of_points(psf, 64, &[(20, 30, 1.0), (41, 25, -0.4), (33, 44, 0.25)]);
    let (m_ref, r_ref) = hogbom_reference(psf, &dirty, 0.2, 1e-3, 300);
    let plan = MinorCyclePlan::hogbom(psf).unwrap();
    let (mut r, mut m) = (vec![dirty], vec![Array2::zeros((64, 64))]);
    let p =
        CleanParams { loop_gain: 0.2, threshold: 1e-3, max_iterations: 300, ..Default::default() };
    run_minor_cycle(&plan, &mut r, &mut m, &p, None).unwrap();
    // Same components in the same order: only summation-order rounding can differ (~1e-15).
    for (a, b) in m[0].iter().zip(m_ref.iter()) {
        assert!((a - b).abs() < 1e-12);
    }
    for (a, b) in r[0].iter().zip(r_ref.iter()) {
        assert!((a - b).abs() < 1e-12);
    }
}

#[test]
fn hogbom_recovers_point_fluxes_and_positions() {
    let psf = &dft::shared_psfs()[0];
    let truth = [(20, 30, 1.0), (41, 25, -0.4), (33, 44, 0.25), (10, 52, 0.6)];
    let dirty = dirty_of_points(psf, 64, &truth);
    let plan = MinorCyclePlan::hogbom(psf).unwrap();
    let (mut r, mut m) = (vec![dirty], vec![Array2::zeros((64, 64))]);
    let p =
        CleanParams { loop_gain: 0.1, threshold: 1e-4, max_iterations: 5000, ..Default::default() };
    let out = run_minor_cycle(&plan, &mut r, &mut m, &p, None).unwrap();
    assert_eq!(out.stop, MinorStop::Threshold);
    // With the exact PSF and no noise, CLEAN leaves at most ~threshold / PSF peak per source
    // (1e-4) plus what sidelobe interaction scatters; 1e-3 Jy is a tenth of a percent of 1 Jy.
    let mut off_source = 0.0;
    for ((y, x), &v) in m[0].indexed_iter() {
        match truth.iter().find(|t| t.0 == x && t.1 == y) {
            Some(t) => assert!((v - t.2).abs() < 1e-3, "flux at ({x}, {y}) = {v}, want {}", t.2),
            None => off_source += v.abs(),
        }
    }
    assert!(off_source < 1e-3, "flux off the true positions: {off_source}");
}

/// A circular Gaussian sky (Jy/pixel) of total flux `flux` and FWHM `fwhm` pixels at the centre.
fn gaussian_sky(n: usize, flux: f64, fwhm: f64) -> Array2<f64> {
    let c = (n / 2) as f64;
    let mut g = Array2::from_shape_fn((n, n), |(y, x)| {
        let r2 = (x as f64 - c).powi(2) + (y as f64 - c).powi(2);
        (-4.0 * std::f64::consts::LN_2 * r2 / (fwhm * fwhm)).exp()
    });
    let s = g.sum();
    g.mapv_inplace(|v| v * flux / s);
    g
}

#[test]
fn multiscale_recovers_extended_flux_better_than_hogbom() {
    // A 10 Jy Gaussian of FWHM 16 px (about twice the 8 px main lobe of this PSF).
    let psf = &dft::shared_psfs()[0];
    let sky = gaussian_sky(64, 10.0, 16.0);
    let dirty = convolve_same(&sky, psf);
    let peak = dirty.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let scales = ScaleSet::gaussian(&[0.0, 3.0, 6.0, 12.0]);
    let run = |plan: &MinorCyclePlan, max_iterations: usize| {
        let p = CleanParams {
            loop_gain: 0.1,
            threshold: 0.01 * peak,
            max_iterations,
            ..Default::default()
        };
        let (mut r, mut m) = (vec![dirty.clone()], vec![Array2::zeros((64, 64))]);
        let out = run_minor_cycle(plan, &mut r, &mut m, &p, None).unwrap();
        ((m[0].sum() - 10.0).abs() / 10.0, out)
    };
    let hogbom = MinorCyclePlan::hogbom(psf).unwrap();
    let multiscale = MinorCyclePlan::multiscale(psf, &scales).unwrap();
    // Same threshold (1 % of the dirty peak), enough iterations for both to reach it.
    let (e_h, out_h) = run(&hogbom, 5000);
    let (e_m, out_m) = run(&multiscale, 5000);
    assert_eq!((out_h.stop, out_m.stop), (MinorStop::Threshold, MinorStop::Threshold));
    eprintln!(
        "threshold: Högbom error {e_h:.4} ({} it), multi-scale {e_m:.4} ({} it)",
        out_h.iterations, out_m.iterations
    );
    // Measured: Högbom 2.8 % low (341 components), multi-scale 1.3 % low (144 components).
    // Asserted with margin: multi-scale at most half Högbom's error and under 2 %.
    assert!(e_m < 0.02 && 2.0 * e_m < e_h, "multi-scale {e_m} vs Högbom {e_h}");
    // Same budget of 50 components: measured Högbom 47 % low, multi-scale 6.4 % low.
    let (e_h, _) = run(&hogbom, 50);
    let (e_m, _) = run(&multiscale, 50);
    eprintln!("50 components: Högbom error {e_h:.4}, multi-scale {e_m:.4}");
    assert!(5.0 * e_m < e_h, "multi-scale {e_m} vs Högbom {e_h}");
}
