//! The gridding and degridding passes of [`GridPlan`]: ES-kernel spreading on the padded grid,
//! one FFT per output image and w plane, and the grid correction.
use crate::error::ImagingError;
use crate::kernel_poly::MAX_TAPS;
use crate::operator::{check_degrid_args, check_grid_args, GridOutput, ImagingOperator};
use crate::params::w_range_of;
use crate::plan::GridPlan;
use beamfloor_core::{ImageGeometry, SPEED_OF_LIGHT_M_PER_S};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3, ArrayView3};
use num_complex::Complex64;
use rayon::prelude::*;
use std::f64::consts::PI;
use std::ops::Range;

const ZERO: Complex64 = Complex64 { re: 0.0, im: 0.0 };

/// Row blocks of one gridding pass: fixed, so that results do not depend on the thread count
/// (see `grid`); enough to keep eight cores busy.
const GRID_BLOCKS: usize = 8;

/// Kernel taps and grid indices of one sample (scratch reused across samples). When the
/// footprint does not cross the padded grid's edge (`contiguous`), rows start at `y0 · pad_nx +
/// x0` and the W cells of each row are one slice; otherwise `ix`/`iy` hold wrapped indices.
struct Footprint {
    kx: [f64; MAX_TAPS],
    ky: [f64; MAX_TAPS],
    x0: usize,
    y0: usize,
    contiguous: bool,
    ix: Vec<usize>,
    iy: Vec<usize>,
}

impl Footprint {
    fn new(w: usize) -> Self {
        Self {
            kx: [0.0; MAX_TAPS],
            ky: [0.0; MAX_TAPS],
            x0: 0,
            y0: 0,
            contiguous: false,
            ix: vec![0; w],
            iy: vec![0; w],
        }
    }
}

impl GridPlan {
    /// Fill `fp` for a sample at (u, v) wavelengths (taps from the piecewise polynomial).
    #[inline]
    fn footprint(&self, u: f64, v: f64, fp: &mut Footprint) {
        let cell = self.geometry.cell_rad;
        let sx = -u * cell * self.pad_nx as f64;
        let sy = v * cell * self.pad_ny as f64;
        let gx = self.poly.taps(sx, &mut fp.kx);
        let gy = self.poly.taps(sy, &mut fp.ky);
        let (px, py) = (self.pad_nx as i64, self.pad_ny as i64);
        let w = self.kernel.support() as i64;
        if gx >= 0 && gy >= 0 && gx + w <= px && gy + w <= py {
            fp.contiguous = true;
            fp.x0 = gx as usize;
            fp.y0 = gy as usize;
            return;
        }
        fp.contiguous = false;
        for (i, (a, b)) in fp.ix.iter_mut().zip(fp.iy.iter_mut()).enumerate() {
            *a = (gx + i as i64).rem_euclid(px) as usize;
            *b = ((gy + i as i64).rem_euclid(py) as usize) * self.pad_nx;
        }
    }

    /// Add `val` ψ_x ψ_y over the footprint into `grid`.
    #[inline]
    fn add_footprint(&self, fp: &Footprint, val: Complex64, grid: &mut [Complex64]) {
        let w = self.kernel.support();
        let (kx, ky) = (&fp.kx[..w], &fp.ky[..w]);
        if fp.contiguous {
            let mut start = fp.y0 * self.pad_nx + fp.x0;
            for &ky in ky {
                let vy = val * ky;
                for (g, &kx) in grid[start..start + w].iter_mut().zip(kx) {
                    *g += vy * kx;
                }
                start += self.pad_nx;
            }
        } else {
            for (&row, &ky) in fp.iy.iter().zip(ky) {
                let vy = val * ky;
                let line = &mut grid[row..row + self.pad_nx];
                for (&ix, &kx) in fp.ix.iter().zip(kx) {
                    line[ix] += vy * kx;
                }
            }
        }
    }

    /// Σ ψ_x ψ_y grid over the footprint.
    #[inline]
    fn read_footprint(&self, fp: &Footprint, grid: &[Complex64]) -> Complex64 {
        let w = self.kernel.support();
        let (kx, ky) = (&fp.kx[..w], &fp.ky[..w]);
        let mut sum = ZERO;
        if fp.contiguous {
            let mut start = fp.y0 * self.pad_nx + fp.x0;
            for &ky in ky {
                let mut sx = ZERO;
                for (g, &kx) in grid[start..start + w].iter().zip(kx) {
                    sx += g * kx;
                }
                sum += sx * ky;
                start += self.pad_nx;
            }
        } else {
            for (&row, &ky) in fp.iy.iter().zip(ky) {
                let line = &grid[row..row + self.pad_nx];
                let mut sx = ZERO;
                for (&ix, &kx) in fp.ix.iter().zip(kx) {
                    sx += line[ix] * kx;
                }
                sum += sx * ky;
            }
        }
        sum
    }

