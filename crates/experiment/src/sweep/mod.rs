//! Parameter sweeps: one run per point of a config's `[sweep]`, on this machine or as a Slurm
//! job array, resumable, and collected into one table and a plot.
//!
//! A point is an ordinary run of an ordinary config (the config module expands the sweep, see
//! [`crate::config::expand_sweep`]); this module owns the sweep folder:
//!
//! ```text
//! DIR/sweep.json            the plan: keys, values, and per point its folder, values and seed
//!     sweep.toml            the config the sweep was prepared from
//!     point-0000/config.toml   the point's complete resolved config (`beamfloor run` repeats it)
//!                run/          the point's run folder (metrics.json, manifest.json, ...)
//!                done.json     completion marker: renamed into place after every output
//!                error.txt     the last attempt's error, when it failed
//!                started.json  host and process of an attempt in progress (removed at its end)
//!     slurm/points.sbatch   batch script: array task i runs point i
//!           jobs.txt        submitted job ids with their array indices
//!           logs/point-<i>.log
//!     collected/metrics.csv  metrics.json  floor.png  incomplete.json
//! ```
//!
//! A point is complete exactly when `done.json` exists. Running a point skips it if complete,
//! otherwise deletes what an earlier (failed or killed) attempt left in `run/` and runs it from
//! scratch, so an interrupted sweep resumes by running again, locally or by submitting again.
//! A failing point writes `error.txt` and the others carry on.
//!
//! Local and Slurm execution call the same [`run_point`], so a point's `run/metrics.json` is the
//! same file either way (runs are bit-for-bit reproducible from the config and seed, whatever
//! the thread count); timings live in `manifest.json` and `done.json`, never in metrics.json.
//!
//! External commands: `sbatch` and `squeue` are called here, in [`slurm`], not in the
//! command-line tool, so that the whole protocol — script text, array index lists, the job list,
//! parsing the queue — lives and is tested in one place. The command-line tool only supplies the
//! command that runs one point (its own executable), since only it knows its path and syntax.

mod collect;
mod error;
mod folder;
mod local;
pub mod slurm;
mod status;

pub use collect::{collect, Collection, IncompletePoint, COLLECTED_DIR};
pub use error::SweepError;
pub use folder::{
    point_folder_name, PlanParameter, PlanPoint, PointState, SweepFolder, SweepPlan, DONE_MARKER,
    ERROR_FILE, PLAN_FILE, POINT_CONFIG, RUN_DIR, SOURCE_CONFIG, STARTED_FILE,
};
pub use local::{run_local, run_point, LocalSummary, PointOutcome, QuietSweep, SweepObserver};
pub use slurm::{QueueState, SlurmOptions, Submission};
pub use status::{sweep_status, wait_until_idle, SweepStatus};
