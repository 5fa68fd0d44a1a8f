//! Strategies of one run share PSFs made by the same gridder (`PsfCache`): the A-projection
//! strategy of the small demo, which gets its PSFs from the w-stacked "average-beam" strategy
//! before it (same Taylor terms), writes the same PSF, model, residual and restored images, byte
//! for byte, as when it runs alone and makes its PSFs itself. (A self-consistency check of the
//! cache's key; the PSFs' values are checked elsewhere against direct sums.)

use std::path::{Path, PathBuf};

mod common;

use beamfloor_experiment::load_config;
use beamfloor_experiment::run::{run_experiment, RunObserver};
use common::fits::fits_data_unit;

struct Quiet;
impl RunObserver for Quiet {}

#[test]
fn a_strategy_gets_the_same_psfs_from_the_cache_as_alone() {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/demo_small.toml");
    let mut shared = load_config(&path).unwrap_or_else(|e| panic!("{e}"));
    shared.strategy.truncate(2); // w-stacked "average-beam", then "a-projection"
    assert_eq!(shared.strategy[1].name, "a-projection");
    let mut alone = shared.clone();
    alone.strategy.remove(0);
    let tmp = tempfile::tempdir().unwrap();
    let (with_cache, by_itself) = (tmp.path().join("shared"), tmp.path().join("alone"));
    run_experiment(&shared, Some(&path), &with_cache, &mut Quiet).unwrap_or_else(|e| panic!("{e}"));
    run_experiment(&alone, Some(&path), &by_itself, &mut Quiet).unwrap_or_else(|e| panic!("{e}"));
    let dir = Path::new("strategies").join("a-projection");
    for name in ["psf.fits", "model.fits", "residual.fits", "restored.fits"] {
        let file = dir.join(name);
        let a = std::fs::read(with_cache.join(&file)).unwrap();
        let b = std::fs::read(by_itself.join(&file)).unwrap();
        assert!(fits_data_unit(&a) == fits_data_unit(&b), "{} differs", file.display());
    }
}
