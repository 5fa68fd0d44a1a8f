//! Sweep planning: key paths reach the right entry, ranges give the documented values, each
//! point's seed is derived from (experiment seed, point index), and every point's resolved
//! config loads back equal.

use std::path::PathBuf;

use beamfloor_core::{derive_seed, SeedPurpose};
use beamfloor_experiment::config::{
    expand_sweep, load_sweep, parse_config, SweepKey, SweepRange, SweepSeeds,
};

fn tiny_path() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/sweep_tiny.toml")
}

fn tiny_text() -> String {
    std::fs::read_to_string(tiny_path()).unwrap()
}

/// The tiny config with its `[sweep]` replaced by `sweep` (TOML text).
fn with_sweep(sweep: &str) -> String {
    let text = tiny_text();
    let base = &text[..text.find("[sweep]").unwrap()];
    format!("{base}{sweep}")
}

fn range(
    start: toml::Value,
    stop: toml::Value,
    step: Option<toml::Value>,
    count: Option<u64>,
) -> SweepRange {
    SweepRange { start, stop, step, count }
}

fn floats(values: &[toml::Value]) -> Vec<f64> {
    values.iter().map(|v| v.as_float().unwrap_or_else(|| panic!("{v} is not a float"))).collect()
}

#[test]
fn ranges_follow_the_documented_rules() {
    use toml::Value::{Float as F, Integer as I};
    // numpy.linspace(1.0, 2.0, 5) = [1.0, 1.25, 1.5, 1.75, 2.0] (numpy documentation's example
    // of linspace with both ends).
    let r = range(F(1.0), F(2.0), None, Some(5));
    assert_eq!(floats(&r.values().unwrap()), vec![1.0, 1.25, 1.5, 1.75, 2.0]);
    // A step range includes a stop that lies on the grid, unlike numpy.arange(0.1, 0.4, 0.1)
    // (which gives [0.1, 0.2, 0.3], and whose 0.1 + 2 · 0.1 prints as 0.30000000000000004).
    let r = range(F(0.1), F(0.4), Some(F(0.1)), None);
    assert_eq!(floats(&r.values().unwrap()), vec![0.1, 0.2, 0.3, 0.4]);
    // A stop off the grid is left out.
    let r = range(F(10.0), F(35.0), Some(F(10.0)), None);
    assert_eq!(floats(&r.values().unwrap()), vec![10.0, 20.0, 30.0]);
    // Descending, with a negative step.
    let r = range(F(5.0), F(1.0), Some(F(-2.0)), None);
    assert_eq!(floats(&r.values().unwrap()), vec![5.0, 3.0, 1.0]);
    // Whole numbers stay whole numbers (integer keys need them).
    let r = range(I(2), I(8), Some(I(2)), None);
    assert_eq!(r.values().unwrap(), vec![I(2), I(4), I(6), I(8)]);
    let r = range(I(1), I(4), None, Some(4));
    assert_eq!(r.values().unwrap(), vec![I(1), I(2), I(3), I(4)]);
    // An uneven division with count gives numbers with a fraction.
    let r = range(I(0), I(1), None, Some(3));
    assert_eq!(floats(&r.values().unwrap()), vec![0.0, 0.5, 1.0]);
    // Bad ranges say why.
    let why = |r: SweepRange| r.values().unwrap_err();
    assert!(why(range(F(1.0), F(2.0), Some(F(0.0)), None)).contains("must not be 0"));
    assert!(why(range(F(1.0), F(2.0), Some(F(-0.5)), None)).contains("sign of stop − start"));
    assert!(why(range(F(1.0), F(2.0), Some(F(0.5)), Some(3))).contains("exactly one of"));
    assert!(why(range(F(1.0), F(2.0), None, Some(0))).contains("within 1..=10000"));
    assert!(why(range(F(0.0), F(1.0), Some(F(1e-6)), None)).contains("at most 10000"));
}

