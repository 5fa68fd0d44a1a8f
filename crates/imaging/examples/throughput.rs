//! Rough throughput of the gridder (visibilities per second) on a synthetic observation.
//!
//! Run: `RAYON_NUM_THREADS=2 cargo run --release -p beamfloor-imaging --example throughput`
//! (add `-- --no-w` to skip the w-stacking cases).
//! A "visibility" here is one (row, channel) sample with both hands (summed for Stokes I).
use beamfloor_core::{Correlation, ImageGeometry, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_imaging::{
    dirty_images, imaging_weights, predict_visibilities, GridPlan, GridderParams, TaylorTerms,
    WRange, WTerm, Weighting,
};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3};
use num_complex::Complex64;
use std::time::Instant;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let (n_rows, n_chan) = (20_000usize, 64usize);
    let geometry = ImageGeometry::new(512, 512, (20.0f64 / 3600.0).to_radians());
    let freqs: Vec<f64> = (0..n_chan).map(|c| 1.0e9 + c as f64 * 1.0e9 / n_chan as f64).collect();
    // Baselines on slow spirals (a stand-in for Earth-rotation tracks), uv within the image's
    // uv range at the top channel, |w| up to 2000 wavelengths.
    let uv_max_m = 0.45 / geometry.cell_rad * SPEED_OF_LIGHT_M_PER_S / freqs[n_chan - 1];
    let w_max_m = 2000.0 * SPEED_OF_LIGHT_M_PER_S / freqs[n_chan - 1];
    let uvw = Array2::from_shape_fn((n_rows, 3), |(r, k)| {
        let (b, t) = ((r / 200) as f64, (r % 200) as f64);
        let radius = uv_max_m * (0.05 + 0.95 * ((b * 0.618) % 1.0));
        let angle = b * 2.4 + t * 0.01;
        match k {
            0 => radius * angle.cos(),
            1 => radius * angle.sin(),
            _ => w_max_m * (b * 0.37 + t * 0.003).sin(),
        }
    });
    let vis = VisSet {
        frequencies_hz: freqs,
        channel_width_hz: 1e9 / n_chan as f64,
        integration_s: 10.0,
        hour_angles_rad: vec![0.0],
        parallactic_angles_rad: vec![0.0],
        phase_centre_ra_rad: 0.0,
        phase_centre_dec_rad: 0.5,
        antenna1: vec![0; n_rows],
        antenna2: vec![1; n_rows],
        time_index: vec![0; n_rows],
        uvw_m: uvw,
        data: Array3::from_elem((n_rows, n_chan, 2), Complex64::new(1.0, 0.0)),
        weights: Array3::ones((n_rows, n_chan, 2)),
        flags: Array3::from_elem((n_rows, n_chan, 2), false),
        correlations: Correlation::BOTH.to_vec(),
        seed: 0,
        truth_hash: String::new(),
    };
    let n_vis = (n_rows * n_chan) as f64;
    let weights = imaging_weights(&vis, &geometry, Weighting::Natural)?;
    let w_range = WRange::of_visibilities(&vis)?;
    println!(
        "{} rows x {} channels, {}x{} image, {} threads",
        n_rows,
        n_chan,
        geometry.nx,
        geometry.ny,
        rayon::current_num_threads()
    );
    let w_terms: &[WTerm] = if std::env::args().any(|a| a == "--no-w") {
        &[WTerm::Ignore]
    } else {
        &[WTerm::Ignore, WTerm::Stack]
    };
    for &w_term in w_terms {
        for epsilon in [1e-4, 1e-7] {
            let t = Instant::now();
            let plan = GridPlan::new(geometry, &GridderParams { epsilon, w_term }, w_range)?;
            let t_plan = t.elapsed().as_secs_f64();
            for n_terms in [1usize, 2] {
                let taylor = TaylorTerms { n_terms, ref_freq_hz: 1.5e9 };
                let t = Instant::now();
                let d = dirty_images(&plan, &vis, &weights, &taylor)?;
                let t_grid = t.elapsed().as_secs_f64();
                let t = Instant::now();
                let _v = predict_visibilities(&plan, &vis, &d.residuals, 1.5e9)?;
                let t_degrid = t.elapsed().as_secs_f64();
                println!(
                    "{w_term:?} eps {epsilon:e} (W = {}, {} w planes, plan {t_plan:.2} s), {} Taylor \
                     term(s): grid {} images {:.2e} vis/s, degrid {} images {:.2e} vis/s",
                    plan.kernel().support(),
                    plan.n_w_planes(),
                    n_terms,
                    3 * n_terms - 1,
                    n_vis / t_grid,
                    n_terms,
                    n_vis / t_degrid
                );
            }
        }
    }
    Ok(())
}
