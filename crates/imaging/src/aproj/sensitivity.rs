use super::operator::AProjection;
use crate::error::ImagingError;
use crate::operator::ImagingOperator;
use beamfloor_core::VoltageBeam;
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3, Zip};

impl<B: VoltageBeam + ?Sized> AProjection<'_, B> {
    /// The sensitivity image W(l, m) = Σ w · A_grid(l, m) · A_data(l, m) / Σ w over every
    /// unflagged sample of both hands, from the same screens the operator applies: for plain
    /// A-projection A_grid = A_data = |E_p|² (so W = Σ w |A|² / Σ w), for wideband A-projection
    /// A_grid is the beam at ν_c. The Stokes-I dirty image of [`crate::dirty_images`] through
    /// this operator is ≈ W · I ⊗ PSF (exact at the phase centre of the PSF; the major cycle's
    /// degrid absorbs the rest). `weights` are the imaging weights `[row][chan][corr]`.
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
        let groups = self.rows_by_bin(vis)?;
        let geometry = self.geometry();
        let mut out = Array2::<f64>::zeros((geometry.ny, geometry.nx));
        let mut total = 0.0;
        for (bin, rows) in groups.iter().enumerate() {
            for c in 0..vis.n_channels() {
                for (k, corr) in vis.correlations.iter().enumerate() {
                    let sum_w: f64 = rows
                        .iter()
                        .filter(|&&r| !vis.flags[[r, c, k]])
                        .map(|&r| weights[[r, c, k]])
                        .sum();
                    if sum_w == 0.0 {
                        continue;
                    }
                    total += sum_w;
                    let (fwd, grd) = self.screen_pair(bin, c, corr.receptor());
                    Zip::from(&mut out).and(&*fwd).and(&*grd).for_each(|o, &a, &b| {
                        *o += sum_w * a * b;
                    });
                }
            }
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

/// Flat-noise normalisation: `image / √W`, blanked (NaN) where W < `cutoff` · max W.
/// Noise is then uniform across the field and sources carry a factor √W.
pub fn flat_noise(
    image: &Array2<f64>,
    sensitivity: &Array2<f64>,
    cutoff: f64,
) -> Result<Array2<f64>, ImagingError> {
    normalise(image, sensitivity, cutoff, f64::sqrt)
}

/// Flat-sky normalisation: `image / W`, blanked (NaN) where W < `cutoff` · max W. Sources show
/// their sky flux; the noise grows as 1/W towards the edge of the beam.
pub fn flat_sky(
    image: &Array2<f64>,
    sensitivity: &Array2<f64>,
    cutoff: f64,
) -> Result<Array2<f64>, ImagingError> {
    normalise(image, sensitivity, cutoff, |w| w)
}

fn normalise(
    image: &Array2<f64>,
    sensitivity: &Array2<f64>,
    cutoff: f64,
    f: impl Fn(f64) -> f64,
) -> Result<Array2<f64>, ImagingError> {
    if image.shape() != sensitivity.shape() {
        return Err(ImagingError::Shape {
            what: "sensitivity image",
            found: sensitivity.shape().to_vec(),
            expected: image.shape().to_vec(),
        });
    }
    if !(cutoff.is_finite() && cutoff > 0.0 && cutoff <= 1.0) {
        return Err(ImagingError::Parameter {
            name: "cutoff",
            value: cutoff.to_string(),
            why: "must be a fraction of the peak sensitivity in (0, 1]",
        });
    }
    let peak = sensitivity.iter().copied().filter(|x| x.is_finite()).fold(0.0, f64::max);
    let floor = cutoff * peak;
    Ok(Zip::from(image).and(sensitivity).map_collect(|&i, &w| {
        if w.is_finite() && w >= floor && w > 0.0 {
            i / f(w)
        } else {
            f64::NAN
        }
    }))
}
