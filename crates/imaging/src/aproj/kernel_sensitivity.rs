use super::kernel_operator::KernelAProjection;
use super::screens::a_screen;
use crate::error::ImagingError;
use crate::operator::ImagingOperator;
use beamfloor_core::{Pol, VoltageBeam};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3, Zip};

impl<B: VoltageBeam + ?Sized> KernelAProjection<'_, B> {
    /// The sensitivity image W(l, m) = Σ w · A_grid(l, m) · A_data(l, m) / Σ w over every
    /// unflagged sample of both hands, with the beams the kernels carry: A_data = |E_p|² at the
    /// channel group's mean frequency, A_grid the same (plain A-projection, so W = Σ w |A|² / Σ w)
    /// or at the group's mean conjugate frequency (wideband). The same quantity as
    /// [`crate::AProjection::sensitivity_image`] (identical to it with one channel per group),
    /// evaluated on the pixel grid; use it with [`crate::flat_noise`] / [`crate::flat_sky`].
    pub fn sensitivity_image(
        &self,
        vis: &VisSet,
        weights: &Array3<f64>,
    ) -> Result<Array2<f64>, ImagingError> {
        vis.validate()?;
        if weights.shape() != vis.data.shape() {
            return Err(ImagingError::Shape {
                what: "imaging weights",
                found: weights.shape().to_vec(),
                expected: vis.data.shape().to_vec(),
            });
        }
        let bins = self.bins_of_rows(vis)?;
        let layout = &self.layout;
        let mut sums = vec![0.0; layout.n_bins * layout.n_groups * 2];
        for (r, &bin) in bins.iter().enumerate() {
            for c in 0..vis.n_channels() {
                let g = layout.group_of_channel[c];
                for (k, corr) in vis.correlations.iter().enumerate() {
                    if !vis.flags[[r, c, k]] {
                        let h = if corr.receptor() == Pol::R { 0 } else { 1 };
                        sums[(bin * layout.n_groups + g) * 2 + h] += weights[[r, c, k]];
                    }
                }
            }
        }
        let geometry = self.geometry();
        let mut out = Array2::<f64>::zeros((geometry.ny, geometry.nx));
        let mut total = 0.0;
        for (i, &sum_w) in sums.iter().enumerate() {
            if sum_w == 0.0 {
                continue;
            }
            total += sum_w;
            let (bin, g, pol) =
                (i / (2 * layout.n_groups), (i / 2) % layout.n_groups, Pol::BOTH[i % 2]);
            let fwd = a_screen(self.beam, geometry, bin, layout.forward_freqs[g], pol);
            let grd = if self.is_wideband() {
                a_screen(self.beam, geometry, bin, layout.gridding_freqs[g], pol)
            } else {
                fwd.clone()
            };
            Zip::from(&mut out).and(&fwd).and(&grd).for_each(|o, &a, &b| *o += sum_w * a * b);
        }
        if !(total > 0.0 && total.is_finite()) {
            return Err(ImagingError::Parameter {
                name: "imaging weights",
                value: total.to_string(),
                why: "the unflagged weights must have a positive, finite sum",
            });
        }
        out /= total;
        Ok(out)
    }
}
