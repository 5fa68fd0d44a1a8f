//! A-projection imaging operators: the beam's direction dependence applied inside the
//! grid/degrid pair, the sensitivity image that normalises their dirty images, wideband
//! (conjugate-frequency) gridding, and a slow direct-sum reference. Two implementations of the
//! same operator: [`AProjection`] applies the A-term exactly on the pixel grid (slow, the
//! reference), [`KernelAProjection`] convolves with oversampled uv-domain A-kernels (fast).

mod conjugate;
mod direct_beam;
mod kernel_operator;
mod kernel_passes;
mod kernel_rows;
mod kernel_sensitivity;
mod kernel_table;
mod operator;
mod screens;
mod sensitivity;

pub use conjugate::{
    first_null_radius_rad, fitted_conjugate_frequencies, main_lobe_mismatch,
    reciprocal_conjugate_frequency, ConjugateFitParams,
};
pub use direct_beam::DirectBeamOperator;
pub use kernel_operator::{
    kernel_table_bytes, KernelAProjection, KernelAProjectionParams, KernelInterpolation,
    KernelTableEstimate, KernelView,
};
pub use kernel_sensitivity::ChannelSensitivities;
pub use kernel_table::kernel_beam_half_width_rad;
pub use operator::{AProjection, AProjectionParams, ConjugateFrequency};
pub use screens::screen_cache_bytes;
pub use sensitivity::{flat_noise, flat_sky};
