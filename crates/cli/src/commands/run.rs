//! `beamfloor run [CONFIG] [--out DIR] [--force]`: simulate, image every strategy, score, report.
//!
//! The run folder is guarded: one that holds a different experiment is refused unless `--force`;
//! one left incomplete (interrupted, failed) by an earlier run of the same config is said so and
//! redone; Ctrl-C marks the folder interrupted and exits with 130 (see [`super::interrupt`]).

use std::path::PathBuf;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::{SystemTime, UNIX_EPOCH};

use beamfloor_experiment::run::{
    clear_run_folder, config_hash, describe_state, mark_stopped, run_experiment, run_folder_state,
    CycleReport, RunFolderState, RunObserver,
};
use beamfloor_experiment::{load_config, parse_config};

use super::{interrupt, Failure};

/// The built-in demo (a copy of configs/demo.toml, embedded at build time).
pub(crate) const DEMO_TOML: &str = include_str!("../../../../configs/demo.toml");

/// Arguments of `run`.
#[derive(clap::Args)]
pub struct Args {
    /// The experiment config (TOML). Without it the built-in demo runs.
    config: Option<PathBuf>,
    /// Run folder (created if missing; visibilities already there with the same truth hash are
    /// reused). Default: a fresh folder `beamfloor-run-<name>-<unix time>`.
    #[arg(long, short)]
    out: Option<PathBuf>,
    /// Replace a run of a different experiment (another config hash) in the output folder;
    /// without it such a folder is refused with exit code 2.
    #[arg(long)]
    force: bool,
}

/// Progress lines on stderr.
struct Lines {
    last_percent: AtomicUsize,
}

impl RunObserver for Lines {
    fn stage(&mut self, name: &str) {
        interrupt::checkpoint();
        eprintln!("· {name}");
    }
    fn simulated_rows(&self, done: usize, total: usize) {
        interrupt::checkpoint();
        let percent = (done * 100).checked_div(total).unwrap_or(100);
        let step = percent / 10 * 10;
        if self.last_percent.fetch_max(step + 1, Ordering::Relaxed) < step + 1 {
            eprintln!("  simulated {step:>3}% ({done}/{total} rows)");
        }
    }
    fn strategy(&mut self, index: usize, count: usize, name: &str) {
        interrupt::checkpoint();
        eprintln!("· strategy {}/{count}: {name}", index + 1);
    }
    fn skipped(&mut self, name: &str, reason: &str) {
        eprintln!("· skipping strategy {name}: {reason}");
    }
    fn cycle(&mut self, _name: &str, r: &CycleReport) {
        interrupt::checkpoint();
        eprintln!(
            "  major cycle {:>3}: peak residual {:.4e} Jy/beam, model flux {:.4e} Jy, {} components",
            r.cycle, r.peak_residual, r.model_flux, r.iterations
        );
    }
}

/// Runs the experiment and prints where the report is.
pub fn run(args: &Args) -> Result<(), Failure> {
    let config = match &args.config {
        Some(path) => load_config(path).map_err(Failure::bad_input)?,
        None => parse_config(DEMO_TOML, "built-in demo (configs/demo.toml)")
            .map_err(Failure::bad_input)?,
    };
    let out = args.out.clone().unwrap_or_else(|| {
        let secs = SystemTime::now().duration_since(UNIX_EPOCH).map(|d| d.as_secs()).unwrap_or(0);
        PathBuf::from(format!("beamfloor-run-{}-{secs}", config.experiment.name))
    });
    prepare_folder(&out, &config, args.force)?;
    interrupt::install(&out);
    let mut observer = Lines { last_percent: AtomicUsize::new(0) };
    let summary =
        run_experiment(&config, args.config.as_deref(), &out, &mut observer).map_err(|e| {
            if e.is_bad_input() {
                Failure::bad_input(e)
            } else {
                // The in-progress marker stays; say why the run stopped.
                let _ = mark_stopped(&out, "failed");
                Failure::running(e)
            }
        })?;
    println!("predicted thermal noise σ_img = {:.4e} Jy/beam", summary.sigma_img_jy_per_beam);
    for s in &summary.strategies {
        println!(
            "{:<24} floor {:.4e} Jy/beam ({:.2} σ_img), dynamic range {:.3e}, {} major cycles, {:.1} s",
            s.name,
            s.floor_jy_per_beam,
            s.floor_jy_per_beam / summary.sigma_img_jy_per_beam,
            s.dynamic_range,
            s.major_cycles,
            s.seconds
        );
        if let Some(note) = &s.stop_note {
            println!("  note: {note}");
        }
    }
    if let Some(q) = &summary.quick_estimate {
        println!(
            "quick estimate of the average-beam floor: {:.4e} Jy/beam ({:.1} s); {} measured {:.4e} (ratio {:.2})",
            q.predicted_floor_jy_per_beam,
            q.seconds,
            q.strategy,
            q.measured_floor_jy_per_beam,
            q.ratio()
        );
    }
    match &summary.report_html {
        Some(path) => println!("report: {}", path.display()),
        None => println!("run folder: {}", summary.out_dir.display()),
    }
    Ok(())
}

/// Says what the output folder already holds, and with `force` clears a different experiment's
/// run from it (the runner itself refuses such a folder).
fn prepare_folder(
    out: &std::path::Path,
    config: &beamfloor_experiment::Config,
    force: bool,
) -> Result<(), Failure> {
    let state = run_folder_state(out);
    let same = state.config_hash() == Some(config_hash(config).as_str());
    match &state {
        RunFolderState::Incomplete { .. } if same => eprintln!(
            "note: {} holds {}: it is not a finished run; running it again",
            out.display(),
            describe_state(&state)
        ),
        RunFolderState::Complete { .. } if same => eprintln!(
            "note: {} holds {}; running it again (its visibilities are reused)",
            out.display(),
            describe_state(&state)
        ),
        RunFolderState::Incomplete { .. } | RunFolderState::Complete { .. } if force => {
            eprintln!("note: --force: replacing {} in {}", describe_state(&state), out.display());
            clear_run_folder(out).map_err(Failure::running)?;
        }
        _ => {}
    }
    Ok(())
}
