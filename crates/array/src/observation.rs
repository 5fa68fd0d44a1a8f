use crate::channels::Channels;
use crate::error::{check_range, ArrayError};
use crate::layout::Layout;
use crate::site::enu_to_equatorial_xyz;
use crate::timeline::{Timeline, TimelineParams};
use crate::uvw::UvwRotation;
use std::f64::consts::{FRAC_PI_2, TAU};

/// Most rows (baselines × time samples) an observation may have: 1e8 rows are 5.6 GB of [`Row`]s
/// before any visibility is stored, so more is almost certainly a mistyped parameter.
pub const MAX_ROWS: usize = 100_000_000;

/// One row of an observation: one baseline at one time sample.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Row {
    /// First antenna (index into [`Observation::antennas_enu_m`]); always `< antenna2`.
    pub antenna1: usize,
    /// Second antenna.
    pub antenna2: usize,
    /// Index into the [`Timeline`]'s per-sample vectors.
    pub time_index: usize,
    /// (u, v, w) in metres of the baseline vector position(antenna2) − position(antenna1), by
    /// [`crate::uvw_m`] at the sample's hour angle and the phase centre's declination.
    pub uvw_m: [f64; 3],
    /// True when the phase centre is below the elevation limit at this sample.
    pub flagged: bool,
}

/// Everything an observation fixes before any sky or beam: where the antennas are, where they
/// point, when they sample and at which frequencies, and the uvw of every baseline and sample.
#[derive(Clone, Debug, PartialEq)]
pub struct Observation {
    /// Antenna positions, east/north/up metres (validated by [`Layout`]).
    pub antennas_enu_m: Vec<[f64; 3]>,
    /// Site latitude, rad.
    pub latitude_rad: f64,
    /// Right ascension of the phase centre, rad (carried for the image header; the geometry here
    /// needs only hour angles).
    pub phase_centre_ra_rad: f64,
    /// Declination of the phase centre, rad.
    pub phase_centre_dec_rad: f64,
    /// Time samples.
    pub timeline: Timeline,
    /// Frequency channels.
    pub channels: Channels,
    /// Cross-correlations only, antenna1 < antenna2, ordered by baseline (antenna1, antenna2
    /// lexicographic), then time: row index = baseline index · n_times + time index.
    pub rows: Vec<Row>,
}

/// What an [`Observation`] is built from; every field states its unit.
#[derive(Clone, Debug, PartialEq)]
pub struct ObservationParams {
    /// The validated antenna layout.
    pub layout: Layout,
    /// Site latitude, rad, in [−π/2, π/2].
    pub latitude_rad: f64,
    /// Right ascension of the phase centre, rad, in [0, 2π).
    pub phase_centre_ra_rad: f64,
    /// Declination of the phase centre, rad, in [−π/2, π/2].
    pub phase_centre_dec_rad: f64,
    /// Hour angle where the track starts, rad.
    pub hour_angle_start_rad: f64,
    /// Hour angle where the track ends, rad.
    pub hour_angle_end_rad: f64,
    /// Integration time of one sample, s.
    pub integration_s: f64,
    /// Lower edge of the band, Hz.
    pub band_min_hz: f64,
    /// Upper edge of the band, Hz.
    pub band_max_hz: f64,
    /// Number of equal channels the band is split into.
    pub n_channels: usize,
    /// Samples with the phase centre below this elevation are flagged, rad.
    pub elevation_limit_rad: f64,
}

impl Observation {
    /// Build the observation: the timeline, the channels and the uvw of every row.
    ///
    /// Errors are those of [`Timeline::new`] and [`Channels::from_band`], plus
    /// [`ArrayError::InvalidParameter`] for a right ascension outside [0, 2π) and
    /// [`ArrayError::InvalidCount`] for more than [`MAX_ROWS`] rows.
    pub fn new(params: &ObservationParams) -> Result<Self, ArrayError> {
        let p = params;
        check_range("phase_centre_ra_rad", p.phase_centre_ra_rad, 0.0, TAU, "[0, 2π)")?;
        if p.phase_centre_ra_rad == TAU {
            return Err(ArrayError::InvalidParameter {
                name: "phase_centre_ra_rad",
                value: TAU,
                expected: "[0, 2π)",
            });
        }
        check_range("latitude_rad", p.latitude_rad, -FRAC_PI_2, FRAC_PI_2, "[-π/2, π/2]")?;
        let timeline = Timeline::new(&TimelineParams {
            hour_angle_start_rad: p.hour_angle_start_rad,
            hour_angle_end_rad: p.hour_angle_end_rad,
            integration_s: p.integration_s,
            declination_rad: p.phase_centre_dec_rad,
            latitude_rad: p.latitude_rad,
            elevation_limit_rad: p.elevation_limit_rad,
        })?;
        let channels = Channels::from_band(p.band_min_hz, p.band_max_hz, p.n_channels)?;
        let n_ant = p.layout.n_antennas();
        let n_rows = (n_ant * (n_ant - 1) / 2).saturating_mul(timeline.len());
        if n_rows > MAX_ROWS {
            return Err(ArrayError::InvalidCount {
                name: "rows (baselines × time samples)",
                value: n_rows,
                expected: "at most MAX_ROWS (1e8); use fewer antennas or longer integrations",
            });
        }
        let antennas_enu_m = p.layout.antennas_enu_m().to_vec();
        let rows = build_rows(&antennas_enu_m, p.latitude_rad, p.phase_centre_dec_rad, &timeline);
        Ok(Self {
            antennas_enu_m,
            latitude_rad: p.latitude_rad,
            phase_centre_ra_rad: p.phase_centre_ra_rad,
            phase_centre_dec_rad: p.phase_centre_dec_rad,
            timeline,
            channels,
            rows,
        })
    }

