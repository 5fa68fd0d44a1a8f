//! The Stokes V dirty image: where the two circular hands see different beams (squint), an
//! unpolarized sky appears circularly polarized.
//!
//! V = (RR − LL)/2. The true sky here is unpolarized, so every V the data show is instrumental:
//! a source at radius r sees the right- and left-hand beams displaced by ± the squint, and
//! RR − LL ≈ 2 S ∂P/∂r · squint, largest on the beam's flanks. No strategy of this version
//! models V, so one dirty image (w-stacking gridder, the run's weights, Taylor term 0) for the
//! run is what a user needs: how large the spurious V is, and where.

use beamfloor_core::{Correlation, ImageGeometry};
use beamfloor_imaging::{dirty_images, GridPlan, GridderParams, TaylorTerms, WRange, WTerm};
use beamfloor_predict::VisSet;
use ndarray::{s, Array2, Array3};

use super::RunError;

/// The run's Stokes V dirty image and its extremes.
#[derive(Debug, Clone, PartialEq)]
pub struct StokesV {
    /// V = (RR − LL)/2, dirty, Jy/beam (apparent frame: no beam division).
    pub image: Array2<f64>,
    /// Largest |V| in the image, Jy/beam.
    pub peak_abs_jy_per_beam: f64,
    /// Largest |I| of the dirty Stokes I image, Jy/beam (for the leakage ratio).
    pub i_peak_abs_jy_per_beam: f64,
}

impl StokesV {
    /// Largest |V| over largest |I|: the worst instrumental circular polarization, as a fraction.
    pub fn leakage(&self) -> f64 {
        self.peak_abs_jy_per_beam / self.i_peak_abs_jy_per_beam
    }
}

/// Grids V = (RR − LL)/2 and I = (RR + LL)/2 of `vis` (Taylor term 0, w-stacking at
/// `accuracy`). None when the set does not hold both hands.
pub(crate) fn stokes_v(
    vis: &VisSet,
    weights: &Array3<f64>,
    geometry: ImageGeometry,
    accuracy: f64,
    ref_freq_hz: f64,
) -> Result<Option<StokesV>, RunError> {
    let hands = (
        vis.correlations.iter().position(|c| *c == Correlation::RR),
        vis.correlations.iter().position(|c| *c == Correlation::LL),
    );
    let (Some(_), Some(ll)) = hands else { return Ok(None) };
    let imaging = |source| RunError::Imaging { strategy: "(Stokes V image)".into(), source };
    let w_range = WRange::of_visibilities(vis).map_err(imaging)?;
    let params = GridderParams { epsilon: accuracy, w_term: WTerm::Stack };
    let plan = GridPlan::new(geometry, &params, w_range).map_err(imaging)?;
    let taylor = TaylorTerms { n_terms: 1, ref_freq_hz };
    let i = dirty_images(&plan, vis, weights, &taylor).map_err(imaging)?;
    // (RR − LL)/2 is (RR + L'L')/2 with the second hand negated.
    let mut flipped = vis.clone();
    flipped.data.slice_mut(s![.., .., ll]).mapv_inplace(|v| -v);
    let v = dirty_images(&plan, &flipped, weights, &taylor).map_err(imaging)?;
    let peak = |im: &Array2<f64>| im.iter().fold(0.0_f64, |a, x| a.max(x.abs()));
    let image = v.residuals.into_iter().next().unwrap_or_default();
    Ok(Some(StokesV {
        peak_abs_jy_per_beam: peak(&image),
        i_peak_abs_jy_per_beam: peak(&i.residuals[0]),
        image,
    }))
}
