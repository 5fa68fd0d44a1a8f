use crate::effects::PointingParams;
use beamfloor_core::{derive_seed, SeedPurpose};
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};

/// Pointing offsets (x, y) in the antenna frame, rad, laid out `[antenna · n_times + t]`:
/// o_a(t) = fixed + r_a + (fixed_drift + d_a) · t (see [`PointingParams`]).
pub(crate) fn pointing_offsets(
    params: &PointingParams,
    n_antennas: usize,
    times_s: &[f64],
) -> Vec<[f64; 2]> {
    let mut out = Vec::with_capacity(n_antennas * times_s.len());
    for a in 0..n_antennas {
        let mut rng =
            ChaCha8Rng::seed_from_u64(derive_seed(params.seed, SeedPurpose::Pointing, a as u64));
        let mut draw = || -> f64 { StandardNormal.sample(&mut rng) };
        let r = [draw() * params.random_rms_rad, draw() * params.random_rms_rad];
        let rms_d = params.random_drift_rms_rad_per_s;
        let d = [draw() * rms_d, draw() * rms_d];
        let o0 = [params.fixed_offset_rad[0] + r[0], params.fixed_offset_rad[1] + r[1]];
        let rate = [params.fixed_drift_rad_per_s[0] + d[0], params.fixed_drift_rad_per_s[1] + d[1]];
        out.extend(times_s.iter().map(|&t| [o0[0] + rate[0] * t, o0[1] + rate[1] * t]));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn random_offsets_have_the_requested_rms_and_are_reproducible() {
        // Sample rms of 2·4000 unit-normal draws scaled by σ: its relative standard error is
        // 1/sqrt(2·8000) ≈ 0.8 %, so a 4 % tolerance is a 5σ bound (normal-theory estimate).
        let p = PointingParams { random_rms_rad: 2e-4, seed: 11, ..Default::default() };
        let o = pointing_offsets(&p, 4000, &[0.0]);
        let ms = o.iter().map(|v| v[0] * v[0] + v[1] * v[1]).sum::<f64>() / (2.0 * 4000.0);
        assert!((ms.sqrt() / 2e-4 - 1.0).abs() < 0.04, "rms {}", ms.sqrt());
        let mean = o.iter().map(|v| v[0]).sum::<f64>() / 4000.0;
        assert!(mean.abs() < 5.0 * 2e-4 / 4000f64.sqrt(), "mean {mean}");
        assert_eq!(o, pointing_offsets(&p, 4000, &[0.0]));
        let other = pointing_offsets(&PointingParams { seed: 12, ..p }, 4000, &[0.0]);
        assert_ne!(o[0], other[0]);
    }

    #[test]
    fn drift_is_linear_in_time() {
        let p = PointingParams {
            fixed_offset_rad: [1e-4, -2e-4],
            fixed_drift_rad_per_s: [1e-8, 2e-8],
            random_drift_rms_rad_per_s: 1e-9,
            seed: 3,
            ..Default::default()
        };
        let times = [0.0, 100.0, 200.0];
        let o = pointing_offsets(&p, 2, &times);
        for a in 0..2 {
            let (o0, o1, o2) = (o[a * 3], o[a * 3 + 1], o[a * 3 + 2]);
            for k in 0..2 {
                assert!(((o1[k] - o0[k]) - (o2[k] - o1[k])).abs() < 1e-18);
            }
            assert!((o0[0] - 1e-4).abs() < 1e-18 && (o0[1] + 2e-4).abs() < 1e-18);
            // Rate = fixed + random (rms 1e-9): within 6σ of the fixed rate.
            assert!(((o1[0] - o0[0]) / 100.0 - 1e-8).abs() < 6e-9);
        }
    }
}
