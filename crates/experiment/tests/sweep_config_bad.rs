//! Each file in `tests/sweep_bad_configs/` is the tiny sweep-test experiment with one broken
//! `[sweep]` section (lines 1–60 are a valid experiment; the section starts on line 61). The
//! table states where the error must point (file:line:column of the offending key or value)
//! and the fragments the message must contain: the key path, the value as written and what is
//! allowed. Loading goes through `load_sweep`, which checks the section's shape and then every
//! point's config.

use std::path::PathBuf;

use beamfloor_experiment::config::load_sweep;

struct Case {
    file: &'static str,
    /// `line:column` of the first problem.
    at: &'static str,
    fragments: &'static [&'static str],
}

const CASES: &[Case] = &[
    Case {
        file: "unknown_key_in_parameter",
        at: "63:1",
        fragments: &["sweep.parameter[0].kye: unknown key `kye` (did you mean `key`?)", "valid keys here: key, values, range"],
    },
    Case {
        file: "unknown_strategy_name",
        at: "63:7",
        fragments: &["sweep.parameter[0].key = \"strategy.a-proj.pa_bin_deg\": `strategy` has no entry named \"a-proj\"", "names: \"plain\""],
    },
    Case {
        file: "leaf_key_typo",
        at: "63:7",
        fragments: &["sweep.parameter[0].key = \"imaging.cell_arcsex\"", "unknown key `cell_arcsex` (did you mean `cell_arcsec`?)", "valid keys here: image_size_px, cell_arcsec"],
    },
    Case {
        file: "index_out_of_range",
        at: "63:7",
        fragments: &["sweep.parameter[0].key = \"observation.band_ghz[2]\": `observation.band_ghz` has 2 items; index 2 is out of range"],
    },
    Case {
        file: "key_syntax",
        at: "63:7",
        fragments: &["sweep.parameter[0].key = \"strategy..pa_bin_deg\": empty key part at character 10"],
    },
    Case {
        file: "step_zero",
        at: "64:44",
        fragments: &["sweep.parameter[0].range.step = 0.0: must not be 0"],
    },
    Case {
        file: "step_wrong_sign",
        at: "64:44",
        fragments: &["sweep.parameter[0].range.step = -5.0: must have the sign of stop − start = 10"],
    },
    Case {
        file: "step_and_count",
        at: "64:9",
        fragments: &["sweep.parameter[0].range = { start = 5.0, stop = 15.0, step = 5.0, count = 3 }: give exactly one of `step` and `count`"],
    },
    Case {
        file: "values_and_range",
        at: "62:1",
        fragments: &["sweep.parameter[0]", "give exactly one of `values = [...]` and `range = { start, stop, step }`"],
    },
    Case {
        file: "value_breaks_a_rule",
        at: "64:16",
        fragments: &["sweep.parameter[0].values[1] = 1.5: makes the config invalid: strategy[0].clean.gain = 1.5: must be within (0, 1]"],
    },
    Case {
        file: "range_value_breaks_a_rule",
        at: "64:9",
        fragments: &["sweep.parameter[0].range = { start = 2, stop = -2, step = -2 }: its value 0 (number 1) makes the config invalid: observation.channels = 0: must be >= 1", "its value -2 (number 2) makes the config invalid: observation.channels = -2: wrong type"],
    },
    Case {
        file: "three_parameters",
        at: "62:1",
        fragments: &["sweep.parameter = 3 parameters: a sweep varies one or two keys"],
    },
    Case {
        file: "unknown_seeds_choice",
        at: "62:9",
        fragments: &["sweep.seeds = \"random\": not a known choice; allowed: \"per-point\", \"experiment\""],
    },
    Case {
        file: "same_key_twice",
        at: "66:7",
        fragments: &["sweep.parameter[1].key = \"imaging.\\\"cell_arcsec\\\"\": the same key as sweep.parameter[0]"],
    },
];

fn bad_dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/sweep_bad_configs")
}

#[test]
fn every_bad_sweep_is_rejected_with_a_located_actionable_message() {
    let mut failures = Vec::new();
    for case in CASES {
        let path = bad_dir().join(format!("{}.toml", case.file));
        let origin = path.display().to_string();
        let message = match load_sweep(&path) {
            Ok(_) => {
                failures.push(format!("{}: accepted", case.file));
                continue;
            }
            Err(e) => e.to_string(),
        };
        let first_line = message.lines().next().unwrap_or_default();
        let prefix = format!("{origin}:{}: ", case.at);
        if !first_line.starts_with(&prefix) {
            failures.push(format!(
                "{}: expected to start with `{prefix}`, got `{first_line}`",
                case.file
            ));
        }
        for fragment in case.fragments {
            if !message.contains(fragment) {
                failures.push(format!("{}: lacks `{fragment}` in `{message}`", case.file));
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

#[test]
fn the_table_covers_every_file_in_the_folder() {
    let mut on_disk: Vec<String> = std::fs::read_dir(bad_dir())
        .unwrap()
        .filter_map(|e| e.ok())
        .filter_map(|e| e.path().file_stem().map(|s| s.to_string_lossy().into_owned()))
        .collect();
    on_disk.sort();
    let mut in_table: Vec<String> = CASES.iter().map(|c| c.file.to_string()).collect();
    in_table.sort();
    assert_eq!(on_disk, in_table);
}

#[test]
fn the_base_of_the_bad_files_is_itself_valid() {
    // Every file shares lines 1–60 with a config that loads, so each failure is the sweep's.
    let text = std::fs::read_to_string(bad_dir().join("step_zero.toml")).unwrap();
    let base: String = text.lines().take(60).map(|l| format!("{l}\n")).collect();
    beamfloor_experiment::parse_config(&base, "base.toml").unwrap_or_else(|e| panic!("{e}"));
}
