//! The order the tiled passes (`tiles`) visit samples in: the padded grid cut into bands and
//! tiles, every placed sample's tile, the samples sorted by tile (a parallel counting sort) and,
//! with w planes, by first plane within a tile, and the runs ("blocks") of samples that share a
//! tile and a first plane.
use crate::disjoint::Disjoint;
use rayon::prelude::*;

/// Tile index of a sample that is left out.
pub(super) const NO_TILE: u32 = u32::MAX;
/// Tile width in grid columns and smallest band height in grid rows (≥ W − 1 for every kernel).
pub(super) const TILE: usize = 16;

/// `g` modulo `n` in [0, n), without a division for the common |g| < n.
#[inline(always)]
fn wrap(g: i64, n: usize) -> usize {
    let n = n as i64;
    if (0..n).contains(&g) {
        g as usize
    } else if (-n..0).contains(&g) {
        (g + n) as usize
    } else {
        g.rem_euclid(n) as usize
    }
}

/// The bands and tiles of a padded grid.
#[derive(Clone, Debug)]
pub(super) struct TileMap {
    /// First row of every band, and pad_ny at the end.
    pub(super) starts: Vec<usize>,
    /// Band of every grid row.
    pub(super) band_of_row: Vec<u32>,
    /// Tiles per band (pad_nx / `TILE`, rounded up).
    pub(super) tiles_x: usize,
    pub(super) pad_nx: usize,
    pub(super) pad_ny: usize,
}

impl TileMap {
    pub(super) fn new(pad_nx: usize, pad_ny: usize) -> Self {
        let bands = (pad_ny / TILE).max(1);
        let starts: Vec<usize> = (0..=bands).map(|b| b * pad_ny / bands).collect();
        let mut band_of_row = vec![0u32; pad_ny];
        for (b, w) in starts.windows(2).enumerate() {
            band_of_row[w[0]..w[1]].iter_mut().for_each(|v| *v = b as u32);
        }
        Self { starts, band_of_row, tiles_x: pad_nx.div_ceil(TILE), pad_nx, pad_ny }
    }

    pub(super) fn bands(&self) -> usize {
        self.starts.len() - 1
    }

    /// Offsets in the tile buffer of band `band`, tile column `tx`, of a footprint whose first
    /// cell is (gx0, gy0) before wrapping (the footprint must start in that tile).
    #[inline]
    pub(super) fn offset(&self, band: usize, tx: u32, gx0: i64, gy0: i64) -> (usize, usize) {
        (wrap(gx0, self.pad_nx) - tx as usize * TILE, wrap(gy0, self.pad_ny) - self.starts[band])
    }

    /// Tile of a footprint whose first cell is (gx0, gy0) before wrapping.
    #[inline]
    pub(super) fn tile_of(&self, gx0: i64, gy0: i64) -> u32 {
        let x = wrap(gx0, self.pad_nx);
        let y = wrap(gy0, self.pad_ny);
        (self.band_of_row[y] as usize * self.tiles_x + x / TILE) as u32
    }

    /// The bands in phases: within one phase no two bands' footprints share a grid row.
    pub(super) fn phases(&self) -> Vec<Vec<usize>> {
        let n = self.bands();
        if n == 1 {
            return vec![vec![0]];
        }
        let mut phases = vec![Vec::new(), Vec::new(), Vec::new()];
        for b in 0..n {
            let phase = if n % 2 == 1 && b == n - 1 { 2 } else { b % 2 };
            phases[phase].push(b);
        }
        phases.retain(|p| !p.is_empty());
        phases
    }
}

/// A run of sorted samples with the same tile and first plane.
#[derive(Clone, Copy, Debug)]
pub(super) struct Block {
    /// Tile column inside the band.
    pub(super) tx: u32,
    pub(super) first: u32,
    pub(super) start: usize,
    pub(super) end: usize,
    /// The rectangle of the tile buffer its samples' footprints cover, once measured (see
    /// [`GridPlan::measure_blocks`]).
    pub(super) rect: Option<Rect>,
}

