//! Shared fixtures of the predict tests: a small observation, a test beam and a slow reference.
#![allow(dead_code)]
use beamfloor_array::{Layout, Observation, ObservationParams};
use beamfloor_core::{Correlation, Pol, VoltageBeam, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_sky::{Component, EllipticalGaussian, Spectrum};
use ndarray::Array3;
use num_complex::Complex64;
use std::f64::consts::PI;

/// Six antennas out to ~1.2 km, a 1.5 h track, `n_channels` over 1–2 GHz.
pub fn observation(n_channels: usize) -> Observation {
    let layout = Layout::new(
        vec![
            [0.0, 0.0, 0.0],
            [120.0, 35.0, 0.5],
            [-310.0, 240.0, 1.0],
            [650.0, -420.0, -0.7],
            [-900.0, -800.0, 2.0],
            [40.0, 1150.0, 0.0],
        ],
        15.0,
    )
    .unwrap();
    Observation::new(&ObservationParams {
        layout,
        latitude_rad: (-30f64).to_radians(),
        phase_centre_ra_rad: 2.0,
        phase_centre_dec_rad: (-45f64).to_radians(),
        hour_angle_start_rad: (-20f64).to_radians(),
        hour_angle_end_rad: 5f64.to_radians(),
        integration_s: 600.0,
        band_min_hz: 1.0e9,
        band_max_hz: 2.0e9,
        n_channels,
        elevation_limit_rad: 20f64.to_radians(),
    })
    .unwrap()
}

/// Points and Gaussians out to ~3° with curved spectra.
pub fn sky() -> Vec<Component> {
    let s = |f: f64, a: f64, b: f64| Spectrum::new(f, 1.4e9, a, b).unwrap();
    vec![
        Component::point("a", 0.01, -0.02, s(1.0, -0.7, 0.0)).unwrap(),
        Component::point("b", -0.035, 0.012, s(0.5, -1.1, 0.3)).unwrap(),
        Component::point("c", 0.0, 0.05, s(2.0, 0.2, -0.1)).unwrap(),
        Component::gaussian(
            "g",
            -0.02,
            -0.03,
            s(1.5, -0.5, 0.0),
            EllipticalGaussian::new(4e-4, 1.5e-4, 0.8).unwrap(),
        )
        .unwrap(),
    ]
}

/// A test voltage pattern: a circular Gaussian whose width scales with wavelength, shifted in
/// opposite directions for R and L, rotated with the time index, and multiplied by a complex
/// per-antenna gain — enough structure that any mix-up of antenna, time, channel, polarization or
/// component indices changes the answer.
pub struct TestBeam {
    pub n: usize,
}

impl VoltageBeam for TestBeam {
    fn n_antennas(&self) -> usize {
        self.n
    }
    fn voltage(
        &self,
        antenna: usize,
        time: usize,
        freq_hz: f64,
        pol: Pol,
        l: f64,
        m: f64,
    ) -> Complex64 {
        let fwhm = 0.08 * 1.4e9 / freq_hz;
        let squint = if pol == Pol::R { 2e-3 } else { -2e-3 };
        let angle = 0.05 * time as f64;
        let (s, c) = angle.sin_cos();
        let (dl, dm) = (l - squint * c, m - squint * s);
        let amplitude =
            (-4.0 * std::f64::consts::LN_2 * (dl * dl + dm * dm) / (fwhm * fwhm)).exp().sqrt();
        let gain = Complex64::from_polar(
            1.0 + 0.01 * antenna as f64,
            0.3 * antenna as f64 - 0.1 * time as f64,
        );
        amplitude * gain * (1.0 + 0.05 * (dl * 40.0).sin())
    }
}

/// Slow, obviously correct reference: the measurement equation term by term with exp() per
/// channel, the sky crate's envelope and the trait's baseline product (Thompson, Moran & Swenson,
/// 3rd ed., eq. 3.7, with this workspace's sign convention).
pub fn reference(
    obs: &Observation,
    comps: &[Component],
    beam: Option<&dyn VoltageBeam>,
    w_term: bool,
) -> Array3<Complex64> {
    let freqs = &obs.channels.frequencies_hz;
    let mut out = Array3::zeros((obs.rows.len(), freqs.len(), 2));
    for (r, row) in obs.rows.iter().enumerate() {
        for (k, &f) in freqs.iter().enumerate() {
            let scale = f / SPEED_OF_LIGHT_M_PER_S;
            let (u, v, w) = (row.uvw_m[0] * scale, row.uvw_m[1] * scale, row.uvw_m[2] * scale);
            for (p, corr) in Correlation::BOTH.iter().enumerate() {
                let mut sum = Complex64::new(0.0, 0.0);
                for c in comps {
                    let n = (1.0 - c.l * c.l - c.m * c.m).sqrt();
                    let w_part = if w_term { w * (n - 1.0) } else { 0.0 };
                    let phase = -2.0 * PI * (u * c.l + v * c.m + w_part);
                    let e = match beam {
                        Some(b) => b.baseline_product(
                            row.antenna1,
                            row.antenna2,
                            row.time_index,
                            f,
                            corr.receptor(),
                            c.l,
                            c.m,
                        ),
                        None => Complex64::new(1.0, 0.0),
                    };
                    sum += c.spectrum.flux_at(f)
                        * c.envelope(u, v)
                        * e
                        * Complex64::new(phase.cos(), phase.sin());
                }
                out[[r, k, p]] = sum;
            }
        }
    }
    out
}

pub fn max_abs_diff(a: &Array3<Complex64>, b: &Array3<Complex64>) -> f64 {
    a.iter().zip(b.iter()).map(|(x, y)| (x - y).norm()).fold(0.0, f64::max)
}
