//! Experiments: config schema and validation, the runner, run folders.
//!
//! (Filled by the foundation and experiments issues.) The only library crate that knows about configs.
