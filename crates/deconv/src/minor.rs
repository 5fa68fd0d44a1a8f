use crate::convolve::convolve_same;
use crate::hessian::check_shape;
use crate::plan::MinorCyclePlan;
use crate::DeconvError;
use ndarray::Array2;

/// Largest number of Taylor terms a minor cycle accepts (the Hessian of more terms is
/// numerically singular for any realistic fractional bandwidth).
pub const MAX_TERMS: usize = 8;

/// Knobs of one minor cycle. Defaults in [`CleanParams::default`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CleanParams {
    /// Loop gain g in (0, 1]: each component removes g times the fitted amplitude. Default 0.1.
    pub loop_gain: f64,
    /// Stop when max |residual term 0| over the search region is at or below this (Jy/beam,
    /// in the residuals' units). Default 0.
    pub threshold: f64,
    /// Maximum number of components in this call. Default 1000.
    pub max_iterations: usize,
    /// Abort with [`DeconvError::MinorCycleDiverged`] if the peak residual exceeds this factor
    /// times its value at the start of the call. Default 2.
    pub divergence_factor: f64,
}

impl Default for CleanParams {
    fn default() -> Self {
        Self { loop_gain: 0.1, threshold: 0.0, max_iterations: 1000, divergence_factor: 2.0 }
    }
}

impl CleanParams {
    /// Check ranges.
    pub fn validate(&self) -> Result<(), DeconvError> {
        if !(self.loop_gain > 0.0 && self.loop_gain <= 1.0) {
            return Err(DeconvError::Parameter {
                name: "loop_gain",
                value: self.loop_gain,
                allowed: "(0, 1]",
            });
        }
        if !(self.threshold >= 0.0 && self.threshold.is_finite()) {
            return Err(DeconvError::Parameter {
                name: "threshold",
                value: self.threshold,
                allowed: "finite, >= 0",
            });
        }
        if self.divergence_factor.is_nan() || self.divergence_factor <= 1.0 {
            return Err(DeconvError::Parameter {
                name: "divergence_factor",
                value: self.divergence_factor,
                allowed: "> 1",
            });
        }
        Ok(())
    }
}

/// Why a minor cycle stopped.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum MinorStop {
    /// The peak residual reached the threshold.
    Threshold,
    /// The iteration cap was reached.
    IterationCap,
    /// No pixel in the search region has a positive criterion (residual exactly zero or empty mask).
    NothingLeft,
}

/// What a minor cycle did.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MinorCycleOutcome {
    /// Components subtracted.
    pub iterations: usize,
    /// max |residual term 0| over the search region at the start.
    pub start_peak: f64,
    /// The same at the end.
    pub end_peak: f64,
    /// Flux (term 0, Jy) added to the model.
    pub flux_added: f64,
    /// Why it stopped.
    pub stop: MinorStop,
}

