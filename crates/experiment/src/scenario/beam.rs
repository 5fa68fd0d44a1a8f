//! `[beam]` and `[truth]` → the beam crate's [`DishBeamParams`].

use beamfloor_array::Observation;
use beamfloor_beam::{
    ApertureParams, DishBeam, DishBeamParams, Effect, EffectParams, FeedLegs, Mount,
    PointingParams, RippleParams, SquintParams, TableParams, Taper,
};

use super::ScenarioError;
use crate::config::{self, BeamConfig, TruthSwitches};

const RAD_PER_ARCSEC: f64 = std::f64::consts::PI / (180.0 * 3600.0);

/// The beam model a `[beam]` table describes, with the effects `truth` leaves on.
///
/// `max_abs_lm` is the largest |l| or |m| the beam must cover (sources and image field);
/// `seed` is the experiment seed (random pointing offsets derive from it).
pub fn beam_params(
    beam: &BeamConfig,
    truth: &TruthSwitches,
    observation: &Observation,
    ref_freq_hz: f64,
    max_abs_lm: f64,
    seed: u64,
) -> Result<DishBeamParams, ScenarioError> {
    let taper = match &beam.taper {
        config::Taper::Uniform => Taper::Uniform,
        config::Taper::ParabolicOnPedestal(t) => Taper::ParabolicOnPedestal {
            edge_taper_db_x: t.edge_taper_db,
            edge_taper_db_y: t.edge_taper_y_db.unwrap_or(t.edge_taper_db),
        },
    };
    let aperture = ApertureParams {
        dish_diameter_m: beam.dish_diameter_m,
        blockage_diameter_m: beam.blockage_diameter_m,
        legs: FeedLegs {
            count: beam.legs.count as usize,
            width_m: beam.legs.width_m,
            first_angle_rad: beam.legs.angle_deg.to_radians(),
        },
        taper,
        ..ApertureParams::default()
    };
    let pointing = &beam.pointing;
    let fixed_offset_rad = match pointing.offsets_arcsec.as_slice() {
        [] => [0.0, 0.0],
        [[x, y]] => [x * RAD_PER_ARCSEC, y * RAD_PER_ARCSEC],
        list => {
            return Err(ScenarioError::Unsupported {
                key: "beam.pointing.offsets_arcsec",
                value: format!("{} pairs", list.len()),
                allowed: "one [x, y] pair applied to every antenna (per-antenna fixed offsets \
                          are not modelled yet; use rms_arcsec for different offsets per antenna)",
            })
        }
    };
    let mut effects = EffectParams {
        mount: match beam.mount {
            config::Mount::AltAz => Mount::AltAz,
            config::Mount::Equatorial => Mount::Equatorial,
        },
        frequency_scaling: true,
        squint: SquintParams {
            fraction_of_hpbw: beam.squint_fraction_of_hpbw,
            ..SquintParams::default()
        },
        pointing: PointingParams {
            fixed_offset_rad,
            random_rms_rad: pointing.rms_arcsec * RAD_PER_ARCSEC,
            fixed_drift_rad_per_s: [0.0, 0.0],
            random_drift_rms_rad_per_s: pointing.drift_arcsec_per_hour * RAD_PER_ARCSEC / 3600.0,
            seed,
        },
        // The config's ripple is 1 + a·sin(2πν/P); the beam crate's is 1 + a·cos(2πν/P + φ),
        // equal for φ = −π/2.
        ripple: RippleParams {
            amplitude: beam.ripple.amplitude,
            period_hz: beam.ripple.period_mhz * 1e6,
            phase_rad: -std::f64::consts::FRAC_PI_2,
        },
    };
    for (on, effect) in [
        (truth.beam_rotation, Effect::Rotation),
        (truth.beam_frequency_scaling, Effect::FrequencyScaling),
        (truth.squint, Effect::Squint),
        (truth.pointing, Effect::Pointing),
        (truth.ripple, Effect::Ripple),
    ] {
        if !on {
            effects = effects.without(effect);
        }
    }
    Ok(DishBeamParams {
        aperture,
        effects,
        table: TableParams::default(),
        n_antennas: observation.n_antennas(),
        ref_freq_hz,
        max_abs_lm: max_abs_lm.min(0.7),
        max_freq_hz: observation.channels.highest_hz(),
    })
}

/// Builds the beam for the observation's timeline.
pub fn build_beam(
    params: &DishBeamParams,
    observation: &Observation,
) -> Result<DishBeam, ScenarioError> {
    DishBeam::new(
        params,
        observation.timeline.parallactic_angles_rad.clone(),
        observation.timeline.times_s.clone(),
    )
    .map_err(|source| ScenarioError::Beam { key: "beam", source })
}
