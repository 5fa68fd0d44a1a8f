use crate::{EllipticalGaussian, SkyError, Spectrum};

/// The spatial shape of a sky component.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Shape {
    /// An unresolved point.
    Point,
    /// An elliptical Gaussian brightness distribution whose integral is the component's flux.
    Gaussian(EllipticalGaussian),
}

/// One sky component: a named point or Gaussian at direction cosines (l, m) with a spectrum.
#[derive(Clone, Debug, PartialEq)]
pub struct Component {
    /// Name used in reports and per-source metrics.
    pub name: String,
    /// Direction cosine towards east (increasing RA) of the component's centre.
    pub l: f64,
    /// Direction cosine towards north of the component's centre.
    pub m: f64,
    /// Total flux density spectrum.
    pub spectrum: Spectrum,
    /// Spatial shape.
    pub shape: Shape,
}

impl Component {
    /// A component at (l, m); (l, m) must be finite with l² + m² < 1.
    pub fn new(
        name: impl Into<String>,
        l: f64,
        m: f64,
        spectrum: Spectrum,
        shape: Shape,
    ) -> Result<Self, SkyError> {
        if !(l.is_finite() && m.is_finite() && l * l + m * m < 1.0) {
            return Err(SkyError::Direction { l, m });
        }
        Ok(Self { name: name.into(), l, m, spectrum, shape })
    }

    /// A point component.
    pub fn point(
        name: impl Into<String>,
        l: f64,
        m: f64,
        spectrum: Spectrum,
    ) -> Result<Self, SkyError> {
        Self::new(name, l, m, spectrum, Shape::Point)
    }

    /// An elliptical Gaussian component.
    pub fn gaussian(
        name: impl Into<String>,
        l: f64,
        m: f64,
        spectrum: Spectrum,
        gaussian: EllipticalGaussian,
    ) -> Result<Self, SkyError> {
        Self::new(name, l, m, spectrum, Shape::Gaussian(gaussian))
    }

    /// n = √(1 − l² − m²) of the component's direction.
    pub fn n(&self) -> f64 {
        (1.0 - self.l * self.l - self.m * self.m).sqrt()
    }

    /// The shape's visibility envelope at (u, v) in wavelengths: 1 for a point, the Gaussian's
    /// Fourier transform for a Gaussian ([`EllipticalGaussian::envelope`]).
    #[inline]
    pub fn envelope(&self, u: f64, v: f64) -> f64 {
        match &self.shape {
            Shape::Point => 1.0,
            Shape::Gaussian(g) => g.envelope(u, v),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn construction_and_envelope() {
        let s = Spectrum::flat(1.0, 1e9).unwrap();
        let p = Component::point("p", 0.01, -0.02, s).unwrap();
        // A point's transform is a pure phase: envelope 1 at every (u, v).
        assert_eq!(p.envelope(1e4, -3e3), 1.0);
        assert!((p.n() - (1.0f64 - 1e-4 - 4e-4).sqrt()).abs() < 1e-16);
        assert!(matches!(Component::point("x", 0.8, 0.8, s), Err(SkyError::Direction { .. })));
        let g = Component::gaussian("g", 0.0, 0.0, s, EllipticalGaussian::circular(1e-3).unwrap())
            .unwrap();
        assert!(g.envelope(100.0, 0.0) < 1.0);
    }
}