/// The samples sorted by tile, with the index structures of the tiled passes.
pub(super) struct Layout {
    /// Sample keys (see `Samples`) sorted by (band, tile, first plane, key).
    pub(super) order: Vec<usize>,
    pub(super) map: TileMap,
    pub(super) blocks: Vec<Block>,
    /// Blocks of band b: `blocks[band_blocks[b]..band_blocks[b + 1]]`.
    pub(super) band_blocks: Vec<usize>,
    /// Whether any sample has a non-zero weight on plane p.
    pub(super) on_plane: Vec<bool>,
}

/// Runs the samples are cut into for the parallel counting sort (any count gives the same
/// order; a few per thread keep both threads busy).
const SORT_RUNS: usize = 8;

/// Stable counting sort of the samples by tile: the samples (keys) k with `tiles[k]` ≠
/// `NO_TILE`, ordered by (tile, k), and the first position of every tile (plus the total at the
/// end).
///
/// In parallel: the keys are cut into runs of consecutive k; each run counts its tiles; within
/// every tile the runs' slots follow one another in run order; and each run then writes its
/// keys, in order, into its own slots. The result is the serial sort's, whatever the number
/// of runs or threads.
pub(super) fn sort_by_tile(tiles: &[u32], n_tiles: usize) -> (Vec<usize>, Vec<usize>) {
    let n = tiles.len();
    let runs = SORT_RUNS.min(n).max(1);
    let bounds: Vec<usize> = (0..=runs).map(|r| r * n / runs).collect();
    let counts: Vec<Vec<usize>> = (0..runs)
        .into_par_iter()
        .map(|r| {
            let mut count = vec![0usize; n_tiles];
            for &t in tiles[bounds[r]..bounds[r + 1]].iter().filter(|&&t| t != NO_TILE) {
                count[t as usize] += 1;
            }
            count
        })
        .collect();
    let mut tile_starts = vec![0usize; n_tiles + 1];
    let mut slots = vec![vec![0usize; n_tiles]; runs];
    let mut next = 0;
    for t in 0..n_tiles {
        tile_starts[t] = next;
        for (slot, count) in slots.iter_mut().zip(&counts) {
            slot[t] = next;
            next += count[t];
        }
    }
    tile_starts[n_tiles] = next;
    let mut order: Vec<usize> = crate::grid_pool::fresh_zeroed(next);
    let out = Disjoint::new(&mut order);
    slots.into_par_iter().enumerate().for_each(|(r, mut slot)| {
        for (k, &t) in tiles.iter().enumerate().take(bounds[r + 1]).skip(bounds[r]) {
            if t != NO_TILE {
                // SAFETY: run r's slots in tile t, [slots_r(t), slots_r(t) + count_r(t)), are
                // disjoint from every other run's and tile's, and run r writes exactly
                // count_r(t) samples there, one per position.
                unsafe { *out.slot(slot[t as usize]) = k };
                slot[t as usize] += 1;
            }
        }
    });
    (order, tile_starts)
}

