//! `beamfloor decompose [CONFIG] [--out DIR]`: rerun the experiment with each truth effect
//! switched off in turn and with all off, and tabulate what each effect costs each strategy.

use std::path::PathBuf;
use std::time::{SystemTime, UNIX_EPOCH};

use beamfloor_experiment::decompose::{run_decomposition, write_decomposition};
use beamfloor_experiment::run::{CycleReport, RunObserver};
use beamfloor_experiment::{load_config, parse_config};

use super::run::DEMO_TOML;
use super::Failure;

/// Arguments of `decompose`.
#[derive(clap::Args)]
pub struct Args {
    /// The experiment config (TOML). Without it the built-in demo is decomposed (one full demo
    /// run per effect: expect many times the demo's run time).
    config: Option<PathBuf>,
    /// Output folder: one run folder per variant inside it, plus decomposition.csv/.json and a
    /// bar chart per strategy. Default: a fresh folder `beamfloor-decompose-<name>-<unix time>`.
    #[arg(long, short)]
    out: Option<PathBuf>,
}

/// Progress lines on stderr.
struct Lines;

impl RunObserver for Lines {
    fn stage(&mut self, name: &str) {
        eprintln!("  · {name}");
    }
    fn strategy(&mut self, index: usize, count: usize, name: &str) {
        eprintln!("  · strategy {}/{count}: {name}", index + 1);
    }
    fn skipped(&mut self, name: &str, reason: &str) {
        eprintln!("  · skipping strategy {name}: {reason}");
    }
    fn cycle(&mut self, name: &str, report: &CycleReport) {
        eprintln!(
            "    {name}: major cycle {}, peak residual {:.3e} Jy/beam",
            report.cycle, report.peak_residual
        );
    }
}

/// Runs the command.
pub fn run(args: &Args) -> Result<(), Failure> {
    let config = match &args.config {
        Some(path) => load_config(path).map_err(Failure::bad_input)?,
        None => parse_config(DEMO_TOML, "built-in demo (configs/demo.toml)")
            .map_err(Failure::bad_input)?,
    };
    let out = args.out.clone().unwrap_or_else(|| {
        let secs = SystemTime::now().duration_since(UNIX_EPOCH).map(|d| d.as_secs()).unwrap_or(0);
        PathBuf::from(format!("beamfloor-decompose-{}-{secs}", config.experiment.name))
    });
    let decomposition = run_decomposition(
        &config,
        args.config.as_deref(),
        &out,
        &mut Lines,
        &mut |index, count, variant| {
            eprintln!("· variant {}/{count}: {} ({})", index + 1, variant.name, variant.label)
        },
    )
    .map_err(|e| if e.is_bad_input() { Failure::bad_input(e) } else { Failure::running(e) })?;
    write_decomposition(&out, &decomposition).map_err(Failure::running)?;

    println!(
        "floor (off-source residual RMS, Jy/beam) per strategy and variant; cost = the part of the"
    );
    println!("floor that goes away with the effect, in quadrature (effects interact: costs need not add up)");
    for strategy in &decomposition.strategies {
        println!("{strategy}:");
        for v in &decomposition.variants {
            let floor = decomposition.floor(&v.variant.name, strategy);
            let cost = decomposition.cost(&v.variant.name, strategy);
            let text = |x: Option<f64>| x.map_or("not imaged".to_string(), |x| format!("{x:.3e}"));
            let is_single = v.variant.name.starts_with("without-");
            println!(
                "  {:<38} floor {:>10}{}",
                v.variant.label,
                text(floor),
                if is_single { format!("   cost {:>10}", text(cost)) } else { String::new() }
            );
        }
    }
    println!("tables and charts: {}", out.join("decomposition.csv").display());
    Ok(())
}
