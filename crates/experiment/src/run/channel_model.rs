//! What a multi-term A-projection model predicts in each channel.
//!
//! The multi-term minor cycle assumes that a component with Taylor amplitudes b at a pixel
//! changes the N residual Taylor images around it by Σ_s b_s PSF_{s+t}, the phase-centre
//! spectral PSFs, whose centre values form its Hessian H_st = Σ_c w_c x_c^(s+t) / Σ w. An
//! A-projection operator reaches a pixel p through the beam product A_grid(ν) A(ν), which
//! changes over the band (for plain A-projection it is P(ν)², steep away from the centre), so a
//! sky spectrum S_c in channel c at p adds w_c W_c(p) S_c / Σ w to the raw residuals there (the
//! channel's sensitivity W_c, see `KernelAProjection::channel_sensitivities`) and, in the
//! flat-noise frame (× g = 1/√W_0), g w_c W_c S_c / Σ w.
//!
//! Two ways to make the minor cycle's picture true were measured on a 1–2 GHz field with three
//! Taylor terms:
//! - predicting the Taylor polynomial itself as the sky (sky = g · Ĥ⁻¹H b, matched to the
//!   operator's Taylor moments at the component's own pixel only) diverged: where the beam
//!   product is small in part of the band, Ĥ⁻¹ amplifies the higher terms by 10²–10⁴, and the
//!   channels' different PSF widths turn that into residual structure around each component
//!   that the minor cycle cannot model;
//! - predicting, per channel, the sky S_c = b_c / (g W_c) with b_c = Σ_s b_s x_c^s (this
//!   module) makes every channel's contribution around the component exactly w_c b_c PSF_c,
//!   so the response is the minor cycle's own model everywhere near it, not only at its centre.
//!   The model b is then the Taylor expansion of the *apparent* spectrum g W_c S_c, as for
//!   average-beam imaging: for plain A-projection it carries the beam product's spectrum, which
//!   N terms can only approximate (part of that strategy's floor); for wideband A-projection
//!   A_grid A is nearly flat over the main lobe, so b is close to the sky's own spectrum.
//!
//! Where a channel's sensitivity falls below the primary-beam cut-off (the pixel is beyond the
//! beam's useful range at that frequency), W_c is held at the cut-off level: the prediction
//! there under-responds (by W_c / cut-off < 1), which the major cycle corrects slowly but never
//! amplifies.

use ndarray::Array2;

/// Per-channel factors Q_c = 1 / (g · max(W_c, cut-off)) = √W_0 / max(W_c, cut-off) (zero where
/// the pixel is blanked) and the Taylor factors x_c^s of each channel.
pub struct ChannelModel {
    factors: Vec<Array2<f64>>,
    taylor: Vec<Vec<f64>>,
}

impl ChannelModel {
    /// From the channels' sensitivity images `channel_sensitivity` (W_c), the flat-noise factor
    /// `g` (1/√W_0, zero where blanked), the cut-off level `cutoff` (the sensitivity below
    /// which the beam is not trusted, > 0) and the Taylor factors `taylor[s][c]` = x_c^s.
    pub fn new(
        channel_sensitivity: &[Array2<f64>],
        g: &Array2<f64>,
        cutoff: f64,
        taylor: Vec<Vec<f64>>,
    ) -> Self {
        let factors = channel_sensitivity
            .iter()
            .map(|w_c| {
                let mut q = g.clone();
                q.zip_mut_with(w_c, |q, &w| {
                    *q = if *q > 0.0 { 1.0 / (*q * w.max(cutoff)) } else { 0.0 };
                });
                q
            })
            .collect();
        Self { factors, taylor }
    }

    /// Channel factors for [`beamfloor_imaging::ImagingOperator::degrid`]: image c is predicted
    /// in channel c only.
    pub fn one_hot_factors(&self) -> Vec<Vec<f64>> {
        let n = self.factors.len();
        (0..n).map(|c| (0..n).map(|k| if k == c { 1.0 } else { 0.0 }).collect()).collect()
    }

    /// The sky in every channel, S_c = Q_c · Σ_s b_s x_c^s, from the minor cycle's N Taylor
    /// model images b (flat-noise frame).
    pub fn sky_channels(&self, model: &[Array2<f64>]) -> Vec<Array2<f64>> {
        self.factors
            .iter()
            .enumerate()
            .map(|(c, q)| {
                let mut apparent = Array2::<f64>::zeros(q.dim());
                for (s, b) in model.iter().enumerate() {
                    apparent.scaled_add(self.taylor[s][c], b);
                }
                apparent * q
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// One pixel, two channels (x = ∓0.2), W_c = 0.64 and 0.16 (a beam power 0.8 and 0.4 there,
    /// W_0 = 0.4 with equal weights), g = 1/√0.4; a blanked pixel; and a channel below the
    /// cut-off. The flat-noise response g · W_c · S_c must give back the apparent b_c
    /// (arithmetic by hand).
    #[test]
    fn prediction_undoes_the_channel_gains() {
        let w = [
            Array2::from_shape_vec((1, 3), vec![0.64, 0.64, 0.64]).unwrap(),
            Array2::from_shape_vec((1, 3), vec![0.16, 0.16, 0.001]).unwrap(),
        ];
        let g0 = 1.0 / 0.4f64.sqrt();
        let g = Array2::from_shape_vec((1, 3), vec![g0, 0.0, g0]).unwrap();
        let model = ChannelModel::new(&w, &g, 0.01, vec![vec![1.0, 1.0], vec![-0.2, 0.2]]);
        let b = [Array2::from_elem((1, 3), 2.0), Array2::from_elem((1, 3), 1.5)];
        let sky = model.sky_channels(&b);
        let apparent = [2.0 - 0.3, 2.0 + 0.3];
        for c in 0..2 {
            let back = g0 * w[c][[0, 0]] * sky[c][[0, 0]];
            assert!((back - apparent[c]).abs() < 1e-12, "channel {c}: {back}");
            assert_eq!(sky[c][[0, 1]], 0.0);
        }
        // Channel 1 at pixel 2 is below the cut-off: its response is W_c / cut-off = 0.1 of b_c.
        let back = g0 * 0.001 * sky[1][[0, 2]];
        assert!((back - 0.1 * apparent[1]).abs() < 1e-12, "{back}");
        assert_eq!(model.one_hot_factors(), vec![vec![1.0, 0.0], vec![0.0, 1.0]]);
    }
}
