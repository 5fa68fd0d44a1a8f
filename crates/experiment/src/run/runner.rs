//! `run_experiment`: the stages in order, with timings.

use std::path::{Path, PathBuf};
use std::time::Instant;

use beamfloor_beam::DishBeam;
use beamfloor_core::ImageGeometry;
use beamfloor_deconv::{CycleReport, DeconvError};
use beamfloor_imaging::{imaging_weights, Weighting};
use beamfloor_metrics::{score_strategy, RestoringBeam as MetricsBeam, ScoreParams, Scores};
use beamfloor_predict::VisSet;

use super::outputs::{write_outputs, OutputContext};
use super::quick_estimate::{quick_estimate, QuickEstimate};
use super::stokes_v::{stokes_v, StokesV};
use super::strategy::{image_strategy, BeamTaylor, PsfCache, StrategyImages};
use super::truth::{channel_weights, source_truths, truth_convolved_i0};
use super::{check_strategies, image_noise_jy, RunError};
use crate::config::{self, Config};
use crate::scenario::{beam_params, build_beam, Scenario};

/// Progress of a run, for a command-line display. Every method has an empty default.
pub trait RunObserver: Sync {
    /// A stage starts (e.g. "simulating", "weights", "writing outputs").
    fn stage(&mut self, _name: &str) {}
    /// Rows of the truth simulation finished so far, of `total`.
    fn simulated_rows(&self, _done: usize, _total: usize) {}
    /// Strategy `index` of `count` starts.
    fn strategy(&mut self, _index: usize, _count: usize, _name: &str) {}
    /// A strategy is skipped because this build cannot image it, or its CLEAN diverged
    /// (`reason` says why).
    fn skipped(&mut self, _name: &str, _reason: &str) {}
    /// A major cycle of the current strategy finished.
    fn cycle(&mut self, _name: &str, _report: &CycleReport) {}
}

/// What a strategy achieved, in a few numbers.
#[derive(Clone, Debug)]
pub struct StrategySummary {
    /// Name.
    pub name: String,
    /// Residual floor: off-source RMS of the apparent-frame I0 residual, Jy/beam.
    pub floor_jy_per_beam: f64,
    /// Dynamic range (restored peak / floor).
    pub dynamic_range: f64,
    /// Major cycles run (exact residuals after the dirty image).
    pub major_cycles: usize,
    /// Wall time, s.
    pub seconds: f64,
    /// Why CLEAN stopped, when that matters for reading the floor (component cap, growing
    /// residual).
    pub stop_note: Option<String>,
}

/// The result of a run.
#[derive(Clone, Debug)]
pub struct RunSummary {
    /// The run folder.
    pub out_dir: PathBuf,
    /// `report.html`, when written.
    pub report_html: Option<PathBuf>,
    /// Predicted thermal noise of the I0 image for the imaging weights, Jy/beam.
    pub sigma_img_jy_per_beam: f64,
    /// True when the visibilities were read from `out_dir/visibilities` instead of simulated.
    pub reused_visibilities: bool,
    /// One entry per strategy that ran, in config order.
    pub strategies: Vec<StrategySummary>,
    /// Strategies skipped because this build cannot image them or their CLEAN diverged:
    /// (name, reason).
    pub skipped: Vec<(String, String)>,
    /// Wall time per stage, s, in order.
    pub timings: Vec<(String, f64)>,
    /// The quick estimate of the average-beam floor beside the measured one, when an average-beam
    /// (`"plain"`/`"w"`) strategy was imaged and the truth has a beam.
    pub quick_estimate: Option<QuickEstimate>,
    /// Largest |V| over largest |I| of the dirty images (instrumental circular polarization of
    /// an unpolarized sky, e.g. from squint), when both hands were simulated.
    pub stokes_v_leakage: Option<f64>,
}

