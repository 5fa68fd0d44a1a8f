//! Exports points, strengths and our results for the Python cross-check against the general
//! NUFFT libraries finufft and ducc0 (`tests/crosscheck/test_imaging.py`).
mod common;

use beamfloor_core::{ImageGeometry, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_imaging::{GridOutput, GridPlan, GridderParams, ImagingOperator, WRange, WTerm};
use ndarray::Array2;
use rand::Rng;
use std::path::PathBuf;

fn export_dir() -> PathBuf {
    std::env::var_os("BEAMFLOOR_CROSSCHECK_DIR").map(PathBuf::from).unwrap_or_else(|| {
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/crosscheck")
    })
}

fn floats(v: impl Iterator<Item = f64>) -> serde_json::Value {
    serde_json::Value::Array(v.map(|x| serde_json::json!(x)).collect())
}

#[test]
fn export_nufft_type1_type2() {
    // One channel at ν = c, so uvw in metres equals uvw in wavelengths; w = 0 (a 2-D transform).
    // A non-square image pins down which axis is which.
    let g = ImageGeometry::new(64, 48, 1e-3);
    let mut rng = common::rng(8);
    let n = 1500;
    let uv_max = 0.5 / g.cell_rad;
    let uvw =
        Array2::from_shape_fn(
            (n, 3),
            |(_, k)| {
                if k < 2 {
                    rng.random_range(-uv_max..uv_max)
                } else {
                    0.0
                }
            },
        );
    let mut vis = common::visset(uvw, vec![SPEED_OF_LIGHT_M_PER_S]);
    let values = common::random_values(&mut rng, vis.data.dim());
    vis.data = values.clone();
    // Only the first hand carries strengths (the operator sums hands before gridding).
    vis.data.slice_mut(ndarray::s![.., .., 1]).fill(num_complex::Complex64::new(0.0, 0.0));
    let model = common::random_image(&mut rng, g.ny, g.nx);
    let mut cases = Vec::new();
    for eps in [1e-5, 1e-9] {
        let params = GridderParams { epsilon: eps, w_term: WTerm::Ignore };
        let plan = GridPlan::new(g, &params, WRange::new(0.0, 0.0).unwrap()).unwrap();
        let out = [GridOutput { source: 0, channel_factors: vec![1.0] }];
        let image = plan.grid(&vis, &[vis.data.view()], &out).unwrap().remove(0);
        let predicted = plan.degrid(&vis, std::slice::from_ref(&model), &[vec![1.0]]).unwrap();
        cases.push(serde_json::json!({
            "epsilon": eps,
            "type1_real_image": floats(image.iter().copied()),
            "type2_re": floats((0..n).map(|r| predicted[[r, 0, 0]].re)),
            "type2_im": floats((0..n).map(|r| predicted[[r, 0, 0]].im)),
        }));
    }
    let json = serde_json::json!({
        "nx": g.nx,
        "ny": g.ny,
        "cell_rad": g.cell_rad,
        "u_lambda": floats(vis.uvw_m.column(0).iter().copied()),
        "v_lambda": floats(vis.uvw_m.column(1).iter().copied()),
        "strength_re": floats((0..n).map(|r| vis.data[[r, 0, 0]].re)),
        "strength_im": floats((0..n).map(|r| vis.data[[r, 0, 0]].im)),
        "model_image": floats(model.iter().copied()),
        "cases": cases,
    });
    let dir = export_dir();
    std::fs::create_dir_all(&dir).expect("create export dir");
    std::fs::write(dir.join("imaging_nufft.json"), json.to_string()).expect("write export");
}
