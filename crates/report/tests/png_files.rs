//! Every kind of PNG is written, decodes as a well-formed PNG of the expected size, and leaves no
//! temporary file behind. Set BEAMFLOOR_REPORT_PNG_DIR to keep the files for looking at them.

mod common;

use std::path::{Path, PathBuf};

use beamfloor_core::ImageGeometry;
use beamfloor_report::{
    write_bar_chart, write_image_png, write_line_plot, write_uv_coverage_png, AxisScale, BarChart,
    ColourMap, ColourScale, ImagePngOptions, LinePlot, ReportError, Series, Stretch,
};
use ndarray::Array2;

/// CRC-32 as defined for PNG chunks (ISO/IEC 15948, Annex D: polynomial 0xEDB88320, reflected,
/// initial and final XOR 0xFFFFFFFF), computed bit by bit.
fn crc32(bytes: &[u8]) -> u32 {
    let mut c = 0xFFFF_FFFFu32;
    for &b in bytes {
        c ^= b as u32;
        for _ in 0..8 {
            c = if c & 1 != 0 { 0xEDB8_8320 ^ (c >> 1) } else { c >> 1 };
        }
    }
    c ^ 0xFFFF_FFFF
}

#[test]
fn crc_reference_value() {
    // Check value of the CRC-32 used by PNG/zlib for the ASCII string "123456789": 0xCBF43926
    // (the standard catalogue check value for CRC-32/ISO-HDLC).
    assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
}

/// Parse a PNG file (signature, chunk lengths and CRCs, IHDR first, IDAT present, IEND last)
/// and return its (width, height).
fn png_size(path: &Path) -> (u32, u32) {
    let b = std::fs::read(path).unwrap();
    // The 8-byte PNG signature (PNG spec, section 5.2).
    assert_eq!(&b[..8], &[0x89, b'P', b'N', b'G', 0x0D, 0x0A, 0x1A, 0x0A], "{path:?}");
    let mut i = 8;
    let mut kinds = Vec::new();
    let mut size = (0, 0);
    while i < b.len() {
        let len = u32::from_be_bytes(b[i..i + 4].try_into().unwrap()) as usize;
        let kind = &b[i + 4..i + 8];
        let body = &b[i + 8..i + 8 + len];
        let crc = u32::from_be_bytes(b[i + 8 + len..i + 12 + len].try_into().unwrap());
        assert_eq!(crc32(&b[i + 4..i + 8 + len]), crc, "bad CRC in {path:?}");
        if kind == b"IHDR" {
            size = (
                u32::from_be_bytes(body[0..4].try_into().unwrap()),
                u32::from_be_bytes(body[4..8].try_into().unwrap()),
            );
        }
        kinds.push(String::from_utf8_lossy(kind).to_string());
        i += 12 + len;
    }
    assert_eq!(i, b.len());
    assert_eq!(kinds.first().map(String::as_str), Some("IHDR"));
    assert_eq!(kinds.last().map(String::as_str), Some("IEND"));
    assert!(kinds.iter().any(|k| k == "IDAT"));
    size
}

fn out_dir() -> (Option<tempfile::TempDir>, PathBuf) {
    match std::env::var_os("BEAMFLOOR_REPORT_PNG_DIR") {
        Some(d) => {
            let d = PathBuf::from(d);
            std::fs::create_dir_all(&d).unwrap();
            (None, d)
        }
        None => {
            let t = tempfile::tempdir().unwrap();
            let p = t.path().to_path_buf();
            (Some(t), p)
        }
    }
}

