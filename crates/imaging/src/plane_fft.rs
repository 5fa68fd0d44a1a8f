//! Pruned 2-D transforms between one padded w-plane grid and the image, and the per-plane
//! phase screens, shared by [`GridPlan`] and [`crate::KernelAProjection`].
//!
//! The padded grid is σ ≈ 2 times the image along each axis, and the samples cover only the
//! rows of the grid their footprints touch. So, for grid → image (gridding), only the touched
//! rows need a transform along x, and along y only the nx columns that land on image pixels
//! (about half) — the other outputs are cut away by the grid correction anyway. For image →
//! grid (degridding) the image fills only nx columns before the transform along y (fewer when
//! it is a CLEAN model: its all-zero columns are skipped), and only the rows the samples will
//! read need a transform along x. Both directions then cost about
//! (f + 1/2)/2 of a full 2-D FFT (f the fraction of rows with data; about 1/2 when the plan
//! folds its samples onto v ≥ 0) and need no transposes of the whole grid: columns are gathered
//! in small blocks. When the factor applied per pixel is real (no w planes), the image columns
//! are real too, and two of them share one column transform (Hermitian packing, see
//! `pack_real_parts` and `unpack_real_pair`), which halves the column pass.
//!
//! Every transform of a row or column is done whole by one task, so the results do not depend
//! on the thread count. The reference is the unpruned [`crate::fft2::Fft2`] followed by the
//! pixel extraction (tests below).
use crate::disjoint::Disjoint;
use crate::plan::GridPlan;
use num_complex::Complex64;
use rayon::prelude::*;
use rustfft::Fft;
use std::f64::consts::PI;
use std::sync::Arc;

const ZERO: Complex64 = Complex64 { re: 0.0, im: 0.0 };
/// Image columns per task of the column pass (one buffer of `COLUMNS` × pad_ny).
const COLUMNS: usize = 16;
/// Grid rows per task of the row pass of `plane_from_image` (one gather of `ROWS` rows).
const ROWS: usize = 16;
/// Screens are recomputed exactly every this many planes (in between they advance by a
/// multiplication, whose rounding grows by about 1e-16 per step).
const SCREEN_RESEED: usize = 16;

/// A planned 1-D transform (a shareable rustfft plan with a `Debug` that names its length).
#[derive(Clone)]
pub(crate) struct FftPlan(pub Arc<dyn Fft<f64>>);

impl std::fmt::Debug for FftPlan {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "FftPlan({}, {:?})", self.0.len(), self.0.fft_direction())
    }
}

impl std::ops::Deref for FftPlan {
    type Target = dyn Fft<f64>;
    fn deref(&self) -> &Self::Target {
        &*self.0
    }
}

impl GridPlan {
    /// Padded-grid index along x of image column `ix` (pixel index minus centre, wrapped).
    #[inline]
    pub(crate) fn grid_x(&self, ix: usize) -> usize {
        let nx = self.geometry.nx;
        (ix + self.pad_nx - nx / 2) % self.pad_nx
    }

