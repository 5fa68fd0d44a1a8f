//! Writing images and cubes as FITS primary HDUs (BITPIX = −64) with a SIN-projection WCS.

use std::ffi::CString;
use std::path::Path;

use fitsio::images::{ImageDescription, ImageType};
use fitsio::FitsFile;
use ndarray::{ArrayView2, ArrayView3, Axis};

use crate::atomic::TempSibling;
use crate::fits_meta::{check_fits_path, CubeAxis, FitsImageMeta, TAYLOR_AXIS_CTYPE};
use crate::ReportError;

/// Write a 2-D image `[y][x]` to `path` (replacing any file there) as a FITS primary image with
/// the WCS and keys described in [`FitsImageMeta`].
///
/// The file is written under a temporary name in the same folder and renamed at the end.
pub fn write_fits_image(
    path: &Path,
    image: ArrayView2<'_, f64>,
    meta: &FitsImageMeta,
) -> Result<(), ReportError> {
    write_fits(path, image.insert_axis(Axis(0)), None, meta)
}

/// Write a cube `[plane][y][x]` to `path` (replacing any file there); `axis` says whether the
/// planes are channels or Taylor terms. Numpy and astropy see the same `[plane][y][x]` order.
pub fn write_fits_cube(
    path: &Path,
    cube: ArrayView3<'_, f64>,
    axis: CubeAxis,
    meta: &FitsImageMeta,
) -> Result<(), ReportError> {
    write_fits(path, cube, Some(axis), meta)
}

fn check_inputs(
    shape: &[usize],
    axis: Option<CubeAxis>,
    meta: &FitsImageMeta,
) -> Result<(), ReportError> {
    let g = meta.geometry;
    if shape[1] != g.ny || shape[2] != g.nx {
        return Err(ReportError::InvalidInput {
            what: "image shape [ny, nx]",
            value: format!("{:?} (geometry {} x {})", &shape[1..], g.ny, g.nx),
            why: "the image must have the geometry's ny rows of nx pixels",
        });
    }
    if shape.contains(&0) {
        return Err(ReportError::InvalidInput {
            what: "image shape",
            value: format!("{shape:?}"),
            why: "every axis needs at least one pixel",
        });
    }
    if !(g.cell_rad.is_finite() && g.cell_rad > 0.0) {
        return Err(ReportError::InvalidInput {
            what: "cell_rad",
            value: g.cell_rad.to_string(),
            why: "the pixel size must be finite and positive",
        });
    }
    let (ra, dec) = (meta.phase_centre_ra_rad, meta.phase_centre_dec_rad);
    if !(ra.is_finite() && dec.is_finite() && dec.abs() <= std::f64::consts::FRAC_PI_2) {
        return Err(ReportError::InvalidInput {
            what: "phase centre (ra, dec) rad",
            value: format!("({ra}, {dec})"),
            why: "RA must be finite and |Dec| at most pi/2",
        });
    }
    match axis {
        Some(CubeAxis::Frequency { first_hz, step_hz })
            if !(first_hz.is_finite() && step_hz.is_finite() && step_hz != 0.0) =>
        {
            Err(ReportError::InvalidInput {
                what: "frequency axis (first_hz, step_hz)",
                value: format!("({first_hz}, {step_hz})"),
                why: "both must be finite and the step non-zero",
            })
        }
        Some(CubeAxis::Taylor { reference_frequency_hz: f }) if !(f.is_finite() && f > 0.0) => {
            Err(ReportError::InvalidInput {
                what: "Taylor reference frequency",
                value: f.to_string(),
                why: "must be finite and positive",
            })
        }
        _ => Ok(()),
    }
}

