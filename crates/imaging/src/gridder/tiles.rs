//! Tiled spreading (gridding) and interpolation (degridding) for [`GridPlan`].
//!
//! The padded grid's rows are split into bands of `TILE` to 2 · `TILE` − 1 rows and each band's
//! columns into tiles of `TILE` columns. A placed sample belongs to the tile that holds the first
//! cell of its footprint, and the samples are ordered by (band, tile, first w plane, sample
//! index) (see `layout`). A band's samples are spread tile by tile into a small buffer (the
//! tile's footprint window, real and imaginary parts apart so that a footprint row is a plain
//! vector loop over the W taps — AVX2 with FMA when the CPU has it), and the buffer is added to
//! the grid once per tile instead of W² scattered updates per sample into a grid far larger than
//! the caches.
//!
//! Determinism: a band's footprints reach at most W − 1 ≤ `TILE` rows into the next band, so the
//! bands are spread in phases of every other band (three phases for an odd count, the last band
//! alone); within a phase no two bands write one grid row, and each band adds its tiles in sorted
//! order. Every grid cell thus receives the same sums in the same order whatever the number of
//! threads. Degridding only reads the grid: each band's samples are computed by one task, which
//! alone adds into those samples' places (see `Destination`).
use super::layout::{Block, Layout, Rect, TILE};
#[cfg(target_arch = "x86_64")]
use super::tile_rows::AvxRows;
use super::tile_rows::{prefetch, ScalarRows, Simd, TileRows};
use super::{ceil_i64, Samples};
use crate::disjoint::Disjoint;
use crate::kernel_poly::MAX_TAPS;
use crate::operator::GridOutput;
use crate::plan::GridPlan;
use num_complex::Complex64;
use rayon::prelude::*;

const ZERO: Complex64 = Complex64 { re: 0.0, im: 0.0 };
/// Samples ahead whose data are prefetched.
const AHEAD: usize = 8;
/// Row stride of a tile buffer: the footprint of a sample starting in column `TILE` − 1 of its
/// tile reaches column `TILE` − 2 + W, and the vector loops touch up to `MAX_TAPS` lanes.
pub(super) const STRIDE: usize = TILE + MAX_TAPS;
/// Rows of a tile buffer: bands are shorter than 2 · `TILE` and footprints add W − 1 rows.
const BUFFER_ROWS: usize = 2 * TILE + MAX_TAPS;
/// Values per tile buffer (one for the real parts, one for the imaginary parts).
const BUFFER: usize = BUFFER_ROWS * STRIDE;

/// One band's share of the grids in a spreading phase: its own rows (`own`, one slice per
/// output) and the rows of the next band (`next`; empty when there is a single band).
struct BandGrids<'a> {
    own: Vec<&'a mut [Complex64]>,
    next: Vec<&'a mut [Complex64]>,
}

/// The value sample i (channel c) adds to output o: its summed correlations of the output's
/// source times the output's factor for the channel.
pub(super) struct GridValues<'a> {
    /// Per sample, the sum of its correlations for every source (`n_src` values).
    pub(super) summed: &'a [Complex64],
    pub(super) n_src: usize,
    pub(super) outputs: &'a [GridOutput],
}

impl GridValues<'_> {
    #[inline(always)]
    fn get(&self, i: usize, c: usize, o: usize) -> Complex64 {
        let out = &self.outputs[o];
        self.summed[i * self.n_src + out.source] * out.channel_factors[c]
    }
}

/// Where interpolation adds each sample's value.
#[derive(Clone, Copy, Debug)]
pub(super) enum Destination {
    /// Slot k for the k-th sample of the layout's order: sequential within a tile, for values
    /// summed over many planes.
    Sorted,
    /// Slots i · np .. (i + 1) · np for sample i (its np correlations all get the value).
    Samples(usize),
}

/// Everything a band task reads.
struct Job<'a> {
    plan: &'a GridPlan,
    samples: &'a Samples<'a>,
    layout: &'a Layout,
    band: usize,
    plane: Option<usize>,
}

/// One sample ready for a tile buffer: its kernel taps along x and y, its offsets in the tile
/// buffer and the weight of the job's plane.
struct Footprint {
    kx: [f64; MAX_TAPS],
    ky: [f64; MAX_TAPS],
    kw: [f64; MAX_TAPS],
    dx: usize,
    dy: usize,
    chan: usize,
    weight: f64,
    /// The sample is mirrored (see `Samples::at`): its value is conjugated.
    flip: bool,
}

