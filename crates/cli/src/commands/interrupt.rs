//! Ctrl-C during `beamfloor run`: the first press asks the run to stop after the step it is in
//! (the run folder is marked interrupted and the process exits with 130, 128 + SIGINT, as shells
//! do); a second press stops at once, marking the folder the same way. Either way the folder
//! keeps its in-progress marker and is never taken for a finished run.

use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::OnceLock;

use beamfloor_experiment::run::mark_interrupted;

/// Exit code of a run stopped by Ctrl-C (128 + SIGINT's number 2).
pub const INTERRUPTED_EXIT_CODE: i32 = 130;

static STOP_REQUESTED: AtomicBool = AtomicBool::new(false);
static RUN_FOLDER: OnceLock<PathBuf> = OnceLock::new();

/// Installs the handler for the run writing into `out`. Failure to install (a handler already
/// set) is reported and otherwise ignored: the folder's markers still tell an interrupted run.
pub fn install(out: &Path) {
    let _ = RUN_FOLDER.set(out.to_path_buf());
    let installed = ctrlc::set_handler(|| {
        if STOP_REQUESTED.swap(true, Ordering::SeqCst) {
            stop_now("stopped at once (second Ctrl-C)");
        }
        eprintln!("· Ctrl-C: stopping after the current step (press Ctrl-C again to stop now)");
    });
    if let Err(e) = installed {
        eprintln!("warning: cannot catch Ctrl-C ({e}); an interrupted run is still left marked incomplete");
    }
}

/// Called between steps: exits with [`INTERRUPTED_EXIT_CODE`] when a stop was requested.
pub fn checkpoint() {
    if STOP_REQUESTED.load(Ordering::SeqCst) {
        stop_now("stopped after the current step");
    }
}

fn stop_now(how: &str) -> ! {
    if let Some(dir) = RUN_FOLDER.get() {
        match mark_interrupted(dir) {
            Ok(()) => eprintln!(
                "interrupted: {how}; {} is marked incomplete (run the same config again to redo it)",
                dir.display()
            ),
            Err(e) => eprintln!("interrupted: {how}; could not mark the run folder: {e}"),
        }
    }
    std::process::exit(INTERRUPTED_EXIT_CODE)
}
