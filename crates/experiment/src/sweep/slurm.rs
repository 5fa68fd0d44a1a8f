//! Slurm: the batch script of a job array whose task i runs point i, submission with `sbatch`,
//! and the queue as `squeue` shows it (there may be no accounting store, so not `sacct`).

use std::collections::BTreeMap;
use std::path::PathBuf;
use std::process::Command;
use std::time::{SystemTime, UNIX_EPOCH};

use super::folder::{write_atomic, SweepFolder};
use super::SweepError;

/// The folder (in the sweep folder) for the batch script, the job list and the task logs.
pub const SLURM_DIR: &str = "slurm";
/// The batch script, in [`SLURM_DIR`].
pub const BATCH_SCRIPT: &str = "points.sbatch";
/// Submitted jobs, one line each: job id, array indices, unix time.
pub const JOBS_FILE: &str = "jobs.txt";

/// Settings of the batch script; `None` leaves the cluster's default.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SlurmOptions {
    /// The command that runs one point: program and arguments, to which the sweep folder and the
    /// task index are appended (e.g. `["/usr/bin/beamfloor", "sweep", "run-point"]`).
    pub point_command: Vec<String>,
    /// CPUs per task (`--cpus-per-task`); also the rayon thread count of each task. Default 1.
    pub cpus_per_task: Option<u32>,
    /// Time limit per task (`--time`, Slurm's syntax, e.g. "01:00:00").
    pub time_limit: Option<String>,
    /// Partition (`--partition`).
    pub partition: Option<String>,
    /// Memory per task (`--mem`, e.g. "4G").
    pub memory: Option<String>,
    /// At most this many tasks at once (the `%N` of `--array`).
    pub max_running: Option<u32>,
    /// Further `sbatch` arguments, passed as given.
    pub extra_args: Vec<String>,
}

/// A string as one word for a POSIX shell (single quotes; a quote inside becomes `'\''`).
pub fn shell_word(s: &str) -> String {
    if !s.is_empty() && s.chars().all(|c| c.is_ascii_alphanumeric() || "/._-+=:,@".contains(c)) {
        s.to_string()
    } else {
        format!("'{}'", s.replace('\'', "'\\''"))
    }
}

/// The text of the batch script for `folder`: one array task runs the point whose index is
/// `$SLURM_ARRAY_TASK_ID`, with its output in `slurm/logs/point-<index>.log`.
pub fn batch_script(folder: &SweepFolder, options: &SlurmOptions) -> String {
    let slurm = folder.dir.join(SLURM_DIR);
    let cpus = options.cpus_per_task.unwrap_or(1).max(1);
    let mut s = String::new();
    s.push_str("#!/bin/bash\n");
    s.push_str(&format!(
        "# Sweep \"{}\" ({} points) as a Slurm job array: task i runs point i.\n",
        folder.plan.experiment,
        folder.len()
    ));
    s.push_str(&format!("#SBATCH --job-name={}\n", shell_word(&job_name(folder))));
    s.push_str(&format!(
        "#SBATCH --output={}\n",
        shell_word(&slurm.join("logs").join("point-%a.log").display().to_string())
    ));
    s.push_str("#SBATCH --ntasks=1\n");
    s.push_str(&format!("#SBATCH --cpus-per-task={cpus}\n"));
    if let Some(t) = &options.time_limit {
        s.push_str(&format!("#SBATCH --time={}\n", shell_word(t)));
    }
    if let Some(p) = &options.partition {
        s.push_str(&format!("#SBATCH --partition={}\n", shell_word(p)));
    }
    if let Some(m) = &options.memory {
        s.push_str(&format!("#SBATCH --mem={}\n", shell_word(m)));
    }
    s.push_str("set -euo pipefail\n");
    // Results do not depend on the thread count; matching it to the allocation avoids
    // oversubscribing a node shared by several tasks.
    s.push_str(&format!("export RAYON_NUM_THREADS=\"${{SLURM_CPUS_PER_TASK:-{cpus}}}\"\n"));
    let words: Vec<String> = options
        .point_command
        .iter()
        .map(|w| shell_word(w))
        .chain([shell_word(&folder.dir.display().to_string()), "\"$SLURM_ARRAY_TASK_ID\"".into()])
        .collect();
    s.push_str(&format!("exec {}\n", words.join(" ")));
    s
}

fn job_name(folder: &SweepFolder) -> String {
    format!("beamfloor-{}", folder.plan.experiment)
}

/// Sorted indices as Slurm's array list: runs of consecutive indices as `a-b`, joined by `,`
/// (`[0, 1, 2, 5, 7, 8]` → `0-2,5,7-8`).
pub fn array_spec(indices: &[usize]) -> String {
    let mut sorted = indices.to_vec();
    sorted.sort_unstable();
    sorted.dedup();
    let mut parts = Vec::new();
    let mut i = 0;
    while i < sorted.len() {
        let mut j = i;
        while j + 1 < sorted.len() && sorted[j + 1] == sorted[j] + 1 {
            j += 1;
        }
        parts.push(if i == j {
            sorted[i].to_string()
        } else {
            format!("{}-{}", sorted[i], sorted[j])
        });
        i = j + 1;
    }
    parts.join(",")
}

