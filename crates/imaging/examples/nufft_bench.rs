//! Our side of `scripts/bench_nufft.py`: time the gridder on points the script wrote, and save
//! the result for the script's accuracy check.
//!
//! Usage: `nufft_bench DIR OP EPS THREADS REPS W NX NY CELL_RAD`
//! - DIR holds `uvw_m.npy` (rows × 3, metres), `freq_hz.npy` (channels) and, for OP = `grid`,
//!   `vis.npy` (rows × channels, complex128), for OP = `degrid`, `image.npy` (NY × NX, f64);
//! - OP `grid`: the dirty image Re Σ V e^{+2πi (u l + v m [+ w (n − 1)])} (type-1-like);
//!   OP `degrid`: V = Σ I e^{−2πi (u l + v m [+ w (n − 1)])} (type-2-like);
//! - W = 1 for w-stacking, 0 to ignore w.
//!
//! Each repetition plans the operator and runs it (the libraries it is compared with plan inside
//! each call too); the median over REPS and the plan's share are printed as one JSON line. The
//! first repetition's result is written to `DIR/ours_grid.npy` or `DIR/ours_degrid.npy`.
use beamfloor_core::{Correlation, ImageGeometry};
use beamfloor_imaging::{GridOutput, GridPlan, GridderParams, ImagingOperator, WRange, WTerm};
use beamfloor_predict::VisSet;
use ndarray::{Array1, Array2, Array3, Axis};
use ndarray_npy::{read_npy, write_npy};
use num_complex::Complex64;
use std::path::PathBuf;
use std::time::Instant;

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    if args.len() != 10 {
        return Err("usage: nufft_bench DIR OP EPS THREADS REPS W NX NY CELL_RAD".into());
    }
    let dir = PathBuf::from(&args[1]);
    let op = args[2].as_str();
    let epsilon: f64 = args[3].parse()?;
    let threads: usize = args[4].parse()?;
    let reps: usize = args[5].parse()?;
    let w_term = if args[6] == "1" { WTerm::Stack } else { WTerm::Ignore };
    let (nx, ny): (usize, usize) = (args[7].parse()?, args[8].parse()?);
    let cell_rad: f64 = args[9].parse()?;

    let uvw_m: Array2<f64> = read_npy(dir.join("uvw_m.npy"))?;
    let freqs: Array1<f64> = read_npy(dir.join("freq_hz.npy"))?;
    let (n_rows, n_chan) = (uvw_m.nrows(), freqs.len());
    let data: Array3<Complex64> = if op == "grid" {
        let v: Array2<Complex64> = read_npy(dir.join("vis.npy"))?;
        v.insert_axis(Axis(2))
    } else {
        Array3::zeros((n_rows, n_chan, 1))
    };
    let vis = VisSet {
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
        weights: Array3::ones((n_rows, n_chan, 1)),
        flags: Array3::from_elem((n_rows, n_chan, 1), false),
        data,
        correlations: vec![Correlation::BOTH[0]],
        seed: 0,
        truth_hash: String::new(),
    };
    let geometry = ImageGeometry::new(nx, ny, cell_rad);
    let params = GridderParams { epsilon, w_term };
    let w_range = WRange::of_visibilities(&vis)?;
    let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build()?;
    let factors = vec![1.0; n_chan];
    let image: Option<Array2<f64>> =
        if op == "degrid" { Some(read_npy(dir.join("image.npy"))?) } else { None };

    let (mut total, mut planning) = (Vec::new(), Vec::new());
    let (mut w_planes, mut support) = (1, 0);
    for rep in 0..reps {
        let (t_total, t_plan) = pool
            .install(|| -> Result<(f64, f64), Box<dyn std::error::Error + Send + Sync>> {
                let t0 = Instant::now();
                let plan = GridPlan::new(geometry, &params, w_range)?;
                let t_plan = t0.elapsed().as_secs_f64();
                w_planes = plan.n_w_planes();
                support = plan.kernel().support();
                if let Some(img) = &image {
                    let v = plan.degrid(
                        &vis,
                        std::slice::from_ref(img),
                        std::slice::from_ref(&factors),
                    )?;
                    let t = t0.elapsed().as_secs_f64();
                    if rep == 0 {
                        write_npy(
                            dir.join("ours_degrid.npy"),
                            &v.index_axis(Axis(2), 0).to_owned(),
                        )?;
                    }
                    Ok((t, t_plan))
                } else {
                    let out = [GridOutput { source: 0, channel_factors: factors.clone() }];
                    let img = plan.grid(&vis, &[vis.data.view()], &out)?.remove(0);
                    let t = t0.elapsed().as_secs_f64();
                    if rep == 0 {
                        write_npy(dir.join("ours_grid.npy"), &img)?;
                    }
                    Ok((t, t_plan))
                }
            })
            .map_err(|e| e.to_string())?;
        total.push(t_total);
        planning.push(t_plan);
    }
    println!(
        "{{\"op\": \"{op}\", \"epsilon\": {epsilon:e}, \"threads\": {threads}, \"points\": {}, \
         \"median_s\": {}, \"plan_median_s\": {}, \"w_planes\": {w_planes}, \"support\": {support}, \
         \"reps\": {reps}}}",
        n_rows * n_chan,
        median(total),
        median(planning)
    );
    Ok(())
}
