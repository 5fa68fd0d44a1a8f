use crate::SkyError;
use std::f64::consts::PI;

/// FWHM / σ of a Gaussian: 2 √(2 ln 2).
pub const FWHM_PER_SIGMA: f64 = 2.354_820_045_030_949_3;

/// An elliptical Gaussian shape on the sky: FWHM along its major and minor axes (rad) and the
/// position angle of the major axis, measured from north (+m) through east (+l), rad.
///
/// Used both for Gaussian sky components and for restoring beams. Its major axis points along
/// (l, m) = (sin PA, cos PA). With σ = FWHM / (2√(2 ln 2)) its covariance matrix in (l, m) is
/// Σ = σ_maj² a aᵀ + σ_min² b bᵀ with a = (sin PA, cos PA), b = (cos PA, −sin PA).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct EllipticalGaussian {
    /// FWHM along the major axis, rad.
    pub major_fwhm_rad: f64,
    /// FWHM along the minor axis, rad.
    pub minor_fwhm_rad: f64,
    /// Position angle of the major axis, north through east, rad.
    pub position_angle_rad: f64,
}

impl EllipticalGaussian {
    /// A Gaussian with major ≥ minor > 0 (finite) and a finite position angle.
    pub fn new(
        major_fwhm_rad: f64,
        minor_fwhm_rad: f64,
        position_angle_rad: f64,
    ) -> Result<Self, SkyError> {
        if !(major_fwhm_rad.is_finite()
            && minor_fwhm_rad.is_finite()
            && minor_fwhm_rad > 0.0
            && major_fwhm_rad >= minor_fwhm_rad)
        {
            return Err(SkyError::GaussianWidth {
                major_rad: major_fwhm_rad,
                minor_rad: minor_fwhm_rad,
            });
        }
        if !position_angle_rad.is_finite() {
            return Err(SkyError::PositionAngle(position_angle_rad));
        }
        Ok(Self { major_fwhm_rad, minor_fwhm_rad, position_angle_rad })
    }

    /// A circular Gaussian of the given FWHM.
    pub fn circular(fwhm_rad: f64) -> Result<Self, SkyError> {
        Self::new(fwhm_rad, fwhm_rad, 0.0)
    }

    /// Covariance matrix [[Σ_ll, Σ_lm], [Σ_lm, Σ_mm]] in rad².
    pub fn covariance(&self) -> [[f64; 2]; 2] {
        let sa = self.major_fwhm_rad / FWHM_PER_SIGMA;
        let sb = self.minor_fwhm_rad / FWHM_PER_SIGMA;
        let (s, c) = self.position_angle_rad.sin_cos();
        let (va, vb) = (sa * sa, sb * sb);
        let ll = va * s * s + vb * c * c;
        let mm = va * c * c + vb * s * s;
        let lm = (va - vb) * s * c;
        [[ll, lm], [lm, mm]]
    }

    /// Solid angle ∫∫ exp(−½ rᵀ Σ⁻¹ r) dl dm = 2π σ_maj σ_min = π θ_maj θ_min / (4 ln 2), sr
    /// (the "beam area" of a peak-normalised Gaussian).
    pub fn area_sr(&self) -> f64 {
        PI * self.major_fwhm_rad * self.minor_fwhm_rad / (4.0 * std::f64::consts::LN_2)
    }

    /// The peak-normalised Gaussian exp(−½ rᵀ Σ⁻¹ r) at offset r = (dl, dm) from its centre.
    pub fn peak_normalised(&self, dl: f64, dm: f64) -> f64 {
        QuadraticForm::inverse_of(self.covariance()).eval_exp(dl, dm)
    }

