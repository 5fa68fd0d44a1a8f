//! Throughput of the uv-kernel A-projection operator ([`KernelAProjection`]) at realistic kernel
//! supports: a 13.5 m dish, 1–2 GHz in 8 channels, uv cells of 8 wavelengths (so S ≈ 19 cells
//! at 1 GHz and 31 at 2 GHz, the sizes of the demo's 720² image of 18″ pixels), both hands,
//! 66 baselines × 40 times of synthetic Earth-rotation tracks. Two cases:
//! `1plane-1image` (w ignored, one image: every interpolated kernel cell is used once, so the
//! loop is bounded by reading the kernel tables) and `wstack-2images` (w-stacking and two
//! Taylor-weighted images at once, the shape of a multi-term imaging call: each interpolated
//! cell serves every w plane the sample touches and both images).
//!
//! Throughput is reported in floating-point operations ([`KernelAProjection::flop_count`]:
//! 8 per kernel cell per plane per image for the complex multiply-add plus 14 for the bilinear
//! kernel), so criterion's "elem/s" reads as FLOP/s; the visibilities and FLOP per call are
//! printed once per case. The machine's peak comes from the same run (`fma_peak`: independent
//! fused multiply-adds on registers only, the widest vectors the CPU has, one chain set per
//! thread); `scripts/aproj_rate.sh` runs all of it and prints each case as a fraction of it.

use beamfloor_beam::{ApertureParams, DishBeam, DishBeamParams, EffectParams, SquintParams};
use beamfloor_core::{derive_seed, Correlation, ImageGeometry, SeedPurpose};
use beamfloor_imaging::{
    GridOutput, GridderParams, ImagingOperator, KernelAProjection, KernelAProjectionParams, WRange,
    WTerm,
};
use beamfloor_predict::VisSet;
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use ndarray::{Array2, Array3};
use num_complex::Complex64;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::hint::black_box;
use std::time::Duration;

const N_ANT: usize = 12;
const N_TIME: usize = 40;
const N_CHAN: usize = 8;
/// Padded grid 512 cells of uv cell 1/(512 · cell) ≈ 8 wavelengths.
const NX: usize = 256;
const CELL_RAD: f64 = 2.45e-4;

fn setup() -> (DishBeam, VisSet) {
    let mut rng = ChaCha8Rng::seed_from_u64(derive_seed(7, SeedPurpose::Test, 500));
    let geometry = ImageGeometry::new(NX, NX, CELL_RAD);
    let half = beamfloor_imaging::kernel_beam_half_width_rad(geometry).expect("geometry");
    let params = DishBeamParams {
        aperture: ApertureParams {
            dish_diameter_m: 13.5,
            samples_across: 64,
            ..Default::default()
        },
        effects: EffectParams {
            squint: SquintParams { fraction_of_hpbw: 0.03, direction_rad: 0.5 },
            ..EffectParams::default()
        },
        ref_freq_hz: 1.5e9,
        max_abs_lm: half,
        max_freq_hz: 2.0e9,
        ..DishBeamParams::default()
    };
    let beam = DishBeam::new(&params, vec![0.3], vec![0.0]).expect("beam");
    // Antennas within ±110 m east/north (the padded grid reaches ±2 km wavelengths at 2 GHz).
    let ant: Vec<[f64; 3]> = (0..N_ANT)
        .map(|_| [rng.random_range(-110.0..110.0), rng.random_range(-110.0..110.0), 0.0])
        .collect();
    let (lat, dec) = (-0.5f64, -0.7f64);
    let mut rows = Vec::new();
    for a in 0..N_ANT {
        for b in a + 1..N_ANT {
            // ENU → equatorial (X, Y, Z) at latitude φ (Thompson, Moran & Swenson, eq. 4.15).
            let (e, n, u) = (ant[b][0] - ant[a][0], ant[b][1] - ant[a][1], 0.0);
            let x = -n * lat.sin() + u * lat.cos();
            let y = e;
            let z = n * lat.cos() + u * lat.sin();
            for t in 0..N_TIME {
                let h = -1.0 + 2.0 * t as f64 / N_TIME as f64;
                // (u, v, w) from hour angle and declination (Thompson, Moran & Swenson, eq. 4.1).
                let uu = h.sin() * x + h.cos() * y;
                let vv = -dec.sin() * h.cos() * x + dec.sin() * h.sin() * y + dec.cos() * z;
                let ww = dec.cos() * h.cos() * x - dec.cos() * h.sin() * y + dec.sin() * z;
                rows.push((a as u32, b as u32, t as u32, [uu, vv, ww]));
            }
        }
    }
    let nr = rows.len();
    let freqs: Vec<f64> =
        (0..N_CHAN).map(|c| 1.0e9 + c as f64 * 1.0e9 / (N_CHAN - 1) as f64).collect();
    let data = Array3::from_shape_fn((nr, N_CHAN, 2), |_| {
        Complex64::new(rng.random_range(-1.0..1.0), rng.random_range(-1.0..1.0))
    });
    let vis = VisSet {
        frequencies_hz: freqs,
        channel_width_hz: 1.25e8,
        integration_s: 10.0,
        hour_angles_rad: vec![0.0; N_TIME],
        parallactic_angles_rad: vec![0.0; N_TIME],
        phase_centre_ra_rad: 0.0,
        phase_centre_dec_rad: dec,
        antenna1: rows.iter().map(|r| r.0).collect(),
        antenna2: rows.iter().map(|r| r.1).collect(),
        time_index: rows.iter().map(|r| r.2).collect(),
        uvw_m: Array2::from_shape_fn((nr, 3), |(i, k)| rows[i].3[k]),
        data,
        weights: Array3::ones((nr, N_CHAN, 2)),
        flags: Array3::from_elem((nr, N_CHAN, 2), false),
        correlations: Correlation::BOTH.to_vec(),
        seed: 0,
        truth_hash: String::new(),
    };
    (beam, vis)
}

