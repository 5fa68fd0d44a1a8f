//! Dot-product test of the operator pair: ⟨G x, y⟩ = ⟨x, Gᴴ y⟩ for the forward model G (degrid)
//! and its adjoint Gᴴ (grid), with ⟨a, b⟩ = Re Σ conj(a) b. This is the standard check that two
//! codes implement an operator and its adjoint (e.g. Claerbout, "Earth Soundings Analysis:
//! Processing versus Inversion", 1992, section 5.6 "dot-product test").
mod common;

use beamfloor_core::ImageGeometry;
use beamfloor_imaging::{
    DirectOperator, GridOutput, GridPlan, GridderParams, ImagingOperator, WRange, WTerm,
};
use proptest::prelude::*;

/// Both sides of the dot-product test and the scale ‖Gx‖‖y‖ they are compared at.
fn dot_sides<O: ImagingOperator>(op: &O, seed: u64, n_rows: usize, max_w: f64) -> (f64, f64, f64) {
    let g = op.geometry();
    let mut rng = common::rng(seed);
    let max_uv = 0.5 / g.cell_rad;
    let vis = common::random_visset(&mut rng, n_rows, 3, 1.0e9, 1.2 * max_uv, max_w);
    let x = common::random_image(&mut rng, g.ny, g.nx);
    let y = common::random_values(&mut rng, vis.data.dim());
    // A non-trivial channel factor (a Taylor-like weight) on both sides.
    let f: Vec<f64> = vec![0.7, -0.2, 1.3];
    let gx = op.degrid(&vis, std::slice::from_ref(&x), std::slice::from_ref(&f)).unwrap();
    let ghy = op.grid(&vis, &[y.view()], &[GridOutput { source: 0, channel_factors: f }]).unwrap();
    let lhs: f64 = gx.iter().zip(y.iter()).map(|(a, b)| (a.conj() * b).re).sum();
    let rhs: f64 = x.iter().zip(ghy[0].iter()).map(|(a, b)| a * b).sum();
    let scale = gx.iter().map(|v| v.norm_sqr()).sum::<f64>().sqrt()
        * y.iter().map(|v| v.norm_sqr()).sum::<f64>().sqrt();
    // Guard against a vacuous pass (both sides zero).
    assert!(scale > 0.0 && rhs.abs() > 1e-6 * scale, "degenerate dot test: {lhs} {rhs} {scale}");
    (lhs, rhs, scale)
}

proptest! {
    // Few cases so the whole file runs in seconds; the seed of each case is drawn by proptest and
    // feeds our own seeded generator.
    #![proptest_config(ProptestConfig { cases: 12, ..ProptestConfig::default() })]

    #[test]
    fn gridder_passes_dot_product_test(
        half_nx in 4usize..24, half_ny in 4usize..24,
        cell_arcmin in 0.5f64..60.0,
        eps_exp in 2i32..12,
        stack in any::<bool>(),
        max_w in 0.0f64..400.0,
        seed in 0u64..1_000_000,
    ) {
        let g = ImageGeometry::new(2 * half_nx, 2 * half_ny, cell_arcmin.to_radians() / 60.0);
        let params = GridderParams {
            epsilon: 10f64.powi(-eps_exp),
            w_term: if stack { WTerm::Stack } else { WTerm::Ignore },
        };
        let plan = GridPlan::new(g, &params, WRange::new(-max_w - 1.0, max_w + 1.0).unwrap()).unwrap();
        let (lhs, rhs, scale) = dot_sides(&plan, seed, 40, max_w);
        // Exact adjoints up to f64 rounding: the sums have ~1e5 terms, so rounding stays well
        // below 1e-12 of the Cauchy–Schwarz scale ‖Gx‖‖y‖.
        prop_assert!((lhs - rhs).abs() <= 1e-12 * scale, "{lhs} vs {rhs}, scale {scale}");
    }
}

#[test]
fn direct_operator_passes_dot_product_test() {
    // Same test for the reference operator, including the w-term.
    let g = ImageGeometry::new(24, 20, 2e-3);
    let op = DirectOperator { geometry: g, include_w: true };
    let (lhs, rhs, scale) = dot_sides(&op, 7, 30, 300.0);
    assert!((lhs - rhs).abs() <= 1e-12 * scale, "{lhs} vs {rhs}");
}