#[test]
fn key_paths_parse_and_print() {
    let k = SweepKey::parse("strategy.a-proj.pa_bin_deg").unwrap();
    assert_eq!(k.0.len(), 3);
    assert_eq!(k.0[1].key, "a-proj");
    let k = SweepKey::parse("observation.band_ghz[1]").unwrap();
    assert_eq!(k.0[1].indices, vec![1]);
    let k = SweepKey::parse("strategy.\"w.2\".clean.gain").unwrap();
    assert_eq!(k.0[1].key, "w.2");
    assert_eq!(k.to_string(), "strategy.\"w.2\".clean.gain");
    assert_eq!(
        SweepKey::parse("strategy.*.pa_bin_deg").unwrap().to_string(),
        "strategy.*.pa_bin_deg"
    );
    for bad in ["", "a..b", "a.b[x]", "a.b[1", "a b", "a.\"b", "a.b*"] {
        assert!(SweepKey::parse(bad).is_err(), "{bad:?} accepted");
    }
}

#[test]
fn points_get_their_values_seeds_and_complete_configs() {
    let sweep = load_sweep(tiny_path()).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(sweep.keys, vec!["sky.source.edge.radius_arcmin"]);
    assert_eq!(sweep.points.len(), 3);
    let base_seed = sweep.base.experiment.seed;
    for (i, point) in sweep.points.iter().enumerate() {
        assert_eq!(point.index, i);
        // The seed is the core's derivation for purpose SweepPoint, top 63 bits.
        let expected = derive_seed(base_seed, SeedPurpose::SweepPoint, i as u64) >> 1;
        assert_eq!(point.seed, expected);
        assert_eq!(point.config.experiment.seed, expected);
        assert!(point.config.sweep.is_none());
        // Only the named source moved.
        let radius = [5.0, 10.0, 15.0][i];
        let edge = &point.config.sky.source[1];
        assert_eq!(edge.name, "edge");
        assert_eq!(
            edge.position,
            beamfloor_experiment::config::SourcePosition::Radius {
                radius_arcmin: radius,
                position_angle_deg: 30.0
            }
        );
        assert_eq!(point.config.sky.source[0], sweep.base.sky.source[0]);
        assert_eq!(point.config.strategy, sweep.base.strategy);
        // The resolved TOML is a complete config that loads back equal.
        let text = point.config.to_toml_string().unwrap();
        let again = parse_config(&text, "point.toml").unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(again, point.config);
    }
    let seeds: std::collections::HashSet<u64> = sweep.points.iter().map(|p| p.seed).collect();
    assert_eq!(seeds.len(), 3);
}

#[test]
fn two_parameters_make_a_grid_with_the_last_varying_fastest() {
    let text = with_sweep(
        r#"[sweep]
seeds = "experiment"
[[sweep.parameter]]
key = "observation.band_ghz[1]"
range = { start = 1.5, stop = 2.0, count = 2 }
[[sweep.parameter]]
key = "strategy.*.clean.gain"
values = [0.1, 0.2, 0.3]
"#,
    );
    let sweep = expand_sweep(&text, "grid.toml", None).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(sweep.base.sweep.as_ref().unwrap().seeds, SweepSeeds::Experiment);
    assert_eq!(sweep.points.len(), 6);
    for p in &sweep.points {
        let (i0, i1) = (p.index / 3, p.index % 3);
        assert_eq!(p.config.observation.band_ghz, [1.0, [1.5, 2.0][i0]]);
        assert_eq!(p.config.strategy[0].clean.gain, [0.1, 0.2, 0.3][i1]);
        assert_eq!(p.seed, 11, "seeds = \"experiment\" keeps the experiment seed");
        // The default reference frequency follows the swept band (resolved per point).
        let top = [1.5, 2.0][i0];
        assert_eq!(p.config.observation.reference_freq_ghz, Some(0.5 * (1.0 + top)));
    }
}

#[test]
fn a_key_the_file_does_not_write_is_created_and_judged_by_the_schema() {
    let text = with_sweep(
        "[sweep]\n[[sweep.parameter]]\nkey = \"strategy.plain.kernel_oversampling\"\nrange = { start = 8, stop = 32, step = 8 }\n",
    );
    let sweep = expand_sweep(&text, "k.toml", None).unwrap_or_else(|e| panic!("{e}"));
    let got: Vec<u32> =
        sweep.points.iter().map(|p| p.config.strategy[0].kernel_oversampling).collect();
    assert_eq!(got, vec![8, 16, 24, 32]);
}
