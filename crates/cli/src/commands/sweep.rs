//! `beamfloor sweep prepare|run-local|enqueue|run-point|progress|gather`: a config's `[sweep]`
//! run point by point, here or as a Slurm job array, then collected. The engine is
//! `beamfloor_experiment::sweep`; this file parses arguments and prints.

use std::path::PathBuf;
use std::time::Duration;

use beamfloor_experiment::sweep::{
    collect, run_local, run_point, sweep_status, wait_until_idle, PointOutcome, SlurmOptions,
    SweepError, SweepFolder, SweepObserver, SweepStatus,
};

use super::Failure;

/// Arguments of `sweep`.
#[derive(clap::Args)]
pub struct Args {
    #[command(subcommand)]
    action: Action,
}

#[derive(clap::Subcommand)]
enum Action {
    /// Check every point of CONFIG's [sweep] and lay out the sweep folder DIR: the plan and one
    /// folder per point with its complete config and seed. Safe to repeat; a folder of another
    /// config is refused.
    Prepare {
        /// The experiment config with a [sweep] section (TOML).
        config: PathBuf,
        /// The sweep folder (created if missing).
        dir: PathBuf,
    },
    /// Run every incomplete point of DIR on this machine, JOBS at a time. Complete points are
    /// skipped, so running again after an interruption finishes only the rest; a failed point
    /// records its error in its folder and the others go on.
    RunLocal {
        /// The sweep folder.
        dir: PathBuf,
        /// Points run at the same time (each also uses the machine's threads for its own work).
        #[arg(long, short, default_value_t = 1)]
        jobs: usize,
    },
    /// Write DIR/slurm/points.sbatch and submit a Slurm job array (sbatch --array) of every
    /// point that is neither complete nor already queued; task i runs point i.
    Enqueue {
        /// The sweep folder.
        dir: PathBuf,
        /// CPUs per task (each task's thread count). Default 1.
        #[arg(long)]
        cpus_per_task: Option<u32>,
        /// Time limit per task, in Slurm's syntax (e.g. 02:00:00).
        #[arg(long)]
        time: Option<String>,
        /// Partition to submit to.
        #[arg(long)]
        partition: Option<String>,
        /// Memory per task, in Slurm's syntax (e.g. 8G).
        #[arg(long)]
        mem: Option<String>,
        /// At most this many tasks running at once.
        #[arg(long)]
        max_running: Option<u32>,
        /// A further argument for sbatch, as given (repeatable), e.g. --sbatch-arg=--qos=short.
        #[arg(long = "sbatch-arg", allow_hyphen_values = true)]
        sbatch_args: Vec<String>,
    },
    /// Run point INDEX of DIR (what job-array task INDEX does); exits 1 if it fails.
    RunPoint {
        /// The sweep folder.
        dir: PathBuf,
        /// The point's index.
        index: usize,
    },
    /// Count the points that are done, failed, running and pending (asking squeue about
    /// submitted jobs).
    Progress {
        /// The sweep folder.
        dir: PathBuf,
        /// Wait until no point is running or queued, up to this many seconds (exit 1 after).
        #[arg(long, value_name = "SECONDS")]
        wait: Option<u64>,
        /// Also list failed and pending points.
        #[arg(long)]
        list: bool,
    },
    /// Collect every complete point's metrics into DIR/collected: metrics.csv and metrics.json
    /// (one row per point and strategy), floor.png (floor against the swept key) and
    /// incomplete.json (missing or failed points).
    Gather {
        /// The sweep folder.
        dir: PathBuf,
        /// Exit 1 when any point is missing or failed.
        #[arg(long)]
        require_complete: bool,
    },
}

fn failure(e: SweepError) -> Failure {
    if e.is_bad_input() {
        Failure::bad_input(e)
    } else {
        Failure::running(e)
    }
}

/// A message as a failure of the run (exit code 1).
#[derive(Debug)]
struct Message(String);
impl std::fmt::Display for Message {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}
impl std::error::Error for Message {}

/// Progress lines on stderr.
struct Lines;
impl SweepObserver for Lines {
    fn started(&self, index: usize) {
        eprintln!("· point {index} started");
    }
    fn completed(&self, index: usize, seconds: f64) {
        eprintln!("· point {index} done in {seconds:.1} s");
    }
    fn failed(&self, index: usize, message: &str) {
        eprintln!("· point {index} FAILED: {message}");
    }
}

fn open(dir: &std::path::Path) -> Result<SweepFolder, Failure> {
    SweepFolder::open(dir).map_err(failure)
}