    /// Grid → image for one plane: inverse-transform the rows of `grid` marked in `rows` (the
    /// others must be zero), then the image columns, and add Re(result · screen) to `image_t`
    /// (or, with `overwrite`, store it there: for the first plane into a fresh image, whose
    /// pages are then first touched by a write; a read first would map the shared zero page and
    /// the write after it cost a copy-on-write fault with a TLB flush on every core).
    /// `image_t` and `screen_t` are transposed images (`[ix][iy]`, length nx · ny). On return
    /// `grid` is all zero again (ready for the next plane).
    pub(crate) fn add_plane_to_image(
        &self,
        grid: &mut [Complex64],
        rows: &[bool],
        screen_t: Screen<'_>,
        image_t: &mut [f64],
        overwrite: bool,
    ) {
        let (px, py) = (self.pad_nx, self.pad_ny);
        let ny = self.geometry.ny;
        debug_assert_eq!(grid.len(), px * py);
        debug_assert_eq!(rows.len(), py);
        let fft_x = &self.fft_x_inverse;
        // Small pieces: the rows with data may all sit in one half of the grid (a folded plan),
        // which an even split would hand to one thread.
        grid.par_chunks_mut(px)
            .zip(rows.par_iter())
            .with_max_len(8)
            .filter(|(_, &t)| t)
            .for_each_init(
                || vec![ZERO; fft_x.get_inplace_scratch_len()],
                |scratch, (line, _)| fft_x.process_with_scratch(line, scratch),
            );
        let fft_y = &self.fft_y_inverse;
        let grid_ref = &*grid;
        let (touched, untouched): (Vec<usize>, Vec<usize>) = (0..py).partition(|&y| rows[y]);
        image_t.par_chunks_mut(COLUMNS * ny).enumerate().for_each_init(
            || {
                let scratch = vec![ZERO; fft_y.get_inplace_scratch_len()];
                (vec![ZERO; COLUMNS * py], scratch, vec![0.0; ny])
            },
            |(buf, scratch, factors), (block, out)| {
                let ix0 = block * COLUMNS;
                let n_cols = out.len() / ny;
                let gx: Vec<usize> = (ix0..ix0 + n_cols).map(|ix| self.grid_x(ix)).collect();
                let buf = &mut buf[..n_cols * py];
                // Every value of the columns is written: zero where the grid rows are zero, the
                // grid's value elsewhere (the buffer holds the previous block's columns).
                for col in buf.chunks_exact_mut(py) {
                    for &y in &untouched {
                        col[y] = ZERO;
                    }
                }
                for &y in &touched {
                    let line = &grid_ref[y * px..(y + 1) * px];
                    for (c, &x) in gx.iter().enumerate() {
                        buf[c * py + y] = line[x];
                    }
                }
                // iy < ny/2 sits at the top of a column (negative index), the rest at 0...
                let h = ny / 2;
                match screen_t {
                    Screen::Real(_) | Screen::Separable { .. } => {
                        // Only Re of each column's transform is needed: two columns share one
                        // transform (see `pack_real_parts`), slot j holding columns 2j, 2j + 1.
                        let n_pairs = n_cols.div_ceil(2);
                        for j in 0..n_pairs {
                            let b = (2 * j + 1 < n_cols).then_some(2 * j + 1);
                            pack_real_parts(buf, py, 2 * j, b, j);
                        }
                        fft_y.process_with_scratch(&mut buf[..n_pairs * py], scratch);
                        for c in 0..n_cols {
                            let col = &buf[(c / 2) * py..(c / 2 + 1) * py];
                            let o = &mut out[c * ny..(c + 1) * ny];
                            screen_t.real_column(ix0 + c, factors);
                            let s = &factors[..];
                            let g = col[py - h..].iter().chain(&col[..ny - h]);
                            if c % 2 == 0 {
                                store(o, s.iter().zip(g).map(|(s, g)| g.re * s), overwrite);
                            } else {
                                store(o, s.iter().zip(g).map(|(s, g)| g.im * s), overwrite);
                            }
                        }
                    }
                    Screen::Complex(s) => {
                        fft_y.process_with_scratch(buf, scratch);
                        for c in 0..n_cols {
                            let col = &buf[c * py..(c + 1) * py];
                            let o = &mut out[c * ny..(c + 1) * ny];
                            let s = &s[(ix0 + c) * ny..(ix0 + c + 1) * ny];
                            let g = col[py - h..].iter().chain(&col[..ny - h]);
                            let values = s.iter().zip(g).map(|(s, g)| g.re * s.re - g.im * s.im);
                            store(o, values, overwrite);
                        }
                    }
                }
            },
        );
        grid.par_chunks_mut(px).zip(rows.par_iter()).with_max_len(8).filter(|(_, &t)| t).for_each(
            |(line, _)| {
                line.iter_mut().for_each(|v| *v = ZERO);
            },
        );
    }

