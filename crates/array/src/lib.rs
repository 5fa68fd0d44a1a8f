//! Array geometry: antenna layouts, the site, the timeline, channels and the uvw of every sample.
//!
//! This crate owns where the antennas are (parsed from text or generated as log-spiral arms or a
//! random disc with a minimum spacing), how their baselines project onto the sky (equatorial XYZ
//! and the uvw rotation), when the array samples (hour angles, times, parallactic angles and
//! elevations, with low samples flagged) and at which frequencies. [`Observation`] puts it all
//! together as rows of (antenna pair, time, uvw). It knows nothing about skies, beams,
//! visibilities, configs or files: a layout file is read elsewhere and its text handed to
//! [`parse_enu_text`].
//!
//! Conventions (see also the workspace DESIGN notes):
//! - SI units: metres, seconds, hertz, radians. uvw is in metres; multiply by ν / c for
//!   wavelengths.
//! - Antennas in local east-north-up metres; equatorial X towards (H = 0, δ = 0), Y towards
//!   (H = −6h, δ = 0), Z to the pole (Thompson, Moran & Swenson, §4.1).
//! - A row's uvw is for the baseline position(antenna2) − position(antenna1), antenna1 < antenna2;
//!   rows are ordered by baseline (lexicographic), then time. Cross-correlations only.
//! - Parallactic angle positive west of the meridian (H > 0).
//! - Hour angle advances at [`SIDEREAL_SECONDS_PER_SOLAR_SECOND`] × 2π / 86400 rad per second.
//! - Random layouts draw from `ChaCha8Rng` seeded by
//!   `beamfloor_core::derive_seed(seed, SeedPurpose::Layout, 0)`.
//!
//! ```
//! use beamfloor_array::{Layout, Observation, ObservationParams};
//! let layout = Layout::from_text("# east north up (m)\n0 0 0\n100 0 0\n0 150 0\n", 15.0)?;
//! let obs = Observation::new(&ObservationParams {
//!     layout,
//!     latitude_rad: 30f64.to_radians(),
//!     phase_centre_ra_rad: 1.0,
//!     phase_centre_dec_rad: 50f64.to_radians(),
//!     hour_angle_start_rad: (-15f64).to_radians(), // −1 h of hour angle
//!     hour_angle_end_rad: 15f64.to_radians(),      // +1 h
//!     integration_s: 600.0,
//!     band_min_hz: 1.0e9,
//!     band_max_hz: 2.0e9,
//!     n_channels: 4,
//!     elevation_limit_rad: 15f64.to_radians(),
//! })?;
//! assert_eq!((obs.n_baselines(), obs.n_times(), obs.n_channels()), (3, 11, 4));
//! assert_eq!(obs.n_visibilities(), 3 * 11 * 4 * 2);
//! // An east-west baseline of 100 m, seen along any direction, is at most 100 m long in uvw.
//! let r = &obs.rows[0];
//! assert_eq!((r.antenna1, r.antenna2, r.time_index), (0, 1, 0));
//! let len = r.uvw_m.iter().map(|x| x * x).sum::<f64>().sqrt();
//! assert!((len - 100.0).abs() < 1e-9);
//! # Ok::<(), beamfloor_array::ArrayError>(())
//! ```

mod angles;
mod channels;
mod coverage;
mod error;
mod generate;
mod layout;
mod observation;
mod site;
mod timeline;
mod uvw;

pub use angles::{elevation, parallactic_angle, transit_elevation};
pub use channels::Channels;
pub use error::ArrayError;
pub use generate::{log_spiral, random_disc, LogSpiralParams, RandomDiscParams};
pub use layout::{parse_enu_text, Layout};
pub use observation::{Observation, ObservationParams, Row, MAX_ROWS};
pub use site::enu_to_equatorial_xyz;
pub use timeline::{
    Timeline, TimelineParams, HOUR_ANGLE_RATE_RAD_PER_S, MAX_TIME_SAMPLES,
    SIDEREAL_SECONDS_PER_SOLAR_SECOND,
};
pub use uvw::{uvw_m, UvwRotation};
