//! Where every point of a sweep stands: its files, the Slurm queue and live local processes.

use std::time::{Duration, Instant};

use super::folder::{host_name, PointState, SweepFolder};
use super::slurm::{queue_states, QueueState};
use super::SweepError;

/// Every point of a sweep by state (indices in order).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SweepStatus {
    /// Points with a completion marker.
    pub done: Vec<usize>,
    /// Points whose last attempt failed, with the recorded error.
    pub failed: Vec<(usize, String)>,
    /// Points running: in the Slurm queue as running, or started by a live process on this host.
    pub running: Vec<usize>,
    /// Points waiting in the Slurm queue.
    pub queued: Vec<usize>,
    /// Points neither done, failed, running nor queued (never run, or interrupted).
    pub pending: Vec<usize>,
    /// Why the queue could not be read, when a job was submitted but `squeue` failed.
    pub queue_error: Option<String>,
}

impl SweepStatus {
    /// One line of counts, e.g. `12 points: 9 done, 1 failed, 2 running, 0 pending (0 queued in Slurm)`.
    pub fn counts_line(&self) -> String {
        let total = self.done.len()
            + self.failed.len()
            + self.running.len()
            + self.queued.len()
            + self.pending.len();
        format!(
            "{total} points: {} done, {} failed, {} running, {} pending ({} of them queued in Slurm)",
            self.done.len(),
            self.failed.len(),
            self.running.len(),
            self.pending.len() + self.queued.len(),
            self.queued.len()
        )
    }
}

/// True when process `pid` exists on this machine.
fn process_alive(pid: u32) -> bool {
    pid > 0 && std::path::Path::new(&format!("/proc/{pid}")).exists()
}

/// The state of every point. The Slurm queue is asked only when `ask_queue` is set and a job was
/// submitted for this sweep; a queue that cannot be read is reported in
/// [`SweepStatus::queue_error`], not as an error.
pub fn sweep_status(folder: &SweepFolder, ask_queue: bool) -> SweepStatus {
    let mut status = SweepStatus::default();
    let queue = if ask_queue {
        match queue_states(folder) {
            Ok(q) => q,
            Err(e) => {
                status.queue_error = Some(e.to_string());
                Default::default()
            }
        }
    } else {
        Default::default()
    };
    let here = host_name();
    for index in 0..folder.len() {
        let state = folder.state(index);
        if state == PointState::Done {
            status.done.push(index);
            continue;
        }
        match queue.get(&index) {
            Some(QueueState::Running) => {
                status.running.push(index);
                continue;
            }
            Some(QueueState::Queued) => {
                status.queued.push(index);
                continue;
            }
            None => {}
        }
        match state {
            PointState::Started { host, pid } if host == here && process_alive(pid) => {
                status.running.push(index)
            }
            PointState::Failed(message) => status.failed.push((index, message)),
            _ => status.pending.push(index),
        }
    }
    status
}

/// Polls [`sweep_status`] every `poll` until no point is running or queued; `on_poll` sees each
/// status. Fails when the queue cannot be read or after `timeout`.
pub fn wait_until_idle(
    folder: &SweepFolder,
    timeout: Duration,
    poll: Duration,
    on_poll: &mut dyn FnMut(&SweepStatus),
) -> Result<SweepStatus, SweepError> {
    let start = Instant::now();
    loop {
        let status = sweep_status(folder, true);
        on_poll(&status);
        if let Some(why) = &status.queue_error {
            return Err(SweepError::Command { command: "squeue".into(), why: why.clone() });
        }
        if status.running.is_empty() && status.queued.is_empty() {
            return Ok(status);
        }
        if start.elapsed() >= timeout {
            return Err(SweepError::Timeout {
                seconds: timeout.as_secs(),
                running: status.running.len(),
                queued: status.queued.len(),
            });
        }
        std::thread::sleep(poll);
    }
}
