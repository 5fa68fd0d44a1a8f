//! The one pass over the image that each minor-cycle iteration makes: subtract the last
//! component's scale-convolved spectral PSFs from every smoothed residual, and in the same sweep
//! find the next component (the largest search criterion per scale) and the peak |R_0|.
//!
//! The three steps used to be three passes over all N·L residual planes; fused, each pixel is
//! loaded once per iteration, and row bands are shared out over the rayon pool. Every pixel sees
//! exactly the arithmetic of the separate passes in the same order (its N·L updates in the order
//! (level, term, term of the component), then the criterion), and ties are broken as a scan in
//! ascending pixel order would break them (bands are combined in order with a strict `>`), so the
//! result is bit-for-bit that of the plain loop (checked against it in `minor_reference.rs`).
//!
//! The search result of every image row is cached ([`RowCache`]), so a sweep only visits the
//! rows the component's PSF patch touches; with the whole PSF that is every row it overlaps, with
//! a [`crate::CleanParams::psf_patch_sidelobe`] patch only the patch's rows.
use crate::plan::MinorCyclePlan;
use crate::MAX_TERMS;
use rayon::prelude::*;

/// Where and how one scale is searched: the pixel box in which its scale function fits inside
/// the image, and bias² H⁻¹ of its Hessian (row-major N×N).
pub(crate) struct LevelSearch {
    pub y0: usize,
    pub y1: usize,
    pub x0: usize,
    pub x1: usize,
    pub selectable: bool,
    pub inv: [f64; MAX_TERMS * MAX_TERMS],
}

impl LevelSearch {
    /// The search set-up of every level of `plan` on an `ny × nx` image.
    pub fn for_plan(plan: &MinorCyclePlan, ny: usize, nx: usize) -> Vec<Self> {
        let n = plan.nterms;
        plan.levels
            .iter()
            .map(|level| {
                let (hy, hx) = (level.phi.dim().0 / 2, level.phi.dim().1 / 2);
                let b2 = level.bias * level.bias;
                let mut inv = [0.0; MAX_TERMS * MAX_TERMS];
                for i in 0..n {
                    for j in 0..n {
                        inv[i * n + j] = b2 * level.hessian.inverse_get(i, j);
                    }
                }
                // y ≥ hy and y + hy < ny (empty when the function is wider than the image).
                let (y0, y1) = (hy, ny.saturating_sub(hy).max(hy));
                let (x0, x1) = (hx, nx.saturating_sub(hx).max(hx));
                Self { y0, y1, x0, x1, selectable: level.selectable, inv }
            })
            .collect()
    }
}

/// A component to subtract: scale `s` at pixel (cy, cx) with loop-gain-scaled amplitudes `a`.
pub(crate) struct Component<'a> {
    pub s: usize,
    pub cy: usize,
    pub cx: usize,
    pub a: &'a [f64],
}

/// The best (criterion, pixel) of every level and the peak |R_0| of every image row, as of the
/// last sweep that visited the row.
pub(crate) struct RowCache {
    /// `best[y * levels + s]`.
    best: Vec<(f64, usize)>,
    peak: Vec<f64>,
}

impl RowCache {
    pub fn new(ny: usize, levels: usize) -> Self {
        Self { best: vec![(0.0, usize::MAX); ny * levels], peak: vec![0.0; ny] }
    }
}

/// What a sweep found: the best (criterion, scale, pixel) over all selectable scales
/// (scale `usize::MAX` when no pixel had a positive criterion) and max |R_0| over the region.
#[derive(Clone, Copy, Debug)]
pub(crate) struct SweepResult {
    pub crit: f64,
    pub scale: usize,
    pub pixel: usize,
    pub peak: f64,
}

