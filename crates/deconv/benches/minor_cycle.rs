//! Minor-cycle throughput (iterations per second, criterion's "elements") on realistic sizes:
//! 256² images with 512² PSFs, and the demo's 720² image with its 1440² PSFs, on 1 and 2
//! threads (the thread count is in each benchmark's name).
//!
//! Run: `cargo bench -p beamfloor-deconv --bench minor_cycle`
use beamfloor_deconv::{convolve_same, run_minor_cycle, CleanParams, MinorCyclePlan, ScaleSet};
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use ndarray::Array2;

/// Spectral PSF k: Σ_c w_c^k B(r ν_c/ν0) / 5 over five channels from 0.75 ν0 to 1.25 ν0, with B a
/// Gaussian main lobe (FWHM 5 px at ν0) plus a negative ring sidelobe, on a `size`² grid.
fn psf(term: usize, size: usize) -> Array2<f64> {
    let scales = [0.75, 0.875, 1.0, 1.125, 1.25];
    let c = (size / 2) as f64;
    Array2::from_shape_fn((size, size), |(y, x)| {
        let r0 = ((x as f64 - c).powi(2) + (y as f64 - c).powi(2)).sqrt();
        scales
            .iter()
            .map(|&f| {
                let r = r0 * f;
                let beam = (-4.0 * std::f64::consts::LN_2 * r * r / 25.0).exp()
                    - 0.05 * (-(r - 9.0).powi(2) / 8.0).exp();
                (f - 1.0f64).powi(term as i32) * beam / 5.0
            })
            .sum()
    })
}

fn sky(n: usize) -> Array2<f64> {
    let mut s = Array2::zeros((n, n));
    for k in 0..40 {
        s[[(37 * k + 11) % n, (91 * k + 5) % n]] = 1.0 + (k % 7) as f64;
    }
    s
}

fn bench(c: &mut Criterion) {
    for threads in [1usize, 2] {
        let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().expect("pool");
        let mut group = c.benchmark_group(format!("minor_cycle_{threads}thr"));
        group.sample_size(10);
        for (name, n, iters, nterms, widths) in [
            ("hogbom_256px_200it", 256usize, 200usize, 1usize, vec![0.0]),
            ("mtmfs_n2_256px_200it", 256, 200, 2, vec![0.0]),
            ("msmfs_n2_4scales_256px_200it", 256, 200, 2, vec![0.0, 4.0, 8.0, 16.0]),
            ("mtmfs_n2_720px_50it", 720, 50, 2, vec![0.0]),
        ] {
            let psfs: Vec<Array2<f64>> = (0..2 * nterms - 1).map(|k| psf(k, 2 * n)).collect();
            let plan =
                MinorCyclePlan::new(&psfs, nterms, &ScaleSet::gaussian(&widths)).expect("plan");
            let dirty: Vec<Array2<f64>> =
                (0..nterms).map(|t| convolve_same(&sky(n), &psfs[t])).collect();
            let p = CleanParams { max_iterations: iters, ..Default::default() };
            group.throughput(Throughput::Elements(iters as u64));
            group.bench_function(name, |b| {
                b.iter(|| {
                    let mut r = dirty.clone();
                    let mut m: Vec<Array2<f64>> =
                        (0..nterms).map(|_| Array2::zeros((n, n))).collect();
                    pool.install(|| run_minor_cycle(&plan, &mut r, &mut m, &p, None))
                        .expect("minor cycle")
                })
            });
        }
        group.finish();
    }
    let mut group = c.benchmark_group("minor_cycle_plan");
    group.sample_size(10);
    group.bench_function("msmfs_n3_4scales_512px_psf", |b| {
        let psfs: Vec<Array2<f64>> = (0..5).map(|k| psf(k, 512)).collect();
        b.iter(|| {
            MinorCyclePlan::new(&psfs, 3, &ScaleSet::gaussian(&[0.0, 4.0, 8.0, 16.0]))
                .expect("plan")
        })
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
