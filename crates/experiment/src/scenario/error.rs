use std::path::PathBuf;

/// Why a valid config could not be turned into a scenario (the compute crates refused a value,
/// or a file it names could not be read).
#[derive(Debug, thiserror::Error)]
pub enum ScenarioError {
    /// The array crate refused the layout or the observation described under `key`.
    #[error("{key}: {source}")]
    Array {
        /// Config section or key the values came from.
        key: &'static str,
        /// What the array crate said.
        #[source]
        source: beamfloor_array::ArrayError,
    },
    /// The antenna layout file could not be read.
    #[error("array.layout.file: cannot read {path}: {source}")]
    LayoutFile {
        /// The file, as resolved from the config's folder.
        path: PathBuf,
        /// The I/O error.
        #[source]
        source: std::io::Error,
    },
    /// The antenna layout file's content is invalid.
    #[error("array.layout.file: {path}: {source}")]
    LayoutFileContent {
        /// The file, as resolved from the config's folder.
        path: PathBuf,
        /// What is wrong with it.
        #[source]
        source: beamfloor_array::ArrayError,
    },
    /// The beam crate refused the beam described under `key`.
    #[error("{key}: {source}")]
    Beam {
        /// Config section or key the values came from.
        key: &'static str,
        /// What the beam crate said.
        #[source]
        source: beamfloor_beam::BeamError,
    },
    /// The sky crate refused source number `index` (0-based) of `[[sky.source]]`.
    #[error("sky.source[{index}]: {source}")]
    Sky {
        /// 0-based index into `[[sky.source]]`.
        index: usize,
        /// What the sky crate said.
        #[source]
        source: beamfloor_sky::SkyError,
    },
    /// A valid config value that this version cannot carry out.
    #[error("{key} = {value}: {allowed}")]
    Unsupported {
        /// The key.
        key: &'static str,
        /// The value, printed.
        value: String,
        /// What is possible instead.
        allowed: &'static str,
    },
    /// The truth prediction failed.
    #[error("simulating the truth: {0}")]
    Predict(#[from] beamfloor_predict::PredictError),
}
