//! `[array]`: where the antennas stand and the site's latitude.

use std::path::PathBuf;

use serde::{Deserialize, Serialize};

use super::check::Checker;

/// The `[array]` section (required).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ArrayConfig {
    /// A label for the (invented) site, shown in reports. Default: empty.
    #[serde(default)]
    pub site_name: String,
    /// Geodetic latitude of the site in degrees, north positive, within [-90, 90].
    /// Default: `-30.0`.
    #[serde(default = "default_latitude_deg")]
    pub latitude_deg: f64,
    /// How the antenna positions are obtained. Required: exactly one of
    /// `[array.layout] file = "..."`, `[array.layout.log-spiral]` or `[array.layout.random-disc]`.
    pub layout: Layout,
}

fn default_latitude_deg() -> f64 {
    -30.0
}

/// The antenna layout.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Layout {
    /// A text file of antenna positions in local east-north-up metres, one antenna per line
    /// (`east north up`, separated by spaces or commas; `#` starts a comment). A relative path
    /// is relative to the folder of the config file.
    File(PathBuf),
    /// Antennas on equally spaced logarithmic-spiral arms.
    LogSpiral(LogSpiralLayout),
    /// Antennas drawn uniformly at random inside a disc, with a minimum spacing.
    RandomDisc(RandomDiscLayout),
}

/// Log-spiral arms: on every arm the radii grow geometrically from the inner to the outer
/// radius, and the arm turns by `twist_deg` over that range. Arm `k` starts at azimuth
/// `k · 360° / arms` (east of north) plus `rotation_deg`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LogSpiralLayout {
    /// Number of arms, at least 1. Default: `3`.
    #[serde(default = "default_arms")]
    pub arms: u32,
    /// Antennas on each arm, at least 1 (at least 2 antennas in total). Required.
    pub antennas_per_arm: u32,
    /// Radius of the innermost antenna of each arm, metres (> 0). Required.
    pub inner_radius_m: f64,
    /// Radius of the outermost antenna of each arm, metres (> inner radius). Required.
    pub outer_radius_m: f64,
    /// Total turn of an arm from its inner to its outer antenna, degrees, within [-1080, 1080].
    /// Default: `180.0`.
    #[serde(default = "default_twist_deg")]
    pub twist_deg: f64,
    /// Azimuth of the first arm's inner antenna, degrees east of north. Default: `0.0`.
    #[serde(default)]
    pub rotation_deg: f64,
}

fn default_arms() -> u32 {
    3
}

fn default_twist_deg() -> f64 {
    180.0
}

/// Antennas at uniformly random positions inside a disc.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RandomDiscLayout {
    /// Number of antennas, at least 2. Required.
    pub count: u32,
    /// Radius of the disc, metres (> 0). Required.
    pub radius_m: f64,
    /// Smallest allowed distance between two antennas, metres; must exceed the dish diameter.
    /// Default: 1.5 × `beam.dish_diameter_m` (filled in when the config is resolved).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min_spacing_m: Option<f64>,
    /// Added to the purpose index when deriving this layout's seed from the experiment seed, so
    /// that different layouts can be drawn with one experiment seed. Default: `0`.
    #[serde(default)]
    pub seed_offset: u64,
}

impl Layout {
    /// The number of antennas, when the config alone determines it (generated layouts).
    pub fn antenna_count(&self) -> Option<u64> {
        match self {
            Layout::File(_) => None,
            Layout::LogSpiral(s) => Some(u64::from(s.arms) * u64::from(s.antennas_per_arm)),
            Layout::RandomDisc(d) => Some(u64::from(d.count)),
        }
    }
}

impl ArrayConfig {
    pub(crate) fn check(&self, c: &mut Checker) {
        c.in_range("array.latitude_deg", self.latitude_deg, -90.0, 90.0, "degrees");
        match &self.layout {
            Layout::File(path) => {
                if path.as_os_str().is_empty() {
                    c.fail("array.layout.file", "\"\"", "must name a file of antenna positions");
                }
            }
            Layout::LogSpiral(s) => {
                let p = "array.layout.log-spiral";
                c.at_least(&format!("{p}.arms"), s.arms, 1, "");
                c.at_least(&format!("{p}.antennas_per_arm"), s.antennas_per_arm, 1, "");
                if u64::from(s.arms) * u64::from(s.antennas_per_arm) == 1 {
                    c.fail(
                        &format!("{p}.antennas_per_arm"),
                        s.antennas_per_arm,
                        "arms × antennas_per_arm must be at least 2 (an interferometer needs a baseline)",
                    );
                }
                c.positive(&format!("{p}.inner_radius_m"), s.inner_radius_m, "metres");
                c.positive(&format!("{p}.outer_radius_m"), s.outer_radius_m, "metres");
                if s.outer_radius_m <= s.inner_radius_m {
                    c.fail(
                        &format!("{p}.outer_radius_m"),
                        s.outer_radius_m,
                        format!("must be > inner_radius_m = {} (metres)", s.inner_radius_m),
                    );
                }
                c.in_range(&format!("{p}.twist_deg"), s.twist_deg, -1080.0, 1080.0, "degrees");
                c.in_range(&format!("{p}.rotation_deg"), s.rotation_deg, -360.0, 360.0, "degrees");
            }
            Layout::RandomDisc(d) => {
                let p = "array.layout.random-disc";
                c.at_least(&format!("{p}.count"), d.count, 2, "antennas");
                c.positive(&format!("{p}.radius_m"), d.radius_m, "metres");
                if let Some(s) = d.min_spacing_m {
                    c.positive(&format!("{p}.min_spacing_m"), s, "metres");
                }
                if d.seed_offset > i64::MAX as u64 {
                    c.fail(
                        &format!("{p}.seed_offset"),
                        d.seed_offset,
                        "must fit a 64-bit signed integer",
                    );
                }
            }
        }
    }
}
