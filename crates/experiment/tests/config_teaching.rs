//! Every config shipped in `configs/` loads, round-trips through its resolved text, maps onto a
//! scenario (observation, sky, beam) and has every strategy buildable, so a user who copies one
//! never starts from a broken file.

use std::path::PathBuf;

use beamfloor_experiment::run::{check_strategies, preflight_with_memory};
use beamfloor_experiment::scenario::Scenario;
use beamfloor_experiment::{load_config, parse_config};

#[test]
fn every_shipped_config_loads_round_trips_and_builds_its_scenario() {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../configs");
    let mut paths: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    paths.sort();
    for name in ["demo", "noise-limited", "pointing-mismatch", "squint-stokes-v", "wide-field-w"] {
        assert!(
            paths.iter().any(|p| p.file_stem().is_some_and(|s| s == name)),
            "configs/{name}.toml is missing"
        );
    }
    for path in &paths {
        let config = load_config(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        let text = config.to_toml_string().unwrap();
        let again =
            parse_config(&text, "resolved").unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        assert_eq!(config, again, "{} does not round-trip", path.display());
        // The physical checks a run makes first (Nyquist cell, sources inside the image, a
        // track above the elevation limit, kernel on the grid; memory against a fixed 16 GiB so
        // the test does not depend on this machine).
        preflight_with_memory(&config, Some(path), Some(16 << 30))
            .unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        let scenario = Scenario::build(&config, Some(path))
            .unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        assert!(!scenario.sky.is_empty());
        let unavailable =
            check_strategies(&config).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        assert!(unavailable.is_empty(), "{}: {unavailable:?}", path.display());
        println!(
            "{}: {} rows, {} sources",
            path.display(),
            scenario.observation.n_rows(),
            scenario.sky.len()
        );
    }
}
