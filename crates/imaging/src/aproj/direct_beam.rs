use crate::error::ImagingError;
use crate::operator::{check_degrid_args, check_grid_args, GridOutput, ImagingOperator};
use beamfloor_core::{ImageGeometry, VoltageBeam, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3, ArrayView3};
use num_complex::Complex64;
use rayon::prelude::*;
use std::f64::consts::PI;

/// The A-projection pair as a direct sum over every pixel and sample, with the baseline product
/// E_i E_j*(l, m; ν, b(t), p) of the row's own antennas evaluated exactly per sample and the
/// exact w-term: slow (pixels × samples beam evaluations) and obviously correct — the
/// reference the [`crate::AProjection`] operator is tested against.
///
/// degrid: V = Σ_pixels I · E_i E_j* · exp(−2πi (u l + v m + w (n − 1)));
/// grid (its adjoint): I = Re Σ f(ν) c · conj(E_i E_j*) · exp(+2πi (u l + v m + w (n − 1))).
/// Pixels beyond the horizon are zero.
#[derive(Debug)]
pub struct DirectBeamOperator<'a, B: VoltageBeam + ?Sized> {
    /// Image grid.
    pub geometry: ImageGeometry,
    /// The beam (its time index is the PA bin).
    pub beam: &'a B,
    /// PA bin of every visibility time index.
    pub bin_of_time: Vec<usize>,
}

impl<B: VoltageBeam + ?Sized> DirectBeamOperator<'_, B> {
    fn pixels(&self) -> Vec<Option<(f64, f64, f64)>> {
        let g = self.geometry;
        (0..g.ny * g.nx)
            .map(|k| {
                let (l, m) = g.lm_of_pixel((k % g.nx) as f64, (k / g.nx) as f64);
                let r2 = l * l + m * m;
                (r2 < 1.0).then(|| (l, m, -r2 / (1.0 + (1.0 - r2).sqrt())))
            })
            .collect()
    }

    fn bins(&self, vis: &VisSet) -> Result<Vec<usize>, ImagingError> {
        vis.time_index
            .iter()
            .map(|&t| {
                self.bin_of_time.get(t as usize).copied().ok_or(ImagingError::Parameter {
                    name: "bin_of_time",
                    value: format!("time index {t}"),
                    why: "must map every time index of the visibilities to a PA bin",
                })
            })
            .collect()
    }

    /// Beam product and phase factor exp(−2πi(...)) of one sample at one pixel.
    #[allow(clippy::too_many_arguments)]
    #[inline]
    fn term(
        &self,
        vis: &VisSet,
        bins: &[usize],
        r: usize,
        c: usize,
        k: usize,
        (l, m, x): (f64, f64, f64),
    ) -> Complex64 {
        let f = vis.frequencies_hz[c];
        let s = f / SPEED_OF_LIGHT_M_PER_S;
        let u = &vis.uvw_m;
        let phase = 2.0 * PI * s * (u[[r, 0]] * l + u[[r, 1]] * m + u[[r, 2]] * x);
        let a = self.beam.baseline_product(
            vis.antenna1[r] as usize,
            vis.antenna2[r] as usize,
            bins[r],
            f,
            vis.correlations[k].receptor(),
            l,
            m,
        );
        a * Complex64::from_polar(1.0, -phase)
    }
}

impl<B: VoltageBeam + ?Sized> ImagingOperator for DirectBeamOperator<'_, B> {
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
        let bins = self.bins(vis)?;
        let (nr, nc, np) = (vis.n_rows(), vis.n_channels(), vis.n_correlations());
        let values: Vec<Vec<f64>> = self
            .pixels()
            .par_iter()
            .map(|px| {
                let mut acc = vec![0.0; outputs.len()];
                let Some(px) = *px else { return acc };
                for r in 0..nr {
                    for c in 0..nc {
                        for k in 0..np {
                            let e = self.term(vis, &bins, r, c, k, px).conj();
                            for (a, o) in acc.iter_mut().zip(outputs) {
                                *a += (sources[o.source][[r, c, k]] * e).re * o.channel_factors[c];
                            }
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
        let bins = self.bins(vis)?;
        let pixels = self.pixels();
        let (nr, nc, np) = (vis.n_rows(), vis.n_channels(), vis.n_correlations());
        let flat: Vec<Complex64> = (0..nr * nc * np)
            .into_par_iter()
            .map(|q| {
                let (r, c, k) = (q / (nc * np), (q / np) % nc, q % np);
                let mut acc = Complex64::new(0.0, 0.0);
                for (p, px) in pixels.iter().enumerate() {
                    let Some(px) = *px else { continue };
                    let (iy, ix) = (p / self.geometry.nx, p % self.geometry.nx);
                    let amp: f64 =
                        images.iter().zip(channel_factors).map(|(im, f)| im[[iy, ix]] * f[c]).sum();
                    if amp != 0.0 {
                        acc += amp * self.term(vis, &bins, r, c, k, px);
                    }
                }
                acc
            })
            .collect();
        Ok(Array3::from_shape_vec((nr, nc, np), flat).expect("length is nr · nc · np"))
    }
}
