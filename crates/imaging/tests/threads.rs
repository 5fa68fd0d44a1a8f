//! The gridder's results must not depend on the number of rayon threads, bit for bit: the
//! runner's whole-run determinism rests on it. Spreading gives every grid row band to one task
//! that adds its samples in a fixed order, degridding gives each sample to one task, and every
//! row or column FFT is done whole by one task; a change that lets two threads race on one sum
//! (or splits a sum by thread count) shows up here as a differing bit.
mod common;

use beamfloor_core::ImageGeometry;
use beamfloor_imaging::{GridOutput, GridPlan, GridderParams, ImagingOperator, WRange, WTerm};

#[test]
fn grid_and_degrid_are_bitwise_the_same_on_one_and_three_threads() {
    // A 3.2° field with |w| up to 400 λ (several w planes) and data reaching the grid's edge
    // (max |u| = 0.49/cell at the top channel, so footprints wrap around the padded grid).
    let g = ImageGeometry::new(96, 80, (2.0f64 / 60.0).to_radians());
    let mut rng = common::rng(21);
    let vis = common::random_visset(&mut rng, 400, 6, 0.9e9, 0.49 / g.cell_rad, 400.0);
    let values = common::random_values(&mut rng, vis.data.dim());
    let psf = values.mapv(|v| num_complex::Complex64::new(v.norm(), 0.0));
    let image = common::random_image(&mut rng, g.ny, g.nx);
    let f0 = vec![1.0; vis.n_channels()];
    let f1: Vec<f64> = (0..vis.n_channels()).map(|c| c as f64 / 5.0 - 0.5).collect();
    let outputs = [
        GridOutput { source: 0, channel_factors: f0.clone() },
        GridOutput { source: 0, channel_factors: f1.clone() },
        GridOutput { source: 1, channel_factors: f1.clone() },
    ];
    let w_range = WRange::of_visibilities(&vis).unwrap();
    for w_term in [WTerm::Stack, WTerm::Ignore] {
        let plan = GridPlan::new(g, &GridderParams { epsilon: 1e-6, w_term }, w_range).unwrap();
        let run = |threads: usize| {
            let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().unwrap();
            pool.install(|| {
                (
                    plan.grid(&vis, &[values.view(), psf.view()], &outputs).unwrap(),
                    plan.degrid(
                        &vis,
                        &[image.clone(), image.t().to_owned().reversed_axes()],
                        &[f0.clone(), f1.clone()],
                    )
                    .unwrap(),
                )
            })
        };
        let (g1, d1) = run(1);
        let (g3, d3) = run(3);
        for (a, b) in g1.iter().zip(&g3) {
            assert!(a.iter().zip(b.iter()).all(|(x, y)| x.to_bits() == y.to_bits()), "{w_term:?}");
        }
        assert!(d1
            .iter()
            .zip(d3.iter())
            .all(|(x, y)| x.re.to_bits() == y.re.to_bits() && x.im.to_bits() == y.im.to_bits()));
        assert!(g1[0].iter().any(|&v| v != 0.0));
    }
}
