use beamfloor_core::ImageGeometry;
use ndarray::Array2;

use crate::error::{check_range, MetricsError, Result};
use crate::error_image::{error_image, score_error_image, ErrorImageScores};
use crate::mask::{source_free_mask, valid_region, MaskParams};
use crate::radial::{radial_profile, RadialBin};
use crate::source_scores::{score_source, SourceScores};
use crate::statistics::{masked_statistics, peak_abs, FloorStatistics, Peak};
use crate::truth::{RestoringBeam, SourceTruth};

/// Knobs of [`score_strategy`]; every field states its default.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScoreParams {
    /// Source-free mask (default [`MaskParams::default`]: 5 beams, 5 % edge margin).
    pub mask: MaskParams,
    /// Predicted thermal noise σ_I of the I0 image, Jy/beam (default None: no ratio).
    pub thermal_sigma_jy_per_beam: Option<f64>,
    /// Radius of the restored-peak search about each source, in restoring-beam major FWHMs
    /// (default 1).
    pub peak_search_beams: f64,
    /// Annulus width of the radial profiles, in restoring-beam major FWHMs (default 2).
    pub radial_bin_beams: f64,
}

impl Default for ScoreParams {
    fn default() -> Self {
        Self {
            mask: MaskParams::default(),
            thermal_sigma_jy_per_beam: None,
            peak_search_beams: 1.0,
            radial_bin_beams: 2.0,
        }
    }
}

/// The images of one strategy to be scored, all on the same [`ImageGeometry`], Jy/beam.
#[derive(Debug, Clone, Copy)]
pub struct StrategyImages<'a> {
    /// Restored Taylor-term images [I0, I1, I2, ...] (model ⊗ restoring beam + residual).
    pub restored_taylor: &'a [Array2<f64>],
    /// Residual I0 image.
    pub residual_i0: &'a Array2<f64>,
    /// True sky I0 ⊗ restoring beam on the same grid (enables the error image), if available.
    pub truth_convolved_i0: Option<&'a Array2<f64>>,
    /// Where the image is trustworthy at all (e.g. primary-beam response above a cut-off).
    pub validity: Option<&'a Array2<bool>>,
}

/// Whole-image scores of one strategy.
#[derive(Debug, Clone, PartialEq)]
pub struct ImageScores {
    /// Largest |restored I0| over the whole image.
    pub restored_peak: Peak,
    /// Largest |residual I0| over the whole image.
    pub residual_peak: Peak,
    /// Residual I0 statistics over the source-free mask; `floor.rms_jy_per_beam` is the headline
    /// floor (see [`FloorStatistics`] for why).
    pub floor: FloorStatistics,
    /// Dynamic range = |restored peak| / floor RMS (infinite for a zero floor).
    pub dynamic_range: f64,
    /// The predicted thermal noise σ_I it is compared with, Jy/beam.
    pub thermal_sigma_jy_per_beam: Option<f64>,
    /// floor RMS / σ_I: 1 means the floor is at the noise, larger means systematics dominate.
    pub floor_over_thermal: Option<f64>,
}

/// Everything measured for one strategy.
#[derive(Debug, Clone, PartialEq)]
pub struct Scores {
    /// Whole-image scores.
    pub image: ImageScores,
    /// One entry per true source, in the order given.
    pub sources: Vec<SourceScores>,
    /// Error-image scores, when the truth-convolved image was given.
    pub error: Option<ErrorImageScores>,
    /// Radial profile of the residual I0 over the source-free mask.
    pub residual_profile: Vec<RadialBin>,
    /// Radial profile of the error image over the valid region (empty without truth).
    pub error_profile: Vec<RadialBin>,
}

/// Whole-image scores from a restored and a residual I0 image and a source-free mask.
pub fn score_image(
    restored_i0: &Array2<f64>,
    residual_i0: &Array2<f64>,
    source_free: &Array2<bool>,
    geometry: &ImageGeometry,
    thermal_sigma_jy_per_beam: Option<f64>,
) -> Result<ImageScores> {
    if let Some(s) = thermal_sigma_jy_per_beam {
        check_range("thermal_sigma_jy_per_beam", s, f64::MIN_POSITIVE, f64::MAX, false, "> 0")?;
    }
    let restored_peak = peak_abs(restored_i0, geometry, None, "restored image")?;
    let residual_peak = peak_abs(residual_i0, geometry, None, "residual image")?;
    let floor = masked_statistics(residual_i0, source_free, geometry, "residual image")?;
    Ok(ImageScores {
        restored_peak,
        residual_peak,
        floor,
        dynamic_range: restored_peak.value_jy_per_beam.abs() / floor.rms_jy_per_beam,
        thermal_sigma_jy_per_beam,
        floor_over_thermal: thermal_sigma_jy_per_beam.map(|s| floor.rms_jy_per_beam / s),
    })
}

/// Score one strategy's images against the truth: masks, whole-image scores, per-source scores,
/// error image and radial profiles.
pub fn score_strategy(
    geometry: &ImageGeometry,
    beam: &RestoringBeam,
    sources: &[SourceTruth],
    images: &StrategyImages<'_>,
    params: &ScoreParams,
) -> Result<Scores> {
    beam.validate()?;
    check_range("peak_search_beams", params.peak_search_beams, 0.0, f64::MAX, false, ">= 0")?;
    check_range(
        "radial_bin_beams",
        params.radial_bin_beams,
        f64::MIN_POSITIVE,
        f64::MAX,
        false,
        "> 0",
    )?;
    let restored_i0 = images.restored_taylor.first().ok_or(MetricsError::NoTaylorTerms)?;
    let valid = valid_region(geometry, &params.mask, images.validity)?;
    let free = source_free_mask(geometry, beam, sources, &params.mask, images.validity)?;
    let image = score_image(
        restored_i0,
        images.residual_i0,
        &free,
        geometry,
        params.thermal_sigma_jy_per_beam,
    )?;
    let peak_radius = params.peak_search_beams * beam.major_fwhm_rad;
    let source_scores = sources
        .iter()
        .map(|s| {
            score_source(
                geometry,
                s,
                images.restored_taylor,
                images.residual_i0,
                images.truth_convolved_i0,
                params.mask.exclusion_radius_rad(beam, s),
                peak_radius,
            )
        })
        .collect::<Result<Vec<_>>>()?;
    let bin = params.radial_bin_beams * beam.major_fwhm_rad;
    let residual_profile =
        radial_profile(images.residual_i0, geometry, Some(&free), bin, "residual image")?;
    let (error, error_profile) = match images.truth_convolved_i0 {
        Some(truth) => {
            let e = error_image(restored_i0, truth, geometry)?;
            let scores = score_error_image(&e, geometry, &valid, &free)?;
            (Some(scores), radial_profile(&e, geometry, Some(&valid), bin, "error image")?)
        }
        None => (None, Vec::new()),
    };
    Ok(Scores { image, sources: source_scores, error, residual_profile, error_profile })
}
