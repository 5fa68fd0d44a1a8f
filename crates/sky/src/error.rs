/// Why a sky model, spectrum, projection or fit was rejected.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SkyError {
    /// A spectrum's reference frequency is not finite and positive.
    #[error("reference frequency {0} Hz must be finite and positive")]
    ReferenceFrequency(f64),
    /// A frequency at which a spectrum is evaluated or fitted is not finite and positive.
    #[error("frequency {0} Hz must be finite and positive")]
    Frequency(f64),
    /// A spectral parameter (flux, α or β) is not finite.
    #[error("spectral parameter `{name}` = {value} must be finite")]
    SpectralParameter {
        /// Which parameter.
        name: &'static str,
        /// Its value.
        value: f64,
    },
    /// A Gaussian's widths are not finite and positive, or the minor axis exceeds the major.
    #[error("Gaussian FWHM major {major_rad} rad, minor {minor_rad} rad: need major ≥ minor > 0, finite")]
    GaussianWidth {
        /// Major-axis FWHM, rad.
        major_rad: f64,
        /// Minor-axis FWHM, rad.
        minor_rad: f64,
    },
    /// A Gaussian's position angle is not finite.
    #[error("position angle {0} rad must be finite")]
    PositionAngle(f64),
    /// A direction (l, m) is not finite or lies outside the unit circle.
    #[error("direction cosines (l, m) = ({l}, {m}) must be finite with l² + m² < 1")]
    Direction {
        /// l.
        l: f64,
        /// m.
        m: f64,
    },
    /// A sky position is more than 90° from the phase centre (behind the tangent plane).
    #[error("position (RA {ra_rad}, Dec {dec_rad}) rad is on the far side of the phase centre")]
    FarHemisphere {
        /// Right ascension, rad.
        ra_rad: f64,
        /// Declination, rad.
        dec_rad: f64,
    },
    /// A right ascension or declination is not finite (or |Dec| > π/2).
    #[error("celestial position (RA {ra_rad}, Dec {dec_rad}) rad is invalid")]
    CelestialPosition {
        /// Right ascension, rad.
        ra_rad: f64,
        /// Declination, rad.
        dec_rad: f64,
    },
    /// A least-squares fit was asked for zero terms.
    #[error("a Taylor fit needs at least one term")]
    NoTerms,
    /// A least-squares fit has fewer usable samples (positive weight) than terms.
    #[error("a {n_terms}-term fit needs at least {n_terms} samples with positive weight, got {n_samples}")]
    TooFewSamples {
        /// Terms asked for.
        n_terms: usize,
        /// Samples with positive weight.
        n_samples: usize,
    },
    /// Input slices of a fit have different lengths.
    #[error("fit inputs have different lengths: {x} abscissae, {y} values, {w} weights")]
    LengthMismatch {
        /// Number of abscissae.
        x: usize,
        /// Number of values.
        y: usize,
        /// Number of weights.
        w: usize,
    },
    /// A fit weight is negative or not finite.
    #[error("fit weight {0} must be finite and non-negative")]
    Weight(f64),
    /// The fit's design matrix is rank-deficient (e.g. repeated frequencies).
    #[error("the Taylor fit is rank-deficient at column {column} (samples do not determine {column} + 1 terms)")]
    RankDeficient {
        /// First column found dependent on the earlier ones.
        column: usize,
    },
    /// A Taylor coefficient vector has too few terms for the derived quantity, or I0 = 0.
    #[error(
        "cannot derive spectral index/curvature from coefficients {0:?}: too few terms or I0 = 0"
    )]
    Coefficients(Vec<f64>),
    /// An image grid with no pixels or a non-positive cell.
    #[error("image grid {nx} × {ny} pixels of {cell_rad} rad is invalid")]
    Geometry {
        /// Pixels along x.
        nx: usize,
        /// Pixels along y.
        ny: usize,
        /// Cell size, rad.
        cell_rad: f64,
    },
}

impl SkyError {
    pub(crate) fn check_geometry(g: &beamfloor_core::ImageGeometry) -> Result<(), SkyError> {
        if g.nx == 0 || g.ny == 0 || !(g.cell_rad.is_finite() && g.cell_rad > 0.0) {
            return Err(SkyError::Geometry { nx: g.nx, ny: g.ny, cell_rad: g.cell_rad });
        }
        Ok(())
    }
}