impl Layout {
    /// The samples (keys) k whose tile in `map` is `tiles[k]` (`NO_TILE`: left out, or no
    /// sample), with first plane `first(k)`, sorted for the tiled passes over `n_planes` planes.
    pub(super) fn new(
        tiles: &[u32],
        map: TileMap,
        n_planes: usize,
        first: impl Fn(usize) -> u32 + Sync,
    ) -> Self {
        let n_tiles = map.bands() * map.tiles_x;
        let (mut order, tile_starts) = sort_by_tile(tiles, n_tiles);
        // Within a tile, by first plane (and by key within one first plane).
        let firsts: Option<Vec<u32>> = (n_planes > 1).then(|| {
            let mut keyed: Vec<(u32, usize)> = order.par_iter().map(|&k| (first(k), k)).collect();
            let mut rest: &mut [(u32, usize)] = &mut keyed;
            let mut buckets = Vec::with_capacity(n_tiles);
            for t in 0..n_tiles {
                let (bucket, tail) = rest.split_at_mut(tile_starts[t + 1] - tile_starts[t]);
                buckets.push(bucket);
                rest = tail;
            }
            // (first, key) pairs are distinct, so the order is fully determined.
            buckets.into_par_iter().for_each(|b| b.sort_unstable());
            order.par_iter_mut().zip(&keyed).for_each(|(o, k)| *o = k.1);
            keyed.into_par_iter().map(|k| k.0).collect()
        });
        // Blocks band by band (in parallel), then joined in band order.
        let per_band: Vec<Vec<Block>> = (0..map.bands())
            .into_par_iter()
            .map(|b| {
                let mut blocks: Vec<Block> = Vec::new();
                for t in b * map.tiles_x..(b + 1) * map.tiles_x {
                    let tx = (t % map.tiles_x) as u32;
                    let (a, z) = (tile_starts[t], tile_starts[t + 1]);
                    let Some(firsts) = &firsts else {
                        if a < z {
                            blocks.push(Block { tx, first: 0, start: a, end: z, rect: None });
                        }
                        continue;
                    };
                    for (k, &first) in (a..z).zip(&firsts[a..z]) {
                        match blocks.last_mut() {
                            Some(b) if b.end == k && k > a && b.first == first => b.end = k + 1,
                            _ => blocks.push(Block { tx, first, start: k, end: k + 1, rect: None }),
                        }
                    }
                }
                blocks
            })
            .collect();
        let mut band_blocks = Vec::with_capacity(map.bands() + 1);
        band_blocks.push(0);
        for b in &per_band {
            band_blocks.push(band_blocks.last().copied().unwrap_or(0) + b.len());
        }
        let blocks: Vec<Block> = per_band.into_iter().flatten().collect();
        // A plane holds samples when a block starts within W planes below it (a superset when
        // spans are cut at the last plane; empty planes then only cost an FFT of zero rows).
        let mut on_plane = vec![false; n_planes];
        for b in &blocks {
            on_plane[b.first as usize] = true;
        }
        Self { order, map, blocks, band_blocks, on_plane }
    }

    /// Whether any sample may touch plane `p` (W = `support`).
    pub(super) fn has_plane(&self, p: usize, support: usize) -> bool {
        self.on_plane[(p + 1).saturating_sub(support)..=p].iter().any(|&t| t)
    }

    /// Blocks of band `b` whose first plane lets them touch plane `p` (all when `p` is None).
    pub(super) fn blocks_on(
        &self,
        b: usize,
        p: Option<usize>,
        support: usize,
    ) -> impl Iterator<Item = &Block> {
        self.blocks[self.band_blocks[b]..self.band_blocks[b + 1]].iter().filter(move |bl| {
            p.is_none_or(|p| (bl.first as usize) <= p && p < bl.first as usize + support)
        })
    }

    /// Mark in `rows` every grid row a footprint on plane `p` may touch (per band: its rows and
    /// the W − 1 after it).
    pub(super) fn mark_rows(&self, p: Option<usize>, support: usize, rows: &mut [bool]) {
        let py = self.map.pad_ny;
        for b in 0..self.map.bands() {
            if self.blocks_on(b, p, support).next().is_none() {
                continue;
            }
            for y in self.map.starts[b]..self.map.starts[b + 1] + support - 1 {
                rows[y % py] = true;
            }
        }
    }
}

/// Smallest rectangle (columns c0..c1, rows r0..r1 of a tile buffer) holding some footprints.
#[derive(Clone, Copy, Debug)]
pub(super) struct Rect {
    pub(super) c0: usize,
    pub(super) c1: usize,
    pub(super) r0: usize,
    pub(super) r1: usize,
}

impl Rect {
    pub(super) fn union(a: Rect, b: Rect) -> Rect {
        Rect { c0: a.c0.min(b.c0), c1: a.c1.max(b.c1), r0: a.r0.min(b.r0), r1: a.r1.max(b.r1) }
    }

    /// Grow `rect` to hold the W × W footprint starting at (dx, dy).
    pub(super) fn grow(rect: &mut Option<Rect>, dx: usize, dy: usize, w: usize) {
        let footprint = Rect { c0: dx, c1: dx + w, r0: dy, r1: dy + w };
        *rect = Some(rect.map_or(footprint, |r| Rect::union(r, footprint)));
    }
}
