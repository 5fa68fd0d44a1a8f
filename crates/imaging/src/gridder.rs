//! The gridding and degridding passes of [`GridPlan`]: ES-kernel spreading on the padded grid,
//! one pruned FFT per output image and w plane (see `plane_fft`), and the grid correction.
//!
//! Work layout: every (row, channel) sample is placed once per call (mirrored into the plan's
//! half of uvw space when the plan folds, see [`GridPlan`]; fractional cell, w-plane coordinate,
//! first plane and plane count, and the grid tile its footprint starts in), and the samples are
//! sorted by tile (a parallel counting sort, see `layout`). For each w plane the samples touching
//! it are spread band by band and tile by tile through a small cache-resident buffer; bands that could write
//! the same grid rows never run at the same time, so every grid cell is summed in one fixed order
//! and the images are identical bit for bit with any number of threads. Degridding reads each
//! tile's window of the plane into the same kind of buffer, computes each sample in one task and
//! adds its planes in plane order, which is equally independent of the thread count.
use crate::disjoint::Disjoint;
use crate::error::ImagingError;
use crate::grid_pool::fresh_grid;
use crate::operator::{check_degrid_args, check_grid_args, GridOutput, ImagingOperator};
use crate::params::w_range_of;
use crate::plan::GridPlan;
use crate::plane_fft::Screens;
use beamfloor_core::{ImageGeometry, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_predict::VisSet;
#[cfg(test)]
use layout::sort_by_tile;
use layout::{Layout, TileMap, NO_TILE};
use ndarray::{Array2, Array3, ArrayView3};
use num_complex::Complex64;
use rayon::prelude::*;
use std::borrow::Cow;
use tiles::{Destination, GridValues};

mod layout;
#[cfg(test)]
mod tests;
mod tile_rows;
mod tiles;

const ZERO: Complex64 = Complex64 { re: 0.0, im: 0.0 };

/// ⌈x⌉ for finite x (saturating far outside any grid), without a libm call.
#[inline(always)]
fn ceil_i64(x: f64) -> i64 {
    let t = x as i64;
    if (t as f64) < x {
        t.saturating_add(1)
    } else {
        t
    }
}

/// ⌊x⌋ for finite x (saturating far outside any grid), without a libm call.
#[inline(always)]
fn floor_i64(x: f64) -> i64 {
    let t = x as i64;
    if (t as f64) > x {
        t.saturating_sub(1)
    } else {
        t
    }
}

/// Where the samples of a visibility set fall on the padded grid and the w planes: sample
/// i = row · n_chan + chan sits at fractional cell (s_x, s_y) = (u x_scale, v y_scale) and plane
/// coordinate (w ν/c − w0)/Δw, with uvw in metres.
///
/// The tiled passes name a sample by its key, row · 2^b + chan with 2^b ≥ n_chan, so that its
/// row and channel are a shift and a mask away (keys increase with i).
struct Samples<'a> {
    /// uvw rows in metres, row-major (row · 3 + axis).
    uvw: Cow<'a, [f64]>,
    n_chan: usize,
    /// b of the keys.
    shift: u32,
    /// Per channel: −ν/c · cell · pad_nx, ν/c · cell · pad_ny and ν/c.
    x_scale: Vec<f64>,
    y_scale: Vec<f64>,
    per_lambda: Vec<f64>,
}

impl<'a> Samples<'a> {
    fn new(plan: &GridPlan, vis: &'a VisSet) -> Self {
        let uvw = match vis.uvw_m.as_slice() {
            Some(s) => Cow::Borrowed(s),
            None => Cow::Owned(vis.uvw_m.iter().copied().collect()),
        };
        let cell = plan.geometry.cell_rad;
        let per_lambda: Vec<f64> =
            vis.frequencies_hz.iter().map(|f| f / SPEED_OF_LIGHT_M_PER_S).collect();
        Self {
            uvw,
            n_chan: vis.n_channels(),
            shift: vis.n_channels().next_power_of_two().trailing_zeros(),
            x_scale: per_lambda.iter().map(|s| -s * cell * plan.pad_nx as f64).collect(),
            y_scale: per_lambda.iter().map(|s| s * cell * plan.pad_ny as f64).collect(),
            per_lambda,
        }
    }

