use crate::{add_thermal_noise, predict_visibilities, PredictError, SimulationParams, VisSet};
use beamfloor_array::Observation;
use beamfloor_core::{Correlation, VoltageBeam};
use beamfloor_sky::Component;
use ndarray::{Array2, Array3, Axis};

/// Simulate an observation end to end: the direct prediction ([`predict_visibilities`]), thermal
/// noise if `params.add_noise` ([`add_thermal_noise`] with σ from [`crate::NoiseModel::sigma_jy`]
/// for the channel width and integration time), weights 1/σ² (set even when no noise is added,
/// so that noise-free runs weight the data the same way), flags from the rows, and the
/// observation's metadata, seed and truth hash, in a validated [`VisSet`].
pub fn simulate(
    observation: &Observation,
    components: &[Component],
    beam: Option<&dyn VoltageBeam>,
    params: &SimulationParams,
    progress: &(dyn Fn(usize) + Sync),
) -> Result<VisSet, PredictError> {
    let sigma =
        params.noise.sigma_jy(observation.channels.width_hz, observation.timeline.integration_s)?;
    let mut data = predict_visibilities(observation, components, beam, &params.predict, progress)?;
    if params.add_noise {
        add_thermal_noise(&mut data, sigma, params.seed);
    }
    let (n_rows, n_chan, n_pol) = data.dim();
    let mut flags = Array3::from_elem((n_rows, n_chan, n_pol), false);
    for (mut lane, row) in flags.axis_iter_mut(Axis(0)).zip(&observation.rows) {
        lane.fill(row.flagged);
    }
    let to_u32 = |x: usize| u32::try_from(x).map_err(|_| PredictError::IndexOverflow(x));
    let rows = &observation.rows;
    let mut uvw_m = Array2::zeros((n_rows, 3));
    for (mut out, row) in uvw_m.outer_iter_mut().zip(rows) {
        out.iter_mut().zip(row.uvw_m).for_each(|(o, x)| *o = x);
        // Without the w-term the data are those of a coplanar array (w = 0 for every sample):
        // store that w, so that imagers which correct the w-term see data consistent with it.
        if !params.predict.w_term {
            out[2] = 0.0;
        }
    }
    let vis = VisSet {
        frequencies_hz: observation.channels.frequencies_hz.clone(),
        channel_width_hz: observation.channels.width_hz,
        integration_s: observation.timeline.integration_s,
        hour_angles_rad: observation.timeline.hour_angles_rad.clone(),
        parallactic_angles_rad: observation.timeline.parallactic_angles_rad.clone(),
        phase_centre_ra_rad: observation.phase_centre_ra_rad,
        phase_centre_dec_rad: observation.phase_centre_dec_rad,
        antenna1: rows.iter().map(|r| to_u32(r.antenna1)).collect::<Result<_, _>>()?,
        antenna2: rows.iter().map(|r| to_u32(r.antenna2)).collect::<Result<_, _>>()?,
        time_index: rows.iter().map(|r| to_u32(r.time_index)).collect::<Result<_, _>>()?,
        uvw_m,
        data,
        weights: Array3::from_elem((n_rows, n_chan, n_pol), 1.0 / (sigma * sigma)),
        flags,
        correlations: Correlation::BOTH.to_vec(),
        seed: params.seed,
        truth_hash: params.truth_hash.clone(),
    };
    vis.validate()?;
    Ok(vis)
}
