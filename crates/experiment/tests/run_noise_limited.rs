//! A noise-limited run: one faint point (≈7 σ), plain gridding, noise on. After CLEAN the
//! off-source residual RMS must match the radiometer prediction σ_img.

use std::path::PathBuf;

use beamfloor_experiment::load_config;
use beamfloor_experiment::run::{run_experiment, RunObserver};

struct Quiet;
impl RunObserver for Quiet {}

#[test]
fn residual_rms_matches_the_radiometer_prediction() {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/run_noise.toml");
    let config = load_config(&path).unwrap_or_else(|e| panic!("{e}"));
    let out = tempfile::tempdir().unwrap();
    let summary = run_experiment(&config, Some(&path), out.path(), &mut Quiet)
        .unwrap_or_else(|e| panic!("{e}"));
    let floor = summary.strategies[0].floor_jy_per_beam;
    let sigma = summary.sigma_img_jy_per_beam;
    println!("measured off-source RMS {floor:.5e} Jy/beam, radiometer σ_img {sigma:.5e} Jy/beam, ratio {:.4}", floor / sigma);
    // Every pixel of the dirty noise image has variance exactly σ² Σw²/(Σw)² (the radiometer
    // equation, Thompson, Moran & Swenson §6.2, through the weighted sum); the RMS over the
    // source-free pixels estimates it with a relative sampling error ≈ 1/√(2 N_beams), about 2 %
    // for the ~10³ independent beams of this 128² image, so 5 % is a 2.5σ bound.
    assert!((floor / sigma - 1.0).abs() < 0.05, "floor {floor:e} vs σ_img {sigma:e}");
}
