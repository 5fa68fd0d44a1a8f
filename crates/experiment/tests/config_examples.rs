//! The shipped example configs load, their resolved text round-trips to an equal config, and
//! every form the schema accepts survives the round trip.

use std::path::PathBuf;

use beamfloor_experiment::config::{
    load_config, parse_config, CleanThreshold, Config, ConfigError, Gridding, Layout, Mount,
    SourcePosition, SourceShape, Spectral, Taper, Weighting,
};

fn workspace_file(relative: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../..").join(relative)
}

fn round_trip(config: &Config) -> Config {
    let text = config.to_toml_string().expect("a validated config serializes");
    parse_config(&text, "resolved.toml").unwrap_or_else(|e| panic!("{e}\n---\n{text}"))
}

#[test]
fn demo_config_loads_with_the_intended_scenario() {
    let config = load_config(workspace_file("configs/demo.toml")).unwrap_or_else(|e| panic!("{e}"));
    let Layout::LogSpiral(spiral) = &config.array.layout else { panic!("demo uses a log spiral") };
    assert_eq!(config.array.layout.antenna_count(), Some(24));
    assert_eq!(spiral.arms, 3);
    assert_eq!(config.observation.time_samples(), 36);
    assert_eq!(config.observation.channels, 8);
    assert_eq!(config.observation.band_ghz, [1.0, 2.0]);
    assert_eq!(config.beam.mount, Mount::AltAz);
    assert!(matches!(config.beam.taper, Taper::ParabolicOnPedestal(_)));
    // The sky runs from the centre through the 80 %, 50 % and 10 % power points to the first
    // sidelobe (beyond the first null, about 70 arcmin at 1.5 GHz for this dish).
    let powers: Vec<f64> = config
        .sky
        .source
        .iter()
        .filter_map(|s| match s.position {
            SourcePosition::BeamPower { beam_power, .. } => Some(beam_power),
            _ => None,
        })
        .collect();
    assert_eq!(powers, [0.8, 0.5, 0.1]);
    assert!(config.sky.source.iter().any(|s| matches!(
        s.position,
        SourcePosition::Radius { radius_arcmin, .. } if radius_arcmin > 70.0
    )));
    assert!(config.sky.source.iter().any(|s| matches!(s.shape, SourceShape::Gaussian { .. })));
    // Every source has a spectrum and, once resolved, its reference frequency.
    assert!(config.sky.source.iter().all(|s| s.alpha != 0.0 && s.ref_freq_ghz == Some(1.5)));
    let gridding: Vec<Gridding> = config.strategy.iter().map(|s| s.gridding).collect();
    assert_eq!(gridding, [Gridding::Plain, Gridding::W, Gridding::A, Gridding::WidebandA]);
    assert!(config
        .strategy
        .iter()
        .all(|s| s.spectral == Spectral::MultiTerm && s.taylor_terms() == 2));
    assert!(config.truth.noise && config.truth.beam_rotation);
    assert_eq!(round_trip(&config), config);
}

#[test]
fn minimal_config_fills_documented_defaults() {
    let config =
        load_config(workspace_file("configs/minimal.toml")).unwrap_or_else(|e| panic!("{e}"));
    // Values below are the defaults stated in the fields' doc comments.
    assert_eq!(config.experiment.seed, 1);
    assert_eq!(config.array.latitude_deg, -30.0);
    let Layout::RandomDisc(disc) = &config.array.layout else {
        panic!("minimal uses a random disc")
    };
    assert_eq!(disc.min_spacing_m, Some(1.5 * 13.5));
    assert_eq!(config.observation.hour_angle_start_h, -3.0);
    assert_eq!(config.observation.hour_angle_end_h, 3.0);
    assert_eq!(config.observation.integration_s, 60.0);
    assert_eq!(config.observation.reference_freq_ghz, Some(1.5));
    assert_eq!(config.beam.dish_diameter_m, 13.5);
    assert_eq!(config.noise.sefd_jy, 400.0);
    assert_eq!(config.imaging.image_size_px, 512);
    assert_eq!(config.imaging.weighting, Weighting::Briggs);
    assert_eq!(config.imaging.robust, Some(0.0));
    assert_eq!(config.imaging.accuracy, 1e-6);
    let strategy = &config.strategy[0];
    assert_eq!(strategy.taylor_terms, Some(2));
    assert_eq!(strategy.scales_px, vec![0.0]);
    assert_eq!(strategy.clean.threshold(), CleanThreshold::Sigma(3.0));
    assert_eq!(strategy.clean.gain, 0.1);
    assert_eq!(round_trip(&config), config);
    // The resolved text spells the defaults out.
    let text = config.to_toml_string().unwrap();
    for line in [
        "sefd_jy = 400.0",
        "robust = 0.0",
        "taylor_terms = 2",
        "threshold_sigma = 3.0",
        "noise = true",
    ] {
        assert!(text.contains(line), "resolved text lacks `{line}`:\n{text}");
    }
}