fn write_fits(
    path: &Path,
    cube: ArrayView3<'_, f64>,
    axis: Option<CubeAxis>,
    meta: &FitsImageMeta,
) -> Result<(), ReportError> {
    check_inputs(cube.shape(), axis, meta)?;
    check_fits_path(path)?;
    let temp = TempSibling::file(path)?;
    let temp_str = check_fits_path(temp.path())?;
    let fits_err =
        |e: fitsio::errors::Error| ReportError::Fits { path: path.into(), message: e.to_string() };

    let shape: Vec<usize> =
        if axis.is_some() { cube.shape().to_vec() } else { cube.shape()[1..].to_vec() };
    let description = ImageDescription { data_type: ImageType::Double, dimensions: &shape };
    let mut file =
        FitsFile::create(temp_str).with_custom_primary(&description).open().map_err(fits_err)?;
    let hdu = file.primary_hdu().map_err(fits_err)?;
    // fitsio names the primary HDU `_PRIMARY`; that is its own marker, not ours.
    raw_card(&mut file, RawCard::Delete("EXTNAME")).map_err(fits_err)?;

    let g = meta.geometry;
    let cell_deg = g.cell_rad.to_degrees();
    let (cx, cy) = g.centre_pixel();
    macro_rules! key {
        ($name:expr, $value:expr, $comment:expr) => {
            hdu.write_key(&mut file, $name, ($value, $comment)).map_err(fits_err)?
        };
    }
    key!("CTYPE1", "RA---SIN", "orthographic projection");
    key!("CRVAL1", meta.phase_centre_ra_rad.to_degrees(), "[deg] RA of the phase centre");
    key!("CRPIX1", (cx + 1) as f64, "1-based pixel of the phase centre");
    key!("CDELT1", -cell_deg, "[deg] RA decreases with x (east left)");
    key!("CUNIT1", "deg", "");
    key!("CTYPE2", "DEC--SIN", "orthographic projection");
    key!("CRVAL2", meta.phase_centre_dec_rad.to_degrees(), "[deg] Dec of the phase centre");
    key!("CRPIX2", (cy + 1) as f64, "1-based pixel of the phase centre");
    key!("CDELT2", cell_deg, "[deg]");
    key!("CUNIT2", "deg", "");
    match axis {
        Some(CubeAxis::Frequency { first_hz, step_hz }) => {
            key!("CTYPE3", "FREQ", "planes are channels");
            key!("CRVAL3", first_hz, "[Hz] frequency of plane 1");
            key!("CRPIX3", 1.0, "");
            key!("CDELT3", step_hz, "[Hz] channel step");
            key!("CUNIT3", "Hz", "");
        }
        Some(CubeAxis::Taylor { reference_frequency_hz }) => {
            key!("CTYPE3", TAYLOR_AXIS_CTYPE, "planes are Taylor terms 0, 1, ...");
            key!("CRVAL3", 0.0, "Taylor term of plane 1");
            key!("CRPIX3", 1.0, "");
            key!("CDELT3", 1.0, "");
            key!("NU0_HZ", reference_frequency_hz, "[Hz] reference frequency of the expansion");
        }
        None => {}
    }
    key!("RADESYS", "FK5", "");
    key!("EQUINOX", 2000.0, "");
    if let Some(unit) = meta.unit.fits_keyword() {
        key!("BUNIT", unit, "");
    }
    if let Some(b) = meta.restoring_beam {
        key!("BMAJ", b.major_rad.to_degrees(), "[deg] restoring beam FWHM, major");
        key!("BMIN", b.minor_rad.to_degrees(), "[deg] restoring beam FWHM, minor");
        key!("BPA", b.position_angle_rad.to_degrees(), "[deg] north through east");
    }
    key!("OBJECT", meta.object.as_str(), "");
    key!("ORIGIN", "beamfloor", "");
    if let Some(s) = &meta.strategy {
        key!("STRATEGY", s.as_str(), "imaging strategy");
    }
    if let Some(h) = &meta.truth_hash {
        key!("TRUTHASH", h.as_str(), "hash of the simulated truth");
    }
    if let Some(seed) = meta.seed {
        key!("SEED", seed.to_string(), "experiment seed");
    }
    for line in &meta.history {
        raw_card(&mut file, RawCard::History(line)).map_err(fits_err)?;
    }

    // Standard layout gives the [plane][y][x] order FITS stores (x fastest).
    let data: Vec<f64> = cube.iter().copied().collect();
    hdu.write_image(&mut file, &data).map_err(fits_err)?;
    drop(file); // closes (flushes) the file before the rename
    temp.commit()
}

enum RawCard<'a> {
    Delete(&'a str),
    History(&'a str),
}

/// The two header operations fitsio has no safe wrapper for.
fn raw_card(file: &mut FitsFile, card: RawCard<'_>) -> Result<(), fitsio::errors::Error> {
    let text = match card {
        RawCard::Delete(s) | RawCard::History(s) => CString::new(s.replace('\0', " "))?,
    };
    let mut status = 0;
    // SAFETY: `file` is an open, writable fitsfile owned by `file` for the whole call, the
    // string is NUL-terminated and outlives the call, and `status` is a valid out-pointer.
    // cfitsio copies the text (splitting long history into several cards).
    unsafe {
        let fptr = file.as_raw();
        match card {
            RawCard::Delete(_) => fitsio::sys::ffdkey(fptr, text.as_ptr(), &mut status),
            RawCard::History(_) => fitsio::sys::ffphis(fptr, text.as_ptr(), &mut status),
        };
    }
    if status == 0 {
        Ok(())
    } else {
        Err(fitsio::errors::Error::Message(format!(
            "cfitsio status {status} writing a header card"
        )))
    }
}
