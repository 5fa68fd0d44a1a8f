use crate::gaussian::{add_covariances, determinant, QuadraticForm};
use crate::quadrature::gauss_legendre;
use crate::{Component, EllipticalGaussian, Shape, SkyError};
use beamfloor_core::ImageGeometry;
use ndarray::Array2;
use std::f64::consts::PI;

/// A Gaussian is evaluated out to this many standard deviations (along each image axis) from its
/// centre; beyond, exp(−k²/2) < 1e-17 of the peak.
const SIGMA_EXTENT: f64 = 9.0;
/// Upper limit on quadrature sub-intervals per pixel axis when integrating a Gaussian over pixels.
pub const MAX_SUBSAMPLES: usize = 64;
/// Gauss–Legendre points per sub-interval.
const GL_POINTS: usize = 8;

/// Which Taylor coefficients of each component's spectrum a Taylor-term image shows.
#[derive(Clone, Copy, Debug)]
pub enum TaylorCoefficients<'a> {
    /// The analytic series about each component's own ν0 ([`crate::Spectrum::taylor_coefficients`]).
    Analytic {
        /// Number of Taylor terms.
        n_terms: usize,
    },
    /// The weighted least-squares fit over the given channels
    /// ([`crate::Spectrum::fitted_taylor_coefficients`]).
    Fitted {
        /// Channel frequencies, Hz.
        frequencies_hz: &'a [f64],
        /// Channel weights (multiplying squared residuals).
        weights: &'a [f64],
        /// Number of Taylor terms.
        n_terms: usize,
    },
}

impl TaylorCoefficients<'_> {
    fn n_terms(&self) -> usize {
        match self {
            TaylorCoefficients::Analytic { n_terms }
            | TaylorCoefficients::Fitted { n_terms, .. } => *n_terms,
        }
    }

    /// The coefficient vector of one component.
    pub fn of(&self, component: &Component) -> Result<Vec<f64>, SkyError> {
        match *self {
            TaylorCoefficients::Analytic { n_terms } => {
                Ok(component.spectrum.taylor_coefficients(n_terms))
            }
            TaylorCoefficients::Fitted { frequencies_hz, weights, n_terms } => {
                component.spectrum.fitted_taylor_coefficients(frequencies_hz, weights, n_terms)
            }
        }
    }
}

/// The model image in Jy/pixel at `freq_hz`: each component's flux S_c(ν) distributed over the
/// grid of `geometry`.
///
/// A point puts all its flux on the pixel nearest its (l, m) (ties round away from the centre
/// pixel, as `f64::round`); a point whose nearest pixel lies outside the grid is left out. A
/// Gaussian is integrated over each pixel by a tensor-product composite Gauss–Legendre rule:
/// k × k sub-intervals per pixel with k = ⌈cell / σ_min⌉ (at most [`MAX_SUBSAMPLES`]), 8 points
/// each. On intervals no wider than σ the 8-point rule's error for a Gaussian is below ~1e-15
/// relative (A&S 25.4.30 with the Gaussian's 16th derivative), so pixel values and the total flux
/// inside the grid are exact to rounding as long as the minor FWHM is at least
/// 2.4/[`MAX_SUBSAMPLES`] pixel; narrower Gaussians lose accuracy gradually (a warning sign
/// that they should be points).
pub fn model_image(
    components: &[Component],
    geometry: &ImageGeometry,
    freq_hz: f64,
) -> Result<Array2<f64>, SkyError> {
    let mut images = taylor_like(
        components,
        geometry,
        1,
        |c| Ok(vec![c.spectrum.flux_checked(freq_hz)?]),
        model_footprint,
    )?;
    Ok(images.remove(0))
}

