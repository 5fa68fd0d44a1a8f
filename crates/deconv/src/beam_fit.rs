use crate::hessian::TermHessian;
use crate::DeconvError;
use ndarray::Array2;
use std::f64::consts::{FRAC_PI_2, LN_2, PI};

/// An elliptical Gaussian restoring beam (peak 1), fitted to the PSF main lobe.
///
/// B(l, m) = exp(−4 ln 2 · (a² / major² + b² / minor²)), with a the offset along the major
/// axis, whose direction on the sky is (l, m) ∝ (sin PA, cos PA), and b the offset across it.
/// The position angle runs from north (+m, increasing pixel y) through east (+l, which is
/// *decreasing* pixel x in our images), in (−π/2, π/2].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RestoringBeam {
    /// Full width at half maximum along the major axis, rad.
    pub major_fwhm_rad: f64,
    /// Full width at half maximum along the minor axis, rad.
    pub minor_fwhm_rad: f64,
    /// Position angle of the major axis, north through east, rad, in (−π/2, π/2].
    pub position_angle_rad: f64,
}

/// Knobs of the restoring-beam fit.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BeamFitParams {
    /// Fit only main-lobe pixels (connected to the centre) at or above this fraction of the
    /// peak. In (0, 1). Default 0.35 (common practice: well above the first sidelobes, well
    /// inside the lobe's shoulders).
    pub lobe_fraction: f64,
    /// Gauss–Newton iterations after the log-linear start. Default 30.
    pub max_iterations: usize,
}

impl Default for BeamFitParams {
    fn default() -> Self {
        Self { lobe_fraction: 0.35, max_iterations: 30 }
    }
}

impl RestoringBeam {
    /// Value of the beam at a pixel offset (dx, dy) from its centre, for pixels of `cell_rad`.
    pub fn value_at_pixel_offset(&self, dx: f64, dy: f64, cell_rad: f64) -> f64 {
        let (l, m) = (-dx * cell_rad, dy * cell_rad);
        let (s, c) = self.position_angle_rad.sin_cos();
        let a = l * s + m * c;
        let b = l * c - m * s;
        let (ma, mi) = (self.major_fwhm_rad, self.minor_fwhm_rad);
        (-4.0 * LN_2 * (a * a / (ma * ma) + b * b / (mi * mi))).exp()
    }

    /// The beam sampled on an odd `(2h+1)²` grid centred at (h, h), h = ⌈4 · major / cell⌉
    /// (at four FWHM the Gaussian is 2⁻⁶⁴ ≈ 5e-20 of its peak, below f64 rounding of the peak).
    pub fn kernel(&self, cell_rad: f64) -> Array2<f64> {
        let h = (4.0 * self.major_fwhm_rad / cell_rad).ceil().max(1.0) as usize;
        Array2::from_shape_fn((2 * h + 1, 2 * h + 1), |(y, x)| {
            self.value_at_pixel_offset(x as f64 - h as f64, y as f64 - h as f64, cell_rad)
        })
    }
}

