//! The scenario: a validated config mapped onto the compute crates' types (the observation, the
//! true sky, the truth beams, the noise), in SI units. This is the one place that converts config
//! units (degrees, hours, GHz, arcmin) into the SI units the compute crates take.

mod describe;
mod error;
mod observation;

pub use describe::{describe, imaging_bytes, nyquist_cell_rad, visibility_set_bytes};
pub use error::ScenarioError;
pub use observation::build_observation;
