//! Imaging weights: natural, uniform and Briggs robust (Briggs 1995, PhD thesis, New Mexico
//! Tech, chapter 3).
mod common;

use beamfloor_core::{ImageGeometry, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_imaging::{imaging_weights, weight_density, Weighting};
use ndarray::Array2;
use rand::Rng;

fn test_set() -> (beamfloor_predict::VisSet, ImageGeometry) {
    let g = ImageGeometry::new(64, 64, 2e-3);
    let mut rng = common::rng(4);
    // Dense inner coverage so that many cells hold several samples.
    let mut vis = common::random_visset(&mut rng, 300, 6, 1e9, 120.0, 50.0);
    vis.weights.mapv_inplace(|_| rng.random_range(0.2..3.0));
    for r in (0..vis.n_rows()).step_by(17) {
        vis.flags[[r, 2, 1]] = true;
    }
    (vis, g)
}

fn normalised(w: &ndarray::Array3<f64>) -> Vec<f64> {
    let s: f64 = w.sum();
    w.iter().map(|x| x / s).collect()
}

#[test]
fn uniform_density_is_flat_where_sampled() {
    // Definition of uniform weighting: every sampled uv cell carries the same total weight
    // (Briggs 1995, section 3.2); here exactly 1 per cell.
    let (vis, g) = test_set();
    let w = imaging_weights(&vis, &g, Weighting::Uniform).unwrap();
    let d = weight_density(&vis, &g, &w).unwrap();
    let natural =
        weight_density(&vis, &g, &imaging_weights(&vis, &g, Weighting::Natural).unwrap()).unwrap();
    let sampled = d.iter().filter(|&&x| x > 0.0).count();
    assert!(sampled > 100);
    // Natural density is far from flat on these data (a guard that the check means something).
    let nat_max = natural.iter().cloned().fold(0.0, f64::max);
    assert!(nat_max > 5.0);
    for &x in d.iter().filter(|&&x| x > 0.0) {
        assert!((x - 1.0).abs() < 1e-12, "cell weight {x}");
    }
    // Flagged samples get no weight.
    assert_eq!(w[[0, 2, 1]], 0.0);
}

#[test]
fn briggs_limits_are_natural_and_uniform() {
    // Briggs (1995): robustness +5 ≈ natural, −5 ≈ uniform (after normalising the total).
    // The deviation is ~ W_k f² (R = 5) or 1/(W_k f²) (R = −5), both ~1e-9 here; 1e-6 required.
    let (vis, g) = test_set();
    let nat = normalised(&imaging_weights(&vis, &g, Weighting::Natural).unwrap());
    let uni = normalised(&imaging_weights(&vis, &g, Weighting::Uniform).unwrap());
    let plus = normalised(&imaging_weights(&vis, &g, Weighting::Briggs { robust: 5.0 }).unwrap());
    let minus = normalised(&imaging_weights(&vis, &g, Weighting::Briggs { robust: -5.0 }).unwrap());
    let max_rel = |a: &[f64], b: &[f64]| {
        a.iter()
            .zip(b)
            .filter(|(_, b)| **b > 0.0)
            .map(|(a, b)| (a / b - 1.0).abs())
            .fold(0.0, f64::max)
    };
    assert!(max_rel(&plus, &nat) < 1e-6, "{}", max_rel(&plus, &nat));
    assert!(max_rel(&minus, &uni) < 1e-6, "{}", max_rel(&minus, &uni));
    // And R = 0 is neither (a guard that the limits are not trivially equal).
    let zero = normalised(&imaging_weights(&vis, &g, Weighting::Briggs { robust: 0.0 }).unwrap());
    assert!(max_rel(&zero, &nat) > 1e-2 && max_rel(&zero, &uni) > 1e-2);
}

#[test]
fn briggs_worked_example() {
    // Hand-worked case of Briggs (1995) eq. 3.5: three samples of weight 1, two in one uv cell
    // (with their mirrors, 4 gridded points there) and one alone (2 points at ±(u, v)).
    // Cells: A = {s0, s1} with W_A = 2 at +uv and 2 at −uv; B = {s2} with W_B = 1 at ± uv.
    // Σ_k W_k² = 2·4 + 2·1 = 10, Σ_i w_i = 6 → f² = (5·10^−R)² / (10/6). For R = 0: f² = 15.
    // Robust weights: s0, s1 → 1/(1 + 2·15) = 1/31; s2 → 1/(1 + 15) = 1/16. Uniform: 1/2, 1/2, 1.
    let g = ImageGeometry::new(32, 32, 0.01);
    let du = 1.0 / (32.0 * 0.01); // uv cell, wavelengths
    let to_m = SPEED_OF_LIGHT_M_PER_S / 1e9;
    let uvw = Array2::from_shape_vec(
        (3, 3),
        vec![3.0 * du, du, 0.0, 3.1 * du, 0.9 * du, 0.0, -5.0 * du, 2.0 * du, 0.0],
    )
    .unwrap()
        * to_m;
    let mut vis = common::visset(uvw, vec![1e9]);
    vis.flags.slice_mut(ndarray::s![.., .., 1]).fill(true); // one hand only
    let robust = imaging_weights(&vis, &g, Weighting::Briggs { robust: 0.0 }).unwrap();
    let uniform = imaging_weights(&vis, &g, Weighting::Uniform).unwrap();
    for (r, want_robust, want_uniform) in
        [(0, 1.0 / 31.0, 0.5), (1, 1.0 / 31.0, 0.5), (2, 1.0 / 16.0, 1.0)]
    {
        assert!((robust[[r, 0, 0]] - want_robust).abs() < 1e-15);
        assert!((uniform[[r, 0, 0]] - want_uniform).abs() < 1e-15);
        assert_eq!(robust[[r, 0, 1]], 0.0);
    }
}
