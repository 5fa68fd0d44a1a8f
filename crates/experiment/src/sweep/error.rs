//! Why a sweep operation failed; each variant carries the offending path, point or command.

use std::path::PathBuf;

/// Everything that can go wrong while preparing, running, queueing or collecting a sweep.
#[derive(Debug, thiserror::Error)]
pub enum SweepError {
    /// The config (or a point's config) is invalid (bad input).
    #[error(transparent)]
    Config(Box<crate::config::ConfigError>),
    /// The folder holds a different sweep (bad input).
    #[error("{}: holds a sweep of a different config (sha256 {found}, this config {expected}); choose another folder", dir.display())]
    DifferentSweep {
        /// The sweep folder.
        dir: PathBuf,
        /// Hash of the config the folder was prepared from.
        found: String,
        /// Hash of the config given now.
        expected: String,
    },
    /// The folder is not a prepared sweep (bad input).
    #[error("{}: not a sweep folder (no {}): run the prepare step first", dir.display(), super::PLAN_FILE)]
    NotASweep {
        /// The folder.
        dir: PathBuf,
    },
    /// The plan file cannot be understood.
    #[error("{}: not a readable sweep plan: {why}", path.display())]
    BadPlan {
        /// The plan file.
        path: PathBuf,
        /// What is wrong.
        why: String,
    },
    /// A point index beyond the sweep (bad input).
    #[error("no point {index}: the sweep has points 0..{count}")]
    NoSuchPoint {
        /// The index asked for.
        index: usize,
        /// The number of points.
        count: usize,
    },
    /// A point's run failed; its error is recorded in its folder.
    #[error("point {index} failed: {message}")]
    PointFailed {
        /// The point.
        index: usize,
        /// The run's error chain.
        message: String,
    },
    /// A file or folder could not be read or written.
    #[error("{}: {source}", path.display())]
    Io {
        /// The path.
        path: PathBuf,
        /// The operating system's reason.
        #[source]
        source: std::io::Error,
    },
    /// The report crate could not write a table or plot.
    #[error(transparent)]
    Report(Box<beamfloor_report::ReportError>),
    /// An external command (sbatch, squeue) could not be started or failed.
    #[error("{command}: {why}")]
    Command {
        /// The command line.
        command: String,
        /// What went wrong (its standard error, or why it did not start).
        why: String,
    },
    /// Waiting for queued or running points took longer than allowed.
    #[error("gave up after {seconds} s with {running} point(s) running and {queued} queued")]
    Timeout {
        /// The time waited, s.
        seconds: u64,
        /// Points still running.
        running: usize,
        /// Points still queued.
        queued: usize,
    },
}

impl From<crate::config::ConfigError> for SweepError {
    fn from(e: crate::config::ConfigError) -> Self {
        SweepError::Config(Box::new(e))
    }
}

impl From<beamfloor_report::ReportError> for SweepError {
    fn from(e: beamfloor_report::ReportError) -> Self {
        SweepError::Report(Box::new(e))
    }
}

impl SweepError {
    /// True when the user's input (config, folder, index) is at fault rather than the run.
    pub fn is_bad_input(&self) -> bool {
        matches!(
            self,
            SweepError::Config(_)
                | SweepError::DifferentSweep { .. }
                | SweepError::NotASweep { .. }
                | SweepError::NoSuchPoint { .. }
        )
    }

    pub(crate) fn io(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        SweepError::Io { path: path.into(), source }
    }
}
