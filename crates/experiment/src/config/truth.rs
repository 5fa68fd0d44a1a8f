//! `[truth]` and `[noise]`: which effects the simulated visibilities contain, and the thermal
//! noise level.

use serde::{Deserialize, Serialize};

use super::check::Checker;

/// `[truth]`: switches for the effects in the simulated (true) visibilities. Turning one off
/// shows what it costs; every switch defaults to `true`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct TruthSwitches {
    /// Apply the primary beam at all (off: every antenna sees the sky unattenuated).
    /// Default: `true`.
    pub beam: bool,
    /// Rotate the beam on the sky with the parallactic angle (alt-az mounts). Default: `true`.
    pub beam_rotation: bool,
    /// Scale the beam with frequency (off: the beam at the reference frequency in every
    /// channel). Default: `true`.
    pub beam_frequency_scaling: bool,
    /// Apply `beam.squint_fraction_of_hpbw`. Default: `true`.
    pub squint: bool,
    /// Apply `beam.pointing`. Default: `true`.
    pub pointing: bool,
    /// Apply `beam.ripple`. Default: `true`.
    pub ripple: bool,
    /// Include the w-term phase exp(−2πi w (n − 1)). Default: `true`.
    pub w_term: bool,
    /// Add thermal noise from `[noise]`. Default: `true`.
    pub noise: bool,
}

impl Default for TruthSwitches {
    fn default() -> Self {
        Self {
            beam: true,
            beam_rotation: true,
            beam_frequency_scaling: true,
            squint: true,
            pointing: true,
            ripple: true,
            w_term: true,
            noise: true,
        }
    }
}

/// `[noise]`: the radiometer equation, σ = SEFD / (η sqrt(2 Δν τ)) per real and imaginary part
/// of one polarization product (Thompson, Moran & Swenson, ch. 6).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct NoiseConfig {
    /// System equivalent flux density of one antenna, Jy (> 0). Default: `400.0`.
    pub sefd_jy: f64,
    /// Correlator (quantization) efficiency η, within (0, 1]. Default: `1.0`.
    pub efficiency: f64,
}

impl Default for NoiseConfig {
    fn default() -> Self {
        Self { sefd_jy: 400.0, efficiency: 1.0 }
    }
}

impl NoiseConfig {
    pub(crate) fn check(&self, c: &mut Checker) {
        c.positive("noise.sefd_jy", self.sefd_jy, "Jy");
        if !(self.efficiency.is_finite() && self.efficiency > 0.0 && self.efficiency <= 1.0) {
            c.fail("noise.efficiency", self.efficiency, "must be within (0, 1]");
        }
    }
}
