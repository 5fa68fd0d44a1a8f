//! End-to-end scoring of synthetic strategy images whose errors are planted by construction,
//! and the table conversion.
mod common;

use beamfloor_core::ImageGeometry;
use beamfloor_metrics::{
    disc_pixels, radial_table, score_strategy, source_free_mask, source_table, summary_table, Cell,
    MetricsError, RestoringBeam, ScoreParams, Scores, SourceTruth, StrategyImages,
};
use common::{add_gaussian, gaussian_noise, point};
use ndarray::Array2;

const CELL: f64 = 1e-5;
const N: usize = 128;

struct Case {
    g: ImageGeometry,
    beam: RestoringBeam,
    sources: Vec<SourceTruth>,
    truth: Array2<f64>,
    taylor: Vec<Array2<f64>>,
    residual: Array2<f64>,
}

/// Two sources; the restored image carries a planted +2 % flux error on the first, the residual
/// is seeded Gaussian noise of σ = 1e-3, and the Taylor images follow each source's own curved
/// power law (I1 = α I0, I2 = (β + α(α−1)/2) I0 per component).
fn case() -> Case {
    let g = ImageGeometry::new(N, N, CELL);
    let beam = RestoringBeam::circular(3.0 * CELL);
    let mut a = point("A", 0.0, 0.0, 1.0);
    (a.alpha_power_law, a.beta_power_law, a.alpha_fit, a.beta_fit) = (-0.7, 0.0, -0.68, 0.03);
    let mut b = point("B", -30.0 * CELL, 25.0 * CELL, 0.2);
    (b.alpha_power_law, b.beta_power_law, b.alpha_fit, b.beta_fit) = (0.5, -0.2, 0.5, -0.2);
    let sources = vec![a, b];
    let mut truth = Array2::zeros((N, N));
    let residual = gaussian_noise(N, N, 1e-3, 20);
    let mut taylor = vec![residual.clone(), Array2::zeros((N, N)), Array2::zeros((N, N))];
    for (s, scale) in sources.iter().zip([1.02, 1.0]) {
        let (al, be) = (s.alpha_power_law, s.beta_power_law);
        add_gaussian(&mut truth, &g, s.l_rad, s.m_rad, s.flux_ref_jy, beam.major_fwhm_rad);
        for (t, c) in taylor.iter_mut().zip([1.0, al, be + al * (al - 1.0) / 2.0]) {
            add_gaussian(t, &g, s.l_rad, s.m_rad, c * scale * s.flux_ref_jy, beam.major_fwhm_rad);
        }
    }
    Case { g, beam, sources, truth, taylor, residual }
}

fn score(c: &Case, truth: bool, params: &ScoreParams) -> Scores {
    let images = StrategyImages {
        restored_taylor: &c.taylor,
        residual_i0: &c.residual,
        truth_convolved_i0: truth.then_some(&c.truth),
        validity: None,
    };
    score_strategy(&c.g, &c.beam, &c.sources, &images, params).unwrap()
}

#[test]
fn planted_errors_are_recovered() {
    let c = case();
    let params = ScoreParams { thermal_sigma_jy_per_beam: Some(1e-3), ..ScoreParams::default() };
    let s = score(&c, true, &params);

    // Floor: the residual is N(0, 1e-6); over the source-free mask the RMS must be 1e-3 within
    // 3σ/sqrt(2N) (standard error of the RMS, as in the statistics tests).
    let n = s.image.floor.n_pixels as f64;
    assert!((s.image.floor.rms_jy_per_beam / 1e-3 - 1.0).abs() < 3.0 / (2.0 * n).sqrt());
    let ratio = s.image.floor_over_thermal.unwrap();
    assert_eq!(ratio, s.image.floor.rms_jy_per_beam / 1e-3);
    // Peak: source A at the centre pixel, 1.02 + noise there.
    assert_eq!((s.image.restored_peak.pixel.ix, s.image.restored_peak.pixel.iy), (64, 64));
    assert_eq!(s.image.restored_peak.value_jy_per_beam, c.taylor[0][[64, 64]]);
    assert_eq!(s.image.dynamic_range, c.taylor[0][[64, 64]] / s.image.floor.rms_jy_per_beam);

    // Source A: flux error = (restored − truth⊗beam)/truth⊗beam at its pixel ≈ +2 % (the noise
    // there has σ = 1e-3: we allow 4σ); α, β from the Taylor images equal the planted ones up
    // to the noise in I0 (relative σ 1e-3 → α off by ≤ 0.7·4e-3 < 5e-3).
    let a = &s.sources[0];
    assert_eq!(a.restored_at_pixel_jy_per_beam, c.taylor[0][[64, 64]]);
    assert_eq!(a.reference_jy_per_beam, c.truth[[64, 64]]);
    assert!((a.flux_error_fraction - 0.02).abs() < 4e-3, "{}", a.flux_error_fraction);
    assert_eq!(a.restored_peak_offset_rad, 0.0);
    assert!((a.alpha_measured + 0.7).abs() < 5e-3);
    assert!((a.alpha_error_vs_power_law - (a.alpha_measured + 0.7)).abs() < 1e-15);
    assert!((a.alpha_error_vs_fit - (a.alpha_measured + 0.68)).abs() < 1e-15);
    assert!(a.beta_measured.abs() < 5e-3);
    // Max |residual| near A: brute force over its 5-beam disc.
    let brute = disc_pixels(&c.g, 0.0, 0.0, 15.0 * CELL)
        .unwrap()
        .iter()
        .map(|&(iy, ix)| c.residual[[iy, ix]].abs())
        .fold(0.0, f64::max);
    assert_eq!(a.max_abs_residual_near_jy_per_beam, brute);
    // Source B (0.2 Jy, no planted error): noise σ 1e-3 is 0.5 % of it; allow 4σ = 2 %, and α
    // (error ≈ 2.5·noise) within 0.03.
    let b = &s.sources[1];
    assert!(b.flux_error_fraction.abs() < 0.02);
    assert!((b.alpha_measured - 0.5).abs() < 0.03 && (b.beta_measured + 0.2).abs() < 0.05);

    // Error image = 0.02·(A ⊗ beam) + noise: its peak is at A, 0.02 + noise.
    let e = s.error.unwrap();
    assert_eq!((e.peak.pixel.ix, e.peak.pixel.iy), (64, 64));
    assert!((e.peak.value_jy_per_beam - 0.02).abs() < 5e-3);
    // Away from A the error is the residual noise alone (A's Gaussian is 2^(−100) down there).
    assert!((e.rms_source_free_jy_per_beam / s.image.floor.rms_jy_per_beam - 1.0).abs() < 1e-9);
    assert!(!s.residual_profile.is_empty() && !s.error_profile.is_empty());
}