    /// Row and channel of the sample with key `key`.
    #[inline(always)]
    fn row_chan(&self, key: usize) -> (usize, usize) {
        (key >> self.shift, key & ((1 << self.shift) - 1))
    }

    /// exp(sign · 2πi w c) for the sample of row `r`, channel `c` (w in wavelengths, as
    /// measured, before any mirroring; c the plan's w shift, see [`GridPlan`]).
    #[inline]
    fn w_phasor(&self, plan: &GridPlan, r: usize, c: usize, sign: f64) -> Complex64 {
        plan.w_shift_phasor(self.uvw[3 * r + 2] * self.per_lambda[c], sign)
    }

    /// Index i of the sample with key `key`.
    #[inline(always)]
    fn index(&self, key: usize) -> usize {
        let (r, c) = self.row_chan(key);
        r * self.n_chan + c
    }

    /// Channel, fractional cells (s_x, s_y), plane coordinate (0 when w is ignored) and
    /// mirroring of the sample with key `key`: when the plan folds (see [`GridPlan`]), a sample
    /// of the other half (w < 0 with w planes, else v < 0) is placed at (−u, −v, −w) and `true`
    /// says its value is to be conjugated. Whether a sample is mirrored depends only on the sign of its
    /// row's v or w, so all channels of a row agree.
    #[inline(always)]
    fn at(&self, plan: &GridPlan, key: usize) -> (usize, f64, f64, f64, bool) {
        let (r, c) = self.row_chan(key);
        let uvw = &self.uvw[3 * r..3 * r + 3];
        let (sx, sy) = (uvw[0] * self.x_scale[c], uvw[1] * self.y_scale[c]);
        match plan.planes {
            None if plan.fold && sy < 0.0 => (c, -sx, -sy, 0.0, true),
            None => (c, sx, sy, 0.0, false),
            Some(p) => {
                let w = uvw[2] * self.per_lambda[c];
                if plan.fold && w < 0.0 {
                    (c, -sx, -sy, p.coordinate(-w), true)
                } else {
                    (c, sx, sy, p.coordinate(w), false)
                }
            }
        }
    }
}

impl GridPlan {
    /// First plane and number of planes (≤ W) with a non-zero ES weight for a sample at plane
    /// coordinate `w`: the planes p with |p − w| < W/2.
    #[inline(always)]
    fn plane_span(&self, w: f64) -> (usize, usize) {
        let Some(planes) = self.planes else { return (0, 1) };
        let half = 0.5 * self.kernel.support() as f64;
        let lo = (floor_i64(w - half) + 1).max(0);
        let hi = (ceil_i64(w + half) - 1).min(planes.count as i64 - 1);
        if hi < lo {
            (lo as usize, 0)
        } else {
            (lo as usize, (hi - lo + 1) as usize)
        }
    }

    /// Every sample of `vis` that touches a plane, sorted by tile. (Samples whose values are
    /// zero are placed too: testing them here would read every value once more, and the
    /// spreading skips them anyway.)
    fn layout(&self, samples: &Samples, n_rows: usize) -> Layout {
        /// Rows per task of the tile pass.
        const ROWS: usize = 512;
        let map = TileMap::new(self.pad_nx, self.pad_ny);
        let nc = samples.n_chan;
        let keys_per_row = 1 << samples.shift;
        let half = 0.5 * self.kernel.support() as f64;
        // Indexed by key: the slots of channels nc..2^b of every row stay NO_TILE.
        let mut tiles = vec![NO_TILE; n_rows * keys_per_row];
        tiles.par_chunks_mut(ROWS * keys_per_row).enumerate().for_each(|(chunk, t)| {
            for (r, t) in (chunk * ROWS..).zip(t.chunks_exact_mut(keys_per_row)) {
                let t = &mut t[..nc];
                if self.planes.is_none() {
                    // `Samples::at` without planes, with the row's u and v loaded once.
                    let (u, v) = (samples.uvw[3 * r], samples.uvw[3 * r + 1]);
                    for ((t, &xs), &ys) in t.iter_mut().zip(&samples.x_scale).zip(&samples.y_scale)
                    {
                        let (sx, sy) = (u * xs, v * ys);
                        let (sx, sy) = if self.fold && sy < 0.0 { (-sx, -sy) } else { (sx, sy) };
                        *t = map.tile_of(ceil_i64(sx - half), ceil_i64(sy - half));
                    }
                    continue;
                }
                for (c, t) in t.iter_mut().enumerate() {
                    let (_, sx, sy, w, _) = samples.at(self, (r << samples.shift) | c);
                    if self.plane_span(w).1 > 0 {
                        // The same first cell as the polynomial taps compute: ⌈s − W/2⌉.
                        *t = map.tile_of(ceil_i64(sx - half), ceil_i64(sy - half));
                    }
                }
            }
        });
        Layout::new(&tiles, map, self.n_w_planes(), |key| {
            self.plane_span(samples.at(self, key).3).0 as u32
        })
    }