/// A test sky: a Gaussian main source at the centre and a fainter one to the north-east, plus
/// a low ripple, so orientation and stretch can be judged by eye.
fn test_image(g: &ImageGeometry) -> Array2<f64> {
    Array2::from_shape_fn((g.ny, g.nx), |(iy, ix)| {
        let (l, m) = g.lm_of_pixel(ix as f64, iy as f64);
        let c = g.cell_rad;
        let main = (-(l * l + m * m) / (2.0 * (3.0 * c).powi(2))).exp();
        let (l1, m1) = (20.0 * c, 30.0 * c);
        let ne = 0.05 * (-((l - l1).powi(2) + (m - m1).powi(2)) / (2.0 * (2.0 * c).powi(2))).exp();
        main + ne + 1e-3 * ((l / c) * 0.4).sin() * ((m / c) * 0.3).cos()
    })
}

#[test]
fn image_quicklooks() {
    let (_keep, dir) = out_dir();
    let g = ImageGeometry::new(128, 96, 4.0e-5);
    let im = test_image(&g);
    let lin = ColourScale::spanning(&[im.view()], Stretch::Linear).unwrap();
    let o = ImagePngOptions::new("restored (linear)", lin, ColourMap::Sequential, "Jy/beam");
    let p = dir.join("image_linear.png");
    write_image_png(&p, im.view(), &g, &o).unwrap();
    let (w, h) = png_size(&p);
    // 560 px on the long axis (128 px), 420 on the short one, plus fixed margins.
    assert_eq!((w, h), (560 + 80 + 24 + 150, 420 + 50 + 60 + 12));

    let asinh = ColourScale::new(-2e-3, 1.0, Stretch::Asinh { softening: 2e-3 }).unwrap();
    let mut o = ImagePngOptions::new("restored (asinh)", asinh, ColourMap::Sequential, "Jy/beam");
    // An elongated beam at PA 30 deg (north through east): on screen it leans up and left.
    o.beam = Some(beamfloor_report::RestoringBeam {
        major_rad: 12.0 * g.cell_rad,
        minor_rad: 5.0 * g.cell_rad,
        position_angle_rad: 30f64.to_radians(),
    });
    let p = dir.join("image_asinh.png");
    write_image_png(&p, im.view(), &g, &o).unwrap();
    png_size(&p);

    let mut resid = im.mapv(|v| v - v.round());
    resid[[0, 0]] = f64::NAN;
    let sym = ColourScale::symmetric(&[resid.view()], Stretch::Linear).unwrap();
    let o = ImagePngOptions::new("residual", sym, ColourMap::Diverging, "Jy/beam");
    let p = dir.join("image_residual.png");
    write_image_png(&p, resid.view(), &g, &o).unwrap();
    png_size(&p);

    // A field of several degrees switches the axes to degrees.
    let wide = ImageGeometry::new(200, 200, 4.0e-4);
    let imw = test_image(&wide);
    let o = ImagePngOptions::new("wide field", lin, ColourMap::Sequential, "Jy/beam");
    write_image_png(&dir.join("image_wide.png"), imw.view(), &wide, &o).unwrap();
    png_size(&dir.join("image_wide.png"));
}

#[test]
fn image_input_errors() {
    let tmp = tempfile::tempdir().unwrap();
    let g = ImageGeometry::new(16, 16, 1e-4);
    let im = Array2::<f64>::zeros((16, 15));
    let s = ColourScale::new(0.0, 1.0, Stretch::Linear).unwrap();
    let o = ImagePngOptions::new("t", s, ColourMap::Sequential, "Jy");
    let err = write_image_png(&tmp.path().join("a.png"), im.view(), &g, &o).unwrap_err();
    assert!(matches!(err, ReportError::InvalidInput { .. }), "{err}");
    let im = Array2::<f64>::zeros((16, 16));
    let err = write_image_png(&tmp.path().join("a.jpg"), im.view(), &g, &o).unwrap_err();
    assert!(matches!(err, ReportError::BadPath { .. }), "{err}");
    let err =
        write_image_png(&tmp.path().join("no/such/dir/a.png"), im.view(), &g, &o).unwrap_err();
    assert!(matches!(err, ReportError::Plot { .. } | ReportError::Io { .. }), "{err}");
    assert_eq!(std::fs::read_dir(tmp.path()).unwrap().count(), 0, "no temporary left behind");
}

