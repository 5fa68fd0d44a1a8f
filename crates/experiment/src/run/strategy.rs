//! One strategy: operator, PSFs, restoring beam, Cotton–Schwab CLEAN, restoration, primary-beam
//! correction and spectral maps.

use beamfloor_array::Observation;
use beamfloor_core::ImageGeometry;
use beamfloor_deconv::{
    fit_restoring_beam, restore, run_major_cycles, spectral_maps, BeamFitParams, CycleReport,
    MajorCycleParams, MajorStop, MinorCyclePlan, OnDivergence, RestoringBeam, ScaleSet,
    SpectralMapParams, Threshold,
};
use beamfloor_imaging::{GridOutput, ImagingOperator, TaylorTerms, WRange, WTerm};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3};
use num_complex::Complex64;

use super::aproj::{binned_imaging_beam, build_a_operator, kernel_max_freq_hz};
use super::channel_model::ChannelModel;
use super::operator::{build_operator, w_term_of};
use super::pbcor::{beam_validity, divide_beam_taylor, gain_taylor};
use super::RunError;
use crate::config::{CleanThreshold, Config, Gridding};

/// What imaging one strategy produced. Images are `[ny, nx]` on the run's geometry.
pub struct StrategyImages {
    /// The strategy's name.
    pub name: String,
    /// Number of Taylor terms N.
    pub n_terms: usize,
    /// Model Taylor images, Jy/pixel, apparent frame (sky × averaged beam) for plain/w.
    pub model: Vec<Array2<f64>>,
    /// Final residual Taylor images (normalised like the PSFs), apparent frame, Jy/beam.
    pub residuals: Vec<Array2<f64>>,
    /// Restored Taylor images in the apparent frame, Jy/beam.
    pub restored_apparent: Vec<Array2<f64>>,
    /// Restored Taylor images in the sky frame (primary-beam corrected; NaN where blanked).
    pub restored_sky: Vec<Array2<f64>>,
    /// Spectral index α (sky frame), when N ≥ 2.
    pub alpha: Option<Array2<f64>>,
    /// PSF_0 on the doubled grid (peak 1 at its centre).
    pub psf: Array2<f64>,
    /// Geometry of the PSF grid.
    pub psf_geometry: ImageGeometry,
    /// The fitted restoring beam.
    pub beam: RestoringBeam,
    /// Pixels trusted after primary-beam correction.
    pub validity: Array2<bool>,
    /// One report per exact residual.
    pub cycles: Vec<CycleReport>,
    /// Why CLEAN stopped.
    pub stop: MajorStop,
    /// Wall time, s.
    pub seconds: f64,
}

/// The averaged beam's Taylor coefficients P_t for a strategy (None: no beam to divide by).
pub type BeamTaylor = Option<Vec<Array2<f64>>>;

/// Spectral PSFs already made in one run, for the strategies after the first that need the same
/// ones. A strategy's PSFs depend only on the run's visibilities, weights and geometry (the same
/// for every strategy of a run), on the gridder that makes them (its w treatment; the accuracy
/// is run-wide) and on the number of Taylor terms: "w", "a" and "wideband-a" strategies with
/// the same Taylor terms all get theirs from the w-stacking gridder, bit for bit the same, and
/// on the doubled PSF grid those w-stacked passes are the most expensive step of setting up a
/// strategy. Use one cache per run (per set of visibilities and weights).
#[derive(Debug, Default)]
pub struct PsfCache {
    entries: Vec<(PsfKey, Vec<Array2<f64>>)>,
}

/// What a run's PSFs depend on beyond the run itself: the gridder's w treatment and the number
/// of Taylor terms.
type PsfKey = (WTerm, usize);

impl PsfCache {
    fn get(&self, key: PsfKey) -> Option<&Vec<Array2<f64>>> {
        self.entries.iter().find(|(k, _)| *k == key).map(|(_, psfs)| psfs)
    }
}

