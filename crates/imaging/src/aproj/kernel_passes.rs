//! The gridding and degridding passes of [`KernelAProjection`]: sample placement on the
//! kernel lattice, deterministic band-parallel spreading, row-parallel interpolation, and the
//! per-plane FFT and screen.
use super::kernel_operator::{KernelAProjection, KernelInterpolation, Side};
use super::kernel_rows::{
    bilinear_row, dot_row, spread_row, widen_row, LaneSums, LineTarget, RowSimd,
};
use super::kernel_table::KernelTable;
use crate::error::ImagingError;
use crate::operator::{check_degrid_args, check_grid_args, GridOutput, ImagingOperator};
use crate::params::w_range_of;
use crate::plane_fft::Screens;
use beamfloor_core::{ImageGeometry, Pol, VoltageBeam, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3, ArrayView3};
use num_complex::Complex64;
use rayon::prelude::*;

const ZERO: Complex64 = Complex64 { re: 0.0, im: 0.0 };
/// Grid rows per gridding band (the unit of parallel work; fixed, so results do not depend on
/// the thread count).
const BAND_ROWS: usize = 32;
/// Samples per degridding task.
const DEGRID_SITES: usize = 256;

/// One (row, channel) sample placed on the kernel lattice of one side's tables.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Site {
    /// Table index per hand (R, L).
    pub tables: [usize; 2],
    /// First footprint cell (x, y), before wrapping onto the padded grid.
    pub x0: i64,
    pub y0: i64,
    /// Lattice sub-offset index (0..O) of the lattice point at or below the sample.
    pub fx: usize,
    pub fy: usize,
    /// Bilinear fraction towards the next lattice point (0 for nearest lookup).
    pub ax: f64,
    pub ay: f64,
    /// Kernel support S.
    pub support: usize,
    /// w-plane coordinate (0 when w is ignored).
    pub w: f64,
    /// exp(+2πi w c) for the plan's shift c of n − 1 (see `GridPlan`; 1 when not shifted):
    /// gridding multiplies the sample's values by it, degridding its prediction by the conjugate.
    pub phasor: Complex64,
}

fn hand(p: Pol) -> usize {
    match p {
        Pol::R => 0,
        Pol::L => 1,
    }
}

/// Lattice placement along one axis of a sample at fractional cell `s`: (first footprint cell,
/// sub-offset index, fraction).
#[inline]
fn place(s: f64, o: usize, h: usize, how: KernelInterpolation) -> (i64, usize, f64) {
    let so = s * o as f64;
    let mut q = so.floor();
    let mut a = so - q;
    if how == KernelInterpolation::Nearest {
        if a >= 0.5 {
            q += 1.0;
        }
        a = 0.0;
    }
    let q = q as i64;
    let (o, half_o) = (o as i64, (o / 2) as i64);
    let c = (q + half_o).div_euclid(o);
    ((c - h as i64), (q - c * o + half_o) as usize, a)
}

/// Per group and plane, the rows of a padded grid of `py` rows that the footprints of the sites
/// touching the plane cover (`n_planes` planes; `spans` the sites' first plane and count), over
/// the sites `group_of` puts in that group (by index; None: in none), indexed
/// `[group][plane][row]`. Each footprint is marked as a run of rows in a count per
/// row (+1 where it starts, −1 past its end, split where it wraps) and the counts summed
/// once per plane: one pass over the sites instead of one write per footprint row.
fn plane_rows(
    py: usize,
    n_planes: usize,
    sites: &[Site],
    spans: &[(usize, usize)],
    n_groups: usize,
    group_of: impl Fn(usize) -> Option<usize>,
) -> Vec<Vec<Vec<bool>>> {
    let mut deltas = vec![vec![0i64; (py + 1) * n_planes]; n_groups];
    for (i, (s, &(lo, count))) in sites.iter().zip(spans).enumerate() {
        let Some(g) = group_of(i) else { continue };
        let y0 = s.y0.rem_euclid(py as i64) as usize;
        // A footprint of S ≥ py rows covers every row.
        let runs = if s.support >= py {
            [(0, py), (0, 0)]
        } else if y0 + s.support > py {
            [(y0, py), (0, y0 + s.support - py)]
        } else {
            [(y0, y0 + s.support), (0, 0)]
        };
        for plane in lo..lo + count {
            let counts = &mut deltas[g][plane * (py + 1)..(plane + 1) * (py + 1)];
            for (a, b) in runs.into_iter().filter(|(a, b)| a < b) {
                counts[a] += 1;
                counts[b] -= 1;
            }
        }
    }
    deltas
        .into_iter()
        .map(|counts| {
            counts
                .chunks(py + 1)
                .map(|c| {
                    let mut open = 0;
                    c[..py]
                        .iter()
                        .map(|d| {
                            open += d;
                            open > 0
                        })
                        .collect()
                })
                .collect()
        })
        .collect()
}

