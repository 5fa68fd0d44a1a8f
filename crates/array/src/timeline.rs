use crate::angles::{elevation, parallactic_angle, transit_elevation};
use crate::error::{check_range, ArrayError};
use std::f64::consts::{FRAC_PI_2, PI, TAU};

/// Seconds of sidereal time (hour angle) that pass in one second of mean solar time (UT1):
/// 1.00273790935.
///
/// It is the ratio of the mean solar day to the mean sidereal day, the rate coefficient of the
/// IAU 1982 expression for Greenwich mean sidereal time in terms of UT1 (Aoki et al. 1982,
/// A&A 105, 359; also in the *Explanatory Supplement to the Astronomical Almanac*), evaluated at
/// J2000 (its drift, 5.9e-11 per century, is far below anything a simulation resolves). The value
/// is recalled from that expression and checked against pyerfa's `gmst82` in the cross-checks. A
/// fixed source's hour angle advances at this rate: H(t) = H₀ + 1.00273790935 · (2π / 86400 s) · t.
pub const SIDEREAL_SECONDS_PER_SOLAR_SECOND: f64 = 1.002_737_909_35;

/// Rate at which a fixed direction's hour angle advances, rad per second of time:
/// [`SIDEREAL_SECONDS_PER_SOLAR_SECOND`] · 2π / 86400.
pub const HOUR_ANGLE_RATE_RAD_PER_S: f64 = SIDEREAL_SECONDS_PER_SOLAR_SECOND * TAU / 86_400.0;

/// Most time samples a timeline may have (a 24-hour track at 0.1 s integrations is 864 000).
pub const MAX_TIME_SAMPLES: usize = 1_000_000;

/// What a [`Timeline`] is built from.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TimelineParams {
    /// Hour angle of the phase centre where the track starts, rad.
    pub hour_angle_start_rad: f64,
    /// Hour angle where the track ends, rad (> start; the range may exceed 2π).
    pub hour_angle_end_rad: f64,
    /// Integration time of one sample, s (> 0).
    pub integration_s: f64,
    /// Declination of the phase centre, rad, in [−π/2, π/2].
    pub declination_rad: f64,
    /// Site latitude, rad, in [−π/2, π/2].
    pub latitude_rad: f64,
    /// Samples whose elevation is below this are flagged, rad, in [−π/2, π/2].
    pub elevation_limit_rad: f64,
}

/// The time samples of an observation: one entry per integration, in time order.
///
/// The samples are as many whole integrations as fit in the hour-angle range, centred in it (the
/// remainder, under one integration, is split equally between both ends). Samples below the
/// elevation limit are kept and flagged, so every baseline has the same number of samples.
#[derive(Clone, Debug, PartialEq)]
pub struct Timeline {
    /// Hour angle of the phase centre at each sample centre, rad.
    pub hour_angles_rad: Vec<f64>,
    /// Time of each sample centre since the start of the hour-angle range, s:
    /// H = H_start + [`HOUR_ANGLE_RATE_RAD_PER_S`] · t.
    pub times_s: Vec<f64>,
    /// Parallactic angle at each sample centre, rad (see [`parallactic_angle`]).
    pub parallactic_angles_rad: Vec<f64>,
    /// Elevation of the phase centre at each sample centre, rad (see [`elevation`]).
    pub elevations_rad: Vec<f64>,
    /// Integration time of one sample, s.
    pub integration_s: f64,
    /// True where the sample's elevation is below [`Self::elevation_limit_rad`].
    pub flagged: Vec<bool>,
    /// The elevation limit the flags were set with, rad.
    pub elevation_limit_rad: f64,
}

