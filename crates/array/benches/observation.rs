//! Building an observation at a realistic size: 64 antennas on log-spiral arms (2016 baselines),
//! ±4 h of hour angle at 30 s integrations (958 samples), i.e. about 1.9 million rows; and a
//! random-disc layout of 64 antennas.
use beamfloor_array::{
    log_spiral, random_disc, LogSpiralParams, Observation, ObservationParams, RandomDiscParams,
};
use criterion::{criterion_group, criterion_main, Criterion};
use std::f64::consts::TAU;

fn params() -> ObservationParams {
    let layout = log_spiral(&LogSpiralParams {
        n_arms: 4,
        antennas_per_arm: 16,
        inner_radius_m: 60.0,
        outer_radius_m: 4000.0,
        twist_rad: 2.5,
        min_spacing_m: 20.0,
    })
    .expect("layout");
    ObservationParams {
        layout,
        latitude_rad: (-30f64).to_radians(),
        phase_centre_ra_rad: 1.0,
        phase_centre_dec_rad: (-45f64).to_radians(),
        hour_angle_start_rad: -4.0 * TAU / 24.0,
        hour_angle_end_rad: 4.0 * TAU / 24.0,
        integration_s: 30.0,
        band_min_hz: 0.9e9,
        band_max_hz: 1.8e9,
        n_channels: 64,
        elevation_limit_rad: 15f64.to_radians(),
    }
}

fn bench(c: &mut Criterion) {
    let p = params();
    let obs = Observation::new(&p).expect("observation");
    eprintln!("rows: {}, visibilities: {}", obs.n_rows(), obs.n_visibilities());
    let mut g = c.benchmark_group("array");
    g.sample_size(10);
    g.bench_function("observation_new_64ant_958t", |b| b.iter(|| Observation::new(&p)));
    g.bench_function("random_disc_64", |b| {
        b.iter(|| {
            random_disc(
                &RandomDiscParams {
                    n_antennas: 64,
                    radius_m: 3000.0,
                    min_spacing_m: 25.0,
                    dish_diameter_m: 13.5,
                    max_tries: RandomDiscParams::DEFAULT_MAX_TRIES,
                },
                5,
            )
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
