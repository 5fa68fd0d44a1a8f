//! Reading back the FITS images this crate writes (for tests and for comparing runs).

use std::path::Path;

use beamfloor_core::ImageGeometry;
use fitsio::hdu::HduInfo;
use fitsio::FitsFile;
use ndarray::Array3;

use crate::fits_meta::{
    check_fits_path, BrightnessUnit, CubeAxis, FitsImage, FitsImageMeta, RestoringBeam,
    TAYLOR_AXIS_CTYPE,
};
use crate::ReportError;

/// Read a FITS image or cube written by [`crate::write_fits_image`] /
/// [`crate::write_fits_cube`] (or any primary image with the same WCS conventions).
///
/// Fails with [`ReportError::FitsContent`] when the axes are not RA---SIN / DEC--SIN with square
/// pixels, `CDELT1 < 0` and the reference pixel at `n/2 + 1`, i.e. not an [`ImageGeometry`] grid.
pub fn read_fits(path: &Path) -> Result<FitsImage, ReportError> {
    let path_str = check_fits_path(path)?;
    if !path.is_file() {
        return Err(ReportError::MissingFile { path: path.into() });
    }
    let fits_err =
        |e: fitsio::errors::Error| ReportError::Fits { path: path.into(), message: e.to_string() };
    let content = |why: String| ReportError::FitsContent { path: path.into(), why };
    let mut file = FitsFile::open(path_str).map_err(fits_err)?;
    let hdu = file.primary_hdu().map_err(fits_err)?;
    let shape = match &hdu.info {
        HduInfo::ImageInfo { shape, .. } => shape.clone(),
        _ => return Err(content("the primary HDU is not an image".into())),
    };
    let (planes, ny, nx) = match shape.as_slice() {
        [ny, nx] => (1, *ny, *nx),
        [p, ny, nx] => (*p, *ny, *nx),
        s => return Err(content(format!("expected 2 or 3 axes, found shape {s:?}"))),
    };
    let mut f64_key = |name: &str| -> Result<f64, ReportError> {
        hdu.read_key::<f64>(&mut file, name).map_err(|e| content(format!("key {name}: {e}")))
    };
    let crval1 = f64_key("CRVAL1")?;
    let crval2 = f64_key("CRVAL2")?;
    let crpix1 = f64_key("CRPIX1")?;
    let crpix2 = f64_key("CRPIX2")?;
    let cdelt1 = f64_key("CDELT1")?;
    let cdelt2 = f64_key("CDELT2")?;
    let bmaj = f64_key("BMAJ").ok();
    let bmin = f64_key("BMIN").ok();
    let bpa = f64_key("BPA").ok();
    let mut str_key = |name: &str| hdu.read_key::<String>(&mut file, name).ok();
    let (ctype1, ctype2) = (str_key("CTYPE1"), str_key("CTYPE2"));
    if ctype1.as_deref() != Some("RA---SIN") || ctype2.as_deref() != Some("DEC--SIN") {
        return Err(content(format!(
            "celestial axes are {ctype1:?}/{ctype2:?}, expected RA---SIN/DEC--SIN"
        )));
    }
    // Square pixels, east left: CDELT1 = -CDELT2 to the printed precision (15 digits).
    if !(cdelt2 > 0.0 && (cdelt1 + cdelt2).abs() <= 1e-12 * cdelt2) {
        return Err(content(format!("CDELT1 = {cdelt1}, CDELT2 = {cdelt2}: expected -c, +c")));
    }
    if crpix1 != (nx / 2 + 1) as f64 || crpix2 != (ny / 2 + 1) as f64 {
        return Err(content(format!(
            "reference pixel ({crpix1}, {crpix2}) is not (nx/2+1, ny/2+1) = ({}, {})",
            nx / 2 + 1,
            ny / 2 + 1
        )));
    }
    let unit_text = str_key("BUNIT");
    let unit = BrightnessUnit::from_fits_keyword(unit_text.as_deref())
        .ok_or_else(|| content(format!("unknown BUNIT {unit_text:?}")))?;
    let ctype3 = str_key("CTYPE3");
    let object = str_key("OBJECT").unwrap_or_default();
    let strategy = str_key("STRATEGY");
    let truth_hash = str_key("TRUTHASH");
    let seed_text = str_key("SEED");
    let seed = match seed_text {
        Some(s) => Some(s.parse::<u64>().map_err(|_| content(format!("SEED {s:?} is not a u64")))?),
        None => None,
    };
    let mut f64_key = |name: &str| -> Result<f64, ReportError> {
        hdu.read_key::<f64>(&mut file, name).map_err(|e| content(format!("key {name}: {e}")))
    };
    let cube_axis = match (shape.len(), ctype3.as_deref()) {
        (2, _) => None,
        (3, Some("FREQ")) => {
            let crpix3 = f64_key("CRPIX3")?;
            let crval3 = f64_key("CRVAL3")?;
            let cdelt3 = f64_key("CDELT3")?;
            Some(CubeAxis::Frequency {
                first_hz: crval3 + (1.0 - crpix3) * cdelt3,
                step_hz: cdelt3,
            })
        }
        (3, Some(TAYLOR_AXIS_CTYPE)) => {
            Some(CubeAxis::Taylor { reference_frequency_hz: f64_key("NU0_HZ")? })
        }
        (_, other) => return Err(content(format!("unknown third axis CTYPE3 = {other:?}"))),
    };
    let pixels: Vec<f64> = hdu.read_image(&mut file).map_err(fits_err)?;
    let data = Array3::from_shape_vec((planes, ny, nx), pixels)
        .map_err(|e| content(format!("pixel count does not match the axes: {e}")))?;
    let restoring_beam = match (bmaj, bmin, bpa) {
        (Some(a), Some(b), Some(p)) => Some(RestoringBeam {
            major_rad: a.to_radians(),
            minor_rad: b.to_radians(),
            position_angle_rad: p.to_radians(),
        }),
        _ => None,
    };
    let meta = FitsImageMeta {
        geometry: ImageGeometry::new(nx, ny, cdelt2.to_radians()),
        phase_centre_ra_rad: crval1.to_radians(),
        phase_centre_dec_rad: crval2.to_radians(),
        unit,
        restoring_beam,
        object,
        strategy,
        truth_hash,
        seed,
        history: Vec::new(),
    };
    Ok(FitsImage { data, cube_axis, meta })
}
