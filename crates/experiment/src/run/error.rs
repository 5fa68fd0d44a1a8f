//! Why a run failed, split into bad input (the config asks for something impossible) and
//! failures while running.

use std::path::PathBuf;

use crate::scenario::ScenarioError;

/// Everything that can stop [`crate::run::run_experiment`]; each variant carries the offending
/// value or path.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// The config could not be mapped onto the compute crates (bad input).
    #[error(transparent)]
    Scenario(#[from] ScenarioError),
    /// The config breaks a physical-sanity rule or would not fit in memory (bad input; found by
    /// [`crate::run::preflight`] before any heavy work).
    #[error(transparent)]
    Config(Box<crate::config::ConfigError>),
    /// The run folder holds a different experiment (its config hash differs); it is not
    /// overwritten unless asked (`beamfloor run --force`, [`crate::run::clear_run_folder`]).
    #[error(
        "{}: holds {state} with config hash {}…, not this config's {}…: it is not overwritten; choose another output folder, or rerun with --force to replace that run",
        path.display(), &found_hash[..found_hash.len().min(12)], &expected_hash[..expected_hash.len().min(12)]
    )]
    ForeignRunFolder {
        /// The run folder.
        path: PathBuf,
        /// The config hash found in the folder's markers or manifest.
        found_hash: String,
        /// This config's hash.
        expected_hash: String,
        /// What the folder holds, in words.
        state: String,
    },
    /// A strategy asks for something this version cannot carry out (bad input).
    #[error("strategy[{index}] \"{strategy}\": {key} = {value}: {why}")]
    Unsupported {
        /// 0-based index into `[[strategy]]`.
        index: usize,
        /// The strategy's name.
        strategy: String,
        /// The config key.
        key: &'static str,
        /// The value, printed.
        value: String,
        /// What is possible instead.
        why: &'static str,
    },
    /// A beam picture could not be drawn.
    #[error("beam picture: {0}")]
    Picture(#[source] Box<crate::pictures::PictureError>),
    /// No strategy produced an image (every one was unavailable or diverged).
    #[error("no strategy could be imaged: {}", reasons.join("; "))]
    NothingImaged {
        /// Why each strategy was skipped.
        reasons: Vec<String>,
    },
    /// The imaging crate failed for a strategy.
    #[error("strategy \"{strategy}\": imaging: {source}")]
    Imaging {
        /// The strategy's name (or "weights" for the shared imaging weights).
        strategy: String,
        /// What the imaging crate said.
        #[source]
        source: beamfloor_imaging::ImagingError,
    },
    /// The deconvolution crate failed for a strategy.
    #[error("strategy \"{strategy}\": deconvolution: {source}")]
    Deconv {
        /// The strategy's name.
        strategy: String,
        /// What the deconvolution crate said.
        #[source]
        source: beamfloor_deconv::DeconvError,
    },
    /// The beam crate failed (primary-beam correction or beam plots).
    #[error("{what}: {source}")]
    Beam {
        /// What was being computed.
        what: String,
        /// What the beam crate said.
        #[source]
        source: beamfloor_beam::BeamError,
    },
    /// The sky crate failed (truth images, fitted spectra).
    #[error("{what}: {source}")]
    Sky {
        /// What was being computed.
        what: String,
        /// What the sky crate said.
        #[source]
        source: beamfloor_sky::SkyError,
    },
    /// The metrics crate failed for a strategy.
    #[error("strategy \"{strategy}\": metrics: {source}")]
    Metrics {
        /// The strategy's name.
        strategy: String,
        /// What the metrics crate said.
        #[source]
        source: beamfloor_metrics::MetricsError,
    },
    /// A grid product, image or kernel response holds NaN or an infinity.
    #[error("strategy \"{strategy}\": {stage}: Taylor term {term} holds {value} at pixel ({x}, {y}); the run stops here")]
    NonFinite {
        /// The strategy's name.
        strategy: String,
        /// Which stage and image.
        stage: String,
        /// Taylor term (or PSF order) of the image.
        term: usize,
        /// Pixel x.
        x: usize,
        /// Pixel y.
        y: usize,
        /// The value found.
        value: f64,
    },
    /// The predicted image noise could not be computed.
    #[error("image noise: {0}")]
    Noise(#[from] beamfloor_predict::PredictError),
    /// Writing or reading an output failed.
    #[error(transparent)]
    Report(#[from] beamfloor_report::ReportError),
    /// A folder or file could not be created or written.
    #[error("{path}: {source}")]
    Io {
        /// The path.
        path: PathBuf,
        /// The I/O error.
        #[source]
        source: std::io::Error,
    },
}

impl RunError {
    /// True when the user's input (config, scenario, strategy choice) is at fault rather than
    /// the run (exit code 2 instead of 1 in the command-line tool).
    pub fn is_bad_input(&self) -> bool {
        matches!(
            self,
            RunError::Scenario(_)
                | RunError::Unsupported { .. }
                | RunError::Config(_)
                | RunError::ForeignRunFolder { .. }
        )
    }
}
