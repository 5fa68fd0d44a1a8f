//! Local sweeps of the tiny experiment (well under a second per point): every point runs and is
//! collected; a rerun runs only what is missing, including a point interrupted before its
//! marker and the points of a sweep process killed half-way; a failing point does not stop the
//! others; a point run in another process (as a Slurm task would) writes byte-identical metrics.

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

use beamfloor_experiment::sweep::{
    collect, run_local, run_point, sweep_status, PointState, QuietSweep, SweepFolder, DONE_MARKER,
    ERROR_FILE, STARTED_FILE,
};

fn tiny_text() -> String {
    std::fs::read_to_string(PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/sweep_tiny.toml"))
        .unwrap()
}

/// Writes the tiny config with the edge source's radius swept over `radii` to `dir/sweep.toml`
/// and prepares the sweep folder `dir/sweep`.
fn prepare(dir: &Path, radii: &[f64]) -> SweepFolder {
    let text = tiny_text();
    let base = &text[..text.find("[sweep]").unwrap()];
    let values: Vec<String> = radii.iter().map(|r| format!("{r:?}")).collect();
    let config = format!(
        "{base}[sweep]\n[[sweep.parameter]]\nkey = \"sky.source.edge.radius_arcmin\"\nvalues = [{}]\n",
        values.join(", ")
    );
    std::fs::create_dir_all(dir).unwrap();
    let path = dir.join("sweep.toml");
    std::fs::write(&path, config).unwrap();
    SweepFolder::prepare(&path, &dir.join("sweep")).unwrap_or_else(|e| panic!("{e}"))
}

fn marker(folder: &SweepFolder, i: usize) -> String {
    std::fs::read_to_string(folder.point_dir(i).join(DONE_MARKER)).unwrap_or_default()
}

#[test]
fn every_point_runs_and_is_collected_into_one_table_and_a_plot() {
    let tmp = tempfile::tempdir().unwrap();
    let folder = prepare(tmp.path(), &[5.0, 10.0, 15.0]);
    let summary = run_local(&folder, 2, &QuietSweep).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(summary.completed, vec![0, 1, 2]);
    assert!(summary.failed.is_empty());
    for i in 0..3 {
        assert_eq!(folder.state(i), PointState::Done);
        assert!(folder.run_dir(i).join("metrics.json").is_file());
        assert!(!folder.point_dir(i).join(STARTED_FILE).exists());
    }
    let collection = collect(&folder).unwrap_or_else(|e| panic!("{e}"));
    assert!(collection.incomplete.is_empty());
    let t = &collection.table;
    // One strategy ("plain") per point: one row per point, in point order.
    assert_eq!(t.rows.len(), 3);
    let col = |name: &str| {
        t.columns
            .iter()
            .position(|c| c == name)
            .unwrap_or_else(|| panic!("no column {name} in {:?}", t.columns))
    };
    let (point, key, strategy, floor) = (
        col("point"),
        col("sky.source.edge.radius_arcmin"),
        col("strategy"),
        col("floor_rms_jy_per_beam"),
    );
    col("dynamic_range");
    col("sources.edge.flux_error_fraction");
    col("sources.centre.alpha_error_vs_fit");
    col("sigma_img_jy_per_beam");
    use beamfloor_metrics::Cell;
    for (i, row) in t.rows.iter().enumerate() {
        assert_eq!(row[point], Cell::Number(i as f64));
        assert_eq!(row[key], Cell::Number([5.0, 10.0, 15.0][i]));
        assert_eq!(row[strategy], Cell::Text("plain".into()));
        // The floor in the table is the one in the point's own metrics.json.
        let own: serde_json::Value = serde_json::from_str(
            &std::fs::read_to_string(folder.run_dir(i).join("metrics.json")).unwrap(),
        )
        .unwrap();
        let expected = own["summary"][0]["floor_rms_jy_per_beam"].as_f64().unwrap();
        assert_eq!(row[floor], Cell::Number(expected));
    }
    let dir = folder.dir.join("collected");
    let csv = std::fs::read_to_string(dir.join("metrics.csv")).unwrap();
    assert_eq!(csv.lines().count(), 4, "a header and three rows");
    assert!(csv.starts_with("point,sky.source.edge.radius_arcmin,seed,strategy,"));
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("metrics.json")).unwrap()).unwrap();
    assert_eq!(json.as_array().map(Vec::len), Some(3));
    // PNG signature (PNG specification, section 5.2).
    let png = std::fs::read(dir.join("floor.png")).unwrap();
    assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n");
    let incomplete = std::fs::read_to_string(dir.join("incomplete.json")).unwrap();
    assert_eq!(incomplete.trim(), "[]");
}

