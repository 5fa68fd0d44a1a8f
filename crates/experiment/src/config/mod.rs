//! The experiment config: one TOML file that describes the array, the observation, the true
//! sky, the beam and its effects, the imaging strategies to compare and the outputs.
//!
//! This module is pure configuration — serde structs with documented defaults, a validation
//! pass and located errors; it knows nothing of the compute crates' types. Units are in the
//! key names (`dish_diameter_m`, `integration_s`, `band_ghz`) and stay in those units here;
//! conversion to SI happens where the config is mapped onto the compute crates.
//!
//! Loading runs, in order: TOML syntax; the schema (unknown keys with a nearest-key suggestion,
//! wrong types, missing keys, unknown choices); value rules and cross-section rules; then the
//! defaults that depend on other keys are filled in ("resolved"). Every error names the file,
//! line and column, the key path and the value (see [`ConfigError`]).
//!
//! ```
//! use beamfloor_experiment::config::parse_config;
//!
//! let text = r#"
//! [experiment]
//! name = "tiny"
//! [array.layout.random-disc]
//! count = 8
//! radius_m = 300.0
//! [observation]
//! dec_deg = -40.0
//! [[sky.source]]
//! name = "centre"
//! flux_jy = 1.0
//! l_arcmin = 0.0
//! m_arcmin = 0.0
//! [[strategy]]
//! name = "plain"
//! gridding = "plain"
//! "#;
//! let config = parse_config(text, "tiny.toml").unwrap();
//! assert_eq!(config.observation.channels, 16); // a default
//! assert_eq!(config.strategy[0].taylor_terms(), 2);
//! let again = parse_config(&config.to_toml_string().unwrap(), "resolved.toml").unwrap();
//! assert_eq!(again, config);
//! assert_eq!(again.truth_hash(), config.truth_hash());
//! ```

mod array;
mod beam;
mod check;
mod error;
mod experiment;
mod imaging;
mod load;
mod located;
mod observation;
mod output;
mod pairs;
mod root;
mod sky;
mod span_index;
mod strategy;
mod suggest;
mod sweep;
mod sweep_points;
mod truth;

pub use array::{ArrayConfig, Layout, LogSpiralLayout, RandomDiscLayout};
pub use beam::{
    BeamConfig, BeamOverride, BeamRotation, LegsConfig, Mount, PedestalTaper, PointingConfig,
    RippleConfig, Taper,
};
pub use error::{ConfigError, Location};
pub use experiment::ExperimentSection;
pub use imaging::{ImagingConfig, WMethod, Weighting};
pub use load::{load_config, parse_config, resolve_relative};
pub use located::{locate_problems, Problem};
pub use observation::ObservationConfig;
pub use output::OutputConfig;
pub use root::Config;
pub use sky::{SkyConfig, SkySource, SourcePosition, SourceShape};
pub use strategy::{
    CleanConfig, CleanThreshold, ConjugateFrequency, Gridding, Normalization, Spectral,
    StrategyConfig,
};
pub use sweep::{
    KeyPart, SweepConfig, SweepKey, SweepParameter, SweepRange, SweepSeeds, MAX_SWEEP_POINTS,
};
pub use sweep_points::{expand_sweep, load_sweep, ExpandedSweep, SweepPoint};
pub use truth::{NoiseConfig, TruthSwitches};
