//! Truth prediction: the visibilities an ideal correlator would record for a simulated sky, array
//! and set of dish beams, plus thermal noise.
//!
//! This crate owns the measurement equation evaluated directly, per visibility and per sky
//! component, with the exact w-term, and the [`VisSet`] that holds its result. It is the truth
//! every imaging strategy is judged against, so it shares no code with the gridder and never
//! approximates: no gridding, no FFTs. It knows nothing about configs, files or imaging.
//!
//! Conventions: uvw in metres for the row's baseline (antenna2 − antenna1 positions), converted to
//! wavelengths per channel; V(u, v, w) = Σ S · E_i E_j* · exp(−2πi (u l + v m + w (n − 1))); a point
//! source's flux is not divided by n. Data polarization axis is `[RR, LL]`.

mod visset;

pub use visset::{VisSet, VisSetError};