fn print_status(status: &SweepStatus, list: bool) {
    println!("{}", status.counts_line());
    if let Some(why) = &status.queue_error {
        println!("(the Slurm queue could not be read: {why})");
    }
    if list {
        for (i, message) in &status.failed {
            println!("failed  point {i}: {}", message.lines().last().unwrap_or(""));
        }
        for i in &status.pending {
            println!("pending point {i}");
        }
    }
}

/// Runs the sweep action.
pub fn run(args: &Args) -> Result<(), Failure> {
    match &args.action {
        Action::Prepare { config, dir } => {
            let folder = SweepFolder::prepare(config, dir).map_err(failure)?;
            for p in &folder.plan.parameters {
                let shown: Vec<String> = p.values.iter().map(|v| v.to_string()).collect();
                println!("{} = {}", p.key, shown.join(", "));
            }
            let status = sweep_status(&folder, false);
            println!("{} in {}", status.counts_line(), folder.dir.display());
        }
        Action::RunLocal { dir, jobs } => {
            let folder = open(dir)?;
            let summary = run_local(&folder, *jobs, &Lines).map_err(failure)?;
            println!(
                "{} already done, {} completed now, {} failed",
                summary.already_done,
                summary.completed.len(),
                summary.failed.len()
            );
            if !summary.failed.is_empty() {
                let list: Vec<String> = summary.failed.iter().map(|(i, _)| i.to_string()).collect();
                return Err(Failure::running(Message(format!(
                    "points {} failed (errors in their folders' error.txt); run again to retry them",
                    list.join(", ")
                ))));
            }
        }
        Action::Enqueue { dir, cpus_per_task, time, partition, mem, max_running, sbatch_args } => {
            let folder = open(dir)?;
            let exe = std::env::current_exe()
                .map_err(|e| Failure::running(Message(format!("cannot find this program: {e}"))))?;
            let options = SlurmOptions {
                point_command: vec![exe.display().to_string(), "sweep".into(), "run-point".into()],
                cpus_per_task: *cpus_per_task,
                time_limit: time.clone(),
                partition: partition.clone(),
                memory: mem.clone(),
                max_running: *max_running,
                extra_args: sbatch_args.clone(),
            };
            let submission =
                beamfloor_experiment::sweep::slurm::submit(&folder, &options).map_err(failure)?;
            match &submission.job_id {
                Some(id) => println!(
                    "submitted job {id}: {} point(s) as an array ({})",
                    submission.points.len(),
                    submission.script.display()
                ),
                None => println!("nothing to submit: every point is complete or queued"),
            }
        }
        Action::RunPoint { dir, index } => {
            let folder = open(dir)?;
            let how =
                match (std::env::var("SLURM_ARRAY_JOB_ID"), std::env::var("SLURM_ARRAY_TASK_ID")) {
                    (Ok(job), Ok(task)) => format!("slurm job {job}_{task}"),
                    _ => "run-point".to_string(),
                };
            match run_point(&folder, *index, &how).map_err(failure)? {
                PointOutcome::AlreadyDone => println!("point {index} was already complete"),
                PointOutcome::Completed { seconds } => {
                    println!("point {index} done in {seconds:.1} s")
                }
            }
        }
        Action::Progress { dir, wait, list } => {
            let folder = open(dir)?;
            let status = match wait {
                None => sweep_status(&folder, true),
                Some(seconds) => {
                    let mut last = String::new();
                    wait_until_idle(
                        &folder,
                        Duration::from_secs(*seconds),
                        Duration::from_secs(2),
                        &mut |s| {
                            let line = s.counts_line();
                            if line != last {
                                eprintln!("· {line}");
                                last = line;
                            }
                        },
                    )
                    .map_err(failure)?
                }
            };
            print_status(&status, *list);
        }
        Action::Gather { dir, require_complete } => {
            let folder = open(dir)?;
            let collection = collect(&folder).map_err(failure)?;
            println!(
                "{} rows from {} complete point(s) of {}",
                collection.table.rows.len(),
                folder.len() - collection.incomplete.len(),
                folder.len()
            );
            for p in &collection.incomplete {
                let why = p.message.as_deref().and_then(|m| m.lines().last()).unwrap_or("");
                println!("missing point {} ({}) {why}", p.index, p.state);
            }
            for f in &collection.files {
                println!("wrote {}", f.display());
            }
            if *require_complete && !collection.incomplete.is_empty() {
                return Err(Failure::running(Message(format!(
                    "{} point(s) missing or failed",
                    collection.incomplete.len()
                ))));
            }
        }
    }
    Ok(())
}
