//! Minor-cycle throughput on realistic sizes: 256² images, 512² PSFs.
use beamfloor_deconv::{convolve_same, run_minor_cycle, CleanParams, MinorCyclePlan, ScaleSet};
use criterion::{criterion_group, criterion_main, Criterion};
use ndarray::Array2;

/// Spectral PSF k: Σ_c w_c^k B(r ν_c/ν0) / 5 over five channels from 0.75 ν0 to 1.25 ν0, with B a
/// Gaussian main lobe (FWHM 5 px at ν0) plus a negative ring sidelobe, on a 512² grid.
fn psf(term: usize) -> Array2<f64> {
    let scales = [0.75, 0.875, 1.0, 1.125, 1.25];
    Array2::from_shape_fn((512, 512), |(y, x)| {
        let r0 = ((x as f64 - 256.0).powi(2) + (y as f64 - 256.0).powi(2)).sqrt();
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

fn sky() -> Array2<f64> {
    let mut s = Array2::zeros((256, 256));
    for k in 0..40 {
        s[[(37 * k + 11) % 256, (91 * k + 5) % 256]] = 1.0 + (k % 7) as f64;
    }
    s
}

fn bench(c: &mut Criterion) {
    let mut group = c.benchmark_group("minor_cycle_256");
    group.sample_size(10);
    for (name, nterms, widths) in [
        ("hogbom_200it", 1usize, vec![0.0]),
        ("mtmfs_n2_200it", 2, vec![0.0]),
        ("msmfs_n2_4scales_200it", 2, vec![0.0, 4.0, 8.0, 16.0]),
    ] {
        let psfs: Vec<Array2<f64>> = (0..2 * nterms - 1).map(psf).collect();
        let plan = MinorCyclePlan::new(&psfs, nterms, &ScaleSet::gaussian(&widths)).expect("plan");
        let dirty: Vec<Array2<f64>> =
            (0..nterms).map(|t| convolve_same(&sky(), &psfs[t])).collect();
        let p = CleanParams { max_iterations: 200, ..Default::default() };
        group.bench_function(name, |b| {
            b.iter(|| {
                let mut r = dirty.clone();
                let mut m: Vec<Array2<f64>> =
                    (0..nterms).map(|_| Array2::zeros((256, 256))).collect();
                run_minor_cycle(&plan, &mut r, &mut m, &p, None).expect("minor cycle")
            })
        });
    }
    group.bench_function("plan_msmfs_n3_4scales", |b| {
        let psfs: Vec<Array2<f64>> = (0..5).map(psf).collect();
        b.iter(|| {
            MinorCyclePlan::new(&psfs, 3, &ScaleSet::gaussian(&[0.0, 4.0, 8.0, 16.0]))
                .expect("plan")
        })
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
