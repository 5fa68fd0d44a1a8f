use super::kernel_operator::KernelAProjection;
use super::kernel_operator::Side;
use super::screens::{sampled_a_screen_into, screen_step};
use crate::error::ImagingError;
use crate::operator::ImagingOperator;
use beamfloor_core::{taylor_weight, Pol, VoltageBeam};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3};
use rayon::prelude::*;

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
    /// (W_0 is the sensitivity image). Built from [`Self::channel_sensitivities`]:
    /// W_k = Σ_c w_c x_c^k W_c / Σ_c w_c.
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
        if n_moments == 0 || !(ref_freq_hz.is_finite() && ref_freq_hz > 0.0) {
            return Err(ImagingError::Parameter {
                name: "sensitivity moments",
                value: format!("n_moments {n_moments}, reference frequency {ref_freq_hz} Hz"),
                why: "needs at least one moment and a positive reference frequency",
            });
        }
        let channels = self.channel_sensitivities(vis, weights)?;
        Ok(channels.moments(&vis.frequencies_hz, ref_freq_hz, n_moments))
    }

    /// The sensitivity of each channel, W_c(l, m) = Σ_{samples of c} w · A_grid · A_data /
    /// Σ_{samples of c} w over the unflagged samples of both hands (beams as in
    /// [`Self::sensitivity_image`]), with the channels' weight sums w_c. A channel without
    /// unflagged weight has an all-zero image and w_c = 0.
    ///
    /// A source of flux S_c in channel c at (l, m) adds w_c W_c S_c / Σ w to every Taylor-weighted
    /// residual image there (times the Taylor factor of c): this is the per-channel gain the
    /// multi-term A-projection runner divides out of its model before prediction.
    pub fn channel_sensitivities(
        &self,
        vis: &VisSet,
        weights: &Array3<f64>,
    ) -> Result<ChannelSensitivities, ImagingError> {
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
        let n_chan = vis.n_channels();
        let n_slots = layout.n_bins * layout.n_groups * 2;
        // sums[slot * n_chan + c] = Σ w over the samples of channel c in (bin, group, hand).
        let mut sums = vec![0.0; n_slots * n_chan];
        for (r, &bin) in bins.iter().enumerate() {
            for c in 0..n_chan {
                let g = layout.group_of_channel[c];
                for (p, corr) in vis.correlations.iter().enumerate() {
                    if !vis.flags[[r, c, p]] {
                        let h = if corr.receptor() == Pol::R { 0 } else { 1 };
                        let slot = (bin * layout.n_groups + g) * 2 + h;
                        sums[slot * n_chan + c] += weights[[r, c, p]];
                    }
                }
            }
        }
        let geometry = self.geometry();
        let mut images = vec![Array2::<f64>::zeros((geometry.ny, geometry.nx)); n_chan];
        let mut channel_weights = vec![0.0; n_chan];
        let pad = self.plan.pad_nx.min(self.plan.pad_ny);
        // Screen buffers reused for every slot (the gridding one only for wideband).
        let mut fwd = Array2::<f64>::zeros((geometry.ny, geometry.nx));
        let mut grd_buffer =
            Array2::<f64>::zeros(if self.is_wideband() { fwd.dim() } else { (0, 0) });
        for slot in 0..n_slots {
            let slot_sums = &sums[slot * n_chan..(slot + 1) * n_chan];
            if slot_sums.iter().all(|&s| s == 0.0) {
                continue;
            }
            let (bin, g, pol) =
                (slot / (2 * layout.n_groups), (slot / 2) % layout.n_groups, Pol::BOTH[slot % 2]);
            // Each screen is band-limited by its kernel's support: sample it accordingly.
            let hand = slot % 2;
            let step = |side| screen_step(pad, layout.tables[layout.index(side, bin, g, hand)].2);
            sampled_a_screen_into(
                self.beam,
                geometry,
                bin,
                layout.forward_freqs[g],
                pol,
                step(Side::Forward),
                &mut fwd,
            );
            let grd = if self.is_wideband() {
                sampled_a_screen_into(
                    self.beam,
                    geometry,
                    bin,
                    layout.gridding_freqs[g],
                    pol,
                    step(Side::Gridding),
                    &mut grd_buffer,
                );
                &grd_buffer
            } else {
                &fwd
            };
            for (c, &sum_w) in slot_sums.iter().enumerate() {
                if sum_w == 0.0 {
                    continue;
                }
                channel_weights[c] += sum_w;
                const CHUNK: usize = 1 << 14;
                let (a, b) = (contiguous(&fwd), contiguous(grd));
                let out = images[c].as_slice_mut().expect("fresh image is contiguous");
                out.par_chunks_mut(CHUNK)
                    .zip(a.par_chunks(CHUNK))
                    .zip(b.par_chunks(CHUNK))
                    .for_each(|((o, a), b)| {
                        for ((o, a), b) in o.iter_mut().zip(a).zip(b) {
                            *o += sum_w * a * b;
                        }
                    });
            }
        }
        let total: f64 = channel_weights.iter().sum();
        if !(total > 0.0 && total.is_finite()) {
            return Err(ImagingError::Parameter {
                name: "imaging weights",
                value: total.to_string(),
                why: "the unflagged weights must have a positive, finite sum",
            });
        }
        for (image, &w_c) in images.iter_mut().zip(&channel_weights) {
            if w_c > 0.0 {
                *image /= w_c;
            }
        }
        Ok(ChannelSensitivities { images, weights: channel_weights })
    }
}

fn contiguous(image: &Array2<f64>) -> &[f64] {
    image.as_slice().expect("screens are built contiguous")
}

/// Per-channel sensitivity images and weight sums ([`KernelAProjection::channel_sensitivities`]).
#[derive(Clone, Debug)]
pub struct ChannelSensitivities {
    /// W_c(l, m), one `[ny, nx]` image per channel.
    pub images: Vec<Array2<f64>>,
    /// w_c: the unflagged imaging weights of channel c summed over rows and both hands.
    pub weights: Vec<f64>,
}

impl ChannelSensitivities {
    /// The spectral moments W_k = Σ_c w_c x_c^k W_c / Σ_c w_c, k = 0 … `n_moments` − 1, with
    /// x_c = (ν_c − ν0)/ν0 for the channel frequencies `frequencies_hz` and ν0 = `ref_freq_hz`
    /// (see [`KernelAProjection::sensitivity_moments`]). The caller passes valid arguments
    /// (one frequency per channel, the weights' sum positive).
    pub fn moments(
        &self,
        frequencies_hz: &[f64],
        ref_freq_hz: f64,
        n_moments: usize,
    ) -> Vec<Array2<f64>> {
        let total: f64 = self.weights.iter().sum();
        let dim = self.images.first().map_or((0, 0), |im| im.dim());
        let mut out = vec![Array2::<f64>::zeros(dim); n_moments];
        for ((image, &w_c), &f) in self.images.iter().zip(&self.weights).zip(frequencies_hz) {
            if w_c == 0.0 {
                continue;
            }
            for (k, moment) in out.iter_mut().enumerate() {
                moment.scaled_add(w_c * taylor_weight(f, ref_freq_hz, k) / total, image);
            }
        }
        out
    }
}
