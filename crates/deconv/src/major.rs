use crate::minor::{run_minor_cycle, CleanParams, MinorStop};
use crate::plan::MinorCyclePlan;
use crate::DeconvError;
use beamfloor_core::ImageGeometry;
use ndarray::Array2;

/// What the major cycle needs from an imaging operator; the experiment layer implements it on
/// top of the gridder (degrid the model, subtract from the data, grid the difference).
pub trait ResidualImager {
    /// Residual Taylor images (N of them, `[ny, nx]`) of the data minus the visibilities of
    /// `model` (N Taylor model images, Jy/pixel), normalised like the spectral PSFs of the
    /// [`MinorCyclePlan`] (residual_i = Σ_ν W_ν w_i(ν) · dirty-residual_ν / Σ_ν W_ν). With an
    /// all-zero model this is the dirty Taylor images.
    fn residuals(&mut self, model: &[Array2<f64>]) -> Result<Vec<Array2<f64>>, DeconvError>;
}

/// When the major cycle is done, in Jy/beam or in multiples of a noise level.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Threshold {
    /// Absolute peak residual (term 0), Jy/beam.
    Jy(f64),
    /// `n_sigma` × `noise_jy` (the caller's estimate of the image noise, Jy/beam).
    Noise {
        /// Multiple of the noise.
        n_sigma: f64,
        /// Noise level, Jy/beam.
        noise_jy: f64,
    },
}

impl Threshold {
    /// The threshold in Jy/beam.
    pub fn jy(&self) -> f64 {
        match *self {
            Threshold::Jy(t) => t,
            Threshold::Noise { n_sigma, noise_jy } => n_sigma * noise_jy,
        }
    }
}

/// Knobs of the Cotton–Schwab major cycle. Defaults in [`MajorCycleParams::default`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MajorCycleParams {
    /// Loop gain of the minor cycles. Default 0.1.
    pub loop_gain: f64,
    /// Final threshold on the peak |residual term 0| over the search region. Default 0 Jy.
    pub threshold: Threshold,
    /// Total component cap over all minor cycles. Default 10 000.
    pub max_iterations: usize,
    /// Cap on major cycles (calls to the imager after the first). Default 20.
    pub max_major_cycles: usize,
    /// Each minor cycle cleans down to max(threshold, minor_cycle_depth × its starting peak)
    /// before the next exact residual is made, since the minor cycle's PSF model is only an
    /// approximation of the operator. In (0, 1). Default 0.2.
    pub minor_cycle_depth: f64,
    /// The run stops with [`DeconvError::MajorCycleDiverged`] if a major cycle's peak residual
    /// exceeds this factor × the previous cycle's (and a minor cycle with
    /// [`DeconvError::MinorCycleDiverged`] on the same factor within itself). > 1. Default 1.5.
    pub divergence_factor: f64,
    /// When > 0, the minor cycles subtract each component only over the PSF patch outside which
    /// the PSF is at most this fraction of its peak, with exact FFT refreshes of the residuals
    /// in between and at their end ([`CleanParams::psf_patch_sidelobe`]). (Before the refresh
    /// existed, a minor cycle that ran thousands of components against a floor accumulated the
    /// far sidelobes it skipped and made the next major cycle diverge on the demo.)
    /// 0 = the whole PSF (exact). In [0, 1). Default 0.
    pub psf_patch_sidelobe: f64,
    /// What a growing residual does (see [`OnDivergence`]). Default [`OnDivergence::Fail`].
    pub on_divergence: OnDivergence,
}

/// What happens when a major cycle's peak residual grows by more than the divergence factor
/// (or a minor cycle's within itself).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum OnDivergence {
    /// Fail with [`DeconvError::MajorCycleDiverged`] / [`DeconvError::MinorCycleDiverged`].
    Fail,
    /// Stop with [`MajorStop::ResidualGrew`], keeping the model and the exact residuals of the
    /// last cycle before the growth (the best the run reached); the growing cycle's report is
    /// still passed to the callback and kept in [`Deconvolved::cycles`]. For comparisons where
    /// an operator whose minor-cycle PSF model is too approximate is a result to measure, not
    /// an error.
    KeepBest,
}

