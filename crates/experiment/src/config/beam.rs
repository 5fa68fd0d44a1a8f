//! `[beam]`: the dish aperture model from which the voltage beams are computed, plus the
//! effects that make beams differ between polarizations, antennas and times.

use serde::{Deserialize, Serialize};

use super::check::Checker;

/// The `[beam]` section (optional; every key has a default). The same keys, all optional, form
/// a strategy's `imaging_beam` override ([`BeamOverride`]).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct BeamConfig {
    /// Diameter of the dish aperture, metres (> 0). Default: `13.5`.
    pub dish_diameter_m: f64,
    /// Diameter of the central blockage (subreflector or feed), metres, within
    /// [0, dish_diameter_m). Default: `0.0` (no blockage).
    pub blockage_diameter_m: f64,
    /// Feed-support legs that shadow the aperture. Default: none (`count = 0`).
    pub legs: LegsConfig,
    /// Illumination taper across the aperture. Default: parabolic on a pedestal with a
    /// 10 dB edge taper in both axes.
    pub taper: Taper,
    /// How the dish is mounted; an alt-az mount makes the beam rotate on the sky with the
    /// parallactic angle, an equatorial mount does not. Default: `"alt-az"`.
    pub mount: Mount,
    /// Offset of each circular hand's beam from the pointing centre, as a fraction of the
    /// half-power beam width (R and L move in opposite directions, so the offset scales with
    /// wavelength), within [0, 0.5]. Default: `0.0` (no squint).
    pub squint_fraction_of_hpbw: f64,
    /// Pointing errors. Default: none.
    pub pointing: PointingConfig,
    /// A standing-wave gain ripple with frequency. Default: none (`amplitude = 0`).
    pub ripple: RippleConfig,
}

impl Default for BeamConfig {
    fn default() -> Self {
        Self {
            dish_diameter_m: 13.5,
            blockage_diameter_m: 0.0,
            legs: LegsConfig::default(),
            taper: Taper::default(),
            mount: Mount::AltAz,
            squint_fraction_of_hpbw: 0.0,
            pointing: PointingConfig::default(),
            ripple: RippleConfig::default(),
        }
    }
}

/// `[beam.legs]`: straight feed-support legs from the blockage to the rim, evenly spaced in
/// angle.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct LegsConfig {
    /// Number of legs, within 0..=16. Default: `0`.
    pub count: u32,
    /// Width of each leg's shadow on the aperture, metres, within [0, dish_diameter_m / 4];
    /// must be > 0 when `count > 0`. Default: `0.0`.
    pub width_m: f64,
    /// Angle of the first leg from the aperture's north axis (at zero parallactic angle),
    /// degrees, within [-360, 360]. Default: `0.0`.
    pub angle_deg: f64,
}

/// Aperture illumination.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Taper {
    /// Uniform illumination: `taper = "uniform"`.
    Uniform,
    /// `[beam.taper.parabolic-on-pedestal]`: amplitude p + (1 − p)(1 − (2ρ/D)²) with the
    /// pedestal p set by the edge taper.
    ParabolicOnPedestal(PedestalTaper),
}

impl Default for Taper {
    fn default() -> Self {
        Taper::ParabolicOnPedestal(PedestalTaper::default())
    }
}

/// The edge taper of a parabolic-on-pedestal illumination.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PedestalTaper {
    /// Power at the rim relative to the centre, dB below the centre, within [0, 40].
    /// Default: `10.0`.
    #[serde(default = "default_edge_taper_db")]
    pub edge_taper_db: f64,
    /// A different edge taper along the aperture's y (north) axis, dB within [0, 40], for an
    /// elliptical illumination. Default: the same as `edge_taper_db`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub edge_taper_y_db: Option<f64>,
}

fn default_edge_taper_db() -> f64 {
    10.0
}

impl Default for PedestalTaper {
    fn default() -> Self {
        Self { edge_taper_db: default_edge_taper_db(), edge_taper_y_db: None }
    }
}

/// Dish mount.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Mount {
    /// Altitude-azimuth: the beam rotates on the sky with the parallactic angle.
    AltAz,
    /// Equatorial: the beam keeps its orientation on the sky.
    Equatorial,
}