#[test]
fn line_plots() {
    let (_keep, dir) = out_dir();
    let r: Vec<f64> = (0..200).map(|i| i as f64 * 0.01).collect();
    let airy = |x: f64, s: f64| {
        // An illustrative beam-like profile: a squared sinc, scaled in radius.
        let z = std::f64::consts::PI * x * s;
        if z == 0.0 {
            1.0
        } else {
            (z.sin() / z).powi(2)
        }
    };
    let mut plot = LinePlot::new("radial power pattern", "radius [deg]", "power");
    plot.y_scale = AxisScale::Log;
    for (name, s) in [("1.0 GHz", 1.0), ("1.5 GHz", 1.5), ("2.0 GHz", 2.0)] {
        plot.series.push(Series {
            name: name.into(),
            points: r.iter().map(|&x| (x, airy(x, s))).collect(),
        });
    }
    let p = dir.join("lines_log.png");
    write_line_plot(&p, &plot).unwrap();
    assert_eq!(png_size(&p), (800, 560));

    let mut sweep = LinePlot::new("floor against PA bin", "PA bin [deg]", "floor / peak");
    sweep.x_scale = AxisScale::Log;
    sweep.y_scale = AxisScale::Log;
    sweep.markers = true;
    sweep.series.push(Series {
        name: "A-projection".into(),
        points: vec![(0.5, 2e-6), (1.0, 4e-6), (2.0, 9e-6), (5.0, f64::NAN), (10.0, 1.1e-4)],
    });
    sweep.series.push(Series {
        name: "average beam".into(),
        points: vec![(0.5, 3e-4), (1.0, 3e-4), (2.0, 3.1e-4), (5.0, 3.0e-4), (10.0, 3.2e-4)],
    });
    let p = dir.join("lines_sweep.png");
    write_line_plot(&p, &sweep).unwrap();
    png_size(&p);

    let empty = LinePlot::new("nothing", "x", "y");
    assert!(matches!(
        write_line_plot(&dir.join("empty.png"), &empty).unwrap_err(),
        ReportError::InvalidInput { .. }
    ));
}

#[test]
fn bar_charts() {
    let (_keep, dir) = out_dir();
    let bars = vec![
        ("all effects".to_string(), 4.1e-4),
        ("no beam rotation".to_string(), 1.2e-4),
        ("no frequency scaling".to_string(), 2.9e-4),
        ("no squint".to_string(), 3.8e-4),
        ("no pointing errors".to_string(), 4.0e-4),
        ("no w-term".to_string(), 0.0),
        ("operator only".to_string(), 3.0e-7),
    ];
    let mut c =
        BarChart::new("residual floor with one effect switched off", "floor / peak", bars.clone());
    c.scale = AxisScale::Log;
    let p = dir.join("bars_log.png");
    write_bar_chart(&p, &c).unwrap();
    let (w, h) = png_size(&p);
    assert_eq!((w, h), (800, 110 + 42 * 7));
    let mut c = BarChart::new("cost of each effect", "floor / peak", bars);
    c.bars[5].1 = -2e-5;
    let p = dir.join("bars_linear.png");
    write_bar_chart(&p, &c).unwrap();
    png_size(&p);
    let one = BarChart::new("one bar", "floor / peak", vec![("only".to_string(), 2.0)]);
    let p = dir.join("bars_one.png");
    write_bar_chart(&p, &one).unwrap();
    assert_eq!(png_size(&p), (800, 200));
    let none = BarChart::new("no bars", "floor / peak", vec![]);
    assert!(write_bar_chart(&dir.join("bars_none.png"), &none).is_err());
}

#[test]
fn uv_coverage() {
    let (_keep, dir) = out_dir();
    let vis = common::vis_fixture(12, 40, 8);
    let p = dir.join("uv_coverage.png");
    write_uv_coverage_png(&p, &vis, "uv-coverage").unwrap();
    assert_eq!(png_size(&p), (750, 600));
}