const EVERY_FORM: &str = r#"
[experiment]
name = "every-form"
seed = 7

[array]
latitude_deg = 35.0
[array.layout]
file = "antennas.enu"

[observation]
ra_deg = 10.0
dec_deg = 50.0
hour_angle_start_h = -6.0
hour_angle_end_h = 6.0
band_ghz = [0.8, 1.7]
channels = 4

[[sky.source]]
name = "lm"
flux_jy = 1.0
l_arcmin = -3.5
m_arcmin = 2.25
ref_freq_ghz = 1.0
[[sky.source]]
name = "radec"
flux_jy = 0.5
ra_offset_arcmin = 12.0
dec_offset_arcmin = -4.0
[[sky.source]]
name = "radius"
kind = "gaussian"
flux_jy = 0.5
radius_arcmin = 20.0
position_angle_deg = -45.0
major_arcsec = 40.0
minor_arcsec = 40.0
[[sky.source]]
name = "power"
flux_jy = 3.0
beam_power = 0.5
position_angle_deg = 90.0
beta = -0.2

[beam]
taper = "uniform"
mount = "equatorial"
[beam.pointing]
offsets_arcsec = [[5.0, -5.0]]
[beam.ripple]
amplitude = 0.01
period_mhz = 25.0

[truth]
w_term = false
ripple = false

[imaging]
weighting = "uniform"
w_method = "w-kernel"
w_planes = 32

[[strategy]]
name = "cube"
gridding = "w"
spectral = "cube"
scales_px = [0.0, 4.0, 12.0]
[strategy.clean]
threshold_jy = 0.0005
max_iterations = 0

[[strategy]]
name = "mismatch"
gridding = "wideband-a"
conjugate_frequency = "fitted"
normalization = "flat-noise"
taylor_terms = 4
[strategy.imaging_beam]
dish_diameter_m = 13.0
[strategy.imaging_beam.taper.parabolic-on-pedestal]
edge_taper_db = 14.0
"#;

#[test]
fn every_schema_form_round_trips() {
    let config = parse_config(EVERY_FORM, "every.toml").unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(config.array.layout, Layout::File(PathBuf::from("antennas.enu")));
    assert_eq!(config.sky.source[0].ref_freq_ghz, Some(1.0));
    // Unset reference frequencies resolve to the band centre, (0.8 + 1.7) / 2.
    assert_eq!(config.sky.source[1].ref_freq_ghz, Some(1.25));
    assert!(
        matches!(config.sky.source[2].shape, SourceShape::Gaussian { pa_deg, .. } if pa_deg == 0.0)
    );
    assert_eq!(config.imaging.robust, None, "robust is only filled in for Briggs weighting");
    assert_eq!(config.strategy[0].taylor_terms(), 1);
    assert_eq!(config.strategy[0].clean.threshold(), CleanThreshold::Jy(0.0005));
    assert_eq!(config.strategy[0].clean.threshold_sigma, None);
    let mismatch = &config.strategy[1];
    let imaging_beam = mismatch.imaging_beam(&config.beam);
    assert_eq!(imaging_beam.dish_diameter_m, 13.0);
    assert_eq!(imaging_beam.mount, Mount::Equatorial, "keys not overridden come from [beam]");
    assert_eq!(config.beam.dish_diameter_m, 13.5, "the truth keeps its own beam");
    assert_eq!(round_trip(&config), config);
    assert_eq!(round_trip(&round_trip(&config)), config);
}

#[test]
fn load_checks_that_the_antenna_file_exists() {
    let dir = tempfile::tempdir().unwrap();
    let config_path = dir.path().join("every.toml");
    std::fs::write(&config_path, EVERY_FORM).unwrap();
    let err = load_config(&config_path).unwrap_err();
    let message = err.to_string();
    // `file = "antennas.enu"` is on line 9, its value at column 8.
    assert!(
        message.contains("every.toml:9:8: array.layout.file = \"antennas.enu\": no such file"),
        "{message}"
    );
    std::fs::write(dir.path().join("antennas.enu"), "0 0 0\n100 0 0\n").unwrap();
    load_config(&config_path).unwrap_or_else(|e| panic!("{e}"));
    let missing = load_config(dir.path().join("absent.toml")).unwrap_err();
    assert!(matches!(missing, ConfigError::Read { .. }), "{missing}");
}