/// `[beam.pointing]`: pointing errors per antenna, in arcsec on the sky; the three parts add.
/// Offsets live in the antenna frame (cross-elevation x, elevation y), which for an alt-az mount
/// turns on the sky with the parallactic angle; at parallactic angle 0, x is east and y north.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct PointingConfig {
    /// Fixed offsets `[x, y]` in arcsec (antenna frame, see above): either one pair, applied to
    /// every antenna, or one pair per antenna in antenna order (the simulation currently takes
    /// only the single pair and says so). Default: `[]` (none).
    #[serde(deserialize_with = "super::pairs::pairs")]
    pub offsets_arcsec: Vec<[f64; 2]>,
    /// Standard deviation of a random, constant offset per antenna and axis, arcsec (≥ 0).
    /// Default: `0.0`.
    pub rms_arcsec: f64,
    /// Standard deviation of a random, constant drift rate per antenna and axis, arcsec per
    /// hour (≥ 0); the offset grows linearly from the start of the track. Default: `0.0`.
    pub drift_arcsec_per_hour: f64,
}

/// `[beam.ripple]`: gain × (1 + amplitude · sin(2π ν / period)), a standing wave between the
/// feed and the dish.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct RippleConfig {
    /// Fractional amplitude of the voltage-gain ripple, within [0, 0.5]. Default: `0.0`.
    pub amplitude: f64,
    /// Period of the ripple in frequency, MHz (> 0). Default: `17.0`.
    pub period_mhz: f64,
}

impl Default for RippleConfig {
    fn default() -> Self {
        Self { amplitude: 0.0, period_mhz: 17.0 }
    }
}

/// A strategy's `imaging_beam` table: the same keys as `[beam]`, each optional; a key given
/// here replaces the `[beam]` value in the beam model the strategy images with (the truth keeps
/// `[beam]`), for deliberate model mismatch. Tables (`legs`, `taper`, `pointing`, `ripple`)
/// are replaced whole.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct BeamOverride {
    /// Replaces `beam.dish_diameter_m`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dish_diameter_m: Option<f64>,
    /// Replaces `beam.blockage_diameter_m`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub blockage_diameter_m: Option<f64>,
    /// Replaces `beam.legs`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub legs: Option<LegsConfig>,
    /// Replaces `beam.taper`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub taper: Option<Taper>,
    /// Replaces `beam.mount`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mount: Option<Mount>,
    /// Replaces `beam.squint_fraction_of_hpbw`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub squint_fraction_of_hpbw: Option<f64>,
    /// Replaces `beam.pointing`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub pointing: Option<PointingConfig>,
    /// Replaces `beam.ripple`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ripple: Option<RippleConfig>,
    /// Which way the imaging beam turns on the sky as the parallactic angle q changes (alt-az
    /// mounts only; `[beam]` has no such key, the truth always turns by +q):
    /// `"parallactic"` turns it by +q like the truth; `"reversed"` turns it by −q, a deliberate
    /// model mismatch ("what if my imaging beam rotates the wrong way?") that shows how much of
    /// a correction rests on getting the sense of rotation right. Needs the imaging beam's
    /// mount to be `"alt-az"` (an equatorial beam does not turn). Only A-projection strategies
    /// use it; the averaged beam of `"plain"` and `"w"` is symmetrized over azimuth, which no
    /// rotation changes. Default: `"parallactic"`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rotation: Option<BeamRotation>,
}

/// The sense in which an imaging beam turns with the parallactic angle (see
/// [`BeamOverride::rotation`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum BeamRotation {
    /// By +q, as the truth beam turns.
    #[default]
    Parallactic,
    /// By −q: the wrong sense, on purpose.
    Reversed,
}

impl BeamRotation {
    /// The factor the parallactic angle is multiplied by before the imaging beam is turned:
    /// +1 or −1.
    pub fn sign(self) -> f64 {
        match self {
            BeamRotation::Parallactic => 1.0,
            BeamRotation::Reversed => -1.0,
        }
    }
}

impl BeamOverride {
    /// The beam that results from applying this override to `base`.
    pub fn apply_to(&self, base: &BeamConfig) -> BeamConfig {
        BeamConfig {
            dish_diameter_m: self.dish_diameter_m.unwrap_or(base.dish_diameter_m),
            blockage_diameter_m: self.blockage_diameter_m.unwrap_or(base.blockage_diameter_m),
            legs: self.legs.clone().unwrap_or_else(|| base.legs.clone()),
            taper: self.taper.clone().unwrap_or_else(|| base.taper.clone()),
            mount: self.mount.unwrap_or(base.mount),
            squint_fraction_of_hpbw: self
                .squint_fraction_of_hpbw
                .unwrap_or(base.squint_fraction_of_hpbw),
            pointing: self.pointing.clone().unwrap_or_else(|| base.pointing.clone()),
            ripple: self.ripple.clone().unwrap_or_else(|| base.ripple.clone()),
        }
    }

