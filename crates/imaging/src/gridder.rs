//! The gridding and degridding passes of [`GridPlan`]: ES-kernel spreading on the padded grid,
//! one pruned FFT per output image and w plane (see `plane_fft`), and the grid correction.
//!
//! Work layout: every (row, channel) sample is placed once per call (fractional cell, w-plane
//! coordinate, first plane and plane count) and the samples are ordered by first plane. For
//! plane p the samples touching it are then one contiguous run. Gridding splits the padded grid
//! into bands of [`BAND_ROWS`] rows; each band adds, in sample order, the rows of every
//! footprint that fall in it, into one grid per output shared by all bands (no private grid
//! copies, no reduction). Every grid cell is therefore summed by one task in a fixed order, and
//! the images are identical bit for bit with any number of threads. Degridding gives each
//! sample to one task and adds its planes in plane order, which is equally independent of the
//! thread count.
use crate::error::ImagingError;
use crate::kernel_poly::MAX_TAPS;
use crate::operator::{check_degrid_args, check_grid_args, GridOutput, ImagingOperator};
use crate::params::w_range_of;
use crate::plan::GridPlan;
use crate::plane_fft::Screens;
use beamfloor_core::{ImageGeometry, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3, ArrayView3};
use num_complex::Complex64;
use rayon::prelude::*;
use std::ops::Range;

const ZERO: Complex64 = Complex64 { re: 0.0, im: 0.0 };

/// Grid rows per gridding band (the unit of parallel spreading; fixed, so that results do not
/// depend on the thread count).
const BAND_ROWS: usize = 16;
/// Samples per degridding task.
const DEGRID_SAMPLES: usize = 512;

/// One (row, channel) sample placed on the padded grid and on the w planes.
#[derive(Clone, Copy, Debug)]
struct Placed {
    /// Sample index row · n_chan + chan.
    sample: usize,
    /// Fractional cell along x and y.
    sx: f64,
    sy: f64,
    /// w-plane coordinate (0 when w is ignored).
    w: f64,
    /// First plane touched and number of planes (≤ W; 1 when w is ignored).
    first: usize,
    count: usize,
}

/// The rows j0..j1 of one sample's footprint that fall in one band.
#[derive(Clone, Copy, Debug)]
struct Visit {
    /// Index into the placed samples.
    placed: u32,
    j0: u8,
    j1: u8,
}

impl GridPlan {
    /// First plane and number of planes (≤ W) with a non-zero ES weight for a sample at plane
    /// coordinate `w`: the planes p with |p − w| < W/2.
    #[inline]
    fn plane_span(&self, w: f64) -> (usize, usize) {
        let Some(planes) = self.planes else { return (0, 1) };
        let half = 0.5 * self.kernel.support() as f64;
        let lo = ((w - half).floor() + 1.0).max(0.0) as usize;
        let hi = ((w + half).ceil() - 1.0).min(planes.count as f64 - 1.0);
        if hi < lo as f64 {
            (lo, 0)
        } else {
            (lo, hi as usize - lo + 1)
        }
    }

    /// Weight of plane `p` for a sample at plane coordinate `w` (1 when w is ignored).
    #[inline]
    fn plane_weight(&self, w: f64, p: usize) -> f64 {
        match self.planes {
            Some(_) => {
                let half = 0.5 * self.kernel.support() as f64;
                self.kernel.phi((p as f64 - w) / half)
            }
            None => 1.0,
        }
    }

    /// Every sample of `vis` for which `keep(sample)` holds, placed, ordered by first plane
    /// (then by sample index).
    fn place(&self, vis: &VisSet, keep: impl Fn(usize) -> bool + Sync) -> Vec<Placed> {
        let nc = vis.n_channels();
        let cell = self.geometry.cell_rad;
        let (px, py) = (self.pad_nx as f64, self.pad_ny as f64);
        let mut placed: Vec<Placed> = (0..vis.n_rows() * nc)
            .into_par_iter()
            .filter(|&i| keep(i))
            .filter_map(|i| {
                let (r, c) = (i / nc, i % nc);
                let scale = vis.frequencies_hz[c] / SPEED_OF_LIGHT_M_PER_S;
                let (u, v, w) = (
                    vis.uvw_m[[r, 0]] * scale,
                    vis.uvw_m[[r, 1]] * scale,
                    vis.uvw_m[[r, 2]] * scale,
                );
                let w = self.planes.map_or(0.0, |p| p.coordinate(w));
                let (first, count) = self.plane_span(w);
                (count > 0).then_some(Placed {
                    sample: i,
                    sx: -u * cell * px,
                    sy: v * cell * py,
                    w,
                    first,
                    count,
                })
            })
            .collect();
        placed.sort_by_key(|s| s.first);
        placed
    }

    /// The run of `placed` (sorted by first plane) whose span can include plane `p`.
    fn on_plane(&self, placed: &[Placed], p: usize) -> Range<usize> {
        let lowest = (p + 1).saturating_sub(self.kernel.support());
        placed.partition_point(|s| s.first < lowest)..placed.partition_point(|s| s.first <= p)
    }

