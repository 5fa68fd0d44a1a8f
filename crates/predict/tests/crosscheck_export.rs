//! Exports a no-beam prediction (three points and one Gaussian) for
//! `tests/crosscheck/test_predict.py`, which recomputes it directly with numpy.
mod common;

use beamfloor_predict::{predict_visibilities, PredictParams};
use std::path::PathBuf;

fn export_dir() -> PathBuf {
    std::env::var_os("BEAMFLOOR_CROSSCHECK_DIR").map(PathBuf::from).unwrap_or_else(|| {
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/crosscheck")
    })
}

#[test]
fn export_prediction() {
    let obs = common::observation(24);
    let comps = common::sky();
    let mut cases = Vec::new();
    for w_term in [true, false] {
        let params = PredictParams { w_term, ..Default::default() };
        let vis = predict_visibilities(&obs, &comps, None, &params, &|_| {}).unwrap();
        cases.push(serde_json::json!({
            "w_term": w_term,
            "re": vis.iter().map(|c| c.re).collect::<Vec<_>>(),
            "im": vis.iter().map(|c| c.im).collect::<Vec<_>>(),
            "shape": vis.shape(),
        }));
    }
    let components: Vec<_> = comps
        .iter()
        .map(|c| {
            let gaussian = match c.shape {
                beamfloor_sky::Shape::Point => serde_json::Value::Null,
                beamfloor_sky::Shape::Gaussian(g) => serde_json::json!({
                    "major_fwhm_rad": g.major_fwhm_rad,
                    "minor_fwhm_rad": g.minor_fwhm_rad,
                    "position_angle_rad": g.position_angle_rad,
                }),
            };
            serde_json::json!({
                "l": c.l, "m": c.m, "flux_jy": c.spectrum.flux_jy,
                "ref_freq_hz": c.spectrum.ref_freq_hz, "alpha": c.spectrum.alpha,
                "beta": c.spectrum.beta, "gaussian": gaussian,
            })
        })
        .collect();
    let value = serde_json::json!({
        "frequencies_hz": obs.channels.frequencies_hz,
        "uvw_m": obs.rows.iter().map(|r| r.uvw_m).collect::<Vec<_>>(),
        "components": components,
        "cases": cases,
    });
    let dir = export_dir();
    std::fs::create_dir_all(&dir).expect("create export dir");
    std::fs::write(dir.join("predict_no_beam.json"), value.to_string()).expect("write export");
}
