//! Times the writers and readers at realistic sizes (run with
//! `cargo run --release -p beamfloor-report --example io_timing [folder]`).

use std::time::Instant;

use beamfloor_core::{Correlation, ImageGeometry};
use beamfloor_predict::VisSet;
use beamfloor_report::{
    read_fits, read_visset, write_fits_cube, write_fits_image, write_image_png,
    write_uv_coverage_png, write_visset, BrightnessUnit, ColourMap, ColourScale, CubeAxis,
    FitsImageMeta, ImagePngOptions, Stretch,
};
use ndarray::{Array2, Array3};
use num_complex::Complex64;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let dir =
        std::env::args().nth(1).map(std::path::PathBuf::from).unwrap_or_else(std::env::temp_dir);
    std::fs::create_dir_all(&dir)?;
    let n = 4096;
    let g = ImageGeometry::new(n, n, 1e-5);
    let im = Array2::from_shape_fn((n, n), |(y, x)| ((x * 7 + y * 13) % 101) as f64 * 1e-3);
    let meta = FitsImageMeta::new(g, 1.0, -0.5, BrightnessUnit::JyPerBeam, "timing");
    let t = Instant::now();
    write_fits_image(&dir.join("timing.fits"), im.view(), &meta)?;
    println!("FITS write {n}x{n} f64: {:.2} s", t.elapsed().as_secs_f64());
    let t = Instant::now();
    let back = read_fits(&dir.join("timing.fits"))?;
    println!("FITS read {n}x{n} f64: {:.2} s ({} px)", t.elapsed().as_secs_f64(), back.data.len());
    let cube = Array3::from_shape_fn((3, 2048, 2048), |(p, y, x)| (p + y + x) as f64);
    let g2 = ImageGeometry::new(2048, 2048, 2e-5);
    let t = Instant::now();
    write_fits_cube(
        &dir.join("timing_cube.fits"),
        cube.view(),
        CubeAxis::Taylor { reference_frequency_hz: 1.4e9 },
        &FitsImageMeta { geometry: g2, ..meta.clone() },
    )?;
    println!("FITS write 3x2048x2048 cube: {:.2} s", t.elapsed().as_secs_f64());
    let scale = ColourScale::spanning(&[im.view()], Stretch::Asinh { softening: 1e-3 })?;
    let t = Instant::now();
    write_image_png(
        &dir.join("timing.png"),
        im.view(),
        &g,
        &ImagePngOptions::new("timing", scale, ColourMap::Sequential, "Jy/beam"),
    )?;
    println!("PNG quick-look of {n}x{n}: {:.2} s", t.elapsed().as_secs_f64());

    // 27 antennas (351 baselines) x 100 times x 32 channels x 2 correlations.
    let (nb, nt, nc) = (351usize, 100usize, 32usize);
    let nr = nb * nt;
    let vis = VisSet {
        frequencies_hz: (0..nc).map(|c| 1e9 + 3.125e7 * c as f64).collect(),
        channel_width_hz: 3.125e7,
        integration_s: 60.0,
        hour_angles_rad: (0..nt).map(|t| -1.0 + 0.02 * t as f64).collect(),
        parallactic_angles_rad: (0..nt).map(|t| 0.01 * t as f64).collect(),
        phase_centre_ra_rad: 1.0,
        phase_centre_dec_rad: -0.5,
        antenna1: (0..nr).map(|r| (r / nt % 26) as u32).collect(),
        antenna2: (0..nr).map(|r| (r / nt % 26 + 1) as u32).collect(),
        time_index: (0..nr).map(|r| (r % nt) as u32).collect(),
        uvw_m: Array2::from_shape_fn((nr, 3), |(r, k)| ((r * 3 + k) % 997) as f64 - 498.0),
        data: Array3::from_shape_fn((nr, nc, 2), |(r, c, p)| {
            Complex64::new(r as f64, (c + p) as f64)
        }),
        weights: Array3::from_elem((nr, nc, 2), 1.0),
        flags: Array3::from_elem((nr, nc, 2), false),
        correlations: Correlation::BOTH.to_vec(),
        seed: 1,
        truth_hash: "0".repeat(64),
    };
    let mb = (nr * nc * 2 * (16 + 8 + 1)) as f64 / 1e6;
    let t = Instant::now();
    write_visset(&dir.join("timing_vis"), &vis)?;
    println!(
        "VisSet write {nr} rows x {nc} ch x 2 ({mb:.0} MB): {:.2} s",
        t.elapsed().as_secs_f64()
    );
    let t = Instant::now();
    let back = read_visset(&dir.join("timing_vis"))?;
    println!("VisSet read + validate: {:.2} s (equal: {})", t.elapsed().as_secs_f64(), back == vis);
    let t = Instant::now();
    write_uv_coverage_png(&dir.join("timing_uv.png"), &vis, "uv")?;
    println!("uv-coverage PNG of {} points: {:.2} s", nr * nc * 2, t.elapsed().as_secs_f64());
    Ok(())
}
