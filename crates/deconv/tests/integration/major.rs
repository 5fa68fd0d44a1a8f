//! Cotton–Schwab major cycles with a direct-DFT residual imager, and the divergence guard.
use crate::dft;
use beamfloor_core::{taylor_weight, ImageGeometry};
use beamfloor_deconv::{
    fit_restoring_beam, restore, run_major_cycles, spectral_maps, BeamFitParams, CycleReport,
    DeconvError, MajorCycleParams, MajorStop, MinorCyclePlan, OnDivergence, ResidualImager,
    SpectralMapParams, Threshold,
};
use ndarray::Array2;

/// Degrids the model by direct DFT (each model pixel a point with spectrum Σ_t I_t w_t(ν)),
/// subtracts it from the data and re-images the difference by direct DFT.
struct DftImager {
    data: Vec<Vec<(f64, f64)>>,
    bl: Vec<(f64, f64)>,
    freqs: Vec<f64>,
    nu0: f64,
    nterms: usize,
    geom: ImageGeometry,
    calls: usize,
}

impl ResidualImager for DftImager {
    fn residuals(&mut self, model: &[Array2<f64>]) -> Result<Vec<Array2<f64>>, DeconvError> {
        self.calls += 1;
        let mut points = Vec::new();
        for ((iy, ix), _) in model[0].indexed_iter() {
            if model.iter().any(|m| m[[iy, ix]] != 0.0) {
                let (l, m) = self.geom.lm_of_pixel(ix as f64, iy as f64);
                let s: Vec<f64> = self
                    .freqs
                    .iter()
                    .map(|&f| {
                        (0..self.nterms)
                            .map(|t| model[t][[iy, ix]] * taylor_weight(f, self.nu0, t))
                            .sum()
                    })
                    .collect();
                points.push((l, m, s));
            }
        }
        let mv = dft::predict(&points, &self.bl, &self.freqs);
        let resid: Vec<Vec<(f64, f64)>> = self
            .data
            .iter()
            .zip(&mv)
            .map(|(d, m)| d.iter().zip(m).map(|(a, b)| (a.0 - b.0, a.1 - b.1)).collect())
            .collect();
        Ok(dft::image_taylor(&resid, &self.bl, &self.freqs, self.nu0, self.nterms, &self.geom))
    }
}

fn point_source_imager(nterms: usize) -> DftImager {
    let (freqs, nu0) = dft::channels();
    let bl = dft::baselines_m();
    let data = dft::predict(&[(0.0, 0.0, dft::power_law(1.0, -0.7, &freqs, nu0))], &bl, &freqs);
    DftImager { data, bl, freqs, nu0, nterms, geom: dft::geometry(), calls: 0 }
}

#[test]
fn major_cycles_converge_to_least_squares_alpha() {
    for (nterms, want_alpha) in [(2, -0.725574), (3, -0.746742)] {
        // Least-squares values from numpy.polynomial.polynomial.polyfit (see mfs.rs).
        let mut imager = point_source_imager(nterms);
        let g = dft::geometry();
        let psfs = &dft::shared_psfs()[..2 * nterms - 1];
        let plan = MinorCyclePlan::multi_term(psfs, nterms).unwrap();
        let params = MajorCycleParams { threshold: Threshold::Jy(1e-3), ..Default::default() };
        let mut reports: Vec<CycleReport> = Vec::new();
        let out =
            run_major_cycles(&mut imager, &g, &plan, &params, None, &mut |r| reports.push(*r))
                .unwrap();
        assert_eq!(out.stop, MajorStop::Threshold, "{reports:?}");
        assert_eq!(reports.len(), imager.calls);
        assert_eq!(reports[0].model_flux, 0.0);
        assert!(reports
            .windows(2)
            .all(|w| w[1].peak_residual < w[0].peak_residual && w[1].cycle == w[0].cycle + 1));
        let beam = fit_restoring_beam(&psfs[0], g.cell_rad, &BeamFitParams::default()).unwrap();
        let restored =
            restore(&out.model, &out.residuals, plan.point_hessian(), &beam, g.cell_rad).unwrap();
        let maps = spectral_maps(
            &restored.images,
            &restored.residual_coefficients,
            &SpectralMapParams::default(),
        )
        .unwrap();
        let a = maps.alpha[[g.ny / 2, g.nx / 2]];
        // Same 1e-3 tolerance as the minor-cycle-only check.
        assert!((a - want_alpha).abs() < 1e-3, "N = {nterms}: alpha = {a}");
    }
}

/// An imager whose residual doubles every call whatever the model: a broken operator.
struct GrowingImager {
    dirty: Array2<f64>,
    calls: i32,
}

impl ResidualImager for GrowingImager {
    fn residuals(&mut self, _model: &[Array2<f64>]) -> Result<Vec<Array2<f64>>, DeconvError> {
        let f = 2f64.powi(self.calls);
        self.calls += 1;
        Ok(vec![&self.dirty * f])
    }
}

#[test]
fn divergence_guard_fires_with_numbers() {
    let psf = &dft::shared_psfs()[0];
    let g = dft::geometry();
    let dirty = crate::mfs::point_source_dirty(1).remove(0);
    let peak = dirty.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let mut imager = GrowingImager { dirty, calls: 0 };
    let plan = MinorCyclePlan::hogbom(psf).unwrap();
    let params = MajorCycleParams { divergence_factor: 1.5, ..Default::default() };
    let err = run_major_cycles(&mut imager, &g, &plan, &params, None, &mut |_| {}).unwrap_err();
    match err {
        DeconvError::MajorCycleDiverged { cycle, peak: p, previous, factor } => {
            assert_eq!((cycle, factor), (1, 1.5));
            assert!(
                (previous - peak).abs() < 1e-15 && (p - 2.0 * peak).abs() < 1e-14,
                "{p} {previous}"
            );
        }
        e => panic!("expected divergence, got {e}"),
    }
}

/// With `OnDivergence::KeepBest` the same growing imager ends the run with the model and the
/// exact residuals from before the growth (here: the dirty image and an empty model, since the
/// first minor cycle's result is what made the residual grow), and the growing cycle reported.
#[test]
fn keep_best_returns_the_model_before_the_growth() {
    let psf = &dft::shared_psfs()[0];
    let g = dft::geometry();
    let dirty = crate::mfs::point_source_dirty(1).remove(0);
    let mut imager = GrowingImager { dirty: dirty.clone(), calls: 0 };
    let plan = MinorCyclePlan::hogbom(psf).unwrap();
    let params = MajorCycleParams {
        divergence_factor: 1.5,
        on_divergence: OnDivergence::KeepBest,
        ..Default::default()
    };
    let out = run_major_cycles(&mut imager, &g, &plan, &params, None, &mut |_| {}).unwrap();
    assert_eq!(out.stop, MajorStop::ResidualGrew);
    assert_eq!(out.cycles.len(), 2, "{:?}", out.cycles);
    assert!(out.cycles[1].peak_residual > 1.5 * out.cycles[0].peak_residual);
    assert_eq!(out.iterations, 0);
    assert!(out.model[0].iter().all(|&v| v == 0.0));
    assert_eq!(out.residuals[0], dirty);
}
