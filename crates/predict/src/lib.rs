//! Truth prediction: the visibilities an ideal correlator would record for a simulated sky, array
//! and set of dish beams, plus thermal noise.
//!
//! This crate owns the measurement equation evaluated directly, per visibility and per sky
//! component, with the exact w-term ([`predict_visibilities`]), the radiometer-equation noise
//! ([`NoiseModel`], [`add_thermal_noise`], [`stokes_i_image_noise_jy`]), and the [`VisSet`] that
//! holds the result ([`simulate`] builds one). It is the truth every imaging strategy is judged
//! against, so it shares no code with the gridder and never approximates: no gridding, no FFTs.
//! It knows nothing about configs, files or imaging; beams come through
//! [`beamfloor_core::VoltageBeam`] and are never modelled here (rotation, frequency scaling,
//! squint, pointing and ripple are the beam model's switches; the w-term is this crate's).
//!
//! Conventions: uvw in metres for the row's baseline (antenna2 − antenna1 positions), converted to
//! wavelengths per channel; V(u, v, w) = Σ S · E_i E_j* · exp(−2πi (u l + v m + w (n − 1))) with
//! i = antenna1, j = antenna2; a point source's flux is not divided by n. Data polarization axis
//! is `[RR, LL]`. Noise streams: `derive_seed(seed, SeedPurpose::Noise, row)`.
//!
//! ```
//! use beamfloor_array::{Layout, Observation, ObservationParams};
//! use beamfloor_predict::{predict_visibilities, PredictParams};
//! use beamfloor_sky::{Component, Spectrum};
//!
//! let layout = Layout::from_text("0 0 0\n100 0 0\n0 150 0\n", 15.0).unwrap();
//! let obs = Observation::new(&ObservationParams {
//!     layout,
//!     latitude_rad: 0.5,
//!     phase_centre_ra_rad: 1.0,
//!     phase_centre_dec_rad: 0.6,
//!     hour_angle_start_rad: -0.1,
//!     hour_angle_end_rad: 0.1,
//!     integration_s: 600.0,
//!     band_min_hz: 1.0e9,
//!     band_max_hz: 2.0e9,
//!     n_channels: 8,
//!     elevation_limit_rad: 0.0,
//! }).unwrap();
//! // A 1 Jy flat-spectrum point at the phase centre, no beam: V = 1 everywhere.
//! let sky = [Component::point("centre", 0.0, 0.0, Spectrum::flat(1.0, 1.5e9)?)?];
//! let vis = predict_visibilities(&obs, &sky, None, &PredictParams::default(), &|_rows| {})?;
//! assert!(vis.iter().all(|v| (v.re - 1.0).abs() < 1e-15 && v.im == 0.0));
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```

mod beam_table;
mod error;
mod measurement;
mod noise;
mod params;
mod simulate;
mod visset;

pub use error::PredictError;
pub use measurement::predict_visibilities;
pub use noise::{add_thermal_noise, stokes_i_image_noise_jy, unflagged_samples_per_correlation};
pub use params::{
    NoiseModel, PredictParams, SimulationParams, DEFAULT_BEAM_CACHE_BYTES,
    DEFAULT_PHASE_REFRESH_CHANNELS,
};
pub use simulate::simulate;
pub use visset::{VisSet, VisSetError};