impl Footprint {
    fn new() -> Self {
        Self {
            kx: [0.0; MAX_TAPS],
            ky: [0.0; MAX_TAPS],
            kw: [0.0; MAX_TAPS],
            dx: 0,
            dy: 0,
            chan: 0,
            weight: 0.0,
            flip: false,
        }
    }
}

impl Job<'_> {
    /// Fill `f` for the sample with key `key` in tile column `tx`; false when the sample has no
    /// weight on the job's plane.
    #[inline(always)]
    fn footprint<R: TileRows>(&self, key: usize, tx: u32, f: &mut Footprint) -> bool {
        let plan = self.plan;
        let poly = &plan.poly;
        let (c, sx, sy, w, flip) = self.samples.at(plan, key);
        let (gx, gy) = match self.plane {
            None => {
                f.weight = 1.0;
                let [gx, gy] = R::taps(poly, [sx, sy], [&mut f.kx, &mut f.ky]);
                (gx, gy)
            }
            Some(p) => {
                let (first, count) = plan.plane_span(w);
                if p < first || p >= first + count {
                    return false;
                }
                // Plane p sits at distance p − w from the sample: a tap of the kernel along w.
                let [gw, gx, gy] = R::taps(poly, [w, sx, sy], [&mut f.kw, &mut f.kx, &mut f.ky]);
                debug_assert!((0..plan.kernel.support() as i64).contains(&(p as i64 - gw)));
                f.weight = f.kw[(p as i64 - gw) as usize];
                (gx, gy)
            }
        };
        if f.weight == 0.0 {
            return false;
        }
        let map = &self.layout.map;
        (f.dx, f.dy) = map.offset(self.band, tx, gx, gy);
        debug_assert!(f.dx < TILE && f.dy < map.starts[self.band + 1] - map.starts[self.band]);
        f.chan = c;
        f.flip = flip;
        true
    }

    /// Prefetch the uvw (and the values, when gridding) of sorted sample `k` + `AHEAD`.
    #[inline(always)]
    fn prefetch(&self, k: usize, values: Option<&GridValues>) {
        if let Some(&key) = self.layout.order.get(k + AHEAD) {
            prefetch(&self.samples.uvw[3 * self.samples.row_chan(key).0]);
            if let Some(v) = values {
                prefetch(&v.summed[self.samples.index(key) * v.n_src]);
            }
        }
    }

    /// The rectangle of the tile buffer to load for `blocks` (one tile column) on the job's
    /// plane: the whole window without w planes, else the union of the blocks' measured
    /// rectangles (see [`GridPlan::measure_blocks`]).
    fn window(&self, blocks: &[Block]) -> Option<Rect> {
        let map = &self.layout.map;
        let w = self.plan.kernel.support();
        if self.plane.is_none() {
            // Without w planes every sample is on the plane: the whole window, which is cheaper
            // to load than to narrow down.
            let rows = map.starts[self.band + 1] - map.starts[self.band];
            return Some(Rect { c0: 0, c1: TILE - 1 + w, r0: 0, r1: rows - 1 + w });
        }
        // The union of the blocks' rectangles (a superset of the footprints on this plane when
        // some samples of a block stop short of it).
        let measured = |b: &Block| b.rect.expect("blocks are measured before w-plane passes");
        blocks.iter().map(measured).reduce(Rect::union)
    }

    /// Tile groups of the band: the band's blocks on the job's plane, and runs of them with one
    /// tile column (tile column, first block, end).
    fn tile_groups(&self) -> (Vec<Block>, Vec<(u32, usize, usize)>) {
        let w = self.plan.kernel.support();
        let on: Vec<Block> = self.layout.blocks_on(self.band, self.plane, w).copied().collect();
        let mut groups: Vec<(u32, usize, usize)> = Vec::new();
        for (k, b) in on.iter().enumerate() {
            match groups.last_mut() {
                Some((tx, _, end)) if *tx == b.tx => *end = k + 1,
                _ => groups.push((b.tx, k, k + 1)),
            }
        }
        (on, groups)
    }

    /// Spread the band's samples on the job's plane, with their `values`, into `grids`.
    #[inline(always)]
    fn spread_band<R: TileRows, const L: usize>(&self, values: &GridValues, grids: &mut BandGrids) {
        let w = self.plan.kernel.support();
        let n_out = grids.own.len();
        let mut buf = vec![0.0f64; 2 * n_out * BUFFER];
        let mut f = Footprint::new();
        let (on, groups) = self.tile_groups();
        for &(tx, a, z) in &groups {
            let blocks = &on[a..z];
            let mut rect = None;
            for bl in blocks {
                for k in bl.start..bl.end {
                    self.prefetch(k, Some(values));
                    let key = self.layout.order[k];
                    if !self.footprint::<R>(key, tx, &mut f) {
                        continue;
                    }
                    let i = self.samples.index(key);
                    let at = (f.dx, f.dy, w);
                    for (o, chunk) in buf.chunks_exact_mut(2 * BUFFER).enumerate() {
                        let v = values.get(i, f.chan, o);
                        if v == ZERO {
                            continue;
                        }
                        let v = if f.flip { v.conj() } else { v };
                        let (re, im) = chunk.split_at_mut(BUFFER);
                        R::spread::<L>(re, im, at, &f.kx, &f.ky, v * f.weight);
                    }
                    Rect::grow(&mut rect, f.dx, f.dy, w);
                }
            }
            if let Some(rect) = rect {
                for (o, chunk) in buf.chunks_exact_mut(2 * BUFFER).enumerate() {
                    let (re, im) = chunk.split_at_mut(BUFFER);
                    let next = grids.next.get_mut(o).map(|g| &mut **g);
                    self.flush(re, im, rect, tx as usize, L, &mut *grids.own[o], next);
                }
            }
        }
    }

    /// Add the buffer's `rect` to the grid rows of the band (`own`) and of the next band
    /// (`next`, None when the band is the only one), and zero the buffer there (plus the
    /// `lanes` − W columns of zero taps after it).
    #[allow(clippy::too_many_arguments)]
    fn flush(
        &self,
        re: &mut [f64],
        im: &mut [f64],
        rect: Rect,
        tx: usize,
        lanes: usize,
        own: &mut [Complex64],
        mut next: Option<&mut [Complex64]>,
    ) {
        let map = &self.layout.map;
        let (px, py) = (map.pad_nx, map.pad_ny);
        let (start, end) = (map.starts[self.band], map.starts[self.band + 1]);
        let w = self.plan.kernel.support();
        let zero_to = (rect.c1 - w + lanes).min(STRIDE);
        for r in rect.r0..rect.r1 {
            let y = start + r;
            let line = if y < end {
                &mut own[(y - start) * px..(y - start + 1) * px]
            } else if let Some(next) = next.as_deref_mut() {
                let y = y - end;
                &mut next[y * px..(y + 1) * px]
            } else {
                let y = y % py;
                &mut own[y * px..(y + 1) * px]
            };
            let row = r * STRIDE;
            let (rr, ii) = (&re[row + rect.c0..row + rect.c1], &im[row + rect.c0..row + rect.c1]);
            let x0 = tx * TILE + rect.c0;
            if x0 + rr.len() <= px {
                for ((g, &a), &b) in line[x0..x0 + rr.len()].iter_mut().zip(rr).zip(ii) {
                    g.re += a;
                    g.im += b;
                }
            } else {
                for (i, (&a, &b)) in rr.iter().zip(ii).enumerate() {
                    let g = &mut line[(x0 + i) % px];
                    g.re += a;
                    g.im += b;
                }
            }
            re[row + rect.c0..row + zero_to].iter_mut().for_each(|v| *v = 0.0);
            im[row + rect.c0..row + zero_to].iter_mut().for_each(|v| *v = 0.0);
        }
    }

    /// Interpolate the band's samples on the job's plane from `grids` (one per image, weighted
    /// per channel by `factors[image][chan]`), adding each into `acc` (the band's slots).
    #[inline(always)]
    fn interpolate_band<R: TileRows, const L: usize>(
        &self,
        grids: &[Vec<Complex64>],
        factors: &[Vec<f64>],
        out: &Disjoint<Complex64>,
        dest: Destination,
    ) {
        let map = &self.layout.map;
        let (px, py) = (map.pad_nx, map.pad_ny);
        let w = self.plan.kernel.support();
        let start = map.starts[self.band];
        let mut buf = vec![0.0f64; 2 * grids.len() * BUFFER];
        let mut f = Footprint::new();
        let (on, groups) = self.tile_groups();
        for &(tx, a, z) in &groups {
            let blocks = &on[a..z];
            let x0 = tx as usize * TILE;
            let Some(rect) = self.window(blocks) else { continue };
            // The vector loops read L lanes from a footprint's first column.
            let (c0, c1) = (rect.c0, rect.c1 - w + L);
            for (grid, chunk) in grids.iter().zip(buf.chunks_exact_mut(2 * BUFFER)) {
                let (re, im) = chunk.split_at_mut(BUFFER);
                for r in rect.r0..rect.r1 {
                    let y = (start + r) % py;
                    let line = &grid[y * px..(y + 1) * px];
                    let row = r * STRIDE;
                    let (re, im) = (&mut re[row + c0..row + c1], &mut im[row + c0..row + c1]);
                    if x0 + c1 <= px {
                        for ((a, b), g) in
                            re.iter_mut().zip(im.iter_mut()).zip(&line[x0 + c0..x0 + c1])
                        {
                            *a = g.re;
                            *b = g.im;
                        }
                    } else {
                        for (c, (a, b)) in re.iter_mut().zip(im.iter_mut()).enumerate() {
                            let g = line[(x0 + c0 + c) % px];
                            *a = g.re;
                            *b = g.im;
                        }
                    }
                }
            }
            for bl in blocks {
                for k in bl.start..bl.end {
                    self.prefetch(k, None);
                    // The output place of a sample a few ahead (its read-modify-write would
                    // otherwise wait for a cache line at a scattered address).
                    if let (Destination::Samples(np), Some(&key)) =
                        (dest, self.layout.order.get(k + AHEAD))
                    {
                        out.prefetch(self.samples.index(key) * np);
                    }
                    if !self.footprint::<R>(self.layout.order[k], tx, &mut f) {
                        continue;
                    }
                    let at = (f.dx, f.dy, w);
                    let mut sum = ZERO;
                    for (fac, chunk) in factors.iter().zip(buf.chunks_exact(2 * BUFFER)) {
                        let fc = fac[f.chan];
                        if fc == 0.0 {
                            continue;
                        }
                        let (re, im) = chunk.split_at(BUFFER);
                        sum += R::interpolate::<L>(re, im, at, &f.kx, &f.ky) * fc;
                    }
                    let sum = if f.flip { sum.conj() } else { sum } * f.weight;
                    match dest {
                        // SAFETY: the bands split the order, so slot k is this task's alone.
                        Destination::Sorted => unsafe { *out.slot(k) += sum },
                        Destination::Samples(np) => {
                            let i = self.samples.index(self.layout.order[k]);
                            for slot in i * np..(i + 1) * np {
                                // SAFETY: every sample key sits once in the layout's order,
                                // and the bands split the order: only this task touches
                                // sample i's values.
                                unsafe { *out.slot(slot) += sum };
                            }
                        }
                    }
                }
            }
        }
    }
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn spread_band_avx<const L: usize>(job: &Job, values: &GridValues, grids: &mut BandGrids) {
    job.spread_band::<AvxRows, L>(values, grids)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
fn interpolate_band_avx<const L: usize>(
    job: &Job,
    grids: &[Vec<Complex64>],
    factors: &[Vec<f64>],
    out: &Disjoint<Complex64>,
    dest: Destination,
) {
    job.interpolate_band::<AvxRows, L>(grids, factors, out, dest)
}

/// Split `grid` (pad_ny rows of `px`) into the rows of every band.
fn band_rows<'a>(
    grid: &'a mut [Complex64],
    starts: &[usize],
    px: usize,
) -> Vec<Option<&'a mut [Complex64]>> {
    let mut rest = grid;
    let mut out = Vec::with_capacity(starts.len() - 1);
    for w in starts.windows(2) {
        let (band, tail) = rest.split_at_mut((w[1] - w[0]) * px);
        out.push(Some(band));
        rest = tail;
    }
    out
}