    /// Channels of a row with `w_m` metres that touch plane `p`, i.e. whose plane coordinate s
    /// satisfies p − W/2 < s ≤ p + W/2 (s is monotonic in frequency, so they are contiguous).
    fn channels_on_plane(&self, w_m: f64, freqs: &[f64], p: usize) -> Range<usize> {
        let Some(planes) = self.planes else { return 0..freqs.len() };
        let half = 0.5 * self.kernel.support() as f64;
        let (lo_s, hi_s) = (p as f64 - half, p as f64 + half);
        let s = |f: &f64| planes.coordinate(w_m * f / SPEED_OF_LIGHT_M_PER_S);
        if w_m >= 0.0 {
            freqs.partition_point(|f| s(f) <= lo_s)..freqs.partition_point(|f| s(f) <= hi_s)
        } else {
            let a = freqs.partition_point(|f| s(f) > hi_s);
            let b = freqs.partition_point(|f| s(f) > lo_s);
            a..b.max(a)
        }
    }

    /// Weight of plane `p` for a sample at `w` wavelengths (1 when w is ignored).
    #[inline]
    fn plane_weight(&self, w: f64, p: usize) -> f64 {
        match self.planes {
            Some(planes) => {
                let half = 0.5 * self.kernel.support() as f64;
                self.kernel.phi((p as f64 - planes.coordinate(w)) / half)
            }
            None => 1.0,
        }
    }

    /// Per-pixel factor of plane `p`: grid correction times the phase screen exp(sign 2πi w_p x).
    fn screen(&self, p: usize, sign: f64) -> Vec<Complex64> {
        let corr = self.inverse_correction.as_slice().expect("plan arrays are contiguous");
        match self.planes {
            None => corr.iter().map(|&c| Complex64::new(c, 0.0)).collect(),
            Some(planes) => {
                let wp = planes.w0 + p as f64 * planes.dw;
                let x = self.n_minus_1.as_slice().expect("plan arrays are contiguous");
                corr.par_iter()
                    .zip(x.par_iter())
                    .map(|(&c, &x)| Complex64::from_polar(c, sign * 2.0 * PI * wp * x))
                    .collect()
            }
        }
    }