impl Timeline {
    /// Sample the hour-angle range with the given integration time.
    ///
    /// Errors: [`ArrayError::HourAngleRange`], [`ArrayError::RangeShorterThanIntegration`],
    /// [`ArrayError::InvalidParameter`] for out-of-range angles or integration time (or more than
    /// [`MAX_TIME_SAMPLES`] samples), [`ArrayError::NeverRises`] when the declination's transit
    /// elevation is below the limit, and [`ArrayError::AllSamplesBelowLimit`] when it rises but
    /// not during the chosen range.
    pub fn new(params: &TimelineParams) -> Result<Self, ArrayError> {
        let p = params;
        let (start, end) = (p.hour_angle_start_rad, p.hour_angle_end_rad);
        if !(start.is_finite() && end.is_finite() && end > start) {
            return Err(ArrayError::HourAngleRange { start_rad: start, end_rad: end });
        }
        let tau = check_range(
            "integration_s",
            p.integration_s,
            f64::MIN_POSITIVE,
            f64::MAX,
            "finite > 0 s",
        )?;
        let dec = check_range(
            "declination_rad",
            p.declination_rad,
            -FRAC_PI_2,
            FRAC_PI_2,
            "[-π/2, π/2]",
        )?;
        let lat =
            check_range("latitude_rad", p.latitude_rad, -FRAC_PI_2, FRAC_PI_2, "[-π/2, π/2]")?;
        let limit = check_range(
            "elevation_limit_rad",
            p.elevation_limit_rad,
            -FRAC_PI_2,
            FRAC_PI_2,
            "[-π/2, π/2]",
        )?;
        let duration_s = (end - start) / HOUR_ANGLE_RATE_RAD_PER_S;
        // A range meant to hold a whole number of integrations may come out a hair short in
        // floating point; 1e-9 of an integration of slack keeps that last sample.
        let n_float = (duration_s / tau + 1e-9).floor();
        if n_float < 1.0 {
            return Err(ArrayError::RangeShorterThanIntegration { duration_s, integration_s: tau });
        }
        if n_float > MAX_TIME_SAMPLES as f64 {
            return Err(ArrayError::InvalidParameter {
                name: "integration_s",
                value: tau,
                expected: "long enough that the range holds at most MAX_TIME_SAMPLES (1e6) samples",
            });
        }
        let n = n_float as usize;
        let offset_s = ((duration_s - n as f64 * tau) / 2.0).max(0.0);
        let times_s: Vec<f64> = (0..n).map(|k| offset_s + (k as f64 + 0.5) * tau).collect();
        let hour_angles_rad: Vec<f64> =
            times_s.iter().map(|&t| start + HOUR_ANGLE_RATE_RAD_PER_S * t).collect();
        let parallactic_angles_rad =
            hour_angles_rad.iter().map(|&h| parallactic_angle(h, dec, lat)).collect();
        let elevations_rad: Vec<f64> =
            hour_angles_rad.iter().map(|&h| elevation(h, dec, lat)).collect();
        let flagged: Vec<bool> = elevations_rad.iter().map(|&e| e < limit).collect();
        if flagged.iter().all(|&f| f) {
            let max_elevation_rad = transit_elevation(dec, lat);
            if max_elevation_rad < limit {
                return Err(ArrayError::NeverRises {
                    declination_rad: dec,
                    latitude_rad: lat,
                    elevation_limit_rad: limit,
                    max_elevation_rad,
                });
            }
            return Err(ArrayError::AllSamplesBelowLimit {
                start_rad: start,
                end_rad: end,
                elevation_limit_rad: limit,
                max_sample_elevation_rad: elevations_rad.iter().copied().fold(-PI, f64::max),
                declination_rad: dec,
                latitude_rad: lat,
            });
        }
        Ok(Self {
            hour_angles_rad,
            times_s,
            parallactic_angles_rad,
            elevations_rad,
            integration_s: tau,
            flagged,
            elevation_limit_rad: limit,
        })
    }

    /// Number of time samples.
    pub fn len(&self) -> usize {
        self.hour_angles_rad.len()
    }

    /// True when there are no samples (never the case for a timeline made by [`Self::new`]).
    pub fn is_empty(&self) -> bool {
        self.hour_angles_rad.is_empty()
    }

