//! Pictures of the truth beam: what the dish beam looks like at the band edges, how much one
//! instantaneous beam differs from the average beam that standard imaging assumes, and where
//! along a radius the beam changes fastest with frequency.

use std::path::{Path, PathBuf};

use beamfloor_beam::DishBeam;
use beamfloor_core::{ImageGeometry, Pol};
use beamfloor_report::{
    write_image_png, write_line_plot, AxisScale, ColourMap, ColourScale, ImagePngOptions, LinePlot,
    Series, Stretch,
};

use crate::scenario::{Scenario, ScenarioError};

/// Why the pictures could not be made.
#[derive(Debug, thiserror::Error)]
pub enum PictureError {
    /// The config could not be mapped onto the compute crates.
    #[error(transparent)]
    Scenario(#[from] ScenarioError),
    /// The beam refused a query.
    #[error("beam: {0}")]
    Beam(#[from] beamfloor_beam::BeamError),
    /// Writing a PNG failed.
    #[error(transparent)]
    Report(#[from] beamfloor_report::ReportError),
    /// The config switches the truth beam off.
    #[error("[truth] beam = false: there is no beam to draw")]
    NoBeam,
}

const ARCMIN_PER_RAD: f64 = 180.0 * 60.0 / std::f64::consts::PI;
/// Lowest level drawn in the dB pictures (the first sidelobes of a tapered dish are near −25 dB).
const FLOOR_DB: f64 = -40.0;

/// Writes the beam pictures of `scenario` into `out_dir` and returns their paths:
/// `beam-power-low.png` and `beam-power-high.png` (antenna 0, first time sample, R receptor, at
/// the band edges, dB), `beam-change.png` (instantaneous Stokes-I power at the reference
/// frequency minus the time- and frequency-averaged symmetric beam), and `beam-profile.png`
/// (P and |ν ∂P/∂ν| along a radius at the reference frequency).
pub fn beam_pictures(scenario: &Scenario, out_dir: &Path) -> Result<Vec<PathBuf>, PictureError> {
    let beam = scenario.beam.as_ref().ok_or(PictureError::NoBeam)?;
    let freqs = &scenario.observation.channels.frequencies_hz;
    let (f_lo, f_hi) = (freqs[0], freqs[freqs.len() - 1]);
    // Show out to where the low-frequency beam's power has fallen well into its sidelobes:
    // three half-power widths, limited by what the beam table covers at the top of the band.
    // The corners of the square picture lie √2 further out than its edges.
    let half_field = (3.0 * beam.half_power_width_rad(f_lo))
        .min(beam.max_radius_rad(f_hi) / std::f64::consts::SQRT_2);
    let npix = 256;
    let geometry = ImageGeometry::new(npix, npix, 2.0 * half_field / npix as f64);
    let mut written = Vec::new();
    for (name, freq) in [("low", f_lo), ("high", f_hi)] {
        let power = beam.power_image(&geometry, 0, 0, freq, Pol::R)?;
        let db = power.mapv(|p| (10.0 * p.max(1e-12).log10()).max(FLOOR_DB));
        let path = out_dir.join(format!("beam-power-{name}.png"));
        let options = ImagePngOptions::new(
            format!("power beam at {:.3} GHz (antenna 0, R, first sample)", freq / 1e9),
            ColourScale::new(FLOOR_DB, 0.0, Stretch::Linear)?,
            ColourMap::Sequential,
            "power [dB]",
        );
        write_image_png(&path, db.view(), &geometry, &options)?;
        written.push(path);
    }
    let change = beam.beam_change_image(&geometry, 0, 0, scenario.ref_freq_hz, freqs)?;
    let path = out_dir.join("beam-change.png");
    let options = ImagePngOptions::new(
        format!(
            "instantaneous − average beam at {:.3} GHz (antenna 0, first sample)",
            scenario.ref_freq_hz / 1e9
        ),
        ColourScale::symmetric(&[change.view()], Stretch::Linear)?,
        ColourMap::Diverging,
        "power difference",
    );
    write_image_png(&path, change.view(), &geometry, &options)?;
    written.push(path);
    let path = out_dir.join("beam-profile.png");
    beam_profile_plot(beam, &[f_lo, scenario.ref_freq_hz, f_hi], half_field, &path)?;
    written.push(path);
    Ok(written)
}

/// Writes P and |ν ∂P/∂ν| along a radius (position angle 0, intrinsic pattern) out to
/// `max_radius_rad`, one pair of curves per frequency, to `path` (log power axis).
pub fn beam_profile_plot(
    beam: &DishBeam,
    freqs_hz: &[f64],
    max_radius_rad: f64,
    path: &Path,
) -> Result<(), PictureError> {
    let radii: Vec<f64> = (0..=400).map(|i| max_radius_rad * i as f64 / 400.0).collect();
    let arcmin = |r: f64| r * ARCMIN_PER_RAD;
    let mut series = Vec::with_capacity(2 * freqs_hz.len());
    for &f in freqs_hz {
        let profile = beam.radial_profile(f, &radii, 0.0)?;
        let ghz = f / 1e9;
        series.push(Series {
            name: format!("P at {ghz:.3} GHz"),
            points: radii.iter().zip(&profile.power).map(|(&r, &p)| (arcmin(r), p)).collect(),
        });
        series.push(Series {
            name: format!("|ν ∂P/∂ν| at {ghz:.3} GHz"),
            points: radii
                .iter()
                .zip(&profile.nu_dp_dnu)
                .map(|(&r, &d)| (arcmin(r), d.abs()))
                .collect(),
        });
    }
    let mut plot = LinePlot::new(
        "beam along a radius (position angle 0)",
        "radius [arcmin]",
        "power / frequency sensitivity",
    );
    plot.y_scale = AxisScale::Log;
    plot.y_range = Some((1e-4, 1.5));
    plot.series = series;
    write_line_plot(path, &plot)?;
    Ok(())
}