impl<B: VoltageBeam + ?Sized> KernelAProjection<'_, B> {
    /// Every (row, channel) of `vis` placed for `side`'s kernels, index row · n_chan + chan.
    pub(crate) fn sites(&self, vis: &VisSet, bins: &[usize], side: Side) -> Vec<Site> {
        let (nc, o) = (vis.n_channels(), self.params.oversampling);
        let cell = self.plan.geometry.cell_rad;
        let (px, py) = (self.plan.pad_nx as f64, self.plan.pad_ny as f64);
        let how = self.params.interpolation;
        (0..vis.n_rows() * nc)
            .into_par_iter()
            .map(|i| {
                let (r, c) = (i / nc, i % nc);
                let scale = vis.frequencies_hz[c] / SPEED_OF_LIGHT_M_PER_S;
                let (u, v, w) = (
                    vis.uvw_m[[r, 0]] * scale,
                    vis.uvw_m[[r, 1]] * scale,
                    vis.uvw_m[[r, 2]] * scale,
                );
                let mut tables = [0; 2];
                for (k, t) in tables.iter_mut().enumerate() {
                    *t = self.table_index(side, bins[r], c, k);
                }
                let support = self.tables[tables[0]].support;
                let h = support / 2;
                let (x0, fx, ax) = place(-u * cell * px, o, h, how);
                let (y0, fy, ay) = place(v * cell * py, o, h, how);
                let phasor = self.plan.w_shift_phasor(w, 1.0);
                let w = self.plan.planes.map_or(0.0, |p| p.coordinate(w));
                Site { tables, x0, y0, fx, fy, ax, ay, support, w, phasor }
            })
            .collect()
    }

    /// ES weight of plane `p` for a sample at plane coordinate `w` (1 when w is ignored).
    #[inline]
    fn plane_weight(&self, w: f64, p: usize) -> f64 {
        if self.plan.planes.is_none() {
            return 1.0;
        }
        let half = 0.5 * self.plan.kernel.support() as f64;
        let d = p as f64 - w;
        if d.abs() >= half {
            0.0
        } else {
            self.plan.kernel.phi(d / half)
        }
    }

    fn check_w(&self, vis: &VisSet) -> Result<(), ImagingError> {
        if self.plan.planes.is_none() || vis.n_rows() == 0 {
            return Ok(());
        }
        let r = w_range_of(vis.uvw_m.column(2).iter().copied(), &vis.frequencies_hz);
        for w in [r.min_lambda, r.max_lambda] {
            if !self.plan.w_range.contains(w) {
                return Err(ImagingError::WOutOfRange {
                    w_lambda: w,
                    min_lambda: self.plan.w_range.min_lambda,
                    max_lambda: self.plan.w_range.max_lambda,
                });
            }
        }
        Ok(())
    }

    /// Rows `rows` of a site's kernel from `table`, in double precision in `scratch` (row
    /// after row, S cells each): the table's rows (nearest lookup) or the bilinear
    /// interpolation of four slices' rows. The rows of a slice are contiguous, so the whole
    /// block is one pass over memory.
    #[inline]
    fn kernel_block<'t>(
        &self,
        simd: RowSimd,
        table: &'t KernelTable,
        s: &Site,
        rows: std::ops::Range<usize>,
        scratch: &'t mut [Complex64],
    ) -> &'t [Complex64] {
        let n = s.support;
        let range = rows.start * n..rows.end * n;
        let out = &mut scratch[..range.len()];
        match self.params.interpolation {
            KernelInterpolation::Nearest => widen_row(out, &table.slice(s.fy, s.fx)[range]),
            KernelInterpolation::Bilinear => {
                let w = [
                    (1.0 - s.ay) * (1.0 - s.ax),
                    (1.0 - s.ay) * s.ax,
                    s.ay * (1.0 - s.ax),
                    s.ay * s.ax,
                ];
                let rows = [
                    &table.slice(s.fy, s.fx)[range.clone()],
                    &table.slice(s.fy, s.fx + 1)[range.clone()],
                    &table.slice(s.fy + 1, s.fx)[range.clone()],
                    &table.slice(s.fy + 1, s.fx + 1)[range],
                ];
                bilinear_row(simd, out, rows, w);
            }
        }
        out
    }

    /// Kernel rows `rows` of both correlations' tables of a site (the second equal to the
    /// first when there is one correlation); `scratch` holds at least 2 S² values.
    #[inline]
    fn kernel_blocks<'t>(
        &'t self,
        simd: RowSimd,
        s: &Site,
        hands: &[usize],
        rows: std::ops::Range<usize>,
        scratch: &'t mut [Complex64],
    ) -> [&'t [Complex64]; 2] {
        let half = scratch.len() / 2;
        let (s0, s1) = scratch.split_at_mut(half);
        let k0 = self.kernel_block(simd, &self.tables[s.tables[hands[0]]], s, rows.clone(), s0);
        if hands.len() > 1 {
            [k0, self.kernel_block(simd, &self.tables[s.tables[hands[1]]], s, rows, s1)]
        } else {
            [k0, k0]
        }
    }

    /// Floating-point operations of one `grid` call with `n_outputs` images (`degrid` with as
    /// many images costs the same): per sample and correlation, S² kernel cells, each
    /// interpolated once (14 flops, bilinear) and then multiplied into every plane the sample
    /// touches and every image (8 flops per complex multiply-add). Used to report GFLOP/s.
    pub fn flop_count(&self, vis: &VisSet, n_outputs: usize) -> Result<f64, ImagingError> {
        let bins = self.bins_of_rows(vis)?;
        let sites = self.sites(vis, &bins, Side::Forward);
        let build = match self.params.interpolation {
            KernelInterpolation::Nearest => 0.0,
            KernelInterpolation::Bilinear => 14.0,
        };
        let n_corr = vis.n_correlations() as f64;
        Ok(sites
            .iter()
            .map(|s| {
                let (p, count) = self.plane_span(s.w);
                let planes = (p..p + count).filter(|&q| self.plane_weight(s.w, q) != 0.0).count();
                let cells = (s.support * s.support) as f64 * n_corr;
                if planes == 0 {
                    0.0
                } else {
                    cells * (build + 8.0 * (n_outputs * planes) as f64)
                }
            })
            .sum())
    }
}