    /// The sense of rotation of the imaging beam (`rotation`, default `"parallactic"`).
    pub fn rotation(&self) -> BeamRotation {
        self.rotation.unwrap_or_default()
    }

    /// Checks the keys that exist only in an override; `p` is its key path
    /// (`strategy[i].imaging_beam`), `resolved` the beam it produces ([`BeamOverride::apply_to`]).
    pub(crate) fn check(&self, c: &mut Checker, p: &str, resolved: &BeamConfig) {
        if self.rotation() == BeamRotation::Reversed && resolved.mount == Mount::Equatorial {
            c.fail(
                &format!("{p}.rotation"),
                "\"reversed\"",
                "needs an imaging beam that turns (mount = \"alt-az\"); an equatorial beam has \
                 no rotation to reverse",
            );
        }
    }
}

impl BeamConfig {
    /// Checks the beam's own rules; `p` is the table's key path (`beam` or
    /// `strategy[i].imaging_beam`), `antennas` the antenna count when the layout fixes it.
    pub(crate) fn check(&self, c: &mut Checker, p: &str, antennas: Option<u64>) {
        let d = self.dish_diameter_m;
        c.positive(&format!("{p}.dish_diameter_m"), d, "metres");
        let b = self.blockage_diameter_m;
        if !(b.is_finite() && b >= 0.0) {
            c.fail(&format!("{p}.blockage_diameter_m"), b, "must be >= 0 (metres)");
        } else if d.is_finite() && d > 0.0 && b >= d {
            c.fail(
                &format!("{p}.blockage_diameter_m"),
                b,
                format!("must be smaller than dish_diameter_m = {d} (metres)"),
            );
        }
        let legs = &self.legs;
        if legs.count > 16 {
            c.fail(&format!("{p}.legs.count"), legs.count, "must be within 0..=16");
        }
        if !(legs.width_m.is_finite() && legs.width_m >= 0.0) {
            c.fail(&format!("{p}.legs.width_m"), legs.width_m, "must be >= 0 (metres)");
        } else if legs.count > 0 && legs.width_m == 0.0 {
            c.fail(
                &format!("{p}.legs.width_m"),
                legs.width_m,
                format!("must be > 0 (metres) when legs.count = {}", legs.count),
            );
        } else if d.is_finite() && d > 0.0 && legs.width_m > d / 4.0 {
            c.fail(
                &format!("{p}.legs.width_m"),
                legs.width_m,
                format!("must be at most dish_diameter_m / 4 = {} (metres)", d / 4.0),
            );
        }
        c.in_range(&format!("{p}.legs.angle_deg"), legs.angle_deg, -360.0, 360.0, "degrees");
        if let Taper::ParabolicOnPedestal(t) = &self.taper {
            let tp = format!("{p}.taper.parabolic-on-pedestal");
            c.in_range(&format!("{tp}.edge_taper_db"), t.edge_taper_db, 0.0, 40.0, "dB");
            if let Some(y) = t.edge_taper_y_db {
                c.in_range(&format!("{tp}.edge_taper_y_db"), y, 0.0, 40.0, "dB");
            }
        }
        c.in_range(
            &format!("{p}.squint_fraction_of_hpbw"),
            self.squint_fraction_of_hpbw,
            0.0,
            0.5,
            "fraction of the half-power beam width",
        );
        let pt = &self.pointing;
        for (i, pair) in pt.offsets_arcsec.iter().enumerate() {
            if !pair.iter().all(|v| v.is_finite() && v.abs() <= 36000.0) {
                c.fail(
                    &format!("{p}.pointing.offsets_arcsec[{i}]"),
                    format!("[{}, {}]", pair[0], pair[1]),
                    "each offset must be a finite number within [-36000, 36000] (arcsec)",
                );
            }
        }
        if let (Some(n), len) = (antennas, pt.offsets_arcsec.len() as u64) {
            if len > 1 && len != n {
                c.fail(
                    &format!("{p}.pointing.offsets_arcsec"),
                    format!("({len} pairs)"),
                    format!("must hold one [east, north] pair for all antennas or one per antenna ({n})"),
                );
            }
        }
        c.non_negative(&format!("{p}.pointing.rms_arcsec"), pt.rms_arcsec, "arcsec");
        c.non_negative(
            &format!("{p}.pointing.drift_arcsec_per_hour"),
            pt.drift_arcsec_per_hour,
            "arcsec per hour",
        );
        c.in_range(&format!("{p}.ripple.amplitude"), self.ripple.amplitude, 0.0, 0.5, "fraction");
        c.positive(&format!("{p}.ripple.period_mhz"), self.ripple.period_mhz, "MHz");
    }
}