/// Runs `config` (read from `config_path`, which locates relative files) into `out_dir`.
///
/// 1. Visibilities: reused from `out_dir/visibilities` when its manifest's truth hash equals
///    the config's, else simulated from the scenario and written there.
/// 2. Imaging weights from `[imaging]` (one weight grid for all channels) and the predicted I0
///    noise σ_img ([`image_noise_jy`]).
/// 3. Every strategy imaged, deconvolved and restored ([`image_strategy`]) and scored against
///    the truth with the metrics crate.
/// 4. The outputs written (see the module doc for the folder layout).
pub fn run_experiment(
    config: &Config,
    config_path: Option<&Path>,
    out_dir: &Path,
    observer: &mut dyn RunObserver,
) -> Result<RunSummary, RunError> {
    let run_start = Instant::now();
    let mut timings = Vec::new();
    let unavailable = check_strategies(config)?;
    for (index, reason) in &unavailable {
        observer.skipped(&config.strategy[*index].name, &reason.to_string());
    }
    std::fs::create_dir_all(out_dir)
        .map_err(|source| RunError::Io { path: out_dir.to_path_buf(), source })?;

    observer.stage("building the scenario");
    let t = Instant::now();
    let scenario = super::preflight(config, config_path)?.scenario;
    super::begin_run(out_dir, config)?;
    timings.push(("scenario".to_string(), t.elapsed().as_secs_f64()));

    let t = Instant::now();
    let vis_dir = out_dir.join("visibilities");
    let (vis, reused) = match existing_visibilities(&vis_dir, &config.truth_hash()) {
        Some(vis) => (vis, true),
        None => {
            observer.stage("simulating the visibilities");
            let total = scenario.observation.n_rows();
            let vis = scenario.simulate(&|done| observer.simulated_rows(done, total))?;
            beamfloor_report::write_visset(&vis_dir, &vis)?;
            (vis, false)
        }
    };
    timings.push((
        if reused { "visibilities (reused)" } else { "simulation" }.to_string(),
        t.elapsed().as_secs_f64(),
    ));

    observer.stage("imaging weights");
    let t = Instant::now();
    let cell_rad = (config.imaging.cell_arcsec / 3600.0).to_radians();
    let n = config.imaging.image_size_px as usize;
    let geometry = ImageGeometry::new(n, n, cell_rad);
    let weighting = match config.imaging.weighting {
        config::Weighting::Natural => Weighting::Natural,
        config::Weighting::Uniform => Weighting::Uniform,
        config::Weighting::Briggs => {
            Weighting::Briggs { robust: config.imaging.robust.unwrap_or(0.0) }
        }
    };
    let weights = imaging_weights(&vis, &geometry, weighting)
        .map_err(|source| RunError::Imaging { strategy: "(imaging weights)".into(), source })?;
    let sigma_img = image_noise_jy(&vis, &weights, &scenario.simulation.noise)?;
    let chan_weights = channel_weights(&weights);
    timings.push(("weights".to_string(), t.elapsed().as_secs_f64()));

    let count = config.strategy.len();
    let mut images: Vec<StrategyImages> = Vec::with_capacity(count);
    let mut scores: Vec<(String, Scores)> = Vec::with_capacity(count);
    let mut truths = Vec::with_capacity(count);
    let mut imaged_indices = Vec::with_capacity(count);
    let mut skipped: Vec<(String, String)> = unavailable
        .iter()
        .map(|(i, e)| (config.strategy[*i].name.clone(), e.to_string()))
        .collect();
    let mut psf_cache = PsfCache::default();
    for index in 0..count {
        if unavailable.iter().any(|(i, _)| *i == index) {
            continue;
        }
        let name = config.strategy[index].name.clone();
        observer.strategy(index, count, &name);
        let t = Instant::now();
        let n_terms = config.strategy[index].taylor_terms() as usize;
        let beam_taylor = averaged_beam_taylor(config, index, &scenario, &vis, &geometry, n_terms)?;
        let imaged = image_strategy(
            config,
            index,
            &scenario.observation,
            &vis,
            &weights,
            geometry,
            sigma_img,
            &beam_taylor,
            &mut psf_cache,
            &mut |report| observer.cycle(&name, report),
        );
        // A strategy whose CLEAN diverges is a result, not a crash: the others still run, and the
        // report lists it with the numbers of the divergence.
        let result = match imaged {
            Ok(result) => result,
            Err(e @ RunError::Deconv { source: DeconvError::MajorCycleDiverged { .. }, .. }) => {
                let reason = e.to_string();
                observer.skipped(&name, &reason);
                skipped.push((name, reason));
                continue;
            }
            Err(e) => return Err(e),
        };
        let sources = source_truths(&scenario.sky, &vis.frequencies_hz, &chan_weights, n_terms)?;
        let truth_i0 = truth_convolved_i0(
            &scenario.sky,
            &geometry,
            &result.beam,
            &vis.frequencies_hz,
            &chan_weights,
            n_terms,
        )?;
        let metrics_beam = MetricsBeam {
            major_fwhm_rad: result.beam.major_fwhm_rad,
            minor_fwhm_rad: result.beam.minor_fwhm_rad,
            position_angle_rad: result.beam.position_angle_rad,
        };
        // The metrics refuse NaN; blanked pixels (below the beam cut-off) are excluded through
        // `validity` and enter the whole-image peak search as zeros.
        let restored_finite: Vec<_> = result
            .restored_sky
            .iter()
            .map(|im| im.mapv(|v| if v.is_finite() { v } else { 0.0 }))
            .collect();
        let strategy_scores = score_strategy(
            &geometry,
            &metrics_beam,
            &sources,
            &beamfloor_metrics::StrategyImages {
                restored_taylor: &restored_finite,
                residual_i0: &result.residuals[0],
                truth_convolved_i0: Some(&truth_i0),
                validity: Some(&result.validity),
            },
            &ScoreParams { thermal_sigma_jy_per_beam: Some(sigma_img), ..ScoreParams::default() },
        )
        .map_err(|source| RunError::Metrics { strategy: name.clone(), source })?;
        timings.push((format!("strategy {name}"), t.elapsed().as_secs_f64()));
        scores.push((name, strategy_scores));
        truths.push((sources, truth_i0, beam_taylor));
        images.push(result);
        imaged_indices.push(index);
    }

    if images.is_empty() {
        return Err(RunError::NothingImaged {
            reasons: skipped.iter().map(|(name, why)| format!("{name}: {why}")).collect(),
        });
    }
    observer.stage("quick estimate of the average-beam floor");
    let t = Instant::now();
    let floors: Vec<f64> = scores.iter().map(|(_, s)| s.image.floor.rms_jy_per_beam).collect();
    let estimate = quick_estimate(
        config,
        &scenario,
        &vis,
        &weights,
        geometry,
        &images,
        &imaged_indices,
        &floors,
        sigma_img,
        &|index| averaging_beam(config, index, &scenario, &geometry),
    )?;
    timings.push(("quick estimate".to_string(), t.elapsed().as_secs_f64()));

    observer.stage("Stokes V dirty image");
    let t = Instant::now();
    let v = stokes_v(&vis, &weights, geometry, config.imaging.accuracy, scenario.ref_freq_hz)?;
    timings.push(("Stokes V".to_string(), t.elapsed().as_secs_f64()));

    observer.stage("writing outputs");
    let t = Instant::now();
    let context = OutputContext {
        config,
        config_path,
        out_dir,
        scenario: &scenario,
        vis: &vis,
        geometry,
        sigma_img,
        images: &images,
        scores: &scores,
        truths: &truths,
        reused_visibilities: reused,
        skipped: &skipped,
        quick_estimate: estimate.as_ref(),
        stokes_v: v.as_ref(),
    };
    timings.push(("outputs".to_string(), 0.0));
    let report_html = write_outputs(&context, &mut timings, run_start, t)?;

    let strategies = images
        .iter()
        .zip(&scores)
        .map(|(im, (name, s))| StrategySummary {
            name: name.clone(),
            floor_jy_per_beam: s.image.floor.rms_jy_per_beam,
            dynamic_range: s.image.dynamic_range,
            major_cycles: im.cycles.len().saturating_sub(1),
            seconds: im.seconds,
            stop_note: super::strategy::stop_description(im),
        })
        .collect();
    super::finish_run(out_dir, config)?;
    Ok(RunSummary {
        out_dir: out_dir.to_path_buf(),
        report_html,
        sigma_img_jy_per_beam: sigma_img,
        reused_visibilities: reused,
        strategies,
        skipped,
        timings,
        quick_estimate: estimate,
        stokes_v_leakage: v.as_ref().map(StokesV::leakage),
    })
}

