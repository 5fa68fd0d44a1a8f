//! End-to-end simulation into a VisSet: metadata, weights, flags and noise.
mod common;

use beamfloor_predict::{
    predict_visibilities, simulate, stokes_i_image_noise_jy, unflagged_samples_per_correlation,
    NoiseModel, PredictParams, SimulationParams,
};
use common::{observation, sky, TestBeam};

fn params(add_noise: bool, seed: u64) -> SimulationParams {
    SimulationParams {
        predict: PredictParams::default(),
        // Channel width 1 GHz / 16 = 62.5 MHz, integration 600 s: σ = 420 / √(2 · 62.5e6 · 600).
        noise: NoiseModel { sefd_jy: 420.0, correlator_efficiency: 0.9 },
        add_noise,
        seed,
        truth_hash: "abc123".into(),
    }
}

#[test]
fn visset_is_complete_and_noise_has_radiometer_sigma() {
    let mut obs = observation(16);
    // Flag every third row by hand so both kinds are present whatever the track's elevation.
    obs.rows.iter_mut().step_by(3).for_each(|r| r.flagged = true);
    let comps = sky();
    let beam = TestBeam { n: obs.antennas_enu_m.len() };
    let clean = simulate(&obs, &comps, Some(&beam), &params(false, 5), &|_| {}).unwrap();
    let noisy = simulate(&obs, &comps, Some(&beam), &params(true, 5), &|_| {}).unwrap();
    clean.validate().unwrap();
    // Radiometer equation (Thompson, Moran & Swenson §6.2): σ = SEFD / (η_c √(2 Δν τ)).
    let sigma = 420.0 / (0.9 * (2.0 * obs.channels.width_hz * 600.0f64).sqrt());
    assert!(clean.weights.iter().all(|w| (w * sigma * sigma - 1.0).abs() < 1e-12));
    assert_eq!(clean.seed, 5);
    assert_eq!(clean.truth_hash, "abc123");
    assert_eq!(clean.n_rows(), obs.rows.len());
    assert_eq!(clean.frequencies_hz, obs.channels.frequencies_hz);
    for (r, row) in obs.rows.iter().enumerate() {
        assert_eq!(
            (clean.antenna1[r] as usize, clean.antenna2[r] as usize),
            (row.antenna1, row.antenna2)
        );
        assert_eq!(clean.time_index[r] as usize, row.time_index);
        assert_eq!(clean.uvw_m.row(r).to_vec(), row.uvw_m.to_vec());
        assert!(clean.flags.index_axis(ndarray::Axis(0), r).iter().all(|&f| f == row.flagged));
    }
    assert!(obs.rows.iter().any(|r| r.flagged) && obs.rows.iter().any(|r| !r.flagged));
    // Noise-free data are exactly the prediction.
    let predicted =
        predict_visibilities(&obs, &comps, Some(&beam), &PredictParams::default(), &|_| {})
            .unwrap();
    assert_eq!(clean.data, predicted);
    // The difference is the noise: its std within 2% of σ. With D real draws the sample std has
    // relative standard error 1/√(2D); the assertion below requires D ≥ 8000 (error ≤ 0.8%),
    // so 2% is at least 2.5 standard errors.
    let diffs: Vec<f64> = noisy
        .data
        .iter()
        .zip(clean.data.iter())
        .flat_map(|(a, b)| [(a - b).re, (a - b).im])
        .collect();
    let n = diffs.len() as f64;
    assert!(n >= 8000.0, "{n}");
    let std = (diffs.iter().map(|d| d * d).sum::<f64>() / n).sqrt();
    assert!((std / sigma - 1.0).abs() < 0.02, "{std} vs {sigma}");
    // Reproducible from the seed; a different seed gives different noise.
    let again = simulate(&obs, &comps, Some(&beam), &params(true, 5), &|_| {}).unwrap();
    assert_eq!(again, noisy);
    let other = simulate(&obs, &comps, Some(&beam), &params(true, 6), &|_| {}).unwrap();
    assert_ne!(other.data, noisy.data);
    // Stokes I image noise check value: σ / √(2 N) with N unflagged samples per correlation.
    let n_ok = unflagged_samples_per_correlation(&clean);
    let n_rows_ok = obs.rows.iter().filter(|r| !r.flagged).count();
    assert_eq!(n_ok, n_rows_ok * 16);
    assert!(
        (stokes_i_image_noise_jy(sigma, n_ok) - sigma / (2.0 * n_ok as f64).sqrt()).abs() < 1e-18
    );
}

#[test]
fn noise_sample_std_over_many_visibilities() {
    // The check value of the brief: SEFD 420 Jy, η_c = 1, Δν = 1 MHz, τ = 10 s → σ = 0.093915 Jy
    // (TMS §6.2 formula by hand), and the sample std of the added noise within 2% of it. 80
    // rows × 32 channels × 2 pols × 2 parts = 10 240 draws → standard error 0.7%, 2% ≈ 3σ.
    let mut obs = observation(32);
    obs.channels.width_hz = 1e6;
    obs.timeline.integration_s = 10.0;
    obs.rows.truncate(80);
    let mut p = params(true, 11);
    p.noise.correlator_efficiency = 1.0;
    let empty: Vec<beamfloor_sky::Component> = Vec::new();
    let vis = simulate(&obs, &empty, None, &p, &|_| {}).unwrap();
    let sigma = 1.0 / vis.weights[[0, 0, 0]].sqrt();
    assert!((sigma - 0.093915).abs() < 5e-7, "{sigma}");
    let vals: Vec<f64> = vis.data.iter().flat_map(|c| [c.re, c.im]).collect();
    let std = (vals.iter().map(|v| v * v).sum::<f64>() / vals.len() as f64).sqrt();
    assert!((std / sigma - 1.0).abs() < 0.02, "{std}");
}

#[test]
fn simulation_independent_of_thread_count() {
    // Noise is seeded per row and each row is summed in a fixed order, so the whole visibility
    // set must be bitwise identical on 1 and 2 threads.
    let obs = observation(8);
    let comps = sky();
    let beam = TestBeam { n: obs.antennas_enu_m.len() };
    let go = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().unwrap();
        pool.install(|| simulate(&obs, &comps, Some(&beam), &params(true, 99), &|_| {}).unwrap())
    };
    assert_eq!(go(1), go(2));
}
