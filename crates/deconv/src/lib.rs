//! Deconvolution for beamfloor: Högbom, multi-scale and multi-term multi-frequency CLEAN minor
//! cycles, Cotton–Schwab major cycles, restoring-beam fit, restoration and spectral maps.
//!
//! This crate owns the iteration from dirty Taylor images to a model: the minor-cycle plan (the
//! Hessians and scale-convolved spectral PSFs), the minor cycle itself, the major-cycle control
//! (thresholds, caps, divergence guard, progress callback), the Gaussian fit to the PSF main
//! lobe and the restored, α and β images. It must not know how residuals are made: the major
//! cycle asks a [`ResidualImager`] (implemented above the gridder, in the experiment layer) for
//! residual Taylor images of the data minus a model. It knows nothing of visibilities, beams,
//! configs or files, and prints nothing (progress goes through a callback).
//!
//! Conventions:
//! - Images are `Array2<f64>` shaped `[ny, nx]` on a [`beamfloor_core::ImageGeometry`]
//!   (x towards decreasing l, centre pixel (nx/2, ny/2)).
//! - Models are Jy/pixel; residuals and restored images are normalised like the PSFs
//!   (PSF_0 peak 1 ⇒ Jy/beam). Taylor terms use w_t(ν) = ((ν − ν0)/ν0)^t.
//! - Spectral PSFs PSF_0 … PSF_{2N−2} are arrays of any size with their peak at the centre pixel
//!   (px/2, py/2); twice the image size is recommended, so that the minor cycle's direct patch
//!   subtraction covers the whole image from any component.
//!
//! ```
//! use beamfloor_deconv::{run_minor_cycle, CleanParams, MinorCyclePlan};
//! use ndarray::Array2;
//! // A Gaussian PSF (twice the image size) and the dirty image of a 2 Jy point at (10, 12).
//! let psf = Array2::from_shape_fn((64, 64), |(y, x)| {
//!     let r2 = (x as f64 - 32.0).powi(2) + (y as f64 - 32.0).powi(2);
//!     (-r2 / 8.0).exp()
//! });
//! let dirty = Array2::from_shape_fn((32, 32), |(y, x)| 2.0 * psf[[y + 32 - 12, x + 32 - 10]]);
//! let plan = MinorCyclePlan::hogbom(&psf).unwrap();
//! let mut residual = vec![dirty];
//! let mut model = vec![Array2::zeros((32, 32))];
//! let params = CleanParams { loop_gain: 0.5, threshold: 1e-6, ..Default::default() };
//! run_minor_cycle(&plan, &mut residual, &mut model, &params, None).unwrap();
//! assert!((model[0][[12, 10]] - 2.0).abs() < 1e-5);
//! ```

mod beam_fit;
mod convolve;
mod error;
mod hessian;
mod major;
mod minor;
#[cfg(test)]
mod minor_reference;
mod plan;
mod refresh;
mod restore;
mod scales;
mod sweep;

pub use beam_fit::{fit_restoring_beam, BeamFitParams, RestoringBeam};
pub use convolve::convolve_same;
pub use error::DeconvError;
pub use hessian::TermHessian;
pub use major::{
    run_major_cycles, CycleReport, Deconvolved, MajorCycleParams, MajorStop, OnDivergence,
    ResidualImager, Threshold,
};
pub use minor::{run_minor_cycle, CleanParams, MinorCycleOutcome, MinorStop, MAX_TERMS};
pub use plan::MinorCyclePlan;
pub use restore::{restore, spectral_maps, Restored, SpectralMapParams, SpectralMaps};
pub use scales::{scale_function, ScaleSet, ScaleShape};