#[test]
fn sources_outside_the_image_give_nan_scores() {
    let c = case();
    let mut sources = c.sources.clone();
    sources.push(point("far", 0.01, 0.0, 1.0));
    let images = StrategyImages {
        restored_taylor: &c.taylor,
        residual_i0: &c.residual,
        truth_convolved_i0: None,
        validity: None,
    };
    let s = score_strategy(&c.g, &c.beam, &sources, &images, &ScoreParams::default()).unwrap();
    let far = &s.sources[2];
    assert!(far.pixel.is_none());
    assert!(far.flux_error_fraction.is_nan() && far.alpha_measured.is_nan());
    assert!(far.max_abs_residual_near_jy_per_beam.is_nan());
    // Without truth the reference is the catalogue flux.
    assert_eq!(s.sources[0].reference_jy_per_beam, 1.0);
    assert!(s.error.is_none() && s.error_profile.is_empty());
}

#[test]
fn tables_are_rectangular_and_labelled() {
    let c = case();
    let with = score(
        &c,
        true,
        &ScoreParams { thermal_sigma_jy_per_beam: Some(1e-3), ..Default::default() },
    );
    let without = score(&c, false, &ScoreParams::default());
    let results =
        vec![("awproject".to_string(), with.clone()), ("average-beam".to_string(), without)];
    let t = summary_table(&results);
    assert_eq!(t.rows.len(), 2);
    assert!(t.rows.iter().all(|r| r.len() == t.columns.len()));
    let col = |name: &str| t.columns.iter().position(|c| c == name).unwrap();
    assert_eq!(
        t.rows[0][col("floor_rms_jy_per_beam")],
        Cell::Number(with.image.floor.rms_jy_per_beam)
    );
    assert_eq!(t.rows[0][col("dynamic_range")], Cell::Number(with.image.dynamic_range));
    assert_eq!(t.rows[1][col("floor_over_thermal")], Cell::Empty);
    assert_eq!(t.rows[1][col("error_rms_jy_per_beam")], Cell::Empty);
    assert_eq!(t.rows[1][0], Cell::Text("average-beam".into()));
    let st = source_table(&results);
    assert_eq!(st.rows.len(), 4);
    assert!(st.rows.iter().all(|r| r.len() == st.columns.len()));
    let rt = radial_table(&results);
    let expected = with.residual_profile.len() * 2 + with.error_profile.len();
    assert_eq!(rt.rows.len(), expected);
    assert!(rt.rows.iter().all(|r| r.len() == rt.columns.len()));
}

#[test]
fn invalid_inputs_are_reported() {
    let c = case();
    let images = StrategyImages {
        restored_taylor: &[],
        residual_i0: &c.residual,
        truth_convolved_i0: None,
        validity: None,
    };
    let p = ScoreParams::default();
    assert_eq!(
        score_strategy(&c.g, &c.beam, &c.sources, &images, &p).unwrap_err(),
        MetricsError::NoTaylorTerms
    );
    let bad_beam =
        RestoringBeam { major_fwhm_rad: 1e-5, minor_fwhm_rad: 2e-5, position_angle_rad: 0.0 };
    assert!(source_free_mask(&c.g, &bad_beam, &c.sources, &p.mask, None).is_err());
    let images = StrategyImages { restored_taylor: &c.taylor, ..images };
    let p = ScoreParams { thermal_sigma_jy_per_beam: Some(-1.0), ..p };
    assert!(matches!(
        score_strategy(&c.g, &c.beam, &c.sources, &images, &p),
        Err(MetricsError::InvalidParameter { value, .. }) if value == -1.0
    ));
}
