use beamfloor_core::ImageGeometry;
use ndarray::Array2;

use crate::error::{check_shape, MetricsError, Result};

/// 1/Φ⁻¹(3/4) ≈ 1.4826: the factor that makes the median absolute deviation a consistent
/// estimator of σ for Gaussian data (Rousseeuw & Croux 1993, JASA 88, 1273, §1).
pub const MAD_TO_SIGMA: f64 = 1.482_602_218_505_602;

/// A zero-based pixel position.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Pixel {
    /// Column (x runs towards decreasing l).
    pub ix: usize,
    /// Row (y runs towards increasing m).
    pub iy: usize,
}

/// The pixel of largest |value| in an image (or in a masked part of it).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Peak {
    /// The signed value at that pixel, Jy/beam.
    pub value_jy_per_beam: f64,
    /// Where it is.
    pub pixel: Pixel,
    /// Its direction cosine l, radians.
    pub l_rad: f64,
    /// Its direction cosine m, radians.
    pub m_rad: f64,
}

/// Statistics of the values of an image over a mask.
///
/// With x_i the N selected values:
/// - `rms_jy_per_beam` = sqrt(Σ x_i² / N), the RMS about zero — **the headline floor**. The true
///   residual is zero everywhere, so an offset (a negative bowl, a scale error spread over the
///   field) is part of the error a user would see; and the floors we measure are made of
///   systematic artefacts, not Gaussian noise, so a robust estimator would discount exactly what
///   we want to measure.
/// - `rms_mean_removed_jy_per_beam` = sqrt(Σ (x_i − x̄)² / (N − 1)), the sample standard
///   deviation (NaN when N = 1).
/// - `mad_sigma_jy_per_beam` = 1.4826 · median|x_i − median(x)|, robust against a few bright
///   pixels (Rousseeuw & Croux 1993). RMS ≫ MAD-σ says the floor is a few strong artefacts
///   rather than noise-like.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FloorStatistics {
    /// N, the number of pixels used.
    pub n_pixels: usize,
    /// x̄, Jy/beam.
    pub mean_jy_per_beam: f64,
    /// RMS about zero, Jy/beam (headline).
    pub rms_jy_per_beam: f64,
    /// Sample standard deviation about the mean, Jy/beam.
    pub rms_mean_removed_jy_per_beam: f64,
    /// MAD-based σ, Jy/beam.
    pub mad_sigma_jy_per_beam: f64,
}

impl FloorStatistics {
    /// Statistics of a non-empty list of finite values (reorders `values`).
    ///
    /// Panics never; returns NaNs for an empty slice (callers check emptiness first).
    pub fn of_values(values: &mut [f64]) -> Self {
        let n = values.len();
        let nf = n as f64;
        let mean = values.iter().sum::<f64>() / nf;
        let rms = (values.iter().map(|x| x * x).sum::<f64>() / nf).sqrt();
        let std = if n > 1 {
            (values.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (nf - 1.0)).sqrt()
        } else {
            f64::NAN
        };
        let med = median_in_place(values);
        for v in values.iter_mut() {
            *v = (*v - med).abs();
        }
        let mad = median_in_place(values);
        Self {
            n_pixels: n,
            mean_jy_per_beam: mean,
            rms_jy_per_beam: rms,
            rms_mean_removed_jy_per_beam: std,
            mad_sigma_jy_per_beam: MAD_TO_SIGMA * mad,
        }
    }
}

/// Median of `values` (mean of the two middle values when N is even), by selection in O(N);
/// reorders the slice. NaN for an empty slice. Values must not be NaN.
pub fn median_in_place(values: &mut [f64]) -> f64 {
    let n = values.len();
    if n == 0 {
        return f64::NAN;
    }
    let (_, &mut upper, _) = values.select_nth_unstable_by(n / 2, f64::total_cmp);
    if n % 2 == 1 {
        return upper;
    }
    // After selection every element left of n/2 is ≤ the upper middle: the lower middle is
    // their maximum.
    let lower = values[..n / 2].iter().copied().fold(f64::NEG_INFINITY, f64::max);
    0.5 * (lower + upper)
}

/// [`FloorStatistics`] of `image` over the pixels where `mask` is true.
///
/// Errors if the shapes differ from the geometry, the mask is empty, or a selected pixel is not
/// finite.
pub fn masked_statistics(
    image: &Array2<f64>,
    mask: &Array2<bool>,
    geometry: &ImageGeometry,
    what: &'static str,
) -> Result<FloorStatistics> {
    let mut values = masked_values(image, mask, geometry, what)?;
    Ok(FloorStatistics::of_values(&mut values))
}

/// The finite values of `image` where `mask` is true, row by row.
pub fn masked_values(
    image: &Array2<f64>,
    mask: &Array2<bool>,
    geometry: &ImageGeometry,
    what: &'static str,
) -> Result<Vec<f64>> {
    check_shape(image, geometry, what)?;
    check_shape(mask, geometry, "mask")?;
    let mut values = Vec::with_capacity(mask.iter().filter(|&&b| b).count());
    for ((iy, ix), &v) in image.indexed_iter() {
        if mask[[iy, ix]] {
            if !v.is_finite() {
                return Err(MetricsError::NonFinite { what, iy, ix, value: v });
            }
            values.push(v);
        }
    }
    if values.is_empty() {
        return Err(MetricsError::EmptyMask { what });
    }
    Ok(values)
}

/// The pixel of largest |value| (first in row order on ties), over `mask` if given.
pub fn peak_abs(
    image: &Array2<f64>,
    geometry: &ImageGeometry,
    mask: Option<&Array2<bool>>,
    what: &'static str,
) -> Result<Peak> {
    check_shape(image, geometry, what)?;
    if let Some(m) = mask {
        check_shape(m, geometry, "mask")?;
    }
    let mut best: Option<(f64, usize, usize)> = None;
    for ((iy, ix), &v) in image.indexed_iter() {
        if mask.is_some_and(|m| !m[[iy, ix]]) {
            continue;
        }
        if !v.is_finite() {
            return Err(MetricsError::NonFinite { what, iy, ix, value: v });
        }
        if best.is_none_or(|(b, _, _)| v.abs() > b.abs()) {
            best = Some((v, iy, ix));
        }
    }
    let (value, iy, ix) = best.ok_or(MetricsError::EmptyMask { what })?;
    let (l, m) = geometry.lm_of_pixel(ix as f64, iy as f64);
    Ok(Peak { value_jy_per_beam: value, pixel: Pixel { ix, iy }, l_rad: l, m_rad: m })
}
