//! Experiments for beamfloor: the config schema and its validation (this crate is the only
//! library crate that knows about config files).
//!
//! What it owns: reading a TOML experiment description, checking it before any work starts and
//! reporting every problem with file, line, column, key path, value and the allowed range; the
//! resolved config (all defaults written out) and a stable hash of the part that determines the
//! simulated truth. What it must not know (in the config module): the compute crates' types —
//! the mapping onto them lives beside the runner.
//!
//! Conventions: config keys carry their units (`dish_diameter_m`, `band_ghz`, `integration_s`,
//! `*_arcmin`, `*_arcsec`, `*_deg`); key paths in messages are dotted with 0-based list indices
//! (`strategy[2].clean.gain`).
//!
//! ```no_run
//! let config = beamfloor_experiment::load_config("configs/demo.toml")?;
//! println!("{} strategies, truth {}", config.strategy.len(), config.truth_hash());
//! # Ok::<(), beamfloor_experiment::ConfigError>(())
//! ```

pub mod config;
pub mod decompose;
pub mod pictures;
pub mod run;
pub mod scenario;
pub mod simulation;
pub mod sweep;

pub use config::{load_config, parse_config, Config, ConfigError};
