//! The run folder's life cycle: an "in progress" marker from the start, a "complete" marker
//! written last, and a guard against overwriting a folder that holds a different experiment.
//!
//! A folder is a finished run exactly when [`COMPLETE_MARKER`] is present and
//! [`IN_PROGRESS_MARKER`] is not. A run removes the complete marker before writing anything,
//! writes the in-progress marker (state `running`), and at the very end writes the complete
//! marker (to a temporary name, renamed into place) and only then removes the in-progress
//! marker. A run that stops on the way — an error, Ctrl-C ([`mark_interrupted`]), a kill, a
//! power cut — therefore always leaves the in-progress marker behind, and is never mistaken for
//! a finished one. Both markers carry the config hash (SHA-256 of the resolved config's text,
//! the manifest's `config_hash_sha256`), which tells this experiment from another.

use std::path::{Path, PathBuf};

use serde_json::{json, Value};
use sha2::{Digest, Sha256};

use super::RunError;
use crate::config::Config;

/// Present while a run is writing the folder, or left behind by one that stopped early.
pub const IN_PROGRESS_MARKER: &str = "run-in-progress.json";
/// Written last, when every output is in place.
pub const COMPLETE_MARKER: &str = "run-complete.json";

/// What a folder holds, as far as runs are concerned.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum RunFolderState {
    /// No such folder, or an empty one.
    Empty,
    /// Files, but no trace of a beamfloor run (no marker, no run manifest).
    Unrelated,
    /// A run that has not finished: still running, or stopped early.
    Incomplete {
        /// The config hash of that run (None when unknown).
        config_hash: Option<String>,
        /// Its experiment name (None when unknown).
        experiment: Option<String>,
        /// `running`, `interrupted`, `failed`, or `no markers` for a folder written before
        /// markers existed that lacks the complete marker.
        state: String,
    },
    /// A finished run.
    Complete {
        /// The config hash of that run.
        config_hash: String,
        /// Its experiment name.
        experiment: String,
    },
}

impl RunFolderState {
    /// The config hash of the run in the folder, when there is one.
    pub fn config_hash(&self) -> Option<&str> {
        match self {
            RunFolderState::Incomplete { config_hash, .. } => config_hash.as_deref(),
            RunFolderState::Complete { config_hash, .. } => Some(config_hash),
            _ => None,
        }
    }
}

/// SHA-256 (lower-case hex) of the resolved config's text: what identifies an experiment in
/// its run folder (the same value as the manifest's `config_hash_sha256`).
pub fn config_hash(config: &Config) -> String {
    let resolved = config.to_toml_string().unwrap_or_default();
    Sha256::digest(resolved.as_bytes()).iter().map(|b| format!("{b:02x}")).collect()
}

fn read_json(path: &Path) -> Option<Value> {
    let text = std::fs::read_to_string(path).ok()?;
    serde_json::from_str(&text).ok()
}

fn text_field(v: &Value, key: &str) -> Option<String> {
    v.get(key).and_then(Value::as_str).map(str::to_string)
}

/// Reads the state of the folder `dir` (never fails: unreadable markers count as an
/// incomplete run of unknown experiment).
pub fn run_folder_state(dir: &Path) -> RunFolderState {
    let Ok(mut entries) = std::fs::read_dir(dir) else { return RunFolderState::Empty };
    if entries.next().is_none() {
        return RunFolderState::Empty;
    }
    let in_progress = dir.join(IN_PROGRESS_MARKER);
    let complete = dir.join(COMPLETE_MARKER);
    if in_progress.exists() {
        let v = read_json(&in_progress).unwrap_or(Value::Null);
        return RunFolderState::Incomplete {
            config_hash: text_field(&v, "config_hash_sha256"),
            experiment: text_field(&v, "experiment"),
            state: text_field(&v, "state").unwrap_or_else(|| "unreadable marker".into()),
        };
    }
    if complete.exists() {
        let v = read_json(&complete).unwrap_or(Value::Null);
        return match (text_field(&v, "config_hash_sha256"), text_field(&v, "experiment")) {
            (Some(config_hash), Some(experiment)) => {
                RunFolderState::Complete { config_hash, experiment }
            }
            (hash, name) => RunFolderState::Incomplete {
                config_hash: hash,
                experiment: name,
                state: "unreadable complete marker".into(),
            },
        };
    }
    // A folder from before the markers: its run manifest says which experiment it holds.
    match read_json(&dir.join("manifest.json")) {
        Some(v) if v.get("tool").and_then(Value::as_str) == Some("beamfloor") => {
            RunFolderState::Incomplete {
                config_hash: text_field(&v, "config_hash_sha256"),
                experiment: None,
                state: "no markers".into(),
            }
        }
        _ => RunFolderState::Unrelated,
    }
}