    /// Image → grid for one plane: the forward transform of `image_t · screen_t` (transposed
    /// images `[ix][iy]`) placed on the padded grid, computed only for the grid rows marked in
    /// `rows`; the other rows of `grid` are left as they were.
    ///
    /// Each task transforms a few image columns in its own buffer and writes the marked rows of
    /// them straight into their grid columns (no grid-sized scratch, whose pages would have to
    /// be mapped and cleared); the rows are then transformed in place.
    ///
    /// `streaming` writes those columns with non-temporal stores, which skip reading the grid's
    /// cache lines before writing them. The values are the same either way. It pays when many
    /// large planes are transformed in a row, so that a grid would leave the caches before the
    /// row pass anyway: plain w-stacked degridding of 1.5 M samples on 15 planes of 2048² took
    /// 0.506-0.526 s instead of 0.531-0.556 s on two threads (six alternating pairs) and 0.89-0.90
    /// s instead of 1.01-1.06 s on one. With one such plane (0.068-0.070 s either way) and with
    /// the 512² planes of the A-projection benchmark it changed nothing.
    pub(crate) fn plane_from_image(
        &self,
        image_t: &[f64],
        screen_t: Screen<'_>,
        rows: &[bool],
        grid: &mut [Complex64],
        streaming: bool,
    ) {
        let (px, py) = (self.pad_nx, self.pad_ny);
        let (nx, ny) = (self.geometry.nx, self.geometry.ny);
        debug_assert_eq!(grid.len(), px * py);
        let fft_y = &self.fft_y_forward;
        let h = ny / 2;
        let marked: Vec<usize> = (0..py).filter(|&y| rows[y]).collect();
        let gx: Vec<usize> = (0..nx).map(|ix| self.grid_x(ix)).collect();
        let cells = Disjoint::new(grid);
        image_t.par_chunks(COLUMNS * ny).enumerate().for_each_init(
            || {
                let scratch = vec![ZERO; fft_y.get_inplace_scratch_len()];
                (vec![ZERO; COLUMNS * py], scratch, vec![0.0; 2 * ny])
            },
            |(buf, scratch, factors), (block, img)| {
                let n_cols = img.len() / ny;
                let buf = &mut buf[..n_cols * py];
                let mut transform = || {
                    if screen_t.is_real() {
                        // Real columns: two share one transform (see `unpack_real_pair`).
                        let (fa, fb) = factors.split_at_mut(ny);
                        for a in (0..n_cols).step_by(2) {
                            let b = a + 1;
                            let zero =
                                |c: usize| img[c * ny..(c + 1) * ny].iter().all(|&v| v == 0.0);
                            if b == n_cols || (zero(a) && zero(b)) {
                                // A lone column, or two zero ones (a CLEAN model is zero in most
                                // columns, whose transform is zero).
                                for c in a..n_cols.min(b + 1) {
                                    let im = &img[c * ny..(c + 1) * ny];
                                    let col = &mut buf[c * py..(c + 1) * py];
                                    if zero(c) {
                                        col.fill(ZERO);
                                        continue;
                                    }
                                    col[ny - h..py - h].iter_mut().for_each(|v| *v = ZERO);
                                    let (bottom, top) = col.split_at_mut(py - h);
                                    let g = top.iter_mut().chain(&mut bottom[..ny - h]).zip(im);
                                    screen_t.real_column(block * COLUMNS + c, fa);
                                    for ((g, &v), &s) in g.zip(&*fa) {
                                        *g = Complex64::new(s * v, 0.0);
                                    }
                                    fft_y.process_with_scratch(col, scratch);
                                }
                                continue;
                            }
                            let (ia, ib) = (&img[a * ny..(a + 1) * ny], &img[b * ny..(b + 1) * ny]);
                            let col = &mut buf[a * py..(a + 1) * py];
                            col[ny - h..py - h].iter_mut().for_each(|v| *v = ZERO);
                            let (bottom, top) = col.split_at_mut(py - h);
                            screen_t.real_column(block * COLUMNS + a, fa);
                            screen_t.real_column(block * COLUMNS + b, fb);
                            let pairs = ia.iter().zip(ib).zip(fa.iter().zip(&*fb));
                            for (g, ((&va, &vb), (&sa, &sb))) in
                                top.iter_mut().chain(&mut bottom[..ny - h]).zip(pairs)
                            {
                                *g = Complex64::new(sa * va, sb * vb);
                            }
                            fft_y.process_with_scratch(col, scratch);
                            unpack_real_pair(buf, py, a, b);
                        }
                        return;
                    }
                    for c in 0..n_cols {
                        let col = &mut buf[c * py..(c + 1) * py];
                        let im = &img[c * ny..(c + 1) * ny];
                        let pixels = (block * COLUMNS + c) * ny..(block * COLUMNS + c + 1) * ny;
                        // A model image (CLEAN components) is zero in most columns, whose
                        // transform is zero: no need to compute it.
                        if im.iter().all(|&v| v == 0.0) {
                            col.fill(ZERO);
                            continue;
                        }
                        col[ny - h..py - h].iter_mut().for_each(|v| *v = ZERO);
                        let (bottom, top) = col.split_at_mut(py - h);
                        let g = top.iter_mut().chain(&mut bottom[..ny - h]).zip(im);
                        if let Screen::Complex(s) = screen_t {
                            for ((g, &v), &s) in g.zip(&s[pixels]) {
                                *g = s * v;
                            }
                        }
                        fft_y.process_with_scratch(col, scratch);
                    }
                };
                transform();
                let gx = &gx[block * COLUMNS..block * COLUMNS + n_cols];
                for &y in &marked {
                    for (c, &x) in gx.iter().enumerate() {
                        let value = buf[c * py + y];
                        // SAFETY: grid column x belongs to image column block · COLUMNS + c
                        // alone (the map from image columns to grid columns is one to one),
                        // and this task alone handles that image column.
                        unsafe {
                            if streaming {
                                cells.write_streaming(y * px + x, value);
                            } else {
                                *cells.slot(y * px + x) = value;
                            }
                        }
                    }
                }
                if streaming {
                    cells.fence();
                }
            },
        );
        let fft_x = &self.fft_x_forward;
        grid.par_chunks_mut(ROWS * px).enumerate().with_max_len(1).for_each_init(
            || vec![ZERO; fft_x.get_inplace_scratch_len()],
            |scratch, (block, lines)| {
                let y0 = block * ROWS;
                let n_rows = lines.len() / px;
                if !rows[y0..y0 + n_rows].iter().any(|&t| t) {
                    return;
                }
                // The image columns fill grid columns [0, nx/2) and [px − nx/2, px) below; only
                // the gap between them needs zeros.
                for (r, line) in lines.chunks_mut(px).enumerate() {
                    if rows[y0 + r] {
                        line[nx - nx / 2..px - nx / 2].iter_mut().for_each(|v| *v = ZERO);
                        fft_x.process_with_scratch(line, scratch);
                    }
                }
            },
        );
    }

