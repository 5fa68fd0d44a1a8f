//! Running points: one point (what a job-array task does) and every incomplete point on this
//! machine with bounded concurrency.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Mutex;
use std::time::{Instant, SystemTime, UNIX_EPOCH};

use serde_json::json;

use super::folder::{
    host_name, write_atomic, PointState, SweepFolder, DONE_MARKER, ERROR_FILE, STARTED_FILE,
};
use super::SweepError;
use crate::config::load_config;
use crate::run::{run_experiment, RunObserver};

/// What running one point did.
#[derive(Debug, Clone, PartialEq)]
pub enum PointOutcome {
    /// It was already complete; nothing ran.
    AlreadyDone,
    /// It ran to completion in this many seconds.
    Completed {
        /// Wall time, s.
        seconds: f64,
    },
}

/// Progress of a local sweep, called from the worker threads. Every method has an empty default.
pub trait SweepObserver: Sync {
    /// Point `index` starts.
    fn started(&self, _index: usize) {}
    /// Point `index` completed in `seconds`.
    fn completed(&self, _index: usize, _seconds: f64) {}
    /// Point `index` failed; its error is recorded in its folder.
    fn failed(&self, _index: usize, _message: &str) {}
}

/// A silent observer.
pub struct QuietSweep;
impl SweepObserver for QuietSweep {}

struct QuietRun;
impl RunObserver for QuietRun {}

/// What a local sweep did.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct LocalSummary {
    /// Points already complete before it started (skipped).
    pub already_done: usize,
    /// Points it completed.
    pub completed: Vec<usize>,
    /// Points that failed, with their errors.
    pub failed: Vec<(usize, String)>,
}

fn unix_now() -> u64 {
    SystemTime::now().duration_since(UNIX_EPOCH).map(|d| d.as_secs()).unwrap_or(0)
}

fn error_chain(error: &dyn std::error::Error) -> String {
    let mut message = error.to_string();
    let mut source = error.source();
    while let Some(s) = source {
        let text = s.to_string();
        if !message.contains(&text) {
            message.push_str(": ");
            message.push_str(&text);
        }
        source = s.source();
    }
    message
}

fn remove_file_if_present(path: &std::path::Path) -> Result<(), SweepError> {
    match std::fs::remove_file(path) {
        Err(e) if e.kind() != std::io::ErrorKind::NotFound => Err(SweepError::io(path, e)),
        _ => Ok(()),
    }
}

/// Runs point `index` of `folder` unless it is complete: clears what an earlier attempt left,
/// notes the start (host, process), runs the point's config into its run folder, and then
/// writes the completion marker (by rename, after every output). On failure the error is
/// recorded in the point's folder and returned as [`SweepError::PointFailed`]. `how` is noted in
/// the marker (e.g. "local", "slurm job 12_3").
pub fn run_point(
    folder: &SweepFolder,
    index: usize,
    how: &str,
) -> Result<PointOutcome, SweepError> {
    folder.check_index(index)?;
    if folder.state(index) == PointState::Done {
        return Ok(PointOutcome::AlreadyDone);
    }
    let dir = folder.point_dir(index);
    remove_file_if_present(&dir.join(ERROR_FILE))?;
    let run_dir = folder.run_dir(index);
    if run_dir.exists() {
        // Results of an interrupted attempt are not trusted: the point runs from scratch.
        std::fs::remove_dir_all(&run_dir).map_err(|e| SweepError::io(&run_dir, e))?;
    }
    let host = host_name();
    let started =
        json!({ "host": host, "pid": std::process::id(), "unix_s": unix_now(), "how": how });
    write_atomic(&dir.join(STARTED_FILE), &format!("{started}\n"))?;

    let t = Instant::now();
    let config_path = folder.point_config(index);
    let result = catch_unwind(AssertUnwindSafe(|| -> Result<(), String> {
        let config = load_config(&config_path).map_err(|e| error_chain(&e))?;
        run_experiment(&config, Some(&config_path), &run_dir, &mut QuietRun)
            .map(|_| ())
            .map_err(|e| error_chain(&e))
    }))
    .unwrap_or_else(|panic| {
        let what = panic
            .downcast_ref::<String>()
            .cloned()
            .or_else(|| panic.downcast_ref::<&str>().map(|s| s.to_string()))
            .unwrap_or_else(|| "(no message)".into());
        Err(format!("the run panicked: {what}"))
    });
    let seconds = t.elapsed().as_secs_f64();
    match result {
        Ok(()) => {
            let marker = json!({
                "point": index,
                "seconds": seconds,
                "finished_unix_s": unix_now(),
                "host": host,
                "how": how,
            });
            write_atomic(&dir.join(DONE_MARKER), &format!("{marker:#}\n"))?;
            remove_file_if_present(&dir.join(STARTED_FILE))?;
            Ok(PointOutcome::Completed { seconds })
        }
        Err(message) => {
            let text = format!(
                "point {index} failed after {seconds:.1} s on {host} ({how}):\n{message}\n"
            );
            write_atomic(&dir.join(ERROR_FILE), &text)?;
            remove_file_if_present(&dir.join(STARTED_FILE))?;
            Err(SweepError::PointFailed { index, message })
        }
    }
}

/// Runs every incomplete point of `folder` on this machine, at most `jobs` at a time (each
/// point's run uses the shared rayon pool for its own parallel parts). Complete points are
/// skipped; failed points are tried again; a point that fails does not stop the others.
pub fn run_local(
    folder: &SweepFolder,
    jobs: usize,
    observer: &dyn SweepObserver,
) -> Result<LocalSummary, SweepError> {
    let todo = folder.incomplete();
    let already_done = folder.len() - todo.len();
    let next = AtomicUsize::new(0);
    let summary = Mutex::new(LocalSummary { already_done, ..LocalSummary::default() });
    let fatal: Mutex<Option<SweepError>> = Mutex::new(None);
    let workers = jobs.max(1).min(todo.len());
    std::thread::scope(|scope| {
        for _ in 0..workers {
            scope.spawn(|| loop {
                let k = next.fetch_add(1, Ordering::Relaxed);
                let Some(&index) = todo.get(k) else { break };
                if fatal.lock().map(|f| f.is_some()).unwrap_or(true) {
                    break;
                }
                observer.started(index);
                match run_point(folder, index, "local") {
                    Ok(outcome) => {
                        let seconds = match outcome {
                            PointOutcome::Completed { seconds } => seconds,
                            PointOutcome::AlreadyDone => 0.0,
                        };
                        observer.completed(index, seconds);
                        if let Ok(mut s) = summary.lock() {
                            s.completed.push(index);
                        }
                    }
                    Err(SweepError::PointFailed { index, message }) => {
                        observer.failed(index, &message);
                        if let Ok(mut s) = summary.lock() {
                            s.failed.push((index, message));
                        }
                    }
                    // The sweep folder itself cannot be written: no point can succeed.
                    Err(other) => {
                        if let Ok(mut f) = fatal.lock() {
                            f.get_or_insert(other);
                        }
                        break;
                    }
                }
            });
        }
    });
    if let Some(e) = fatal.into_inner().ok().flatten() {
        return Err(e);
    }
    let mut summary = summary.into_inner().unwrap_or_default();
    summary.completed.sort_unstable();
    summary.failed.sort_by_key(|(i, _)| *i);
    Ok(summary)
}
