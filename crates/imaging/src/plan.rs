use crate::error::ImagingError;
use crate::grid_pool::GridPool;
use crate::kernel::EsKernel;
use crate::kernel_poly::PolyKernel;
use crate::params::{GridderParams, WRange, WTerm};
use crate::plane_fft::FftPlan;
use beamfloor_core::ImageGeometry;
use ndarray::Array2;
use num_complex::Complex64;
use rayon::prelude::*;
use rustfft::FftPlanner;
use std::sync::Arc;

/// Grid upsampling factor σ the kernel rule is made for (Barnett et al. 2019 use σ = 2).
pub const UPSAMPLING: f64 = 2.0;

/// The w planes of a w-stacking plan: plane p sits at w_p = w0 + p Δw.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct WPlanes {
    /// w of plane 0, wavelengths.
    pub w0: f64,
    /// Plane spacing Δw, wavelengths.
    pub dw: f64,
    /// Number of planes.
    pub count: usize,
}

impl WPlanes {
    /// Fractional plane coordinate of a sample at `w` wavelengths.
    #[inline]
    pub fn coordinate(&self, w: f64) -> f64 {
        (w - self.w0) / self.dw
    }
}

/// Everything the exponential-of-semicircle gridder needs, computed once for an image geometry,
/// an accuracy and a w range, then reused for any number of `grid`/`degrid` calls: the kernel,
/// the padded grid size, both FFT plans, the per-pixel grid correction and n − 1, and the w planes.
///
/// Grid layout: the padded grid has `pad_nx × pad_ny` cells (the smallest 2^a 3^b 5^c ≥ σ · n,
/// σ = 2). A sample at (u, v) in wavelengths sits at fractional cell
/// s_x = −u · cell · pad_nx, s_y = v · cell · pad_ny (the minus because pixel x runs towards
/// decreasing l), so that exp(+2πi (u l + v m)) = exp(+2πi (s_x j_x / pad_nx + s_y j_y / pad_ny))
/// with j = pixel − centre, and the image is an unnormalised inverse FFT of the grid.
///
/// w-planes ([`WTerm::Stack`]): with x = n − 1 ∈ [x_min, 0] over the field and a shift c, the
/// planes and their screens work with x − c, spaced Δw = 1 / (2 σ max|x − c|), so that the
/// image-domain frequency along w, Δw · |x − c|, stays within the 1/(2σ) band on which the ES
/// kernel reaches ε — the same condition as for u and v on the padded grid. A shifted plan takes
/// c = x_min / 2, the middle of the range, which halves max|x − c| and so doubles Δw and about
/// halves the planes; that is exact, because exp(2πi w x) = exp(2πi w c) · exp(2πi w (x − c)):
/// gridding multiplies every sample's value by exp(+2πi w c) and degridding every predicted value
/// by exp(−2πi w c) (`GridPlan::w_shift_phasor`). Folded plans are always shifted; an unfolded
/// one (for operators that place samples on the planes themselves) only when its operator asks
/// for it and applies that factor. Planes cover [w_min − W/2 Δw, w_max + W/2 Δw]:
/// ⌈(w_max − w_min)/Δw⌉ + W + 1 planes, where [w_min, w_max] is the range of |w| when the plan
/// folds.
/// Pixels with l² + m² ≥ 1 (beyond the horizon) are set to zero.
///
/// Cost and memory: every sample is spread onto W planes (W³ kernel products with w-stacking,
/// W² without), and each plane that holds samples costs one pruned 2-D FFT per output image
/// (only the grid rows with data and the image's columns are transformed: about half a full
/// FFT). Gridding keeps one padded complex grid (16 · pad_nx · pad_ny bytes) per output image,
/// shared by all threads (each owns bands of grid rows); degridding keeps one per input image.
/// Results do not depend on the thread count.
///
/// Folding: the images this operator makes and reads are real, and for a real image the sample
/// at (−u, −v, −w) carries the conjugate of the one at (u, v, w) (gridding: Re(V e^{iφ}) =
/// Re(V̄ e^{−iφ}); degridding: V(−u, −v, −w) = conj V(u, v, w) because the sum of real values
/// times e^{+iφ} is the conjugate of the sum times e^{−iφ}). So every sample of one half is
/// mirrored into the other before it is placed: with w planes the half w < 0, which about halves
/// the planes (they cover only [0, max |w|]); without, the half v < 0, which halves the grid rows
/// that hold data and so the rows transformed along x. Operators that weight samples with
/// direction-dependent kernels, which need not have this symmetry, use an unfolded plan.
#[derive(Clone, Debug)]
pub struct GridPlan {
    pub(crate) geometry: ImageGeometry,
    pub(crate) params: GridderParams,
    pub(crate) kernel: EsKernel,
    /// Piecewise-polynomial taps of `kernel` (the fast path of [`EsKernel::taps`]).
    pub(crate) poly: PolyKernel,
    pub(crate) pad_nx: usize,
    pub(crate) pad_ny: usize,
    /// 1-D transforms along x (length pad_nx) and y (length pad_ny), inverse (+i, gridding)
    /// and forward (−i, degridding); see the pruned 2-D passes in `plane_fft`.
    pub(crate) fft_x_inverse: FftPlan,
    pub(crate) fft_y_inverse: FftPlan,
    pub(crate) fft_x_forward: FftPlan,
    pub(crate) fft_y_forward: FftPlan,
    /// 1 / (ψ̂_x ψ̂_y ψ̂_w) per pixel `[iy][ix]`; zero beyond the horizon.
    pub(crate) inverse_correction: Array2<f64>,
    /// 1 / ψ̂_x per image column and 1 / ψ̂_y per image row: the correction without w planes
    /// is their product (to rounding), which the gridder uses instead of the array above.
    pub(crate) inverse_cx: Vec<f64>,
    pub(crate) inverse_cy: Vec<f64>,
    /// n − 1 per pixel `[iy][ix]` (zero beyond the horizon or when w is ignored).
    pub(crate) n_minus_1: Array2<f64>,
    /// The shift c of n − 1 the w planes and screens use (see above; 0 when w is ignored).
    pub(crate) w_shift: f64,
    /// None when w is ignored (one plane at w = 0, no screen).
    pub(crate) planes: Option<WPlanes>,
    pub(crate) w_range: WRange,
    /// Whether samples of one half are mirrored into the other (see above).
    pub(crate) fold: bool,
    /// Padded grids kept between calls (shared by clones of the plan).
    pub(crate) pool: Arc<GridPool>,
}

