//! Writes a FITS cube, a frequency cube and a visibility set, plus a JSON of what was written, for
//! `tests/crosscheck/test_report.py` (astropy and numpy read them back with no help from us).

mod common;

use std::path::PathBuf;

use beamfloor_core::ImageGeometry;
use beamfloor_report::{
    write_fits_cube, write_fits_image, write_visset, BrightnessUnit, CubeAxis, FitsImageMeta,
    RestoringBeam,
};
use ndarray::Array3;
use serde_json::json;

fn export_dir() -> PathBuf {
    std::env::var_os("BEAMFLOOR_CROSSCHECK_DIR").map(PathBuf::from).unwrap_or_else(|| {
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/crosscheck")
    })
}

/// Pixel values that differ on every axis, so a transposed or reversed axis cannot pass.
fn value(plane: usize, iy: usize, ix: usize) -> f64 {
    1000.0 * plane as f64 + 10.0 * iy as f64 + 0.01 * ix as f64 - 0.5
}

#[test]
fn export_fits_and_visset() {
    let dir = export_dir();
    std::fs::create_dir_all(&dir).expect("create export dir");

    // A wide field (64 x 48 pixels of 2 mrad, ±3.7 deg) near RA = 359.5 deg, so the projection is
    // far from linear and RA wraps through 0 inside the image.
    let g = ImageGeometry::new(64, 48, 2.0e-3);
    let (ra0, dec0) = (359.5f64.to_radians(), -0.6);
    let mut cube = Array3::from_shape_fn((3, g.ny, g.nx), |(t, y, x)| value(t, y, x));
    cube[[1, 5, 7]] = f64::NAN;
    let mut meta =
        FitsImageMeta::new(g, ra0, dec0, BrightnessUnit::JyPerBeam, "crosscheck Taylor cube");
    meta.restoring_beam =
        Some(RestoringBeam { major_rad: 3.0e-3, minor_rad: 2.0e-3, position_angle_rad: 0.3 });
    meta.strategy = Some("wideband-aproj".into());
    meta.truth_hash = Some("ab".repeat(32));
    meta.seed = Some(18_446_744_073_709_551_557);
    meta.history = vec!["written by the report crosscheck export".into()];
    let nu0 = 1.4e9;
    write_fits_cube(
        &dir.join("report_taylor.fits"),
        cube.view(),
        CubeAxis::Taylor { reference_frequency_hz: nu0 },
        &meta,
    )
    .expect("write Taylor cube");

    let freq_cube = cube.slice(ndarray::s![0..2, .., ..]).to_owned();
    let mut fmeta = meta.clone();
    fmeta.unit = BrightnessUnit::JyPerPixel;
    fmeta.restoring_beam = None;
    let (f0, df) = (1.0e9, 2.5e8);
    write_fits_cube(
        &dir.join("report_freq.fits"),
        freq_cube.view(),
        CubeAxis::Frequency { first_hz: f0, step_hz: df },
        &fmeta,
    )
    .expect("write frequency cube");
    write_fits_image(&dir.join("report_image.fits"), cube.slice(ndarray::s![2, .., ..]), &fmeta)
        .expect("write 2-D image");

    // Sample pixels: corners, centre, off-centre, and fractional positions.
    let samples = [
        (0.0, 0.0),
        (63.0, 47.0),
        (32.0, 24.0),
        (0.0, 47.0),
        (63.0, 0.0),
        (10.0, 40.0),
        (50.5, 3.25),
    ];
    let pixels: Vec<_> = samples
        .iter()
        .map(|&(x, y)| {
            let (l, m) = g.lm_of_pixel(x, y);
            json!({"x": x, "y": y, "l": l, "m": m})
        })
        .collect();
    let values: Vec<f64> =
        cube.iter().copied().map(|v| if v.is_nan() { -1.0e300 } else { v }).collect();

    let vis = common::vis_fixture(5, 6, 4);
    write_visset(&dir.join("report_visset"), &vis).expect("write visibility set");
    let data: Vec<[f64; 2]> = vis.data.iter().map(|c| [c.re, c.im]).collect();

    let j = json!({
        "taylor_fits": "report_taylor.fits",
        "freq_fits": "report_freq.fits",
        "image_fits": "report_image.fits",
        "nx": g.nx, "ny": g.ny, "cell_rad": g.cell_rad,
        "ra0_rad": ra0, "dec0_rad": dec0,
        "reference_frequency_hz": nu0, "first_hz": f0, "step_hz": df,
        "bmaj_rad": 3.0e-3, "bmin_rad": 2.0e-3, "bpa_rad": 0.3,
        "seed": "18446744073709551557", "truth_hash": "ab".repeat(32), "strategy": "wideband-aproj",
        "pixels": pixels,
        "shape": [3, g.ny, g.nx],
        "values_nan_as_minus_1e300": values,
        "nan_pixel": [1, 5, 7],
        "visset": {
            "dir": "report_visset",
            "n_rows": vis.n_rows(), "n_channels": vis.n_channels(), "n_times": vis.n_times(),
            "uvw_m": vis.uvw_m.iter().copied().collect::<Vec<_>>(),
            "antenna1": vis.antenna1, "antenna2": vis.antenna2, "time_index": vis.time_index,
            "frequencies_hz": vis.frequencies_hz,
            "hour_angles_rad": vis.hour_angles_rad,
            "parallactic_angles_rad": vis.parallactic_angles_rad,
            "data_re_im": data,
            "weights": vis.weights.iter().copied().collect::<Vec<_>>(),
            "flags": vis.flags.iter().copied().collect::<Vec<_>>(),
            "seed": vis.seed.to_string(), "truth_hash": vis.truth_hash,
            "channel_width_hz": vis.channel_width_hz, "integration_s": vis.integration_s,
        },
    });
    std::fs::write(dir.join("report_files.json"), j.to_string()).expect("write export");
}