/// The smoothed truth in Jy/beam at `freq_hz`: the sky convolved with the peak-normalised
/// restoring beam, evaluated analytically at pixel centres.
///
/// A point of flux S gives S · B(r − r_c) with B the peak-1 beam. A Gaussian component of flux S
/// and covariance Σ_c convolved with the beam (covariance Σ_b) gives
/// S √(det Σ_b / det(Σ_b + Σ_c)) exp(−½ rᵀ (Σ_b + Σ_c)⁻¹ r): the convolution of two Gaussians is
/// the Gaussian with the summed covariance (Bracewell, The Fourier Transform and its
/// Applications, ch. 6), scaled so the peak is the flux per beam area.
pub fn smoothed_truth(
    components: &[Component],
    geometry: &ImageGeometry,
    freq_hz: f64,
    restoring_beam: &EllipticalGaussian,
) -> Result<Array2<f64>, SkyError> {
    let mut images = taylor_like(
        components,
        geometry,
        1,
        |c| Ok(vec![c.spectrum.flux_checked(freq_hz)?]),
        |c, g| smoothed_footprint(c, g, restoring_beam),
    )?;
    Ok(images.remove(0))
}

/// One model image (Jy/pixel, as [`model_image`]) per Taylor coefficient: image t holds Σ_c I_{c,t}
/// spread by each component's shape.
pub fn taylor_model_images(
    components: &[Component],
    geometry: &ImageGeometry,
    coefficients: &TaylorCoefficients<'_>,
) -> Result<Vec<Array2<f64>>, SkyError> {
    taylor_like(
        components,
        geometry,
        coefficients.n_terms(),
        |c| coefficients.of(c),
        model_footprint,
    )
}

/// One smoothed-truth image (Jy/beam, as [`smoothed_truth`]) per Taylor coefficient.
pub fn taylor_smoothed_truth(
    components: &[Component],
    geometry: &ImageGeometry,
    restoring_beam: &EllipticalGaussian,
    coefficients: &TaylorCoefficients<'_>,
) -> Result<Vec<Array2<f64>>, SkyError> {
    taylor_like(
        components,
        geometry,
        coefficients.n_terms(),
        |c| coefficients.of(c),
        |c, g| smoothed_footprint(c, g, restoring_beam),
    )
}

/// Pixels `(iy, ix, value)` a component touches, for unit flux.
type Footprint = Vec<(usize, usize, f64)>;

fn taylor_like(
    components: &[Component],
    geometry: &ImageGeometry,
    n_terms: usize,
    coefficients: impl Fn(&Component) -> Result<Vec<f64>, SkyError>,
    footprint: impl Fn(&Component, &ImageGeometry) -> Footprint,
) -> Result<Vec<Array2<f64>>, SkyError> {
    SkyError::check_geometry(geometry)?;
    if n_terms == 0 {
        return Err(SkyError::NoTerms);
    }
    let mut images = vec![Array2::<f64>::zeros((geometry.ny, geometry.nx)); n_terms];
    for c in components {
        let coeffs = coefficients(c)?;
        for (iy, ix, value) in footprint(c, geometry) {
            for (image, coeff) in images.iter_mut().zip(&coeffs) {
                image[[iy, ix]] += coeff * value;
            }
        }
    }
    Ok(images)
}

/// Pixel index range [lo, hi] (clipped to 0..n) covering centre ± half_width pixels.
fn pixel_span(centre: f64, half_width: f64, n: usize) -> Option<(usize, usize)> {
    let lo = (centre - half_width).floor().max(0.0);
    let hi = (centre + half_width).ceil().min(n as f64 - 1.0);
    (lo <= hi).then_some((lo as usize, hi as usize))
}

