//! `[imaging]`: image geometry, weighting and gridding accuracy shared by every strategy.

use serde::{Deserialize, Serialize};

use super::check::Checker;

/// The `[imaging]` section (optional; every key has a default).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct ImagingConfig {
    /// Image width and height in pixels: even, within 16..=32768. Default: `512`.
    pub image_size_px: u32,
    /// Pixel size, arcsec (> 0); the whole image must stay inside the horizon. Default: `10.0`.
    pub cell_arcsec: f64,
    /// Visibility weighting. Default: `"briggs"`.
    pub weighting: Weighting,
    /// Briggs robustness, within [-2, 2]; only with `weighting = "briggs"`. Default: `0.0`
    /// (filled in when the config is resolved).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub robust: Option<f64>,
    /// Target relative accuracy ε of the gridding kernel (it sets the kernel's support and
    /// shape), within [1e-14, 1e-2]. Default: `1e-6`.
    pub accuracy: f64,
    /// Ratio of the padded grid to the image size, within [1.2, 4]. Default: `2.0`.
    pub grid_upsampling: f64,
    /// How strategies that correct the w-term do it. Default: `"w-stacking"`.
    pub w_method: WMethod,
    /// Number of w-planes for w-stacking, within 1..=4096; absent: enough planes for the image's
    /// field and the largest |w|, chosen by the imaging code. Default: absent.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub w_planes: Option<u32>,
    /// Strategies without A-projection divide their images by the averaged primary beam; pixels
    /// where that beam's power at the reference frequency falls below this fraction of its peak
    /// are blanked (NaN). A-projection strategies blank where the square root of their
    /// sensitivity falls below this fraction of its peak, and CLEAN places components only
    /// inside that region: a bright source beyond it (e.g. in the first sidelobe with the
    /// default) is never deconvolved by them and its sidelobes stay in their residual. Within
    /// (0, 1). Default: `0.05`.
    #[serde(default = "default_pb_cutoff")]
    pub pb_cutoff: f64,
}

fn default_pb_cutoff() -> f64 {
    0.05
}

impl Default for ImagingConfig {
    fn default() -> Self {
        Self {
            image_size_px: 512,
            cell_arcsec: 10.0,
            weighting: Weighting::Briggs,
            robust: None,
            accuracy: 1e-6,
            grid_upsampling: 2.0,
            w_method: WMethod::WStacking,
            w_planes: None,
            pb_cutoff: default_pb_cutoff(),
        }
    }
}

/// Visibility weighting.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Weighting {
    /// Each visibility weighted by its inverse noise variance.
    Natural,
    /// Natural weights divided by the weight density in each uv cell.
    Uniform,
    /// Briggs' robust weighting between the two (Briggs 1995).
    Briggs,
}

/// How the w-term is corrected.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum WMethod {
    /// Grid into w-planes, Fourier transform each, multiply by its w-screen and add.
    WStacking,
    /// Treat w as a third gridding axis with the same kernel (gridding in w, then a correction
    /// in the image domain).
    WKernel,
}

impl ImagingConfig {
    /// The field of view along one axis, radians (image size × cell).
    pub fn field_rad(&self) -> f64 {
        f64::from(self.image_size_px) * self.cell_arcsec / 3600.0 * std::f64::consts::PI / 180.0
    }

    pub(crate) fn check(&self, c: &mut Checker) {
        let n = self.image_size_px;
        if !(16..=32768).contains(&n) || !n.is_multiple_of(2) {
            c.fail("imaging.image_size_px", n, "must be even and within 16..=32768 (pixels)");
        }
        c.positive("imaging.cell_arcsec", self.cell_arcsec, "arcsec");
        if self.cell_arcsec.is_finite() && self.cell_arcsec > 0.0 && (16..=32768).contains(&n) {
            // The farthest pixel (a corner) has l² + m² = 2 (N/2 · cell)² under the sine
            // projection; it must stay below 1.
            let half = 0.5 * self.field_rad();
            if 2.0 * half * half >= 1.0 {
                c.fail(
                    "imaging.cell_arcsec",
                    self.cell_arcsec,
                    format!(
                        "image_size_px × cell_arcsec spans {:.1} deg: the image corners would lie beyond the horizon (need (N·cell/2)·√2 < 1 rad)",
                        self.field_rad().to_degrees()
                    ),
                );
            }
        }
        match (self.weighting, self.robust) {
            (Weighting::Briggs, Some(r)) => c.in_range("imaging.robust", r, -2.0, 2.0, ""),
            (w, Some(r)) => c.fail(
                "imaging.robust",
                r,
                format!(
                    "only applies with weighting = \"briggs\" (weighting is {:?}); remove it",
                    kebab(w)
                ),
            ),
            _ => {}
        }
        if !(self.accuracy.is_finite() && (1e-14..=1e-2).contains(&self.accuracy)) {
            c.fail("imaging.accuracy", self.accuracy, "must be within [1e-14, 1e-2]");
        }
        c.in_range("imaging.grid_upsampling", self.grid_upsampling, 1.2, 4.0, "");
        let cut = self.pb_cutoff;
        if !(cut.is_finite() && cut > 0.0 && cut < 1.0) {
            c.fail(
                "imaging.pb_cutoff",
                cut,
                "must be within (0, 1) (fraction of the beam's peak power)",
            );
        }
        if let Some(planes) = self.w_planes {
            if !(1..=4096).contains(&planes) {
                c.fail("imaging.w_planes", planes, "must be within 1..=4096");
            }
        }
    }
}

fn kebab(w: Weighting) -> &'static str {
    match w {
        Weighting::Natural => "natural",
        Weighting::Uniform => "uniform",
        Weighting::Briggs => "briggs",
    }
}
