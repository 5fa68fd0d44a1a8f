//! The `beamfloor` binary as a user meets it: exit codes (0 success, 2 bad input, 1 failure
//! while running, 130 after Ctrl-C), the run folder's markers, the guard against overwriting
//! another experiment's folder, and an interrupted run reported as incomplete and redone.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::time::{Duration, Instant};

fn beamfloor() -> Command {
    Command::new(env!("CARGO_BIN_EXE_beamfloor"))
}

fn tiny() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/tiny.toml")
}

fn run(args: &[&str]) -> Output {
    beamfloor().args(args).output().expect("the binary starts")
}

fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}

fn path_str(p: &Path) -> &str {
    p.to_str().expect("temporary paths are UTF-8")
}

#[test]
fn check_refuses_a_physically_impossible_config_with_exit_2() {
    let tmp = tempfile::tempdir().unwrap();
    let config = tmp.path().join("coarse.toml");
    // 400″ cells cannot sample 300 m baselines at 2 GHz (Nyquist asks for ~50″ or less).
    let body = std::fs::read_to_string(tiny())
        .unwrap()
        .replace("cell_arcsec = 30.0", "cell_arcsec = 400.0");
    std::fs::write(&config, body).unwrap();
    let out = run(&["check", path_str(&config)]);
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(
        err.contains("imaging.cell_arcsec = 400.0: undersamples the longest projected baseline"),
        "{err}"
    );
    assert!(err.contains("coarse.toml:"), "the message names the file: {err}");

    let out = run(&["check", path_str(&tiny())]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let summary = text(&out.stdout);
    assert!(summary.contains("memory") && summary.contains("Nyquist"), "{summary}");
}

#[test]
fn markers_force_and_reruns() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("run");
    let out = run(&["run", path_str(&tiny()), "--out", path_str(&dir)]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    assert!(dir.join("run-complete.json").is_file());
    assert!(!dir.join("run-in-progress.json").exists());

    // The same config again: fine, and said so.
    let out = run(&["run", path_str(&tiny()), "--out", path_str(&dir)]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    assert!(text(&out.stderr).contains("holds a finished run of experiment \"tiny\""));

    // A different experiment into the same folder: refused with exit 2, the folder untouched.
    let other = tmp.path().join("other.toml");
    let body = std::fs::read_to_string(tiny()).unwrap().replace("seed = 11", "seed = 12");
    std::fs::write(&other, body).unwrap();
    let metrics_before = std::fs::read(dir.join("metrics.json")).unwrap();
    let out = run(&["run", path_str(&other), "--out", path_str(&dir)]);
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains("not overwritten") && err.contains("--force"), "{err}");
    assert_eq!(std::fs::read(dir.join("metrics.json")).unwrap(), metrics_before);
    assert!(dir.join("run-complete.json").is_file());

    // With --force it replaces that run.
    let out = run(&["run", path_str(&other), "--out", path_str(&dir), "--force"]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let marker: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("run-complete.json")).unwrap())
            .unwrap();
    let manifest: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("manifest.json")).unwrap()).unwrap();
    assert_eq!(marker["config_hash_sha256"], manifest["config_hash_sha256"]);
    assert_eq!(manifest["seed"], serde_json::json!(12));
}

#[test]
fn ctrl_c_leaves_an_incomplete_folder_that_the_next_run_redoes() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("run");
    let child = beamfloor()
        .args(["run", path_str(&tiny()), "--out", path_str(&dir)])
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    // Wait for the run to start writing its folder, then press Ctrl-C (SIGINT).
    let start = Instant::now();
    while !dir.join("run-in-progress.json").exists() {
        assert!(start.elapsed() < Duration::from_secs(60), "the run never started");
        std::thread::sleep(Duration::from_millis(5));
    }
    let status = Command::new("kill").args(["-INT", &child.id().to_string()]).status().unwrap();
    assert!(status.success());
    let out = child.wait_with_output().unwrap();
    let err = text(&out.stderr);
    // 130 = 128 + SIGINT, the shell convention for a command stopped by Ctrl-C.
    assert_eq!(out.status.code(), Some(130), "{err}");
    assert!(err.contains("marked incomplete"), "{err}");
    assert!(!dir.join("run-complete.json").exists());
    let marker: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("run-in-progress.json")).unwrap())
            .unwrap();
    assert_eq!(marker["state"], serde_json::json!("interrupted"));

    // The next invocation says the folder is incomplete and finishes it.
    let out = run(&["run", path_str(&tiny()), "--out", path_str(&dir)]);
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{err}");
    assert!(err.contains("an incomplete run of experiment \"tiny\" (interrupted)"), "{err}");
    assert!(err.contains("not a finished run"), "{err}");
    assert!(dir.join("run-complete.json").is_file());
    assert!(!dir.join("run-in-progress.json").exists());
}
