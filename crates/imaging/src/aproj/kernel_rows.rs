//! The innermost loops of [`crate::KernelAProjection`]: one footprint row of complex kernel
//! values against one contiguous row of the padded grid.
use num_complex::Complex64;
use std::ops::Range;

/// `dst[i] += Σ_k vals[k] · krows[k][range.start + i]` (one term per correlation).
#[inline]
pub(crate) fn accumulate_row(
    dst: &mut [Complex64],
    krows: &[Vec<Complex64>],
    range: Range<usize>,
    vals: &[Complex64],
) {
    for (krow, &v) in krows.iter().zip(vals) {
        if v == Complex64::new(0.0, 0.0) {
            continue;
        }
        for (d, k) in dst.iter_mut().zip(&krow[range.clone()]) {
            *d += v * k;
        }
    }
}

/// Σ_i grid[i] · krow[i].
#[inline]
pub(crate) fn dot_row(grid: &[Complex64], krow: &[Complex64]) -> Complex64 {
    grid.iter().zip(krow).map(|(g, k)| g * k).sum()
}
