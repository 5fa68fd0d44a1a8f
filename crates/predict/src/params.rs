use crate::PredictError;

/// Default number of channels between exact phase evaluations in the channel recurrence.
pub const DEFAULT_PHASE_REFRESH_CHANNELS: usize = 32;
/// Default memory allowed for one block of precomputed beam values, bytes (256 MiB).
pub const DEFAULT_BEAM_CACHE_BYTES: usize = 256 << 20;

/// Switches and knobs of the direct prediction. `PredictParams::default()` is the full truth:
/// w-term on, phases refreshed every [`DEFAULT_PHASE_REFRESH_CHANNELS`] channels, beam blocks of
/// at most [`DEFAULT_BEAM_CACHE_BYTES`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PredictParams {
    /// Include the w(n − 1) term of the phase (default true). Off drops it, as a flat-sky
    /// (two-dimensional) Fourier relation would; used to show what the w-term costs. The
    /// simulated visibility set then stores w = 0 for every sample (see [`crate::simulate`]).
    pub w_term: bool,
    /// The phase of consecutive channels is advanced by a constant phasor and recomputed exactly
    /// every this many channels (≥ 1; 1 means every channel is evaluated directly). Default 32.
    pub phase_refresh_channels: usize,
    /// Beam values are precomputed for as many time samples at once as fit in this many bytes
    /// (at least one time sample is always taken). Default 256 MiB.
    pub beam_cache_bytes: usize,
}

impl Default for PredictParams {
    fn default() -> Self {
        Self {
            w_term: true,
            phase_refresh_channels: DEFAULT_PHASE_REFRESH_CHANNELS,
            beam_cache_bytes: DEFAULT_BEAM_CACHE_BYTES,
        }
    }
}

impl PredictParams {
    pub(crate) fn validate(&self) -> Result<(), PredictError> {
        if self.phase_refresh_channels == 0 {
            return Err(PredictError::Parameter {
                name: "phase_refresh_channels",
                value: 0.0,
                expected: "at least 1",
            });
        }
        Ok(())
    }
}

/// The receiving system's sensitivity, the same for every antenna, polarization and channel.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct NoiseModel {
    /// System equivalent flux density of one antenna, Jy (> 0).
    pub sefd_jy: f64,
    /// Correlator efficiency η_c, in (0, 1].
    pub correlator_efficiency: f64,
}

/// Everything [`crate::simulate`] needs beyond the observation, sky and beam.
#[derive(Clone, Debug, PartialEq)]
pub struct SimulationParams {
    /// The direct prediction's switches.
    pub predict: PredictParams,
    /// System sensitivity; sets the weights 1/σ² whether or not noise is added.
    pub noise: NoiseModel,
    /// Add thermal noise to the data (switch off to see the noise-free floor).
    pub add_noise: bool,
    /// Experiment seed (noise streams derive from it; stored in the visibility set).
    pub seed: u64,
    /// Hash of the truth-defining part of the experiment, stored in the visibility set.
    pub truth_hash: String,
}
