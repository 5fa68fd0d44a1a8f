//! Visibility sets on disk: exact round trip, and a clear error (never a panic) for each way a
//! folder can be damaged.

mod common;

use std::path::Path;

use beamfloor_report::{read_visset, write_visset, ReportError};
use common::vis_fixture;
use ndarray::Array1;

fn written(tmp: &Path) -> std::path::PathBuf {
    let dir = tmp.join("vis");
    write_visset(&dir, &vis_fixture(5, 6, 4)).expect("write");
    dir
}

#[test]
fn round_trip_is_exact() {
    // The .npy format stores IEEE doubles byte for byte (numpy format spec, NEP 1), so the set
    // read back must equal the one written exactly, including the u64 seed above 2^53.
    let tmp = tempfile::tempdir().unwrap();
    let vis = vis_fixture(5, 6, 4);
    let dir = tmp.path().join("vis");
    write_visset(&dir, &vis).unwrap();
    let back = read_visset(&dir).unwrap();
    assert_eq!(back, vis);
    // Nothing but the folder is left next to it (the temporary folder was renamed).
    let names: Vec<_> =
        std::fs::read_dir(tmp.path()).unwrap().map(|e| e.unwrap().file_name()).collect();
    assert_eq!(names, vec![std::ffi::OsString::from("vis")]);
}

#[test]
fn rewriting_replaces_an_existing_set() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = written(tmp.path());
    let other = vis_fixture(3, 2, 3);
    write_visset(&dir, &other).unwrap();
    assert_eq!(read_visset(&dir).unwrap(), other);
    assert_eq!(std::fs::read_dir(tmp.path()).unwrap().count(), 1);
}

#[test]
fn refuses_to_replace_a_folder_that_is_not_a_set() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("precious");
    std::fs::create_dir(&dir).unwrap();
    std::fs::write(dir.join("notes.txt"), "keep me").unwrap();
    let err = write_visset(&dir, &vis_fixture(3, 2, 2)).unwrap_err();
    assert!(matches!(err, ReportError::DestinationExists { ref path } if path == &dir), "{err}");
    assert!(dir.join("notes.txt").is_file());
}

#[test]
fn truncated_data_file() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = written(tmp.path());
    let f = dir.join("data.npy");
    let len = std::fs::metadata(&f).unwrap().len();
    let file = std::fs::OpenOptions::new().write(true).open(&f).unwrap();
    file.set_len(len - 16).unwrap();
    match read_visset(&dir).unwrap_err() {
        ReportError::WrongFileSize { path, expected_bytes, found_bytes } => {
            assert_eq!(path, f);
            assert_eq!((expected_bytes, found_bytes), (len, len - 16));
        }
        e => panic!("wrong error: {e}"),
    }
}

#[test]
fn file_cut_inside_its_header() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = written(tmp.path());
    let f = dir.join("weights.npy");
    std::fs::OpenOptions::new().write(true).open(&f).unwrap().set_len(20).unwrap();
    let err = read_visset(&dir).unwrap_err();
    assert!(matches!(err, ReportError::NpyHeader { ref path, .. } if path == &f), "{err}");
}

#[test]
fn missing_file() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = written(tmp.path());
    std::fs::remove_file(dir.join("flags.npy")).unwrap();
    let err = read_visset(&dir).unwrap_err();
    assert!(
        matches!(err, ReportError::MissingFile { ref path } if path == &dir.join("flags.npy")),
        "{err}"
    );
    assert!(err.to_string().contains("flags.npy"));
    std::fs::remove_file(dir.join("manifest.json")).unwrap();
    let err = read_visset(&dir).unwrap_err();
    assert!(
        matches!(err, ReportError::MissingFile { ref path } if path.ends_with("manifest.json"))
    );
}

fn edit_manifest(dir: &Path, edit: impl FnOnce(&mut serde_json::Value)) {
    let p = dir.join("manifest.json");
    let mut v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&p).unwrap()).unwrap();
    edit(&mut v);
    std::fs::write(&p, serde_json::to_string(&v).unwrap()).unwrap();
}

