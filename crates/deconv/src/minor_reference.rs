//! The minor cycle written as three plain passes per iteration (search every scale and pixel,
//! subtract the component from every smoothed residual, find the peak |R_0|): the slow,
//! obviously-correct reference for the fused sweep of [`crate::run_minor_cycle`], which must
//! reproduce it bit for bit. Test-only.
use crate::convolve::convolve_same;
use crate::minor::{CleanParams, MinorCycleOutcome, MinorStop, MAX_TERMS};
use crate::plan::MinorCyclePlan;
use crate::DeconvError;
use ndarray::Array2;

/// Same contract as [`crate::run_minor_cycle`] for valid inputs (no argument checks).
pub(crate) fn run_minor_cycle_reference(
    plan: &MinorCyclePlan,
    residuals: &mut [Array2<f64>],
    model: &mut [Array2<f64>],
    params: &CleanParams,
    mask: Option<&Array2<bool>>,
) -> Result<MinorCycleOutcome, DeconvError> {
    let n = plan.nterms;
    let dim = residuals[0].dim();
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{run_minor_cycle, ScaleSet};

    /// Spectral PSF k on a `size`² grid: Σ_c w_c^k B(r f_c) / 5 over five channels
    /// f = 0.75 … 1.25, B a Gaussian main lobe (FWHM 4 px) with a negative ring sidelobe and a
    /// slight ellipticity (so the PSF is not symmetric under x ↔ y).
    fn psf(term: usize, size: usize) -> Array2<f64> {
        let c = (size / 2) as f64;
        Array2::from_shape_fn((size, size), |(y, x)| {
            let (dx, dy) = (x as f64 - c, 1.1 * (y as f64 - c));
            let r0 = (dx * dx + dy * dy).sqrt();
            [0.75f64, 0.875, 1.0, 1.125, 1.25]
                .iter()
                .map(|&f| {
                    let r = r0 * f;
                    let beam = (-4.0 * std::f64::consts::LN_2 * r * r / 16.0).exp()
                        - 0.08 * (-(r - 7.0).powi(2) / 6.0).exp();
                    (f - 1.0).powi(term as i32) * beam / 5.0
                })
                .sum()
        })
    }

    /// Dirty Taylor images of a few points and one Gaussian blob, from the spectral PSFs.
    fn dirty(psfs: &[Array2<f64>], nterms: usize, n: usize) -> Vec<Array2<f64>> {
        let mut sky = Array2::zeros((n, n));
        for (k, &(y, x, f)) in
            [(10usize, 12usize, 1.0), (30, 41, -0.3), (44, 20, 0.6), (21, 33, 0.2)]
                .iter()
                .enumerate()
        {
            sky[[y, x]] = f * (1.0 + 0.1 * k as f64);
        }
        for y in 0..n {
            for x in 0..n {
                let r2 = (x as f64 - 38.0).powi(2) + (y as f64 - 14.0).powi(2);
                sky[[y, x]] += 0.05 * (-r2 / 18.0).exp();
            }
        }
        // Spectral index −0.7 folded into term 1 crudely: R_t = Σ_k PSF_{t+k} ⊗ I_k with
        // I_1 = −0.7 I_0 (only the shapes matter here).
        (0..nterms)
            .map(|t| {
                let mut r = convolve_same(&sky, &psfs[t]);
                if nterms > 1 {
                    r.scaled_add(-0.7, &convolve_same(&sky, &psfs[t + 1]));
                }
                r
            })
            .collect()
    }

    fn check(nterms: usize, widths: &[f64], psf_size: usize, masked: bool) {
        let n = 56;
        let psfs: Vec<Array2<f64>> = (0..2 * nterms - 1).map(|k| psf(k, psf_size)).collect();
        let plan = MinorCyclePlan::new(&psfs, nterms, &ScaleSet::gaussian(widths)).unwrap();
        let d = dirty(&psfs, nterms, n);
        let mask = masked.then(|| Array2::from_shape_fn((n, n), |(y, x)| (x + 2 * y) % 7 != 0));
        let params = CleanParams { loop_gain: 0.2, max_iterations: 150, ..Default::default() };
        let zeros = || (0..nterms).map(|_| Array2::zeros((n, n))).collect::<Vec<_>>();
        let (mut r_fast, mut m_fast) = (d.clone(), zeros());
        let (mut r_ref, mut m_ref) = (d, zeros());
        let fast =
            run_minor_cycle(&plan, &mut r_fast, &mut m_fast, &params, mask.as_ref()).unwrap();
        let slow = run_minor_cycle_reference(&plan, &mut r_ref, &mut m_ref, &params, mask.as_ref())
            .unwrap();
        // The fused sweep performs the same floating-point operations per pixel in the same
        // order and breaks ties the same way, so everything must agree exactly.
        assert_eq!(fast, slow, "N={nterms} scales {widths:?}");
        assert!(fast.iterations > 20, "the test must exercise many iterations");
        assert_eq!(r_fast, r_ref);
        assert_eq!(m_fast, m_ref);
    }

    /// Σ_j PSF_{i+j} ⊛ model_j subtracted from the dirty images (convolve_same is checked
    /// against the direct sum in `convolve.rs`): the exact residuals of a model.
    fn exact_residuals(
        psfs: &[Array2<f64>],
        dirty: &[Array2<f64>],
        model: &[Array2<f64>],
    ) -> Vec<Array2<f64>> {
        dirty
            .iter()
            .enumerate()
            .map(|(i, d)| {
                let mut r = d.clone();
                for (j, m) in model.iter().enumerate() {
                    r -= &convolve_same(m, &psfs[i + j]);
                }
                r
            })
            .collect()
    }

    /// Largest |a − b| over two image sets, relative to the largest |b|.
    fn relative_difference(a: &[Array2<f64>], b: &[Array2<f64>]) -> f64 {
        let scale = b.iter().flat_map(|x| x.iter()).fold(0.0f64, |m, v| m.max(v.abs()));
        let diff = a
            .iter()
            .zip(b)
            .flat_map(|(x, y)| x.iter().zip(y.iter()))
            .fold(0.0f64, |m, (p, q)| m.max((p - q).abs()));
        diff / scale
    }

    /// With a PSF patch the fast path must select what the plain loop run on PSFs that are zero
    /// outside the patch selects (subtracting a zero changes no bit; the Hessians come from the
    /// centre), for fewer components than its first exact refresh; the residuals it returns
    /// are then refreshed, so they must be the exact residuals of its model.
    fn check_patch(nterms: usize, sidelobe: f64) {
        let (n, size) = (56, 112);
        let psfs: Vec<Array2<f64>> = (0..2 * nterms - 1).map(|k| psf(k, size)).collect();
        let plan = MinorCyclePlan::multi_term(&psfs, nterms).unwrap();
        let h = plan.psf_patch_half_width(sidelobe);
        assert!(h > 3 && h < size / 2, "patch {h} must cut the PSF for the test to mean anything");
        // Definition check of the patch: the largest |PSF_0| outside it is at most the level,
        // and the ring just inside exceeds it.
        let c = size / 2;
        let cheb = |y: usize, x: usize| y.abs_diff(c).max(x.abs_diff(c));
        let outside =
            psfs[0].indexed_iter().filter(|((y, x), _)| cheb(*y, *x) > h).map(|(_, v)| v.abs());
        assert!(outside.fold(0.0, f64::max) <= sidelobe * psfs[0][[c, c]]);
        let ring =
            psfs[0].indexed_iter().filter(|((y, x), _)| cheb(*y, *x) == h).map(|(_, v)| v.abs());
        assert!(ring.fold(0.0, f64::max) > sidelobe * psfs[0][[c, c]]);
        let cut: Vec<Array2<f64>> = psfs
            .iter()
            .map(|p| {
                let mut p = p.clone();
                p.indexed_iter_mut().for_each(|((y, x), v)| {
                    if cheb(y, x) > h {
                        *v = 0.0
                    }
                });
                p
            })
            .collect();
        let plan_cut = MinorCyclePlan::multi_term(&cut, nterms).unwrap();
        let d = dirty(&psfs, nterms, n);
        let zeros = || (0..nterms).map(|_| Array2::zeros((n, n))).collect::<Vec<_>>();
        let params = CleanParams { loop_gain: 0.2, max_iterations: 60, ..Default::default() };
        assert!(params.max_iterations < crate::minor::REFRESH_FIRST);
        let patched = CleanParams { psf_patch_sidelobe: sidelobe, ..params };
        let (mut r_fast, mut m_fast) = (d.clone(), zeros());
        let (mut r_ref, mut m_ref) = (d.clone(), zeros());
        let fast = run_minor_cycle(&plan, &mut r_fast, &mut m_fast, &patched, None).unwrap();
        let slow =
            run_minor_cycle_reference(&plan_cut, &mut r_ref, &mut m_ref, &params, None).unwrap();
        assert_eq!(fast.iterations, slow.iterations, "N={nterms} patch {h}");
        assert_eq!(fast.stop, slow.stop);
        assert_eq!(fast.flux_added, slow.flux_added);
        assert_eq!(m_fast, m_ref);
        // The patch left sidelobes out (the tracked residuals are not exact) ...
        let exact = exact_residuals(&psfs, &d, &m_fast);
        assert!(relative_difference(&r_ref, &exact) > 1e-6, "the patch must cut something");
        // ... and the refresh put them back: FFT round-off only (1e-12 relative is generous
        // for 112² FFTs; common practice, no published bound).
        assert!(relative_difference(&r_fast, &exact) < 1e-12);
        let peak = r_fast[0].iter().fold(0.0f64, |m, v| m.max(v.abs()));
        assert_eq!(fast.end_peak, peak);
    }

    /// A long patched minor cycle (many refreshes, a patch that drops sidelobes of a few per
    /// cent) on a field with a noise-like floor: it must reach the same threshold as the
    /// whole-PSF minor cycle with a similar number of components and return exact residuals.
    #[test]
    fn psf_patch_with_refreshes_converges_like_the_whole_psf() {
        use rand::{Rng, SeedableRng};
        let (nterms, n) = (2, 56);
        let psfs: Vec<Array2<f64>> = (0..2 * nterms - 1).map(|k| psf(k, 112)).collect();
        let plan = MinorCyclePlan::multi_term(&psfs, nterms).unwrap();
        let mut d = dirty(&psfs, nterms, n);
        // A floor of many faint points (fixed seed) spread over the field, like the residual
        // structure a real minor cycle chases.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        let mut floor = Array2::zeros((n, n));
        for _ in 0..300 {
            let (y, x) = (rng.random_range(0..n), rng.random_range(0..n));
            floor[[y, x]] += rng.random_range(-0.02..0.02);
        }
        for (t, r) in d.iter_mut().enumerate() {
            *r += &convolve_same(&floor, &psfs[t]);
        }
        let zeros = || (0..nterms).map(|_| Array2::zeros((n, n))).collect::<Vec<_>>();
        let params = CleanParams {
            loop_gain: 0.1,
            threshold: 2e-3,
            max_iterations: 20_000,
            ..Default::default()
        };
        let patched = CleanParams { psf_patch_sidelobe: 0.05, ..params };
        assert!(plan.psf_patch_half_width(0.05) < 20, "the patch must cut the PSF");
        let (mut r_whole, mut m_whole) = (d.clone(), zeros());
        let (mut r_patch, mut m_patch) = (d.clone(), zeros());
        let whole = run_minor_cycle(&plan, &mut r_whole, &mut m_whole, &params, None).unwrap();
        let patch = run_minor_cycle(&plan, &mut r_patch, &mut m_patch, &patched, None).unwrap();
        assert_eq!(whole.stop, MinorStop::Threshold);
        assert_eq!(patch.stop, MinorStop::Threshold);
        assert!(patch.end_peak <= params.threshold);
        assert!(
            whole.iterations > 1000,
            "the floor must take many components ({})",
            whole.iterations
        );
        // Selection between refreshes works on residuals a few per cent off, so the order of
        // components differs; the number needed should not differ by more than a tenth (our
        // tolerance for "similar"; measured 4101 against 4100).
        let ratio = patch.iterations as f64 / whole.iterations as f64;
        eprintln!(
            "whole PSF {} components, flux {:.6}; patch {} components, flux {:.6}",
            whole.iterations, whole.flux_added, patch.iterations, patch.flux_added
        );
        assert!((ratio - 1.0).abs() < 0.1, "{} vs {}", patch.iterations, whole.iterations);
        let exact = exact_residuals(&psfs, &d, &m_patch);
        assert!(relative_difference(&r_patch, &exact) < 1e-12);
        // Same total flux within the floor's level times the component count's share.
        assert!((patch.flux_added - whole.flux_added).abs() < 0.05 * whole.flux_added.abs());
    }

    #[test]
    fn psf_patch_matches_plain_passes_on_a_cut_psf() {
        check_patch(1, 0.01);
        check_patch(2, 0.003);
    }

    #[test]
    fn fused_sweep_matches_plain_passes_hogbom() {
        check(1, &[0.0], 112, false);
        // A PSF smaller than twice the image: the subtraction is truncated to the overlap.
        check(1, &[0.0], 40, true);
    }

    #[test]
    fn fused_sweep_matches_plain_passes_multi_term() {
        check(2, &[0.0], 112, false);
        check(3, &[0.0], 112, true);
    }

    #[test]
    fn fused_sweep_matches_plain_passes_multi_scale() {
        check(2, &[0.0, 3.0, 6.0], 112, true);
        // No point scale among the selectable ones: the monitoring point level is added.
        check(1, &[4.0], 60, false);
    }
}