fn model_footprint(c: &Component, g: &ImageGeometry) -> Footprint {
    let (px, py) = g.pixel_of_lm(c.l, c.m);
    match &c.shape {
        Shape::Point => {
            let (ix, iy) = (px.round(), py.round());
            if ix >= 0.0 && iy >= 0.0 && (ix as usize) < g.nx && (iy as usize) < g.ny {
                vec![(iy as usize, ix as usize, 1.0)]
            } else {
                Vec::new()
            }
        }
        Shape::Gaussian(shape) => {
            let cov = shape.covariance();
            let form = QuadraticForm::inverse_of(cov);
            let sigma_min = shape.minor_fwhm_rad / crate::FWHM_PER_SIGMA;
            // Sub-intervals per pixel axis no wider than σ_min, each with a GL rule.
            let k = ((g.cell_rad / sigma_min).ceil() as usize).clamp(1, MAX_SUBSAMPLES);
            let (nodes, weights) = gauss_legendre(GL_POINTS);
            // Offsets (in pixels, from the pixel centre) and weights (fractions of a pixel) of
            // the composite rule along one axis.
            let mut offsets = Vec::with_capacity(k * GL_POINTS);
            let mut fractions = Vec::with_capacity(k * GL_POINTS);
            for s in 0..k {
                let centre = -0.5 + (s as f64 + 0.5) / k as f64;
                for (x, w) in nodes.iter().zip(&weights) {
                    offsets.push(centre + 0.5 * x / k as f64);
                    fractions.push(0.5 * w / k as f64);
                }
            }
            // Density of the unit-flux Gaussian times the pixel area.
            let norm = g.cell_rad * g.cell_rad / (2.0 * PI * determinant(cov).sqrt());
            let hw_x = SIGMA_EXTENT * cov[0][0].sqrt() / g.cell_rad + 1.0;
            let hw_y = SIGMA_EXTENT * cov[1][1].sqrt() / g.cell_rad + 1.0;
            let (Some((x0, x1)), Some((y0, y1))) =
                (pixel_span(px, hw_x, g.nx), pixel_span(py, hw_y, g.ny))
            else {
                return Vec::new();
            };
            let mut out = Vec::with_capacity((x1 - x0 + 1) * (y1 - y0 + 1));
            for iy in y0..=y1 {
                for ix in x0..=x1 {
                    let mut sum = 0.0;
                    for (oy, wy) in offsets.iter().zip(&fractions) {
                        for (ox, wx) in offsets.iter().zip(&fractions) {
                            let (l, m) = g.lm_of_pixel(ix as f64 + ox, iy as f64 + oy);
                            sum += wx * wy * form.eval_exp(l - c.l, m - c.m);
                        }
                    }
                    out.push((iy, ix, sum * norm));
                }
            }
            out
        }
    }
}