impl GridPlan {
    /// Plan the operator for `geometry`, accuracy and w treatment from `params`, and samples whose
    /// w (wavelengths) lies in `w_range` (see [`WRange::of_visibilities`]).
    pub fn new(
        geometry: ImageGeometry,
        params: &GridderParams,
        w_range: WRange,
    ) -> Result<Self, ImagingError> {
        Self::with_folding(geometry, params, w_range, true, true)
    }

    /// [`GridPlan::new`] without folding: every sample keeps its own (u, v, w), and the w planes
    /// cover all of `w_range` (for operators that place samples on the plan's planes themselves).
    /// With `shift`, the planes work with n − 1 − c (see above), and the operator must multiply
    /// each sample's value by `GridPlan::w_shift_phasor`.
    pub(crate) fn unfolded(
        geometry: ImageGeometry,
        params: &GridderParams,
        w_range: WRange,
        shift: bool,
    ) -> Result<Self, ImagingError> {
        Self::with_folding(geometry, params, w_range, false, shift)
    }

    /// exp(sign · 2πi w c) for a sample at `w_lambda` wavelengths (c the planes' shift of n − 1;
    /// sign +1 for gridding, −1 for degridding; 1 when the planes are not shifted).
    #[inline]
    pub(crate) fn w_shift_phasor(&self, w_lambda: f64, sign: f64) -> Complex64 {
        if self.w_shift == 0.0 {
            return Complex64::new(1.0, 0.0);
        }
        Complex64::from_polar(1.0, sign * 2.0 * std::f64::consts::PI * w_lambda * self.w_shift)
    }

