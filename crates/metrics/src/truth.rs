use crate::error::{check_range, Result};

/// What the metrics need to know about one true sky component.
///
/// The runner converts its sky model into this small struct so that this crate does not depend
/// on how skies are described. The spectrum is S(ν) = S0 (ν/ν0)^(α + β ln(ν/ν0)).
#[derive(Debug, Clone, PartialEq)]
pub struct SourceTruth {
    /// Name shown in tables.
    pub name: String,
    /// Direction cosine l (towards east) of the centre, radians.
    pub l_rad: f64,
    /// Direction cosine m (towards north) of the centre, radians.
    pub m_rad: f64,
    /// Integrated flux density S0 at the reference frequency ν0, Jy.
    pub flux_ref_jy: f64,
    /// Spectral index α of the source's own curved power law.
    pub alpha_power_law: f64,
    /// Curvature β of the source's own curved power law.
    pub beta_power_law: f64,
    /// α that a least-squares Taylor-polynomial fit of the same order as the imaging, over the
    /// band actually observed, recovers from the true spectrum (what a perfect imager can reach).
    pub alpha_fit: f64,
    /// β recovered by the same fit.
    pub beta_fit: f64,
    /// Angular size: 0 for a point, the FWHM of the major axis for a Gaussian, radians.
    pub extent_rad: f64,
}

/// The elliptical Gaussian used to restore the CLEAN model.
///
/// Its shape matters here only through `major_fwhm_rad`, the scale of every distance the metrics
/// use ("k beams"): using the major axis keeps circular exclusion zones conservative.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RestoringBeam {
    /// Full width at half maximum along the major axis, radians.
    pub major_fwhm_rad: f64,
    /// Full width at half maximum along the minor axis, radians.
    pub minor_fwhm_rad: f64,
    /// Position angle of the major axis, radians (north through east).
    pub position_angle_rad: f64,
}

impl RestoringBeam {
    /// A circular beam of the given FWHM.
    pub fn circular(fwhm_rad: f64) -> Self {
        Self { major_fwhm_rad: fwhm_rad, minor_fwhm_rad: fwhm_rad, position_angle_rad: 0.0 }
    }

    /// Check 0 < minor ≤ major < ∞.
    pub fn validate(&self) -> Result<()> {
        check_range(
            "restoring beam major_fwhm_rad",
            self.major_fwhm_rad,
            f64::MIN_POSITIVE,
            f64::MAX,
            false,
            "finite and > 0",
        )?;
        check_range(
            "restoring beam minor_fwhm_rad",
            self.minor_fwhm_rad,
            f64::MIN_POSITIVE,
            self.major_fwhm_rad,
            false,
            "finite, > 0 and <= major_fwhm_rad",
        )
    }
}
