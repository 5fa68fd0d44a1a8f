use crate::error::ImagingError;
use crate::operator::{check_degrid_args, check_grid_args, GridOutput, ImagingOperator};
use beamfloor_core::{ImageGeometry, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3, ArrayView3};
use num_complex::Complex64;
use rayon::prelude::*;
use std::f64::consts::PI;

/// The imaging operator pair evaluated as a direct Fourier sum over every pixel and sample:
/// slow (pixels × samples complex exponentials) and obviously correct, with the exact w-term.
/// It is the reference the gridder is tested against, and usable as one by other crates.
///
/// Pixels beyond the horizon (l² + m² ≥ 1) are zero when the w-term is included.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DirectOperator {
    /// Image grid.
    pub geometry: ImageGeometry,
    /// Include exp(±2πi w (n − 1)); false images as if every w were zero.
    pub include_w: bool,
}

impl DirectOperator {
    /// (l, m, n − 1) of every pixel in `[iy][ix]` order; None beyond the horizon.
    fn pixels(&self) -> Vec<Option<(f64, f64, f64)>> {
        let g = self.geometry;
        (0..g.ny * g.nx)
            .map(|k| {
                let (l, m) = g.lm_of_pixel((k % g.nx) as f64, (k / g.nx) as f64);
                if !self.include_w {
                    return Some((l, m, 0.0));
                }
                let r2 = l * l + m * m;
                (r2 < 1.0).then(|| (l, m, -r2 / (1.0 + (1.0 - r2).sqrt())))
            })
            .collect()
    }

    /// Phase 2π (u l + v m + w (n − 1)) of row `r`, channel `c` at a pixel.
    #[inline]
    fn phase(vis: &VisSet, r: usize, c: usize, (l, m, x): (f64, f64, f64)) -> f64 {
        let s = vis.frequencies_hz[c] / SPEED_OF_LIGHT_M_PER_S;
        let u = &vis.uvw_m;
        2.0 * PI * s * (u[[r, 0]] * l + u[[r, 1]] * m + u[[r, 2]] * x)
    }
}

impl ImagingOperator for DirectOperator {
    fn geometry(&self) -> ImageGeometry {
        self.geometry
    }

    fn grid(
        &self,
        vis: &VisSet,
        sources: &[ArrayView3<'_, Complex64>],
        outputs: &[GridOutput],
    ) -> Result<Vec<Array2<f64>>, ImagingError> {
        check_grid_args(vis, sources, outputs)?;
        let (nr, nc) = (vis.n_rows(), vis.n_channels());
        // Pol-summed values per source, [source][row * nc + chan].
        let summed: Vec<Vec<Complex64>> = sources
            .iter()
            .map(|s| {
                (0..nr * nc)
                    .map(|k| s.slice(ndarray::s![k / nc, k % nc, ..]).iter().sum())
                    .collect()
            })
            .collect();
        let values: Vec<Vec<f64>> = self
            .pixels()
            .par_iter()
            .map(|px| {
                let mut acc = vec![0.0; outputs.len()];
                let Some(px) = *px else { return acc };
                for r in 0..nr {
                    for c in 0..nc {
                        let e = Complex64::from_polar(1.0, Self::phase(vis, r, c, px));
                        for (a, o) in acc.iter_mut().zip(outputs) {
                            *a += (summed[o.source][r * nc + c] * e).re * o.channel_factors[c];
                        }
                    }
                }
                acc
            })
            .collect();
        let g = self.geometry;
        Ok((0..outputs.len())
            .map(|o| Array2::from_shape_fn((g.ny, g.nx), |(iy, ix)| values[iy * g.nx + ix][o]))
            .collect())
    }

    fn degrid(
        &self,
        vis: &VisSet,
        images: &[Array2<f64>],
        channel_factors: &[Vec<f64>],
    ) -> Result<Array3<Complex64>, ImagingError> {
        check_degrid_args(vis, self.geometry, images, channel_factors)?;
        let pixels = self.pixels();
        let (nr, nc) = (vis.n_rows(), vis.n_channels());
        let flat: Vec<Complex64> = (0..nr * nc)
            .into_par_iter()
            .map(|k| {
                let (r, c) = (k / nc, k % nc);
                let mut acc = Complex64::new(0.0, 0.0);
                for (p, px) in pixels.iter().enumerate() {
                    let Some(px) = *px else { continue };
                    let (iy, ix) = (p / self.geometry.nx, p % self.geometry.nx);
                    let amp: f64 =
                        images.iter().zip(channel_factors).map(|(im, f)| im[[iy, ix]] * f[c]).sum();
                    if amp != 0.0 {
                        acc += Complex64::from_polar(amp, -Self::phase(vis, r, c, px));
                    }
                }
                acc
            })
            .collect();
        Ok(Array3::from_shape_fn((nr, nc, vis.n_correlations()), |(r, c, _)| flat[r * nc + c]))
    }
}
