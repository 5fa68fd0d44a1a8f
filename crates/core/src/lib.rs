//! The conventions every beamfloor crate shares, fixed once and tested once.
//!
//! This crate owns the few things two or more compute crates must agree on and that belong to
//! none of them: physical constants, the image pixel ↔ direction-cosine mapping, the
//! polarization products, the derivation of reproducible random seeds, the Taylor weight of a
//! channel, and the [`VoltageBeam`] trait through which truth prediction and imaging ask for an
//! antenna's voltage pattern without knowing how it is modelled. It knows nothing about configs,
//! files, arrays of antennas, skies or imaging.
//!
//! Conventions (see also the workspace DESIGN notes):
//! - SI units inside: metres, seconds, hertz, radians.
//! - Direction cosines (l, m) relative to the phase centre, l towards east, m towards north.
//! - Images are `[iy][ix]` (row-major, y slowest); pixel x runs towards *decreasing* l (east on the
//!   left, as astronomers display the sky and as FITS stores it with a negative `CDELT1`).
//!
//! ```
//! use beamfloor_core::ImageGeometry;
//! let g = ImageGeometry::new(64, 64, 1e-4);
//! let (l, m) = g.lm_of_pixel(32.0, 32.0);
//! assert_eq!((l, m), (0.0, 0.0));
//! let (x, y) = g.pixel_of_lm(2e-4, -1e-4);
//! assert_eq!((x, y), (30.0, 31.0));
//! ```

mod beam_trait;
mod constants;
mod geometry;
mod polarization;
mod seed;
mod taylor;

pub use beam_trait::VoltageBeam;
pub use constants::SPEED_OF_LIGHT_M_PER_S;
pub use geometry::ImageGeometry;
pub use polarization::{Correlation, Pol};
pub use seed::{derive_seed, SeedPurpose};
pub use taylor::taylor_weight;
