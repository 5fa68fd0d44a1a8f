//! The Gaussian visibility envelope against a numerical Fourier transform of a sampled Gaussian.
use beamfloor_sky::EllipticalGaussian;
use num_complex::Complex64;
use rustfft::FftPlanner;

/// Sample the unit-flux Gaussian on an n × n grid of step h (l along axis 1, m along axis 0,
/// origin at index n/2), FFT it with the kernel exp(−2πi (u l + v m)), and compare with the
/// analytic envelope at the FFT's (u, v) = (k/(n h)). The continuous transform equals h² times the
/// DFT (with the origin shift removed) up to aliasing exp(−2π²σ²/h²) and truncation
/// exp(−(n h/2)²/(2σ²)), both < 1e-15 here, so 1e-12 is a safe tolerance for rounding in the FFT.
#[test]
fn envelope_matches_fft_of_sampled_gaussian() {
    let n = 256usize;
    let h = 2e-5;
    let g = EllipticalGaussian::new(6e-4, 2.5e-4, 0.6).unwrap();
    let cov = g.covariance();
    let det = cov[0][0] * cov[1][1] - cov[0][1] * cov[0][1];
    let mut grid = vec![Complex64::new(0.0, 0.0); n * n];
    for iy in 0..n {
        for ix in 0..n {
            let l = (ix as f64 - (n / 2) as f64) * h;
            let m = (iy as f64 - (n / 2) as f64) * h;
            let q = (cov[1][1] * l * l - 2.0 * cov[0][1] * l * m + cov[0][0] * m * m) / det;
            let density = (-0.5 * q).exp() / (2.0 * std::f64::consts::PI * det.sqrt());
            // Shift the origin to index 0 so the DFT's phase is that of the continuous transform.
            let sx = (ix + n - n / 2) % n;
            let sy = (iy + n - n / 2) % n;
            grid[sy * n + sx] = Complex64::new(density * h * h, 0.0);
        }
    }
    let mut planner = FftPlanner::<f64>::new();
    let fft = planner.plan_fft_forward(n); // rustfft's forward transform has kernel exp(−2πi jk/n)
    for row in grid.chunks_mut(n) {
        fft.process(row);
    }
    let mut col = vec![Complex64::new(0.0, 0.0); n];
    for ix in 0..n {
        for iy in 0..n {
            col[iy] = grid[iy * n + ix];
        }
        fft.process(&mut col);
        for iy in 0..n {
            grid[iy * n + ix] = col[iy];
        }
    }
    let mut max_err: f64 = 0.0;
    let mut checked = 0;
    for kv in 0..n {
        for ku in 0..n {
            let fu = if ku < n / 2 { ku as f64 } else { ku as f64 - n as f64 };
            let fv = if kv < n / 2 { kv as f64 } else { kv as f64 - n as f64 };
            let (u, v) = (fu / (n as f64 * h), fv / (n as f64 * h));
            let want = g.envelope(u, v);
            let got = grid[kv * n + ku];
            max_err = max_err.max((got.re - want).abs()).max(got.im.abs());
            checked += usize::from(want > 1e-3);
        }
    }
    assert!(checked > 100, "the test must sample the envelope where it is not negligible");
    assert!(max_err < 1e-12, "max error {max_err}");
}