    /// Number of antennas.
    pub fn n_antennas(&self) -> usize {
        self.antennas_enu_m.len()
    }

    /// Number of baselines (cross-correlations), N (N − 1) / 2.
    pub fn n_baselines(&self) -> usize {
        let n = self.n_antennas();
        n * n.saturating_sub(1) / 2
    }

    /// Number of time samples (flagged ones included).
    pub fn n_times(&self) -> usize {
        self.timeline.len()
    }

    /// Number of channels.
    pub fn n_channels(&self) -> usize {
        self.channels.len()
    }

    /// Number of rows, baselines × times.
    pub fn n_rows(&self) -> usize {
        self.rows.len()
    }

    /// Number of complex visibilities: rows × channels × 2 parallel-hand polarizations.
    pub fn n_visibilities(&self) -> usize {
        self.n_rows() * self.n_channels() * 2
    }

    /// Index of baseline (a1, a2), a1 < a2, in the (a1, a2) lexicographic order of the rows.
    pub fn baseline_index(&self, antenna1: usize, antenna2: usize) -> Option<usize> {
        let n = self.n_antennas();
        (antenna1 < antenna2 && antenna2 < n)
            .then(|| antenna1 * (2 * n - antenna1 - 1) / 2 + (antenna2 - antenna1 - 1))
    }

    /// Index into [`Self::rows`] of baseline (a1, a2) at `time_index` (for rows in the order
    /// [`Self::new`] builds them).
    pub fn row_index(&self, antenna1: usize, antenna2: usize, time_index: usize) -> Option<usize> {
        let b = self.baseline_index(antenna1, antenna2)?;
        (time_index < self.n_times()).then(|| b * self.n_times() + time_index)
    }

    /// The rows of baseline (a1, a2), one per time sample in time order: a contiguous slice,
    /// since rows are ordered by baseline, then time.
    pub fn baseline_rows(&self, antenna1: usize, antenna2: usize) -> Option<&[Row]> {
        let start = self.row_index(antenna1, antenna2, 0)?;
        self.rows.get(start..start + self.n_times())
    }
}

/// uvw of every row: one [`UvwRotation`] per time sample applied to each baseline's equatorial
/// vector, which is computed once per baseline (the rotation is the expensive part only if its
/// sines and cosines are redone per row).
fn build_rows(
    antennas_enu_m: &[[f64; 3]],
    latitude_rad: f64,
    declination_rad: f64,
    timeline: &Timeline,
) -> Vec<Row> {
    let n_ant = antennas_enu_m.len();
    let rotations: Vec<UvwRotation> =
        timeline.hour_angles_rad.iter().map(|&h| UvwRotation::new(h, declination_rad)).collect();
    let mut rows = Vec::with_capacity(n_ant * n_ant.saturating_sub(1) / 2 * rotations.len());
    for a1 in 0..n_ant {
        for a2 in a1 + 1..n_ant {
            let [p1, p2] = [antennas_enu_m[a1], antennas_enu_m[a2]];
            let baseline_enu = [p2[0] - p1[0], p2[1] - p1[1], p2[2] - p1[2]];
            let xyz = enu_to_equatorial_xyz(baseline_enu, latitude_rad);
            for (t, rotation) in rotations.iter().enumerate() {
                rows.push(Row {
                    antenna1: a1,
                    antenna2: a2,
                    time_index: t,
                    uvw_m: rotation.apply(xyz),
                    flagged: timeline.flagged[t],
                });
            }
        }
    }
    rows
}