    /// First footprint row (before wrapping) and the x taps/start of a placed sample.
    #[inline]
    fn taps(&self, s: &Placed, kx: &mut [f64; MAX_TAPS], ky: &mut [f64; MAX_TAPS]) -> (i64, i64) {
        (self.poly.taps(s.sx, kx), self.poly.taps(s.sy, ky))
    }

    /// Mark the grid rows the footprints of `placed[range]` touching plane `p` cover.
    fn mark_rows(&self, placed: &[Placed], p: Option<usize>, rows: &mut [bool]) {
        let w = self.kernel.support() as i64;
        let half = 0.5 * w as f64;
        let py = self.pad_ny as i64;
        for s in placed {
            if p.is_some_and(|p| p >= s.first + s.count) {
                continue;
            }
            let y0 = (s.sy - half).ceil() as i64;
            for j in 0..w {
                rows[(y0 + j).rem_euclid(py) as usize] = true;
            }
        }
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

    /// Per band, the visits of every placed sample (in placed order).
    fn band_visits(&self, placed: &[Placed]) -> Vec<Vec<Visit>> {
        let w = self.kernel.support();
        let half = 0.5 * w as f64;
        let py = self.pad_ny;
        let mut bands: Vec<Vec<Visit>> = vec![Vec::new(); py.div_ceil(BAND_ROWS)];
        for (k, s) in placed.iter().enumerate() {
            let y0 = (s.sy - half).ceil() as i64;
            let mut j = 0;
            while j < w {
                let y = (y0 + j as i64).rem_euclid(py as i64) as usize;
                let band = y / BAND_ROWS;
                let run = (w - j).min((band + 1) * BAND_ROWS - y).min(py - y);
                bands[band].push(Visit { placed: k as u32, j0: j as u8, j1: (j + run) as u8 });
                j += run;
            }
        }
        bands
    }
}

/// `line[gx0 + i (wrapped)] += val · kx[i]` for i < W.
#[inline(always)]
fn add_row(line: &mut [Complex64], gx0: i64, kx: &[f64], val: Complex64) {
    let px = line.len() as i64;
    let w = kx.len() as i64;
    if gx0 >= 0 && gx0 + w <= px {
        let start = gx0 as usize;
        for (g, &k) in line[start..start + kx.len()].iter_mut().zip(kx) {
            *g += val * k;
        }
    } else {
        for (i, &k) in kx.iter().enumerate() {
            line[(gx0 + i as i64).rem_euclid(px) as usize] += val * k;
        }
    }
}

/// Σ_i line[gx0 + i (wrapped)] · kx[i].
#[inline(always)]
fn read_row(line: &[Complex64], gx0: i64, kx: &[f64]) -> Complex64 {
    let px = line.len() as i64;
    let w = kx.len() as i64;
    let mut sum = ZERO;
    if gx0 >= 0 && gx0 + w <= px {
        let start = gx0 as usize;
        for (g, &k) in line[start..start + kx.len()].iter().zip(kx) {
            sum += g * k;
        }
    } else {
        for (i, &k) in kx.iter().enumerate() {
            sum += line[(gx0 + i as i64).rem_euclid(px) as usize] * k;
        }
    }
    sum
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
        // Sum of the correlations of every sample, per source (the Stokes-I numerator).
        let n_src = sources.len();
        let mut summed = vec![ZERO; vis.n_rows() * nc * n_src];
        summed.par_chunks_mut(n_src).enumerate().for_each(|(i, v)| {
            let (r, c) = (i / nc, i % nc);
            for (x, src) in v.iter_mut().zip(sources) {
                *x = match src.as_slice() {
                    Some(all) => all[i * np..(i + 1) * np].iter().sum(),
                    None => src.slice(ndarray::s![r, c, ..]).iter().sum(),
                };
            }
        });
        let summed = &summed;
        let placed =
            self.place(vis, |i| summed[i * n_src..(i + 1) * n_src].iter().any(|v| *v != ZERO));
        let visits = self.band_visits(&placed);
        let w = self.kernel.support();
        let mut grids = vec![vec![ZERO; px * py]; n_out];
        let mut rows = vec![false; py];
        let mut images_t = vec![vec![0.0; nx * ny]; n_out];
        let correction = self.inverse_correction.as_slice().expect("plan arrays are contiguous");
        let mut screens = Screens::new(self, correction, 1.0);
        for p in 0..self.n_w_planes() {
            let run = self.on_plane(&placed, p);
            if run.is_empty() {
                continue;
            }
            let mut per_band: Vec<(Vec<&mut [Complex64]>, &mut [bool])> =
                rows.chunks_mut(BAND_ROWS).map(|r| (Vec::with_capacity(n_out), r)).collect();
            for grid in grids.iter_mut() {
                for (b, chunk) in grid.chunks_mut(BAND_ROWS * px).enumerate() {
                    per_band[b].0.push(chunk);
                }
            }
            let placed = &placed;
            per_band.into_par_iter().zip(visits.par_iter()).enumerate().for_each(
                |(b, ((mut chunks, band_rows), visits))| {
                    let (lo, hi) = (run.start as u32, run.end as u32);
                    let a = visits.partition_point(|v| v.placed < lo);
                    let z = visits.partition_point(|v| v.placed < hi);
                    let (mut kx, mut ky) = ([0.0; MAX_TAPS], [0.0; MAX_TAPS]);
                    let mut vals = vec![ZERO; n_out];
                    for v in &visits[a..z] {
                        let s = &placed[v.placed as usize];
                        if p >= s.first + s.count {
                            continue;
                        }
                        let kw = self.plane_weight(s.w, p);
                        if kw == 0.0 {
                            continue;
                        }
                        let c = s.sample % nc;
                        let src = &summed[s.sample * n_src..(s.sample + 1) * n_src];
                        for (x, o) in vals.iter_mut().zip(outputs) {
                            *x = src[o.source] * (o.channel_factors[c] * kw);
                        }
                        let (gx0, gy0) = self.taps(s, &mut kx, &mut ky);
                        let (j0, j1) = (v.j0 as usize, v.j1 as usize);
                        for (j, &k) in ky[j0..j1].iter().enumerate() {
                            let y = (gy0 + (j0 + j) as i64).rem_euclid(py as i64) as usize
                                - b * BAND_ROWS;
                            band_rows[y] = true;
                            for (chunk, &val) in chunks.iter_mut().zip(&vals) {
                                if val == ZERO {
                                    continue;
                                }
                                add_row(&mut chunk[y * px..(y + 1) * px], gx0, &kx[..w], val * k);
                            }
                        }
                    }
                },
            );
            if !rows.iter().any(|&t| t) {
                continue;
            }
            let screen = screens.plane(p);
            for (grid, image_t) in grids.iter_mut().zip(images_t.iter_mut()) {
                self.add_plane_to_image(grid, &rows, screen, image_t);
            }
            rows.iter_mut().for_each(|t| *t = false);
        }
        Ok(images_t
            .iter()
            .map(|image_t| {
                let mut image = Array2::<f64>::zeros((ny, nx));
                let img = image.as_slice_mut().expect("fresh array is contiguous");
                self.add_untransposed(image_t, img);
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
        let nx = self.geometry.nx;
        let (px, py) = (self.pad_nx, self.pad_ny);
        let (n_rows, nc, np) = (vis.n_rows(), vis.n_channels(), vis.n_correlations());
        let mut out = vec![ZERO; n_rows * nc];
        if !images.is_empty() {
            let placed = self.place(vis, |_| true);
            let images_t: Vec<Vec<f64>> = images
                .iter()
                .map(|im| {
                    let im = im.as_standard_layout();
                    self.transposed(im.as_slice().expect("standard layout is contiguous"))
                })
                .collect();
            let w = self.kernel.support();
            let mut grids = vec![vec![ZERO; px * py]; images.len()];
            let mut columns = vec![ZERO; nx * py];
            let mut rows = vec![false; py];
            let correction =
                self.inverse_correction.as_slice().expect("plan arrays are contiguous");
            let mut screens = Screens::new(self, correction, -1.0);
            for p in 0..self.n_w_planes() {
                let run = self.on_plane(&placed, p);
                if run.is_empty() {
                    continue;
                }
                let on_plane = &placed[run];
                rows.iter_mut().for_each(|t| *t = false);
                self.mark_rows(on_plane, Some(p), &mut rows);
                let screen = screens.plane(p);
                for (image_t, grid) in images_t.iter().zip(grids.iter_mut()) {
                    self.plane_from_image(image_t, screen, &rows, &mut columns, grid);
                }
                let grids = &grids;
                let values: Vec<Complex64> = on_plane
                    .par_chunks(DEGRID_SAMPLES)
                    .flat_map_iter(|chunk| {
                        let (mut kx, mut ky) = ([0.0; MAX_TAPS], [0.0; MAX_TAPS]);
                        chunk
                            .iter()
                            .map(|s| {
                                if p >= s.first + s.count {
                                    return ZERO;
                                }
                                let kw = self.plane_weight(s.w, p);
                                if kw == 0.0 {
                                    return ZERO;
                                }
                                let c = s.sample % nc;
                                let (gx0, gy0) = self.taps(s, &mut kx, &mut ky);
                                let mut acc = ZERO;
                                for (grid, f) in grids.iter().zip(channel_factors) {
                                    if f[c] == 0.0 {
                                        continue;
                                    }
                                    let mut sum = ZERO;
                                    for (j, &k) in ky[..w].iter().enumerate() {
                                        let y = (gy0 + j as i64).rem_euclid(py as i64) as usize;
                                        sum += read_row(&grid[y * px..(y + 1) * px], gx0, &kx[..w])
                                            * k;
                                    }
                                    acc += sum * f[c];
                                }
                                acc * kw
                            })
                            .collect::<Vec<_>>()
                    })
                    .collect();
                for (s, v) in on_plane.iter().zip(values) {
                    out[s.sample] += v;
                }
            }
        }
        Ok(Array3::from_shape_fn((n_rows, nc, np), |(r, c, _)| out[r * nc + c]))
    }
}
