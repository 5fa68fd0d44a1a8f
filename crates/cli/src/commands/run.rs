//! `beamfloor run [CONFIG] [--out DIR]`: simulate, image every strategy, score, report.

use std::path::PathBuf;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::{SystemTime, UNIX_EPOCH};

use beamfloor_experiment::run::{run_experiment, CycleReport, RunObserver};
use beamfloor_experiment::{load_config, parse_config};

use super::Failure;

/// The built-in demo (a copy of configs/demo.toml, embedded at build time).
const DEMO_TOML: &str = include_str!("../../../../configs/demo.toml");

/// Arguments of `run`.
#[derive(clap::Args)]
pub struct Args {
    /// The experiment config (TOML). Without it the built-in demo runs.
    config: Option<PathBuf>,
    /// Run folder (created if missing; visibilities already there with the same truth hash are
    /// reused). Default: a fresh folder `beamfloor-run-<name>-<unix time>`.
    #[arg(long, short)]
    out: Option<PathBuf>,
}

/// Progress lines on stderr.
struct Lines {
    last_percent: AtomicUsize,
}

impl RunObserver for Lines {
    fn stage(&mut self, name: &str) {
        eprintln!("· {name}");
    }
    fn simulated_rows(&self, done: usize, total: usize) {
        let percent = (done * 100).checked_div(total).unwrap_or(100);
        let step = percent / 10 * 10;
        if self.last_percent.fetch_max(step + 1, Ordering::Relaxed) < step + 1 {
            eprintln!("  simulated {step:>3}% ({done}/{total} rows)");
        }
    }
    fn strategy(&mut self, index: usize, count: usize, name: &str) {
        eprintln!("· strategy {}/{count}: {name}", index + 1);
    }
    fn skipped(&mut self, name: &str, reason: &str) {
        eprintln!("· skipping strategy {name}: {reason}");
    }
    fn cycle(&mut self, _name: &str, r: &CycleReport) {
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
    let mut observer = Lines { last_percent: AtomicUsize::new(0) };
    let summary = run_experiment(&config, args.config.as_deref(), &out, &mut observer)
        .map_err(|e| if e.is_bad_input() { Failure::bad_input(e) } else { Failure::running(e) })?;
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
    }
    match &summary.report_html {
        Some(path) => println!("report: {}", path.display()),
        None => println!("run folder: {}", summary.out_dir.display()),
    }
    Ok(())
}
