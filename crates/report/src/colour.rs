//! Colour scales (value → [0, 1]) and our own colour maps ([0, 1] → RGB).

use ndarray::ArrayView2;

use crate::ReportError;

/// How data values are spread over the colour map between [`ColourScale::min`] and
/// [`ColourScale::max`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Stretch {
    /// t = (v − min) / (max − min).
    Linear,
    /// t = (asinh(v/a) − asinh(min/a)) / (asinh(max/a) − asinh(min/a)): linear for |v| ≪ a,
    /// logarithmic for |v| ≫ a, symmetric about zero, so faint residuals and a bright peak show
    /// on one scale (the arcsinh stretch of Lupton, Gunn & Szalay 1999).
    Asinh {
        /// Softening `a`, in data units, > 0: the value range that stays linear.
        softening: f64,
    },
}

/// A value → colour-position mapping that several images can share.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ColourScale {
    /// Value at the bottom of the colour map (lower values clip to it).
    pub min: f64,
    /// Value at the top of the colour map (higher values clip to it).
    pub max: f64,
    /// How values between are spread.
    pub stretch: Stretch,
}

impl ColourScale {
    /// A checked scale: `min < max`, both finite, softening finite and positive.
    pub fn new(min: f64, max: f64, stretch: Stretch) -> Result<Self, ReportError> {
        if !(min.is_finite() && max.is_finite() && min < max) {
            return Err(ReportError::InvalidInput {
                what: "colour scale (min, max)",
                value: format!("({min}, {max})"),
                why: "need finite min < max",
            });
        }
        if let Stretch::Asinh { softening } = stretch {
            if !(softening.is_finite() && softening > 0.0) {
                return Err(ReportError::InvalidInput {
                    what: "asinh softening",
                    value: softening.to_string(),
                    why: "must be finite and positive",
                });
            }
        }
        Ok(Self { min, max, stretch })
    }

