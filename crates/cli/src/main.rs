//! The `beamfloor` command: argument parsing, progress display and exit codes over
//! `beamfloor-experiment`. No physics lives here.
//!
//! Exit codes: 0 success, 2 bad input (config, files, impossible settings), 1 failure while
//! running.

mod commands;

use std::process::ExitCode;

use clap::{Parser, Subcommand};

/// What residual floor does each imaging strategy leave on a simulated wideband, wide-field
/// observation, and why?
///
/// beamfloor simulates an interferometer observation from a TOML config (array, band, sky with
/// spectra, dish beams with their time, frequency and polarization effects, thermal noise),
/// images the same visibilities with several correction strategies and scores each against the
/// known truth. Results are simulations: they guide, and do not replace, validation on real data.
///
/// Start with `beamfloor check configs/demo.toml`.
#[derive(Parser)]
#[command(name = "beamfloor", version, about, long_about, propagate_version = true)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Validate a config and print the experiment it describes (antennas, baselines, time
    /// samples, channels, visibilities, memory) without running anything heavy.
    Check(commands::check::Args),
    /// Simulate the config's observation (sky, array, beams, noise) and write the visibility set
    /// (.npy files and a JSON manifest) and a uv-coverage plot.
    Simulate(commands::simulate::Args),
    /// Simulate once, image the same visibilities with every strategy, deconvolve, score
    /// against the truth and write a run folder with report.html. Without CONFIG the built-in
    /// demo runs.
    Run(commands::run::Args),
    /// Draw the truth beam: power at the band edges, instantaneous minus average beam, and P and
    /// |ν ∂P/∂ν| along a radius.
    PlotBeam(commands::plot_beam::Args),
    /// Rerun the experiment with each truth effect (rotation, frequency scaling, squint,
    /// pointing, ripple, w-term, noise) switched off in turn and with all off, and tabulate and
    /// plot what each effect costs each strategy's floor.
    Decompose(commands::decompose::Args),
    /// Run a config's [sweep] point by point, here or as a Slurm job array, resume after an
    /// interruption, and collect every point's metrics into one table and a floor plot.
    #[command(subcommand_required = true)]
    Sweep(commands::sweep::Args),
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Check(args) => commands::check::run(&args),
        Command::Simulate(args) => commands::simulate::run(&args),
        Command::Run(args) => commands::run::run(&args),
        Command::Sweep(args) => commands::sweep::run(&args),
        Command::PlotBeam(args) => commands::plot_beam::run(&args),
        Command::Decompose(args) => commands::decompose::run(&args),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(failure) => {
            eprintln!("error: {failure}");
            ExitCode::from(failure.exit_code())
        }
    }
}