/// Starts a run of `config` in `dir` (created if missing): refuses a folder that holds a
/// different experiment ([`RunError::ForeignRunFolder`]; see [`clear_run_folder`] for
/// `--force`), then removes the complete marker and writes the in-progress marker. Returns the
/// state the folder was in, so that a caller can say it is redoing an incomplete run.
pub fn begin_run(dir: &Path, config: &Config) -> Result<RunFolderState, RunError> {
    let io = |path: &Path| {
        let path = path.to_path_buf();
        move |source| RunError::Io { path, source }
    };
    let before = run_folder_state(dir);
    let hash = config_hash(config);
    if let Some(found) = before.config_hash() {
        if found != hash {
            return Err(RunError::ForeignRunFolder {
                path: dir.to_path_buf(),
                found_hash: found.to_string(),
                expected_hash: hash,
                state: describe_state(&before),
            });
        }
    }
    std::fs::create_dir_all(dir).map_err(io(dir))?;
    let complete = dir.join(COMPLETE_MARKER);
    if complete.exists() {
        std::fs::remove_file(&complete).map_err(io(&complete))?;
    }
    write_marker(dir, IN_PROGRESS_MARKER, &marker(config, &hash, "running"))?;
    Ok(before)
}

/// Ends a run: writes the complete marker (atomically), then removes the in-progress marker.
pub fn finish_run(dir: &Path, config: &Config) -> Result<(), RunError> {
    let hash = config_hash(config);
    write_marker(dir, COMPLETE_MARKER, &marker(config, &hash, "complete"))?;
    let in_progress = dir.join(IN_PROGRESS_MARKER);
    std::fs::remove_file(&in_progress).map_err(|source| RunError::Io { path: in_progress, source })
}

/// Marks the run in `dir` as stopped early with `state` (`interrupted` after Ctrl-C, `failed`
/// after an error), keeping the rest of its marker. Does nothing when no run is in progress
/// there (it finished, or never started), so a finished run is never marked.
pub fn mark_stopped(dir: &Path, state: &str) -> Result<(), RunError> {
    let path = dir.join(IN_PROGRESS_MARKER);
    if !path.exists() {
        return Ok(());
    }
    let mut v = read_json(&path).unwrap_or_else(|| json!({}));
    if let Some(map) = v.as_object_mut() {
        map.insert("state".into(), json!(state));
        map.insert("stopped_unix_s".into(), json!(unix_seconds()));
    }
    write_marker(dir, IN_PROGRESS_MARKER, &v)
}

/// [`mark_stopped`] with state `interrupted` (for a Ctrl-C handler).
pub fn mark_interrupted(dir: &Path) -> Result<(), RunError> {
    mark_stopped(dir, "interrupted")
}

/// Removes what a run writes from `dir` (markers, manifest, metrics, tables, page, resolved
/// config, `plots/`, `strategies/` and `visibilities/`, and temporaries left by a killed run), so
/// that a different experiment can be run there (`beamfloor run --force`). Other files are left
/// alone.
pub fn clear_run_folder(dir: &Path) -> Result<(), RunError> {
    let Ok(entries) = std::fs::read_dir(dir) else { return Ok(()) };
    const FILES: [&str; 9] = [
        IN_PROGRESS_MARKER,
        COMPLETE_MARKER,
        "manifest.json",
        "metrics.json",
        "metrics.csv",
        "sources.csv",
        "radial.csv",
        "report.html",
        "config.resolved.toml",
    ];
    const DIRS: [&str; 3] = ["plots", "strategies", "visibilities"];
    for entry in entries.flatten() {
        let name = entry.file_name().to_string_lossy().into_owned();
        let path = entry.path();
        let temporary = name.starts_with('.') && name.contains(".tmp");
        let result = if DIRS.contains(&name.as_str()) || (temporary && path.is_dir()) {
            std::fs::remove_dir_all(&path)
        } else if FILES.contains(&name.as_str()) || temporary {
            std::fs::remove_file(&path)
        } else {
            continue;
        };
        result.map_err(|source| RunError::Io { path: path.clone(), source })?;
    }
    Ok(())
}

/// A line saying what a folder holds, for messages.
pub fn describe_state(state: &RunFolderState) -> String {
    match state {
        RunFolderState::Empty => "empty".into(),
        RunFolderState::Unrelated => "files that are not a beamfloor run".into(),
        RunFolderState::Incomplete { experiment, state, .. } => format!(
            "an incomplete run{} ({state})",
            experiment.as_ref().map(|e| format!(" of experiment \"{e}\"")).unwrap_or_default()
        ),
        RunFolderState::Complete { experiment, .. } => {
            format!("a finished run of experiment \"{experiment}\"")
        }
    }
}

fn marker(config: &Config, hash: &str, state: &str) -> Value {
    json!({
        "tool": "beamfloor",
        "experiment": config.experiment.name,
        "config_hash_sha256": hash,
        "state": state,
        "pid": std::process::id(),
        "unix_s": unix_seconds(),
    })
}

fn unix_seconds() -> u64 {
    std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs())
        .unwrap_or(0)
}

/// Writes `value` to `dir/name` through a temporary sibling and a rename.
fn write_marker(dir: &Path, name: &str, value: &Value) -> Result<(), RunError> {
    let text = serde_json::to_string_pretty(value).unwrap_or_default() + "\n";
    beamfloor_report::write_text_file(&dir.join(name), &text)?;
    Ok(())
}

/// The folder's markers, for tests and tools: (in progress, complete).
pub fn marker_paths(dir: &Path) -> (PathBuf, PathBuf) {
    (dir.join(IN_PROGRESS_MARKER), dir.join(COMPLETE_MARKER))
}