    /// Transposed copy (`[ix][iy]`) of a row-major `[iy][ix]` image.
    pub(crate) fn transposed(&self, image: &[f64]) -> Vec<f64> {
        let (nx, ny) = (self.geometry.nx, self.geometry.ny);
        let mut out = vec![0.0; nx * ny];
        transpose_into(image, ny, nx, &mut out);
        out
    }

    /// Transposed copy of a row-major complex image (test helper).
    #[cfg(test)]
    pub(crate) fn transposed_complex(&self, image: &[Complex64]) -> Vec<Complex64> {
        let (nx, ny) = (self.geometry.nx, self.geometry.ny);
        (0..nx * ny).map(|k| image[(k % ny) * nx + k / ny]).collect()
    }

    /// Row-major `[iy][ix]` image of a transposed one, stored into `image` (written without
    /// being read, see [`GridPlan::add_plane_to_image`]).
    pub(crate) fn untranspose_into(&self, image_t: &[f64], image: &mut [f64]) {
        let (nx, ny) = (self.geometry.nx, self.geometry.ny);
        transpose_into(image_t, nx, ny, image);
    }
}

/// Source columns per task of [`transpose_into`]: a run of this many values of one source row
/// is one or two cache lines, read whole.
const TRANSPOSE_BLOCK: usize = 8;

/// Writes the transpose of `src` (`rows` × `cols`, row-major) into `dst` (`cols` × `rows`),
/// a few source columns per task so that each source row is read a cache line at a time
/// (reading one column at a time would fetch a whole line per value).
pub(crate) fn transpose_into(src: &[f64], rows: usize, cols: usize, dst: &mut [f64]) {
    assert_eq!(src.len(), rows * cols);
    assert_eq!(dst.len(), rows * cols);
    if rows == 0 {
        return;
    }
    dst.par_chunks_mut(TRANSPOSE_BLOCK * rows).enumerate().for_each(|(block, out)| {
        let c0 = block * TRANSPOSE_BLOCK;
        let n = out.len() / rows;
        for r in 0..rows {
            for (j, &v) in src[r * cols + c0..r * cols + c0 + n].iter().enumerate() {
                out[j * rows + r] = v;
            }
        }
    });
}

/// Prepares one inverse transform that yields the real parts of the inverse transforms of two
/// columns: slot `dst` of `buf` (slots of `py` values) receives z = H(a) + i H(b), where a and b
/// are slots `a` and `b` (b absent: zero) and H(x)(k) = (x(k) + conj x(−k)) / 2 is the
/// Hermitian part, whose transform is Re of x's. Both H(a) and H(b) transform to real columns,
/// so the transform of z has Re of a's in its real part and Re of b's in its imaginary part.
/// `dst` may be `a`; it must not be a slot that a later call reads.
fn pack_real_parts(buf: &mut [Complex64], py: usize, a: usize, b: Option<usize>, dst: usize) {
    let i = Complex64::new(0.0, 1.0);
    for k in 0..=py / 2 {
        let mk = (py - k) % py;
        let ha = (buf[a * py + k] + buf[a * py + mk].conj()) * 0.5;
        let hb = match b {
            Some(b) => (buf[b * py + k] + buf[b * py + mk].conj()) * 0.5,
            None => ZERO,
        };
        // H(x)(−k) = conj H(x)(k).
        buf[dst * py + k] = ha + i * hb;
        buf[dst * py + mk] = ha.conj() + i * hb.conj();
    }
}

