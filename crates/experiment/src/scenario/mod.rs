//! The scenario: a validated config mapped onto the compute crates' types (the observation, the
//! true sky, the truth beams, the noise), in SI units. This is the one place that converts config
//! units (degrees, hours, GHz, arcmin) into the SI units the compute crates take.

mod beam;
mod describe;
mod error;
mod observation;
mod sky;

use std::path::Path;

use beamfloor_array::Observation;
use beamfloor_beam::DishBeam;
use beamfloor_core::{VoltageBeam, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_predict::{NoiseModel, PredictParams, SimulationParams, VisSet};
use beamfloor_sky::Component;

pub use beam::{beam_params, build_beam};
pub use describe::{describe, imaging_bytes, nyquist_cell_rad, visibility_set_bytes};
pub use error::ScenarioError;
pub use observation::build_observation;
pub use sky::{build_sky, source_lm};

use crate::config::Config;

/// Everything the truth simulation needs, built from a config.
pub struct Scenario {
    /// Array, timeline, channels and rows.
    pub observation: Observation,
    /// The true sky.
    pub sky: Vec<Component>,
    /// The truth beam, or None when `[truth] beam = false`.
    pub beam: Option<DishBeam>,
    /// Reference frequency of the experiment (Taylor expansions, beam-power positions), Hz.
    pub ref_freq_hz: f64,
    /// Noise, switches, seed and truth hash for the prediction.
    pub simulation: SimulationParams,
}

impl Scenario {
    /// Maps a validated config onto the compute crates. `config_path` locates relative files.
    pub fn build(config: &Config, config_path: Option<&Path>) -> Result<Self, ScenarioError> {
        let observation = build_observation(config, config_path)?;
        let ref_freq_hz = config.observation.reference_freq_ghz() * 1e9;
        let beam = if config.truth.beam {
            let params = beam::beam_params(
                &config.beam,
                &config.truth,
                &observation,
                ref_freq_hz,
                beam_coverage(config, &observation)?,
                config.experiment.seed,
            )?;
            Some(build_beam(&params, &observation)?)
        } else {
            None
        };
        let sky = build_sky(config, beam.as_ref())?;
        let simulation = SimulationParams {
            predict: PredictParams { w_term: config.truth.w_term, ..PredictParams::default() },
            noise: NoiseModel {
                sefd_jy: config.noise.sefd_jy,
                correlator_efficiency: config.noise.efficiency,
            },
            add_noise: config.truth.noise,
            seed: config.experiment.seed,
            truth_hash: config.truth_hash(),
        };
        Ok(Self { observation, sky, beam, ref_freq_hz, simulation })
    }

    /// Simulates the visibilities (the direct measurement equation plus noise). `progress` is
    /// called with the number of rows finished so far.
    pub fn simulate(&self, progress: &(dyn Fn(usize) + Sync)) -> Result<VisSet, ScenarioError> {
        let beam = self.beam.as_ref().map(|b| b as &dyn VoltageBeam);
        Ok(beamfloor_predict::simulate(
            &self.observation,
            &self.sky,
            beam,
            &self.simulation,
            progress,
        )?)
    }
}

/// The largest |l| or |m| the beam table must cover: every source, the image field, and for
/// sources placed by beam power a main lobe at the bottom of the band (2 λ/D is beyond the first
/// null of any taper we model), with a 10% margin for pointing and squint offsets.
fn beam_coverage(config: &Config, observation: &Observation) -> Result<f64, ScenarioError> {
    let (fixed, needs_beam) = sky::fixed_source_extent(config)?;
    let (f_lo, _) = observation.channels.band_edges_hz();
    let main_lobe = if needs_beam {
        2.0 * SPEED_OF_LIGHT_M_PER_S / f_lo / config.beam.dish_diameter_m
    } else {
        0.0
    };
    let half_field = 0.5
        * f64::from(config.imaging.image_size_px)
        * (config.imaging.cell_arcsec / 3600.0).to_radians();
    Ok(1.1 * fixed.max(main_lobe).max(half_field * std::f64::consts::SQRT_2))
}