#[test]
fn a_rerun_runs_only_missing_points_and_redoes_an_interrupted_one() {
    let tmp = tempfile::tempdir().unwrap();
    let folder = prepare(tmp.path(), &[5.0, 10.0, 15.0]);
    run_point(&folder, 0, "test").unwrap();
    run_point(&folder, 2, "test").unwrap();
    let (m0, m2) = (marker(&folder, 0), marker(&folder, 2));
    // Point 1 was interrupted after writing part of its outputs, before its marker: a stale
    // start note of a process that no longer exists, and a truncated metrics file.
    let run1 = folder.run_dir(1);
    std::fs::create_dir_all(&run1).unwrap();
    std::fs::write(run1.join("metrics.json"), "{\"summary\": [").unwrap();
    std::fs::write(
        folder.point_dir(1).join(STARTED_FILE),
        "{\"host\": \"elsewhere\", \"pid\": 1, \"unix_s\": 0}\n",
    )
    .unwrap();
    assert!(matches!(folder.state(1), PointState::Started { .. }));
    assert_eq!(sweep_status(&folder, false).pending, vec![1]);
    let summary = run_local(&folder, 2, &QuietSweep).unwrap();
    assert_eq!(summary.already_done, 2);
    assert_eq!(summary.completed, vec![1]);
    assert_eq!(marker(&folder, 0), m0, "a complete point is not run again");
    assert_eq!(marker(&folder, 2), m2);
    let metrics = std::fs::read_to_string(run1.join("metrics.json")).unwrap();
    assert!(serde_json::from_str::<serde_json::Value>(&metrics).is_ok(), "rerun from scratch");
    // Nothing left to do.
    let again = run_local(&folder, 2, &QuietSweep).unwrap();
    assert_eq!((again.already_done, again.completed.len()), (3, 0));
}

#[test]
fn a_failed_point_records_its_error_and_the_others_complete() {
    let tmp = tempfile::tempdir().unwrap();
    let folder = prepare(tmp.path(), &[5.0, 10.0, 15.0]);
    // Break point 1's config so that its run fails (an impossible dish).
    let path = folder.point_config(1);
    let text = std::fs::read_to_string(&path).unwrap();
    let broken = text.replacen("dish_diameter_m = 13.5", "dish_diameter_m = -1.0", 1);
    assert_ne!(broken, text);
    std::fs::write(&path, broken).unwrap();
    let summary = run_local(&folder, 1, &QuietSweep).unwrap();
    assert_eq!(summary.completed, vec![0, 2]);
    assert_eq!(summary.failed.len(), 1);
    assert_eq!(summary.failed[0].0, 1);
    let error = std::fs::read_to_string(folder.point_dir(1).join(ERROR_FILE)).unwrap();
    assert!(error.contains("beam.dish_diameter_m = -1.0: must be > 0"), "{error}");
    assert!(!folder.point_dir(1).join(DONE_MARKER).exists());
    let status = sweep_status(&folder, false);
    assert_eq!((status.done.clone(), status.failed.len()), (vec![0, 2], 1));
    let collection = collect(&folder).unwrap();
    assert_eq!(collection.table.rows.len(), 2);
    assert_eq!(collection.incomplete.len(), 1);
    assert_eq!((collection.incomplete[0].index, collection.incomplete[0].state), (1, "failed"));
    // Preparing again restores the point's config; the rerun retries only the failed point.
    let folder = SweepFolder::prepare(&tmp.path().join("sweep.toml"), &folder.dir).unwrap();
    let summary = run_local(&folder, 1, &QuietSweep).unwrap();
    assert_eq!((summary.already_done, summary.completed.clone()), (2, vec![1]));
    assert!(!folder.point_dir(1).join(ERROR_FILE).exists());
}

