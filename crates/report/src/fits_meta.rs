//! What a FITS image says about itself: sky position, units, beam, provenance.

use std::path::Path;

use beamfloor_core::ImageGeometry;

use crate::ReportError;

/// Brightness unit written to `BUNIT`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BrightnessUnit {
    /// Jy per restoring beam (restored and residual images).
    JyPerBeam,
    /// Jy per pixel (model images).
    JyPerPixel,
    /// No unit (spectral index, curvature, beam patterns, ratios); `BUNIT` is left out.
    Dimensionless,
}

impl BrightnessUnit {
    /// The `BUNIT` string, or `None` for [`BrightnessUnit::Dimensionless`].
    pub fn fits_keyword(self) -> Option<&'static str> {
        match self {
            BrightnessUnit::JyPerBeam => Some("Jy/beam"),
            BrightnessUnit::JyPerPixel => Some("Jy/pixel"),
            BrightnessUnit::Dimensionless => None,
        }
    }

    /// Parse a `BUNIT` value (case-insensitive); a missing or empty one is dimensionless.
    pub fn from_fits_keyword(s: Option<&str>) -> Option<Self> {
        match s.map(|s| s.trim().to_ascii_lowercase()) {
            None => Some(BrightnessUnit::Dimensionless),
            Some(s) if s.is_empty() => Some(BrightnessUnit::Dimensionless),
            Some(s) if s == "jy/beam" => Some(BrightnessUnit::JyPerBeam),
            Some(s) if s == "jy/pixel" => Some(BrightnessUnit::JyPerPixel),
            Some(_) => None,
        }
    }
}

/// An elliptical Gaussian restoring beam: full widths at half maximum and position angle.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RestoringBeam {
    /// Major-axis FWHM, rad.
    pub major_rad: f64,
    /// Minor-axis FWHM, rad.
    pub minor_rad: f64,
    /// Position angle of the major axis, rad, from north through east (the FITS `BPA`
    /// convention).
    pub position_angle_rad: f64,
}

/// The third axis of a cube `[plane][y][x]`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum CubeAxis {
    /// Planes are channels: plane `k` is at `first_hz + k · step_hz` (`CTYPE3 = 'FREQ'`).
    Frequency {
        /// Frequency of plane 0, Hz.
        first_hz: f64,
        /// Frequency step between planes, Hz (non-zero).
        step_hz: f64,
    },
    /// Planes are Taylor-term images 0, 1, 2, … of a spectral expansion about
    /// `reference_frequency_hz` (`CTYPE3 = 'TAYTERM'`, our own axis name; the reference frequency
    /// goes into the key `NU0_HZ`).
    Taylor {
        /// Reference frequency ν0 of the Taylor expansion, Hz.
        reference_frequency_hz: f64,
    },
}

/// The `CTYPE3` we write for a Taylor-term axis.
pub const TAYLOR_AXIS_CTYPE: &str = "TAYTERM";

/// Everything written to a FITS header besides the pixel grid's shape.
///
/// The celestial axes follow the orthographic (SIN) projection of Greisen & Calabretta (2002) /
/// Calabretta & Greisen (2002): `CRVAL` is the phase centre, `CRPIX = n/2 + 1` (1-based) is
/// [`ImageGeometry`]'s reference pixel, `CDELT1 = −cell`, `CDELT2 = +cell` (degrees), so the
/// intermediate world coordinates are (180/π)·(l, m).
#[derive(Clone, Debug, PartialEq)]
pub struct FitsImageMeta {
    /// Pixel grid; its `nx`, `ny` must match the image.
    pub geometry: ImageGeometry,
    /// Right ascension of the phase centre, rad.
    pub phase_centre_ra_rad: f64,
    /// Declination of the phase centre, rad.
    pub phase_centre_dec_rad: f64,
    /// Brightness unit.
    pub unit: BrightnessUnit,
    /// Restoring beam, if the image has been restored with one.
    pub restoring_beam: Option<RestoringBeam>,
    /// `OBJECT`: what the image shows (e.g. "restored Taylor-term images").
    pub object: String,
    /// Imaging strategy that produced the image (key `STRATEGY`), if any.
    pub strategy: Option<String>,
    /// Hash of the truth the image was made from (key `TRUTHASH`), if any.
    pub truth_hash: Option<String>,
    /// Experiment seed (key `SEED`, written as a decimal string since FITS integers are signed).
    pub seed: Option<u64>,
    /// Free-text lines written as `HISTORY` cards.
    pub history: Vec<String>,
}

impl FitsImageMeta {
    /// Metadata with the required fields; everything optional left empty.
    pub fn new(
        geometry: ImageGeometry,
        phase_centre_ra_rad: f64,
        phase_centre_dec_rad: f64,
        unit: BrightnessUnit,
        object: impl Into<String>,
    ) -> Self {
        Self {
            geometry,
            phase_centre_ra_rad,
            phase_centre_dec_rad,
            unit,
            restoring_beam: None,
            object: object.into(),
            strategy: None,
            truth_hash: None,
            seed: None,
            history: Vec::new(),
        }
    }
}

/// A FITS image read back: pixel data `[plane][y][x]` (one plane for a 2-D image) and the header
/// fields this crate writes.
#[derive(Clone, Debug, PartialEq)]
pub struct FitsImage {
    /// Pixels, `[plane][y][x]`.
    pub data: ndarray::Array3<f64>,
    /// The third axis, `None` for a 2-D image.
    pub cube_axis: Option<CubeAxis>,
    /// Geometry, sky position, units, beam and provenance (history is not read back).
    pub meta: FitsImageMeta,
}

/// cfitsio reads some characters in file names as filters or templates; refuse those paths
/// rather than let it do something else than write a plain file.
pub(crate) fn check_fits_path(path: &Path) -> Result<&str, ReportError> {
    let s = path
        .to_str()
        .ok_or(ReportError::BadPath { path: path.into(), why: "FITS paths must be UTF-8" })?;
    if s.contains(['[', ']', '(', ')']) || s.starts_with(['!', '-']) || s.contains("://") {
        return Err(ReportError::BadPath {
            path: path.into(),
            why: "the FITS library would read `[ ] ( )`, a leading `!`/`-` or `://` as filter \
                  syntax; rename the file",
        });
    }
    Ok(s)
}