impl GridPlan {
    /// Measures every block's footprint rectangle (see `Block::rect`) once, so that passes over
    /// many planes need not look at every sample again per plane to size a tile's window.
    pub(super) fn measure_blocks(&self, samples: &Samples, layout: &mut Layout) {
        let w = self.kernel.support();
        let half = 0.5 * w as f64;
        let (map, order) = (&layout.map, &layout.order);
        let mut rest: &mut [Block] = &mut layout.blocks;
        let mut bands = Vec::with_capacity(map.bands());
        for b in 0..map.bands() {
            let (band, tail) = rest.split_at_mut(layout.band_blocks[b + 1] - layout.band_blocks[b]);
            bands.push((b, band));
            rest = tail;
        }
        bands.into_par_iter().with_max_len(1).for_each(|(b, blocks)| {
            for bl in blocks {
                let mut rect = None;
                for &key in &order[bl.start..bl.end] {
                    // The same first cell as the polynomial taps compute: ⌈s − W/2⌉.
                    let (_, sx, sy, _, _) = samples.at(self, key);
                    let (dx, dy) = map.offset(b, bl.tx, ceil_i64(sx - half), ceil_i64(sy - half));
                    Rect::grow(&mut rect, dx, dy, w);
                }
                bl.rect = rect;
            }
        });
    }