/// Subtract `component` (if any) from the smoothed residuals `smooth[q · N + i]` (R_i ⊗ Φ_q,
/// row-major `ny × nx`) over the PSF patch of half-widths `patch` (rows, columns) around it, and
/// search them. Without a component every row is visited; with one, the rows of the patch (the
/// others cannot have changed and keep their cached results). `mask` (row-major, true =
/// searchable) restricts the search and the peak, as in [`crate::run_minor_cycle`].
#[allow(clippy::too_many_arguments)]
pub(crate) fn sweep(
    plan: &MinorCyclePlan,
    levels: &[LevelSearch],
    smooth: &mut [Vec<f64>],
    (ny, nx): (usize, usize),
    mask: Option<&[bool]>,
    component: Option<Component<'_>>,
    patch: (usize, usize),
    cache: &mut RowCache,
) -> SweepResult {
    let py = plan.psf_dim.0;
    let pcy = py / 2;
    // Rows to visit: the component's patch rows (clipped to the PSF and the image), or all.
    let rows = match &component {
        None => 0..ny,
        Some(c) => {
            let lo = c.cy.saturating_sub(patch.0.min(pcy));
            let hi = (c.cy + patch.0.min(py - 1 - pcy) + 1).min(ny);
            lo..hi
        }
    };
    let threads = rayon::current_num_threads().max(1);
    let band_rows = rows.len().div_ceil(4 * threads).max(1);
    let mut bands: Vec<Vec<&mut [f64]>> = Vec::new();
    for plane in smooth.iter_mut() {
        let visited = &mut plane[rows.start * nx..rows.end * nx];
        for (b, chunk) in visited.chunks_mut(band_rows * nx).enumerate() {
            if bands.len() <= b {
                bands.push(Vec::with_capacity(levels.len() * plan.nterms));
            }
            bands[b].push(chunk);
        }
    }
    let nl = levels.len();
    let start = rows.start;
    let mut best_rows = &mut cache.best[rows.start * nl..rows.end * nl];
    let mut peak_rows = &mut cache.peak[rows.clone()];
    let mut jobs = Vec::with_capacity(bands.len());
    for (b, planes) in bands.into_iter().enumerate() {
        let r0 = start + b * band_rows;
        let r1 = (r0 + band_rows).min(rows.end);
        let (bh, bt) = best_rows.split_at_mut((r1 - r0) * nl);
        let (ph, pt) = peak_rows.split_at_mut(r1 - r0);
        best_rows = bt;
        peak_rows = pt;
        jobs.push((r0..r1, planes, bh, ph));
    }
    jobs.into_par_iter().for_each(|(band, mut planes, best, peak)| {
        sweep_band(plan, levels, &mut planes, band, nx, mask, component.as_ref(), patch, best, peak)
    });
    // Combine rows in ascending order with a strict `>`: the first maximum in pixel order.
    let mut best = vec![(0.0f64, usize::MAX); nl];
    let mut peak = 0.0f64;
    for y in 0..ny {
        for (s, b) in best.iter_mut().enumerate() {
            let c = cache.best[y * nl + s];
            if c.0 > b.0 {
                *b = c;
            }
        }
        peak = peak.max(cache.peak[y]);
    }
    let mut out = SweepResult { crit: 0.0, scale: usize::MAX, pixel: 0, peak };
    for (s, &(crit, p)) in best.iter().enumerate() {
        if levels[s].selectable && crit > out.crit {
            out = SweepResult { crit, scale: s, pixel: p, peak };
        }
    }
    out
}

/// The sweep of image rows `rows`; `planes[k]` holds those rows of plane k.
#[allow(clippy::too_many_arguments)]
fn sweep_band(
    plan: &MinorCyclePlan,
    levels: &[LevelSearch],
    planes: &mut [&mut [f64]],
    rows: std::ops::Range<usize>,
    nx: usize,
    mask: Option<&[bool]>,
    component: Option<&Component<'_>>,
    patch: (usize, usize),
    best_rows: &mut [(f64, usize)],
    peak_rows: &mut [f64],
) {
    let n = plan.nterms;
    let nl = levels.len();
    let (py, px) = plan.psf_dim;
    let (pcy, pcx) = ((py / 2) as isize, (px / 2) as isize);
    let point = plan.point_level;
    for y in rows.clone() {
        let off = (y - rows.start) * nx;
        let best = &mut best_rows[(y - rows.start) * nl..(y - rows.start + 1) * nl];
        best.fill((0.0, usize::MAX));
        if let Some(c) = component {
            let (cy, cx) = (c.cy as isize, c.cx as isize);
            let ky = y as isize - cy + pcy;
            if ky >= 0 && ky < py as isize && (y as isize - cy).unsigned_abs() <= patch.0 {
                let hx = patch.1 as isize;
                let x0 = (cx - pcx).max(cx - hx).max(0) as usize;
                let x1 =
                    ((cx - pcx + px as isize).min(cx + hx + 1).min(nx as isize)).max(0) as usize;
                if x1 > x0 {
                    let kx0 = (x0 as isize - cx + pcx) as usize;
                    let krow0 = ky as usize * px + kx0;
                    for q in 0..nl {
                        for i in 0..n {
                            let trow = &mut planes[q * n + i][off + x0..off + x1];
                            let krow = |j: usize| {
                                let kern = &plan.cross[plan.cross_index(c.s, q, i + j)];
                                &kern[krow0..krow0 + (x1 - x0)]
                            };
                            // One pass per term of the component; for N = 2 and 3 the passes
                            // are fused into one loop that does, per pixel, the same
                            // subtractions in the same order (so the same bits) with the row
                            // loaded and stored once.
                            match n {
                                2 => subtract_fused(trow, [krow(0), krow(1)], [c.a[0], c.a[1]]),
                                3 => subtract_fused(
                                    trow,
                                    [krow(0), krow(1), krow(2)],
                                    [c.a[0], c.a[1], c.a[2]],
                                ),
                                _ => {
                                    for (j, &a) in c.a.iter().enumerate() {
                                        for (t, k) in trow.iter_mut().zip(krow(j)) {
                                            *t -= a * k;
                                        }
                                    }
                                }
                            }
                        }
                    }
                }
            }
        }
        let mrow = mask.map(|m| &m[y * nx..(y + 1) * nx]);
        // Peak |R_0| over the region (point level, every column).
        let r0 = &planes[point * n][off..off + nx];
        peak_rows[y - rows.start] = match mrow {
            None => r0.iter().fold(0.0f64, |m, v| m.max(v.abs())),
            Some(mr) => {
                r0.iter().zip(mr).filter(|(_, &b)| b).fold(0.0f64, |m, (v, _)| m.max(v.abs()))
            }
        };
        for (s, level) in levels.iter().enumerate() {
            if !level.selectable || y < level.y0 || y >= level.y1 || level.x1 <= level.x0 {
                continue;
            }
            let lp = &planes[s * n..(s + 1) * n];
            search_row(lp, off, y * nx, level, mrow, &mut best[s]);
        }
    }
}

