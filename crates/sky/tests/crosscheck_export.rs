//! Exports values for `tests/crosscheck/test_sky.py` (numpy polyfit, astropy WCS).
use beamfloor_sky::{lm_from_radec, radec_from_lm, Spectrum};
use std::path::PathBuf;

fn export_dir() -> PathBuf {
    std::env::var_os("BEAMFLOOR_CROSSCHECK_DIR").map(PathBuf::from).unwrap_or_else(|| {
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/crosscheck")
    })
}

fn write(name: &str, value: serde_json::Value) {
    let dir = export_dir();
    std::fs::create_dir_all(&dir).expect("create export dir");
    let text = serde_json::to_string(&value).expect("serialise export");
    std::fs::write(dir.join(format!("{name}.json")), text).expect("write export");
}

/// A small deterministic generator so the "random" spectra need no extra dependency
/// (SplitMix64 step, Steele, Lea & Flood 2014), mapped to [0, 1).
fn uniform(state: &mut u64) -> f64 {
    *state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
}

#[test]
fn export_taylor_fits() {
    let mut state = 2024u64;
    let mut cases = Vec::new();
    // 11 channels 1–2 GHz about 1.5 GHz, then a few random bands, spectra and weights.
    let mut setups: Vec<(Vec<f64>, f64, Vec<f64>)> =
        vec![((0..11).map(|i| 1.0e9 + 1.0e8 * i as f64).collect(), 1.5e9, vec![1.0; 11])];
    for _ in 0..4 {
        let n = 6 + (uniform(&mut state) * 20.0) as usize;
        let lo = 0.3e9 + uniform(&mut state) * 1.0e9;
        let hi = lo * (1.3 + uniform(&mut state));
        let freqs: Vec<f64> = (0..n).map(|i| lo + (hi - lo) * i as f64 / (n - 1) as f64).collect();
        let weights: Vec<f64> = (0..n).map(|_| 0.2 + uniform(&mut state)).collect();
        setups.push((freqs, 0.5 * (lo + hi), weights));
    }
    for (freqs, nu0, weights) in setups {
        for _ in 0..3 {
            let s = Spectrum::new(
                0.1 + 5.0 * uniform(&mut state),
                nu0,
                -1.5 + 2.0 * uniform(&mut state),
                -0.5 + uniform(&mut state),
            )
            .unwrap();
            let values: Vec<f64> = freqs.iter().map(|&f| s.flux_at(f)).collect();
            for n_terms in 1..=4 {
                let c = s.fitted_taylor_coefficients(&freqs, &weights, n_terms).unwrap();
                cases.push(serde_json::json!({
                    "frequencies_hz": freqs, "ref_freq_hz": nu0, "weights": weights,
                    "flux_jy": s.flux_jy, "alpha": s.alpha, "beta": s.beta,
                    "values": values, "n_terms": n_terms, "coefficients": c,
                    "analytic": s.taylor_coefficients(n_terms),
                }));
            }
        }
    }
    write("sky_taylor_fits", serde_json::json!({ "cases": cases }));
}

#[test]
fn export_sin_projection() {
    let centres = [(0.3, -0.6), (4.0, 0.2), (2.5, 1.2), (6.0, -1.2)];
    let offsets =
        [(0.0, 0.0), (0.01, 0.02), (-0.05, 0.03), (0.2, -0.15), (-0.4, 0.35), (1e-5, -2e-5)];
    let mut cases = Vec::new();
    for &(ra0, dec0) in &centres {
        for &(dra, ddec) in &offsets {
            let (ra, dec) = (ra0 + dra, dec0 + ddec);
            let (l, m) = lm_from_radec(ra, dec, ra0, dec0).unwrap();
            let (ra_back, dec_back) = radec_from_lm(l, m, ra0, dec0).unwrap();
            cases.push(serde_json::json!({
                "ra0_rad": ra0, "dec0_rad": dec0, "ra_rad": ra, "dec_rad": dec,
                "l": l, "m": m, "ra_back_rad": ra_back, "dec_back_rad": dec_back,
            }));
        }
    }
    write("sky_sin_projection", serde_json::json!({ "cases": cases }));
}

#[test]
fn export_gaussian_envelopes() {
    use beamfloor_sky::EllipticalGaussian;
    // Envelope values on the FFT frequency grid of an n × n sampling of step h, for the Python
    // side to compare with numpy's FFT of the sampled Gaussian.
    let (n, h) = (256usize, 4e-5);
    let shapes = [(6e-4, 2.5e-4, 0.6), (1.2e-3, 1.2e-3, 0.0), (9e-4, 3e-4, -1.1)];
    let cases: Vec<_> = shapes
        .iter()
        .map(|&(maj, min, pa)| {
            let g = EllipticalGaussian::new(maj, min, pa).unwrap();
            let freq = |k: usize| {
                let f = if k < n / 2 { k as f64 } else { k as f64 - n as f64 };
                f / (n as f64 * h)
            };
            let env: Vec<Vec<f64>> = (0..n)
                .map(|kv| (0..n).map(|ku| g.envelope(freq(ku), freq(kv))).collect())
                .collect();
            serde_json::json!({
                "major_fwhm_rad": maj, "minor_fwhm_rad": min, "position_angle_rad": pa,
                "n": n, "step_rad": h, "envelope_v_by_u": env,
            })
        })
        .collect();
    write("sky_gaussian_envelopes", serde_json::json!({ "cases": cases }));
}
