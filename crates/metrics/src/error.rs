/// Everything that can go wrong when scoring images; each variant carries the offending value.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum MetricsError {
    /// An image or mask does not have the shape `[ny, nx]` of the image geometry.
    #[error("{what} has shape [{found_ny}, {found_nx}] but the image geometry is [{ny}, {nx}]")]
    ShapeMismatch {
        /// Which input.
        what: &'static str,
        /// Expected rows.
        ny: usize,
        /// Expected columns.
        nx: usize,
        /// Rows found.
        found_ny: usize,
        /// Columns found.
        found_nx: usize,
    },
    /// A mask selects no pixel, so no statistic can be formed over it.
    #[error("{what} selects no pixels")]
    EmptyMask {
        /// Which mask.
        what: &'static str,
    },
    /// A pixel that enters a statistic is NaN or infinite.
    #[error("{what} has the non-finite value {value} at pixel (iy={iy}, ix={ix})")]
    NonFinite {
        /// Which image.
        what: &'static str,
        /// Row of the pixel.
        iy: usize,
        /// Column of the pixel.
        ix: usize,
        /// The value found.
        value: f64,
    },
    /// A numeric parameter is outside its allowed range.
    #[error("{name} = {value} is out of range (allowed: {allowed})")]
    InvalidParameter {
        /// Parameter name.
        name: &'static str,
        /// Value given.
        value: f64,
        /// The allowed range, in words.
        allowed: &'static str,
    },
    /// The list of restored Taylor-term images is empty (at least I0 is needed).
    #[error("no Taylor-term images were given; at least the I0 image is needed")]
    NoTaylorTerms,
}

/// Result type of this crate.
pub type Result<T> = std::result::Result<T, MetricsError>;

/// Check that `image` is shaped `[ny, nx]` like the geometry.
pub(crate) fn check_shape<T>(
    image: &ndarray::Array2<T>,
    geometry: &beamfloor_core::ImageGeometry,
    what: &'static str,
) -> Result<()> {
    let (found_ny, found_nx) = image.dim();
    if found_ny != geometry.ny || found_nx != geometry.nx {
        return Err(MetricsError::ShapeMismatch {
            what,
            ny: geometry.ny,
            nx: geometry.nx,
            found_ny,
            found_nx,
        });
    }
    Ok(())
}

/// Check that a parameter is finite and inside `[lo, hi]` (or `[lo, hi)` when `hi_open`).
pub(crate) fn check_range(
    name: &'static str,
    value: f64,
    lo: f64,
    hi: f64,
    hi_open: bool,
    allowed: &'static str,
) -> Result<()> {
    let ok = value.is_finite() && value >= lo && if hi_open { value < hi } else { value <= hi };
    if ok {
        Ok(())
    } else {
        Err(MetricsError::InvalidParameter { name, value, allowed })
    }
}
