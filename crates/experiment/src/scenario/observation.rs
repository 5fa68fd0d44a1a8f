//! `[array]` and `[observation]` → the array crate's [`Observation`].

use std::path::Path;

use beamfloor_array::{
    log_spiral, random_disc, Layout, LogSpiralParams, Observation, ObservationParams,
    RandomDiscParams,
};

use super::ScenarioError;
use crate::config::{self, Config};

/// Builds the observation a config describes. `config_path` is the config file's path, from
/// whose folder a relative layout file is read (None: the working folder).
pub fn build_observation(
    config: &Config,
    config_path: Option<&Path>,
) -> Result<Observation, ScenarioError> {
    let layout = build_layout(config, config_path)?;
    let obs = &config.observation;
    let params = ObservationParams {
        layout,
        latitude_rad: config.array.latitude_deg.to_radians(),
        phase_centre_ra_rad: obs.ra_deg.to_radians(),
        phase_centre_dec_rad: obs.dec_deg.to_radians(),
        // Hour angle in hours of hour angle: 1 h = 15°.
        hour_angle_start_rad: (obs.hour_angle_start_h * 15.0).to_radians(),
        hour_angle_end_rad: (obs.hour_angle_end_h * 15.0).to_radians(),
        integration_s: obs.integration_s,
        band_min_hz: obs.band_ghz[0] * 1e9,
        band_max_hz: obs.band_ghz[1] * 1e9,
        n_channels: obs.channels as usize,
        elevation_limit_rad: obs.elevation_limit_deg.to_radians(),
    };
    Observation::new(&params).map_err(|source| ScenarioError::Array { key: "observation", source })
}

fn build_layout(config: &Config, config_path: Option<&Path>) -> Result<Layout, ScenarioError> {
    // Dishes cannot overlap: the physical minimum spacing is one dish diameter.
    let dish = config.beam.dish_diameter_m;
    match &config.array.layout {
        config::Layout::File(file) => {
            let path = match config_path {
                Some(c) => config::resolve_relative(c, file),
                None => file.clone(),
            };
            let text = std::fs::read_to_string(&path)
                .map_err(|source| ScenarioError::LayoutFile { path: path.clone(), source })?;
            Layout::from_text(&text, dish)
                .map_err(|source| ScenarioError::LayoutFileContent { path: path.clone(), source })
        }
        config::Layout::LogSpiral(s) => {
            let layout = log_spiral(&LogSpiralParams {
                n_arms: s.arms as usize,
                antennas_per_arm: s.antennas_per_arm as usize,
                inner_radius_m: s.inner_radius_m,
                outer_radius_m: s.outer_radius_m,
                twist_rad: s.twist_deg.to_radians(),
                min_spacing_m: dish,
            })
            .map_err(|source| ScenarioError::Array { key: "array.layout.log-spiral", source })?;
            rotate(layout, s.rotation_deg.to_radians(), dish)
        }
        config::Layout::RandomDisc(d) => {
            let min_spacing_m = d.min_spacing_m.unwrap_or(1.5 * dish);
            random_disc(
                &RandomDiscParams {
                    n_antennas: d.count as usize,
                    radius_m: d.radius_m,
                    min_spacing_m,
                    dish_diameter_m: dish,
                    max_tries: RandomDiscParams::DEFAULT_MAX_TRIES,
                },
                config.experiment.seed.wrapping_add(d.seed_offset),
            )
            .map_err(|source| ScenarioError::Array { key: "array.layout.random-disc", source })
        }
    }
}

/// Turns a generated layout about the array centre by `angle_rad` (counter-clockwise seen from
/// above: east towards north).
fn rotate(layout: Layout, angle_rad: f64, min_spacing_m: f64) -> Result<Layout, ScenarioError> {
    if angle_rad == 0.0 {
        return Ok(layout);
    }
    let (s, c) = angle_rad.sin_cos();
    let turned = layout
        .into_antennas_enu_m()
        .into_iter()
        .map(|[e, n, u]| [c * e - s * n, s * e + c * n, u])
        .collect();
    Layout::new(turned, min_spacing_m)
        .map_err(|source| ScenarioError::Array { key: "array.layout.log-spiral", source })
}