/// Run one minor cycle: subtract components from `residuals` (N residual Taylor images,
/// `[ny, nx]`) and add them to `model` (N Taylor model images, Jy/pixel), in place.
///
/// Each iteration (Cornwell 2008 for the scales; Rau & Cornwell 2011, A&A 532, A71, §3 for the
/// terms):
/// 1. for every scale s and pixel p in the search region (`mask` true, or everywhere, and only
///    where the scale function Φ_s lies wholly inside the image) solve
///    a = (H^{ss})⁻¹ r^s(p), where r^s_i = (R_i ⊗ Φ_s)(p) and H^{ss}_ij = (PSF_{i+j} ⊗ Φ_s ⊗ Φ_s)(0);
/// 2. choose the (s, p) maximising bias_s² · Σ_i a_i r^s_i. Σ a_i r_i = rᵀ H⁻¹ r is the drop in
///    χ² from fitting that one component exactly (χ² = ‖d − model‖²; the paper selects
///    components by this reduction), so it weighs all N terms by how much data they explain,
///    is sign-free, and for N = 1 on the point scale reduces to Högbom's max |R| (r²/H₀₀);
///    choosing on I0 alone would ignore the spectral terms' share of the fit;
/// 3. add g · a_j Φ_s at p to model term j, and subtract g · Σ_j a_j (PSF_{i+j} ⊗ Φ_s ⊗ Φ_q)
///    shifted to p from every smoothed residual R_i ⊗ Φ_q (a direct patch subtraction over the
///    overlap of the PSF with the image).
///
/// Stops at the threshold on max |R_0| (unsmoothed), the iteration cap, or when nothing is left.
pub fn run_minor_cycle(
    plan: &MinorCyclePlan,
    residuals: &mut [Array2<f64>],
    model: &mut [Array2<f64>],
    params: &CleanParams,
    mask: Option<&Array2<bool>>,
) -> Result<MinorCycleOutcome, DeconvError> {
    params.validate()?;
    let n = plan.nterms;
    if residuals.len() != n {
        return Err(DeconvError::TermCount {
            what: "residual images",
            expected: n,
            got: residuals.len(),
        });
    }
    if model.len() != n {
        return Err(DeconvError::TermCount { what: "model images", expected: n, got: model.len() });
    }
    let dim = residuals[0].dim();
    for r in residuals.iter() {
        check_shape("residual image", r, dim)?;
    }
    for m in model.iter() {
        check_shape("model image", m, dim)?;
    }
    if let Some(m) = mask {
        if m.dim() != dim {
            return Err(DeconvError::ShapeMismatch {
                what: "mask",
                expected_ny: dim.0,
                expected_nx: dim.1,
                got_ny: m.dim().0,
                got_nx: m.dim().1,
            });
        }
    }
    for (t, r) in residuals.iter().enumerate() {
        if let Some(((y, x), _)) = r.indexed_iter().find(|(_, v)| !v.is_finite()) {
            return Err(DeconvError::NonFinite { term: t, x, y });
        }
    }
    let (ny, nx) = dim;
    let npix = ny * nx;
    let region: Vec<usize> = match mask {
        Some(m) => m.iter().enumerate().filter(|(_, &b)| b).map(|(i, _)| i).collect(),
        None => (0..npix).collect(),
    };
    let nl = plan.levels.len();
    // Scale s searches only where Φ_s fits inside the image. There the tracked R_i ⊗ Φ_s (updated
    // with PSF ⊗ Φ_s ⊗ Φ_q patches, which assume the residual continues beyond the edge) equals
    // the convolution of the in-image residual exactly; nearer the edge the two drift apart and
    // the search would chase that drift.
    let level_regions: Vec<Vec<usize>> = plan
        .levels
        .iter()
        .map(|level| {
            let (hy, hx) = (level.phi.dim().0 / 2, level.phi.dim().1 / 2);
            region
                .iter()
                .copied()
                .filter(|&p| {
                    let (y, x) = (p / nx, p % nx);
                    y >= hy && x >= hx && y + hy < ny && x + hx < nx
                })
                .collect()
        })
        .collect();
    // smooth[q * n + i]: R_i ⊗ Φ_q, flattened row-major.
    let mut smooth: Vec<Vec<f64>> = Vec::with_capacity(nl * n);
    for level in &plan.levels {
        for r in residuals.iter() {
            let s = if level.phi.len() == 1 {
                r * level.phi[[0, 0]]
            } else {
                convolve_same(r, &level.phi)
            };
            smooth.push(s.iter().copied().collect());
        }
    }
    let point = plan.point_level;
    let peak_of = |smooth: &Vec<Vec<f64>>| {
        region.iter().fold(0.0f64, |m, &p| m.max(smooth[point * n][p].abs()))
    };

    let start_peak = peak_of(&smooth);
    let mut end_peak = start_peak;
    let mut flux_added = 0.0;
    let mut iterations = 0;
    let mut rv = vec![0.0; n];
    let mut best_a = vec![0.0; n];
    let (py, px) = plan.psf_dim;
    let (pcy, pcx) = ((py / 2) as isize, (px / 2) as isize);
    let stop = loop {
        if end_peak <= params.threshold {
            break MinorStop::Threshold;
        }
        if iterations >= params.max_iterations {
            break MinorStop::IterationCap;
        }
        // 1–2: peak search over scales and pixels.
        let mut best = (0.0f64, usize::MAX, 0usize);
        for (s, level) in plan.levels.iter().enumerate() {
            if level.selectable {
                let (crit, p) = search_level(
                    &smooth[s * n..(s + 1) * n],
                    &level_regions[s],
                    &level.hessian,
                    level.bias,
                );
                if crit > best.0 {
                    best = (crit, s, p);
                }
            }
        }
        let (crit, s, p) = best;
        if crit.is_nan() || crit <= 0.0 || s == usize::MAX {
            break MinorStop::NothingLeft;
        }
        for (i, r) in rv.iter_mut().enumerate() {
            *r = smooth[s * n + i][p];
        }
        plan.levels[s].hessian.solve_into(&rv, &mut best_a);
        let (cy, cx) = ((p / nx) as isize, (p % nx) as isize);
        for a in best_a.iter_mut() {
            *a *= params.loop_gain;
        }
        // 3a: model update with the scale function.
        let phi = &plan.levels[s].phi;
        let (fy, fx) = phi.dim();
        let (fcy, fcx) = ((fy / 2) as isize, (fx / 2) as isize);
        for ((iy, ix), &v) in phi.indexed_iter() {
            let y = cy + iy as isize - fcy;
            let x = cx + ix as isize - fcx;
            if y >= 0 && x >= 0 && (y as usize) < ny && (x as usize) < nx {
                for (j, m) in model.iter_mut().enumerate() {
                    m[[y as usize, x as usize]] += best_a[j] * v;
                }
            }
        }
        flux_added += best_a[0];
        // 3b: residual update for every level q and term i.
        let y0 = (cy - pcy).max(0) as usize;
        let y1 = ((cy - pcy + py as isize).min(ny as isize)).max(0) as usize;
        let x0 = (cx - pcx).max(0) as usize;
        let x1 = ((cx - pcx + px as isize).min(nx as isize)).max(0) as usize;
        for q in 0..nl {
            for i in 0..n {
                let target = &mut smooth[q * n + i];
                for (j, &a) in best_a.iter().enumerate() {
                    let kern = &plan.cross[plan.cross_index(s, q, i + j)];
                    for y in y0..y1 {
                        let ky = (y as isize - cy + pcy) as usize;
                        let kx0 = (x0 as isize - cx + pcx) as usize;
                        let krow = &kern[ky * px + kx0..ky * px + kx0 + (x1 - x0)];
                        let trow = &mut target[y * nx + x0..y * nx + x1];
                        for (t, k) in trow.iter_mut().zip(krow) {
                            *t -= a * k;
                        }
                    }
                }
            }
        }
        iterations += 1;
        end_peak = peak_of(&smooth);
        if end_peak > params.divergence_factor * start_peak {
            return Err(DeconvError::MinorCycleDiverged {
                iteration: iterations,
                peak: end_peak,
                start: start_peak,
                factor: params.divergence_factor,
            });
        }
    };
    for (i, r) in residuals.iter_mut().enumerate() {
        for (dst, &src) in r.iter_mut().zip(&smooth[point * n + i]) {
            *dst = src;
        }
    }
    Ok(MinorCycleOutcome { iterations, start_peak, end_peak, flux_added, stop })
}