    /// Number of samples that are not flagged.
    pub fn n_unflagged(&self) -> usize {
        self.flagged.iter().filter(|&&f| !f).count()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn params(start_h: f64, end_h: f64, tau: f64) -> TimelineParams {
        TimelineParams {
            hour_angle_start_rad: start_h * TAU / 24.0,
            hour_angle_end_rad: end_h * TAU / 24.0,
            integration_s: tau,
            declination_rad: 20f64.to_radians(),
            latitude_rad: 37.5f64.to_radians(),
            elevation_limit_rad: 15f64.to_radians(),
        }
    }

    #[test]
    fn sidereal_rate_by_definition() {
        // A sidereal day lasts 86164.0905 s of mean solar time (23h 56m 4.0905s; handbook value,
        // e.g. the Astronomical Almanac's glossary, recalled from memory): 86400 s of sidereal
        // time pass in it. The quoted day is rounded to 0.1 ms, so agreement to 2e-9 relative.
        assert!((SIDEREAL_SECONDS_PER_SOLAR_SECOND - 86_400.0 / 86_164.090_5).abs() < 2e-9);
        // In one sidereal day the hour angle advances by exactly 2π.
        let day_s = 86_400.0 / SIDEREAL_SECONDS_PER_SOLAR_SECOND;
        assert!((HOUR_ANGLE_RATE_RAD_PER_S * day_s - TAU).abs() < 1e-14);
    }

    #[test]
    fn samples_are_centred_whole_integrations() {
        // ±1 h of hour angle is 7200 sidereal seconds = 7180.34 s of time: 119 whole minutes,
        // remainder split equally at both ends.
        let t = Timeline::new(&params(-1.0, 1.0, 60.0)).unwrap();
        let duration = 7200.0 / SIDEREAL_SECONDS_PER_SOLAR_SECOND;
        assert_eq!(t.len(), (duration / 60.0).floor() as usize);
        assert_eq!(t.len(), 119);
        let offset = (duration - 119.0 * 60.0) / 2.0;
        for k in 0..t.len() {
            assert!((t.times_s[k] - (offset + (k as f64 + 0.5) * 60.0)).abs() < 1e-9);
            let h = -TAU / 24.0 + HOUR_ANGLE_RATE_RAD_PER_S * t.times_s[k];
            assert!((t.hour_angles_rad[k] - h).abs() < 1e-15);
        }
        // Centred: the middle sample (k = 59) sits at H = 0.
        assert!(t.hour_angles_rad[59].abs() < 1e-14);
        // A range of exactly 10 integrations keeps all 10 despite rounding.
        let ten = 600.0 * HOUR_ANGLE_RATE_RAD_PER_S;
        let mut p = params(0.0, 0.0, 60.0);
        p.hour_angle_end_rad = ten;
        assert_eq!(Timeline::new(&p).unwrap().len(), 10);
    }

    #[test]
    fn low_samples_are_flagged_not_dropped() {
        // δ = 20° at φ = 37.5° sets (e = 15°) near H ≈ ±5.7 h: a ±7 h track has flags at both
        // ends only, and each flag agrees with the elevation.
        let t = Timeline::new(&params(-7.0, 7.0, 300.0)).unwrap();
        assert!(t.flagged[0] && t.flagged[t.len() - 1] && !t.flagged[t.len() / 2]);
        for k in 0..t.len() {
            assert_eq!(t.flagged[k], t.elevations_rad[k] < 15f64.to_radians());
        }
        assert!(t.n_unflagged() < t.len());
    }

    #[test]
    fn errors_name_the_values() {
        let mut p = params(-1.0, 1.0, 60.0);
        p.declination_rad = (-70f64).to_radians(); // transit elevation 90 − 104.08 < 0
        let e = Timeline::new(&p).unwrap_err();
        assert!(matches!(e, ArrayError::NeverRises { .. }));
        assert!(e.to_string().contains("-70.0000°"), "{e}");
        let p = params(10.0, 11.0, 60.0); // δ = 20° is below 15° at H = 10 h
        assert!(matches!(Timeline::new(&p), Err(ArrayError::AllSamplesBelowLimit { .. })));
        assert!(matches!(
            Timeline::new(&params(1.0, -1.0, 60.0)),
            Err(ArrayError::HourAngleRange { .. })
        ));
        assert!(matches!(
            Timeline::new(&params(0.0, 0.001, 60.0)),
            Err(ArrayError::RangeShorterThanIntegration { .. })
        ));
        assert!(matches!(
            Timeline::new(&params(-1.0, 1.0, 0.0)),
            Err(ArrayError::InvalidParameter { name: "integration_s", .. })
        ));
        assert!(matches!(
            Timeline::new(&params(-12.0, 12.0, 1e-3)),
            Err(ArrayError::InvalidParameter { name: "integration_s", .. })
        ));
    }
}