/// Fit an elliptical Gaussian to the main lobe of `psf` (peak at its centre pixel (px/2, py/2)),
/// pixels of `cell_rad` radians.
///
/// The main lobe is the 4-connected region around the centre where psf / psf(centre) ≥
/// `lobe_fraction`. With offsets (u, v) = (l, m) in pixels, the model is exp(−(A u² + 2B uv +
/// C v²)), peak fixed at 1 on the centre: a linear least-squares fit of −ln psf gives the start,
/// then Gauss–Newton minimises Σ (psf − model)² over the lobe pixels. The quadratic form's
/// eigenvalues λ give FWHM = 2 √(ln 2 / λ), its eigenvectors the axes.
pub fn fit_restoring_beam(
    psf: &Array2<f64>,
    cell_rad: f64,
    params: &BeamFitParams,
) -> Result<RestoringBeam, DeconvError> {
    if !(params.lobe_fraction > 0.0 && params.lobe_fraction < 1.0) {
        return Err(DeconvError::Parameter {
            name: "lobe_fraction",
            value: params.lobe_fraction,
            allowed: "(0, 1)",
        });
    }
    if !(cell_rad > 0.0 && cell_rad.is_finite()) {
        return Err(DeconvError::Parameter {
            name: "cell_rad",
            value: cell_rad,
            allowed: "> 0, finite",
        });
    }
    let (ny, nx) = psf.dim();
    let (cy, cx) = (ny / 2, nx / 2);
    let peak = if ny > 0 && nx > 0 { psf[[cy, cx]] } else { f64::NAN };
    if !(peak > 0.0 && peak.is_finite()) {
        return Err(DeconvError::PsfPeak { x: cx, y: cy, value: peak });
    }
    // Flood fill of the main lobe.
    let mut inside = Array2::from_elem((ny, nx), false);
    let mut stack = vec![(cy, cx)];
    inside[[cy, cx]] = true;
    let mut pixels = Vec::new();
    while let Some((y, x)) = stack.pop() {
        if y == 0 || x == 0 || y + 1 == ny || x + 1 == nx {
            return Err(DeconvError::BeamFit {
                reason: "main lobe reaches the PSF edge",
                value: (pixels.len() + 1) as f64,
            });
        }
        let v = psf[[y, x]] / peak;
        pixels.push((-(x as f64 - cx as f64), y as f64 - cy as f64, v));
        for (yy, xx) in [(y - 1, x), (y + 1, x), (y, x - 1), (y, x + 1)] {
            if !inside[[yy, xx]] && psf[[yy, xx]] / peak >= params.lobe_fraction {
                inside[[yy, xx]] = true;
                stack.push((yy, xx));
            }
        }
    }
    let basis = |u: f64, v: f64| [u * u, 2.0 * u * v, v * v];
    // Log-linear start (the centre pixel adds nothing: −ln 1 = 0).
    let mut ata = [0.0; 9];
    let mut atb = [0.0; 3];
    for &(u, v, p) in &pixels {
        let g = basis(u, v);
        let y = -p.ln();
        accumulate(&mut ata, &mut atb, &g, y);
    }
    let mut theta = solve3(&ata, &atb, pixels.len())?;
    for _ in 0..params.max_iterations {
        let mut ata = [0.0; 9];
        let mut atb = [0.0; 3];
        for &(u, v, p) in &pixels {
            let g = basis(u, v);
            let q = g[0] * theta[0] + g[1] * theta[1] + g[2] * theta[2];
            let model = (-q).exp();
            let jac = [-model * g[0], -model * g[1], -model * g[2]];
            accumulate(&mut ata, &mut atb, &jac, p - model);
        }
        let delta = solve3(&ata, &atb, pixels.len())?;
        for k in 0..3 {
            theta[k] += delta[k];
        }
        let size = theta.iter().fold(0.0f64, |m, t| m.max(t.abs()));
        if delta.iter().all(|d| d.abs() <= 1e-15 * size) {
            break;
        }
    }
    let (a, b, c) = (theta[0], theta[1], theta[2]);
    let det = a * c - b * b;
    if !(a > 0.0 && det > 0.0) {
        return Err(DeconvError::BeamFit {
            reason: "fitted quadratic form is not positive definite",
            value: det,
        });
    }
    let mean = 0.5 * (a + c);
    let half_diff = (0.25 * (a - c) * (a - c) + b * b).sqrt();
    let (lam_min, lam_max) = (mean - half_diff, mean + half_diff);
    // Eigenvector of the smaller eigenvalue (the major axis), in (u, v) = (l, m) components.
    let (eu, ev) = if b.abs() > 0.0 {
        (b, lam_min - a)
    } else if a <= c {
        (1.0, 0.0)
    } else {
        (0.0, 1.0)
    };
    let mut pa = eu.atan2(ev);
    if pa <= -FRAC_PI_2 {
        pa += PI;
    }
    if pa > FRAC_PI_2 {
        pa -= PI;
    }
    Ok(RestoringBeam {
        major_fwhm_rad: 2.0 * (LN_2 / lam_min).sqrt() * cell_rad,
        minor_fwhm_rad: 2.0 * (LN_2 / lam_max).sqrt() * cell_rad,
        position_angle_rad: pa,
    })
}

