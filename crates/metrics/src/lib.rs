//! Metrics against the known truth: residual floors, dynamic range, per-source errors.
//!
//! (Filled by the experiments issue.) Knows nothing about configs or files.
