//! Exports values for the Python cross-checks in `tests/crosscheck/test_metrics.py`.
mod common;

use beamfloor_core::ImageGeometry;
use beamfloor_metrics::{
    masked_statistics, radial_profile, source_free_mask, spectral_index_from_taylor,
    validity_from_threshold, MaskParams, RestoringBeam,
};
use common::{gaussian_noise, point, uniform};
use ndarray::Array2;
use serde_json::json;
use std::path::PathBuf;

fn export_dir() -> PathBuf {
    std::env::var_os("BEAMFLOOR_CROSSCHECK_DIR").map(PathBuf::from).unwrap_or_else(|| {
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/crosscheck")
    })
}

fn rows<T: Copy>(a: &Array2<T>) -> Vec<Vec<T>> {
    a.outer_iter().map(|r| r.to_vec()).collect()
}

#[test]
fn export_mask_statistics_profile_spectral() {
    let cell = 1e-5;
    let (ny, nx) = (40, 48);
    let g = ImageGeometry::new(nx, ny, cell);
    let beam = RestoringBeam {
        major_fwhm_rad: 1.6 * cell,
        minor_fwhm_rad: 1.2 * cell,
        position_angle_rad: 0.3,
    };
    let mut ext = point("extended", 9.0 * cell, 7.0 * cell, 0.4);
    ext.extent_rad = 3.5 * cell;
    let sources = vec![
        point("centre", 0.0, 0.0, 1.0),
        point("off-pixel", -11.4 * cell, -8.7 * cell, 0.5),
        point("outside", 27.0 * cell, -3.0 * cell, 0.5),
        ext,
    ];
    let params = MaskParams { exclusion_beams: 2.3, edge_margin_fraction: 0.05 };
    let response = Array2::from_shape_vec((ny, nx), uniform(ny * nx, 30)).unwrap();
    let validity = validity_from_threshold(&response, 0.1).unwrap();
    let mask = source_free_mask(&g, &beam, &sources, &params, Some(&validity)).unwrap();
    let image = gaussian_noise(ny, nx, 1.0, 31);
    let stats = masked_statistics(&image, &mask, &g, "image").unwrap();
    let bin = 3.0 * cell;
    let profile = radial_profile(&image, &g, Some(&mask), bin, "image").unwrap();

    // Random Taylor triples with I0 > 0 and their α, β.
    let u = uniform(30, 32);
    let spectral: Vec<_> = u
        .chunks(3)
        .map(|c| {
            let terms = [0.1 + 2.0 * c[0], 4.0 * (c[1] - 0.5), 3.0 * (c[2] - 0.5)];
            let s = spectral_index_from_taylor(&terms);
            json!({"terms": terms, "alpha": s.alpha, "beta": s.beta})
        })
        .collect();

    let out = json!({
        "nx": nx, "ny": ny, "cell_rad": cell,
        "beam_major_fwhm_rad": beam.major_fwhm_rad,
        "exclusion_beams": params.exclusion_beams,
        "edge_margin_fraction": params.edge_margin_fraction,
        "sources": sources.iter().map(|s| json!({"l": s.l_rad, "m": s.m_rad, "extent": s.extent_rad})).collect::<Vec<_>>(),
        "validity": rows(&validity),
        "mask": rows(&mask),
        "image": rows(&image),
        "stats": {
            "n": stats.n_pixels, "mean": stats.mean_jy_per_beam, "rms": stats.rms_jy_per_beam,
            "std": stats.rms_mean_removed_jy_per_beam, "mad_sigma": stats.mad_sigma_jy_per_beam,
        },
        "radial_bin_rad": bin,
        "profile": profile.iter().map(|b| json!({
            "r_inner": b.r_inner_rad, "n": b.n_pixels, "r_mean": b.r_mean_rad,
            "mean": b.mean_jy_per_beam, "rms": b.rms_jy_per_beam,
        })).collect::<Vec<_>>(),
        "spectral": spectral,
    });
    let dir = export_dir();
    std::fs::create_dir_all(&dir).expect("create export dir");
    std::fs::write(dir.join("metrics_checks.json"), out.to_string()).expect("write export");
}