    /// Offset into the padded grid of image pixel (ix, iy): index j = pixel − centre, wrapped.
    #[inline]
    fn grid_index(&self, ix: usize, iy: usize) -> usize {
        let (nx, ny) = (self.geometry.nx as i64, self.geometry.ny as i64);
        let gx = (ix as i64 - nx / 2).rem_euclid(self.pad_nx as i64) as usize;
        let gy = (iy as i64 - ny / 2).rem_euclid(self.pad_ny as i64) as usize;
        gy * self.pad_nx + gx
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

    /// Spread the samples of `rows` touching plane `p` onto one grid per output.
    fn spread(
        &self,
        vis: &VisSet,
        rows: Range<usize>,
        p: usize,
        sources: &[ArrayView3<'_, Complex64>],
        outputs: &[GridOutput],
    ) -> Option<Vec<Vec<Complex64>>> {
        let len = self.pad_nx * self.pad_ny;
        let w = self.kernel.support();
        let mut fp = Footprint::new(w);
        let mut values = vec![ZERO; sources.len()];
        let mut grids: Option<Vec<Vec<Complex64>>> = None;
        let freqs = &vis.frequencies_hz;
        let (n_chan, n_corr) = (vis.n_channels(), vis.n_correlations());
        for r in rows {
            let (um, vm, wm) = (vis.uvw_m[[r, 0]], vis.uvw_m[[r, 1]], vis.uvw_m[[r, 2]]);
            for c in self.channels_on_plane(wm, freqs, p) {
                let scale = freqs[c] / SPEED_OF_LIGHT_M_PER_S;
                let kw = self.plane_weight(wm * scale, p);
                for (v, src) in values.iter_mut().zip(sources) {
                    // Contiguous sources (the common case) are summed from the raw slice.
                    *v = match src.as_slice() {
                        Some(all) => {
                            let start = (r * n_chan + c) * n_corr;
                            all[start..start + n_corr].iter().sum()
                        }
                        None => src.slice(ndarray::s![r, c, ..]).iter().sum(),
                    };
                }
                if values.iter().all(|v| *v == ZERO) || kw == 0.0 {
                    continue;
                }
                self.footprint(um * scale, vm * scale, &mut fp);
                let grids = grids.get_or_insert_with(|| vec![vec![ZERO; len]; outputs.len()]);
                for (o, grid) in outputs.iter().zip(grids.iter_mut()) {
                    let val = values[o.source] * (o.channel_factors[c] * kw);
                    if val == ZERO {
                        continue;
                    }
                    self.add_footprint(&fp, val, grid);
                }
            }
        }
        grids
    }

    /// Interpolate the grids at every sample of `rows` touching plane `p`, adding
    /// kw Σ_t f_t(ν) grid_t(s) into `out` (`[row][chan]`, rows starting at `rows.start`).
    fn interpolate(
        &self,
        vis: &VisSet,
        rows: Range<usize>,
        p: usize,
        grids: &[Vec<Complex64>],
        channel_factors: &[Vec<f64>],
        out: &mut [Complex64],
    ) {
        let n_chan = vis.n_channels();
        let mut fp = Footprint::new(self.kernel.support());
        let freqs = &vis.frequencies_hz;
        for (k, r) in rows.enumerate() {
            let (um, vm, wm) = (vis.uvw_m[[r, 0]], vis.uvw_m[[r, 1]], vis.uvw_m[[r, 2]]);
            for c in self.channels_on_plane(wm, freqs, p) {
                let scale = freqs[c] / SPEED_OF_LIGHT_M_PER_S;
                let kw = self.plane_weight(wm * scale, p);
                if kw == 0.0 {
                    continue;
                }
                self.footprint(um * scale, vm * scale, &mut fp);
                let mut acc = ZERO;
                for (grid, f) in grids.iter().zip(channel_factors) {
                    if f[c] == 0.0 {
                        continue;
                    }
                    let sum = self.read_footprint(&fp, grid);
                    acc += sum * f[c];
                }
                out[k * n_chan + c] += acc * kw;
            }
        }
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
        let mut images = vec![Array2::<f64>::zeros((ny, nx)); outputs.len()];
        let n_rows = vis.n_rows();
        // The rows are cut into GRID_BLOCKS blocks whatever the thread count, each block is
        // spread into a private grid set (no locks), and the sets are added in block order; a
        // wave of as many blocks as threads runs at a time. The floating-point sums, and so the
        // images, are then the same bit for bit with any number of threads.
        let n_blocks = GRID_BLOCKS.min(n_rows).max(1);
        let per_block = n_rows.div_ceil(n_blocks).max(1);
        let wave = rayon::current_num_threads().max(1);
        let mut scratch = vec![ZERO; self.pad_nx * self.pad_ny];
        for p in 0..self.n_w_planes() {
            let mut partial: Option<Vec<Vec<Complex64>>> = None;
            for first in (0..n_blocks).step_by(wave) {
                let sets: Vec<Option<Vec<Vec<Complex64>>>> = (first..(first + wave).min(n_blocks))
                    .into_par_iter()
                    .map(|k| {
                        let rows = (k * per_block).min(n_rows)..((k + 1) * per_block).min(n_rows);
                        self.spread(vis, rows, p, sources, outputs)
                    })
                    .collect();
                for set in sets.into_iter().flatten() {
                    match &mut partial {
                        None => partial = Some(set),
                        Some(sum) => {
                            for (ga, gb) in sum.iter_mut().zip(&set) {
                                ga.par_iter_mut().zip(gb.par_iter()).for_each(|(x, y)| *x += *y);
                            }
                        }
                    }
                }
            }
            let Some(mut grids) = partial else { continue };
            let screen = self.screen(p, 1.0);
            for (grid, image) in grids.iter_mut().zip(images.iter_mut()) {
                self.fft_inverse.process(grid, &mut scratch);
                let grid = &*grid;
                let img = image.as_slice_mut().expect("fresh array is contiguous");
                img.par_chunks_mut(nx).enumerate().for_each(|(iy, line)| {
                    for (ix, v) in line.iter_mut().enumerate() {
                        *v += (grid[self.grid_index(ix, iy)] * screen[iy * nx + ix]).re;
                    }
                });
            }
        }
        Ok(images)
    }

    fn degrid(
        &self,
        vis: &VisSet,
        images: &[Array2<f64>],
        channel_factors: &[Vec<f64>],
    ) -> Result<Array3<Complex64>, ImagingError> {
        check_degrid_args(vis, self.geometry, images, channel_factors)?;
        self.check_w(vis)?;
        let (nx, n_rows, n_chan) = (self.geometry.nx, vis.n_rows(), vis.n_channels());
        let mut out = vec![ZERO; n_rows * n_chan];
        let mut scratch = vec![ZERO; self.pad_nx * self.pad_ny];
        let rows_per_task = n_rows.div_ceil(4 * rayon::current_num_threads()).max(1);
        for p in 0..self.n_w_planes() {
            let screen = self.screen(p, -1.0);
            let mut grids = Vec::with_capacity(images.len());
            for image in images {
                let mut grid = vec![ZERO; self.pad_nx * self.pad_ny];
                let img = image.as_standard_layout();
                for (k, (&v, &s)) in img.iter().zip(&screen).enumerate() {
                    grid[self.grid_index(k % nx, k / nx)] = s * v;
                }
                self.fft_forward.process(&mut grid, &mut scratch);
                grids.push(grid);
            }
            out.par_chunks_mut(rows_per_task * n_chan).enumerate().for_each(|(k, chunk)| {
                let r0 = k * rows_per_task;
                let rows = r0..r0 + chunk.len() / n_chan;
                self.interpolate(vis, rows, p, &grids, channel_factors, chunk);
            });
        }
        let n_corr = vis.n_correlations();
        Ok(Array3::from_shape_fn((n_rows, n_chan, n_corr), |(r, c, _)| out[r * n_chan + c]))
    }
}
