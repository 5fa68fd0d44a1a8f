//! The direct prediction against its slow reference and against textbook identities.
mod common;

use beamfloor_array::Observation;
use beamfloor_core::SPEED_OF_LIGHT_M_PER_S;
use beamfloor_predict::{predict_visibilities, PredictError, PredictParams};
use beamfloor_sky::{Component, Spectrum};
use common::{max_abs_diff, observation, reference, sky, TestBeam};
use num_complex::Complex64;
use std::sync::atomic::{AtomicUsize, Ordering};

fn run(
    obs: &Observation,
    comps: &[Component],
    beam: Option<&TestBeam>,
    params: &PredictParams,
) -> ndarray::Array3<Complex64> {
    let beam = beam.map(|b| b as &dyn beamfloor_core::VoltageBeam);
    predict_visibilities(obs, comps, beam, params, &|_| {}).unwrap()
}

#[test]
fn unit_point_at_phase_centre_is_one_everywhere() {
    // l = m = 0, n = 1: every phase term vanishes, so V = S = 1 (measurement equation, TMS eq. 3.7).
    let obs = observation(16);
    let comps = [Component::point("c", 0.0, 0.0, Spectrum::flat(1.0, 1.4e9).unwrap()).unwrap()];
    let v = run(&obs, &comps, None, &PredictParams::default());
    assert_eq!(v.dim(), (obs.rows.len(), 16, 2));
    assert!(v.iter().all(|x| *x == Complex64::new(1.0, 0.0)));
}

#[test]
fn single_point_by_hand() {
    // One row, one channel, values worked by hand from the definition:
    // uvw = (100, −50, 20) m at ν = c / 0.2 m (λ = 0.2 m) → (500, −250, 100) wavelengths; l = 0.01,
    // m = 0.02, n − 1 = √(1 − 5e-4) − 1; V = 2 exp(−2πi (5 − 5 + 100 (n − 1))).
    let mut obs = observation(1);
    obs.channels.frequencies_hz = vec![SPEED_OF_LIGHT_M_PER_S / 0.2];
    obs.rows.truncate(1);
    obs.rows[0].uvw_m = [100.0, -50.0, 20.0];
    let comps = [Component::point("p", 0.01, 0.02, Spectrum::flat(2.0, 1.0e9).unwrap()).unwrap()];
    let v = run(&obs, &comps, None, &PredictParams::default());
    let phase = -2.0 * std::f64::consts::PI * 100.0 * ((1.0f64 - 5e-4).sqrt() - 1.0);
    let want = Complex64::from_polar(2.0, phase);
    // Tolerance: the phase (~0.16 rad) rounded at ~1e-16 relative; 1e-13 Jy.
    assert!((v[[0, 0, 0]] - want).norm() < 1e-13 && (v[[0, 0, 1]] - want).norm() < 1e-13);
    // Without the w-term the phase is −2π (u l + v m) = 0 exactly here.
    let flat = run(&obs, &comps, None, &PredictParams { w_term: false, ..Default::default() });
    assert!((flat[[0, 0, 0]] - Complex64::new(2.0, 0.0)).norm() < 1e-13);
}

#[test]
fn fast_path_matches_direct_reference() {
    // Recurrence, beam table and time blocks against exp() per channel and the trait's
    // baseline_product per visibility. 48 channels with refresh every 32 exercise both the
    // recurrence and the exact restart. Tolerance 1e-12 × Σ|S|: the phases reach ~4e3 rad, so
    // each evaluation carries ~4e3·ε ≈ 1e-12 rad of rounding whichever way it is computed.
    let obs = observation(48);
    let comps = sky();
    let beam = TestBeam { n: obs.antennas_enu_m.len() };
    let scale: f64 = comps.iter().map(|c| c.spectrum.flux_at(1.0e9).abs()).sum();
    for w_term in [true, false] {
        for cache in [1usize, usize::MAX / 4] {
            // cache = 1 byte forces one time sample per beam block.
            let params = PredictParams { w_term, beam_cache_bytes: cache, ..Default::default() };
            let fast = run(&obs, &comps, Some(&beam), &params);
            let slow = reference(&obs, &comps, Some(&beam), w_term);
            let err = max_abs_diff(&fast, &slow);
            assert!(err < 1e-12 * scale, "w_term {w_term}, cache {cache}: {err}");
        }
        let fast = run(&obs, &comps, None, &PredictParams { w_term, ..Default::default() });
        let err = max_abs_diff(&fast, &reference(&obs, &comps, None, w_term));
        assert!(err < 1e-12 * scale, "no beam, w_term {w_term}: {err}");
    }
}

