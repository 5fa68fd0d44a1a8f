//! Throughput of the direct truth prediction: (visibility × component) evaluations per second,
//! for 24 antennas, 60 time samples, 32 channels and 20 components, with and without a beam.
use beamfloor_array::{Layout, Observation, ObservationParams};
use beamfloor_core::{Pol, VoltageBeam};
use beamfloor_predict::{predict_visibilities, PredictParams};
use beamfloor_sky::{Component, EllipticalGaussian, Spectrum};
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use num_complex::Complex64;

/// A circular Gaussian voltage pattern whose width scales with wavelength, with a small
/// per-antenna complex gain, so the table holds distinct values (a cheap stand-in for a dish model;
/// the bench measures the prediction loop, not the beam model).
struct GaussianBeam {
    n: usize,
}

impl VoltageBeam for GaussianBeam {
    fn n_antennas(&self) -> usize {
        self.n
    }
    fn voltage(
        &self,
        antenna: usize,
        _t: usize,
        freq_hz: f64,
        pol: Pol,
        l: f64,
        m: f64,
    ) -> Complex64 {
        let fwhm = 0.02 * 1.4e9 / freq_hz;
        let shift = if pol == Pol::R { 1e-4 } else { -1e-4 };
        let r2 = (l - shift).powi(2) + m * m;
        Complex64::from_polar(
            (-4.0 * std::f64::consts::LN_2 * r2 / (fwhm * fwhm)).exp().sqrt(),
            0.01 * antenna as f64,
        )
    }
}

fn observation() -> Observation {
    // 24 antennas on three log-spiral-like arms out to ~2 km (deterministic, no generator needed).
    let antennas: Vec<[f64; 3]> = (0..24)
        .map(|i| {
            let arm = (i % 3) as f64 * 2.0 * std::f64::consts::PI / 3.0;
            let r = 40.0 * 1.2f64.powi(i / 3 * 3 + 1);
            let phi = arm + 0.3 * (r / 40.0).ln();
            [r * phi.cos(), r * phi.sin(), 0.0]
        })
        .collect();
    let layout = Layout::new(antennas, 15.0).expect("bench layout");
    Observation::new(&ObservationParams {
        layout,
        latitude_rad: (-30f64).to_radians(),
        phase_centre_ra_rad: 1.0,
        phase_centre_dec_rad: (-40f64).to_radians(),
        hour_angle_start_rad: (-45f64).to_radians(),
        hour_angle_end_rad: 45f64.to_radians(),
        integration_s: 360.0,
        band_min_hz: 1.0e9,
        band_max_hz: 2.0e9,
        n_channels: 32,
        elevation_limit_rad: 0.0,
    })
    .expect("bench observation")
}

fn sky() -> Vec<Component> {
    (0..20)
        .map(|i| {
            let a = i as f64 * 0.7;
            let r = 0.002 * (i + 1) as f64;
            let s = Spectrum::new(1.0 + 0.1 * i as f64, 1.5e9, -0.7, 0.05).expect("spectrum");
            if i % 4 == 0 {
                let g = EllipticalGaussian::new(2e-4, 1e-4, a).expect("gaussian");
                Component::gaussian(format!("g{i}"), r * a.cos(), r * a.sin(), s, g).expect("comp")
            } else {
                Component::point(format!("p{i}"), r * a.cos(), r * a.sin(), s).expect("comp")
            }
        })
        .collect()
}

fn bench(c: &mut Criterion) {
    let obs = observation();
    let comps = sky();
    let beam = GaussianBeam { n: 24 };
    let evaluations = (obs.n_visibilities() * comps.len()) as u64;
    let mut group = c.benchmark_group("predict");
    group.sample_size(10);
    group.throughput(Throughput::Elements(evaluations));
    group.bench_function("no_beam_24ant_60t_32ch_20comp", |b| {
        b.iter(|| predict_visibilities(&obs, &comps, None, &PredictParams::default(), &|_| {}))
    });
    group.bench_function("gaussian_beam_24ant_60t_32ch_20comp", |b| {
        b.iter(|| {
            predict_visibilities(&obs, &comps, Some(&beam), &PredictParams::default(), &|_| {})
        })
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
