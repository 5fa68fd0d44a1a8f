//! Metrics against the known truth: residual floors, dynamic range, per-source errors.
//!
//! This crate owns how a strategy's images are scored: the source-free mask, the statistics of
//! the residual over it (RMS, mean-removed RMS, MAD-based σ), dynamic range, the floor relative
//! to the predicted thermal noise, per-source flux and spectral-index errors, the error image
//! against the truth convolved with the restoring beam, radial profiles, and the conversion of
//! all of it into plain tables. It must not know about skies, configs, files or imaging: the
//! runner hands it images, a [`RestoringBeam`] and a list of [`SourceTruth`].
//!
//! Conventions: images are `Array2<f64>` shaped `[ny, nx]` on a
//! [`beamfloor_core::ImageGeometry`] (x towards decreasing l, phase centre at (nx/2, ny/2)), in
//! Jy/beam; angles in radians. A value that cannot be formed is NaN (e.g. α where I0 ≤ 0); an
//! input that is wrong (shape, empty mask, non-finite pixel in a statistic) is a
//! [`MetricsError`]. The headline floor is the RMS about zero of the residual over the
//! source-free mask (see [`FloorStatistics`]).
//!
//! ```
//! use beamfloor_core::ImageGeometry;
//! use beamfloor_metrics::{source_free_mask, masked_statistics, MaskParams, RestoringBeam, SourceTruth};
//! use ndarray::Array2;
//!
//! let g = ImageGeometry::new(64, 64, 1e-4);
//! let beam = RestoringBeam::circular(3e-4);
//! let src = SourceTruth { name: "a".into(), l_rad: 0.0, m_rad: 0.0, flux_ref_jy: 1.0,
//!     alpha_power_law: -0.7, beta_power_law: 0.0, alpha_fit: -0.7, beta_fit: 0.0, extent_rad: 0.0 };
//! let mask = source_free_mask(&g, &beam, &[src], &MaskParams::default(), None).unwrap();
//! // 5 beams of 3 pixels: everything within 15 pixels of the source is excluded.
//! assert!(!mask[[32, 32]] && !mask[[32, 46]] && mask[[32, 48]]);
//! let residual = Array2::from_elem((64, 64), 2e-3);
//! let stats = masked_statistics(&residual, &mask, &g, "residual").unwrap();
//! assert!((stats.rms_jy_per_beam - 2e-3).abs() < 1e-15);
//! ```

mod error;
mod error_image;
mod mask;
mod radial;
mod scores;
mod source_scores;
mod spectral;
mod statistics;
mod table;
mod truth;

pub use error::{MetricsError, Result};
pub use error_image::{error_image, score_error_image, ErrorImageScores};
pub use mask::{
    disc_pixels, pixel_distance_rad, source_free_mask, valid_region, validity_from_threshold,
    MaskParams,
};
pub use radial::{radial_profile, RadialBin};
pub use scores::{score_image, score_strategy, ImageScores, ScoreParams, Scores, StrategyImages};
pub use source_scores::{nearest_pixel, score_source, SourceScores};
pub use spectral::{spectral_index_from_taylor, SpectralIndex};
pub use statistics::{
    masked_statistics, masked_values, median_in_place, peak_abs, FloorStatistics, Peak, Pixel,
    MAD_TO_SIGMA,
};
pub use table::{radial_table, source_table, summary_table, Cell, Table};
pub use truth::{RestoringBeam, SourceTruth};
