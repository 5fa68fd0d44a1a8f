//! `beamfloor check CONFIG`: validate and describe, nothing heavy.

use std::path::PathBuf;

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

/// Validates the config, builds the observation and prints a summary.
pub fn run(args: &Args) -> Result<(), Failure> {
    let config = load_config(&args.config).map_err(Failure::bad_input)?;
    let observation =
        scenario::build_observation(&config, Some(&args.config)).map_err(Failure::bad_input)?;
    print!("{}", scenario::describe(&config, &observation));
    if args.resolved {
        let text = config.to_toml_string().map_err(Failure::bad_input)?;
        println!("\n{text}");
    }
    Ok(())
}