    fn with_folding(
        geometry: ImageGeometry,
        params: &GridderParams,
        w_range: WRange,
        fold: bool,
        shift: bool,
    ) -> Result<Self, ImagingError> {
        let bad = |why| ImagingError::Geometry {
            nx: geometry.nx,
            ny: geometry.ny,
            cell_rad: geometry.cell_rad,
            why,
        };
        if geometry.nx < 2 || geometry.ny < 2 || geometry.nx % 2 == 1 || geometry.ny % 2 == 1 {
            return Err(bad("nx and ny must be even and at least 2"));
        }
        if !(geometry.cell_rad.is_finite() && geometry.cell_rad > 0.0 && geometry.cell_rad < 1.0) {
            return Err(bad("the cell must be a positive angle below 1 rad"));
        }
        let w_range = WRange::new(w_range.min_lambda, w_range.max_lambda)?;
        let kernel = EsKernel::for_epsilon(params.epsilon)?;
        let pad_nx = good_fft_size((UPSAMPLING * geometry.nx as f64).ceil() as usize);
        let pad_ny = good_fft_size((UPSAMPLING * geometry.ny as f64).ceil() as usize);
        let (nx, ny) = (geometry.nx, geometry.ny);
        let use_w = params.w_term == WTerm::Stack;

        let mut n_minus_1 = Array2::<f64>::zeros((ny, nx));
        let mut inside = Array2::<bool>::from_elem((ny, nx), true);
        let mut max_x = 0.0f64;
        if use_w {
            let rows = n_minus_1.as_slice_mut().expect("fresh array is contiguous");
            let rows_inside = inside.as_slice_mut().expect("fresh array is contiguous");
            max_x = rows
                .par_chunks_mut(nx)
                .zip(rows_inside.par_chunks_mut(nx))
                .enumerate()
                .map(|(iy, (row, row_inside))| {
                    let mut max_x = 0.0f64;
                    for ix in 0..nx {
                        let (l, m) = geometry.lm_of_pixel(ix as f64, iy as f64);
                        let r2 = l * l + m * m;
                        if r2 < 1.0 {
                            // n − 1 = −r² / (1 + √(1 − r²)): no cancellation near the centre.
                            let x = -r2 / (1.0 + (1.0 - r2).sqrt());
                            row[ix] = x;
                            max_x = max_x.max(-x);
                        } else {
                            row_inside[ix] = false;
                        }
                    }
                    max_x
                })
                .reduce(|| 0.0, f64::max);
        }
        // The w values the planes must hold: with folding, |w| of the range.
        let (w_lo, w_hi) = match (fold, w_range.min_lambda, w_range.max_lambda) {
            (false, lo, hi) => (lo, hi),
            (true, lo, hi) if lo >= 0.0 => (lo, hi),
            (true, lo, hi) if hi <= 0.0 => (-hi, -lo),
            (true, lo, hi) => (0.0, hi.max(-lo)),
        };
        let w_shift = if use_w && shift && max_x > 0.0 { -0.5 * max_x } else { 0.0 };
        let planes = if use_w && max_x > 0.0 {
            let w = kernel.support() as f64;
            // max |x − c| over x ∈ [−max_x, 0].
            let reach = (max_x + w_shift).max(-w_shift);
            let dw = 1.0 / (2.0 * UPSAMPLING * reach);
            let span = ((w_hi - w_lo) / dw).ceil();
            if span.is_nan() || span >= 1e6 {
                return Err(ImagingError::Parameter {
                    name: "w_range",
                    value: format!("[{}, {}]", w_range.min_lambda, w_range.max_lambda),
                    why: "needs more than a million w planes for this field",
                });
            }
            Some(WPlanes {
                w0: w_lo - 0.5 * w * dw,
                dw,
                count: span as usize + kernel.support() + 1,
            })
        } else {
            None
        };

        // ψ̂ along one axis, per pixel: ψ̂((i − n/2) / pad). ψ̂ is even (a sum of cosines, and
        // negating the argument negates it exactly), so it is evaluated once per distance from
        // the centre pixel, in parallel (each value is a quadrature of 4W + 40 cosines).
        let along = |n: usize, pad: usize| -> Vec<f64> {
            let by_distance: Vec<f64> = (0..=n / 2)
                .into_par_iter()
                .map(|d| kernel.fourier(d as f64 / pad as f64))
                .collect();
            (0..n).map(|i| by_distance[i.abs_diff(n / 2)]).collect()
        };
        let cx = along(nx, pad_nx);
        let cy = if (ny, pad_ny) == (nx, pad_nx) { cx.clone() } else { along(ny, pad_ny) };
        // ψ̂ along w depends on a pixel only through r² = l² + m², which is the same (bit for
        // bit, with l and m exact multiples of the cell) for the pixels (±a, ±b) around the
        // centre: evaluate it once per offset (a, b) of one quadrant, row b at a time, from a
        // Chebyshev series on the arguments' range (`EsKernel::fourier_fit`, to 1e-13 of each
        // value or better; a quadrature per pixel pair took most of a w-stacked plan's time). The
        // arguments Δw (n − 1 − c) lie in Δw [−max_x − c, −c], so |ξ| ≤ Δw · reach = 1/(2σ).
        let (hx, hy) = (nx / 2, ny / 2);
        let cw_quadrant: Vec<f64> = match planes {
            Some(p) => {
                let reach = (max_x + w_shift).max(-w_shift);
                let fit = kernel.fourier_fit(p.dw * reach);
                let mut quadrant = vec![0.0; (hy + 1) * (hx + 1)];
                quadrant.par_chunks_mut(hx + 1).enumerate().for_each(|(b, row)| {
                    let m = b as f64 * geometry.cell_rad;
                    // Outside the horizon (r² ≥ 1) the argument is a placeholder: those pixels
                    // are never corrected.
                    let args: Vec<f64> = (0..=hx)
                        .map(|a| {
                            let l = a as f64 * geometry.cell_rad;
                            let r2 = (l * l + m * m).min(1.0);
                            // The same expression as n − 1 above, shifted.
                            p.dw * (-r2 / (1.0 + (1.0 - r2).sqrt()) - w_shift)
                        })
                        .collect();
                    match &fit {
                        Some(fit) => fit.eval_into(&args, row),
                        None => {
                            row.iter_mut().zip(&args).for_each(|(v, &x)| *v = kernel.fourier(x))
                        }
                    }
                });
                quadrant
            }
            None => Vec::new(),
        };
        let mut inverse_correction = Array2::<f64>::zeros((ny, nx));
        inverse_correction
            .as_slice_mut()
            .expect("fresh array is contiguous")
            .par_chunks_mut(nx)
            .enumerate()
            .for_each(|(iy, row)| {
                for (ix, v) in row.iter_mut().enumerate() {
                    if !inside[[iy, ix]] {
                        continue;
                    }
                    let cw = match planes {
                        Some(_) => cw_quadrant[iy.abs_diff(hy) * (hx + 1) + ix.abs_diff(hx)],
                        None => 1.0,
                    };
                    *v = 1.0 / (cx[ix] * cy[iy] * cw);
                }
            });
        let mut planner = FftPlanner::new();
        Ok(Self {
            geometry,
            params: *params,
            poly: PolyKernel::new(&kernel),
            kernel,
            pad_nx,
            pad_ny,
            fft_x_inverse: FftPlan(planner.plan_fft_inverse(pad_nx)),
            fft_y_inverse: FftPlan(planner.plan_fft_inverse(pad_ny)),
            fft_x_forward: FftPlan(planner.plan_fft_forward(pad_nx)),
            fft_y_forward: FftPlan(planner.plan_fft_forward(pad_ny)),
            inverse_cx: cx.iter().map(|c| 1.0 / c).collect(),
            inverse_cy: cy.iter().map(|c| 1.0 / c).collect(),
            inverse_correction,
            n_minus_1,
            w_shift,
            planes,
            w_range,
            fold,
            pool: Arc::default(),
        })
    }