    /// Spread every sample of `layout` that touches plane `plane` (None: the only plane) into
    /// `grids` (one per output of `values`).
    pub(super) fn spread_plane(
        &self,
        samples: &Samples,
        layout: &Layout,
        values: &GridValues,
        plane: Option<usize>,
        grids: &mut [Vec<Complex64>],
    ) {
        let simd = Simd::detect();
        let lanes = self.poly.lanes();
        let n = layout.map.bands();
        let px = self.pad_nx;
        for phase in layout.map.phases() {
            let mut split: Vec<Vec<Option<&mut [Complex64]>>> =
                grids.iter_mut().map(|g| band_rows(g, &layout.map.starts, px)).collect();
            let tasks: Vec<(usize, BandGrids)> = phase
                .iter()
                .map(|&b| {
                    let own = split
                        .iter_mut()
                        .map(|s| s[b].take().expect("bands of one phase do not share rows"))
                        .collect();
                    let next = if n > 1 {
                        split
                            .iter_mut()
                            .map(|s| {
                                s[(b + 1) % n].take().expect("bands of one phase do not share rows")
                            })
                            .collect()
                    } else {
                        Vec::new()
                    };
                    (b, BandGrids { own, next })
                })
                .collect();
            // One task per band (work is uneven: the bands near v = 0 hold most samples).
            tasks.into_par_iter().with_max_len(1).for_each(|(band, mut g)| {
                let job = Job { plan: self, samples, layout, band, plane };
                match (simd, lanes) {
                    #[cfg(target_arch = "x86_64")]
                    // SAFETY: Simd::detect found AVX2 and FMA on this CPU.
                    (Simd::Avx2Fma, 4) => unsafe { spread_band_avx::<4>(&job, values, &mut g) },
                    #[cfg(target_arch = "x86_64")]
                    (Simd::Avx2Fma, 8) => unsafe { spread_band_avx::<8>(&job, values, &mut g) },
                    #[cfg(target_arch = "x86_64")]
                    (Simd::Avx2Fma, 12) => unsafe { spread_band_avx::<12>(&job, values, &mut g) },
                    #[cfg(target_arch = "x86_64")]
                    (Simd::Avx2Fma, _) => unsafe { spread_band_avx::<16>(&job, values, &mut g) },
                    (_, 4) => job.spread_band::<ScalarRows, 4>(values, &mut g),
                    (_, 8) => job.spread_band::<ScalarRows, 8>(values, &mut g),
                    (_, 12) => job.spread_band::<ScalarRows, 12>(values, &mut g),
                    _ => job.spread_band::<ScalarRows, 16>(values, &mut g),
                }
            });
        }
    }

