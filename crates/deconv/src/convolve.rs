use ndarray::Array2;
use rustfft::num_complex::Complex;
use rustfft::FftPlanner;

/// Linear (not circular) 2-D convolution of `image` with `kernel`, returned on `image`'s grid.
///
/// The kernel's origin is its centre pixel (kernel_nx/2, kernel_ny/2), the same convention as
/// the PSF and [`beamfloor_core::ImageGeometry`]:
///
/// out[y, x] = Σ_{y', x'} image[y', x'] · kernel[y − y' + ky/2, x − x' + kx/2],
///
/// with terms whose kernel index falls outside the kernel omitted. Computed with FFTs on a grid
/// zero-padded to at least (ny + ky, nx + kx), so nothing wraps around.
pub fn convolve_same(image: &Array2<f64>, kernel: &Array2<f64>) -> Array2<f64> {
    let (ny, nx) = image.dim();
    let (ky, kx) = kernel.dim();
    if ny == 0 || nx == 0 || ky == 0 || kx == 0 {
        return Array2::zeros((ny, nx));
    }
    let py = smooth_size(ny + ky);
    let px = smooth_size(nx + kx);
    let (cy, cx) = (ky / 2, kx / 2);
    let mut a = vec![Complex::new(0.0, 0.0); py * px];
    let mut b = vec![Complex::new(0.0, 0.0); py * px];
    for ((iy, ix), &v) in image.indexed_iter() {
        a[iy * px + ix].re = v;
    }
    for ((iy, ix), &v) in kernel.indexed_iter() {
        // Kernel offset d = index − centre, stored at d mod p.
        let y = (iy + py - cy) % py;
        let x = (ix + px - cx) % px;
        b[y * px + x].re = v;
    }
    let mut planner = FftPlanner::<f64>::new();
    fft2(&mut planner, &mut a, py, px, false);
    fft2(&mut planner, &mut b, py, px, false);
    for (p, q) in a.iter_mut().zip(&b) {
        *p *= *q;
    }
    fft2(&mut planner, &mut a, py, px, true);
    let norm = 1.0 / (py * px) as f64;
    Array2::from_shape_fn((ny, nx), |(iy, ix)| a[iy * px + ix].re * norm)
}

/// In-place unnormalised 2-D FFT of a row-major `ny × nx` buffer (rows, then columns).
fn fft2(
    planner: &mut FftPlanner<f64>,
    data: &mut [Complex<f64>],
    ny: usize,
    nx: usize,
    inverse: bool,
) {
    let row = if inverse { planner.plan_fft_inverse(nx) } else { planner.plan_fft_forward(nx) };
    row.process(data);
    let col = if inverse { planner.plan_fft_inverse(ny) } else { planner.plan_fft_forward(ny) };
    let mut column = vec![Complex::new(0.0, 0.0); ny];
    for ix in 0..nx {
        for iy in 0..ny {
            column[iy] = data[iy * nx + ix];
        }
        col.process(&mut column);
        for iy in 0..ny {
            data[iy * nx + ix] = column[iy];
        }
    }
}

/// Smallest n' ≥ n whose only prime factors are 2, 3 and 5 (fast FFT sizes).
pub(crate) fn smooth_size(n: usize) -> usize {
    let mut m = n.max(1);
    loop {
        let mut r = m;
        for p in [2, 3, 5] {
            while r.is_multiple_of(p) {
                r /= p;
            }
        }
        if r == 1 {
            return m;
        }
        m += 1;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Direct evaluation of the defining sum: the slow reference for the FFT path.
    fn convolve_direct(image: &Array2<f64>, kernel: &Array2<f64>) -> Array2<f64> {
        let (ny, nx) = image.dim();
        let (ky, kx) = kernel.dim();
        let (cy, cx) = ((ky / 2) as isize, (kx / 2) as isize);
        Array2::from_shape_fn((ny, nx), |(y, x)| {
            let mut s = 0.0;
            for ((yp, xp), &v) in image.indexed_iter() {
                let dy = y as isize - yp as isize + cy;
                let dx = x as isize - xp as isize + cx;
                if dy >= 0 && dx >= 0 && (dy as usize) < ky && (dx as usize) < kx {
                    s += v * kernel[[dy as usize, dx as usize]];
                }
            }
            s
        })
    }

    #[test]
    fn fft_convolution_matches_direct_sum() {
        // Odd and even, smaller and larger kernels than the image; values from a fixed formula.
        for &(ny, nx, ky, kx) in &[(12, 10, 5, 7), (9, 14, 24, 20), (16, 16, 16, 16)] {
            let img = Array2::from_shape_fn((ny, nx), |(y, x)| ((y * 7 + x * 3) % 11) as f64 - 5.0);
            let ker =
                Array2::from_shape_fn((ky, kx), |(y, x)| (((y * 5 + x * 2) % 13) as f64).sin());
            let fast = convolve_same(&img, &ker);
            let slow = convolve_direct(&img, &ker);
            let scale = slow.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            for (a, b) in fast.iter().zip(slow.iter()) {
                // FFT round-off ~ n log n · ε · max: 1e-12 relative is generous for these sizes.
                assert!((a - b).abs() < 1e-12 * scale, "{a} vs {b}");
            }
        }
    }

    #[test]
    fn smooth_sizes() {
        assert_eq!(smooth_size(7), 8);
        assert_eq!(smooth_size(97), 100);
        assert_eq!(smooth_size(128), 128);
        assert_eq!(smooth_size(1439), 1440);
        assert_eq!(smooth_size(1), 1);
    }
}
