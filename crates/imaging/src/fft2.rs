use num_complex::Complex64;
use rayon::prelude::*;
use rustfft::{Fft, FftDirection, FftPlanner};
use std::sync::Arc;

/// An unnormalised 2-D FFT of a row-major `[ny][nx]` complex grid in one direction, planned once.
///
/// Forward: X[k] = Σ_n x[n] e^{−2πi k n / N} per axis; inverse: the same with e^{+2πi k n / N}
/// (rustfft's conventions, no 1/N).
#[derive(Clone)]
pub struct Fft2 {
    nx: usize,
    ny: usize,
    along_x: Arc<dyn Fft<f64>>,
    along_y: Arc<dyn Fft<f64>>,
}

impl std::fmt::Debug for Fft2 {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "Fft2({}x{}, {:?})", self.nx, self.ny, self.along_x.fft_direction())
    }
}

impl Fft2 {
    /// Plan an `nx × ny` transform in `direction`.
    pub fn new(nx: usize, ny: usize, direction: FftDirection) -> Self {
        let mut planner = FftPlanner::new();
        Self {
            nx,
            ny,
            along_x: planner.plan_fft(nx, direction),
            along_y: planner.plan_fft(ny, direction),
        }
    }

    /// Transform `grid` (length nx·ny, row-major `[y][x]`) in place; `scratch` must have the
    /// same length (it is used for the transpose).
    pub fn process(&self, grid: &mut [Complex64], scratch: &mut [Complex64]) {
        let (nx, ny) = (self.nx, self.ny);
        run_rows(&self.along_x, grid, nx);
        transpose(grid, scratch, nx, ny);
        run_rows(&self.along_y, scratch, ny);
        transpose(scratch, grid, ny, nx);
    }
}

/// FFT every contiguous row of length `n`, rows shared out over the rayon pool.
fn run_rows(fft: &Arc<dyn Fft<f64>>, data: &mut [Complex64], n: usize) {
    let rows_per_task = (data.len() / n).div_ceil(4 * rayon::current_num_threads()).max(1);
    data.par_chunks_mut(rows_per_task * n).for_each(|chunk| {
        let mut scratch = vec![Complex64::new(0.0, 0.0); fft.get_inplace_scratch_len()];
        fft.process_with_scratch(chunk, &mut scratch);
    });
}

/// `dst[x][y] = src[y][x]` for a `[rows][cols]` source.
fn transpose(src: &[Complex64], dst: &mut [Complex64], cols: usize, rows: usize) {
    const B: usize = 32;
    dst.par_chunks_mut(rows * B).enumerate().for_each(|(bi, block)| {
        let c0 = bi * B;
        let nc = block.len() / rows;
        for r0 in (0..rows).step_by(B) {
            for r in r0..(r0 + B).min(rows) {
                let srow = &src[r * cols + c0..r * cols + c0 + nc];
                for (c, v) in srow.iter().enumerate() {
                    block[c * rows + r] = *v;
                }
            }
        }
    });
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matches_direct_2d_dft() {
        // Reference: the 2-D DFT definition Σ x[n,m] e^{∓2πi (k n/N + l m/M)} summed directly.
        let (nx, ny) = (6usize, 10usize);
        let x: Vec<Complex64> = (0..nx * ny)
            .map(|i| Complex64::new((i as f64 * 0.37).sin(), (i as f64 * 0.11).cos()))
            .collect();
        for (dir, sign) in [(FftDirection::Forward, -1.0), (FftDirection::Inverse, 1.0)] {
            let mut g = x.clone();
            let mut s = vec![Complex64::new(0.0, 0.0); nx * ny];
            Fft2::new(nx, ny, dir).process(&mut g, &mut s);
            for ky in 0..ny {
                for kx in 0..nx {
                    let mut want = Complex64::new(0.0, 0.0);
                    for y in 0..ny {
                        for xx in 0..nx {
                            let ph = sign
                                * 2.0
                                * std::f64::consts::PI
                                * ((kx * xx) as f64 / nx as f64 + (ky * y) as f64 / ny as f64);
                            want += x[y * nx + xx] * Complex64::from_polar(1.0, ph);
                        }
                    }
                    assert!((g[ky * nx + kx] - want).norm() < 1e-12);
                }
            }
        }
    }
}
