//! The quick estimate of the average-beam floor: what an average beam cannot model, imaged
//! without any deconvolution.
//!
//! Average-beam imaging assumes every baseline sees the sky through one beam, the time-averaged,
//! azimuthally symmetrized power pattern P̄(r, ν) of its channel (the beam the runner divides out
//! afterwards). The part of the data that assumption cannot explain is
//!
//! ΔV = V(true beams, noise-free) − V(P̄, noise-free),
//!
//! i.e. the rotation of the asymmetric pattern with parallactic angle, squint, pointing errors and
//! anything else that varies between antennas or over time. To it is added what the strategy's
//! spectral model cannot represent even with that beam: every source's apparent spectrum
//! P̄(r, ν) S(ν) minus its weighted least-squares fit by the strategy's N Taylor terms (the best
//! a multi-term model can do; through a sidelobe or near a null the apparent spectrum is far from
//! any low-order polynomial), predicted as a visibility of that source alone. Imaged on its own through the
//! strategy's operator and weights, ΔV gives an error image whose RMS over the source-free pixels
//! predicts the residual floor CLEAN will be left with: CLEAN can absorb only the part of the
//! error that looks like sky, so the estimate is usually somewhat above the measured floor, and
//! it ignores what deconvolution itself leaves behind. Two noise-free predictions and one gridding
//! pass: seconds where the full run takes minutes.

use std::time::Instant;

use beamfloor_beam::DishBeam;
use beamfloor_core::{ImageGeometry, Pol, VoltageBeam, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_imaging::{dirty_images, TaylorTerms, WRange};
use beamfloor_metrics::{masked_statistics, source_free_mask, MaskParams, RestoringBeam};
use beamfloor_predict::{SimulationParams, VisSet};
use ndarray::Array3;
use num_complex::Complex64;

use super::operator::build_operator;
use super::strategy::StrategyImages;
use super::truth::{channel_weights, source_truths};
use super::RunError;
use crate::config::{Config, Gridding};
use crate::scenario::{Scenario, ScenarioError};

/// The predicted average-beam floor beside the measured one.
#[derive(Debug, Clone, PartialEq)]
pub struct QuickEstimate {
    /// The average-beam strategy the estimate is compared with (the first `"w"` strategy that
    /// was imaged, else the first `"plain"` one).
    pub strategy: String,
    /// RMS of the dirty image of ΔV over that strategy's source-free pixels, Jy/beam: the
    /// systematic error an average beam leaves.
    pub beam_error_rms_jy_per_beam: f64,
    /// The predicted floor √(beam error² + σ_img²) (σ_img = 0 when the truth has no noise),
    /// Jy/beam.
    pub predicted_floor_jy_per_beam: f64,
    /// Largest |ΔV image| anywhere in the valid region, Jy/beam (where the error is worst).
    pub predicted_peak_error_jy_per_beam: f64,
    /// The strategy's measured floor (off-source residual RMS after CLEAN), Jy/beam.
    pub measured_floor_jy_per_beam: f64,
    /// Wall time of the estimate (two noise-free predictions and one gridding pass), s.
    pub seconds: f64,
}

impl QuickEstimate {
    /// predicted / measured floor.
    pub fn ratio(&self) -> f64 {
        self.predicted_floor_jy_per_beam / self.measured_floor_jy_per_beam
    }
}

/// A beam that is the same for every antenna, time and receptor: the voltage √P̄(r, ν) of a
/// [`DishBeam`]'s symmetrized power pattern (see [`DishBeam::symmetrized_power`]), so a
/// baseline sees P̄ — exactly the beam average-beam imaging assumes.
pub struct SymmetrizedBeam<'a> {
    beam: &'a DishBeam,
}

impl<'a> SymmetrizedBeam<'a> {
    /// Wraps `beam`.
    pub fn new(beam: &'a DishBeam) -> Self {
        Self { beam }
    }
}

impl VoltageBeam for SymmetrizedBeam<'_> {
    fn n_antennas(&self) -> usize {
        self.beam.n_antennas()
    }

    fn voltage(&self, _: usize, _: usize, freq_hz: f64, _: Pol, l: f64, m: f64) -> Complex64 {
        // Power patterns are non-negative; clamp the table's rounding below zero in the nulls.
        Complex64::new(self.beam.symmetrized_power(l.hypot(m), freq_hz).max(0.0).sqrt(), 0.0)
    }
}

