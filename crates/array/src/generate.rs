use crate::error::{check_range, ArrayError};
use crate::layout::{distance, Layout};
use beamfloor_core::{derive_seed, SeedPurpose};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::f64::consts::TAU;

/// Parameters of a log-spiral layout: `n_arms` arms, each a logarithmic spiral
/// r = r_in · exp((θ − θ_a) / b) in the east-north plane (up = 0), with antennas spaced
/// geometrically in radius from `inner_radius_m` to `outer_radius_m`.
///
/// `twist_rad` is the total turn of an arm from the inner to the outer radius, so
/// b = ln(r_out / r_in) / twist; arm a starts at azimuth θ_a = 2π a / n_arms (measured from east
/// towards north). A logarithmic spiral crosses every radius at the same angle, which spreads the
/// baselines evenly in log length — the reason such arms are common practice for arrays that
/// must serve several resolutions.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LogSpiralParams {
    /// Number of arms, at least 1.
    pub n_arms: usize,
    /// Antennas per arm, at least 1 (a single antenna sits at the inner radius).
    pub antennas_per_arm: usize,
    /// Radius of the innermost antenna of each arm, m (> 0).
    pub inner_radius_m: f64,
    /// Radius of the outermost antenna of each arm, m (> inner radius when more than one antenna
    /// per arm).
    pub outer_radius_m: f64,
    /// Azimuth turn of an arm from inner to outer radius, rad (may be negative or zero; zero
    /// gives straight radial arms).
    pub twist_rad: f64,
    /// Minimum spacing the result is validated against, m (normally more than the dish diameter).
    pub min_spacing_m: f64,
}

/// Antennas on log-spiral arms (see [`LogSpiralParams`]), validated as a [`Layout`].
///
/// Antenna order: arm by arm, inner to outer. Antenna j of arm a (j = 0..n−1) is at radius
/// r_j = r_in (r_out / r_in)^(j / (n − 1)) and azimuth θ_a + twist · j / (n − 1), i.e. on the
/// spiral r = r_in exp((θ − θ_a) ln(r_out/r_in) / twist).
pub fn log_spiral(params: &LogSpiralParams) -> Result<Layout, ArrayError> {
    let p = params;
    if p.n_arms == 0 {
        return Err(ArrayError::InvalidCount { name: "n_arms", value: 0, expected: ">= 1" });
    }
    if p.antennas_per_arm == 0 {
        return Err(ArrayError::InvalidCount {
            name: "antennas_per_arm",
            value: 0,
            expected: ">= 1",
        });
    }
    check_range("inner_radius_m", p.inner_radius_m, f64::MIN_POSITIVE, f64::MAX, "finite > 0 m")?;
    if p.antennas_per_arm > 1
        && !(p.outer_radius_m.is_finite() && p.outer_radius_m > p.inner_radius_m)
    {
        return Err(ArrayError::InvalidParameter {
            name: "outer_radius_m",
            value: p.outer_radius_m,
            expected: "finite and greater than inner_radius_m",
        });
    }
    check_range("twist_rad", p.twist_rad, f64::MIN, f64::MAX, "a finite angle")?;
    let n = p.antennas_per_arm;
    let mut positions = Vec::with_capacity(p.n_arms * n);
    for arm in 0..p.n_arms {
        let theta0 = TAU * arm as f64 / p.n_arms as f64;
        for j in 0..n {
            let frac = if n > 1 { j as f64 / (n - 1) as f64 } else { 0.0 };
            let r = p.inner_radius_m * (p.outer_radius_m / p.inner_radius_m).powf(frac);
            let theta = theta0 + p.twist_rad * frac;
            positions.push([r * theta.cos(), r * theta.sin(), 0.0]);
        }
    }
    Layout::new(positions, p.min_spacing_m)
}

/// Parameters of a random layout: antennas placed uniformly at random in a disc, none closer
/// than a minimum spacing.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RandomDiscParams {
    /// Number of antennas, at least 2.
    pub n_antennas: usize,
    /// Radius of the disc in the east-north plane, m (> 0).
    pub radius_m: f64,
    /// Minimum distance between any two antennas, m; must exceed `dish_diameter_m`.
    pub min_spacing_m: f64,
    /// Dish diameter, m (> 0); only used to refuse a spacing at which dishes would collide.
    pub dish_diameter_m: f64,
    /// Bound on the number of candidate positions drawn in all before giving up (default
    /// [`RandomDiscParams::DEFAULT_MAX_TRIES`]).
    pub max_tries: usize,
}

