//! `[observation]`: where the array points, for how long, and over which band.

use serde::{Deserialize, Serialize};

use super::check::Checker;

/// The `[observation]` section (required, for its `dec_deg`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ObservationConfig {
    /// Right ascension of the phase centre, degrees within [0, 360). Only relative positions
    /// matter to the simulation; it labels the images' WCS. Default: `0.0`.
    #[serde(default)]
    pub ra_deg: f64,
    /// Declination of the phase centre, degrees within [-90, 90]. Required.
    pub dec_deg: f64,
    /// Hour angle of the phase centre at the start of the track, hours within [-12, 12].
    /// Default: `-3.0`.
    #[serde(default = "default_hour_angle_start_h")]
    pub hour_angle_start_h: f64,
    /// Hour angle at the end of the track, hours within [-12, 12], after the start.
    /// Default: `3.0`.
    #[serde(default = "default_hour_angle_end_h")]
    pub hour_angle_end_h: f64,
    /// Length of one integration (one time sample), seconds (> 0, at most the track length).
    /// Default: `60.0`.
    #[serde(default = "default_integration_s")]
    pub integration_s: f64,
    /// Lower and upper edge of the band, GHz: `[lo, hi]` with 0 < lo < hi. Default: `[1.0, 2.0]`.
    #[serde(default = "default_band_ghz", deserialize_with = "super::pairs::pair")]
    pub band_ghz: [f64; 2],
    /// Number of equal-width channels across the band, at least 1. Default: `16`.
    #[serde(default = "default_channels")]
    pub channels: u32,
    /// Reference frequency for spectra, Taylor terms and `beam_power` source positions, GHz
    /// (> 0). Default: the band centre (filled in when the config is resolved).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reference_freq_ghz: Option<f64>,
    /// Samples with the phase centre below this elevation are flagged, degrees within [0, 90).
    /// Default: `15.0`.
    #[serde(default = "default_elevation_limit_deg")]
    pub elevation_limit_deg: f64,
}

fn default_hour_angle_start_h() -> f64 {
    -3.0
}
fn default_hour_angle_end_h() -> f64 {
    3.0
}
fn default_integration_s() -> f64 {
    60.0
}
fn default_band_ghz() -> [f64; 2] {
    [1.0, 2.0]
}
fn default_channels() -> u32 {
    16
}
fn default_elevation_limit_deg() -> f64 {
    15.0
}

impl ObservationConfig {
    /// The reference frequency in GHz: the configured one, or the band centre.
    pub fn reference_freq_ghz(&self) -> f64 {
        self.reference_freq_ghz.unwrap_or(0.5 * (self.band_ghz[0] + self.band_ghz[1]))
    }

    /// Number of time samples: whole integrations that fit in the hour-angle range.
    pub fn time_samples(&self) -> u64 {
        let span_s = (self.hour_angle_end_h - self.hour_angle_start_h) * 3600.0;
        if span_s.is_finite() && self.integration_s > 0.0 && span_s >= self.integration_s {
            // Sidereal vs solar seconds are the runner's concern; the count uses the hour-angle span.
            (span_s / self.integration_s + 1e-9).floor() as u64
        } else {
            0
        }
    }

    /// Channel width in GHz.
    pub fn channel_width_ghz(&self) -> f64 {
        (self.band_ghz[1] - self.band_ghz[0]) / f64::from(self.channels.max(1))
    }

    pub(crate) fn check(&self, c: &mut Checker) {
        let p = "observation";
        if !(self.ra_deg.is_finite() && (0.0..360.0).contains(&self.ra_deg)) {
            c.fail(&format!("{p}.ra_deg"), self.ra_deg, "must be within [0, 360) (degrees)");
        }
        c.in_range(&format!("{p}.dec_deg"), self.dec_deg, -90.0, 90.0, "degrees");
        c.in_range(
            &format!("{p}.hour_angle_start_h"),
            self.hour_angle_start_h,
            -12.0,
            12.0,
            "hours",
        );
        c.in_range(&format!("{p}.hour_angle_end_h"), self.hour_angle_end_h, -12.0, 12.0, "hours");
        if self.hour_angle_end_h <= self.hour_angle_start_h {
            c.fail(
                &format!("{p}.hour_angle_end_h"),
                self.hour_angle_end_h,
                format!(
                    "must be later than hour_angle_start_h = {} (hours)",
                    self.hour_angle_start_h
                ),
            );
        }
        c.positive(&format!("{p}.integration_s"), self.integration_s, "seconds");
        let span_s = (self.hour_angle_end_h - self.hour_angle_start_h) * 3600.0;
        if span_s > 0.0 && self.integration_s > span_s {
            c.fail(
                &format!("{p}.integration_s"),
                self.integration_s,
                format!("must not exceed the track length of {span_s} s"),
            );
        }
        let [lo, hi] = self.band_ghz;
        if !(lo.is_finite() && hi.is_finite() && lo > 0.0 && lo < hi) {
            c.fail(
                &format!("{p}.band_ghz"),
                format!("[{lo}, {hi}]"),
                "must be [lo, hi] with 0 < lo < hi (GHz)",
            );
        }
        c.at_least(&format!("{p}.channels"), self.channels, 1, "channels");
        if let Some(f) = self.reference_freq_ghz {
            c.positive(&format!("{p}.reference_freq_ghz"), f, "GHz");
        }
        let el = self.elevation_limit_deg;
        if !(el.is_finite() && (0.0..90.0).contains(&el)) {
            c.fail(&format!("{p}.elevation_limit_deg"), el, "must be within [0, 90) (degrees)");
        }
    }
}