fn smoothed_footprint(c: &Component, g: &ImageGeometry, beam: &EllipticalGaussian) -> Footprint {
    let beam_cov = beam.covariance();
    let (cov, peak) = match &c.shape {
        Shape::Point => (beam_cov, 1.0),
        Shape::Gaussian(shape) => {
            let sum = add_covariances(beam_cov, shape.covariance());
            (sum, (determinant(beam_cov) / determinant(sum)).sqrt())
        }
    };
    let form = QuadraticForm::inverse_of(cov);
    let (px, py) = g.pixel_of_lm(c.l, c.m);
    let hw_x = SIGMA_EXTENT * cov[0][0].sqrt() / g.cell_rad + 1.0;
    let hw_y = SIGMA_EXTENT * cov[1][1].sqrt() / g.cell_rad + 1.0;
    let (Some((x0, x1)), Some((y0, y1))) = (pixel_span(px, hw_x, g.nx), pixel_span(py, hw_y, g.ny))
    else {
        return Vec::new();
    };
    let mut out = Vec::with_capacity((x1 - x0 + 1) * (y1 - y0 + 1));
    for iy in y0..=y1 {
        for ix in x0..=x1 {
            let (l, m) = g.lm_of_pixel(ix as f64, iy as f64);
            out.push((iy, ix, peak * form.eval_exp(l - c.l, m - c.m)));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::Spectrum;

    fn spectrum() -> Spectrum {
        Spectrum::new(2.0, 1.5e9, -0.7, -0.2).unwrap()
    }

    #[test]
    fn point_goes_to_nearest_pixel() {
        let g = ImageGeometry::new(32, 32, 1e-4);
        // (l, m) = (2.3, −1.4) cells → pixel x = 16 − 2.3 = 13.7 → 14, y = 16 − 1.4 = 14.6 → 15.
        let c = Component::point("p", 2.3e-4, -1.4e-4, spectrum()).unwrap();
        let img = model_image(std::slice::from_ref(&c), &g, 1.5e9).unwrap();
        assert_eq!(img[[15, 14]], 2.0);
        assert_eq!(img.sum(), 2.0);
        let far = Component::point("far", 1e-2, 0.0, spectrum()).unwrap();
        assert_eq!(model_image(&[far], &g, 1.5e9).unwrap().sum(), 0.0);
        // The flux is S(ν) from the defining formula.
        let img = model_image(&[c], &g, 1.0e9).unwrap();
        assert!((img.sum() - spectrum().flux_at(1.0e9)).abs() < 1e-15);
    }

    #[test]
    fn gaussian_total_flux_preserved() {
        // Total flux of a Gaussian well inside the grid equals S(ν) to 1e-6 (required accuracy);
        // the midpoint rule's aliasing error at h ≤ σ/2 is ~exp(−8π²), so 1e-9 is met too.
        let g = ImageGeometry::new(64, 64, 1e-4);
        for &(maj, min, pa) in &[(8e-4, 3e-4, 0.5), (1.5e-4, 0.6e-4, -1.0), (3e-5, 2e-5, 2.0)] {
            let shape = EllipticalGaussian::new(maj, min, pa).unwrap();
            let c = Component::gaussian("g", 3.3e-4, -2.1e-4, spectrum(), shape).unwrap();
            let img = model_image(&[c], &g, 1.2e9).unwrap();
            let want = spectrum().flux_at(1.2e9);
            assert!((img.sum() - want).abs() < 1e-9 * want, "{maj}: {} vs {want}", img.sum());
        }
    }

    #[test]
    fn gaussian_model_matches_brute_force_pixel_integral() {
        // Slow reference: each pixel integrated by a 400 × 400 midpoint rule of the normalised
        // density (Bracewell ch. 6 normalisation 1/(2π√det Σ)). The midpoint rule's error is
        // (h²/24)|f''| ≈ (h/σ)²/24 ≈ 1e-6 relative here (h = cell/400, σ_min ≈ 0.5 cell), so
        // tolerance 1e-5 relative.
        let g = ImageGeometry::new(8, 8, 1e-4);
        let shape = EllipticalGaussian::new(2.5e-4, 1.2e-4, 0.7).unwrap();
        let c = Component::gaussian("g", 0.4e-4, 0.3e-4, spectrum(), shape).unwrap();
        let img = model_image(std::slice::from_ref(&c), &g, 1.5e9).unwrap();
        let cov = shape.covariance();
        let det = cov[0][0] * cov[1][1] - cov[0][1] * cov[0][1];
        let inv = [cov[1][1] / det, -cov[0][1] / det, cov[0][0] / det];
        let n = 400;
        for (iy, ix) in [(4usize, 4usize), (3, 5), (5, 2), (0, 7)] {
            let mut s = 0.0;
            for a in 0..n {
                for b in 0..n {
                    let x = ix as f64 - 0.5 + (b as f64 + 0.5) / n as f64;
                    let y = iy as f64 - 0.5 + (a as f64 + 0.5) / n as f64;
                    let (l, m) = g.lm_of_pixel(x, y);
                    let (dl, dm) = (l - c.l, m - c.m);
                    let q = inv[0] * dl * dl + 2.0 * inv[1] * dl * dm + inv[2] * dm * dm;
                    s += (-0.5 * q).exp();
                }
            }
            let want = 2.0 * s * (1e-4 / n as f64).powi(2) / (2.0 * PI * det.sqrt());
            assert!(
                (img[[iy, ix]] - want).abs() < 1e-5 * want,
                "{iy},{ix}: {} {want}",
                img[[iy, ix]]
            );
        }
    }

    #[test]
    fn smoothed_truth_point_and_gaussian() {
        let g = ImageGeometry::new(64, 64, 1e-4);
        let beam = EllipticalGaussian::new(5e-4, 3e-4, 0.3).unwrap();
        // Point at a pixel centre: the peak there is its flux in Jy/beam.
        let p = Component::point("p", 1e-3, 2e-4, spectrum()).unwrap();
        let img = smoothed_truth(&[p], &g, 1.5e9, &beam).unwrap();
        let (x, y) = g.pixel_of_lm(1e-3, 2e-4);
        assert!((img[[y as usize, x as usize]] - 2.0).abs() < 1e-12);
        // Integrated over the plane, a Jy/beam image divided by the beam area is the flux (the
        // definition of Jy/beam); the beam area is 2π σ_maj σ_min.
        let shape = EllipticalGaussian::new(6e-4, 2e-4, -0.9).unwrap();
        let c = Component::gaussian("g", -5e-4, 4e-4, spectrum(), shape).unwrap();
        let img = smoothed_truth(std::slice::from_ref(&c), &g, 1.5e9, &beam).unwrap();
        let flux = img.sum() * 1e-8 / beam.area_sr();
        assert!((flux - 2.0).abs() < 1e-9, "{flux}");
        // Slow reference for the analytic convolution: a direct 2-D sum of the component's density
        // times the shifted beam at one pixel (midpoint rule on a fine grid, converged to 1e-9).
        let (px, py) = (30usize, 36usize);
        let (l0, m0) = g.lm_of_pixel(px as f64, py as f64);
        let h = 1e-5;
        let mut s = 0.0;
        let cov = shape.covariance();
        let det = cov[0][0] * cov[1][1] - cov[0][1] * cov[0][1];
        for a in -400..=400 {
            for b in -400..=400 {
                let (dl, dm) = (a as f64 * h, b as f64 * h);
                let q =
                    (cov[1][1] * dl * dl - 2.0 * cov[0][1] * dl * dm + cov[0][0] * dm * dm) / det;
                let density = (-0.5 * q).exp() / (2.0 * PI * det.sqrt());
                s += density * beam.peak_normalised(l0 - (c.l + dl), m0 - (c.m + dm)) * h * h;
            }
        }
        assert!((img[[py, px]] - 2.0 * s).abs() < 1e-9, "{} vs {}", img[[py, px]], 2.0 * s);
    }

    #[test]
    fn taylor_images_carry_coefficients() {
        let g = ImageGeometry::new(32, 32, 1e-4);
        let beam = EllipticalGaussian::circular(3e-4).unwrap();
        let p = Component::point("p", 0.0, 0.0, spectrum()).unwrap();
        let imgs = taylor_smoothed_truth(
            std::slice::from_ref(&p),
            &g,
            &beam,
            &TaylorCoefficients::Analytic { n_terms: 3 },
        )
        .unwrap();
        // Rau & Cornwell (2011) eq. 10 check values at the peak: 2, −1.4, 0.79.
        assert!((imgs[0][[16, 16]] - 2.0).abs() < 1e-14);
        assert!((imgs[1][[16, 16]] + 1.4).abs() < 1e-14);
        assert!((imgs[2][[16, 16]] - 0.79).abs() < 1e-14);
        let freqs: Vec<f64> = (0..11).map(|i| 1.0e9 + 1.0e8 * i as f64).collect();
        let coeffs =
            TaylorCoefficients::Fitted { frequencies_hz: &freqs, weights: &[1.0; 11], n_terms: 2 };
        let models = taylor_model_images(std::slice::from_ref(&p), &g, &coeffs).unwrap();
        let want = p.spectrum.fitted_taylor_coefficients(&freqs, &[1.0; 11], 2).unwrap();
        assert_eq!(models[0][[16, 16]], want[0]);
        assert_eq!(models[1][[16, 16]], want[1]);
        assert!(matches!(
            model_image(&[p], &ImageGeometry::new(0, 4, 1e-4), 1e9),
            Err(SkyError::Geometry { .. })
        ));
    }
}