#[test]
fn recurrence_matches_exact_per_channel_evaluation() {
    // The same predictor with the phase recomputed every channel (refresh 1) is the direct
    // evaluation; with refresh 64 over 64 channels the recurrence runs 63 steps. The difference is
    // the recurrence's accumulated rounding: < 1e-12 of the flux (it must also be non-zero,
    // or the recurrence was not used).
    let obs = observation(64);
    let comps = sky();
    let direct =
        run(&obs, &comps, None, &PredictParams { phase_refresh_channels: 1, ..Default::default() });
    let recur = run(
        &obs,
        &comps,
        None,
        &PredictParams { phase_refresh_channels: 64, ..Default::default() },
    );
    let scale: f64 = comps.iter().map(|c| c.spectrum.flux_at(1.0e9).abs()).sum();
    let err = max_abs_diff(&direct, &recur);
    assert!(err < 1e-12 * scale, "{err}");
    assert!(err > 0.0);
}

#[test]
fn swapped_baseline_gives_conjugate() {
    // Swapping the antennas negates uvw and turns E_i E_j* into its conjugate, so
    // V_ji(−u) = V_ij(u)* (Hermitian symmetry of the visibility of a real sky, TMS §3.1).
    let obs = observation(8);
    let comps = sky();
    let beam = TestBeam { n: obs.antennas_enu_m.len() };
    let mut swapped = obs.clone();
    for row in &mut swapped.rows {
        std::mem::swap(&mut row.antenna1, &mut row.antenna2);
        row.uvw_m = row.uvw_m.map(|x| -x);
    }
    let a = run(&obs, &comps, Some(&beam), &PredictParams::default());
    let b = run(&swapped, &comps, Some(&beam), &PredictParams::default());
    let err = a.iter().zip(b.iter()).map(|(x, y)| (x - y.conj()).norm()).fold(0.0, f64::max);
    // Same arithmetic up to the sign of the phase: rounding only, 1e-12 of the flux.
    assert!(err < 1e-12 * 5.0, "{err}");
    assert!(a.iter().any(|x| x.im.abs() > 1e-3), "the test needs complex visibilities");
}

#[test]
fn independent_of_thread_count_and_reports_progress() {
    let obs = observation(16);
    let comps = sky();
    let beam = TestBeam { n: obs.antennas_enu_m.len() };
    let go = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().unwrap();
        let seen = AtomicUsize::new(0);
        let v = pool.install(|| {
            predict_visibilities(&obs, &comps, Some(&beam), &PredictParams::default(), &|done| {
                seen.fetch_max(done, Ordering::Relaxed);
            })
            .unwrap()
        });
        (v, seen.into_inner())
    };
    let (one, seen_one) = go(1);
    let (two, seen_two) = go(2);
    assert_eq!(one, two, "bitwise identical for 1 and 2 threads");
    assert_eq!(seen_one, obs.rows.len());
    assert_eq!(seen_two, obs.rows.len());
}

#[test]
fn rejects_inconsistent_input() {
    let obs = observation(4);
    let comps = sky();
    let small = TestBeam { n: 2 };
    let e = predict_visibilities(&obs, &comps, Some(&small), &PredictParams::default(), &|_| {});
    assert!(matches!(e, Err(PredictError::BeamAntennas { beam: 2, observation: 6 })));
    let mut bad = obs.clone();
    bad.rows[3].antenna2 = 17;
    let e = predict_visibilities(&bad, &comps, None, &PredictParams::default(), &|_| {});
    assert!(matches!(e, Err(PredictError::Antenna { row: 3, antenna: 17, .. })));
    let mut bad = obs.clone();
    bad.rows[0].uvw_m[1] = f64::NAN;
    assert!(matches!(
        predict_visibilities(&bad, &comps, None, &PredictParams::default(), &|_| {}),
        Err(PredictError::Uvw { row: 0, .. })
    ));
    let p = PredictParams { phase_refresh_channels: 0, ..Default::default() };
    assert!(predict_visibilities(&obs, &comps, None, &p, &|_| {}).is_err());
}
