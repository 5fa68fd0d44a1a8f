//! The `simulate` job: config → scenario → visibility set on disk, with a uv-coverage plot and
//! the resolved config beside it.

use std::path::{Path, PathBuf};
use std::time::Instant;

use beamfloor_predict::VisSet;

use crate::config::Config;
use crate::scenario::{Scenario, ScenarioError};

/// Why the simulate job failed.
#[derive(Debug, thiserror::Error)]
pub enum SimulateError {
    /// The config could not be mapped onto the compute crates (bad input).
    #[error(transparent)]
    Scenario(#[from] ScenarioError),
    /// Writing an output failed.
    #[error(transparent)]
    Report(#[from] beamfloor_report::ReportError),
    /// A folder or file could not be created.
    #[error("{path}: {source}")]
    Io {
        /// The path.
        path: PathBuf,
        /// The I/O error.
        #[source]
        source: std::io::Error,
    },
}

/// What a finished simulation produced.
pub struct SimulationSummary {
    /// Folder of the visibility set.
    pub visibilities_dir: PathBuf,
    /// The uv-coverage plot.
    pub uv_coverage_png: PathBuf,
    /// Number of complex visibilities (rows × channels × polarizations).
    pub n_visibilities: usize,
    /// Number of sky components.
    pub n_components: usize,
    /// Wall time of the prediction, s.
    pub predict_seconds: f64,
}

/// Builds the scenario and reports the number of rows the simulation will predict, so a caller
/// can size a progress bar before the heavy work.
pub fn prepare(config: &Config, config_path: Option<&Path>) -> Result<Scenario, SimulateError> {
    Ok(Scenario::build(config, config_path)?)
}

/// Simulates `scenario` and writes `out_dir/visibilities/`, `out_dir/uv-coverage.png` and
/// `out_dir/config.resolved.toml`.
pub fn simulate_to_folder(
    config: &Config,
    scenario: &Scenario,
    out_dir: &Path,
    progress: &(dyn Fn(usize) + Sync),
) -> Result<(VisSet, SimulationSummary), SimulateError> {
    std::fs::create_dir_all(out_dir)
        .map_err(|source| SimulateError::Io { path: out_dir.to_path_buf(), source })?;
    let start = Instant::now();
    let vis = scenario.simulate(progress)?;
    let predict_seconds = start.elapsed().as_secs_f64();
    let visibilities_dir = out_dir.join("visibilities");
    beamfloor_report::write_visset(&visibilities_dir, &vis)?;
    let uv_coverage_png = out_dir.join("uv-coverage.png");
    let title = format!("uv-coverage: {}", config.experiment.name);
    beamfloor_report::write_uv_coverage_png(&uv_coverage_png, &vis, &title)?;
    let resolved = config.to_toml_string().unwrap_or_default();
    let resolved_path = out_dir.join("config.resolved.toml");
    // Through a temporary name and a rename, like every other output.
    beamfloor_report::write_text_file(&resolved_path, &resolved)?;
    let summary = SimulationSummary {
        visibilities_dir,
        uv_coverage_png,
        n_visibilities: vis.data.len(),
        n_components: scenario.sky.len(),
        predict_seconds,
    };
    Ok((vis, summary))
}
