use crate::DeconvError;
use ndarray::Array2;

/// Shape of the multi-scale basis functions (Cornwell 2008, IEEE J. Sel. Top. Sig. Proc. 2(5)).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ScaleShape {
    /// Circular Gaussian whose FWHM is the scale width, truncated at a radius of 1.5 FWHM
    /// (where it has fallen to 2⁻⁹ ≈ 0.002 of its peak; a scale is only used where it fits
    /// inside the image, so its support is kept short).
    Gaussian,
    /// Truncated paraboloid Φ(r) = 1 − (2r / width)² for r < width / 2, zero outside: the
    /// scale width is its diameter in pixels (the untapered form of Cornwell 2008's functions).
    Paraboloid,
}

/// The set of scales a multi-scale minor cycle may choose from.
///
/// Defaults (`ScaleSet::point()`): one point scale (width 0, a delta function), so the minor
/// cycle is Högbom's (or point-source multi-term MFS).
#[derive(Clone, Debug, PartialEq)]
pub struct ScaleSet {
    /// Scale widths in pixels; 0 is the point (delta) scale. Must be ≥ 0 and finite.
    pub widths_px: Vec<f64>,
    /// Shape of every non-zero scale. Default: [`ScaleShape::Gaussian`].
    pub shape: ScaleShape,
    /// Scale bias b in [0, 1): the peak search weighs scale s by 1 − b · width_s / width_max
    /// (the linear form of Cornwell 2008, recalled from memory). It favours smaller scales when
    /// larger ones fit about equally well. Our search quantity is √(aᵀ r) (the square root of
    /// the χ² reduction, see [`crate::run_minor_cycle`]), not a scale-normalised residual
    /// peak, so the paper's typical value does not carry over: with b = 0.6 the point scale
    /// won nearly every time in our tests. Default 0.2.
    pub scale_bias: f64,
}

impl ScaleSet {
    /// Only the point scale: Högbom / point-source multi-term CLEAN.
    pub fn point() -> Self {
        Self { widths_px: vec![0.0], shape: ScaleShape::Gaussian, scale_bias: 0.2 }
    }

    /// Given widths (pixels) with Gaussian shape and the default bias 0.2.
    pub fn gaussian(widths_px: &[f64]) -> Self {
        Self { widths_px: widths_px.to_vec(), shape: ScaleShape::Gaussian, scale_bias: 0.2 }
    }

    /// Validate the widths and bias.
    pub fn validate(&self) -> Result<(), DeconvError> {
        if self.widths_px.is_empty() {
            return Err(DeconvError::Parameter {
                name: "widths_px (count)",
                value: 0.0,
                allowed: "at least one scale",
            });
        }
        for &w in &self.widths_px {
            if !(w.is_finite() && w >= 0.0) {
                return Err(DeconvError::Parameter {
                    name: "widths_px",
                    value: w,
                    allowed: "finite and >= 0",
                });
            }
        }
        if !(self.scale_bias >= 0.0 && self.scale_bias < 1.0) {
            return Err(DeconvError::Parameter {
                name: "scale_bias",
                value: self.scale_bias,
                allowed: "[0, 1)",
            });
        }
        Ok(())
    }

    /// Peak-search weight of each scale: 1 − b · width / max width (all 1 for a single scale).
    pub fn biases(&self) -> Vec<f64> {
        let wmax = self.widths_px.iter().fold(0.0f64, |m, &w| m.max(w));
        self.widths_px
            .iter()
            .map(|&w| if wmax > 0.0 { 1.0 - self.scale_bias * w / wmax } else { 1.0 })
            .collect()
    }
}

/// The scale function Φ of `width_px` pixels, normalised to unit sum (so a component of
/// amplitude A adds total flux A to the model), on an odd-sized grid with its centre at
/// (n/2, n/2). Width 0 (or any width whose function covers only the centre pixel) is the
/// 1×1 delta.
pub fn scale_function(width_px: f64, shape: ScaleShape) -> Array2<f64> {
    if width_px <= 0.0 {
        return Array2::from_elem((1, 1), 1.0);
    }
    let radius = match shape {
        ScaleShape::Gaussian => 1.5 * width_px,
        ScaleShape::Paraboloid => 0.5 * width_px,
    };
    let h = radius.floor() as usize;
    let n = 2 * h + 1;
    let mut phi = Array2::from_shape_fn((n, n), |(y, x)| {
        let dx = x as f64 - h as f64;
        let dy = y as f64 - h as f64;
        let r2 = dx * dx + dy * dy;
        match shape {
            ScaleShape::Gaussian => {
                if r2.sqrt() <= radius {
                    (-4.0 * std::f64::consts::LN_2 * r2 / (width_px * width_px)).exp()
                } else {
                    0.0
                }
            }
            ScaleShape::Paraboloid => (1.0 - 4.0 * r2 / (width_px * width_px)).max(0.0),
        }
    });
    let sum: f64 = phi.sum();
    phi.mapv_inplace(|v| v / sum);
    phi
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unit_sum_and_centred() {
        for shape in [ScaleShape::Gaussian, ScaleShape::Paraboloid] {
            for w in [0.0, 3.0, 7.5] {
                let p = scale_function(w, shape);
                let (ny, nx) = p.dim();
                assert!((p.sum() - 1.0).abs() < 1e-14);
                let c = p[[ny / 2, nx / 2]];
                assert!(p.iter().all(|&v| v <= c), "peak at centre");
            }
        }
    }

    #[test]
    fn gaussian_half_maximum_at_half_width() {
        // By definition of FWHM: Φ(r = FWHM/2) = Φ(0)/2. Width 6 px puts r = 3 on a pixel.
        let p = scale_function(6.0, ScaleShape::Gaussian);
        let h = p.dim().0 / 2;
        assert!((p[[h, h + 3]] / p[[h, h]] - 0.5).abs() < 1e-14);
    }

    #[test]
    fn bias_follows_linear_form() {
        let s = ScaleSet::gaussian(&[0.0, 4.0, 8.0]);
        let b = s.biases();
        assert_eq!(b, vec![1.0, 1.0 - 0.2 * 0.5, 1.0 - 0.2]);
        assert!(ScaleSet { scale_bias: 1.0, ..s }.validate().is_err());
    }
}