/// Part of one site's footprint that falls in one band: rows j0..j1 of the footprint.
#[derive(Clone, Copy)]
struct Visit {
    site: usize,
    j0: usize,
    j1: usize,
}

impl<B: VoltageBeam + ?Sized> KernelAProjection<'_, B> {
    /// First plane and number of planes (≤ W) a sample at plane coordinate `w` touches.
    #[inline]
    fn plane_span(&self, w: f64) -> (usize, usize) {
        let Some(planes) = self.plan.planes else { return (0, 1) };
        let half = 0.5 * self.plan.kernel.support() as f64;
        let lo = ((w - half).floor() + 1.0).max(0.0) as usize;
        let hi = ((w + half).ceil() - 1.0).min(planes.count as f64 - 1.0);
        if hi < lo as f64 {
            (lo, 0)
        } else {
            (lo, hi as usize - lo + 1)
        }
    }

    /// Planes held at once: W with w-stacking (a sample spans W planes), else 1.
    fn window(&self) -> usize {
        match self.plan.planes {
            Some(p) => self.plan.kernel.support().min(p.count),
            None => 1,
        }
    }

    /// Sites bucketed by their first plane, with their plane spans.
    fn buckets(&self, sites: &[Site]) -> (Vec<(usize, usize)>, Vec<Vec<usize>>) {
        let spans: Vec<(usize, usize)> = sites.iter().map(|s| self.plane_span(s.w)).collect();
        let mut buckets = vec![Vec::new(); self.plan.n_w_planes()];
        for (i, &(lo, count)) in spans.iter().enumerate() {
            if count > 0 {
                buckets[lo].push(i);
            }
        }
        (spans, buckets)
    }

    /// Grids per image in the gridding ring: W + 1 (the plane completed last is transformed
    /// while the next samples spread onto the next W), or every plane when there are fewer.
    fn ring_slots(&self) -> usize {
        (self.window() + 1).min(self.plan.n_w_planes()).max(1)
    }

    /// Images (or outputs) per pass so that `slots` padded grids per image fit in
    /// [`WINDOW_BYTES`].
    fn batch(&self, n: usize, slots: usize) -> usize {
        let grid = self.plan.pad_nx * self.plan.pad_ny * std::mem::size_of::<Complex64>();
        (WINDOW_BYTES / (slots * grid)).clamp(1, n.max(1))
    }
}

