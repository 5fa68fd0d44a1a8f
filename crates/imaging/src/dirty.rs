use crate::error::ImagingError;
use crate::operator::{GridOutput, ImagingOperator};
use beamfloor_core::taylor_weight;
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3};
use num_complex::Complex64;

/// The Taylor expansion of multi-term MFS: `n_terms` terms about `ref_freq_hz`, with channel
/// weights w_t(ν) = ((ν − ν0)/ν0)^t (Rau & Cornwell 2011, A&A 532, A71, eq. 9).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TaylorTerms {
    /// Number of Taylor terms N (1 = plain MFS).
    pub n_terms: usize,
    /// Reference frequency ν0, Hz.
    pub ref_freq_hz: f64,
}

impl TaylorTerms {
    /// w_t(ν) for every channel of `freqs`.
    pub fn channel_weights(&self, t: usize, freqs: &[f64]) -> Vec<f64> {
        freqs.iter().map(|&f| taylor_weight(f, self.ref_freq_hz, t)).collect()
    }

    fn check(&self) -> Result<(), ImagingError> {
        if self.n_terms == 0 || !(self.ref_freq_hz.is_finite() && self.ref_freq_hz > 0.0) {
            return Err(ImagingError::Parameter {
                name: "TaylorTerms",
                value: format!("{self:?}"),
                why: "needs at least one term and a positive reference frequency",
            });
        }
        Ok(())
    }
}

/// Stokes-I dirty images of one gridding pass.
///
/// Normalisation: every image is divided by the same number, the sum of imaging weights Σ w over
/// all unflagged samples of both hands. Then a 1 Jy point source gives a peak of 1 in
/// `residuals[0]` and `psfs[0]` peaks at 1; the higher terms are
/// I_t = Σ w w_t(ν) V / Σ w and PSF_t = Σ w w_t(ν) e^{…} / Σ w, so the PSF peaks equal the
/// weighted means of w_t(ν) — the entries of the multi-term Hessian (Rau & Cornwell 2011, eq. 16).
#[derive(Clone, Debug, PartialEq)]
pub struct DirtyImages {
    /// N residual (dirty) images, t = 0..N−1, Jy/beam.
    pub residuals: Vec<Array2<f64>>,
    /// 2N − 1 spectral PSFs, t = 0..2N−2.
    pub psfs: Vec<Array2<f64>>,
    /// Σ w, the divisor of every image.
    pub sum_weights: f64,
}

/// Grid N Taylor-weighted residual images and 2N − 1 PSFs of Stokes I = (RR + LL)/2 in one pass
/// through `op`. `weights` are imaging weights `[row][chan][corr]` (see
/// [`crate::imaging_weights`]); flagged samples are skipped whatever their weight.
pub fn dirty_images<O: ImagingOperator + ?Sized>(
    op: &O,
    vis: &VisSet,
    weights: &Array3<f64>,
    taylor: &TaylorTerms,
) -> Result<DirtyImages, ImagingError> {
    taylor.check()?;
    vis.validate()?;
    if weights.shape() != vis.data.shape() {
        return Err(ImagingError::Shape {
            what: "imaging weights",
            found: weights.shape().to_vec(),
            expected: vis.data.shape().to_vec(),
        });
    }
    let mut w = weights.clone();
    w.zip_mut_with(&vis.flags, |w, &f| {
        if f {
            *w = 0.0;
        }
    });
    let sum_weights: f64 = w.sum();
    if !(sum_weights > 0.0 && sum_weights.is_finite()) {
        return Err(ImagingError::Parameter {
            name: "imaging weights",
            value: sum_weights.to_string(),
            why: "the unflagged weights must have a positive, finite sum",
        });
    }
    let mut data = vis.data.clone();
    data.zip_mut_with(&w, |v, &w| *v *= w);
    let psf_values = w.mapv(|w| Complex64::new(w, 0.0));
    let n = taylor.n_terms;
    let freqs = &vis.frequencies_hz;
    let outputs: Vec<GridOutput> =
        (0..n)
            .map(|t| GridOutput { source: 0, channel_factors: taylor.channel_weights(t, freqs) })
            .chain((0..2 * n - 1).map(|t| GridOutput {
                source: 1,
                channel_factors: taylor.channel_weights(t, freqs),
            }))
            .collect();
    let mut images = op.grid(vis, &[data.view(), psf_values.view()], &outputs)?;
    for im in images.iter_mut() {
        *im /= sum_weights;
    }
    let psfs = images.split_off(n);
    Ok(DirtyImages { residuals: images, psfs, sum_weights })
}

/// Model visibilities `[row][chan][corr]` (both hands the same) of a Taylor-term model:
/// V(ν) = Σ_t w_t(ν) · FT(`models[t]`), models in Jy per pixel, through `op`'s forward model.
pub fn predict_visibilities<O: ImagingOperator + ?Sized>(
    op: &O,
    vis: &VisSet,
    models: &[Array2<f64>],
    ref_freq_hz: f64,
) -> Result<Array3<Complex64>, ImagingError> {
    let taylor = TaylorTerms { n_terms: models.len(), ref_freq_hz };
    taylor.check()?;
    let factors: Vec<Vec<f64>> =
        (0..models.len()).map(|t| taylor.channel_weights(t, &vis.frequencies_hz)).collect();
    op.degrid(vis, models, &factors)
}
