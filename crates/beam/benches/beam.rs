//! Beam evaluation throughput for a realistic timeline: 24 antennas × 360 times × 32 channels ×
//! 20 components × 2 receptors ≈ 11 M voltage evaluations, all effects on.

use beamfloor_beam::{
    ApertureParams, DishBeam, DishBeamParams, EffectParams, PointingParams, RippleParams,
    SquintParams, TableParams,
};
use beamfloor_core::{derive_seed, Pol, SeedPurpose, VoltageBeam};
use criterion::{criterion_group, Criterion};
use num_complex::Complex64;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;
use std::hint::black_box;

const N_ANT: usize = 24;
const N_TIME: usize = 360;
const N_CHAN: usize = 32;
const N_COMP: usize = 20;

fn setup() -> (DishBeam, Vec<f64>, Vec<(f64, f64)>) {
    let pas: Vec<f64> = (0..N_TIME).map(|t| -1.2 + 2.4 * t as f64 / N_TIME as f64).collect();
    let times: Vec<f64> = (0..N_TIME).map(|t| 60.0 * t as f64).collect();
    let params = DishBeamParams {
        aperture: ApertureParams::default(),
        effects: EffectParams {
            squint: SquintParams { fraction_of_hpbw: 0.03, direction_rad: 0.5 },
            pointing: PointingParams { random_rms_rad: 1e-4, seed: 1, ..Default::default() },
            ripple: RippleParams { amplitude: 0.01, ..Default::default() },
            ..EffectParams::default()
        },
        n_antennas: N_ANT,
        ref_freq_hz: 1.5e9,
        max_abs_lm: 0.04,
        max_freq_hz: 2.0e9,
        ..DishBeamParams::default()
    };
    let beam = DishBeam::new(&params, pas, times).expect("beam");
    let freqs: Vec<f64> = (0..N_CHAN).map(|c| 1.0e9 + c as f64 * 1.0e9 / N_CHAN as f64).collect();
    let mut rng = ChaCha8Rng::seed_from_u64(derive_seed(1, SeedPurpose::Test, 99));
    let comps = (0..N_COMP)
        .map(|_| (rng.random_range(-0.03..0.03), rng.random_range(-0.03..0.03)))
        .collect();
    (beam, freqs, comps)
}

/// All beams of one antenna, summed (so nothing is optimised away).
fn antenna_sum(beam: &DishBeam, a: usize, freqs: &[f64], comps: &[(f64, f64)]) -> Complex64 {
    let mut acc = Complex64::new(0.0, 0.0);
    for t in 0..N_TIME {
        for &(l, m) in comps {
            for pol in Pol::BOTH {
                for &f in freqs {
                    acc += beam.voltage(a, t, f, pol, l, m);
                }
            }
        }
    }
    acc
}

fn bench(c: &mut Criterion) {
    let (beam, freqs, comps) = setup();
    let mut g = c.benchmark_group("timeline_24ant_360t_32ch_20comp_2pol");
    g.sample_size(10);
    g.bench_function("single_thread", |b| {
        b.iter(|| (0..N_ANT).map(|a| antenna_sum(&beam, a, &freqs, &comps)).sum::<Complex64>())
    });
    g.bench_function("rayon_over_antennas", |b| {
        b.iter(|| {
            (0..N_ANT)
                .into_par_iter()
                .map(|a| antenna_sum(&beam, a, &freqs, &comps))
                .sum::<Complex64>()
        })
    });
    g.finish();
    c.bench_function("build_default_beam_24ant_360t", |b| {
        b.iter(|| black_box(setup().0.n_times()))
    });
}

/// CPU time consumed by the calling thread, s (from /proc/thread-self/schedstat, in ns); the
/// machine is shared, so wall-clock numbers alone overstate the cost under load.
fn thread_cpu_s() -> Option<f64> {
    let s = std::fs::read_to_string("/proc/thread-self/schedstat").ok()?;
    Some(s.split_whitespace().next()?.parse::<f64>().ok()? * 1e-9)
}

/// One single-threaded pass per configuration, reporting thread CPU time per evaluation.
fn cpu_time_report() {
    let (beam, freqs, comps) = setup();
    let n_eval = (N_ANT * N_TIME * N_CHAN * N_COMP * 2) as f64;
    for (label, b) in [
        ("all effects", beam.clone()),
        ("no ripple", {
            let p = DishBeamParams {
                effects: beam.params().effects.without(beamfloor_beam::Effect::Ripple),
                ..*beam.params()
            };
            let pas: Vec<f64> =
                (0..N_TIME).map(|t| -1.2 + 2.4 * t as f64 / N_TIME as f64).collect();
            DishBeam::new(&p, pas, vec![0.0; N_TIME]).expect("beam")
        }),
        ("no ripple, 4-point Lagrange at 48x oversampling", {
            let p = DishBeamParams {
                effects: beam.params().effects.without(beamfloor_beam::Effect::Ripple),
                table: TableParams { oversampling: 48.0, interpolation_points: 4 },
                ..*beam.params()
            };
            let pas: Vec<f64> =
                (0..N_TIME).map(|t| -1.2 + 2.4 * t as f64 / N_TIME as f64).collect();
            DishBeam::new(&p, pas, vec![0.0; N_TIME]).expect("beam")
        }),
    ] {
        let (c0, w0) = (thread_cpu_s(), std::time::Instant::now());
        let s: Complex64 = (0..N_ANT).map(|a| antenna_sum(&b, a, &freqs, &comps)).sum();
        let wall = w0.elapsed().as_secs_f64();
        black_box(s);
        match (c0, thread_cpu_s()) {
            (Some(a), Some(z)) => println!(
                "{label}: {n_eval:.3e} evaluations, thread CPU {:.3} s ({:.1} ns/eval), wall {wall:.3} s",
                z - a,
                (z - a) / n_eval * 1e9
            ),
            _ => println!("{label}: {n_eval:.3e} evaluations, wall {wall:.3} s"),
        }
    }
}

criterion_group!(benches, bench);

fn main() {
    cpu_time_report();
    benches();
    Criterion::default().configure_from_args().final_summary();
}
