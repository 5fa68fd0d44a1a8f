//! `beamfloor plot-beam CONFIG --out DIR`: pictures of the truth beam.

use std::path::PathBuf;

use beamfloor_experiment::{load_config, pictures, scenario::Scenario};

use super::Failure;

/// Arguments of `plot-beam`.
#[derive(clap::Args)]
pub struct Args {
    /// The experiment config (TOML).
    config: PathBuf,
    /// Output folder (created if missing).
    #[arg(long, short, default_value = "beamfloor-beam")]
    out: PathBuf,
}

/// Builds the truth beam of the config and draws it.
pub fn run(args: &Args) -> Result<(), Failure> {
    let config = load_config(&args.config).map_err(Failure::bad_input)?;
    let scenario = Scenario::build(&config, Some(&args.config)).map_err(Failure::bad_input)?;
    std::fs::create_dir_all(&args.out).map_err(Failure::running)?;
    let written = pictures::beam_pictures(&scenario, &args.out).map_err(Failure::running)?;
    for path in written {
        println!("{}", path.display());
    }
    Ok(())
}
