//! Stopping rules, masks, guards and restoration on small analytic PSFs.
use beamfloor_core::ImageGeometry;
use beamfloor_deconv::{
    convolve_same, restore, run_major_cycles, run_minor_cycle, CleanParams, DeconvError,
    MajorCycleParams, MajorStop, MinorCyclePlan, ResidualImager, RestoringBeam, TermHessian,
    Threshold,
};
use ndarray::Array2;

/// A circular Gaussian PSF of FWHM 4 px on a 64² grid (twice a 32² image), peak 1 at (32, 32).
fn gaussian_psf() -> Array2<f64> {
    Array2::from_shape_fn((64, 64), |(y, x)| {
        let r2 = (x as f64 - 32.0).powi(2) + (y as f64 - 32.0).powi(2);
        (-4.0 * std::f64::consts::LN_2 * r2 / 16.0).exp()
    })
}

/// Exact residuals for a sky observed with a known PSF: (sky − model) ⊗ PSF, with seeded
/// pseudo-noise of a known level added once (a linear congruential sequence, fixed).
struct ConvolutionImager {
    sky: Array2<f64>,
    psf: Array2<f64>,
    noise: Array2<f64>,
}

impl ResidualImager for ConvolutionImager {
    fn residuals(&mut self, model: &[Array2<f64>]) -> Result<Vec<Array2<f64>>, DeconvError> {
        Ok(vec![convolve_same(&(&self.sky - &model[0]), &self.psf) + &self.noise])
    }
}

fn imager(noise_level: f64) -> ConvolutionImager {
    let mut sky = Array2::zeros((32, 32));
    sky[[10, 12]] = 3.0;
    sky[[20, 21]] = 1.0;
    let mut state = 12345u64;
    let noise = Array2::from_shape_fn((32, 32), |_| {
        state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        noise_level * (((state >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0)
    });
    ConvolutionImager { sky, psf: gaussian_psf(), noise }
}

#[test]
fn noise_threshold_stops_the_major_cycle() {
    let g = ImageGeometry::new(32, 32, 1e-5);
    let mut im = imager(1e-3);
    let plan = MinorCyclePlan::hogbom(&im.psf).unwrap();
    let params = MajorCycleParams {
        threshold: Threshold::Noise { n_sigma: 5.0, noise_jy: 1e-3 },
        ..Default::default()
    };
    let mut seen = 0;
    let out = run_major_cycles(&mut im, &g, &plan, &params, None, &mut |_| seen += 1).unwrap();
    assert_eq!(out.stop, MajorStop::Threshold);
    let last = out.cycles.last().unwrap();
    assert!(last.peak_residual <= 5e-3 && seen == out.cycles.len());
    // Flux within the threshold's reach: 4 Jy in, at most ~5e-3 per source left behind.
    assert!((last.model_flux - 4.0).abs() < 0.02, "{last:?}");
}

#[test]
fn iteration_and_cycle_caps_stop_the_run() {
    let g = ImageGeometry::new(32, 32, 1e-5);
    let mut im = imager(0.0);
    let plan = MinorCyclePlan::hogbom(&im.psf).unwrap();
    let params = MajorCycleParams { max_iterations: 7, ..Default::default() };
    let out = run_major_cycles(&mut im, &g, &plan, &params, None, &mut |_| {}).unwrap();
    assert_eq!((out.stop, out.iterations), (MajorStop::IterationCap, 7));
    let params = MajorCycleParams { max_major_cycles: 2, ..Default::default() };
    let out = run_major_cycles(&mut im, &g, &plan, &params, None, &mut |_| {}).unwrap();
    assert_eq!((out.stop, out.cycles.len()), (MajorStop::CycleCap, 3));
}

#[test]
fn mask_confines_components() {
    let im = imager(0.0);
    let plan = MinorCyclePlan::hogbom(&im.psf).unwrap();
    let mut mask = Array2::from_elem((32, 32), false);
    for y in 15..25 {
        for x in 15..25 {
            mask[[y, x]] = true;
        }
    }
    let mut r = vec![convolve_same(&im.sky, &im.psf)];
    let mut m = vec![Array2::zeros((32, 32))];
    let p = CleanParams { threshold: 1e-4, ..Default::default() };
    run_minor_cycle(&plan, &mut r, &mut m, &p, Some(&mask)).unwrap();
    for ((y, x), &v) in m[0].indexed_iter() {
        assert!(v == 0.0 || mask[[y, x]], "component outside the mask at ({x}, {y})");
    }
    // The source inside the mask (1 Jy at (21, 20)) is recovered; the 3 Jy one outside is not.
    assert!((m[0][[20, 21]] - 1.0).abs() < 1e-3, "{}", m[0][[20, 21]]);
    assert_eq!(m[0][[10, 12]], 0.0);
}

#[test]
fn minor_cycle_guard_fires_on_a_psf_with_a_sidelobe_above_its_peak() {
    // A "PSF" whose first sidelobe (1.5) exceeds the centre (1): subtracting components at the
    // residual peak makes the residual grow, which the guard must report, not hide.
    let mut psf = Array2::zeros((33, 33));
    psf[[16, 16]] = 1.0;
    psf[[16, 17]] = -1.5;
    psf[[16, 15]] = -1.5;
    let mut dirty = Array2::zeros((16, 16));
    dirty[[8, 8]] = 1.0;
    let plan = MinorCyclePlan::hogbom(&psf).unwrap();
    let (mut r, mut m) = (vec![dirty], vec![Array2::zeros((16, 16))]);
    let p = CleanParams {
        loop_gain: 1.0,
        max_iterations: 100,
        divergence_factor: 2.0,
        ..Default::default()
    };
    match run_minor_cycle(&plan, &mut r, &mut m, &p, None) {
        Err(DeconvError::MinorCycleDiverged { peak, start, factor, .. }) => {
            assert!(peak > factor * start && start == 1.0, "{peak} {start}");
        }
        other => panic!("expected divergence, got {other:?}"),
    }
}

#[test]
fn restored_point_is_the_beam_times_its_flux() {
    // model ⊗ beam + residual with a one-pixel model of 2 Jy: the restored image is 2 × the
    // beam (peak 1) around that pixel, plus the residual unchanged (N = 1, H = [1]).
    let cell = 1e-5;
    let beam = RestoringBeam {
        major_fwhm_rad: 5.0 * cell,
        minor_fwhm_rad: 3.0 * cell,
        position_angle_rad: 0.4,
    };
    let mut model = Array2::zeros((32, 32));
    model[[16, 14]] = 2.0;
    let residual = Array2::from_shape_fn((32, 32), |(y, x)| 1e-3 * ((x + y) as f64).sin());
    let h = TermHessian::from_peaks(&[1.0], 1, 0).unwrap();
    let out = restore(&[model], std::slice::from_ref(&residual), &h, &beam, cell).unwrap();
    for ((y, x), &v) in out.images[0].indexed_iter() {
        let want = 2.0 * beam.value_at_pixel_offset(x as f64 - 14.0, y as f64 - 16.0, cell)
            + residual[[y, x]];
        // FFT convolution round-off is ~1e-15 of the peak; the kernel is cut at 4 FWHM (5e-20).
        assert!((v - want).abs() < 1e-12, "({x}, {y}): {v} vs {want}");
    }
}
