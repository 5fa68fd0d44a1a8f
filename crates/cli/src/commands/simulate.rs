//! `beamfloor simulate CONFIG --out DIR`: the truth visibilities, on disk.

use std::path::PathBuf;

use beamfloor_experiment::{load_config, simulation};
use indicatif::{ProgressBar, ProgressStyle};

use super::Failure;

/// Arguments of `simulate`.
#[derive(clap::Args)]
pub struct Args {
    /// The experiment config (TOML).
    config: PathBuf,
    /// Output folder (created if missing); the visibility set goes to OUT/visibilities/.
    #[arg(long, short, default_value = "beamfloor-sim")]
    out: PathBuf,
}

/// Simulates the config's observation and writes the visibility set.
pub fn run(args: &Args) -> Result<(), Failure> {
    let config = load_config(&args.config).map_err(Failure::bad_input)?;
    let scenario = simulation::prepare(&config, Some(&args.config)).map_err(Failure::bad_input)?;
    let bar = ProgressBar::new(scenario.observation.n_rows() as u64);
    bar.set_style(
        ProgressStyle::with_template("simulating {bar:40} {pos}/{len} rows ({eta} left)")
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
    );
    let (_, summary) = simulation::simulate_to_folder(&config, &scenario, &args.out, &|rows| {
        bar.set_position(rows as u64)
    })
    .map_err(Failure::running)?;
    bar.finish_and_clear();
    println!(
        "simulated {} visibilities of {} components in {:.2} s → {}",
        summary.n_visibilities,
        summary.n_components,
        summary.predict_seconds,
        summary.visibilities_dir.display()
    );
    println!("uv-coverage plot: {}", summary.uv_coverage_png.display());
    Ok(())
}