/// Images, deconvolves and restores strategy `index` of `config` on `vis`.
///
/// `weights` are the imaging weights (zero where flagged), `sigma_img` the predicted thermal
/// noise of the I0 image (Jy/beam), `beam_taylor` the averaged beam's Taylor coefficients for the
/// primary-beam correction of plain and w gridding, `observation` the simulated observation
/// (its timeline sets the A-projection strategies' parallactic-angle bins). `psf_cache` holds
/// the PSFs of the run's earlier strategies (see [`PsfCache`]). `progress` receives each major
/// cycle.
#[allow(clippy::too_many_arguments)]
pub fn image_strategy(
    config: &Config,
    index: usize,
    observation: &Observation,
    vis: &VisSet,
    weights: &Array3<f64>,
    geometry: ImageGeometry,
    sigma_img: f64,
    beam_taylor: &BeamTaylor,
    psf_cache: &mut PsfCache,
    progress: &mut dyn FnMut(&CycleReport),
) -> Result<StrategyImages, RunError> {
    let start = std::time::Instant::now();
    let strategy = &config.strategy[index];
    let name = strategy.name.clone();
    let imaging = |source| RunError::Imaging { strategy: name.clone(), source };
    let deconv = |source| RunError::Deconv { strategy: name.clone(), source };
    let n_terms = strategy.taylor_terms() as usize;
    let ref_freq_hz = config.observation.reference_freq_ghz() * 1e9;
    let taylor = TaylorTerms { n_terms, ref_freq_hz };
    let w_range = WRange::of_visibilities(vis).map_err(imaging)?;
    let a_projection = matches!(strategy.gridding, Gridding::A | Gridding::WidebandA);
    let binned = if a_projection {
        let max_freq = kernel_max_freq_hz(config, index, &vis.frequencies_hz);
        Some(binned_imaging_beam(config, index, observation, &geometry, max_freq)?)
    } else {
        None
    };
    let a_operator = match &binned {
        Some(b) => {
            Some(build_a_operator(config, index, geometry, w_range, b, &vis.frequencies_hz)?)
        }
        None => None,
    };
    let plain_operator = match a_operator {
        Some(_) => None,
        None => Some(build_operator(config, index, geometry, w_range)?),
    };
    let operator: &dyn ImagingOperator = match (&a_operator, &plain_operator) {
        (Some(a), _) => a,
        (None, Some(p)) => p.as_ref(),
        (None, None) => unreachable!("one of the two operators is always built"),
    };
    // Per-channel sensitivities W_c and their moments W_0 … W_{N−1} (W_0 is the sensitivity
    // image; with the others they give the Taylor terms of the gain the sky is divided by).
    let n_moments = n_terms;
    let channel_sensitivity = match &a_operator {
        Some(a) => Some(a.channel_sensitivities(vis, weights).map_err(imaging)?),
        None => None,
    };
    let moments = match &channel_sensitivity {
        Some(c) => c.moments(&vis.frequencies_hz, ref_freq_hz, n_moments),
        None => Vec::new(),
    };
    super::guards::check_finite(&name, "A-projection sensitivity moments", &moments)?;
    // The sensitivity W = W_0 and the flat-noise factor g = 1/√W, zero where √W is below the
    // primary-beam cut-off of its peak (W ≈ P², so the cut-off applies to √W as it does to P).
    let sensitivity_cut = moments.first().map(|w| {
        let peak = w.iter().copied().fold(0.0f64, f64::max);
        config.imaging.pb_cutoff * config.imaging.pb_cutoff * peak
    });
    let flat_noise_factor = moments.first().zip(sensitivity_cut).map(|(w, cut)| {
        w.mapv(|x| if x.is_finite() && x >= cut && x > 0.0 { 1.0 / x.sqrt() } else { 0.0 })
    });

    // Spectral PSFs on a grid twice the image's size (the deconvolution crate's recommendation:
    // a component anywhere in the image then has its PSF patch over the whole image).
    let psf_geometry = ImageGeometry::new(2 * geometry.nx, 2 * geometry.ny, geometry.cell_rad);
    let psf_key = (w_term_of(config, index)?, n_terms);
    let mut psfs = match psf_cache.get(psf_key) {
        Some(psfs) => psfs.clone(),
        None => {
            let psf_operator = build_operator(config, index, psf_geometry, w_range)?;
            let psf_values = weights.mapv(|w| Complex64::new(w, 0.0));
            let outputs: Vec<GridOutput> = (0..2 * n_terms - 1)
                .map(|t| GridOutput {
                    source: 0,
                    channel_factors: taylor.channel_weights(t, &vis.frequencies_hz),
                })
                .collect();
            let sum_weights = weights.sum();
            let mut psfs =
                psf_operator.grid(vis, &[psf_values.view()], &outputs).map_err(imaging)?;
            drop(psf_operator);
            for p in psfs.iter_mut() {
                *p /= sum_weights;
            }
            super::guards::check_finite(
                &name,
                "spectral PSFs (weights through the kernel)",
                &psfs,
            )?;
            psf_cache.entries.push((psf_key, psfs.clone()));
            psfs
        }
    };
    let beam = fit_restoring_beam(&psfs[0], geometry.cell_rad, &BeamFitParams::default())
        .map_err(deconv)?;
    let scales = ScaleSet::gaussian(&strategy.scales_px);
    let plan = MinorCyclePlan::new(&psfs, n_terms, &scales).map_err(deconv)?;

    let clean = &strategy.clean;
    let threshold = match clean.threshold() {
        CleanThreshold::Jy(t) => Threshold::Jy(t),
        CleanThreshold::Sigma(n_sigma) => Threshold::Noise { n_sigma, noise_jy: sigma_img },
    };
    let params = MajorCycleParams {
        loop_gain: clean.gain,
        threshold,
        max_iterations: clean.max_iterations as usize,
        max_major_cycles: clean.max_major_cycles as usize,
        psf_patch_sidelobe: clean.psf_patch_sidelobe,
        // A residual that grows is a measured property of the strategy (its minor cycle's PSF
        // model is too far from its operator), reported with the best images it reached.
        on_divergence: OnDivergence::KeepBest,
        ..MajorCycleParams::default()
    };
    // Multi-term A-projection: the minor cycle models the apparent spectrum (flat-noise frame),
    // predicted channel by channel (see `channel_model`). Every A-projection strategy's images
    // become the sky by dividing out the Taylor terms of its per-channel gain g · W_c.
    let channel_model = match (&flat_noise_factor, &channel_sensitivity) {
        (Some(g), Some(channels)) if n_terms >= 2 => {
            let cutoff = sensitivity_cut.unwrap_or(0.0);
            let factors = (0..n_terms).map(|t| taylor.channel_weights(t, &vis.frequencies_hz));
            Some(ChannelModel::new(&channels.images, g, cutoff, factors.collect()))
        }
        _ => None,
    };
    let gain = flat_noise_factor.as_ref().map(|g| gain_taylor(&moments, plan.point_hessian(), g));
    drop((moments, channel_sensitivity));
    let mut imager = super::residual::OperatorResiduals::new(operator, vis, weights, taylor);
    if let Some(g) = &flat_noise_factor {
        imager = imager.with_normalisation(g.clone());
    }
    if let Some(channels) = &channel_model {
        imager = imager.with_channel_model(channels);
    }
    let mut imager = super::guards::GuardedResiduals::new(imager);
    // A-projection: components only where the sky is trusted (g > 0). Outside, the residuals are
    // zero by construction, so PSF sidelobes the minor cycle subtracts there leave structure no
    // prediction can ever remove, and a search that includes those pixels chases it.
    let search = flat_noise_factor.as_ref().map(|g| g.mapv(|f| f > 0.0));
    let result =
        run_major_cycles(&mut imager, &geometry, &plan, &params, search.as_ref(), progress)
            .map_err(deconv)?;
    let restored =
        restore(&result.model, &result.residuals, plan.point_hessian(), &beam, geometry.cell_rad)
            .map_err(deconv)?;
    super::guards::check_finite(&name, "restored Taylor images (apparent)", &restored.images)?;

    // Plain and w gridding image the apparent sky; divide by the averaged beam's Taylor terms.
    let corrects_beam = matches!(strategy.gridding, Gridding::Plain | Gridding::W);
    let (restored_sky, residual_sky, validity) = match (beam_taylor, corrects_beam) {
        // A-projection: divide by the gain's Taylor terms (for one term: × g = 1/√W); blank
        // where g = 0.
        _ if gain.is_some() => {
            let valid = flat_noise_factor.as_ref().map_or_else(
                || Array2::from_elem((geometry.ny, geometry.nx), true),
                |g| g.mapv(|f| f > 0.0),
            );
            let gain = gain.as_deref().unwrap_or_default();
            (
                divide_beam_taylor(&restored.images, gain, &valid),
                divide_beam_taylor(&restored.residual_coefficients, gain, &valid),
                valid,
            )
        }
        (Some(p), true) => {
            let valid = beam_validity(&p[0], config.imaging.pb_cutoff);
            (
                divide_beam_taylor(&restored.images, p, &valid),
                divide_beam_taylor(&restored.residual_coefficients, p, &valid),
                valid,
            )
        }
        _ => (
            restored.images.clone(),
            restored.residual_coefficients.clone(),
            Array2::from_elem((geometry.ny, geometry.nx), true),
        ),
    };
    let alpha = if n_terms >= 2 {
        let maps = spectral_maps(
            &restored_sky,
            &residual_sky,
            &SpectralMapParams { noise_jy: sigma_img, ..SpectralMapParams::default() },
        )
        .map_err(deconv)?;
        Some(maps.alpha)
    } else {
        None
    };
    // A-projection strategies deconvolve in the flat-noise frame; their model, stored in the sky
    // frame, is divided by the gain's Taylor terms like the restored images (zero where blank).
    let model = match &gain {
        Some(gain) => divide_beam_taylor(&result.model, gain, &validity)
            .into_iter()
            .map(|m| m.mapv(|v| if v.is_finite() { v } else { 0.0 }))
            .collect(),
        None => result.model,
    };
    let (residuals, restored_apparent) = (result.residuals, restored.images);
    Ok(StrategyImages {
        name: name.clone(),
        n_terms,
        model,
        residuals,
        restored_apparent,
        restored_sky,
        alpha,
        psf: psfs.swap_remove(0),
        psf_geometry,
        beam,
        validity,
        cycles: result.cycles,
        stop: result.stop,
        seconds: start.elapsed().as_secs_f64(),
    })
}