    /// Interpolate every sample of `layout` that touches plane `plane` from `grids` (one per
    /// image; `factors[image][chan]`), adding it into `out` at the sample's places (`dest`).
    #[allow(clippy::too_many_arguments)]
    pub(super) fn interpolate_plane(
        &self,
        samples: &Samples,
        layout: &Layout,
        grids: &[Vec<Complex64>],
        factors: &[Vec<f64>],
        plane: Option<usize>,
        out: &mut [Complex64],
        dest: Destination,
    ) {
        let simd = Simd::detect();
        let lanes = self.poly.lanes();
        let out = &Disjoint::new(out);
        (0..layout.map.bands()).into_par_iter().with_max_len(1).for_each(|band| {
            let job = Job { plan: self, samples, layout, band, plane };
            match (simd, lanes) {
                #[cfg(target_arch = "x86_64")]
                // SAFETY: Simd::detect found AVX2 and FMA on this CPU.
                (Simd::Avx2Fma, 4) => unsafe {
                    interpolate_band_avx::<4>(&job, grids, factors, out, dest)
                },
                #[cfg(target_arch = "x86_64")]
                (Simd::Avx2Fma, 8) => unsafe {
                    interpolate_band_avx::<8>(&job, grids, factors, out, dest)
                },
                #[cfg(target_arch = "x86_64")]
                (Simd::Avx2Fma, 12) => unsafe {
                    interpolate_band_avx::<12>(&job, grids, factors, out, dest)
                },
                #[cfg(target_arch = "x86_64")]
                (Simd::Avx2Fma, _) => unsafe {
                    interpolate_band_avx::<16>(&job, grids, factors, out, dest)
                },
                (_, 4) => job.interpolate_band::<ScalarRows, 4>(grids, factors, out, dest),
                (_, 8) => job.interpolate_band::<ScalarRows, 8>(grids, factors, out, dest),
                (_, 12) => job.interpolate_band::<ScalarRows, 12>(grids, factors, out, dest),
                _ => job.interpolate_band::<ScalarRows, 16>(grids, factors, out, dest),
            }
        });
    }
}