    /// A copy of the plan with an empty grid pool of its own (a clone shares the pool).
    #[cfg(test)]
    pub(crate) fn clone_without_pool(&self) -> Self {
        Self { pool: Arc::default(), ..self.clone() }
    }

    /// The image geometry the plan was made for.
    pub fn image_geometry(&self) -> ImageGeometry {
        self.geometry
    }

    /// The parameters the plan was made with.
    pub fn params(&self) -> GridderParams {
        self.params
    }

    /// The spreading kernel.
    pub fn kernel(&self) -> &EsKernel {
        &self.kernel
    }

    /// Padded grid size (x, y).
    pub fn padded_size(&self) -> (usize, usize) {
        (self.pad_nx, self.pad_ny)
    }

    /// Number of w planes (1 when w is ignored or has no effect on this field).
    pub fn n_w_planes(&self) -> usize {
        self.planes.map_or(1, |p| p.count)
    }

    /// w-plane spacing Δw in wavelengths (None when w is ignored).
    pub fn w_plane_spacing(&self) -> Option<f64> {
        self.planes.map(|p| p.dw)
    }

    /// The w range the plan covers, wavelengths.
    pub fn w_range(&self) -> WRange {
        self.w_range
    }
}

/// Smallest n' ≥ n whose only prime factors are 2, 3 and 5 (fast FFT lengths), kept even: the
/// padded grid size [`GridPlan`] uses for σ·n pixels (callers estimating memory use it too).
pub fn good_fft_size(n: usize) -> usize {
    let mut m = n.max(2);
    loop {
        let mut k = m;
        for p in [2, 3, 5] {
            while k.is_multiple_of(p) {
                k /= p;
            }
        }
        if k == 1 && m.is_multiple_of(2) {
            return m;
        }
        m += 1;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fft_sizes() {
        // 2^a 3^b 5^c and even, by definition.
        assert_eq!(good_fft_size(256), 256);
        assert_eq!(good_fft_size(98), 100);
        assert_eq!(good_fft_size(242), 250);
        assert_eq!(good_fft_size(7), 8);
    }

    #[test]
    fn w_correction_is_the_kernel_transform_at_every_pixel() {
        // Definition: 1 / (ψ̂(j_x/pad_nx) ψ̂(j_y/pad_ny) ψ̂(Δw (n − 1 − c))) per pixel, with every
        // ψ̂ by quadrature (`EsKernel::fourier`, itself checked against a 2000-node rule),
        // evaluated here pixel by pixel. The plan takes ψ̂ along w from a Chebyshev series
        // accepted at 1e-13 of ψ̂; on this range (ξ ≤ 1/4, 16 terms) it is closer, and this
        // test holds the whole correction to 3e-14 (measured; product rounding included).
        // Folded (shifted) and unfolded plans (shifted or not), square and non-square images,
        // fields up to about 40° across (n − 1 down to −0.07).
        for (nx, ny, cell) in [(24, 18, 0.01), (40, 64, 0.012)] {
            let g = ImageGeometry::new(nx, ny, cell);
            let params = GridderParams::default();
            let w = WRange::new(-50.0, 80.0).unwrap();
            for p in [
                GridPlan::new(g, &params, w).unwrap(),
                GridPlan::unfolded(g, &params, w, false).unwrap(),
                GridPlan::unfolded(g, &params, w, true).unwrap(),
            ] {
                let (k, dw) = (p.kernel(), p.w_plane_spacing().unwrap());
                let (px, py) = p.padded_size();
                for iy in 0..ny {
                    for ix in 0..nx {
                        let cx = k.fourier((ix as f64 - (nx / 2) as f64) / px as f64);
                        let cy = k.fourier((iy as f64 - (ny / 2) as f64) / py as f64);
                        let xi = dw * (p.n_minus_1[[iy, ix]] - p.w_shift);
                        let want = 1.0 / (cx * cy * k.fourier(xi));
                        let got = p.inverse_correction[[iy, ix]];
                        assert!(
                            (got - want).abs() <= 3e-14 * want.abs(),
                            "{nx}x{ny} shift {} pixel ({ix}, {iy}): {got} {want}",
                            p.w_shift
                        );
                    }
                }
            }
        }
    }

    #[test]
    fn plain_correction_is_the_kernel_transform_at_every_pixel() {
        // Definition: 1 / (ψ̂(j_x/pad_nx) ψ̂(j_y/pad_ny)) per pixel, j = index − n/2, evaluated
        // here pixel by pixel; the plan evaluates ψ̂ once per distance from the centre, which
        // is the same value to the bit (ψ̂ is a sum of cosines and cos is even), so the
        // comparison is exact. Square and non-square images.
        for (nx, ny) in [(24, 18), (16, 16), (10, 30)] {
            let g = ImageGeometry::new(nx, ny, 0.01);
            let params = GridderParams { w_term: WTerm::Ignore, ..GridderParams::default() };
            let p = GridPlan::new(g, &params, WRange::new(-50.0, 80.0).unwrap()).unwrap();
            let k = p.kernel();
            let (px, py) = p.padded_size();
            for iy in 0..ny {
                for ix in 0..nx {
                    let cx = k.fourier((ix as f64 - (nx / 2) as f64) / px as f64);
                    let cy = k.fourier((iy as f64 - (ny / 2) as f64) / py as f64);
                    assert_eq!(p.inverse_correction[[iy, ix]], 1.0 / (cx * cy), "({ix},{iy})");
                }
            }
        }
    }

    #[test]
    fn plane_spacing_rule() {
        // Δw = 1/(2σ max|n − 1 − c|) with max|n − 1| = x at the field corner (definition of the
        // rule above): c = −x/2 when the plan folds, so Δw = 1/(σ x); c = 0 unfolded, Δw =
        // 1/(2σ x).
        let g = ImageGeometry::new(64, 64, 1e-3);
        let p = GridPlan::new(g, &GridderParams::default(), WRange::new(-100.0, 300.0).unwrap())
            .unwrap();
        let r2 = 2.0 * (32.0e-3f64).powi(2);
        let x = 1.0 - (1.0 - r2).sqrt();
        let dw = p.w_plane_spacing().unwrap();
        assert!((dw - 1.0 / (2.0 * x)).abs() < 1e-9 * dw);
        assert!((p.w_shift + 0.5 * x).abs() < 1e-12 * x);
        // Folded, the planes hold |w| ∈ [0, 300]; unfolded, all of [−100, 300].
        assert_eq!(p.n_w_planes(), (300.0 / dw).ceil() as usize + p.kernel().support() + 1);
        let unfolded = GridPlan::unfolded(
            g,
            &GridderParams::default(),
            WRange::new(-100.0, 300.0).unwrap(),
            false,
        )
        .unwrap();
        let dw_unfolded = unfolded.w_plane_spacing().unwrap();
        assert!((dw_unfolded - 1.0 / (4.0 * x)).abs() < 1e-9 * dw_unfolded);
        assert_eq!(unfolded.w_shift, 0.0);
        assert_eq!(
            unfolded.n_w_planes(),
            (400.0 / dw_unfolded).ceil() as usize + p.kernel().support() + 1
        );
        let negative =
            GridPlan::new(g, &GridderParams::default(), WRange::new(-300.0, -100.0).unwrap())
                .unwrap();
        assert_eq!(negative.n_w_planes(), (200.0 / dw).ceil() as usize + p.kernel().support() + 1);
        let ignore = GridderParams { w_term: WTerm::Ignore, ..GridderParams::default() };
        assert_eq!(GridPlan::new(g, &ignore, p.w_range()).unwrap().n_w_planes(), 1);
        assert!(GridPlan::new(ImageGeometry::new(63, 64, 1e-3), &ignore, p.w_range()).is_err());
    }
}