/// Splits the transform Z = A + i B of z = a + i b, a and b real columns, held in slot `a` of
/// `buf`, into A (slot `a`) and B (slot `b`): A(k) = (Z(k) + conj Z(−k)) / 2 and
/// B(k) = (Z(k) − conj Z(−k)) / 2i, the transforms of real columns being Hermitian.
fn unpack_real_pair(buf: &mut [Complex64], py: usize, a: usize, b: usize) {
    let minus_half_i = Complex64::new(0.0, -0.5);
    for k in 0..=py / 2 {
        let mk = (py - k) % py;
        let (zk, zmk) = (buf[a * py + k], buf[a * py + mk]);
        let ak = (zk + zmk.conj()) * 0.5;
        let bk = (zk - zmk.conj()) * minus_half_i;
        buf[a * py + k] = ak;
        buf[a * py + mk] = ak.conj();
        buf[b * py + k] = bk;
        buf[b * py + mk] = bk.conj();
    }
}

/// Store (`overwrite`) or add `values` into `out`.
#[inline(always)]
fn store(out: &mut [f64], values: impl Iterator<Item = f64>, overwrite: bool) {
    if overwrite {
        out.iter_mut().zip(values).for_each(|(v, x)| *v = x);
    } else {
        out.iter_mut().zip(values).for_each(|(v, x)| *v += x);
    }
}

/// The factor a plane's image is multiplied by, per pixel, in transposed layout `[ix][iy]`.
#[derive(Clone, Copy, Debug)]
pub(crate) enum Screen<'a> {
    /// Real (the grid correction alone, when w is not stacked).
    Real(&'a [f64]),
    /// Real and separable: `x[ix] · y[iy]` (the plain plan's own correction, with no image-sized
    /// array to build).
    Separable { x: &'a [f64], y: &'a [f64] },
    /// Complex (the correction times a w-plane's phase, or any other complex factor).
    Complex(&'a [Complex64]),
}

impl Screen<'_> {
    /// Whether the factors are real.
    fn is_real(&self) -> bool {
        !matches!(self, Screen::Complex(_))
    }

    /// The (real) factors of image column `ix` into `out` (ny values); nothing for a complex
    /// screen.
    #[inline]
    fn real_column(&self, ix: usize, out: &mut [f64]) {
        let ny = out.len();
        match *self {
            Screen::Real(s) => out.copy_from_slice(&s[ix * ny..(ix + 1) * ny]),
            Screen::Separable { x, y } => {
                out.iter_mut().zip(y).for_each(|(o, &y)| *o = x[ix] * y);
            }
            Screen::Complex(_) => {}
        }
    }
}

/// The per-plane factors c(x) · exp(sign · 2πi w_p (n − 1)) of a plan, plane by plane in
/// increasing order, in transposed layout `[ix][iy]`: exact (one `from_polar` per pixel) every
/// [`SCREEN_RESEED`] planes, and in between advanced by the constant per-pixel phasor
/// exp(sign · 2πi Δw (n − 1)).
pub(crate) struct Screens {
    correction_t: Vec<f64>,
    x_t: Vec<f64>,
    step: Vec<Complex64>,
    current: Vec<Complex64>,
    sign: f64,
    w0: f64,
    dw: f64,
    /// Plane `current` holds (None before the first).
    at: Option<usize>,
    /// Whether w is stacked (else the screen is the real correction for the only plane).
    stacked: bool,
    /// The separable correction (per column, per row) of [`Screens::of_plan`].
    separable: Option<(Vec<f64>, Vec<f64>)>,
}

impl Screens {
    /// Screens of `plan` with per-pixel correction `correction` (`[iy][ix]`) and phase sign
    /// `sign` (+1 for gridding, −1 for degridding).
    pub(crate) fn new(plan: &GridPlan, correction: &[f64], sign: f64) -> Self {
        let correction_t = plan.transposed(correction);
        let (x_t, step, w0, dw, stacked) = match plan.planes {
            Some(p) => {
                let x = plan.n_minus_1.as_slice().expect("plan arrays are contiguous");
                // The planes' shift of n − 1 (see `GridPlan`).
                let x_t: Vec<f64> =
                    plan.transposed(x).into_iter().map(|x| x - plan.w_shift).collect();
                let step = x_t
                    .par_iter()
                    .map(|&x| Complex64::from_polar(1.0, sign * 2.0 * PI * p.dw * x))
                    .collect();
                (x_t, step, p.w0, p.dw, true)
            }
            None => (Vec::new(), Vec::new(), 0.0, 0.0, false),
        };
        let current = if stacked { vec![ZERO; correction_t.len()] } else { Vec::new() };
        Self { correction_t, x_t, step, current, sign, w0, dw, at: None, stacked, separable: None }
    }