    fn check_w(&self, vis: &VisSet) -> Result<(), ImagingError> {
        if self.planes.is_none() || vis.n_rows() == 0 {
            return Ok(());
        }
        let r = w_range_of(vis.uvw_m.column(2).iter().copied(), &vis.frequencies_hz);
        for w in [r.min_lambda, r.max_lambda] {
            if !self.w_range.contains(w) {
                return Err(ImagingError::WOutOfRange {
                    w_lambda: w,
                    min_lambda: self.w_range.min_lambda,
                    max_lambda: self.w_range.max_lambda,
                });
            }
        }
        Ok(())
    }

    /// The plane argument of the tiled passes: None when w is ignored.
    fn plane_arg(&self, p: usize) -> Option<usize> {
        self.planes.map(|_| p)
    }
}

impl ImagingOperator for GridPlan {
    fn geometry(&self) -> ImageGeometry {
        self.geometry
    }

    fn grid(
        &self,
        vis: &VisSet,
        sources: &[ArrayView3<'_, Complex64>],
        outputs: &[GridOutput],
    ) -> Result<Vec<Array2<f64>>, ImagingError> {
        check_grid_args(vis, sources, outputs)?;
        self.check_w(vis)?;
        let (nx, ny) = (self.geometry.nx, self.geometry.ny);
        let (px, py) = (self.pad_nx, self.pad_ny);
        let n_out = outputs.len();
        if n_out == 0 {
            return Ok(Vec::new());
        }
        let (nc, np) = (vis.n_channels(), vis.n_correlations());
        // Sum of the correlations of every sample, per source (the Stokes-I numerator); the
        // source itself when there is one contiguous source of one correlation.
        let n_src = sources.len();
        let samples = Samples::new(self, vis);
        // With shifted w planes (see `GridPlan`), each value times exp(+2πi w c).
        let shifted = self.w_shift != 0.0;
        let summed: Cow<[Complex64]> = match (n_src, np, sources[0].as_slice(), shifted) {
            (1, 1, Some(all), false) => Cow::Borrowed(all),
            _ => {
                let mut summed = vec![ZERO; vis.n_rows() * nc * n_src];
                summed.par_chunks_mut(n_src).enumerate().for_each(|(i, v)| {
                    let (r, c) = (i / nc, i % nc);
                    let phasor = shifted.then(|| samples.w_phasor(self, r, c, 1.0));
                    for (x, src) in v.iter_mut().zip(sources) {
                        let sum: Complex64 = match src.as_slice() {
                            Some(all) => all[i * np..(i + 1) * np].iter().sum(),
                            None => src.slice(ndarray::s![r, c, ..]).iter().sum(),
                        };
                        *x = phasor.map_or(sum, |p| sum * p);
                    }
                });
                Cow::Owned(summed)
            }
        };
        let summed = &*summed;
        let layout = self.layout(&samples, vis.n_rows());
        let values = GridValues { summed, n_src, outputs };
        let w = self.kernel.support();
        let mut grids = self.pool.take(n_out, px * py);
        let mut rows = vec![false; py];
        let mut images_t = vec![vec![0.0; nx * ny]; n_out];
        let mut screens = Screens::of_plan(self, 1.0);
        let mut fresh = true;
        for p in 0..self.n_w_planes() {
            if !layout.has_plane(p, w) {
                continue;
            }
            let plane = self.plane_arg(p);
            self.spread_plane(&samples, &layout, &values, plane, &mut grids);
            rows.iter_mut().for_each(|t| *t = false);
            layout.mark_rows(plane, w, &mut rows);
            let screen = screens.plane(p);
            for (grid, image_t) in grids.iter_mut().zip(images_t.iter_mut()) {
                self.add_plane_to_image(grid, &rows, screen, image_t, fresh);
            }
            fresh = false;
        }
        // Every plane's transform left its grid zero again.
        self.pool.give_back(grids, true);
        Ok(images_t
            .iter()
            .map(|image_t| {
                let mut image = Array2::<f64>::zeros((ny, nx));
                let img = image.as_slice_mut().expect("fresh array is contiguous");
                self.untranspose_into(image_t, img);
                image
            })
            .collect())
    }

    fn degrid(
        &self,
        vis: &VisSet,
        images: &[Array2<f64>],
        channel_factors: &[Vec<f64>],
    ) -> Result<Array3<Complex64>, ImagingError> {
        check_degrid_args(vis, self.geometry, images, channel_factors)?;
        self.check_w(vis)?;
        let (px, py) = (self.pad_nx, self.pad_ny);
        let (n_rows, nc, np) = (vis.n_rows(), vis.n_channels(), vis.n_correlations());
        let mut out = Array3::from_shape_vec((n_rows, nc, np), fresh_grid(n_rows * nc * np))
            .expect("sized to the shape");
        if !images.is_empty() {
            let samples = Samples::new(self, vis);
            let mut layout = self.layout(&samples, n_rows);
            if self.n_w_planes() > 1 {
                self.measure_blocks(&samples, &mut layout);
            }
            let images_t: Vec<Vec<f64>> = images
                .iter()
                .map(|im| {
                    let im = im.as_standard_layout();
                    self.transposed(im.as_slice().expect("standard layout is contiguous"))
                })
                .collect();
            let w = self.kernel.support();
            // A plane's transform writes every grid row its samples read, so stale values
            // elsewhere are never seen.
            let mut grids = self.pool.take_any(images.len(), px * py);
            let mut rows = vec![false; py];
            let all = out.as_slice_mut().expect("fresh array is contiguous");
            // One plane: each sample's value goes straight to its place. Several: each sample
            // adds up to W planes, summed in layout order (sequential within a tile) and put in
            // place once at the end.
            let sorted = self.n_w_planes() > 1;
            let mut acc = if sorted { fresh_grid(layout.order.len()) } else { Vec::new() };
            let (target, dest) = if sorted {
                (&mut acc[..], Destination::Sorted)
            } else {
                (&mut all[..], Destination::Samples(np))
            };
            let mut screens = Screens::of_plan(self, -1.0);
            for p in 0..self.n_w_planes() {
                if !layout.has_plane(p, w) {
                    continue;
                }
                let plane = self.plane_arg(p);
                rows.iter_mut().for_each(|t| *t = false);
                layout.mark_rows(plane, w, &mut rows);
                let screen = screens.plane(p);
                for (image_t, grid) in images_t.iter().zip(grids.iter_mut()) {
                    self.plane_from_image(image_t, screen, &rows, grid, self.n_w_planes() > 1);
                }
                self.interpolate_plane(
                    &samples,
                    &layout,
                    &grids,
                    channel_factors,
                    plane,
                    target,
                    dest,
                );
            }
            self.pool.give_back(grids, false);
            if sorted {
                // The same value for every correlation of the sample; with shifted w planes (see
                // `GridPlan`), times exp(−2πi w c).
                let shifted = self.w_shift != 0.0;
                let all = Disjoint::new(all);
                layout.order.par_iter().zip(acc).with_min_len(4096).for_each(|(&key, v)| {
                    let (r, c) = samples.row_chan(key);
                    let v = if shifted { v * samples.w_phasor(self, r, c, -1.0) } else { v };
                    let i = r * nc + c;
                    for slot in i * np..(i + 1) * np {
                        // SAFETY: every key sits once in the layout's order, so sample i's
                        // places are written by this task alone.
                        unsafe { *all.slot(slot) = v };
                    }
                });
            } else {
                debug_assert!(self.w_shift == 0.0, "shifted planes are always more than one");
            }
        }
        Ok(out)
    }
}