/// Not a test of its own: the child process of the two tests below (started with --ignored).
#[test]
#[ignore]
fn child_process() {
    let Ok(dir) = std::env::var("SWEEP_TEST_DIR") else { return };
    let folder = SweepFolder::open(Path::new(&dir)).unwrap();
    match std::env::var("SWEEP_TEST_POINT") {
        Ok(point) => {
            run_point(&folder, point.parse().unwrap(), "child").unwrap();
        }
        Err(_) => {
            run_local(&folder, 1, &QuietSweep).unwrap();
        }
    }
}

fn child(dir: &Path, point: Option<usize>, threads: &str) -> Command {
    let mut c = Command::new(std::env::current_exe().unwrap());
    c.args(["--ignored", "--exact", "child_process", "--test-threads=1"])
        .env("SWEEP_TEST_DIR", dir)
        .env("RAYON_NUM_THREADS", threads)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null());
    if let Some(p) = point {
        c.env("SWEEP_TEST_POINT", p.to_string());
    }
    c
}

#[test]
fn a_sweep_killed_half_way_finishes_only_the_missing_points_when_run_again() {
    let tmp = tempfile::tempdir().unwrap();
    let folder = prepare(tmp.path(), &[4.0, 6.0, 8.0, 10.0, 12.0, 14.0]);
    let mut process = child(&folder.dir, None, "1").spawn().unwrap();
    let start = Instant::now();
    let done = |f: &SweepFolder| (0..f.len()).filter(|&i| f.state(i) == PointState::Done).count();
    while done(&folder) == 0 {
        assert!(start.elapsed() < Duration::from_secs(60), "the child completed no point in 60 s");
        assert!(process.try_wait().unwrap().is_none(), "the child ended early");
        std::thread::sleep(Duration::from_millis(10));
    }
    process.kill().unwrap();
    process.wait().unwrap();
    let finished: Vec<usize> = (0..6).filter(|&i| folder.state(i) == PointState::Done).collect();
    assert!(!finished.is_empty() && finished.len() < 6, "killed after {finished:?}");
    let markers: Vec<String> = finished.iter().map(|&i| marker(&folder, i)).collect();
    let summary = run_local(&folder, 2, &QuietSweep).unwrap();
    let missing: Vec<usize> = (0..6).filter(|i| !finished.contains(i)).collect();
    assert_eq!(summary.completed, missing);
    assert_eq!(summary.already_done, finished.len());
    for (k, &i) in finished.iter().enumerate() {
        assert_eq!(marker(&folder, i), markers[k], "point {i} ran again");
    }
    assert_eq!(sweep_status(&folder, false).done.len(), 6);
}

#[test]
fn a_point_run_in_another_process_writes_byte_identical_metrics() {
    let tmp = tempfile::tempdir().unwrap();
    let here = prepare(&tmp.path().join("here"), &[10.0, 15.0]);
    let there = prepare(&tmp.path().join("there"), &[10.0, 15.0]);
    run_local(&here, 2, &QuietSweep).unwrap();
    // As a job-array task would: its own process, one thread.
    for point in 0..2 {
        let status = child(&there.dir, Some(point), "1").status().unwrap();
        assert!(status.success());
    }
    for point in 0..2 {
        let a = std::fs::read(here.run_dir(point).join("metrics.json")).unwrap();
        let b = std::fs::read(there.run_dir(point).join("metrics.json")).unwrap();
        assert!(a == b, "point {point}: metrics.json differs between the two runs");
        let ca = std::fs::read(here.point_config(point)).unwrap();
        let cb = std::fs::read(there.point_config(point)).unwrap();
        assert!(ca == cb, "point {point}: configs differ");
    }
}