impl RandomDiscParams {
    /// Default bound on candidate draws: generous for any packing below about half the densest
    /// possible, yet milliseconds of work when a layout is impossible.
    pub const DEFAULT_MAX_TRIES: usize = 1_000_000;
}

/// Antennas placed uniformly at random in a disc with a minimum spacing, reproducibly from `seed`.
///
/// Random sequential addition: candidates are drawn uniformly over the disc (radius R·sqrt(U₁),
/// azimuth 2πU₂, which is uniform in area) and kept when no earlier antenna is closer than the
/// minimum spacing; up = 0. The generator is `ChaCha8Rng` seeded with
/// `derive_seed(seed, SeedPurpose::Layout, 0)`, so the same seed gives the same layout on every
/// machine. Errors: [`ArrayError::SpacingNotAboveDish`], [`ArrayError::RandomLayoutFailed`] when
/// `max_tries` draws did not place every antenna (including the case where the antennas' exclusion
/// discs of diameter s could not fit in the disc of radius R + s/2 even with no gaps), and
/// [`ArrayError::InvalidParameter`]/[`ArrayError::InvalidCount`] for bad values.
pub fn random_disc(params: &RandomDiscParams, seed: u64) -> Result<Layout, ArrayError> {
    let p = params;
    if p.n_antennas < 2 {
        return Err(ArrayError::TooFewAntennas { found: p.n_antennas });
    }
    check_range("radius_m", p.radius_m, f64::MIN_POSITIVE, f64::MAX, "finite > 0 m")?;
    check_range("dish_diameter_m", p.dish_diameter_m, f64::MIN_POSITIVE, f64::MAX, "finite > 0 m")?;
    check_range("min_spacing_m", p.min_spacing_m, 0.0, f64::MAX, "finite >= 0 m")?;
    if p.min_spacing_m <= p.dish_diameter_m {
        return Err(ArrayError::SpacingNotAboveDish {
            min_spacing_m: p.min_spacing_m,
            dish_diameter_m: p.dish_diameter_m,
        });
    }
    if p.max_tries == 0 {
        return Err(ArrayError::InvalidCount { name: "max_tries", value: 0, expected: ">= 1" });
    }
    let (radius, spacing) = (p.radius_m, p.min_spacing_m);
    // Area bound: the discs of radius s/2 around the antennas are disjoint and lie inside the
    // disc of radius R + s/2, so N (s/2)² ≤ (R + s/2)² is necessary. Refuse at once when it fails
    // rather than spin through every try.
    let fits = p.n_antennas as f64 * (spacing / 2.0).powi(2) <= (radius + spacing / 2.0).powi(2);
    let mut rng = ChaCha8Rng::seed_from_u64(derive_seed(seed, SeedPurpose::Layout, 0));
    let mut positions: Vec<[f64; 3]> = Vec::with_capacity(p.n_antennas);
    let mut tries = 0;
    while fits && positions.len() < p.n_antennas && tries < p.max_tries {
        tries += 1;
        let r = radius * rng.random::<f64>().sqrt();
        let theta = TAU * rng.random::<f64>();
        let candidate = [r * theta.cos(), r * theta.sin(), 0.0];
        if positions.iter().all(|&q| distance(q, candidate) >= spacing) {
            positions.push(candidate);
        }
    }
    if positions.len() < p.n_antennas {
        return Err(ArrayError::RandomLayoutFailed {
            placed: positions.len(),
            requested: p.n_antennas,
            radius_m: radius,
            min_spacing_m: spacing,
            tries,
        });
    }
    Layout::new(positions, spacing)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn disc(n: usize, radius_m: f64, min_spacing_m: f64) -> RandomDiscParams {
        RandomDiscParams {
            n_antennas: n,
            radius_m,
            min_spacing_m,
            dish_diameter_m: 12.0,
            max_tries: RandomDiscParams::DEFAULT_MAX_TRIES,
        }
    }

    #[test]
    fn random_disc_respects_spacing_and_radius_and_is_reproducible() {
        let p = disc(60, 1500.0, 40.0);
        let a = random_disc(&p, 20_240_601).unwrap();
        // Spacing checked again here by brute force, independently of Layout::new.
        let pos = a.antennas_enu_m();
        assert_eq!(pos.len(), 60);
        for i in 0..pos.len() {
            assert!(pos[i][0].hypot(pos[i][1]) <= 1500.0 && pos[i][2] == 0.0);
            for j in 0..i {
                assert!(distance(pos[i], pos[j]) >= 40.0);
            }
        }
        // Same seed, same layout bit for bit; another seed, another layout.
        assert_eq!(random_disc(&p, 20_240_601).unwrap(), a);
        assert_ne!(random_disc(&p, 20_240_602).unwrap(), a);
    }

    #[test]
    fn random_disc_is_uniform_in_area() {
        // For a uniform density over a disc, the fraction inside radius R/√2 is 1/2 (area ratio).
        // 400 points with a small spacing (exclusion area ≈ 400·π·3² / (π·5000²) ≈ 0.01% of the
        // disc, negligible): binomial σ = sqrt(400·¼) = 10, so |count − 200| < 40 is a 4σ bound.
        let p = disc(400, 5000.0, 13.0);
        let l = random_disc(&p, 7).unwrap();
        let inside =
            l.antennas_enu_m().iter().filter(|q| q[0].hypot(q[1]) < 5000.0 / 2f64.sqrt()).count();
        assert!((inside as i64 - 200).abs() < 40, "inside = {inside}");
    }

    #[test]
    fn random_disc_errors() {
        // Area bound fails: 100 exclusion discs of radius 50 m need 100·50² = 250000 m², the
        // disc of radius 100 + 50 m offers 150² = 22500 m².
        match random_disc(&disc(100, 100.0, 100.0), 1) {
            Err(ArrayError::RandomLayoutFailed { placed: 0, requested: 100, tries: 0, .. }) => {}
            other => panic!("unexpected {other:?}"),
        }
        // Area bound passes but the packing is too dense for random addition within the bound.
        let mut p = disc(30, 100.0, 40.0);
        p.max_tries = 20_000;
        match random_disc(&p, 1) {
            Err(e @ ArrayError::RandomLayoutFailed { tries: 20_000, .. }) => {
                assert!(e.to_string().contains("30 antennas"), "{e}")
            }
            other => panic!("unexpected {other:?}"),
        }
        assert!(matches!(
            random_disc(&disc(10, 1000.0, 12.0), 1),
            Err(ArrayError::SpacingNotAboveDish { .. })
        ));
        assert!(matches!(
            random_disc(&disc(1, 1000.0, 20.0), 1),
            Err(ArrayError::TooFewAntennas { found: 1 })
        ));
    }

    #[test]
    fn log_spiral_geometry() {
        let p = LogSpiralParams {
            n_arms: 3,
            antennas_per_arm: 5,
            inner_radius_m: 50.0,
            outer_radius_m: 800.0,
            twist_rad: 1.2,
            min_spacing_m: 15.0,
        };
        let l = log_spiral(&p).unwrap();
        let pos = l.antennas_enu_m();
        assert_eq!(pos.len(), 15);
        for arm in 0..3 {
            let theta_a = TAU * arm as f64 / 3.0;
            for j in 0..5 {
                let q = pos[arm * 5 + j];
                let r = q[0].hypot(q[1]);
                // Geometric spacing: radius ratio between neighbours is (800/50)^(1/4) = 2.
                assert!((r - 50.0 * 2f64.powi(j as i32)).abs() < 1e-9, "r = {r}");
                // On the log spiral θ = θ_a + b' ln(r / r_in), b' = twist / ln(r_out / r_in).
                let theta = theta_a + 1.2 * (r / 50.0).ln() / (16f64).ln();
                let d = (q[1].atan2(q[0]) - theta).rem_euclid(TAU);
                assert!(d < 1e-12 || TAU - d < 1e-12);
            }
        }
        // Arms 120° apart: rotating arm 0 by 120° gives arm 1.
        let (c, s) = ((TAU / 3.0).cos(), (TAU / 3.0).sin());
        for j in 0..5 {
            let a = pos[j];
            let b = pos[5 + j];
            assert!((c * a[0] - s * a[1] - b[0]).abs() < 1e-9);
            assert!((s * a[0] + c * a[1] - b[1]).abs() < 1e-9);
        }
        let mut bad = p;
        bad.outer_radius_m = 40.0;
        assert!(matches!(
            log_spiral(&bad),
            Err(ArrayError::InvalidParameter { name: "outer_radius_m", .. })
        ));
        bad = p;
        // The first two antennas of an arm, at (50 m, 0) and (100 m, 0.3 rad), are
        // sqrt(50² + 100² − 2·50·100·cos 0.3) ≈ 54.3 m apart: too close for 60 m.
        bad.min_spacing_m = 60.0;
        assert!(matches!(log_spiral(&bad), Err(ArrayError::AntennasTooClose { .. })));
    }
}