/// The quick estimate for the first imaged `"w"` (else `"plain"`) strategy, or None when there
/// is none or the truth has no beam. `sigma_img` is the predicted thermal noise of the I0 image. `imaging_beam` is that strategy's imaging beam without pointing
/// errors (the one its primary-beam correction averages); `images` are the imaged strategies in
/// config order (`indices` their positions in `[[strategy]]`).
#[allow(clippy::too_many_arguments)]
pub(crate) fn quick_estimate(
    config: &Config,
    scenario: &Scenario,
    vis: &VisSet,
    weights: &Array3<f64>,
    geometry: ImageGeometry,
    images: &[StrategyImages],
    indices: &[usize],
    floors: &[f64],
    sigma_img: f64,
    imaging_beam: &dyn Fn(usize) -> Result<Option<DishBeam>, RunError>,
) -> Result<Option<QuickEstimate>, RunError> {
    let Some(truth_beam) = scenario.beam.as_ref() else { return Ok(None) };
    let with = |g: Gridding| {
        indices.iter().enumerate().find(|(_, &index)| config.strategy[index].gridding == g)
    };
    let found = with(Gridding::W).or_else(|| with(Gridding::Plain));
    let Some((k, &index)) = found else { return Ok(None) };
    let Some(average) = imaging_beam(index)? else { return Ok(None) };
    let t = Instant::now();
    let strategy = &config.strategy[index];
    let params = SimulationParams { add_noise: false, ..scenario.simulation.clone() };
    let simulate = |beam: &dyn VoltageBeam| {
        beamfloor_predict::simulate(
            &scenario.observation,
            &scenario.sky,
            Some(beam),
            &params,
            &|_| {},
        )
        .map_err(|e| RunError::Scenario(ScenarioError::from(e)))
    };
    let truth = simulate(truth_beam)?;
    let symmetric = SymmetrizedBeam::new(&average);
    let modelled = simulate(&symmetric)?;
    let mut difference = VisSet { data: truth.data - &modelled.data, ..vis.clone() };
    let n_terms = strategy.taylor_terms() as usize;
    let chan_weights = channel_weights(weights);
    add_spectral_misfit(&mut difference, scenario, &average, &chan_weights, n_terms)
        .map_err(|source| RunError::Sky { what: "quick estimate's spectral fit".into(), source })?;

    let imaging = |source| RunError::Imaging { strategy: strategy.name.clone(), source };
    let w_range = WRange::of_visibilities(&difference).map_err(imaging)?;
    let op = build_operator(config, index, geometry, w_range)?;
    let taylor = TaylorTerms { n_terms: 1, ref_freq_hz: scenario.ref_freq_hz };
    let dirty = dirty_images(op.as_ref(), &difference, weights, &taylor).map_err(imaging)?;

    let image = &images[k];
    let beam = RestoringBeam {
        major_fwhm_rad: image.beam.major_fwhm_rad,
        minor_fwhm_rad: image.beam.minor_fwhm_rad,
        position_angle_rad: image.beam.position_angle_rad,
    };
    let sources = source_truths(&scenario.sky, &vis.frequencies_hz, &chan_weights, 1)?;
    let metrics = |source| RunError::Metrics { strategy: strategy.name.clone(), source };
    let params = MaskParams::default();
    let free = source_free_mask(&geometry, &beam, &sources, &params, Some(&image.validity))
        .map_err(metrics)?;
    let floor = masked_statistics(&dirty.residuals[0], &free, &geometry, "quick-estimate image")
        .map_err(metrics)?;
    let valid = beamfloor_metrics::valid_region(&geometry, &params, Some(&image.validity))
        .map_err(metrics)?;
    let peak = dirty.residuals[0]
        .iter()
        .zip(valid.iter())
        .filter(|(v, &ok)| ok && v.is_finite())
        .fold(0.0_f64, |acc, (v, _)| acc.max(v.abs()));
    let noise = if config.truth.noise { sigma_img } else { 0.0 };
    Ok(Some(QuickEstimate {
        strategy: strategy.name.clone(),
        beam_error_rms_jy_per_beam: floor.rms_jy_per_beam,
        predicted_floor_jy_per_beam: floor.rms_jy_per_beam.hypot(noise),
        predicted_peak_error_jy_per_beam: peak,
        measured_floor_jy_per_beam: floors[k],
        seconds: t.elapsed().as_secs_f64(),
    }))
}

/// Adds, for every true source, the visibilities of its apparent-spectrum misfit
/// e(ν) = a(ν) − â(ν), with a(ν) = P̄(r, ν) S(ν) through `average` and â the weighted
/// least-squares fit of a by `n_terms` powers of x = (ν − ν0)/ν0 with the channel weights:
/// V += e(ν) · envelope(u, v) · exp(−2πi (u l + v m + w (n − 1))) on both hands (the sign
/// convention of the prediction).
fn add_spectral_misfit(
    vis: &mut VisSet,
    scenario: &Scenario,
    average: &DishBeam,
    chan_weights: &[f64],
    n_terms: usize,
) -> Result<(), beamfloor_sky::SkyError> {
    let freqs = vis.frequencies_hz.clone();
    let x: Vec<f64> =
        freqs.iter().map(|f| (f - scenario.ref_freq_hz) / scenario.ref_freq_hz).collect();
    for c in &scenario.sky {
        let r = c.l.hypot(c.m);
        let a: Vec<f64> = freqs
            .iter()
            .map(|&f| average.symmetrized_power(r, f).max(0.0) * c.spectrum.flux_at(f))
            .collect();
        let coefficients = beamfloor_sky::fit_polynomial(&x, &a, chan_weights, n_terms)?;
        let e: Vec<f64> = a
            .iter()
            .zip(&x)
            .map(|(a, x)| a - coefficients.iter().rev().fold(0.0, |acc, c| acc * x + c))
            .collect();
        if e.iter().all(|e| *e == 0.0) {
            continue;
        }
        let n1 = c.n() - 1.0;
        for (row, mut lanes) in vis.data.outer_iter_mut().enumerate() {
            let (um, vm, wm) = (vis.uvw_m[[row, 0]], vis.uvw_m[[row, 1]], vis.uvw_m[[row, 2]]);
            for (k, mut lane) in lanes.outer_iter_mut().enumerate() {
                let scale = freqs[k] / SPEED_OF_LIGHT_M_PER_S;
                let (u, v, w) = (um * scale, vm * scale, wm * scale);
                let phase = -2.0 * std::f64::consts::PI * (u * c.l + v * c.m + w * n1);
                let value = Complex64::from_polar(e[k] * c.envelope(u, v), phase);
                lane.iter_mut().for_each(|d| *d += value);
            }
        }
    }
    Ok(())
}