fn accumulate(ata: &mut [f64; 9], atb: &mut [f64; 3], g: &[f64; 3], y: f64) {
    for i in 0..3 {
        for j in 0..3 {
            ata[i * 3 + j] += g[i] * g[j];
        }
        atb[i] += g[i] * y;
    }
}

fn solve3(ata: &[f64; 9], atb: &[f64; 3], npix: usize) -> Result<[f64; 3], DeconvError> {
    let h = TermHessian::from_matrix(ata.to_vec(), 3, 0).map_err(|_| DeconvError::BeamFit {
        reason: "main lobe has too few pixels to fit three parameters",
        value: npix as f64,
    })?;
    let mut out = [0.0; 3];
    h.solve_into(atb, &mut out);
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn recovers_analytic_gaussian() {
        // An analytic elliptical Gaussian (definition of FWHM) sampled on the grid must be
        // recovered to 1e-6 relative: the model is exact, so only rounding remains.
        let cell = 1e-5;
        for &(maj, min, pa_deg) in &[(6.0, 4.0, 30.0), (9.0, 3.5, -70.0), (5.0, 5.0 * 0.999, 89.0)]
        {
            let truth = RestoringBeam {
                major_fwhm_rad: maj * cell,
                minor_fwhm_rad: min * cell,
                position_angle_rad: f64::to_radians(pa_deg),
            };
            let psf = Array2::from_shape_fn((64, 64), |(y, x)| {
                truth.value_at_pixel_offset(x as f64 - 32.0, y as f64 - 32.0, cell)
            });
            let fit = fit_restoring_beam(&psf, cell, &BeamFitParams::default()).unwrap();
            assert!((fit.major_fwhm_rad / truth.major_fwhm_rad - 1.0).abs() < 1e-6, "{fit:?}");
            assert!((fit.minor_fwhm_rad / truth.minor_fwhm_rad - 1.0).abs() < 1e-6, "{fit:?}");
            // PA is ill-defined as the beam approaches circular: 1e-3 rad for axis ratio 0.999.
            let tol = if maj / min < 1.01 { 1e-3 } else { 1e-6 };
            assert!((fit.position_angle_rad - truth.position_angle_rad).abs() < tol, "{fit:?}");
        }
    }

    #[test]
    fn position_angle_orientation_by_hand() {
        // A beam stretched along the pixel diagonal towards −x, +y: that is +l (east) and +m
        // (north), i.e. PA = +45° north through east. Written out without the beam type.
        let cell = 2e-5;
        let psf = Array2::from_shape_fn((48, 48), |(y, x)| {
            let (dx, dy) = (x as f64 - 24.0, y as f64 - 24.0);
            let along = (-dx + dy) / 2f64.sqrt();
            let across = (dx + dy) / 2f64.sqrt();
            (-4.0 * LN_2 * (along * along / 64.0 + across * across / 16.0)).exp()
        });
        let fit = fit_restoring_beam(&psf, cell, &BeamFitParams::default()).unwrap();
        assert!((fit.position_angle_rad - f64::to_radians(45.0)).abs() < 1e-9, "{fit:?}");
        assert!((fit.major_fwhm_rad - 8.0 * cell).abs() < 1e-9 * cell);
        assert!((fit.minor_fwhm_rad - 4.0 * cell).abs() < 1e-9 * cell);
    }

    #[test]
    fn lobe_touching_edge_is_an_error() {
        let psf = Array2::from_elem((16, 16), 1.0);
        assert!(matches!(
            fit_restoring_beam(&psf, 1e-5, &BeamFitParams::default()),
            Err(DeconvError::BeamFit { .. })
        ));
    }
}