#[test]
fn manifest_with_wrong_shape() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = written(tmp.path());
    let nr = 10 * 6; // 5 antennas -> 10 baselines, 6 times
    edit_manifest(&dir, |v| v["arrays"]["data"]["shape"] = serde_json::json!([nr, 4, 3]));
    match read_visset(&dir).unwrap_err() {
        ReportError::ShapeMismatch { path, expected, found } => {
            assert!(path.ends_with("manifest.json"));
            assert_eq!(expected, vec![nr, 4, 2]);
            assert_eq!(found, vec![nr, 4, 3]);
        }
        e => panic!("wrong error: {e}"),
    }
}

#[test]
fn manifest_counts_disagree_with_the_files() {
    // A self-consistent manifest (counts and shapes edited together) that no longer describes
    // the files: the file's own header must be compared.
    let tmp = tempfile::tempdir().unwrap();
    let dir = written(tmp.path());
    edit_manifest(&dir, |v| {
        v["n_channels"] = serde_json::json!(5);
        for (name, shape) in [
            ("frequencies_hz", serde_json::json!([5])),
            ("data", serde_json::json!([60, 5, 2])),
            ("weights", serde_json::json!([60, 5, 2])),
            ("flags", serde_json::json!([60, 5, 2])),
        ] {
            v["arrays"][name]["shape"] = shape;
        }
    });
    match read_visset(&dir).unwrap_err() {
        ReportError::ShapeMismatch { path, expected, found } => {
            assert_eq!(path, dir.join("frequencies_hz.npy"));
            assert_eq!((expected, found), (vec![5], vec![4]));
        }
        e => panic!("wrong error: {e}"),
    }
}

#[test]
fn wrong_version_and_format() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = written(tmp.path());
    edit_manifest(&dir, |v| v["version"] = serde_json::json!(2));
    let err = read_visset(&dir).unwrap_err();
    assert!(matches!(err, ReportError::UnsupportedFormat { version: 2, .. }), "{err}");
    edit_manifest(&dir, |v| {
        v["version"] = serde_json::json!(1);
        v["format"] = serde_json::json!("something-else");
    });
    assert!(matches!(read_visset(&dir).unwrap_err(), ReportError::UnsupportedFormat { .. }));
    std::fs::write(dir.join("manifest.json"), "{ not json").unwrap();
    assert!(matches!(read_visset(&dir).unwrap_err(), ReportError::Manifest { .. }));
}

#[test]
fn wrong_dtype_in_a_file() {
    // numpy would happily save antenna indices as int64; the reader must say so, not misread.
    let tmp = tempfile::tempdir().unwrap();
    let dir = written(tmp.path());
    let f = dir.join("antenna1.npy");
    ndarray_npy::write_npy(&f, &Array1::<i64>::zeros(60)).unwrap();
    match read_visset(&dir).unwrap_err() {
        ReportError::DtypeMismatch { path, expected, found } => {
            assert_eq!(path, f);
            assert_eq!((expected.as_str(), found.as_str()), ("<u4", "<i8"));
        }
        e => panic!("wrong error: {e}"),
    }
}

#[test]
fn inconsistent_content_is_caught_by_validate() {
    // A time index beyond the number of times passes every file check but not VisSet::validate.
    let tmp = tempfile::tempdir().unwrap();
    let dir = written(tmp.path());
    ndarray_npy::write_npy(dir.join("time_index.npy"), &Array1::<u32>::from_elem(60, 99)).unwrap();
    let err = read_visset(&dir).unwrap_err();
    assert!(matches!(err, ReportError::InvalidVisSet { .. }), "{err}");
}

#[test]
fn invalid_set_is_not_written() {
    let tmp = tempfile::tempdir().unwrap();
    let mut vis = vis_fixture(3, 2, 2);
    vis.frequencies_hz.reverse();
    let err = write_visset(&tmp.path().join("v"), &vis).unwrap_err();
    assert!(matches!(err, ReportError::InvalidVisSet { .. }), "{err}");
    assert_eq!(std::fs::read_dir(tmp.path()).unwrap().count(), 0);
}
