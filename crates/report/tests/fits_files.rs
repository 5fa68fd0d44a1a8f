//! FITS images and cubes read back exactly, with their header fields; bad inputs give errors.
//! (The WCS itself is checked against astropy and the SIN formulas in
//! tests/crosscheck/test_report.py.)

use beamfloor_core::ImageGeometry;
use beamfloor_report::{
    read_fits, write_fits_cube, write_fits_image, BrightnessUnit, CubeAxis, FitsImageMeta,
    ReportError, RestoringBeam,
};
use ndarray::{Array2, Array3};

fn meta(g: ImageGeometry) -> FitsImageMeta {
    let mut m = FitsImageMeta::new(g, 1.25, -0.4, BrightnessUnit::JyPerBeam, "test image");
    m.restoring_beam =
        Some(RestoringBeam { major_rad: 2e-4, minor_rad: 1e-4, position_angle_rad: -0.7 });
    m.strategy = Some("average-beam".into());
    m.truth_hash = Some("0123456789abcdef".repeat(4));
    m.seed = Some(u64::MAX);
    m.history = vec!["line one".into(), "x".repeat(150)];
    m
}

#[test]
fn image_round_trip() {
    let tmp = tempfile::tempdir().unwrap();
    let g = ImageGeometry::new(30, 20, 1.5e-5);
    let im = Array2::from_shape_fn((20, 30), |(y, x)| (x as f64 - 3.0 * y as f64) * 1e-3);
    let p = tmp.path().join("im.fits");
    write_fits_image(&p, im.view(), &meta(g)).unwrap();
    let back = read_fits(&p).unwrap();
    // BITPIX = -64 stores the doubles unchanged.
    assert_eq!(back.data.index_axis(ndarray::Axis(0), 0), im);
    assert_eq!(back.cube_axis, None);
    let m = &back.meta;
    assert_eq!((m.geometry.nx, m.geometry.ny), (30, 20));
    // Angles pass through degrees printed with 15 significant digits: relative 1e-14.
    assert!((m.geometry.cell_rad / 1.5e-5 - 1.0).abs() < 1e-14);
    assert!((m.phase_centre_ra_rad / 1.25 - 1.0).abs() < 1e-14);
    assert!((m.phase_centre_dec_rad / -0.4 - 1.0).abs() < 1e-14);
    let b = m.restoring_beam.unwrap();
    assert!(
        (b.major_rad / 2e-4 - 1.0).abs() < 1e-14
            && (b.position_angle_rad / -0.7 - 1.0).abs() < 1e-14
    );
    assert_eq!(m.unit, BrightnessUnit::JyPerBeam);
    assert_eq!(m.object, "test image");
    assert_eq!(m.strategy.as_deref(), Some("average-beam"));
    assert_eq!(m.truth_hash.as_deref(), Some("0123456789abcdef".repeat(4).as_str()));
    assert_eq!(m.seed, Some(u64::MAX));
    assert_eq!(std::fs::read_dir(tmp.path()).unwrap().count(), 1, "temporary file left behind");
}

#[test]
fn cubes_round_trip_and_overwrite() {
    let tmp = tempfile::tempdir().unwrap();
    let g = ImageGeometry::new(16, 16, 1e-4);
    let cube = Array3::from_shape_fn((3, 16, 16), |(t, y, x)| (100 * t + 10 * y + x) as f64);
    let p = tmp.path().join("c.fits");
    let ax = CubeAxis::Taylor { reference_frequency_hz: 1.4e9 };
    write_fits_cube(&p, cube.view(), ax, &meta(g)).unwrap();
    let back = read_fits(&p).unwrap();
    assert_eq!(back.data, cube);
    assert_eq!(back.cube_axis, Some(ax));
    // Writing again to the same name replaces the file.
    let mut m = meta(g);
    m.unit = BrightnessUnit::Dimensionless;
    m.restoring_beam = None;
    let ax = CubeAxis::Frequency { first_hz: 1e9, step_hz: -5e7 };
    let two = cube.slice(ndarray::s![..2, .., ..]).to_owned();
    write_fits_cube(&p, two.view(), ax, &m).unwrap();
    let back = read_fits(&p).unwrap();
    assert_eq!(back.data, two);
    assert_eq!(back.cube_axis, Some(ax));
    assert_eq!(back.meta.unit, BrightnessUnit::Dimensionless);
    assert_eq!(back.meta.restoring_beam, None);
}

#[test]
fn errors_name_the_problem() {
    let tmp = tempfile::tempdir().unwrap();
    let g = ImageGeometry::new(8, 8, 1e-4);
    let wrong = Array2::<f64>::zeros((8, 9));
    let err = write_fits_image(&tmp.path().join("a.fits"), wrong.view(), &meta(g)).unwrap_err();
    assert!(matches!(err, ReportError::InvalidInput { .. }), "{err}");
    let ok = Array2::<f64>::zeros((8, 8));
    let err = write_fits_image(&tmp.path().join("a[1].fits"), ok.view(), &meta(g)).unwrap_err();
    assert!(matches!(err, ReportError::BadPath { .. }), "{err}");
    let mut m = meta(g);
    m.phase_centre_dec_rad = 2.0;
    let err = write_fits_image(&tmp.path().join("a.fits"), ok.view(), &m).unwrap_err();
    assert!(matches!(err, ReportError::InvalidInput { .. }), "{err}");
    let err =
        write_fits_image(&tmp.path().join("missing/a.fits"), ok.view(), &meta(g)).unwrap_err();
    assert!(matches!(err, ReportError::Fits { .. }), "{err}");
    assert_eq!(std::fs::read_dir(tmp.path()).unwrap().count(), 0);
    let err = read_fits(&tmp.path().join("none.fits")).unwrap_err();
    assert!(matches!(err, ReportError::MissingFile { .. }), "{err}");
    std::fs::write(tmp.path().join("junk.fits"), b"not a FITS file at all").unwrap();
    let err = read_fits(&tmp.path().join("junk.fits")).unwrap_err();
    assert!(matches!(err, ReportError::Fits { .. }), "{err}");
}

#[test]
fn reader_rejects_other_conventions() {
    // A file whose x axis runs the other way (CDELT1 > 0) is not on an ImageGeometry grid.
    let tmp = tempfile::tempdir().unwrap();
    let p = tmp.path().join("other.fits");
    let desc = fitsio::images::ImageDescription {
        data_type: fitsio::images::ImageType::Double,
        dimensions: &[4, 4],
    };
    let mut f = fitsio::FitsFile::create(&p).with_custom_primary(&desc).open().unwrap();
    let hdu = f.primary_hdu().unwrap();
    for (k, v) in [
        ("CRVAL1", 10.0),
        ("CRVAL2", 20.0),
        ("CRPIX1", 3.0),
        ("CRPIX2", 3.0),
        ("CDELT1", 0.01),
        ("CDELT2", 0.01),
    ] {
        hdu.write_key(&mut f, k, v).unwrap();
    }
    hdu.write_key(&mut f, "CTYPE1", "RA---SIN").unwrap();
    hdu.write_key(&mut f, "CTYPE2", "DEC--SIN").unwrap();
    hdu.write_image(&mut f, &[0.0f64; 16]).unwrap();
    drop(f);
    let err = read_fits(&p).unwrap_err();
    assert!(
        matches!(err, ReportError::FitsContent { ref why, .. } if why.contains("CDELT1")),
        "{err}"
    );
}