/// A sentence on why CLEAN stopped, when the reason matters for reading the floor (the
/// component cap or a growing residual); None when it reached its threshold, its major-cycle cap
/// or found nothing left.
pub(crate) fn stop_description(images: &StrategyImages) -> Option<String> {
    match images.stop {
        MajorStop::IterationCap => Some(format!(
            "{}: CLEAN used its whole component budget (max_iterations) before reaching its \
             threshold; what is left is either too faint to reach in that budget or a floor \
             the model cannot represent (compare the quick estimate).",
            images.name
        )),
        MajorStop::ResidualGrew => {
            let n = images.cycles.len();
            let (grew, before) = (images.cycles[n - 1], images.cycles[n.saturating_sub(2)]);
            if n < 2 || grew.peak_residual <= before.peak_residual {
                return Some(format!(
                    "{}: CLEAN stopped when the residual grew within the minor cycle after major \
                     cycle {}; the images are those of that cycle, the best it reached.",
                    images.name, grew.cycle
                ));
            }
            Some(format!(
                "{}: CLEAN stopped when the peak residual grew in major cycle {} ({} → {} \
                 Jy/beam); the images are those of the cycle before, the best it reached. The \
                 minor cycle's PSF model was too far from this strategy's operator there (for \
                 A-projection: PSF sidelobes seen through beams that differ between the \
                 component's and the sidelobe's position and over the band).",
                images.name,
                grew.cycle,
                crate::run::tables::short_number(before.peak_residual),
                crate::run::tables::short_number(grew.peak_residual),
            ))
        }
        MajorStop::Threshold | MajorStop::CycleCap | MajorStop::NothingLeft => None,
    }
}
