//! The same config and seed give byte-identical results whatever the number of threads: the
//! small run (9 antennas, 4 channels, 128² image, plain and w strategies, noise on) in rayon
//! pools of 1 and 2 threads writes the same metrics.json, tables, visibilities and FITS data
//! units, byte for byte. Random draws come from seeds derived per purpose and index, and every
//! parallel reduction must combine its parts in an order that does not depend on scheduling.

use std::path::{Path, PathBuf};

mod common;

use beamfloor_experiment::load_config;
use beamfloor_experiment::run::{run_experiment, RunObserver};
use common::fits::fits_data_unit;

struct Quiet;
impl RunObserver for Quiet {}

fn run_with_threads(threads: usize, out: &Path) {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/run_small.toml");
    let config = load_config(&path).unwrap_or_else(|e| panic!("{e}"));
    let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().unwrap();
    pool.install(|| run_experiment(&config, Some(&path), out, &mut Quiet))
        .unwrap_or_else(|e| panic!("{threads} thread(s): {e}"));
}

#[test]
fn one_and_two_threads_give_identical_bytes() {
    let tmp = tempfile::tempdir().unwrap();
    let (one, two) = (tmp.path().join("one"), tmp.path().join("two"));
    let start = std::time::Instant::now();
    run_with_threads(1, &one);
    run_with_threads(2, &two);
    println!("two small runs in {:.1} s", start.elapsed().as_secs_f64());

    let mut compared = Vec::new();
    let mut differ = Vec::new();
    for file in [
        "metrics.json",
        "metrics.csv",
        "sources.csv",
        "radial.csv",
        "visibilities/data.npy",
        "visibilities/weights.npy",
        "visibilities/uvw_m.npy",
    ] {
        let (a, b) =
            (std::fs::read(one.join(file)).unwrap(), std::fs::read(two.join(file)).unwrap());
        compared.push(file.to_string());
        if a != b {
            differ.push(file.to_string());
        }
    }
    for strategy in ["plain", "w"] {
        let dir = Path::new("strategies").join(strategy);
        let mut names: Vec<String> = std::fs::read_dir(one.join(&dir))
            .unwrap()
            .filter_map(|e| e.ok())
            .map(|e| e.file_name().to_string_lossy().into_owned())
            .filter(|n| n.ends_with(".fits"))
            .collect();
        names.sort();
        assert!(names.len() >= 5, "{names:?}");
        for name in names {
            let file = dir.join(&name);
            let a = std::fs::read(one.join(&file)).unwrap();
            let b = std::fs::read(two.join(&file)).unwrap();
            compared.push(file.display().to_string());
            if fits_data_unit(&a) != fits_data_unit(&b) {
                differ.push(file.display().to_string());
            }
        }
    }
    println!("compared byte for byte: {}", compared.join(", "));
    assert!(differ.is_empty(), "differ between 1 and 2 threads: {differ:?}");
}