/// Parses an array index list as Slurm prints it (`3`, `0-7`, `[0-3,5]`, `1-9:2`, `0-7%2`).
pub fn parse_array_indices(text: &str) -> Vec<usize> {
    let body = text.trim().trim_start_matches('[').trim_end_matches(']');
    let body = body.split('%').next().unwrap_or("");
    let mut out = Vec::new();
    for part in body.split(',').filter(|p| !p.is_empty()) {
        let (range, step) = match part.split_once(':') {
            Some((r, s)) => (r, s.parse::<usize>().unwrap_or(1).max(1)),
            None => (part, 1),
        };
        match range.split_once('-') {
            Some((a, b)) => {
                if let (Ok(a), Ok(b)) = (a.parse::<usize>(), b.parse::<usize>()) {
                    out.extend((a..=b).step_by(step));
                }
            }
            None => {
                if let Ok(a) = range.parse::<usize>() {
                    out.push(a);
                }
            }
        }
    }
    out
}

/// A point as the queue shows it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum QueueState {
    /// Waiting for resources (or held, suspended, configuring, requeued).
    Queued,
    /// Running (or completing).
    Running,
}

/// Parses `squeue --noheader --array --format=%F|%K|%t` output: array job id, task index (or
/// list), compact state. Only lines of `jobs` count; the result maps point index to state.
pub fn parse_squeue(text: &str, jobs: &[String]) -> BTreeMap<usize, QueueState> {
    let mut out = BTreeMap::new();
    for line in text.lines() {
        let fields: Vec<&str> = line.trim().split('|').collect();
        let [job, tasks, state] = fields[..] else { continue };
        if !jobs.iter().any(|j| j == job) {
            continue;
        }
        let state = match state {
            "R" | "CG" => QueueState::Running,
            _ => QueueState::Queued,
        };
        for i in parse_array_indices(tasks) {
            // A running task of one submission outranks a queued one of another.
            let entry = out.entry(i).or_insert(state);
            if state == QueueState::Running {
                *entry = state;
            }
        }
    }
    out
}

fn run_command(program: &str, args: &[String]) -> Result<String, SweepError> {
    let line = std::iter::once(program.to_string())
        .chain(args.iter().map(|a| shell_word(a)))
        .collect::<Vec<_>>()
        .join(" ");
    let output = Command::new(program).args(args).output().map_err(|e| SweepError::Command {
        command: line.clone(),
        why: format!("cannot start it ({e}); is Slurm's client installed and on PATH?"),
    })?;
    if !output.status.success() {
        return Err(SweepError::Command {
            command: line,
            why: format!(
                "{}: {}",
                output.status,
                String::from_utf8_lossy(&output.stderr).trim().replace('\n', "; ")
            ),
        });
    }
    Ok(String::from_utf8_lossy(&output.stdout).into_owned())
}

/// The job ids submitted for `folder` so far (from [`JOBS_FILE`]).
pub fn submitted_jobs(folder: &SweepFolder) -> Vec<String> {
    let path = folder.dir.join(SLURM_DIR).join(JOBS_FILE);
    std::fs::read_to_string(path)
        .unwrap_or_default()
        .lines()
        .filter_map(|l| l.split_whitespace().next().map(str::to_string))
        .collect()
}

/// The queue state of the points of `folder`'s submitted jobs, from `squeue`; empty when no job
/// was submitted.
pub fn queue_states(folder: &SweepFolder) -> Result<BTreeMap<usize, QueueState>, SweepError> {
    let jobs = submitted_jobs(folder);
    if jobs.is_empty() {
        return Ok(BTreeMap::new());
    }
    let text = run_command(
        "squeue",
        &["--noheader".into(), "--array".into(), "--format=%F|%K|%t".into()],
    )?;
    Ok(parse_squeue(&text, &jobs))
}

/// What a submission did.
#[derive(Debug, Clone, PartialEq)]
pub struct Submission {
    /// The job id `sbatch` returned, or `None` when nothing needed submitting.
    pub job_id: Option<String>,
    /// The points submitted.
    pub points: Vec<usize>,
    /// The batch script.
    pub script: PathBuf,
}

/// Writes the batch script and submits a job array of every point that is neither complete nor
/// already queued or running in an earlier submission of this sweep.
pub fn submit(folder: &SweepFolder, options: &SlurmOptions) -> Result<Submission, SweepError> {
    let slurm = folder.dir.join(SLURM_DIR);
    let logs = slurm.join("logs");
    std::fs::create_dir_all(&logs).map_err(|e| SweepError::io(&logs, e))?;
    let script = slurm.join(BATCH_SCRIPT);
    write_atomic(&script, &batch_script(folder, options))?;
    let queued = queue_states(folder)?;
    let points: Vec<usize> =
        folder.incomplete().into_iter().filter(|i| !queued.contains_key(i)).collect();
    if points.is_empty() {
        return Ok(Submission { job_id: None, points, script });
    }
    let mut spec = array_spec(&points);
    if let Some(n) = options.max_running {
        spec.push_str(&format!("%{n}"));
    }
    let mut args = vec!["--parsable".to_string(), format!("--array={spec}")];
    args.extend(options.extra_args.iter().cloned());
    args.push(script.display().to_string());
    let out = run_command("sbatch", &args)?;
    // --parsable prints "jobid" or "jobid;cluster".
    let job_id = out.trim().split(';').next().unwrap_or("").to_string();
    if job_id.is_empty() || !job_id.chars().all(|c| c.is_ascii_digit()) {
        return Err(SweepError::Command {
            command: "sbatch".into(),
            why: format!("unexpected output {:?}; expected a job id", out.trim()),
        });
    }
    let jobs_path = slurm.join(JOBS_FILE);
    let mut jobs = std::fs::read_to_string(&jobs_path).unwrap_or_default();
    let now = SystemTime::now().duration_since(UNIX_EPOCH).map(|d| d.as_secs()).unwrap_or(0);
    jobs.push_str(&format!("{job_id} {spec} {now}\n"));
    write_atomic(&jobs_path, &jobs)?;
    Ok(Submission { job_id: Some(job_id), points, script })
}