    /// The screens of `plan` with its own grid correction: [`Screens::new`] with w planes;
    /// without, the correction kept separable (1/ψ̂ along x times 1/ψ̂ along y), so that no
    /// image-sized array is built per call.
    pub(crate) fn of_plan(plan: &GridPlan, sign: f64) -> Self {
        if plan.planes.is_some() {
            let correction =
                plan.inverse_correction.as_slice().expect("plan arrays are contiguous");
            return Self::new(plan, correction, sign);
        }
        Self {
            correction_t: Vec::new(),
            x_t: Vec::new(),
            step: Vec::new(),
            current: Vec::new(),
            sign,
            w0: 0.0,
            dw: 0.0,
            at: None,
            stacked: false,
            separable: Some((plan.inverse_cx.clone(), plan.inverse_cy.clone())),
        }
    }

    /// Forget the plane held, so that the next [`Screens::plane`] computes its screen exactly,
    /// as the first call of fresh screens does (for a caller that runs over the planes again:
    /// the same values as [`Screens::new`] without rebuilding its per-pixel tables).
    pub(crate) fn restart(&mut self) {
        self.at = None;
    }

    /// The screen of plane `p` (planes must be asked for in increasing order); the real
    /// correction when w is not stacked.
    pub(crate) fn plane(&mut self, p: usize) -> Screen<'_> {
        if let Some((x, y)) = &self.separable {
            return Screen::Separable { x, y };
        }
        if !self.stacked {
            return Screen::Real(&self.correction_t);
        }
        match self.at {
            Some(q) if q == p => {}
            Some(q) if q < p && p - q < SCREEN_RESEED && p / SCREEN_RESEED == q / SCREEN_RESEED => {
                for _ in q..p {
                    self.current
                        .par_iter_mut()
                        .zip(self.step.par_iter())
                        .for_each(|(c, s)| *c *= s);
                }
            }
            _ => {
                let wp = self.w0 + p as f64 * self.dw;
                let sign = self.sign;
                self.current
                    .par_iter_mut()
                    .zip(self.correction_t.par_iter().zip(self.x_t.par_iter()))
                    .for_each(|(v, (&c, &x))| {
                        *v = Complex64::from_polar(c, sign * 2.0 * PI * wp * x)
                    });
            }
        }
        self.at = Some(p);
        Screen::Complex(&self.current)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fft2::Fft2;
    use crate::params::{GridderParams, WRange, WTerm};
    use beamfloor_core::ImageGeometry;
    use rustfft::FftDirection;

    fn plan(nx: usize, ny: usize, w_term: WTerm) -> GridPlan {
        let g = ImageGeometry::new(nx, ny, 0.004);
        let params = GridderParams { epsilon: 1e-6, w_term };
        GridPlan::new(g, &params, WRange::new(-1500.0, 4000.0).unwrap()).unwrap()
    }

    fn value(k: usize, seed: f64) -> Complex64 {
        Complex64::new((seed + 0.37 * k as f64).sin(), (1.3 * seed + 0.113 * k as f64).cos())
    }

    /// Offset into the padded grid of pixel (ix, iy) (the definition: index − centre, wrapped).
    fn offset(p: &GridPlan, ix: usize, iy: usize) -> usize {
        let (nx, ny) = (p.geometry.nx as i64, p.geometry.ny as i64);
        let gx = (ix as i64 - nx / 2).rem_euclid(p.pad_nx as i64) as usize;
        let gy = (iy as i64 - ny / 2).rem_euclid(p.pad_ny as i64) as usize;
        gy * p.pad_nx + gx
    }

    #[test]
    fn pruned_transforms_match_the_full_2d_fft() {
        // On the default pool, and on one thread, where one task runs all column blocks through
        // the same buffers (stale values of a block would show in the next).
        pruned_transforms_case();
        rayon::ThreadPoolBuilder::new()
            .num_threads(1)
            .build()
            .unwrap()
            .install(pruned_transforms_case);
    }

