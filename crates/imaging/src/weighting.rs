use crate::error::ImagingError;
use beamfloor_core::{ImageGeometry, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3};

/// How visibilities are weighted for imaging (applied on top of their 1/σ² weights).
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Weighting {
    /// w_i: the data weights as they are (best sensitivity, broadest PSF).
    Natural,
    /// w_i / W_k: each uv cell k counts the same however many samples fall in it (W_k is the
    /// summed data weight in the cell).
    Uniform,
    /// Briggs robust weighting (Briggs 1995, PhD thesis, New Mexico Tech, eq. 3.5):
    /// w_i / (1 + W_k f²) with f² = (5 · 10^−R)² / (Σ_k W_k² / Σ_i w_i). R = +5 tends to natural,
    /// R = −5 to uniform (up to an overall scale, which the sum-of-weights normalisation removes).
    Briggs {
        /// The robustness R, typically in [−2, 2].
        robust: f64,
    },
}

/// uv cell index (row-major `[v][u]`) of (u, v) wavelengths on the image's uv grid: cells of
/// 1/(nx · cell) by 1/(ny · cell), origin at (nx/2, ny/2), wrapped periodically like the image's
/// Fourier transform.
fn uv_cell(g: &ImageGeometry, u: f64, v: f64) -> usize {
    let iu = (u * g.nx as f64 * g.cell_rad).round() as i64 + (g.nx / 2) as i64;
    let iv = (v * g.ny as f64 * g.cell_rad).round() as i64 + (g.ny / 2) as i64;
    (iv.rem_euclid(g.ny as i64) as usize) * g.nx + iu.rem_euclid(g.nx as i64) as usize
}

/// Accumulate `weights` (`[row][chan][corr]`) of every sample and its Hermitian mirror (−u, −v)
/// into cells of the image's uv grid (one grid for all channels: MFS). Shape `[ny][nx]`, u along
/// x with u = 0 at nx/2.
pub fn weight_density(
    vis: &VisSet,
    geometry: &ImageGeometry,
    weights: &Array3<f64>,
) -> Result<Array2<f64>, ImagingError> {
    vis.validate()?;
    if weights.shape() != vis.data.shape() {
        return Err(ImagingError::Shape {
            what: "weights",
            found: weights.shape().to_vec(),
            expected: vis.data.shape().to_vec(),
        });
    }
    let mut density = Array2::<f64>::zeros((geometry.ny, geometry.nx));
    let d = density.as_slice_mut().expect("fresh array is contiguous");
    for_each_sample(vis, geometry, |r, c, cells| {
        let w: f64 = weights.slice(ndarray::s![r, c, ..]).sum();
        for k in cells {
            d[k] += w;
        }
    });
    Ok(density)
}

/// Visit every (row, channel) with the uv cells of the sample and of its mirror.
fn for_each_sample(vis: &VisSet, g: &ImageGeometry, mut f: impl FnMut(usize, usize, [usize; 2])) {
    for r in 0..vis.n_rows() {
        let (um, vm) = (vis.uvw_m[[r, 0]], vis.uvw_m[[r, 1]]);
        for (c, nu) in vis.frequencies_hz.iter().enumerate() {
            let s = nu / SPEED_OF_LIGHT_M_PER_S;
            f(r, c, [uv_cell(g, um * s, vm * s), uv_cell(g, -um * s, -vm * s)]);
        }
    }
}

/// Imaging weights `[row][chan][corr]` for `vis` on `geometry`'s uv grid: the data weights
/// (zero where flagged) reweighted by `weighting`. The density W_k is gridded once for all
/// channels and both correlations, with each sample's Hermitian mirror.
pub fn imaging_weights(
    vis: &VisSet,
    geometry: &ImageGeometry,
    weighting: Weighting,
) -> Result<Array3<f64>, ImagingError> {
    vis.validate()?;
    let mut natural = vis.weights.clone();
    natural.zip_mut_with(&vis.flags, |w, &f| {
        if f {
            *w = 0.0;
        }
    });
    let robust = match weighting {
        Weighting::Natural => return Ok(natural),
        Weighting::Uniform => None,
        Weighting::Briggs { robust } => {
            if !robust.is_finite() {
                return Err(ImagingError::Parameter {
                    name: "robust",
                    value: robust.to_string(),
                    why: "must be finite",
                });
            }
            Some(robust)
        }
    };
    let density = weight_density(vis, geometry, &natural)?;
    let d = density.as_slice().expect("fresh array is contiguous");
    let f2 = robust.map(|r| {
        // Σ_i w_i over the gridded points equals Σ_k W_k.
        let sum_w: f64 = d.iter().sum();
        let sum_w2: f64 = d.iter().map(|x| x * x).sum();
        if sum_w2 > 0.0 {
            (5.0 * 10f64.powf(-r)).powi(2) / (sum_w2 / sum_w)
        } else {
            0.0
        }
    });
    let mut out = natural;
    for_each_sample(vis, geometry, |r, c, [k, _]| {
        let wk = d[k];
        for w in out.slice_mut(ndarray::s![r, c, ..]).iter_mut() {
            if *w > 0.0 {
                *w /= match f2 {
                    None => wk,
                    Some(f2) => 1.0 + wk * f2,
                };
            }
        }
    });
    Ok(out)
}
