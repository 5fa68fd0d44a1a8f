//! Shared fixtures for the integration tests: small, fully deterministic visibility sets.
#![allow(dead_code)]

use beamfloor_core::Correlation;
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3};
use num_complex::Complex64;

/// A visibility set with `n_ant` antennas on a deterministic pseudo-random layout, `n_times`
/// samples over ±3 h of hour angle and `n_chan` channels from 1 to 2 GHz. uvw follows the
/// standard rotation of an equatorial baseline (Thompson, Moran & Swenson, eq. 4.1) so the
/// uv-coverage looks like real tracks; the data values are arbitrary but distinct.
pub fn vis_fixture(n_ant: usize, n_times: usize, n_chan: usize) -> VisSet {
    let dec: f64 = -0.6;
    // Equatorial XYZ antenna positions (m) from a fixed low-discrepancy sequence.
    let pos: Vec<[f64; 3]> = (0..n_ant)
        .map(|a| {
            let r = 1500.0 * ((a as f64 + 0.5) / n_ant as f64).sqrt();
            let t = a as f64 * 2.399963;
            [r * t.cos(), r * t.sin(), 0.3 * r * (1.7 * t).sin()]
        })
        .collect();
    let hour_angles: Vec<f64> =
        (0..n_times).map(|t| -0.785 + 1.57 * t as f64 / (n_times.max(2) - 1) as f64).collect();
    let mut a1 = Vec::new();
    let mut a2 = Vec::new();
    let mut ti = Vec::new();
    let mut uvw = Vec::new();
    for i in 0..n_ant {
        for j in (i + 1)..n_ant {
            let l = [pos[j][0] - pos[i][0], pos[j][1] - pos[i][1], pos[j][2] - pos[i][2]];
            for (t, &h) in hour_angles.iter().enumerate() {
                let (sh, ch) = h.sin_cos();
                let (sd, cd) = dec.sin_cos();
                uvw.extend_from_slice(&[
                    sh * l[0] + ch * l[1],
                    -sd * ch * l[0] + sd * sh * l[1] + cd * l[2],
                    cd * ch * l[0] - cd * sh * l[1] + sd * l[2],
                ]);
                a1.push(i as u32);
                a2.push(j as u32);
                ti.push(t as u32);
            }
        }
    }
    let nr = a1.len();
    let frequencies_hz: Vec<f64> =
        (0..n_chan).map(|c| 1.0e9 + 1.0e9 * c as f64 / n_chan.max(2) as f64).collect();
    let data = Array3::from_shape_fn((nr, n_chan, 2), |(r, c, p)| {
        let x = (r * 31 + c * 7 + p * 3) as f64;
        Complex64::new((0.37 * x).sin() * 1.5, (0.11 * x).cos() - 0.25 * p as f64)
    });
    let weights =
        Array3::from_shape_fn((nr, n_chan, 2), |(r, c, p)| 1.0 + 0.5 * ((r + c + p) % 5) as f64);
    let flags = Array3::from_shape_fn((nr, n_chan, 2), |(r, c, p)| (r + 2 * c + p) % 7 == 0);
    VisSet {
        parallactic_angles_rad: hour_angles.iter().map(|h| 0.8 * h.sin()).collect(),
        hour_angles_rad: hour_angles,
        frequencies_hz,
        channel_width_hz: 1.0e9 / n_chan.max(2) as f64,
        integration_s: 10.0,
        phase_centre_ra_rad: 2.1,
        phase_centre_dec_rad: dec,
        antenna1: a1,
        antenna2: a2,
        time_index: ti,
        uvw_m: Array2::from_shape_vec((nr, 3), uvw).expect("nr x 3 values"),
        data,
        weights,
        flags,
        correlations: Correlation::BOTH.to_vec(),
        seed: 0xFFFF_FFFF_FFFF_FFF1,
        truth_hash: "9f2c4e1a7b".repeat(6) + "abcd",
    }
}
