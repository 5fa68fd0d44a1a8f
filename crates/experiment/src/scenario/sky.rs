//! `[sky]` → the sky crate's [`Component`]s.

use beamfloor_beam::DishBeam;
use beamfloor_sky::{lm_from_radec, Component, EllipticalGaussian, Spectrum};

use super::ScenarioError;
use crate::config::{Config, SkySource, SourcePosition, SourceShape};

const RAD_PER_ARCMIN: f64 = std::f64::consts::PI / (180.0 * 60.0);
const RAD_PER_ARCSEC: f64 = RAD_PER_ARCMIN / 60.0;

/// Direction cosines of a source. `beam` is needed only for positions given as a beam power
/// level (the radius where the azimuthally averaged power falls to that level at the reference
/// frequency).
pub fn source_lm(
    config: &Config,
    index: usize,
    beam: Option<&DishBeam>,
) -> Result<(f64, f64), ScenarioError> {
    let source = &config.sky.source[index];
    let ra0 = config.observation.ra_deg.to_radians();
    let dec0 = config.observation.dec_deg.to_radians();
    // A direction at angular distance θ from the phase centre along position angle φ (north
    // through east) has l = sin θ sin φ, m = sin θ cos φ in the SIN projection.
    let along = |theta: f64, pa_deg: f64| {
        let (s, c) = pa_deg.to_radians().sin_cos();
        (theta.sin() * s, theta.sin() * c)
    };
    match &source.position {
        SourcePosition::Lm { l_arcmin, m_arcmin } => {
            Ok((l_arcmin * RAD_PER_ARCMIN, m_arcmin * RAD_PER_ARCMIN))
        }
        SourcePosition::RaDecOffset { ra_offset_arcmin, dec_offset_arcmin } => lm_from_radec(
            ra0 + ra_offset_arcmin * RAD_PER_ARCMIN,
            dec0 + dec_offset_arcmin * RAD_PER_ARCMIN,
            ra0,
            dec0,
        )
        .map_err(|e| sky_error(index, e)),
        SourcePosition::Radius { radius_arcmin, position_angle_deg } => {
            Ok(along(radius_arcmin * RAD_PER_ARCMIN, *position_angle_deg))
        }
        SourcePosition::BeamPower { beam_power, position_angle_deg } => {
            let beam = beam.ok_or(ScenarioError::Unsupported {
                key: "sky.source.beam_power",
                value: format!("{beam_power}"),
                allowed: "a position by beam power needs the truth beam ([truth] beam = true)",
            })?;
            let ref_hz = config.observation.reference_freq_ghz() * 1e9;
            let radius = if *beam_power >= 1.0 {
                0.0
            } else {
                beam.power_level_radius_rad(ref_hz, *beam_power).map_err(|source| {
                    ScenarioError::Beam { key: "sky.source.beam_power", source }
                })?
            };
            Ok(along(radius, *position_angle_deg))
        }
    }
}

/// The largest angular radius (rad) of any source whose position does not depend on the beam,
/// and whether some position does.
pub fn fixed_source_extent(config: &Config) -> Result<(f64, bool), ScenarioError> {
    let mut max_abs = 0.0f64;
    let mut needs_beam = false;
    for index in 0..config.sky.source.len() {
        if matches!(config.sky.source[index].position, SourcePosition::BeamPower { .. }) {
            needs_beam = true;
            continue;
        }
        let (l, m) = source_lm(config, index, None)?;
        max_abs = max_abs.max(l.abs()).max(m.abs());
    }
    Ok((max_abs, needs_beam))
}

/// The true sky: every `[[sky.source]]` as a component.
pub fn build_sky(
    config: &Config,
    beam: Option<&DishBeam>,
) -> Result<Vec<Component>, ScenarioError> {
    (0..config.sky.source.len())
        .map(|index| {
            let source: &SkySource = &config.sky.source[index];
            let (l, m) = source_lm(config, index, beam)?;
            let ref_hz =
                source.ref_freq_ghz.unwrap_or(config.observation.reference_freq_ghz()) * 1e9;
            let spectrum = Spectrum::new(source.flux_jy, ref_hz, source.alpha, source.beta)
                .map_err(|e| sky_error(index, e))?;
            let component = match &source.shape {
                SourceShape::Point => Component::point(&source.name, l, m, spectrum),
                SourceShape::Gaussian { major_arcsec, minor_arcsec, pa_deg } => {
                    let shape = EllipticalGaussian::new(
                        major_arcsec * RAD_PER_ARCSEC,
                        minor_arcsec * RAD_PER_ARCSEC,
                        pa_deg.to_radians(),
                    )
                    .map_err(|e| sky_error(index, e))?;
                    Component::gaussian(&source.name, l, m, spectrum, shape)
                }
            };
            component.map_err(|e| sky_error(index, e))
        })
        .collect()
}

fn sky_error(index: usize, source: beamfloor_sky::SkyError) -> ScenarioError {
    ScenarioError::Sky { index, source }
}