    /// The scale spanning the finite values of all `images` (so several strategies share it).
    /// A constant image gets a range of ±1 around its value (±0.5·|value| if that is larger).
    pub fn spanning(images: &[ArrayView2<'_, f64>], stretch: Stretch) -> Result<Self, ReportError> {
        let (lo, hi) = finite_range(images)?;
        let (lo, hi) = if lo < hi { (lo, hi) } else { widen(lo) };
        Self::new(lo, hi, stretch)
    }

    /// A scale from −M to +M with M the largest finite |value| of all `images` (for residuals
    /// with a diverging colour map).
    pub fn symmetric(
        images: &[ArrayView2<'_, f64>],
        stretch: Stretch,
    ) -> Result<Self, ReportError> {
        let (lo, hi) = finite_range(images)?;
        let m = lo.abs().max(hi.abs());
        let m = if m > 0.0 { m } else { 1.0 };
        Self::new(-m, m, stretch)
    }

    fn forward(&self, v: f64) -> f64 {
        match self.stretch {
            Stretch::Linear => v,
            Stretch::Asinh { softening } => (v / softening).asinh(),
        }
    }

    fn backward(&self, s: f64) -> f64 {
        match self.stretch {
            Stretch::Linear => s,
            Stretch::Asinh { softening } => s.sinh() * softening,
        }
    }

    /// Colour-map position t ∈ [0, 1] of `v` (clipped), or `None` for NaN.
    pub fn position(&self, v: f64) -> Option<f64> {
        if v.is_nan() {
            return None;
        }
        let (a, b) = (self.forward(self.min), self.forward(self.max));
        Some(((self.forward(v) - a) / (b - a)).clamp(0.0, 1.0))
    }

    /// The value at colour-map position `t` (inverse of [`ColourScale::position`] inside the
    /// range).
    pub fn value_at(&self, t: f64) -> f64 {
        let (a, b) = (self.forward(self.min), self.forward(self.max));
        self.backward(a + t * (b - a))
    }
}

fn finite_range(images: &[ArrayView2<'_, f64>]) -> Result<(f64, f64), ReportError> {
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    for v in images.iter().flat_map(|im| im.iter()).filter(|v| v.is_finite()) {
        lo = lo.min(*v);
        hi = hi.max(*v);
    }
    if lo > hi {
        return Err(ReportError::InvalidInput {
            what: "images for a colour scale",
            value: format!("{} images", images.len()),
            why: "need at least one finite pixel",
        });
    }
    Ok((lo, hi))
}

fn widen(v: f64) -> (f64, f64) {
    let d = (0.5 * v.abs()).max(1.0);
    (v - d, v + d)
}

/// A colour map: anchor colours at evenly spaced positions, interpolated linearly in sRGB.
///
/// Both maps are our own choice of anchors. `Sequential` runs from a near-black indigo through
/// violet, blue, teal and lime to a pale cream, with CIE L* rising at every step (checked in the
/// tests), so brightness order reads correctly in grey print too. `Diverging` runs from dark
/// blue through a near-white centre to dark red, for signed images on a symmetric scale.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ColourMap {
    /// Lightness increasing monotonically with value.
    Sequential,
    /// Lightness peaking at the centre, hue telling the sign.
    Diverging,
}

const SEQUENTIAL: [[u8; 3]; 7] = [
    [10, 6, 30],
    [52, 22, 92],
    [70, 50, 150],
    [40, 110, 160],
    [40, 160, 128],
    [168, 200, 72],
    [252, 248, 218],
];

const DIVERGING: [[u8; 3]; 5] =
    [[28, 48, 120], [110, 150, 210], [246, 244, 240], [222, 138, 96], [130, 24, 34]];

/// Colour shown for NaN pixels (blank, outside a mask): a mid grey, distinct from both maps.
pub const NAN_COLOUR: [u8; 3] = [128, 128, 128];

impl ColourMap {
    fn anchors(self) -> &'static [[u8; 3]] {
        match self {
            ColourMap::Sequential => &SEQUENTIAL,
            ColourMap::Diverging => &DIVERGING,
        }
    }

    /// RGB at position `t` (clipped to [0, 1]).
    pub fn rgb(self, t: f64) -> [u8; 3] {
        let a = self.anchors();
        let x = t.clamp(0.0, 1.0) * (a.len() - 1) as f64;
        let i = (x.floor() as usize).min(a.len() - 2);
        let f = x - i as f64;
        let mut out = [0u8; 3];
        for (c, o) in out.iter_mut().enumerate() {
            let v = a[i][c] as f64 * (1.0 - f) + a[i + 1][c] as f64 * f;
            *o = v.round().clamp(0.0, 255.0) as u8;
        }
        out
    }

    /// RGB of a data value under `scale` ([`NAN_COLOUR`] for NaN).
    pub fn rgb_of_value(self, scale: &ColourScale, v: f64) -> [u8; 3] {
        scale.position(v).map_or(NAN_COLOUR, |t| self.rgb(t))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// CIE 1976 L* of an sRGB colour: sRGB decoding (IEC 61966-2-1), relative luminance
    /// Y = 0.2126 R + 0.7152 G + 0.0722 B, L* = 116 f(Y) − 16 with the CIE cube-root/linear f.
    fn lightness(rgb: [u8; 3]) -> f64 {
        let lin = |c: u8| {
            let c = c as f64 / 255.0;
            if c <= 0.04045 {
                c / 12.92
            } else {
                ((c + 0.055) / 1.055).powf(2.4)
            }
        };
        let y = 0.2126 * lin(rgb[0]) + 0.7152 * lin(rgb[1]) + 0.0722 * lin(rgb[2]);
        let f = if y > (6.0f64 / 29.0).powi(3) {
            y.cbrt()
        } else {
            y / (3.0 * (6.0f64 / 29.0).powi(2)) + 4.0 / 29.0
        };
        116.0 * f - 16.0
    }

    #[test]
    fn lightness_reference_values() {
        // Handbook values: black L* = 0, white L* = 100, sRGB mid grey 119 has L* ≈ 50.0.
        assert!(lightness([0, 0, 0]).abs() < 1e-9);
        assert!((lightness([255, 255, 255]) - 100.0).abs() < 1e-9);
        assert!((lightness([119, 119, 119]) - 50.0).abs() < 0.1);
    }

    #[test]
    fn sequential_lightness_increases() {
        // Perceptual ordering: L* strictly increasing along the map, sampled finely; the
        // 8-bit rounding can flatten a step, so require at least +0.05 per 1/200 of range over
        // every 5 samples.
        let l: Vec<f64> =
            (0..=200).map(|i| lightness(ColourMap::Sequential.rgb(i as f64 / 200.0))).collect();
        for w in l.windows(6) {
            assert!(w[5] > w[0] + 0.05, "L* not increasing: {w:?}");
        }
        assert!(l[0] < 5.0 && l[200] > 95.0, "range {} .. {}", l[0], l[200]);
    }

    #[test]
    fn diverging_lightness_peaks_in_the_middle() {
        let l: Vec<f64> =
            (0..=200).map(|i| lightness(ColourMap::Diverging.rgb(i as f64 / 200.0))).collect();
        for i in 0..100 {
            assert!(l[i + 1] > l[i], "left half not rising at {i}");
            assert!(l[200 - i - 1] > l[200 - i], "right half not falling at {i}");
        }
        // Both ends similarly dark so neither sign looks more important (within 10 L*).
        assert!((l[0] - l[200]).abs() < 10.0, "{} vs {}", l[0], l[200]);
    }

    #[test]
    fn asinh_stretch_matches_definition() {
        let s = ColourScale::new(-1.0, 100.0, Stretch::Asinh { softening: 0.5 }).unwrap();
        // Direct evaluation of the definition in the doc comment.
        let want =
            ((3.0f64 / 0.5).asinh() - (-2.0f64).asinh()) / (200.0f64.asinh() + 2.0f64.asinh());
        assert!((s.position(3.0).unwrap() - want).abs() < 1e-14);
        for &v in &[-1.0, -0.2, 0.0, 0.7, 42.0, 100.0] {
            let t = s.position(v).unwrap();
            assert!((s.value_at(t) - v).abs() < 1e-12 * (1.0 + v.abs()));
        }
        assert_eq!(s.position(f64::NAN), None);
        assert_eq!(s.position(1e9), Some(1.0));
        assert!(ColourScale::new(1.0, 1.0, Stretch::Linear).is_err());
        assert!(ColourScale::new(0.0, 1.0, Stretch::Asinh { softening: 0.0 }).is_err());
    }
}