fn bench(c: &mut Criterion) {
    let (beam, vis) = setup();
    let geometry = ImageGeometry::new(NX, NX, CELL_RAD);
    let image = Array2::from_shape_fn((NX, NX), |(y, x)| ((x * 7 + y * 3) % 11) as f64 - 5.0);
    let mut group = c.benchmark_group("aproj_kernel");
    group
        .sample_size(10)
        .warm_up_time(Duration::from_secs(1))
        .measurement_time(Duration::from_secs(4));
    // Two cases: the spreading loop alone (w ignored, one image: each interpolated kernel cell
    // is used once, so the rate is bounded by reading the kernel tables), and the shape of a
    // multi-term imaging call (w-stacking, two Taylor images gridded at once and degridded
    // together: each interpolated cell serves every w plane the sample touches and each image).
    for (case, w_term, n_images) in
        [("1plane-1image", WTerm::Ignore, 1), ("wstack-2images", WTerm::Stack, 2)]
    {
        let params = KernelAProjectionParams {
            gridder: GridderParams { epsilon: 1e-7, w_term },
            ..KernelAProjectionParams::default()
        };
        let w = WRange::of_visibilities(&vis).expect("valid set");
        let op = KernelAProjection::new(
            geometry,
            &beam,
            vec![0; N_TIME],
            vis.frequencies_hz.clone(),
            w,
            params,
        )
        .expect("plan");
        let est = op.table_estimate();
        let samples = vis.n_rows() * vis.n_channels() * vis.n_correlations();
        let flops = op.flop_count(&vis, n_images).expect("count");
        println!(
            "aproj bench {case}: {samples} samples per call, supports {}..={} cells, tables \
             {:.0} MB, {:.3} GFLOP per call",
            est.min_support,
            est.max_support,
            est.bytes as f64 / 1e6,
            flops / 1e9
        );
        // Taylor-like channel weights (1, then (ν − ν0)/ν0).
        let factors: Vec<Vec<f64>> = (0..n_images)
            .map(|t| {
                vis.frequencies_hz.iter().map(|f| ((f - 1.5e9) / 1.5e9).powi(t as i32)).collect()
            })
            .collect();
        let out: Vec<GridOutput> =
            factors.iter().map(|f| GridOutput { source: 0, channel_factors: f.clone() }).collect();
        let images = vec![image.clone(); n_images];
        group.throughput(Throughput::Elements(flops as u64));
        for threads in [1, 2] {
            let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().expect("pool");
            group.bench_function(format!("grid/{case}/S19-31/threads={threads}"), |b| {
                b.iter(|| {
                    pool.install(|| {
                        black_box(op.grid(&vis, &[vis.data.view()], &out).expect("grid"))
                    })
                })
            });
            group.bench_function(format!("degrid/{case}/S19-31/threads={threads}"), |b| {
                b.iter(|| {
                    pool.install(|| black_box(op.degrid(&vis, &images, &factors).expect("degrid")))
                })
            });
        }
    }
    group.finish();
}

