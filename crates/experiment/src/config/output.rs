//! `[output]`: where a run's products go and which are written.

use std::path::PathBuf;

use serde::{Deserialize, Serialize};

use super::check::Checker;

/// The `[output]` section (optional; every key has a default).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct OutputConfig {
    /// Folder under which run folders are made; a relative path is relative to the folder of
    /// the config file. Default: `"runs"`.
    pub directory: PathBuf,
    /// Write FITS images (with WCS). Default: `true`.
    pub fits: bool,
    /// Write PNG quick-look images. Default: `true`.
    pub png: bool,
    /// Write plots (uv-coverage, floor decomposition, spectra). Default: `true`.
    pub plots: bool,
    /// Write metrics.json and metrics.csv. Default: `true`.
    pub metrics: bool,
    /// Write report.html. Default: `true`.
    pub html: bool,
    /// Write the simulated visibility set (.npy arrays and a JSON manifest). Default: `false`.
    pub visibilities: bool,
}

impl Default for OutputConfig {
    fn default() -> Self {
        Self {
            directory: PathBuf::from("runs"),
            fits: true,
            png: true,
            plots: true,
            metrics: true,
            html: true,
            visibilities: false,
        }
    }
}

impl OutputConfig {
    pub(crate) fn check(&self, c: &mut Checker) {
        if self.directory.as_os_str().is_empty() {
            c.fail("output.directory", "\"\"", "must name a folder (e.g. \"runs\")");
        }
    }
}
