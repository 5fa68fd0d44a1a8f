//! Dish beam models: an aperture in metres, its tabulated voltage pattern, and the time,
//! frequency and polarization effects that make the beam change during an observation.
//!
//! This crate owns the antenna's voltage pattern E_p(l, m; ν, t, antenna) and everything derived
//! from it (power pattern, baseline product, the averaged beam that standard imaging assumes and
//! its Taylor coefficients, power-level radii, arrays for pictures). It knows nothing about
//! skies, visibilities, antenna positions, configs or files: parallactic angles and times come
//! in as plain vectors.
//!
//! Model and conventions:
//! - The aperture ([`ApertureParams`]: diameter, central blockage, radial feed-support legs,
//!   illumination taper) is sampled on a grid of cells ([`ApertureSamples`]); the voltage pattern
//!   is its Fourier transform Ã(p, q) = Σ w_k exp(2πi (p x_k + q y_k)) as a function of
//!   (p, q) = (l ν/c, m ν/c) in cycles per metre, normalised as E = Ã(p, q)/Ã(0, 0) so that the
//!   modelled aperture itself has E = 1 at its beam centre. It is tabulated once
//!   ([`PatternTable`]) and every channel is a lookup (separable Lagrange interpolation).
//! - Antenna frame: aperture y is "up" in elevation. For an alt-az mount the frame turns on the
//!   sky by the parallactic angle q: the up axis lies at sky position angle q (measured from
//!   north, +m, through east, +l), so a pointing offset upward in elevation moves the beam
//!   centre towards the zenith. Squint and pointing offsets live in the antenna frame and turn
//!   with it. Equatorial mounts do not turn.
//! - Effects ([`EffectParams`]) switch off one at a time ([`Effect`], [`EffectParams::without`]).
//! - Angles in radians, frequencies in hertz, lengths in metres.
//!
//! ```
//! use beamfloor_beam::{DishBeam, DishBeamParams};
//! use beamfloor_core::{Pol, VoltageBeam};
//! let params = DishBeamParams { max_abs_lm: 0.02, ..DishBeamParams::default() };
//! let beam = DishBeam::new(&params, vec![0.0, 0.3], vec![0.0, 600.0]).unwrap();
//! let e0 = beam.voltage(0, 1, 1.4e9, Pol::R, 0.0, 0.0);
//! assert!((e0.re - 1.0).abs() < 1e-7);
//! let r50 = beam.power_level_radius_rad(1.4e9, 0.5).unwrap();
//! assert!((beam.power(0, 0, 1.4e9, Pol::R, r50, 0.0) - 0.5).abs() < 0.02);
//! ```

#![deny(missing_docs)]

mod aperture;
mod average;
mod dish_beam;
mod effects;
mod error;
mod lagrange;
mod pictures;
mod pointing;
mod profile;
mod table;

pub use aperture::{ApertureParams, ApertureSamples, FeedLegs, Taper};
pub use dish_beam::{DishBeam, DishBeamParams};
pub use effects::{Effect, EffectParams, Mount, PointingParams, RippleParams, SquintParams};
pub use error::BeamError;
pub use pictures::RadialProfile;
pub use table::{PatternTable, TableParams, MAX_TABLE_NODES};