/// Independent multiply-add chains per thread: enough to cover the FMA latency (4 cycles) on
/// both ports. Measured here on one thread: 8 chains 113 GFLOP/s, 10 118, 12 119.5, 16 86 and
/// 24 69 (the longer chain sets no longer stay in registers).
const CHAINS: usize = 12;
/// Loop trips per thread and call of the peak loop.
const PEAK_TRIPS: u64 = 2_000_000;

/// `trips` rounds of CHAINS fused multiply-adds on registers (x ← x · m + a, which stays finite
/// and normal); returns a sum of the chains so that the loop cannot be dropped. FLOP: trips ·
/// CHAINS · 2 · lanes.
fn fma_chains(trips: u64) -> (f64, usize) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f") {
            // SAFETY: AVX-512F was detected just above.
            return (unsafe { x86::chains512(trips) }, 8);
        }
        if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
        {
            // SAFETY: AVX2 and FMA were detected just above.
            return (unsafe { x86::chains256(trips) }, 4);
        }
    }
    let mut x = [1.0f64; CHAINS];
    let (m, a) = (black_box(0.999_999f64), black_box(1e-6));
    for _ in 0..black_box(trips) {
        for v in x.iter_mut() {
            *v = v.mul_add(m, a);
        }
    }
    (x.iter().sum(), 1)
}

#[cfg(target_arch = "x86_64")]
mod x86 {
    use super::CHAINS;
    use std::arch::x86_64::*;
    use std::hint::black_box;

    #[target_feature(enable = "avx512f")]
    pub unsafe fn chains512(trips: u64) -> f64 {
        let (m, a) = (_mm512_set1_pd(black_box(0.999_999)), _mm512_set1_pd(black_box(1e-6)));
        let mut x = [_mm512_set1_pd(1.0); CHAINS];
        for _ in 0..black_box(trips) {
            for v in x.iter_mut() {
                *v = _mm512_fmadd_pd(*v, m, a);
            }
        }
        x.iter().map(|&v| _mm512_reduce_add_pd(v)).sum()
    }

    #[target_feature(enable = "avx2,fma")]
    pub unsafe fn chains256(trips: u64) -> f64 {
        let (m, a) = (_mm256_set1_pd(black_box(0.999_999)), _mm256_set1_pd(black_box(1e-6)));
        let mut x = [_mm256_set1_pd(1.0); CHAINS];
        for _ in 0..black_box(trips) {
            for v in x.iter_mut() {
                *v = _mm256_fmadd_pd(*v, m, a);
            }
        }
        let mut lanes = [0.0; 4];
        x.iter()
            .map(|&v| {
                _mm256_storeu_pd(lanes.as_mut_ptr(), v);
                lanes.iter().sum::<f64>()
            })
            .sum()
    }
}

/// The peak the A-projection rates are compared with: the register-only loop on 1 and 2 threads.
fn peak(c: &mut Criterion) {
    let mut group = c.benchmark_group("fma_peak");
    group
        .sample_size(10)
        .warm_up_time(Duration::from_secs(1))
        .measurement_time(Duration::from_secs(3));
    let lanes = fma_chains(1).1;
    for threads in [1, 2] {
        let flops = threads as u64 * PEAK_TRIPS * CHAINS as u64 * 2 * lanes as u64;
        group.throughput(Throughput::Elements(flops));
        let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().expect("pool");
        group.bench_function(format!("registers/lanes={lanes}/threads={threads}"), |b| {
            b.iter(|| {
                pool.install(|| {
                    use rayon::prelude::*;
                    let total: f64 =
                        (0..threads).into_par_iter().map(|_| fma_chains(PEAK_TRIPS).0).sum();
                    black_box(total)
                })
            })
        });
    }
    group.finish();
}

criterion_group!(benches, peak, bench);
criterion_main!(benches);
