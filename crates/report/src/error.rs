use std::path::PathBuf;

use beamfloor_predict::VisSetError;

/// Everything that can go wrong while writing or reading a beamfloor file.
///
/// Every variant names the file (or folder) involved and says what was wrong with it, so a
/// caller can print the error alone and the user knows which file to look at.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    /// An operating-system call on a path failed.
    #[error("{action} `{path}`: {source}")]
    Io {
        /// The file or folder.
        path: PathBuf,
        /// What we were doing, e.g. "creating" or "renaming into place".
        action: &'static str,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
    /// The FITS library reported an error.
    #[error("FITS file `{path}`: {message}")]
    Fits {
        /// The file.
        path: PathBuf,
        /// The library's message.
        message: String,
    },
    /// A FITS file opened but is not an image this crate can interpret.
    #[error("FITS file `{path}`: {why}")]
    FitsContent {
        /// The file.
        path: PathBuf,
        /// What is missing or inconsistent.
        why: String,
    },
    /// A path cannot be used (not UTF-8, no file name, or characters the FITS library would read
    /// as a filter expression).
    #[error("unusable path `{path}`: {why}")]
    BadPath {
        /// The path.
        path: PathBuf,
        /// Why it cannot be used.
        why: &'static str,
    },
    /// An argument passed by the caller is invalid.
    #[error("invalid {what} = {value}: {why}")]
    InvalidInput {
        /// Which argument.
        what: &'static str,
        /// The offending value, printed.
        value: String,
        /// What would be valid.
        why: &'static str,
    },
    /// The plotting library failed while drawing.
    #[error("drawing `{path}`: {message}")]
    Plot {
        /// The output file.
        path: PathBuf,
        /// The library's message.
        message: String,
    },
    /// Writing a `.npy` array failed.
    #[error("writing `{path}`: {source}")]
    NpyWrite {
        /// The file.
        path: PathBuf,
        /// The underlying error.
        #[source]
        source: ndarray_npy::WriteNpyError,
    },
    /// Reading a `.npy` array failed after its header and size had been checked.
    #[error("reading `{path}`: {source}")]
    NpyRead {
        /// The file.
        path: PathBuf,
        /// The underlying error.
        #[source]
        source: ndarray_npy::ReadNpyError,
    },
    /// A `.npy` header cannot be parsed.
    #[error("`{path}` is not a readable .npy file: {why}")]
    NpyHeader {
        /// The file.
        path: PathBuf,
        /// The parser's message.
        why: String,
    },
    /// A file a visibility set needs is not there.
    #[error("missing file `{path}`")]
    MissingFile {
        /// The path that was expected.
        path: PathBuf,
    },
    /// A `.npy` file holds fewer (or more) bytes than its header promises.
    #[error("`{path}` has {found_bytes} bytes, its header implies {expected_bytes} (truncated or padded)")]
    WrongFileSize {
        /// The file.
        path: PathBuf,
        /// Header length plus element count times element size.
        expected_bytes: u64,
        /// Actual length on disk.
        found_bytes: u64,
    },
    /// A `.npy` file's element type differs from what the manifest and the format require.
    #[error("`{path}` has dtype {found}, expected {expected}")]
    DtypeMismatch {
        /// The file.
        path: PathBuf,
        /// The dtype required.
        expected: String,
        /// The dtype in the file.
        found: String,
    },
    /// A `.npy` file's shape differs from the shape the manifest declares (or the manifest's
    /// declared shape disagrees with its own row, channel and correlation counts).
    #[error("`{path}` has shape {found:?}, expected {expected:?}")]
    ShapeMismatch {
        /// The file (the `.npy` file, or the manifest for an inconsistent declaration).
        path: PathBuf,
        /// The shape required.
        expected: Vec<usize>,
        /// The shape found.
        found: Vec<usize>,
    },
    /// The manifest cannot be parsed or lacks something.
    #[error("manifest `{path}`: {why}")]
    Manifest {
        /// The manifest file.
        path: PathBuf,
        /// What is wrong.
        why: String,
    },
    /// The manifest names another format or a version this reader does not know.
    #[error("manifest `{path}` is format {format:?} version {version}; this reader knows {supported_format:?} version {supported_version}")]
    UnsupportedFormat {
        /// The manifest file.
        path: PathBuf,
        /// Format name found.
        format: String,
        /// Version found.
        version: u64,
        /// Format name understood.
        supported_format: &'static str,
        /// Version understood.
        supported_version: u64,
    },
    /// The arrays read are individually fine but do not form a consistent visibility set.
    #[error("visibility set `{path}`: {source}")]
    InvalidVisSet {
        /// The folder.
        path: PathBuf,
        /// What `VisSet::validate` found.
        #[source]
        source: VisSetError,
    },
    /// The destination exists and is not something this crate may replace.
    #[error("`{path}` already exists and is not a beamfloor visibility set; not replacing it")]
    DestinationExists {
        /// The destination.
        path: PathBuf,
    },
}

impl ReportError {
    /// Shorthand for [`ReportError::Io`].
    pub(crate) fn io(
        path: impl Into<PathBuf>,
        action: &'static str,
        source: std::io::Error,
    ) -> Self {
        ReportError::Io { path: path.into(), action, source }
    }
}
