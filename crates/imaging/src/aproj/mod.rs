//! A-projection imaging operators: the beam's direction dependence applied inside the
//! grid/degrid pair, the sensitivity image that normalises their dirty images, wideband
//! (conjugate-frequency) gridding, and a slow direct-sum reference.

mod conjugate;
mod direct_beam;
mod operator;
mod screens;
mod sensitivity;

pub use conjugate::{
    first_null_radius_rad, fitted_conjugate_frequencies, main_lobe_mismatch,
    reciprocal_conjugate_frequency, ConjugateFitParams,
};
pub use direct_beam::DirectBeamOperator;
pub use operator::{AProjection, AProjectionParams, ConjugateFrequency};
pub use screens::screen_cache_bytes;
pub use sensitivity::{flat_noise, flat_sky};