/// The visibility set in `dir` if it exists, reads, and was simulated from `truth_hash`.
fn existing_visibilities(dir: &Path, truth_hash: &str) -> Option<VisSet> {
    if !dir.join(beamfloor_report::VISSET_MANIFEST).is_file() {
        return None;
    }
    beamfloor_report::read_visset(dir).ok().filter(|vis| vis.truth_hash == truth_hash)
}

/// The averaged, symmetrized imaging beam's Taylor coefficients over the channels, for the
/// primary-beam correction of plain and w gridding (see [`averaging_beam`]). None when the truth
/// has no beam (nothing to divide by).
fn averaged_beam_taylor(
    config: &Config,
    index: usize,
    scenario: &Scenario,
    vis: &VisSet,
    geometry: &ImageGeometry,
    n_terms: usize,
) -> Result<BeamTaylor, RunError> {
    let Some(beam) = averaging_beam(config, index, scenario, geometry)? else {
        return Ok(None);
    };
    let taylor = beam
        .average_power_taylor(geometry, &vis.frequencies_hz, n_terms)
        .map_err(|source| RunError::Beam { what: "averaged beam Taylor terms".into(), source })?;
    Ok(Some(taylor))
}

/// The beam whose time average and azimuthal symmetrization plain and w gridding divide out:
/// the strategy's imaging beam (`[beam]` with its `imaging_beam` overrides) with the truth's
/// effect switches, minus the per-antenna pointing errors an imager cannot know. None when the
/// truth has no beam.
fn averaging_beam(
    config: &Config,
    index: usize,
    scenario: &Scenario,
    geometry: &ImageGeometry,
) -> Result<Option<DishBeam>, RunError> {
    if !config.truth.beam {
        return Ok(None);
    }
    let beam_config = config.strategy[index].imaging_beam(&config.beam);
    let mut switches = config.truth;
    switches.pointing = false;
    let (hx, hy) = geometry.half_field_rad();
    let params = beam_params(
        &beam_config,
        &switches,
        &scenario.observation,
        scenario.ref_freq_hz,
        1.1 * hx.hypot(hy),
        config.experiment.seed,
    )?;
    Ok(Some(build_beam(&params, &scenario.observation)?))
}
