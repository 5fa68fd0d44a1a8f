//! Gridder throughput (criterion "elements" = visibilities, one (row, channel) sample with both
//! hands): dirty image (grid + FFT + correction) and degridding, plain and w-stacked, and the
//! FFT-plus-correction stage alone, on 1 and 2 threads. Sizes, accuracy and thread count are in
//! each benchmark's name.
//!
//! Run: `cargo bench -p beamfloor-imaging --bench gridding`
//! (the side-by-side comparison with general-purpose NUFFT libraries is
//! `scripts/bench_nufft.sh`).
use beamfloor_core::{Correlation, ImageGeometry, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_imaging::{GridOutput, GridPlan, GridderParams, ImagingOperator, WRange, WTerm};
use beamfloor_predict::VisSet;
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use ndarray::{Array2, Array3};
use num_complex::Complex64;

/// `n_base` baselines × `n_times` rows (baseline-major, time-ordered like a simulated set) and
/// `n_chan` channels over 1–2 GHz. Each baseline's uv track is an arc (Earth rotation), reaching
/// 0.45 / cell at the top channel; |w| up to `w_max_lambda` there.
fn synthetic(
    geometry: &ImageGeometry,
    n_base: usize,
    n_times: usize,
    n_chan: usize,
    w_max_lambda: f64,
) -> VisSet {
    let freqs: Vec<f64> = (0..n_chan).map(|c| 1.0e9 * (1.0 + c as f64 / n_chan as f64)).collect();
    let f_top = freqs[n_chan - 1];
    let uv_max_m = 0.45 / geometry.cell_rad * SPEED_OF_LIGHT_M_PER_S / f_top;
    let w_max_m = w_max_lambda * SPEED_OF_LIGHT_M_PER_S / f_top;
    let n_rows = n_base * n_times;
    let uvw = Array2::from_shape_fn((n_rows, 3), |(r, k)| {
        let (b, t) = ((r / n_times) as f64, (r % n_times) as f64 / n_times as f64);
        let radius = uv_max_m * (0.05 + 0.95 * ((b * 0.618_034) % 1.0));
        let angle = b * 2.399 + t * 1.2;
        match k {
            0 => radius * angle.cos(),
            1 => radius * angle.sin() * 0.8,
            _ => w_max_m * (b * 0.37 + t).sin() * ((b * 0.618_034) % 1.0),
        }
    });
    let data = Array3::from_shape_fn((n_rows, n_chan, 2), |(r, c, p)| {
        Complex64::new(((r * 7 + c * 3 + p) % 11) as f64 - 5.0, ((r + 2 * c) % 5) as f64 - 2.0)
    });
    VisSet {
        frequencies_hz: freqs,
        channel_width_hz: 1e9 / n_chan as f64,
        integration_s: 10.0,
        hour_angles_rad: vec![0.0],
        parallactic_angles_rad: vec![0.0],
        phase_centre_ra_rad: 0.0,
        phase_centre_dec_rad: -0.5,
        antenna1: vec![0; n_rows],
        antenna2: vec![1; n_rows],
        time_index: vec![0; n_rows],
        uvw_m: uvw,
        data,
        weights: Array3::ones((n_rows, n_chan, 2)),
        flags: Array3::from_elem((n_rows, n_chan, 2), false),
        correlations: Correlation::BOTH.to_vec(),
        seed: 0,
        truth_hash: String::new(),
    }
}

fn bench(c: &mut Criterion) {
    // 512² pixels of 20″ (2.8° field), 300 baselines × 64 times × 16 channels = 307 200 samples.
    let geometry = ImageGeometry::new(512, 512, (20.0f64 / 3600.0).to_radians());
    let vis = synthetic(&geometry, 300, 64, 16, 1500.0);
    let n_vis = (vis.n_rows() * vis.n_channels()) as u64;
    let w_range = WRange::of_visibilities(&vis).expect("w range");
    let factors = vec![1.0; vis.n_channels()];
    let outputs = [GridOutput { source: 0, channel_factors: factors.clone() }];
    let image = Array2::from_shape_fn((512, 512), |(y, x)| ((x * 3 + y * 5) % 17) as f64 / 17.0);
    let one_row = synthetic(&geometry, 1, 1, 1, 0.0);
    for threads in [1usize, 2] {
        let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().expect("pool");
        let mut group = c.benchmark_group(format!("gridder_512px_{threads}thr"));
        group.sample_size(10);
        for (w_name, w_term) in [("plain", WTerm::Ignore), ("wstack", WTerm::Stack)] {
            let params = GridderParams { epsilon: 1e-6, w_term };
            let plan = GridPlan::new(geometry, &params, w_range).expect("plan");
            group.throughput(Throughput::Elements(n_vis));
            group.bench_function(format!("grid_{w_name}_eps1e-6_307kvis"), |b| {
                b.iter(|| pool.install(|| plan.grid(&vis, &[vis.data.view()], &outputs)))
            });
            group.bench_function(format!("degrid_{w_name}_eps1e-6_307kvis"), |b| {
                b.iter(|| {
                    pool.install(|| {
                        plan.degrid(
                            &vis,
                            std::slice::from_ref(&image),
                            std::slice::from_ref(&factors),
                        )
                    })
                })
            });
        }
        // The image → padded grid stage alone (screen, FFT of the 1024² padded grid, no
        // samples to speak of): degridding a single sample.
        let plan = GridPlan::new(
            geometry,
            &GridderParams { epsilon: 1e-6, w_term: WTerm::Ignore },
            WRange::new(0.0, 0.0).expect("range"),
        )
        .expect("plan");
        group.throughput(Throughput::Elements(1));
        group.bench_function("fft_correction_1024px_padded", |b| {
            b.iter(|| {
                pool.install(|| plan.degrid(&one_row, std::slice::from_ref(&image), &[vec![1.0]]))
            })
        });
        group.finish();
    }
}

criterion_group!(benches, bench);
criterion_main!(benches);
