//! `beamfloor check CONFIG`: validate, run the physical preflight (sampling, track, sources in
//! the image, memory) and describe, nothing heavy.

use std::path::PathBuf;

use beamfloor_experiment::run::preflight;
use beamfloor_experiment::{load_config, scenario};

use super::Failure;

/// Arguments of `check`.
#[derive(clap::Args)]
pub struct Args {
    /// The experiment config (TOML).
    config: PathBuf,
    /// Also print the resolved config, every default written out.
    #[arg(long)]
    resolved: bool,
}

/// Validates the config, runs the preflight checks the run would run, and prints a summary.
pub fn run(args: &Args) -> Result<(), Failure> {
    let config = load_config(&args.config).map_err(Failure::bad_input)?;
    let checked = preflight(&config, Some(&args.config)).map_err(|e| {
        if e.is_bad_input() {
            Failure::bad_input(e)
        } else {
            Failure::running(e)
        }
    })?;
    print!("{}", scenario::describe(&config, &checked.scenario.observation));
    print!("{}", checked.report.describe());
    if args.resolved {
        let text = config.to_toml_string().map_err(Failure::bad_input)?;
        println!("\n{text}");
    }
    Ok(())
}