impl Default for MajorCycleParams {
    fn default() -> Self {
        Self {
            loop_gain: 0.1,
            threshold: Threshold::Jy(0.0),
            max_iterations: 10_000,
            max_major_cycles: 20,
            minor_cycle_depth: 0.2,
            divergence_factor: 1.5,
            psf_patch_sidelobe: 0.0,
            on_divergence: OnDivergence::Fail,
        }
    }
}

/// One line of progress, handed to the caller's callback after each exact residual.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CycleReport {
    /// Major-cycle index (0 = the dirty image, before any component).
    pub cycle: usize,
    /// Peak |residual term 0| over the search region, Jy/beam.
    pub peak_residual: f64,
    /// Flux of model term 0 (sum over pixels), Jy.
    pub model_flux: f64,
    /// Components subtracted so far.
    pub iterations: usize,
}

/// Why the major cycle stopped (divergence is an error, not a stop reason).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum MajorStop {
    /// The peak residual reached the threshold.
    Threshold,
    /// The total component cap was reached.
    IterationCap,
    /// The major-cycle cap was reached.
    CycleCap,
    /// The minor cycle found nothing left to clean (residual zero in the search region).
    NothingLeft,
    /// The peak residual grew by more than the divergence factor (major or minor cycle) and
    /// [`OnDivergence::KeepBest`] kept the model and residuals from before the growth.
    ResidualGrew,
}

/// Result of a deconvolution run.
#[derive(Clone, Debug)]
pub struct Deconvolved {
    /// N Taylor model images, Jy/pixel.
    pub model: Vec<Array2<f64>>,
    /// The last exact residual Taylor images from the imager.
    pub residuals: Vec<Array2<f64>>,
    /// One report per exact residual (also passed to the callback).
    pub cycles: Vec<CycleReport>,
    /// Components subtracted in total (in the model returned).
    pub iterations: usize,
    /// Why it stopped.
    pub stop: MajorStop,
}

