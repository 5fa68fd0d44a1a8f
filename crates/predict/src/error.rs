use crate::VisSetError;

/// Why a prediction or simulation was rejected.
#[derive(Debug, PartialEq, thiserror::Error)]
pub enum PredictError {
    /// The observation has no channels.
    #[error("the observation has no channels")]
    NoChannels,
    /// A channel frequency is not finite and positive.
    #[error("channel frequency {0} Hz must be finite and positive")]
    Frequency(f64),
    /// A row names an antenna the observation does not have.
    #[error("row {row} uses antenna {antenna}, but the observation has {n_antennas} antennas")]
    Antenna {
        /// Row index.
        row: usize,
        /// Offending antenna index.
        antenna: usize,
        /// Antennas in the observation.
        n_antennas: usize,
    },
    /// A row's time index is outside the timeline.
    #[error("row {row} has time index {time_index}, but the timeline has {n_times} samples")]
    TimeIndex {
        /// Row index.
        row: usize,
        /// Offending time index.
        time_index: usize,
        /// Samples in the timeline.
        n_times: usize,
    },
    /// A row's uvw is not finite.
    #[error("row {row} has non-finite uvw {uvw_m:?} m")]
    Uvw {
        /// Row index.
        row: usize,
        /// The uvw, metres.
        uvw_m: [f64; 3],
    },
    /// The beam model covers fewer antennas than the observation has.
    #[error("the beam model covers {beam} antennas, the observation has {observation}")]
    BeamAntennas {
        /// Antennas the beam covers.
        beam: usize,
        /// Antennas in the observation.
        observation: usize,
    },
    /// A noise or prediction parameter is out of range.
    #[error("parameter `{name}` = {value} is invalid: expected {expected}")]
    Parameter {
        /// Parameter name.
        name: &'static str,
        /// Its value.
        value: f64,
        /// What would be valid.
        expected: &'static str,
    },
    /// An antenna or time index does not fit the visibility set's 32-bit index columns.
    #[error("index {0} does not fit in 32 bits")]
    IndexOverflow(usize),
    /// The assembled visibility set failed its own consistency check.
    #[error("the simulated visibility set is inconsistent: {0}")]
    VisSet(#[from] VisSetError),
}
