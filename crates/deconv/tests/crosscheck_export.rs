//! Exports values for the Python cross-check `tests/crosscheck/test_deconv.py`.
#[path = "integration/dft.rs"]
mod dft;

use beamfloor_deconv::{
    fit_restoring_beam, restore, run_minor_cycle, spectral_maps, BeamFitParams, CleanParams,
    MinorCyclePlan, SpectralMapParams,
};
use ndarray::Array2;
use serde_json::json;
use std::path::PathBuf;

fn export_dir() -> PathBuf {
    std::env::var_os("BEAMFLOOR_CROSSCHECK_DIR").map(PathBuf::from).unwrap_or_else(|| {
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/crosscheck")
    })
}

#[test]
fn export_mfs_and_beam() {
    let (freqs, nu0) = dft::channels();
    let bl = dft::baselines_m();
    let g = dft::geometry();
    let psfs = dft::shared_psfs();
    let plan3 = MinorCyclePlan::multi_term(&psfs[..5], 3).unwrap();
    let h = plan3.point_hessian();
    let hessian: Vec<Vec<f64>> = (0..3).map(|i| (0..3).map(|j| h.get(i, j)).collect()).collect();

    let vis = dft::predict(&[(0.0, 0.0, dft::power_law(1.0, -0.7, &freqs, nu0))], &bl, &freqs);
    let beam = fit_restoring_beam(&psfs[0], g.cell_rad, &BeamFitParams::default()).unwrap();
    let mut cleaned = Vec::new();
    for nterms in 2..=4 {
        let plan = MinorCyclePlan::multi_term(&psfs[..2 * nterms - 1], nterms).unwrap();
        let mut residuals = dft::image_taylor(&vis, &bl, &freqs, nu0, nterms, &g);
        let mut model: Vec<Array2<f64>> =
            (0..nterms).map(|_| Array2::zeros((g.ny, g.nx))).collect();
        let params = CleanParams {
            loop_gain: 0.1,
            threshold: 1e-3,
            max_iterations: 500,
            ..Default::default()
        };
        run_minor_cycle(&plan, &mut residuals, &mut model, &params, None).unwrap();
        let restored =
            restore(&model, &residuals, plan.point_hessian(), &beam, g.cell_rad).unwrap();
        let maps = spectral_maps(
            &restored.images,
            &restored.residual_coefficients,
            &SpectralMapParams::default(),
        )
        .unwrap();
        let c = [g.ny / 2, g.nx / 2];
        cleaned.push(json!({
            "nterms": nterms,
            "alpha": maps.alpha[c],
            "beta": maps.beta.map(|b| b[c]),
        }));
    }
    // The PSF's central 41×41 pixels for an independent main-lobe fit.
    let (py, px) = psfs[0].dim();
    let half = 20;
    let patch: Vec<Vec<f64>> = (py / 2 - half..=py / 2 + half)
        .map(|y| (px / 2 - half..=px / 2 + half).map(|x| psfs[0][[y, x]]).collect())
        .collect();
    let out = json!({
        "frequencies_hz": freqs,
        "ref_freq_hz": nu0,
        "alpha_true": -0.7,
        "hessian": hessian,
        "cleaned": cleaned,
        "psf_patch": patch,
        "cell_rad": g.cell_rad,
        "lobe_fraction": 0.35,
        "beam": {
            "major_fwhm_rad": beam.major_fwhm_rad,
            "minor_fwhm_rad": beam.minor_fwhm_rad,
            "position_angle_rad": beam.position_angle_rad,
        },
    });
    let dir = export_dir();
    std::fs::create_dir_all(&dir).expect("create export dir");
    std::fs::write(dir.join("deconv_mfs.json"), out.to_string()).expect("write export");
}
