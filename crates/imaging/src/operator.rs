use crate::error::ImagingError;
use beamfloor_core::ImageGeometry;
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3, ArrayView3};
use num_complex::Complex64;

/// One image to produce in a gridding pass: which value set to grid, and a real factor per
/// channel folded into every sample of that channel (e.g. a Taylor weight w_t(ν)).
#[derive(Clone, Debug, PartialEq)]
pub struct GridOutput {
    /// Index into the `sources` slice passed to [`ImagingOperator::grid`].
    pub source: usize,
    /// Factor per channel, length = number of channels.
    pub channel_factors: Vec<f64>,
}

/// A linear operator pair between a sky image and visibilities: `degrid` is the forward model
/// (image → visibilities), `grid` its exact adjoint (visibilities → image). Every imaging strategy
/// (plain, w-stacked, A-projected, ...) implements this pair; deconvolution only talks to it.
///
/// Forward model (for an image `I` on the operator's [`ImageGeometry`], Jy per pixel):
///
/// V_k = Σ_t f_t(ν_k) Σ_pixels I_t(l, m) exp(−2πi (u_k l + v_k m + w_k (n − 1)))
///
/// with (u, v, w) the row's baseline in wavelengths at the channel's frequency, and the same value
/// for every parallel-hand correlation (an operator with polarized beams may differ per hand).
/// Adjoint (real image, real inner product ⟨a, b⟩ = Re Σ conj(a) b):
///
/// I_o(l, m) = Re Σ_k f_o(ν_k) c_{s(o),k} exp(+2πi (u_k l + v_k m + w_k (n − 1)))
///
/// summed over rows, channels and correlations of the value set `s(o)`. No normalisation: see
/// [`crate::dirty_images`] for weights and the sum-of-weights divisor.
pub trait ImagingOperator: Sync {
    /// The image grid the operator maps to and from.
    fn geometry(&self) -> ImageGeometry;

    /// Adjoint: grid value sets `sources` (each `[row][chan][corr]`, shaped like `vis.data`,
    /// already weighted) into one real image per entry of `outputs`, all in one pass.
    fn grid(
        &self,
        vis: &VisSet,
        sources: &[ArrayView3<'_, Complex64>],
        outputs: &[GridOutput],
    ) -> Result<Vec<Array2<f64>>, ImagingError>;

    /// Forward model: visibilities `[row][chan][corr]` of Σ_t f_t(ν) · FT(`images[t]`), where
    /// `channel_factors[t]` holds f_t per channel.
    fn degrid(
        &self,
        vis: &VisSet,
        images: &[Array2<f64>],
        channel_factors: &[Vec<f64>],
    ) -> Result<Array3<Complex64>, ImagingError>;
}

/// Check the arguments of [`ImagingOperator::grid`] against `vis`.
pub fn check_grid_args(
    vis: &VisSet,
    sources: &[ArrayView3<'_, Complex64>],
    outputs: &[GridOutput],
) -> Result<(), ImagingError> {
    vis.validate()?;
    for s in sources {
        if s.shape() != vis.data.shape() {
            return Err(ImagingError::Shape {
                what: "gridding source",
                found: s.shape().to_vec(),
                expected: vis.data.shape().to_vec(),
            });
        }
    }
    for o in outputs {
        if o.source >= sources.len() {
            return Err(ImagingError::Parameter {
                name: "GridOutput::source",
                value: o.source.to_string(),
                why: "must index the sources slice",
            });
        }
        check_factors(&o.channel_factors, vis.n_channels())?;
    }
    Ok(())
}

/// Check the arguments of [`ImagingOperator::degrid`] against `vis` and `geometry`.
pub fn check_degrid_args(
    vis: &VisSet,
    geometry: ImageGeometry,
    images: &[Array2<f64>],
    channel_factors: &[Vec<f64>],
) -> Result<(), ImagingError> {
    vis.validate()?;
    if images.len() != channel_factors.len() {
        return Err(ImagingError::Shape {
            what: "channel_factors (one per image)",
            found: vec![channel_factors.len()],
            expected: vec![images.len()],
        });
    }
    for im in images {
        if im.shape() != [geometry.ny, geometry.nx] {
            return Err(ImagingError::Shape {
                what: "model image",
                found: im.shape().to_vec(),
                expected: vec![geometry.ny, geometry.nx],
            });
        }
    }
    for f in channel_factors {
        check_factors(f, vis.n_channels())?;
    }
    Ok(())
}

fn check_factors(f: &[f64], n_chan: usize) -> Result<(), ImagingError> {
    if f.len() != n_chan {
        return Err(ImagingError::Shape {
            what: "channel factors",
            found: vec![f.len()],
            expected: vec![n_chan],
        });
    }
    if let Some(x) = f.iter().find(|x| !x.is_finite()) {
        return Err(ImagingError::Parameter {
            name: "channel factors",
            value: x.to_string(),
            why: "must be finite",
        });
    }
    Ok(())
}