/// Largest bias² · rᵀ H⁻¹ r over `region` for one scale: (criterion, pixel). The principal
/// solution itself is only formed for the winner; N = 1 gets its own loop (r² · H⁻¹ · bias²).
fn search_level(
    planes: &[Vec<f64>],
    region: &[usize],
    hessian: &crate::TermHessian,
    bias: f64,
) -> (f64, usize) {
    let n = planes.len();
    let b2 = bias * bias;
    let mut best = (0.0f64, usize::MAX);
    if n == 1 {
        let k = b2 * hessian.inverse_get(0, 0);
        let plane = &planes[0];
        for &p in region {
            let r = plane[p];
            let c = k * r * r;
            if c > best.0 {
                best = (c, p);
            }
        }
        return best;
    }
    let mut inv = [0.0f64; MAX_TERMS * MAX_TERMS];
    for i in 0..n {
        for j in 0..n {
            inv[i * n + j] = b2 * hessian.inverse_get(i, j);
        }
    }
    let mut r = [0.0f64; MAX_TERMS];
    for &p in region {
        for (ri, plane) in r.iter_mut().zip(planes) {
            *ri = plane[p];
        }
        let mut c = 0.0;
        for i in 0..n {
            let row = &inv[i * n..i * n + n];
            let a: f64 = row.iter().zip(&r[..n]).map(|(h, x)| h * x).sum();
            c += a * r[i];
        }
        if c > best.0 {
            best = (c, p);
        }
    }
    best
}
