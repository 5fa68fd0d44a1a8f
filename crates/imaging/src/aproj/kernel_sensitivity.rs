use super::kernel_operator::KernelAProjection;
use super::screens::a_screen;
use crate::error::ImagingError;
use crate::operator::ImagingOperator;
use beamfloor_core::{taylor_weight, Pol, VoltageBeam};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3, Zip};

impl<B: VoltageBeam + ?Sized> KernelAProjection<'_, B> {
    /// The sensitivity image W(l, m) = Σ w · A_grid(l, m) · A_data(l, m) / Σ w over every
    /// unflagged sample of both hands, with the beams the kernels carry: A_data = |E_p|² at the
    /// channel group's mean frequency, A_grid the same (plain A-projection, so W = Σ w |A|² / Σ w)
    /// or at the group's mean conjugate frequency (wideband). The same quantity as
    /// [`crate::AProjection::sensitivity_image`] (identical to it with one channel per group),
    /// evaluated on the pixel grid; use it with [`crate::flat_noise`] / [`crate::flat_sky`].
    /// It is moment 0 of [`Self::sensitivity_moments`].
    pub fn sensitivity_image(
        &self,
        vis: &VisSet,
        weights: &Array3<f64>,
    ) -> Result<Array2<f64>, ImagingError> {
        let mut moments = self.sensitivity_moments(vis, weights, 1, 1.0)?;
        Ok(moments.swap_remove(0))
    }

    /// The spectral moments of the sensitivity, W_k(l, m) = Σ w · x^k · A_grid · A_data / Σ w
    /// for k = 0 … `n_moments` − 1, with x = (ν − ν0)/ν0 the Taylor variable of each sample's
    /// channel about `ref_freq_hz` (ν0) and the beams as in [`Self::sensitivity_image`]
    /// (W_0 is the sensitivity image).
    ///
    /// They are what a point source at (l, m) contributes to the Taylor-weighted residual
    /// images through this operator: a source with Taylor coefficients I_s gives
    /// r_t = Σ_s W_{s+t} I_s at its own position (the spectral PSFs' centre values Σ w x^k / Σ w,
    /// each weighted by the beam product there). Multi-term deconvolution needs this per-pixel
    /// Hessian where the beam varies over the band (Bhatnagar, Rau & Golap 2013, ApJ 770, 91,
    /// discuss the Taylor-weighted sensitivity images of wideband A-projection).
    pub fn sensitivity_moments(
        &self,
        vis: &VisSet,
        weights: &Array3<f64>,
        n_moments: usize,
        ref_freq_hz: f64,
    ) -> Result<Vec<Array2<f64>>, ImagingError> {
        vis.validate()?;
        if weights.shape() != vis.data.shape() {
            return Err(ImagingError::Shape {
                what: "imaging weights",
                found: weights.shape().to_vec(),
                expected: vis.data.shape().to_vec(),
            });
        }
        if n_moments == 0 || !(ref_freq_hz.is_finite() && ref_freq_hz > 0.0) {
            return Err(ImagingError::Parameter {
                name: "sensitivity moments",
                value: format!("n_moments {n_moments}, reference frequency {ref_freq_hz} Hz"),
                why: "needs at least one moment and a positive reference frequency",
            });
        }
        let bins = self.bins_of_rows(vis)?;
        let layout = &self.layout;
        let n_slots = layout.n_bins * layout.n_groups * 2;
        // sums[slot * n_moments + k] = Σ w x^k over the samples of (bin, group, hand).
        let mut sums = vec![0.0; n_slots * n_moments];
        let powers: Vec<Vec<f64>> = vis
            .frequencies_hz
            .iter()
            .map(|&f| (0..n_moments).map(|k| taylor_weight(f, ref_freq_hz, k)).collect())
            .collect();
        for (r, &bin) in bins.iter().enumerate() {
            for c in 0..vis.n_channels() {
                let g = layout.group_of_channel[c];
                for (p, corr) in vis.correlations.iter().enumerate() {
                    if !vis.flags[[r, c, p]] {
                        let h = if corr.receptor() == Pol::R { 0 } else { 1 };
                        let slot = (bin * layout.n_groups + g) * 2 + h;
                        let w = weights[[r, c, p]];
                        for (k, x_k) in powers[c].iter().enumerate() {
                            sums[slot * n_moments + k] += w * x_k;
                        }
                    }
                }
            }
        }
        let geometry = self.geometry();
        let mut out = vec![Array2::<f64>::zeros((geometry.ny, geometry.nx)); n_moments];
        let mut total = 0.0;
        for slot in 0..n_slots {
            let slot_sums = &sums[slot * n_moments..(slot + 1) * n_moments];
            if slot_sums[0] == 0.0 {
                continue;
            }
            total += slot_sums[0];
            let (bin, g, pol) =
                (slot / (2 * layout.n_groups), (slot / 2) % layout.n_groups, Pol::BOTH[slot % 2]);
            let fwd = a_screen(self.beam, geometry, bin, layout.forward_freqs[g], pol);
            let grd = if self.is_wideband() {
                a_screen(self.beam, geometry, bin, layout.gridding_freqs[g], pol)
            } else {
                fwd.clone()
            };
            for (image, &sum_w) in out.iter_mut().zip(slot_sums) {
                Zip::from(image).and(&fwd).and(&grd).for_each(|o, &a, &b| *o += sum_w * a * b);
            }
        }
        if !(total > 0.0 && total.is_finite()) {
            return Err(ImagingError::Parameter {
                name: "imaging weights",
                value: total.to_string(),
                why: "the unflagged weights must have a positive, finite sum",
            });
        }
        for image in &mut out {
            *image /= total;
        }
        Ok(out)
    }
}
