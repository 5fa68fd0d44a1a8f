//! The Cotton–Schwab adapter: residual Taylor images of (data − model) through one operator.

use beamfloor_deconv::{DeconvError, ResidualImager};
use beamfloor_imaging::{predict_visibilities, GridOutput, ImagingOperator, TaylorTerms};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3};

use super::channel_model::ChannelModel;

/// Residuals for the major cycle: degrid the model through `operator` (the same forward model
/// the images come from), subtract it from the data, grid the difference with the imaging
/// weights and the Taylor weights, and divide by Σ w — exactly the normalisation of
/// [`beamfloor_imaging::dirty_images`], so the residuals match the spectral PSFs.
pub struct OperatorResiduals<'a> {
    operator: &'a dyn ImagingOperator,
    vis: &'a VisSet,
    /// Imaging weights, zero where flagged.
    weights: &'a Array3<f64>,
    taylor: TaylorTerms,
    sum_weights: f64,
    outputs: Vec<GridOutput>,
    /// Per-pixel factor g for an operator with the beam inside (A-projection): the model the
    /// minor cycle builds is multiplied by g before it is degridded, and every residual image by
    /// g after gridding. With g = 1/√W (zero where blanked) the minor cycle works in the
    /// flat-noise frame. None = 1.
    normalisation: Option<Array2<f64>>,
    /// Multi-term A-projection: predict the model channel by channel (see
    /// `run::channel_model`) instead of as Taylor images × g. None = Taylor images.
    channels: Option<&'a ChannelModel>,
}

impl<'a> OperatorResiduals<'a> {
    /// An adapter for `vis` with imaging `weights` (zero where flagged, Σ w > 0).
    pub fn new(
        operator: &'a dyn ImagingOperator,
        vis: &'a VisSet,
        weights: &'a Array3<f64>,
        taylor: TaylorTerms,
    ) -> Self {
        let sum_weights = weights.sum();
        let outputs = (0..taylor.n_terms)
            .map(|t| GridOutput {
                source: 0,
                channel_factors: taylor.channel_weights(t, &vis.frequencies_hz),
            })
            .collect();
        Self {
            operator,
            vis,
            weights,
            taylor,
            sum_weights,
            outputs,
            normalisation: None,
            channels: None,
        }
    }

    /// Uses the per-pixel factor g on both sides of the operator: model × g is degridded and the
    /// residuals are returned × g. For an A-projection operator with sensitivity W and
    /// g = 1/√W (zero where W is too low to trust) the minor cycle then sees ≈ √W · I ⊗ PSF,
    /// whose sidelobes stay bounded everywhere (a flat-sky frame, 1/W, would amplify the
    /// sidelobes of bright sources by A(x)/A(y) where the beam is weak and make CLEAN diverge),
    /// and the model it builds is √W · I, turned back into the sky before prediction.
    pub fn with_normalisation(mut self, factor: Array2<f64>) -> Self {
        self.normalisation = Some(factor);
        self
    }

    /// Predicts the model's sky channel by channel with `channels` (the minor cycle's Taylor
    /// model is the apparent spectrum in the flat-noise frame; see `run::channel_model`)
    /// instead of degridding model × g as Taylor images. The residuals are unchanged.
    pub fn with_channel_model(mut self, channels: &'a ChannelModel) -> Self {
        self.channels = Some(channels);
        self
    }
}

impl ResidualImager for OperatorResiduals<'_> {
    fn residuals(&mut self, model: &[Array2<f64>]) -> Result<Vec<Array2<f64>>, DeconvError> {
        let imager = |e: beamfloor_imaging::ImagingError| DeconvError::Imager(e.to_string());
        let mut data = self.vis.data.clone();
        if model.iter().any(|m| m.iter().any(|&v| v != 0.0)) {
            let predicted = match self.channels {
                Some(channels) => self
                    .operator
                    .degrid(self.vis, &channels.sky_channels(model), &channels.one_hot_factors())
                    .map_err(imager)?,
                None => {
                    let sky: Vec<Array2<f64>> = match &self.normalisation {
                        Some(g) => model.iter().map(|m| m * g).collect(),
                        None => model.to_vec(),
                    };
                    predict_visibilities(self.operator, self.vis, &sky, self.taylor.ref_freq_hz)
                        .map_err(imager)?
                }
            };
            data -= &predicted;
        }
        data.zip_mut_with(self.weights, |v, &w| *v *= w);
        let mut images =
            self.operator.grid(self.vis, &[data.view()], &self.outputs).map_err(imager)?;
        for im in images.iter_mut() {
            *im /= self.sum_weights;
            if let Some(factor) = &self.normalisation {
                *im *= factor;
            }
        }
        Ok(images)
    }
}
