//! The A-projection strategies: the imaging beam on a timeline of parallactic-angle bins, the
//! operator built on it, and the conjugate frequencies of wideband A-projection.

use beamfloor_array::Observation;
use beamfloor_beam::DishBeam;
use beamfloor_core::{ImageGeometry, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_imaging::{
    fitted_conjugate_frequencies, kernel_beam_half_width_rad, ConjugateFitParams,
    ConjugateFrequency, GridderParams, KernelAProjection, KernelAProjectionParams, WRange, WTerm,
};

use super::RunError;
use crate::config::{self, Config, Gridding};
use crate::scenario::beam_params;

/// The beam an A-projection strategy images with, evaluated on parallactic-angle bins.
pub struct BinnedBeam {
    /// The imaging beam; its "time" index is the PA bin.
    pub beam: DishBeam,
    /// PA bin of every time sample of the observation.
    pub bin_of_time: Vec<usize>,
}

/// Groups the observation's time samples into parallactic-angle bins of `bin_width_rad`.
///
/// The parallactic angle is unwrapped first (it jumps by 2π where a track passes close to the
/// zenith), bins are laid from the smallest angle, empty bins are dropped, and each bin's angle
/// is the mean of its members' angles. Returns (bin of every time, angle of every bin).
pub fn parallactic_angle_bins(pa_rad: &[f64], bin_width_rad: f64) -> (Vec<usize>, Vec<f64>) {
    let mut unwrapped = Vec::with_capacity(pa_rad.len());
    for &q in pa_rad {
        let q = match unwrapped.last() {
            Some(&prev) => {
                let mut q = q;
                while q - prev > std::f64::consts::PI {
                    q -= std::f64::consts::TAU;
                }
                while q - prev < -std::f64::consts::PI {
                    q += std::f64::consts::TAU;
                }
                q
            }
            None => q,
        };
        unwrapped.push(q);
    }
    let lowest = unwrapped.iter().copied().fold(f64::INFINITY, f64::min);
    let raw: Vec<usize> =
        unwrapped.iter().map(|q| ((q - lowest) / bin_width_rad).floor() as usize).collect();
    let mut order: Vec<usize> = raw.clone();
    order.sort_unstable();
    order.dedup();
    let bin_of_time: Vec<usize> =
        raw.iter().map(|r| order.binary_search(r).unwrap_or_default()).collect();
    let mut sums = vec![(0.0, 0usize); order.len()];
    for (&bin, &q) in bin_of_time.iter().zip(&unwrapped) {
        sums[bin].0 += q;
        sums[bin].1 += 1;
    }
    let centres = sums.iter().map(|(s, n)| s / *n as f64).collect();
    (bin_of_time, centres)
}

/// The strategy's imaging beam (`[beam]` with its `imaging_beam` overrides and the truth's effect
/// switches, minus per-antenna pointing errors that an imager cannot know) on PA bins of the
/// strategy's `pa_bin_deg`, covering `max_freq_hz` (the conjugate frequencies may lie above the
/// band). With `imaging_beam.rotation = "reversed"` the beam is turned by −q instead of +q (each
/// bin's angle is negated; the binning itself is unchanged).
pub fn binned_imaging_beam(
    config: &Config,
    index: usize,
    observation: &Observation,
    geometry: &ImageGeometry,
    max_freq_hz: f64,
) -> Result<BinnedBeam, RunError> {
    let strategy = &config.strategy[index];
    let beam_config = strategy.imaging_beam(&config.beam);
    let mut switches = config.truth;
    switches.pointing = false;
    let (hx, hy) = geometry.half_field_rad();
    let ref_freq_hz = config.observation.reference_freq_ghz() * 1e9;
    // The uv-kernels sample the beam over the whole padded grid's field, beyond the image.
    let kernel_field = kernel_beam_half_width_rad(*geometry)
        .map_err(|source| RunError::Imaging { strategy: strategy.name.clone(), source })?;
    let mut params = beam_params(
        &beam_config,
        &switches,
        observation,
        ref_freq_hz,
        (1.1 * hx.hypot(hy)).max(kernel_field),
        config.experiment.seed,
    )?;
    params.max_freq_hz = params.max_freq_hz.max(max_freq_hz);
    let (bin_of_time, centres) = parallactic_angle_bins(
        &observation.timeline.parallactic_angles_rad,
        strategy.pa_bin_deg.to_radians(),
    );
    let sign = strategy.imaging_beam.as_ref().map_or(1.0, |o| o.rotation().sign());
    let centres: Vec<f64> = centres.into_iter().map(|q| sign * q).collect();
    let times = vec![0.0; centres.len()];
    let beam = DishBeam::new(&params, centres, times)
        .map_err(|source| RunError::Beam { what: "imaging beam on PA bins".into(), source })?;
    Ok(BinnedBeam { beam, bin_of_time })
}

/// The highest frequency an A-projection strategy's kernels need: the band's top, or for the
/// reciprocal conjugate choice ν0²/ν_min, or for the fitted choice the top of its search range.
pub fn kernel_max_freq_hz(config: &Config, index: usize, freqs_hz: &[f64]) -> f64 {
    let strategy = &config.strategy[index];
    let ref_hz = config.observation.reference_freq_ghz() * 1e9;
    let (lo, hi) = (freqs_hz[0], freqs_hz[freqs_hz.len() - 1]);
    match (strategy.gridding, strategy.conjugate_frequency) {
        (Gridding::WidebandA, _) => hi.max(1.05 * ref_hz * ref_hz / lo).max(2.0 * ref_hz - lo),
        _ => hi,
    }
}

/// The A-projection operator of strategy `index` (gridding `"a"` or `"wideband-a"`): uv-domain
/// kernels tabulated with the strategy's `kernel_oversampling`, one per PA bin, channel and hand
/// (the exact image-domain operator stays in the imaging crate as the tests' reference).
pub fn build_a_operator<'b>(
    config: &Config,
    index: usize,
    geometry: ImageGeometry,
    w_range: WRange,
    binned: &'b BinnedBeam,
    freqs_hz: &[f64],
) -> Result<KernelAProjection<'b, DishBeam>, RunError> {
    let params = a_operator_params(config, index, binned, freqs_hz)?;
    KernelAProjection::new(
        geometry,
        &binned.beam,
        binned.bin_of_time.clone(),
        freqs_hz.to_vec(),
        w_range,
        params,
    )
    .map_err(|source| RunError::Imaging { strategy: config.strategy[index].name.clone(), source })
}

