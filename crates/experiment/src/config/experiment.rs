//! `[experiment]`: what the run is called and the seed every random draw derives from.

use serde::{Deserialize, Serialize};

use super::check::Checker;

/// The `[experiment]` section (required).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ExperimentSection {
    /// Short name of the experiment, used in run-folder names and reports. Required; letters,
    /// digits, `-`, `_` and `.` only, so that it is safe as a file name.
    pub name: String,
    /// Master seed from which every random draw (noise, random layouts, pointing errors) is
    /// derived. Default: `1`.
    #[serde(default = "default_seed")]
    pub seed: u64,
    /// Free text shown in the report. Default: empty.
    #[serde(default)]
    pub description: String,
}

fn default_seed() -> u64 {
    1
}

impl ExperimentSection {
    pub(crate) fn check(&self, c: &mut Checker) {
        c.file_name_like("experiment.name", &self.name);
        if self.seed > i64::MAX as u64 {
            c.fail(
                "experiment.seed",
                self.seed,
                "must be at most 9223372036854775807 (TOML integers are 64-bit signed)",
            );
        }
    }
}
