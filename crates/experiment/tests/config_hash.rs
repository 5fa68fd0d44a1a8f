//! The truth hash follows exactly the keys that determine the simulated visibilities.

use std::path::PathBuf;

use beamfloor_experiment::config::parse_config;

/// A full config with every section (a frozen copy of an earlier demo, so the demo can evolve
/// without silently changing what these tests edit).
fn demo_text() -> String {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/hash_base.toml");
    std::fs::read_to_string(path).unwrap()
}

/// The base config with the first occurrence of `old` replaced by `new`; panics if `old` is absent,
/// so a stale edit cannot make a test pass vacuously.
fn edited(old: &str, new: &str) -> String {
    let text = demo_text();
    assert!(text.contains(old), "hash_base.toml no longer contains `{old}`");
    text.replacen(old, new, 1)
}

fn hash_of(text: &str) -> String {
    parse_config(text, "demo.toml").unwrap_or_else(|e| panic!("{e}")).truth_hash()
}

#[test]
fn hash_is_stable_hex_sha256() {
    let h = hash_of(&demo_text());
    assert_eq!(h.len(), 64);
    assert!(h.chars().all(|c| c.is_ascii_hexdigit() && !c.is_ascii_uppercase()));
    assert_eq!(h, hash_of(&demo_text()), "same text, same hash");
}

#[test]
fn hash_changes_with_every_truth_section() {
    let base = hash_of(&demo_text());
    let truth_edits = [
        ("seed = 20261201", "seed = 20261202"),
        ("latitude_deg = -28.7", "latitude_deg = -28.8"),
        ("antennas_per_arm = 8", "antennas_per_arm = 7"),
        ("dec_deg = -40.0", "dec_deg = -41.0"),
        ("channels = 16", "channels = 17"),
        ("integration_s = 240.0", "integration_s = 241.0"),
        ("beam_power = 0.1", "beam_power = 0.11"),
        ("alpha = -0.7", "alpha = -0.71"),
        ("dish_diameter_m = 13.5", "dish_diameter_m = 13.6"),
        ("squint_fraction_of_hpbw = 0.03", "squint_fraction_of_hpbw = 0.04"),
        ("rms_arcsec = 15.0", "rms_arcsec = 16.0"),
        ("edge_taper_db = 12.0", "edge_taper_db = 13.0"),
        ("[truth]\nnoise = true", "[truth]\nnoise = false"),
        ("[truth]\nnoise = true", "[truth]\nnoise = true\nbeam_rotation = false"),
        ("sefd_jy = 420.0", "sefd_jy = 421.0"),
        ("efficiency = 0.96", "efficiency = 0.95"),
    ];
    for (old, new) in truth_edits {
        assert_ne!(
            hash_of(&edited(old, new)),
            base,
            "editing `{old}` → `{new}` must change the truth hash"
        );
    }
}

#[test]
fn hash_ignores_imaging_strategies_output_and_labels() {
    let base = hash_of(&demo_text());
    let other_edits = [
        ("name = \"demo\"", "name = \"demo-2\""),
        ("description = \"Average-beam", "description = \"Other words. Average-beam"),
        ("cell_arcsec = 10.0", "cell_arcsec = 9.0"),
        ("robust = 0.0", "robust = 0.5"),
        ("gain = 0.1", "gain = 0.2"),
        ("pa_bin_deg = 5.0", "pa_bin_deg = 2.5"),
        ("conjugate_frequency = \"scaling\"", "conjugate_frequency = \"fitted\""),
        ("name = \"w-only\"", "name = \"w-term-only\""),
        ("visibilities = false", "visibilities = true"),
        ("directory = \"../runs\"", "directory = \"elsewhere\""),
    ];
    for (old, new) in other_edits {
        assert_eq!(
            hash_of(&edited(old, new)),
            base,
            "editing `{old}` → `{new}` must not change the truth hash"
        );
    }
}

#[test]
fn writing_a_default_out_does_not_change_the_hash() {
    // The hash is of the resolved config, so spelling out a default changes nothing.
    let base = hash_of(&demo_text());
    let explicit =
        edited("[truth]\nnoise = true", "[truth]\nnoise = true\nw_term = true\nripple = true");
    assert_eq!(hash_of(&explicit), base);
    let config = parse_config(&demo_text(), "demo.toml").unwrap();
    assert_eq!(hash_of(&config.to_toml_string().unwrap()), base);
}