    /// Visibility envelope: the Fourier transform of the unit-flux Gaussian with the
    /// measurement-equation kernel exp(−2πi (u l + v m)), at (u, v) in wavelengths:
    ///
    /// G(u, v) = exp(−2π² kᵀ Σ k), k = (u, v),
    ///
    /// i.e. exp(−2π² (σ_maj² u_a² + σ_min² u_b²)) with u_a = u sin PA + v cos PA,
    /// u_b = u cos PA − v sin PA. This is the Gaussian transform pair exp(−πx²) ↔ exp(−πs²)
    /// (Bracewell, The Fourier Transform and its Applications, ch. 6) with the similarity and
    /// rotation theorems. G(0, 0) = 1; it is real and even, so it does not depend on the sign
    /// convention, and it does not depend on the component's position (the shift theorem puts the
    /// position in the phase term).
    pub fn envelope(&self, u: f64, v: f64) -> f64 {
        let [[ll, lm], [_, mm]] = self.covariance();
        (-2.0 * PI * PI * (ll * u * u + 2.0 * lm * u * v + mm * v * v)).exp()
    }
}

/// exp(−½ rᵀ A r) for a symmetric 2×2 A, kept as its three distinct elements.
#[derive(Clone, Copy, Debug)]
pub(crate) struct QuadraticForm {
    a_ll: f64,
    a_lm: f64,
    a_mm: f64,
}

impl QuadraticForm {
    /// The form with A = Σ⁻¹ (Σ positive definite).
    pub(crate) fn inverse_of(cov: [[f64; 2]; 2]) -> Self {
        let det = determinant(cov);
        Self { a_ll: cov[1][1] / det, a_lm: -cov[0][1] / det, a_mm: cov[0][0] / det }
    }

    #[inline]
    pub(crate) fn eval_exp(&self, dl: f64, dm: f64) -> f64 {
        (-0.5 * (self.a_ll * dl * dl + 2.0 * self.a_lm * dl * dm + self.a_mm * dm * dm)).exp()
    }
}

pub(crate) fn determinant(cov: [[f64; 2]; 2]) -> f64 {
    cov[0][0] * cov[1][1] - cov[0][1] * cov[1][0]
}

pub(crate) fn add_covariances(a: [[f64; 2]; 2], b: [[f64; 2]; 2]) -> [[f64; 2]; 2] {
    [[a[0][0] + b[0][0], a[0][1] + b[0][1]], [a[1][0] + b[1][0], a[1][1] + b[1][1]]]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn half_power_at_half_width_along_axes() {
        // By definition of FWHM the peak-normalised Gaussian is 1/2 at ±FWHM/2 along each axis.
        // PA = 30° north through east puts the major axis along (sin 30°, cos 30°).
        let g = EllipticalGaussian::new(4e-3, 1e-3, 30f64.to_radians()).unwrap();
        let (s, c) = g.position_angle_rad.sin_cos();
        assert!((g.peak_normalised(2e-3 * s, 2e-3 * c) - 0.5).abs() < 1e-14);
        assert!((g.peak_normalised(0.5e-3 * c, -0.5e-3 * s) - 0.5).abs() < 1e-14);
        assert_eq!(g.peak_normalised(0.0, 0.0), 1.0);
        assert_eq!(g.envelope(0.0, 0.0), 1.0);
    }

    #[test]
    fn envelope_half_width_in_uv() {
        // A Gaussian of FWHM θ transforms to one of FWHM 4 ln 2 / (π θ) in the uv plane
        // (Bracewell, ch. 6: the product of the two widths of a Gaussian pair, recalled from
        // memory and re-derived from exp(−πx²) ↔ exp(−πs²)). Along the major axis direction.
        let g = EllipticalGaussian::new(2e-3, 1e-3, 0.4).unwrap();
        let half = 2.0 * std::f64::consts::LN_2 / (PI * 2e-3);
        let (s, c) = g.position_angle_rad.sin_cos();
        assert!((g.envelope(half * s, half * c) - 0.5).abs() < 1e-14);
        let half_b = 2.0 * std::f64::consts::LN_2 / (PI * 1e-3);
        assert!((g.envelope(half_b * c, -half_b * s) - 0.5).abs() < 1e-14);
    }

    #[test]
    fn validation() {
        assert!(EllipticalGaussian::new(1e-3, 2e-3, 0.0).is_err());
        assert!(EllipticalGaussian::new(1e-3, 0.0, 0.0).is_err());
        assert!(EllipticalGaussian::new(1e-3, 1e-3, f64::INFINITY).is_err());
    }
}
