//! Time the gridder's passes as the runner uses them, on a visibility set that `beamfloor run`
//! wrote (its run folder's `visibilities/`, only the `.npy` arrays are read): the spectral PSFs
//! on the doubled grid (2N − 1 outputs), the Taylor residual images (N outputs), and the
//! degridding of N model images, each with w-stacking and with w ignored. Prints the median
//! wall time of each over a few repeats, for before/after comparisons of the gridder.
//!
//! Run (2 Taylor terms, the demo's 720 px of 18″, ε = 1e-6):
//! `cargo run --release -p beamfloor-imaging --example demo_gridding -- RUN/visibilities 720 18 1e-6 3`
use beamfloor_core::{Correlation, ImageGeometry};
use beamfloor_imaging::{
    GridOutput, GridPlan, GridderParams, ImagingOperator, TaylorTerms, WRange, WTerm,
};
use beamfloor_predict::VisSet;
use ndarray::{Array1, Array2, Array3};
use ndarray_npy::read_npy;
use num_complex::Complex64;
use std::path::Path;
use std::time::Instant;

fn load(dir: &Path) -> Result<VisSet, Box<dyn std::error::Error>> {
    let uvw_m: Array2<f64> = read_npy(dir.join("uvw_m.npy"))?;
    let freqs: Array1<f64> = read_npy(dir.join("frequencies_hz.npy"))?;
    let data: Array3<Complex64> = read_npy(dir.join("data.npy"))?;
    let weights: Array3<f64> = read_npy(dir.join("weights.npy"))?;
    let flags: Array3<bool> = read_npy(dir.join("flags.npy"))?;
    let n_rows = uvw_m.nrows();
    Ok(VisSet {
        frequencies_hz: freqs.to_vec(),
        channel_width_hz: 1.0,
        integration_s: 1.0,
        hour_angles_rad: vec![0.0],
        parallactic_angles_rad: vec![0.0],
        phase_centre_ra_rad: 0.0,
        phase_centre_dec_rad: 0.0,
        antenna1: vec![0; n_rows],
        antenna2: vec![1; n_rows],
        time_index: vec![0; n_rows],
        uvw_m,
        data,
        weights,
        flags,
        correlations: Correlation::BOTH.to_vec(),
        seed: 0,
        truth_hash: String::new(),
    })
}

fn median_time(repeats: usize, mut f: impl FnMut()) -> f64 {
    let mut t: Vec<f64> = (0..repeats)
        .map(|_| {
            let start = Instant::now();
            f();
            start.elapsed().as_secs_f64()
        })
        .collect();
    t.sort_by(|a, b| a.total_cmp(b));
    t[t.len() / 2]
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    if args.len() < 2 {
        return Err("usage: demo_gridding VIS_DIR [size_px cell_arcsec epsilon repeats]".into());
    }
    let vis = load(Path::new(&args[1]))?;
    let arg = |i: usize, d: f64| args.get(i).and_then(|s| s.parse().ok()).unwrap_or(d);
    let n = arg(2, 720.0) as usize;
    let cell = (arg(3, 18.0) / 3600.0).to_radians();
    let epsilon = arg(4, 1e-6);
    let repeats = arg(5, 3.0) as usize;
    let taylor = TaylorTerms { n_terms: 2, ref_freq_hz: 1.5e9 };
    let geometry = ImageGeometry::new(n, n, cell);
    let psf_geometry = ImageGeometry::new(2 * n, 2 * n, cell);
    let mut weights = vis.weights.clone();
    weights.zip_mut_with(&vis.flags, |w, &f| {
        if f {
            *w = 0.0
        }
    });
    let psf_values = weights.mapv(|w| Complex64::new(w, 0.0));
    let mut data = vis.data.clone();
    data.zip_mut_with(&weights, |v, &w| *v *= w);
    let freqs = &vis.frequencies_hz;
    let psf_out: Vec<GridOutput> = (0..2 * taylor.n_terms - 1)
        .map(|t| GridOutput { source: 0, channel_factors: taylor.channel_weights(t, freqs) })
        .collect();
    let res_out: Vec<GridOutput> = (0..taylor.n_terms)
        .map(|t| GridOutput { source: 0, channel_factors: taylor.channel_weights(t, freqs) })
        .collect();
    let factors: Vec<Vec<f64>> =
        (0..taylor.n_terms).map(|t| taylor.channel_weights(t, freqs)).collect();
    let models: Vec<Array2<f64>> =
        (0..taylor.n_terms)
            .map(|t| {
                Array2::from_shape_fn((n, n), |(y, x)| {
                    if (x * 7 + y * 13 + t) % 997 == 0 {
                        1.0
                    } else {
                        0.0
                    }
                })
            })
            .collect();
    let w_range = WRange::of_visibilities(&vis)?;
    println!(
        "{} rows x {} channels, {n}² image (PSF {}²), eps {epsilon:e}, {} threads, median of {repeats}",
        vis.n_rows(),
        vis.n_channels(),
        2 * n,
        rayon::current_num_threads()
    );
    for w_term in [WTerm::Stack, WTerm::Ignore] {
        let params = GridderParams { epsilon, w_term };
        let psf_plan = GridPlan::new(psf_geometry, &params, w_range)?;
        let plan = GridPlan::new(geometry, &params, w_range)?;
        let t_psf = median_time(repeats, || {
            psf_plan.grid(&vis, &[psf_values.view()], &psf_out).expect("psf");
        });
        let t_res = median_time(repeats, || {
            plan.grid(&vis, &[data.view()], &res_out).expect("residuals");
        });
        let t_deg = median_time(repeats, || {
            plan.degrid(&vis, &models, &factors).expect("degrid");
        });
        println!(
            "{w_term:?}: planes {} (PSF grid {}): PSF grid {t_psf:.3} s, residual grid {t_res:.3} s, degrid {t_deg:.3} s",
            plan.n_w_planes(),
            psf_plan.n_w_planes()
        );
    }
    // The runner's PSFs for the A strategies use w-stacking on the doubled grid; how far is the
    // PSF without w from it? max |PSF_stack − PSF_ignore| / peak within a radius of the centre.
    if args.iter().any(|a| a == "--compare-psf") {
        let one = [GridOutput { source: 0, channel_factors: vec![1.0; freqs.len()] }];
        let psf = |w_term| -> Result<Array2<f64>, Box<dyn std::error::Error>> {
            let plan = GridPlan::new(psf_geometry, &GridderParams { epsilon, w_term }, w_range)?;
            Ok(plan.grid(&vis, &[psf_values.view()], &one)?.remove(0))
        };
        let (stack, ignore) = (psf(WTerm::Stack)?, psf(WTerm::Ignore)?);
        let c = n as f64;
        let peak = stack[[n, n]];
        for r_max in [5.0, 20.0, c / 4.0, c / 2.0, c, 2.0 * c] {
            let mut worst = 0.0f64;
            for ((y, x), v) in stack.indexed_iter() {
                let r = ((y as f64 - c).powi(2) + (x as f64 - c).powi(2)).sqrt();
                if r <= r_max {
                    worst = worst.max((v - ignore[[y, x]]).abs());
                }
            }
            println!(
                "PSF stack vs ignore within {r_max:.0} px of the centre: max diff / peak {:.3e}",
                worst / peak
            );
        }
    }
    Ok(())
}