/// The parameters [`build_a_operator`] gives the operator of strategy `index`: the imaging
/// accuracy with w-stacking, the strategy's `kernel_oversampling`, and the conjugate frequencies
/// of wideband A-projection (fitted to `binned`'s aperture for `"fitted"`). The preflight
/// estimates the kernel tables' memory from the same parameters.
pub fn a_operator_params(
    config: &Config,
    index: usize,
    binned: &BinnedBeam,
    freqs_hz: &[f64],
) -> Result<KernelAProjectionParams, RunError> {
    let strategy = &config.strategy[index];
    let name = strategy.name.clone();
    let imaging = |source| RunError::Imaging { strategy: name.clone(), source };
    let ref_freq_hz = config.observation.reference_freq_ghz() * 1e9;
    let conjugate = match (strategy.gridding, strategy.conjugate_frequency) {
        (Gridding::WidebandA, Some(config::ConjugateFrequency::Fitted)) => {
            let dish = strategy.imaging_beam(&config.beam).dish_diameter_m;
            let fit = ConjugateFitParams {
                ref_freq_hz,
                search_min_hz: 0.5 * freqs_hz[0],
                search_max_hz: kernel_max_freq_hz(config, index, freqs_hz),
                // Beyond the first null of any taper we model (≈ 1.2–1.6 λ/D).
                null_search_max_rad: 2.0 * SPEED_OF_LIGHT_M_PER_S / ref_freq_hz / dish,
                bin: 0,
                n_radii: 48,
                n_azimuths: 24,
            };
            let nu_c =
                fitted_conjugate_frequencies(&binned.beam, freqs_hz, &fit).map_err(imaging)?;
            ConjugateFrequency::PerChannel(nu_c)
        }
        (Gridding::WidebandA, _) => ConjugateFrequency::Reciprocal { ref_freq_hz },
        _ => ConjugateFrequency::Same,
    };
    Ok(KernelAProjectionParams {
        gridder: GridderParams { epsilon: config.imaging.accuracy, w_term: WTerm::Stack },
        oversampling: strategy.kernel_oversampling as usize,
        // The imaging beam is built without per-antenna effects, so antennas are identical by
        // construction; the operator's own check stays on as a guard.
        assume_identical_antennas: false,
        conjugate,
        ..KernelAProjectionParams::default()
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bins_unwrap_and_average() {
        // A track through ±180° (a source passing north of the zenith) must not split into the
        // two ends of the range: unwrapping keeps consecutive angles together.
        let deg = |d: f64| d.to_radians();
        let pa = [deg(170.0), deg(176.0), deg(-178.0), deg(-172.0)];
        let (bins, centres) = parallactic_angle_bins(&pa, deg(10.0));
        assert_eq!(bins, vec![0, 0, 1, 1]);
        assert!((centres[0] - deg(173.0)).abs() < 1e-12);
        assert!((centres[1] - deg(185.0)).abs() < 1e-12);
        // Empty bins are dropped, so bin indices stay dense.
        let (bins, centres) = parallactic_angle_bins(&[0.0, deg(35.0)], deg(10.0));
        assert_eq!(bins, vec![0, 1]);
        assert_eq!(centres.len(), 2);
    }
}