/// Offset step (values, 256 B) between the starts of the grids of a ring, and how many steps
/// before they repeat. Each ring grid is a separate page-aligned buffer, so without the offsets
/// a cell has the same low 12 address bits in every grid: the W · outputs lines one kernel row
/// updates then compete for the same first-level cache sets, and loads wait on stores to other
/// lines (4 KiB aliasing). Staggered, the w-stacked benchmark grids in 97 ms instead of 130.
const STAGGER: usize = 16;
const STAGGERS: usize = 16;

/// Buffer length for a grid of `len` values at any of the staggered offsets.
fn staggered_len(len: usize) -> usize {
    len + STAGGER * (STAGGERS - 1)
}

/// Grid i of a ring as `len` values from offset (i mod STAGGERS) · STAGGER of its buffer.
fn stagger(bufs: &mut [Vec<Complex64>], len: usize) -> Vec<&mut [Complex64]> {
    bufs.iter_mut()
        .enumerate()
        .map(|(i, b)| {
            let at = (i % STAGGERS) * STAGGER;
            &mut b[at..at + len]
        })
        .collect()
}

/// Memory for the sliding window of w-plane grids (W or W + 1 per image); more images than fit
/// are done in several passes.
const WINDOW_BYTES: usize = 1 << 30;

impl<B: VoltageBeam + ?Sized> ImagingOperator for KernelAProjection<'_, B> {
    fn geometry(&self) -> ImageGeometry {
        self.plan.geometry
    }

    /// Spreading runs over a sliding window of W w-planes: the samples whose first plane is p
    /// are spread onto all their planes at once (each kernel row interpolated once, used for
    /// every plane and output), after which plane p is complete; it is transformed while the
    /// samples whose first plane is p + 1 spread (into the other W of a ring of W + 1 grids per
    /// output: 3 % off the two-thread gridding time on the w-stacked benchmark, whose spreading
    /// left the second thread idle at each plane's end) and its grid recycled.
    fn grid(
        &self,
        vis: &VisSet,
        sources: &[ArrayView3<'_, Complex64>],
        outputs: &[GridOutput],
    ) -> Result<Vec<Array2<f64>>, ImagingError> {
        check_grid_args(vis, sources, outputs)?;
        let bins = self.bins_of_rows(vis)?;
        self.check_w(vis)?;
        let g = self.plan.geometry;
        let mut images = vec![Array2::<f64>::zeros((g.ny, g.nx)); outputs.len()];
        if outputs.is_empty() {
            return Ok(images);
        }
        let sites = self.sites(vis, &bins, Side::Gridding);
        let (spans, buckets) = self.buckets(&sites);
        let (px, py) = (self.plan.pad_nx, self.plan.pad_ny);
        let plane_rows =
            plane_rows(py, self.plan.n_w_planes(), &sites, &spans, 1, |_| Some(0)).remove(0);
        let n_bands = py.div_ceil(BAND_ROWS);
        let (nc, np) = (vis.n_channels(), vis.n_correlations());
        let hands: Vec<usize> = vis.correlations.iter().map(|c| hand(c.receptor())).collect();
        let simd = RowSimd::detect();
        let slots = self.ring_slots();
        let batch = self.batch(outputs.len(), slots);
        // Built once (the per-pixel tables), restarted per pass.
        let mut screens = Screens::new(&self.plan, &self.correction, 1.0);
        for first in (0..outputs.len()).step_by(batch) {
            let outs = &outputs[first..(first + batch).min(outputs.len())];
            let n_out = outs.len();
            screens.restart();
            let mut images_t = vec![vec![0.0; g.nx * g.ny]; n_out];
            // No plane added to images_t yet.
            let mut fresh = true;
            // Slot-major ring: the grid of plane p and output o is ring[(p mod slots) · n_out + o].
            let mut ring_bufs = self.pool.take(slots * n_out, staggered_len(px * py));
            let mut ring = stagger(&mut ring_bufs, px * py);
            let mut touched = vec![false; slots];
            // The plane completed by the previous bucket, transformed while this one spreads.
            let mut pending: Option<usize> = None;
            for (p, bucket) in buckets.iter().enumerate() {
                let mut bands: Vec<Vec<Visit>> = vec![Vec::new(); n_bands];
                for &i in bucket {
                    let s = &sites[i];
                    for q in 0..spans[i].1 {
                        touched[(p + q) % slots] = true;
                    }
                    let mut j = 0;
                    while j < s.support {
                        let y = (s.y0 + j as i64).rem_euclid(py as i64) as usize;
                        let band = y / BAND_ROWS;
                        let run = (s.support - j).min((band + 1) * BAND_ROWS - y).min(py - y);
                        bands[band].push(Visit { site: i, j0: j, j1: j + run });
                        j += run;
                    }
                }
                // The pending plane's grids go to its transform, the others (by band) to the
                // spreading; its slot is none of this bucket's planes (the ring has W + 1).
                let done = pending.map(|q| q % slots);
                let mut finishing: Vec<&mut [Complex64]> = Vec::with_capacity(n_out);
                let mut per_band: Vec<Vec<&mut [Complex64]>> =
                    (0..n_bands).map(|_| Vec::with_capacity(slots * n_out)).collect();
                for (i, grid) in ring.iter_mut().enumerate() {
                    if Some(i / n_out) == done {
                        finishing.push(&mut **grid);
                        per_band.iter_mut().for_each(|band| band.push(&mut []));
                    } else {
                        for (b, chunk) in grid.chunks_mut(BAND_ROWS * px).enumerate() {
                            per_band[b].push(chunk);
                        }
                    }
                }
                let transform = || {
                    let Some(q) = pending else { return };
                    let screen = screens.plane(q);
                    for (grid, image_t) in finishing.into_iter().zip(images_t.iter_mut()) {
                        // Leaves the grid zero again for the next plane of its slot.
                        self.plan.add_plane_to_image(grid, &plane_rows[q], screen, image_t, fresh);
                    }
                    fresh = false;
                };
                let spread = || {
                    // One task per band, largest first (cells to spread as the estimate): the
                    // bands near v = 0 carry a quarter of a plane's work on the demo, and in
                    // rayon's default split (runs of bands) one thread was left with them: a
                    // plane took 0.82 of its summed busy time in wall time on two threads, 0.52
                    // now. Each band is still spread by one task in a fixed order, so the
                    // result does not depend on the thread count or schedule.
                    let mut tasks: Vec<_> =
                        per_band.into_iter().zip(bands.iter_mut()).enumerate().collect();
                    tasks.sort_by_key(|(_, (_, visits))| {
                        std::cmp::Reverse(
                            visits
                                .iter()
                                .map(|v| (v.j1 - v.j0) * sites[v.site].support)
                                .sum::<usize>(),
                        )
                    });
                    tasks.into_par_iter().with_max_len(1).for_each(|(b, (mut chunks, visits))| {
                        // Visits run in grid-column order, so that the W · outputs grid
                        // rows they update stay in cache from one to the next (on the demo
                        // the grid lines are 14× the table data per sample; the spread took
                        // 0.80 s per call against 0.95 s grouped by kernel table, one run
                        // each); the key is unique per visit, so the order (and every sum)
                        // does not depend on the thread count.
                        visits.sort_unstable_by_key(|v| {
                            (sites[v.site].x0.rem_euclid(px as i64), v.site, v.j0)
                        });
                        let max_s = visits.iter().map(|v| sites[v.site].support).max().unwrap_or(0);
                        let mut block_scratch = vec![ZERO; 2 * max_s * max_s];
                        let mut base = vec![ZERO; n_out * np];
                        // One target line per (plane of the span, output).
                        let mut targets: Vec<LineTarget> = Vec::with_capacity(slots * n_out);
                        for v in visits.iter() {
                            let s = &sites[v.site];
                            let (r, c) = (v.site / nc, v.site % nc);
                            let mut any = false;
                            for (o, out) in outs.iter().enumerate() {
                                for k in 0..np {
                                    let x = sources[out.source][[r, c, k]]
                                        * out.channel_factors[c]
                                        * s.phasor;
                                    any |= x != ZERO;
                                    base[o * np + k] = x;
                                }
                            }
                            if !any {
                                continue;
                            }
                            targets.clear();
                            for q in 0..spans[v.site].1 {
                                let kw = self.plane_weight(s.w, p + q);
                                let slot = (p + q) % slots;
                                for (o, x) in base.chunks(np).enumerate() {
                                    let mut vals = [ZERO; 2];
                                    for (d, x) in vals.iter_mut().zip(x) {
                                        *d = x * kw;
                                    }
                                    targets.push(LineTarget { grid: slot * n_out + o, vals });
                                }
                            }
                            let n = s.support;
                            let x0 = s.x0.rem_euclid(px as i64) as usize;
                            let n1 = n.min(px - x0);
                            let block =
                                self.kernel_blocks(simd, s, &hands, v.j0..v.j1, &mut block_scratch);
                            for j in v.j0..v.j1 {
                                let y = (s.y0 + j as i64).rem_euclid(py as i64) as usize
                                    - b * BAND_ROWS;
                                let at = (j - v.j0) * n..(j - v.j0 + 1) * n;
                                let krows = [&block[0][at.clone()], &block[1][at]];
                                let (head, tail) = (
                                    [&krows[0][..n1], &krows[1][..n1]],
                                    [&krows[0][n1..], &krows[1][n1..]],
                                );
                                // A footprint past the grid's last column wraps to its
                                // first (the grid is periodic).
                                spread_row(simd, &mut chunks, y * px + x0, &head[..np], &targets);
                                if n1 < n {
                                    spread_row(simd, &mut chunks, y * px, &tail[..np], &targets);
                                }
                            }
                        }
                    });
                };
                rayon::join(transform, spread);
                // Plane p is complete: no later sample starts at or below it.
                let slot = p % slots;
                pending = touched[slot].then_some(p);
                touched[slot] = false;
            }
            if let Some(q) = pending {
                let screen = screens.plane(q);
                for (o, image_t) in images_t.iter_mut().enumerate() {
                    let grid = &mut ring[(q % slots) * n_out + o];
                    self.plan.add_plane_to_image(grid, &plane_rows[q], screen, image_t, fresh);
                }
            }
            // Every slot written was transformed and left zero again.
            drop(ring);
            self.pool.give_back(ring_bufs, true);
            for (image, image_t) in images[first..first + n_out].iter_mut().zip(&images_t) {
                let img = image.as_slice_mut().expect("fresh array is contiguous");
                self.plan.untranspose_into(image_t, img);
            }
        }
        Ok(images)
    }

    /// Interpolation runs over the same sliding window: the planes p .. p + W − 1 are
    /// transformed when the samples whose first plane is p need them, and each sample reads
    /// all its planes with one interpolated kernel.
    fn degrid(
        &self,
        vis: &VisSet,
        images: &[Array2<f64>],
        channel_factors: &[Vec<f64>],
    ) -> Result<Array3<Complex64>, ImagingError> {
        check_degrid_args(vis, self.plan.geometry, images, channel_factors)?;
        let bins = self.bins_of_rows(vis)?;
        self.check_w(vis)?;
        let (nr, nc, np) = (vis.n_rows(), vis.n_channels(), vis.n_correlations());
        let mut out = vec![ZERO; nr * nc * np];
        if images.is_empty() || nr == 0 {
            return Ok(Array3::from_shape_vec((nr, nc, np), out).expect("sized above"));
        }
        let sites = self.sites(vis, &bins, Side::Forward);
        let (spans, mut buckets) = self.buckets(&sites);
        // Samples in the same band of grid rows run together (their footprints on the W plane
        // grids stay in cache), and within a band those sharing a kernel table.
        let py_i = self.plan.pad_ny as i64;
        for bucket in buckets.iter_mut() {
            bucket.sort_unstable_by_key(|&i| {
                (sites[i].y0.rem_euclid(py_i) as usize / BAND_ROWS, sites[i].tables[0], i)
            });
        }
        let (px, py) = (self.plan.pad_nx, self.plan.pad_ny);
        // Per channel c and plane q, the grid rows its samples read: an image only needs the
        // planes and rows of the channels it has a share in (per-channel prediction: one).
        // Indexed [plane][channel].
        let mut channel_rows: Vec<Vec<Vec<bool>>> =
            vec![Vec::with_capacity(nc); self.plan.n_w_planes()];
        for per_plane in
            plane_rows(py, self.plan.n_w_planes(), &sites, &spans, nc, |i| Some(i % nc))
        {
            for (q, rows) in per_plane.into_iter().enumerate() {
                channel_rows[q].push(rows);
            }
        }
        let shares: Vec<Vec<usize>> =
            channel_factors.iter().map(|f| (0..nc).filter(|&c| f[c] != 0.0).collect()).collect();
        let mut image_rows = vec![false; py];
        let hands: Vec<usize> = vis.correlations.iter().map(|c| hand(c.receptor())).collect();
        let simd = RowSimd::detect();
        let window = self.window();
        let n_planes = self.plan.n_w_planes();
        // Images that share no channel gain nothing from one pass (each sample reads only
        // its channel's images) and would cost W grids each: one per pass then.
        let disjoint = {
            let mut seen = vec![false; nc];
            shares.iter().flatten().all(|&c| !std::mem::replace(&mut seen[c], true))
        };
        let batch = if disjoint { 1 } else { self.batch(images.len(), window) };
        let max_s = sites.iter().map(|s| s.support).max().unwrap_or(0);
        // Built once (the per-pixel tables), restarted per pass: per-channel prediction makes
        // one pass per channel (eight on the demo), and rebuilding cost 5 ms each.
        let mut screens = Screens::new(&self.plan, &self.correction, -1.0);
        for first in (0..images.len()).step_by(batch) {
            let imgs = &images[first..(first + batch).min(images.len())];
            let factors = &channel_factors[first..first + imgs.len()];
            let shares = &shares[first..first + imgs.len()];
            // Channels with a share in some image of this pass.
            let mut in_pass = vec![false; nc];
            shares.iter().flatten().for_each(|&c| in_pass[c] = true);
            let n_img = imgs.len();
            let imgs_t: Vec<Vec<f64>> = imgs
                .iter()
                .map(|im| {
                    let im = im.as_standard_layout();
                    self.plan.transposed(im.as_slice().expect("standard layout is contiguous"))
                })
                .collect();
            screens.restart();
            // Stale values are never read: a plane's transform writes every grid row that
            // its samples read (`plane_rows`).
            let mut ring_bufs = self.pool.take_any(window * n_img, staggered_len(px * py));
            let mut ring = stagger(&mut ring_bufs, px * py);
            let mut holds = vec![usize::MAX; window];
            for (p, bucket) in buckets.iter().enumerate() {
                if bucket.is_empty() {
                    continue;
                }
                let last = bucket.iter().map(|&i| p + spans[i].1).max().unwrap_or(p).min(n_planes);
                for (q, per_channel) in channel_rows.iter().enumerate().take(last).skip(p) {
                    let slot = q % window;
                    if holds[slot] == q {
                        continue;
                    }
                    holds[slot] = q;
                    // Planes are filled in increasing order (a slot's next plane is q + W).
                    let screen = screens.plane(q);
                    for (t, image_t) in imgs_t.iter().enumerate() {
                        image_rows.iter_mut().for_each(|r| *r = false);
                        for &c in &shares[t] {
                            for (r, &x) in image_rows.iter_mut().zip(&per_channel[c]) {
                                *r |= x;
                            }
                        }
                        // No sample of this image's channels reads plane q.
                        if !image_rows.contains(&true) {
                            continue;
                        }
                        let grid = &mut ring[slot * n_img + t];
                        self.plan.plane_from_image(image_t, screen, &image_rows, grid, false);
                    }
                }
                let ring: Vec<&[Complex64]> = ring.iter().map(|g| &g[..]).collect();
                let ring = &ring[..];
                let values: Vec<[Complex64; 2]> = bucket
                    .par_chunks(DEGRID_SITES)
                    .flat_map_iter(|chunk| {
                        let mut block_scratch = vec![ZERO; 2 * max_s * max_s];
                        // Per line read (a plane q of the span and an image t with a share
                        // in the sample's channel): its grid, (q, t), and the running sums.
                        let mut lines: Vec<usize> = Vec::with_capacity(window * n_img);
                        let mut which: Vec<(usize, usize)> = Vec::with_capacity(window * n_img);
                        let mut sums = vec![LaneSums::default(); window * n_img];
                        chunk
                            .iter()
                            .map(|&i| {
                                let s = &sites[i];
                                let c = i % nc;
                                // A sample whose channel has no share in any image of this
                                // batch (per-channel prediction, done in several batches) reads
                                // nothing here: skip its kernel too.
                                if !in_pass[c] {
                                    return [ZERO; 2];
                                }
                                let n = s.support;
                                let x0 = s.x0.rem_euclid(px as i64) as usize;
                                let n1 = n.min(px - x0);
                                lines.clear();
                                which.clear();
                                for q in 0..spans[i].1 {
                                    let slot = (p + q) % window;
                                    // An image with no share in this channel (a zero factor,
                                    // as in per-channel prediction) adds nothing: skip it.
                                    for t in (0..n_img).filter(|&t| factors[t][c] != 0.0) {
                                        lines.push(slot * n_img + t);
                                        which.push((q, t));
                                    }
                                }
                                let sums = &mut sums[..lines.len()];
                                sums.iter_mut().for_each(|s| *s = LaneSums::default());
                                // Each kernel row is interpolated once and read against every
                                // plane and image of the sample.
                                let block =
                                    self.kernel_blocks(simd, s, &hands, 0..n, &mut block_scratch);
                                for j in 0..n {
                                    let at = j * n..(j + 1) * n;
                                    let krows = [&block[0][at.clone()], &block[1][at]];
                                    let (head, tail) = (
                                        [&krows[0][..n1], &krows[1][..n1]],
                                        [&krows[0][n1..], &krows[1][n1..]],
                                    );
                                    let y = (s.y0 + j as i64).rem_euclid(py as i64) as usize;
                                    dot_row(simd, ring, y * px + x0, &head[..np], &lines, sums);
                                    if n1 < n {
                                        dot_row(simd, ring, y * px, &tail[..np], &lines, sums);
                                    }
                                }
                                let mut total = [ZERO; 2];
                                for (sum, &(q, t)) in sums.iter().zip(&which) {
                                    let f = self.plane_weight(s.w, p + q) * factors[t][c];
                                    for (k, tot) in total.iter_mut().enumerate().take(np) {
                                        *tot += sum.value(k) * f;
                                    }
                                }
                                let back = s.phasor.conj();
                                total.map(|t| t * back)
                            })
                            .collect::<Vec<_>>()
                    })
                    .collect();
                for (&i, v) in bucket.iter().zip(&values) {
                    for k in 0..np {
                        out[i * np + k] += v[k];
                    }
                }
            }
            drop(ring);
            self.pool.give_back(ring_bufs, false);
        }
        Ok(Array3::from_shape_vec((nr, nc, np), out).expect("sized above"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn plane_rows_match_marking_every_footprint_row() {
        // Reference: the definition, each footprint row of each kept site marked on each plane
        // of its span (rows wrap modulo the grid). Sites with footprints inside the grid, across
        // its last row, starting at negative rows, as tall as the grid and taller; three groups
        // and sites in none; spans of zero to three planes.
        let (py, n_planes) = (40, 5);
        let site = |y0: i64, support: usize| Site {
            tables: [0, 0],
            x0: 0,
            y0,
            fx: 0,
            fy: 0,
            ax: 0.0,
            ay: 0.0,
            support,
            w: 0.0,
            phasor: ZERO,
        };
        let sites: Vec<Site> = (0..60)
            .map(|i| site((i * 37 % 101) as i64 - 50, [1, 5, 19, 39, 40, 41, 63][i % 7]))
            .collect();
        let spans: Vec<(usize, usize)> =
            (0..60).map(|i| (i % 3, [0, 1, 2, 3][i % 4].min(n_planes - i % 3))).collect();
        let group_of = |i: usize| (i % 4 != 3).then_some(i % 3);
        let got = plane_rows(py, n_planes, &sites, &spans, 3, group_of);
        let mut want = vec![vec![vec![false; py]; n_planes]; 3];
        for (i, (s, &(lo, count))) in sites.iter().zip(&spans).enumerate() {
            let Some(g) = group_of(i) else { continue };
            for plane in &mut want[g][lo..lo + count] {
                for j in 0..s.support as i64 {
                    plane[(s.y0 + j).rem_euclid(py as i64) as usize] = true;
                }
            }
        }
        assert_eq!(got, want);
        assert!(
            want.iter().flatten().flatten().any(|&r| r)
                && want.iter().flatten().flatten().any(|&r| !r)
        );
    }
}
