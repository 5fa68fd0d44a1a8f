//! Imaging operators: the transform between visibilities and images that every correction
//! strategy plugs into, plus weighting and the Taylor-term dirty images of multi-term MFS.
//!
//! This crate owns the [`ImagingOperator`] pair — `degrid` (image → visibilities, the forward
//! model) and `grid` (its exact adjoint) — with two implementations: [`GridPlan`], a gridder with
//! the exponential-of-semicircle kernel (Barnett, Magland & af Klinteberg 2019) on a 2× padded
//! grid and w-stacking with the same kernel along w, and [`DirectOperator`], a direct Fourier sum
//! (slow, exact, the reference). On top sit natural/uniform/Briggs [`Weighting`], and
//! [`dirty_images`] / [`predict_visibilities`] for Stokes I with N Taylor terms. It knows nothing
//! about configs, files or deconvolution, and sees beams only through
//! [`beamfloor_core::VoltageBeam`].
//!
//! A-projection ([`AProjection`]) applies the imaging beam's baseline product |E_p|² of antenna 0
//! (all antennas share one pattern; checked unless [`AProjectionParams::assume_identical_antennas`])
//! per (parallactic-angle bin, channel, hand) on top of the same gridder, with the sensitivity
//! image and [`flat_noise`] / [`flat_sky`] normalisation; wideband A-projection grids with the
//! beam at a conjugate frequency ([`reciprocal_conjugate_frequency`] or the numerically
//! [`fitted_conjugate_frequencies`]). [`DirectBeamOperator`] is its direct-sum reference.
//! [`KernelAProjection`] is the same operator with oversampled uv-domain A-kernels (the ES
//! kernel convolved with the beam's uv transform) on shared w-stacking planes: far faster, with
//! an error set by the kernel oversampling (see [`KernelAProjectionParams`]); size its tables
//! first with [`kernel_table_bytes`] and tabulate the imaging beam out to
//! [`kernel_beam_half_width_rad`].
//!
//! Conventions:
//! - uvw in metres per row (antenna2 − antenna1), converted to wavelengths per channel as ν/c.
//! - Visibility sign exp(−2πi (u l + v m + w (n − 1))); imaging uses exp(+…) and takes the real
//!   part (a real sky): I(l, m) = Re Σ w V exp(+2πi (u l + v m + w (n − 1))).
//! - Images `[ny][nx]` on [`beamfloor_core::ImageGeometry`] (x towards decreasing l); models in
//!   Jy per pixel, dirty images normalised by the sum of weights.
//! - Stokes I = (RR + LL)/2: both hands gridded with their own weights.
//! - All accumulation in f64.
//!
//! ```
//! use beamfloor_core::ImageGeometry;
//! use beamfloor_imaging::{GridPlan, GridderParams, ImagingOperator, WRange};
//! let geometry = ImageGeometry::new(64, 64, 1e-3);
//! let plan = GridPlan::new(geometry, &GridderParams::default(), WRange::new(-50.0, 50.0).unwrap())
//!     .unwrap();
//! assert_eq!(plan.geometry(), geometry);
//! assert_eq!(plan.kernel().support(), 8); // ε = 1e-7 → W = 8
//! ```

mod aproj;
mod direct;
mod dirty;
mod disjoint;
mod error;
#[cfg(test)]
mod fft2;
mod grid_pool;
mod gridder;
mod kernel;
mod kernel_poly;
mod operator;
mod params;
mod plan;
mod plane_fft;
mod quadrature;
mod weighting;

pub use aproj::{
    first_null_radius_rad, fitted_conjugate_frequencies, flat_noise, flat_sky,
    kernel_beam_half_width_rad, kernel_table_bytes, main_lobe_mismatch,
    reciprocal_conjugate_frequency, screen_cache_bytes, AProjection, AProjectionParams,
    ChannelSensitivities, ConjugateFitParams, ConjugateFrequency, DirectBeamOperator,
    KernelAProjection, KernelAProjectionParams, KernelInterpolation, KernelTableEstimate,
    KernelView,
};
pub use direct::DirectOperator;
pub use dirty::{dirty_images, predict_visibilities, DirtyImages, TaylorTerms};
pub use error::ImagingError;
pub use kernel::{EsKernel, MAX_EPSILON, MIN_EPSILON};
pub use operator::{check_degrid_args, check_grid_args, GridOutput, ImagingOperator};
pub use params::{GridderParams, WRange, WTerm};
pub use plan::{good_fft_size, GridPlan, UPSAMPLING};
pub use quadrature::gauss_legendre;
pub use weighting::{imaging_weights, weight_density, Weighting};