    fn pruned_transforms_case() {
        // Reference: the unpruned 2-D FFT (itself checked against the DFT definition in fft2)
        // followed by picking the image pixels. Both compute the same sums with different
        // groupings, so they agree to rounding: 1e-12 of values of size ~ pad (sums of O(1)
        // terms) is a few ulps of headroom per butterfly stage. 52 columns make several column
        // blocks.
        for (nx, ny) in [(10, 12), (16, 16), (14, 8), (52, 10)] {
            let p = plan(nx, ny, WTerm::Ignore);
            let (px, py) = (p.pad_nx, p.pad_ny);
            let rows: Vec<bool> = (0..py).map(|y| y % 3 != 1).collect();
            let grid0: Vec<Complex64> = (0..px * py)
                .map(|k| if rows[k / px] { value(k, 0.3) } else { Complex64::new(0.0, 0.0) })
                .collect();
            let screen: Vec<Complex64> = (0..nx * ny).map(|k| value(k, 2.1)).collect();
            // Grid → image.
            let mut full = grid0.clone();
            let mut scratch = vec![Complex64::new(0.0, 0.0); px * py];
            Fft2::new(px, py, FftDirection::Inverse).process(&mut full, &mut scratch);
            let mut grid = grid0.clone();
            let screen_t = p.transposed_complex(&screen);
            let mut image_t = vec![0.5; nx * ny];
            p.add_plane_to_image(&mut grid, &rows, Screen::Complex(&screen_t), &mut image_t, false);
            assert!(grid.iter().all(|v| *v == Complex64::new(0.0, 0.0)), "grid left non-zero");
            for iy in 0..ny {
                for ix in 0..nx {
                    let want = 0.5 + (full[offset(&p, ix, iy)] * screen[iy * nx + ix]).re;
                    assert!((image_t[ix * ny + iy] - want).abs() < 1e-12, "{nx}x{ny} ({ix},{iy})");
                }
            }
            // Image → grid: a dense image, and one zero in all but two columns (as a model of
            // a few CLEAN components is; its zero columns' transforms are skipped).
            let dense: Vec<f64> = (0..nx * ny).map(|k| (0.7 * k as f64).sin()).collect();
            let sparse: Vec<f64> = (0..nx * ny)
                .map(|k| if k % nx == 1 || k % nx == nx - 2 { (0.3 * k as f64).cos() } else { 0.0 })
                .collect();
            // One grid for both, so values the dense image left in it would show in the second.
            let sentinel = Complex64::new(7.0, -7.0);
            let mut grid = vec![sentinel; px * py];
            for image in [dense, sparse] {
                let mut full = vec![Complex64::new(0.0, 0.0); px * py];
                for iy in 0..ny {
                    for ix in 0..nx {
                        full[offset(&p, ix, iy)] = screen[iy * nx + ix] * image[iy * nx + ix];
                    }
                }
                Fft2::new(px, py, FftDirection::Forward).process(&mut full, &mut scratch);
                let image_t = p.transposed(&image);
                // Plain and non-temporal stores: the same values. Before the second, the asked
                // rows hold other values, which must all be overwritten.
                for streaming in [false, true] {
                    if streaming {
                        for (y, line) in grid.chunks_mut(px).enumerate() {
                            if rows[y] {
                                line.fill(Complex64::new(-3.0, 5.0));
                            }
                        }
                    }
                    let screen = Screen::Complex(&screen_t);
                    p.plane_from_image(&image_t, screen, &rows, &mut grid, streaming);
                    for y in 0..py {
                        for x in 0..px {
                            let (got, k) = (grid[y * px + x], y * px + x);
                            if rows[y] {
                                assert!((got - full[k]).norm() < 1e-12, "{nx}x{ny} ({x},{y})");
                            } else {
                                assert_eq!(got, sentinel, "row {y} is not asked for");
                            }
                        }
                    }
                }
            }
        }
    }

    #[test]
    fn blocked_transpose_is_the_transpose() {
        // Definition: dst[c][r] = src[r][c]; sizes below, at and above the block width.
        for (rows, cols) in [(1, 1), (3, 5), (8, 8), (9, 17), (30, 7), (0, 4)] {
            let src: Vec<f64> = (0..rows * cols).map(|k| k as f64 * 0.5 - 3.0).collect();
            let mut dst = vec![f64::NAN; rows * cols];
            transpose_into(&src, rows, cols, &mut dst);
            for r in 0..rows {
                for c in 0..cols {
                    assert_eq!(dst[c * rows + r], src[r * cols + c], "{rows}x{cols} ({r},{c})");
                }
            }
        }
    }

