//! Sky models: named point and elliptical Gaussian components with curved power-law spectra.
//!
//! This crate owns what the simulated sky *is*: component positions in direction cosines (and the
//! SIN projection from RA/Dec offsets), spectra S(ν) = S0 (ν/ν0)^(α + β ln(ν/ν0)), their analytic
//! Taylor coefficients and the least-squares Taylor fit a finite multi-term deconvolution
//! recovers, the Fourier transform of a Gaussian (its visibility envelope), and truth images
//! (model in Jy/pixel, smoothed truth in Jy/beam, per Taylor term) on a
//! [`beamfloor_core::ImageGeometry`]. It knows nothing about arrays, beams, visibilities, configs
//! or files.
//!
//! Conventions: radians and hertz; (l, m) towards east and north; position angles from north
//! through east; Taylor variable x = (ν − ν0)/ν0 (as [`beamfloor_core::taylor_weight`]); images
//! `[iy, ix]` with the pixel mapping of `ImageGeometry`. A component's flux is its total flux
//! density; the imaging n-factor is not applied here.
//!
//! ```
//! use beamfloor_core::ImageGeometry;
//! use beamfloor_sky::{lm_from_radec, model_image, Component, EllipticalGaussian, Spectrum};
//!
//! let spectrum = Spectrum::new(2.0, 1.5e9, -0.7, -0.2)?;
//! let coeffs = spectrum.taylor_coefficients(3); // [2, −1.4, 0.79]
//! assert!((coeffs[2] - 0.79).abs() < 1e-12);
//!
//! let (l, m) = lm_from_radec(1.0 + 2e-3, -0.5 + 1e-3, 1.0, -0.5)?;
//! let shape = EllipticalGaussian::new(4e-4, 2e-4, 0.5)?;
//! let source = Component::gaussian("blob", l, m, spectrum, shape)?;
//! let image = model_image(&[source], &ImageGeometry::new(128, 128, 1e-4), 1.5e9)?;
//! assert!((image.sum() - 2.0).abs() < 1e-6);
//! # Ok::<(), beamfloor_sky::SkyError>(())
//! ```

mod component;
mod error;
mod gaussian;
mod projection;
mod quadrature;
mod raster;
mod spectrum;
mod taylor_fit;

pub use component::{Component, Shape};
pub use error::SkyError;
pub use gaussian::{EllipticalGaussian, FWHM_PER_SIGMA};
pub use projection::{lm_from_radec, radec_from_lm};
pub use raster::{
    model_image, smoothed_truth, taylor_model_images, taylor_smoothed_truth, TaylorCoefficients,
    MAX_SUBSAMPLES,
};
pub use spectrum::Spectrum;
pub use taylor_fit::{alpha_from_taylor, beta_from_taylor, fit_polynomial};
