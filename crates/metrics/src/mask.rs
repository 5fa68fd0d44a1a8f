use beamfloor_core::ImageGeometry;
use ndarray::Array2;

use crate::error::{check_range, check_shape, MetricsError, Result};
use crate::truth::{RestoringBeam, SourceTruth};

/// How the source-free region is chosen.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MaskParams {
    /// k: a pixel is source-free when it is farther than k · (restoring-beam major FWHM) plus the
    /// source's own extent from every source. Default 5: a Gaussian restoring beam has fallen to
    /// 2^(−4k²) = 2^(−100) of its peak there, and the sidelobes of an imperfectly deconvolved
    /// source are strongest within a few beams (common practice; the value is a choice).
    pub exclusion_beams: f64,
    /// Fraction of the image size, on each side, left out along the edges, where gridding
    /// (aliasing and grid-correction division by a small taper) is least accurate. Default 0.05.
    pub edge_margin_fraction: f64,
}

impl Default for MaskParams {
    fn default() -> Self {
        Self { exclusion_beams: 5.0, edge_margin_fraction: 0.05 }
    }
}

impl MaskParams {
    /// Check k ≥ 0 and 0 ≤ edge fraction < 0.5.
    pub fn validate(&self) -> Result<()> {
        check_range("exclusion_beams", self.exclusion_beams, 0.0, f64::MAX, false, "finite, >= 0")?;
        check_range(
            "edge_margin_fraction",
            self.edge_margin_fraction,
            0.0,
            0.5,
            true,
            "0 <= fraction < 0.5",
        )
    }

    /// Radius of the exclusion disc about a source: r = k · θ_maj + extent, radians.
    pub fn exclusion_radius_rad(&self, beam: &RestoringBeam, source: &SourceTruth) -> f64 {
        self.exclusion_beams * beam.major_fwhm_rad + source.extent_rad.max(0.0)
    }

    /// Pixels left out on each side along x and y: (⌈f·nx⌉, ⌈f·ny⌉).
    pub fn edge_margin_pixels(&self, geometry: &ImageGeometry) -> (usize, usize) {
        let f = self.edge_margin_fraction;
        ((f * geometry.nx as f64).ceil() as usize, (f * geometry.ny as f64).ceil() as usize)
    }
}

/// Angular distance on the tangent plane between pixel (ix, iy) and the direction (l, m):
/// d = sqrt((l_pix − l)² + (m_pix − m)²), with (l_pix, m_pix) from [`ImageGeometry::lm_of_pixel`].
pub fn pixel_distance_rad(geometry: &ImageGeometry, ix: usize, iy: usize, l: f64, m: f64) -> f64 {
    let (pl, pm) = geometry.lm_of_pixel(ix as f64, iy as f64);
    ((pl - l).powi(2) + (pm - m).powi(2)).sqrt()
}

/// All pixels (iy, ix) of the image within `radius_rad` (inclusive) of (l, m).
///
/// Visits only the bounding box of the disc (plus one pixel of slack on each side against
/// rounding), and decides membership with [`pixel_distance_rad`], so the result is exactly that of
/// testing every pixel of the image.
pub fn disc_pixels(
    geometry: &ImageGeometry,
    l: f64,
    m: f64,
    radius_rad: f64,
) -> Result<Vec<(usize, usize)>> {
    check_range("direction l", l, -f64::MAX, f64::MAX, false, "finite")?;
    check_range("direction m", m, -f64::MAX, f64::MAX, false, "finite")?;
    check_range("disc radius", radius_rad, 0.0, f64::MAX, false, "finite, >= 0")?;
    let mut out = Vec::new();
    if geometry.is_empty() {
        return Ok(out);
    }
    let (x0, y0) = geometry.pixel_of_lm(l, m);
    let rp = radius_rad / geometry.cell_rad;
    let (Some((xa, xb)), Some((ya, yb))) =
        (index_span(x0, rp, geometry.nx), index_span(y0, rp, geometry.ny))
    else {
        return Ok(out);
    };
    for iy in ya..=yb {
        for ix in xa..=xb {
            if pixel_distance_rad(geometry, ix, iy, l, m) <= radius_rad {
                out.push((iy, ix));
            }
        }
    }
    Ok(out)
}

/// Inclusive index range [⌊c − r⌋ − 1, ⌈c + r⌉ + 1] clipped to [0, n − 1]; None if disjoint.
fn index_span(centre: f64, radius: f64, n: usize) -> Option<(usize, usize)> {
    let lo = (centre - radius).floor() - 1.0;
    let hi = (centre + radius).ceil() + 1.0;
    if !lo.is_finite() || !hi.is_finite() || hi < 0.0 || lo > (n - 1) as f64 {
        return None;
    }
    Some((lo.max(0.0) as usize, hi.min((n - 1) as f64) as usize))
}

/// The region where statistics are meaningful at all: inside the edge margin and, if given,
/// where `validity` is true (e.g. where the primary-beam response exceeds a cut-off).
pub fn valid_region(
    geometry: &ImageGeometry,
    params: &MaskParams,
    validity: Option<&Array2<bool>>,
) -> Result<Array2<bool>> {
    params.validate()?;
    if let Some(v) = validity {
        check_shape(v, geometry, "validity mask")?;
    }
    let (mx, my) = params.edge_margin_pixels(geometry);
    Ok(Array2::from_shape_fn((geometry.ny, geometry.nx), |(iy, ix)| {
        let inside = ix >= mx && ix + mx < geometry.nx && iy >= my && iy + my < geometry.ny;
        inside && validity.is_none_or(|v| v[[iy, ix]])
    }))
}

/// Source-free mask: true where a pixel is in the [`valid_region`] and farther than
/// r_s = k · θ_maj + extent_s from every source s:
///
/// M(x, y) = valid(x, y) ∧ ∀s: d((x, y), (l_s, m_s)) > r_s.
///
/// Sources outside the image still exclude the pixels within their reach.
pub fn source_free_mask(
    geometry: &ImageGeometry,
    beam: &RestoringBeam,
    sources: &[SourceTruth],
    params: &MaskParams,
    validity: Option<&Array2<bool>>,
) -> Result<Array2<bool>> {
    beam.validate()?;
    let mut mask = valid_region(geometry, params, validity)?;
    for s in sources {
        check_range("source extent_rad", s.extent_rad, 0.0, f64::MAX, false, "finite, >= 0")?;
        let r = params.exclusion_radius_rad(beam, s);
        for (iy, ix) in disc_pixels(geometry, s.l_rad, s.m_rad, r)? {
            mask[[iy, ix]] = false;
        }
    }
    Ok(mask)
}

/// Validity mask from a response image: true where `response ≥ cutoff` (NaN counts as invalid).
pub fn validity_from_threshold(response: &Array2<f64>, cutoff: f64) -> Result<Array2<bool>> {
    if !cutoff.is_finite() {
        return Err(MetricsError::InvalidParameter {
            name: "validity cutoff",
            value: cutoff,
            allowed: "finite",
        });
    }
    Ok(response.mapv(|r| r >= cutoff))
}