/// Criterion bias² rᵀ H⁻¹ r over columns [x0, x1) of one row of one level's N planes.
#[inline]
fn search_row(
    planes: &[&mut [f64]],
    off: usize,
    row_start: usize,
    level: &LevelSearch,
    mrow: Option<&[bool]>,
    best: &mut (f64, usize),
) {
    let n = planes.len();
    let inv = &level.inv;
    if n == 1 {
        let k = inv[0];
        let plane = &planes[0][off..];
        for x in level.x0..level.x1 {
            if mrow.is_some_and(|m| !m[x]) {
                continue;
            }
            let r = plane[x];
            let c = k * r * r;
            if c > best.0 {
                *best = (c, row_start + x);
            }
        }
        return;
    }
    match n {
        2 => search_row_n::<2>(planes, off, row_start, level, mrow, best),
        3 => search_row_n::<3>(planes, off, row_start, level, mrow, best),
        _ => {
            let mut r = [0.0f64; MAX_TERMS];
            for x in level.x0..level.x1 {
                if mrow.is_some_and(|m| !m[x]) {
                    continue;
                }
                for (ri, plane) in r.iter_mut().zip(planes) {
                    *ri = plane[off + x];
                }
                let mut c = 0.0;
                for i in 0..n {
                    let row = &inv[i * n..i * n + n];
                    let a: f64 = row.iter().zip(&r[..n]).map(|(h, x)| h * x).sum();
                    c += a * r[i];
                }
                if c > best.0 {
                    *best = (c, row_start + x);
                }
            }
        }
    }
}

/// `t -= a_0 k_0; t -= a_1 k_1; …` per pixel, in that order.
#[inline]
fn subtract_fused<const N: usize>(trow: &mut [f64], krows: [&[f64]; N], a: [f64; N]) {
    let len = trow.len();
    let krows: [&[f64]; N] = std::array::from_fn(|j| &krows[j][..len]);
    for (x, t) in trow.iter_mut().enumerate() {
        let mut v = *t;
        for j in 0..N {
            v -= a[j] * krows[j][x];
        }
        *t = v;
    }
}

/// [`search_row`] for a term count `N` known at compile time (the common 2 and 3): the same
/// arithmetic in the same order, so the same bits, with the loops over terms unrolled and the
/// planes' rows sliced once.
#[inline]
fn search_row_n<const N: usize>(
    planes: &[&mut [f64]],
    off: usize,
    row_start: usize,
    level: &LevelSearch,
    mrow: Option<&[bool]>,
    best: &mut (f64, usize),
) {
    let (x0, x1) = (level.x0, level.x1);
    let rows: [&[f64]; N] = std::array::from_fn(|i| &planes[i][off + x0..off + x1]);
    let inv: [[f64; N]; N] = std::array::from_fn(|i| std::array::from_fn(|j| level.inv[i * N + j]));
    for k in 0..x1 - x0 {
        if mrow.is_some_and(|m| !m[x0 + k]) {
            continue;
        }
        let r: [f64; N] = std::array::from_fn(|i| rows[i][k]);
        let mut c = 0.0;
        for i in 0..N {
            let a: f64 = inv[i].iter().zip(&r).map(|(h, x)| h * x).sum();
            c += a * r[i];
        }
        if c > best.0 {
            *best = (c, row_start + x0 + k);
        }
    }
}
