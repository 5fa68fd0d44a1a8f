/// Why an array, timeline, band or observation could not be built.
///
/// Every variant carries the offending value(s), so the caller can say exactly what to change.
/// Angles are carried in radians; the messages also print them in degrees.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ArrayError {
    /// A line of a layout text could not be read as three numbers (east, north, up in metres).
    #[error("layout line {line}: {reason}: `{text}`")]
    LayoutParse {
        /// One-based line number in the text.
        line: usize,
        /// The offending line, as written (without the line break).
        text: String,
        /// What is wrong with it.
        reason: String,
    },
    /// Fewer than two antennas: there would be no baseline.
    #[error("a layout needs at least 2 antennas, found {found}")]
    TooFewAntennas {
        /// Number of antennas found.
        found: usize,
    },
    /// An antenna coordinate is NaN or infinite.
    #[error("antenna {antenna} has a non-finite position {position_enu_m:?} (east, north, up m)")]
    NonFiniteAntenna {
        /// Zero-based antenna index.
        antenna: usize,
        /// Its position, east/north/up metres.
        position_enu_m: [f64; 3],
    },
    /// Two antennas are closer than the minimum spacing.
    #[error(
        "antennas {antenna_a} and {antenna_b} are {distance_m} m apart, closer than the minimum \
         spacing {min_spacing_m} m"
    )]
    AntennasTooClose {
        /// Zero-based index of the first antenna.
        antenna_a: usize,
        /// Zero-based index of the second antenna.
        antenna_b: usize,
        /// Their distance, m.
        distance_m: f64,
        /// The required minimum, m.
        min_spacing_m: f64,
    },
    /// A scalar parameter is outside its valid range (or not finite).
    #[error("parameter `{name}` = {value} is invalid: expected {expected}")]
    InvalidParameter {
        /// Name of the parameter, as in the Rust API.
        name: &'static str,
        /// The value given.
        value: f64,
        /// The valid range, in words.
        expected: &'static str,
    },
    /// The minimum spacing of a random layout does not exceed the dish diameter.
    #[error(
        "minimum spacing {min_spacing_m} m must exceed the dish diameter {dish_diameter_m} m, \
         or the dishes would overlap"
    )]
    SpacingNotAboveDish {
        /// The minimum spacing asked for, m.
        min_spacing_m: f64,
        /// The dish diameter, m.
        dish_diameter_m: f64,
    },
    /// A random layout could not place all antennas with the required spacing.
    #[error(
        "could place only {placed} of {requested} antennas in a disc of radius {radius_m} m with \
         minimum spacing {min_spacing_m} m after {tries} random tries; use a larger radius, a \
         smaller spacing or fewer antennas"
    )]
    RandomLayoutFailed {
        /// Antennas placed before giving up.
        placed: usize,
        /// Antennas asked for.
        requested: usize,
        /// Disc radius, m.
        radius_m: f64,
        /// Minimum spacing, m.
        min_spacing_m: f64,
        /// Number of candidate positions drawn in all.
        tries: usize,
    },
    /// The hour-angle range is empty, reversed or not finite.
    #[error(
        "hour-angle range [{start_rad}, {end_rad}] rad ([{:.4}°, {:.4}°]) must be finite with \
         end > start",
        start_rad.to_degrees(),
        end_rad.to_degrees()
    )]
    HourAngleRange {
        /// Start of the range, rad.
        start_rad: f64,
        /// End of the range, rad.
        end_rad: f64,
    },
    /// The hour-angle range lasts less than one integration.
    #[error(
        "hour-angle range lasts {duration_s} s, shorter than one integration of {integration_s} s"
    )]
    RangeShorterThanIntegration {
        /// Duration of the range in time, s.
        duration_s: f64,
        /// Integration time, s.
        integration_s: f64,
    },
    /// The source never rises above the elevation limit at this latitude.
    #[error(
        "declination {declination_rad} rad ({:.4}°) never rises above the elevation limit \
         {elevation_limit_rad} rad ({:.4}°) at latitude {latitude_rad} rad ({:.4}°): its highest \
         elevation is {:.4}°",
        declination_rad.to_degrees(),
        elevation_limit_rad.to_degrees(),
        latitude_rad.to_degrees(),
        max_elevation_rad.to_degrees()
    )]
    NeverRises {
        /// Declination of the phase centre, rad.
        declination_rad: f64,
        /// Site latitude, rad.
        latitude_rad: f64,
        /// Elevation limit, rad.
        elevation_limit_rad: f64,
        /// Elevation at upper transit, rad.
        max_elevation_rad: f64,
    },
    /// The source does rise, but every sample of the chosen hour-angle range is below the limit.
    #[error(
        "every sample of the hour-angle range [{:.4}°, {:.4}°] is below the elevation limit \
         {:.4}° (highest sample elevation {:.4}°, declination {:.4}°, latitude {:.4}°)",
        start_rad.to_degrees(),
        end_rad.to_degrees(),
        elevation_limit_rad.to_degrees(),
        max_sample_elevation_rad.to_degrees(),
        declination_rad.to_degrees(),
        latitude_rad.to_degrees()
    )]
    AllSamplesBelowLimit {
        /// Start of the hour-angle range, rad.
        start_rad: f64,
        /// End of the hour-angle range, rad.
        end_rad: f64,
        /// Elevation limit, rad.
        elevation_limit_rad: f64,
        /// Highest elevation among the samples, rad.
        max_sample_elevation_rad: f64,
        /// Declination of the phase centre, rad.
        declination_rad: f64,
        /// Site latitude, rad.
        latitude_rad: f64,
    },
    /// The band's edges are not positive, finite and increasing.
    #[error("band [{f_min_hz}, {f_max_hz}] Hz must have 0 < f_min < f_max, both finite")]
    Band {
        /// Lower band edge, Hz.
        f_min_hz: f64,
        /// Upper band edge, Hz.
        f_max_hz: f64,
    },
    /// A count parameter is outside its valid range.
    #[error("count `{name}` = {value} is invalid: expected {expected}")]
    InvalidCount {
        /// Name of the parameter, as in the Rust API.
        name: &'static str,
        /// The value given.
        value: usize,
        /// The valid range, in words.
        expected: &'static str,
    },
}

/// Check that `value` is finite and inside `[lo, hi]`; otherwise an [`ArrayError::InvalidParameter`].
pub(crate) fn check_range(
    name: &'static str,
    value: f64,
    lo: f64,
    hi: f64,
    expected: &'static str,
) -> Result<f64, ArrayError> {
    if value.is_finite() && value >= lo && value <= hi {
        Ok(value)
    } else {
        Err(ArrayError::InvalidParameter { name, value, expected })
    }
}
