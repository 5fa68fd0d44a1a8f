use beamfloor_predict::VisSetError;

/// Why an imaging operator could not be planned or applied.
#[derive(Debug, thiserror::Error, PartialEq)]
pub enum ImagingError {
    /// The requested accuracy is outside what the kernel supports.
    #[error("requested accuracy epsilon = {0} is outside the supported range [1e-14, 1e-1]")]
    Epsilon(f64),
    /// The image geometry is unusable.
    #[error("image geometry {nx}x{ny} with cell {cell_rad} rad is invalid: {why}")]
    Geometry {
        /// Pixels along x.
        nx: usize,
        /// Pixels along y.
        ny: usize,
        /// Pixel size, rad.
        cell_rad: f64,
        /// What would be valid.
        why: &'static str,
    },
    /// A parameter is out of its valid range.
    #[error("parameter `{name}` = {value} is invalid: {why}")]
    Parameter {
        /// Parameter name.
        name: &'static str,
        /// Its value, printed.
        value: String,
        /// What would be valid.
        why: &'static str,
    },
    /// An array passed in has the wrong shape.
    #[error("`{what}` has shape {found:?}, expected {expected:?}")]
    Shape {
        /// Which argument.
        what: &'static str,
        /// Shape found.
        found: Vec<usize>,
        /// Shape expected.
        expected: Vec<usize>,
    },
    /// A sample's w lies outside the range the plan was built for.
    #[error("sample w = {w_lambda} wavelengths lies outside the planned range [{min_lambda}, {max_lambda}]")]
    WOutOfRange {
        /// The sample's w, wavelengths.
        w_lambda: f64,
        /// Planned minimum, wavelengths.
        min_lambda: f64,
        /// Planned maximum, wavelengths.
        max_lambda: f64,
    },
    /// The visibility set is inconsistent.
    #[error("invalid visibility set: {0}")]
    VisSet(#[from] VisSetError),
}