/// Cotton–Schwab deconvolution: alternate minor cycles on the approximate PSF model with exact
/// residuals from `imager` computed from the accumulated model (Schwab 1984, AJ 89, 1076).
///
/// `geometry` gives the image shape `[ny, nx]` of the model and residuals. Cycle 0 asks for the residual of a zero model (the dirty images). After each exact residual
/// the callback receives a [`CycleReport`]; then the run stops if the peak is at or below the
/// threshold, if the iteration or cycle cap is reached, or fails if the peak grew by more than
/// `divergence_factor` over the previous cycle (or, with [`OnDivergence::KeepBest`], stops
/// with the model from before the growth). Nothing is printed.
pub fn run_major_cycles<I: ResidualImager + ?Sized>(
    imager: &mut I,
    geometry: &ImageGeometry,
    plan: &MinorCyclePlan,
    params: &MajorCycleParams,
    mask: Option<&Array2<bool>>,
    progress: &mut dyn FnMut(&CycleReport),
) -> Result<Deconvolved, DeconvError> {
    if !(params.minor_cycle_depth > 0.0 && params.minor_cycle_depth < 1.0) {
        return Err(DeconvError::Parameter {
            name: "minor_cycle_depth",
            value: params.minor_cycle_depth,
            allowed: "(0, 1)",
        });
    }
    let threshold = params.threshold.jy();
    let base = CleanParams {
        loop_gain: params.loop_gain,
        threshold,
        max_iterations: params.max_iterations,
        divergence_factor: params.divergence_factor,
        psf_patch_sidelobe: params.psf_patch_sidelobe,
    };
    base.validate()?;
    let n = plan.nterms();
    let dim = (geometry.ny, geometry.nx);
    if let Some(m) = mask {
        if m.dim() != dim {
            return Err(DeconvError::ShapeMismatch {
                what: "mask",
                expected_ny: dim.0,
                expected_nx: dim.1,
                got_ny: m.dim().0,
                got_nx: m.dim().1,
            });
        }
    }
    let mut model: Vec<Array2<f64>> = (0..n).map(|_| Array2::zeros(dim)).collect();
    let mut residuals = checked(imager.residuals(&model)?, n, dim)?;
    let mut cycles = Vec::new();
    let mut iterations = 0usize;
    let mut previous: Option<f64> = None;
    let mut cycle = 0usize;
    let keep_best = params.on_divergence == OnDivergence::KeepBest;
    // With KeepBest: the model, residuals and component count before the last minor cycle.
    let mut before: Option<Snapshot> = None;
    let stop = loop {
        let peak = peak_abs(&residuals[0], mask);
        let report =
            CycleReport { cycle, peak_residual: peak, model_flux: model[0].sum(), iterations };
        progress(&report);
        cycles.push(report);
        if let Some(prev) = previous {
            if peak > params.divergence_factor * prev {
                if let Some((m, r, i)) = before.take() {
                    (model, residuals, iterations) = (m, r, i);
                    break MajorStop::ResidualGrew;
                }
                return Err(DeconvError::MajorCycleDiverged {
                    cycle,
                    peak,
                    previous: prev,
                    factor: params.divergence_factor,
                });
            }
        }
        if peak <= threshold {
            break MajorStop::Threshold;
        }
        if iterations >= params.max_iterations {
            break MajorStop::IterationCap;
        }
        if cycle >= params.max_major_cycles {
            break MajorStop::CycleCap;
        }
        let minor = CleanParams {
            threshold: threshold.max(params.minor_cycle_depth * peak),
            max_iterations: params.max_iterations - iterations,
            ..base
        };
        if keep_best {
            before = Some((model.clone(), residuals.clone(), iterations));
        }
        let outcome = match run_minor_cycle(plan, &mut residuals, &mut model, &minor, mask) {
            Ok(outcome) => outcome,
            Err(DeconvError::MinorCycleDiverged { .. }) if keep_best => {
                if let Some((m, r, i)) = before.take() {
                    (model, residuals, iterations) = (m, r, i);
                }
                break MajorStop::ResidualGrew;
            }
            Err(e) => return Err(e),
        };
        iterations += outcome.iterations;
        if outcome.stop == MinorStop::NothingLeft && outcome.iterations == 0 {
            break MajorStop::NothingLeft;
        }
        residuals = checked(imager.residuals(&model)?, n, dim)?;
        previous = Some(peak);
        cycle += 1;
    };
    Ok(Deconvolved { model, residuals, cycles, iterations, stop })
}

/// Model, residuals and component count saved before a minor cycle (for
/// [`OnDivergence::KeepBest`]).
type Snapshot = (Vec<Array2<f64>>, Vec<Array2<f64>>, usize);

/// Validate the imager's answer: N finite images of the geometry's shape.
fn checked(
    images: Vec<Array2<f64>>,
    n: usize,
    dim: (usize, usize),
) -> Result<Vec<Array2<f64>>, DeconvError> {
    if images.len() != n {
        return Err(DeconvError::TermCount {
            what: "imager residuals",
            expected: n,
            got: images.len(),
        });
    }
    for (t, im) in images.iter().enumerate() {
        crate::hessian::check_shape("imager residual", im, dim)?;
        if let Some(((y, x), _)) = im.indexed_iter().find(|(_, v)| !v.is_finite()) {
            return Err(DeconvError::NonFinite { term: t, x, y });
        }
    }
    Ok(images)
}

/// max |image| over the mask (or everywhere).
fn peak_abs(image: &Array2<f64>, mask: Option<&Array2<bool>>) -> f64 {
    match mask {
        Some(m) => image
            .iter()
            .zip(m.iter())
            .filter(|(_, &b)| b)
            .fold(0.0f64, |acc, (v, _)| acc.max(v.abs())),
        None => image.iter().fold(0.0f64, |acc, v| acc.max(v.abs())),
    }
}