    #[test]
    fn real_screens_act_as_complex_ones_without_phase() {
        // A real factor s is the complex factor s + 0i: both paths must give the same values
        // (the complex path is checked against the full 2-D FFT above). The real path shares
        // one transform between two columns (Hermitian packing), so it differs by rounding of
        // the order of 1e-16 times the values' size (a few times 10 here).
        let p = plan(14, 10, WTerm::Ignore);
        let (nx, ny, px, py) = (14, 10, p.pad_nx, p.pad_ny);
        let rows: Vec<bool> = (0..py).map(|y| y % 4 != 2).collect();
        // A separable factor x[ix] · y[iy] (as the plain plan's correction is), given three ways.
        let x: Vec<f64> = (0..nx).map(|i| 1.0 + 0.3 * (0.9 * i as f64).sin()).collect();
        let y: Vec<f64> = (0..ny).map(|i| 0.8 + 0.2 * (1.3 * i as f64).cos()).collect();
        let real: Vec<f64> = (0..nx * ny).map(|k| x[k / ny] * y[k % ny]).collect();
        let complex: Vec<Complex64> = real.iter().map(|&r| Complex64::new(r, 0.0)).collect();
        let grid0: Vec<Complex64> = (0..px * py)
            .map(|k| if rows[k / px] { value(k, 1.7) } else { Complex64::new(0.0, 0.0) })
            .collect();
        // A dense image, and one whose columns (transposed layout: blocks of ny values) are
        // zero except 3, 4 (a pair), 6 (alone in its pair) and 13 (the last).
        let dense: Vec<f64> = (0..nx * ny).map(|k| (0.4 * k as f64).cos()).collect();
        let sparse: Vec<f64> = (0..nx * ny)
            .map(|k| if [3, 4, 6, 13].contains(&(k / ny)) { (0.4 * k as f64).cos() } else { 0.0 })
            .collect();
        for image_t in [dense, sparse] {
            let mut outputs = Vec::new();
            let separable = Screen::Separable { x: &x, y: &y };
            for screen in [Screen::Real(&real), separable, Screen::Complex(&complex)] {
                let mut grid = grid0.clone();
                let mut out = vec![0.25; nx * ny];
                p.add_plane_to_image(&mut grid, &rows, screen, &mut out, false);
                // Stale values in the grid must not leak into the result.
                let mut back = vec![Complex64::new(3.0, -1.0); px * py];
                p.plane_from_image(&image_t, screen, &rows, &mut back, false);
                outputs.push((out, back));
            }
            let a = &outputs[0];
            for b in &outputs[1..] {
                assert!(a.0.iter().zip(&b.0).all(|(x, y)| (x - y).abs() < 1e-12));
                assert!(a.1.iter().zip(&b.1).all(|(x, y)| (x - y).norm() < 1e-12));
            }
            assert!(a.0.iter().any(|&x| (x - 0.25).abs() > 0.1), "not a comparison of zeros");
            assert!(a.1.iter().any(|x| x.norm() > 0.1), "not a comparison of zeros");
        }
    }

    #[test]
    fn advanced_screens_match_direct_evaluation() {
        // Reference: c · exp(±2πi w_p (n − 1 − shift)) evaluated directly per plane (the
        // definition). The recurrence's rounding grows by ~1e-16 per step and is reset every 16
        // planes; 1e-13 is far above that and far below the ε ≥ 1e-14 · (pad size) the gridder
        // needs. A folded plan (shifted planes) and an unfolded one (no shift).
        let g = ImageGeometry::new(16, 12, 0.004);
        let params = GridderParams { epsilon: 1e-6, w_term: WTerm::Stack };
        let folded = GridPlan::new(g, &params, WRange::new(-1500.0, 9000.0).unwrap()).unwrap();
        let unfolded =
            GridPlan::unfolded(g, &params, WRange::new(-1500.0, 4000.0).unwrap(), false).unwrap();
        assert!(folded.w_shift < 0.0 && unfolded.w_shift == 0.0);
        for (p, sign) in [(&folded, 1.0), (&folded, -1.0), (&unfolded, 1.0), (&unfolded, -1.0)] {
            let planes = p.planes.unwrap();
            assert!(planes.count > 20, "{} planes", planes.count);
            let corr = p.inverse_correction.as_slice().unwrap();
            let x = p.n_minus_1.as_slice().unwrap();
            let mut screens = Screens::new(p, corr, sign);
            // Every plane, then with gaps.
            let order: Vec<usize> = (0..planes.count).filter(|q| q % 5 != 3 || *q < 12).collect();
            for &q in &order {
                let Screen::Complex(got) = screens.plane(q) else { panic!("w is stacked") };
                let got = got.to_vec();
                let wp = planes.w0 + q as f64 * planes.dw;
                for iy in 0..12 {
                    for ix in 0..16 {
                        let k = iy * 16 + ix;
                        let phase = sign * 2.0 * PI * wp * (x[k] - p.w_shift);
                        let want = Complex64::from_polar(corr[k], phase);
                        assert!((got[ix * 12 + iy] - want).norm() < 1e-13 * corr[k].max(1.0));
                    }
                }
            }
            // A restart (another pass over the planes) gives exactly what fresh screens give,
            // also for the plane held before it (which had been reached by advancing).
            let last = *order.last().unwrap();
            for q in [3, last] {
                screens.restart();
                let Screen::Complex(got) = screens.plane(q) else { panic!("w is stacked") };
                let got = got.to_vec();
                let mut fresh = Screens::new(p, corr, sign);
                let Screen::Complex(want) = fresh.plane(q) else { panic!("w is stacked") };
                assert_eq!(got, want.to_vec(), "plane {q} after a restart");
                screens.plane(q + 1);
            }
        }
    }
}
