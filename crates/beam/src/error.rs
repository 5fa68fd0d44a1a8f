/// Everything that can go wrong when a beam model is built or queried; each variant carries the
/// offending value.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum BeamError {
    /// The dish diameter must be finite and positive.
    #[error("dish diameter must be finite and > 0 m, got {0} m")]
    InvalidDiameter(f64),
    /// The central blockage must be non-negative and smaller than the dish.
    #[error("blockage diameter must be in [0, {dish_m}) m, got {blockage_m} m")]
    InvalidBlockage {
        /// Requested blockage diameter, m.
        blockage_m: f64,
        /// Dish diameter, m.
        dish_m: f64,
    },
    /// Feed-support legs need a finite, non-negative width below the dish diameter.
    #[error("feed-leg width must be in [0, {dish_m}) m, got {width_m} m")]
    InvalidLegWidth {
        /// Requested width, m.
        width_m: f64,
        /// Dish diameter, m.
        dish_m: f64,
    },
    /// Edge tapers are power ratios in dB: non-negative (infinity means zero field at the rim).
    #[error("edge taper must be >= 0 dB (or +inf), got {0} dB")]
    InvalidEdgeTaper(f64),
    /// Aperture sampling needs at least a few samples across the dish.
    #[error(
        "aperture sampling must be >= {min} samples across (and supersampling >= 1), got {got}"
    )]
    InvalidApertureSampling {
        /// Requested value.
        got: usize,
        /// Smallest accepted value.
        min: usize,
    },
    /// The table oversampling factor (relative to Nyquist, 1/D) must be finite and >= 2.
    #[error("table oversampling must be finite and >= 2, got {0}")]
    InvalidOversampling(f64),
    /// Only even numbers of interpolation points between 4 and 8 are implemented.
    #[error("interpolation points must be 4, 6 or 8, got {0}")]
    UnsupportedInterpolationPoints(usize),
    /// The pattern table would exceed the size limit.
    #[error("pattern table of {n} x {n} nodes exceeds the limit of {limit} nodes per axis")]
    TableTooLarge {
        /// Nodes per axis that the coverage asks for.
        n: usize,
        /// Largest accepted number of nodes per axis.
        limit: usize,
    },
    /// A frequency must be finite and positive.
    #[error("frequency must be finite and > 0 Hz, got {0} Hz")]
    InvalidFrequency(f64),
    /// The largest direction to cover must be finite, positive and below 1 (direction cosine).
    #[error("largest |l|, |m| to cover must be in (0, 0.7], got {0}")]
    InvalidCoverage(f64),
    /// Parallactic angles and times must describe the same timeline.
    #[error("timeline has {parallactic_angles} parallactic angles but {times} times")]
    TimelineLengthMismatch {
        /// Number of parallactic angles given.
        parallactic_angles: usize,
        /// Number of times given.
        times: usize,
    },
    /// A timeline value is not finite.
    #[error("timeline value {value} at index {index} is not finite")]
    NonFiniteTimeline {
        /// Index in the timeline.
        index: usize,
        /// Offending value.
        value: f64,
    },
    /// At least one antenna is needed.
    #[error("number of antennas must be >= 1, got {0}")]
    InvalidAntennaCount(usize),
    /// Squint must be a finite, non-negative fraction of the half-power width below 1.
    #[error("squint fraction must be in [0, 1), got {0}")]
    InvalidSquint(f64),
    /// Pointing parameters must be finite (and the rms non-negative).
    #[error("pointing parameter {name} must be finite (rms >= 0), got {value}")]
    InvalidPointing {
        /// Which parameter.
        name: &'static str,
        /// Offending value.
        value: f64,
    },
    /// Ripple needs an amplitude in [0, 1) and a positive period.
    #[error("ripple amplitude must be in [0, 1) and period > 0 Hz, got amplitude {amplitude}, period {period_hz} Hz")]
    InvalidRipple {
        /// Amplitude a.
        amplitude: f64,
        /// Period P, Hz.
        period_hz: f64,
    },
    /// A list that must not be empty was empty.
    #[error("{0} must not be empty")]
    Empty(&'static str),
    /// A power level must lie strictly between 0 and 1.
    #[error("power level must be in (0, 1), got {0}")]
    InvalidPowerLevel(f64),
    /// The azimuthally averaged power never fell to the requested level inside the table.
    #[error("power level {0} is not reached inside the tabulated radius")]
    PowerLevelNotReached(f64),
    /// A Taylor fit needs 1 <= terms <= channels.
    #[error("Taylor fit needs 1 <= terms <= channels; got {terms} terms for {channels} channels")]
    InvalidTaylorTerms {
        /// Requested number of terms.
        terms: usize,
        /// Number of channels.
        channels: usize,
    },
    /// An index (antenna or time) is outside the model.
    #[error("{what} index {index} out of range (size {size})")]
    IndexOutOfRange {
        /// "antenna" or "time".
        what: &'static str,
        /// Offending index.
        index: usize,
        /// Number of entries.
        size: usize,
    },
}
