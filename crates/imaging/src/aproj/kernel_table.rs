//! Oversampled uv-domain A-kernels of [`crate::KernelAProjection`]: one table per
//! (PA bin, channel group, hand, side), each the Fourier transform of the gridder's own taper
//! times the beam's power pattern.
//!
//! The kernel of a group is
//!
//! K(t) = ∫∫ ψ̂(ξ_x) ψ̂(ξ_y) A(l(ξ_x), m(ξ_y)) e^{+2πi (ξ_x t_x + ξ_y t_y)} dξ_x dξ_y,
//!
//! t in grid cells, ξ in cycles per cell (image pixel j of the padded grid sits at ξ = j / pad),
//! ψ̂ the ES kernel's Fourier transform and A = |E_p|² of antenna 0. So K = ψ ⊗ (uv transform of
//! A): for A ≡ 1 it is the ES kernel itself. Gridding a sample with K(g − s) and dividing the
//! image by ψ̂ (the gridder's own correction) applies A to the image (Poisson summation:
//! Σ_g K(g − s) e^{−2πi g ξ} = Σ_k ψ̂A(ξ + k) e^{−2πi (ξ + k) s}).
//!
//! The product is sampled on |ξ_x|, |ξ_y| < 1: ψ̂ falls to the ε level by |ξ| ≈ 3/4 and stays
//! there (about e^{−β} ψ̂(0), from φ's value at the support edge), so the band between 3/4 and
//! 1 aliases onto the image at the ε level exactly as the plain gridder's kernel does, and the
//! jump left at |ξ| = 1 rings in K at about ε/100 of its peak. (A cut at 3/4 would remove every
//! alias but leave a jump of ε ψ̂(0) whose ringing needs a support three times wider.) The beam
//! must therefore be defined out to |l|, |m| < pad · cell — see [`kernel_beam_half_width_rad`].
//!
//! Sampling: the integral is a sum over ξ_n = (n − M/2)/P, n < M = 2P, with P (cells) the
//! period the sum imposes on K; an inverse FFT of size M² gives K at t = k/2, and a phase
//! ramp e^{2πi ξ τ} before it shifts the outputs by τ, so ⌈O/2⌉² FFTs give every t on the
//! 1/O lattice. P is doubled from 32 until the support fits in P/2 − 4 cells.
//!
//! Support rule: S = 2h + 1 cells with h = ⌈r⌉, r the largest max(|t_x|, |t_y|) at which a
//! sample of |K| at half-cell spacing exceeds ε times the peak |K| (ε the gridder's accuracy).
//! A footprint of S cells around the nearest cell keeps every t with |t| ≤ h − 1/2 and drops
//! only cells at |t| ≥ h + 1/2 ≥ r + 1/2, where |K| ≤ ε · peak — the level at which the plain
//! gridder cuts its ES kernel (φ(±1) = e^{−β} ≈ ε/10), so for a flat beam S = W + 1.
//!
//! Table layout (`Complex32`: single precision halves the memory and the bandwidth of the
//! lookups; its rounding, 6e-8 of the peak, is far below the interpolation error, and every
//! sum is done in f64): `[fy][fx][jy][jx]`, sub-offsets f = 0..=O (O + 1 of them, so
//! that bilinear interpolation between lattice points q and q + 1 stays in one footprint),
//! cells j < S: entry = K(j_x − h − (f_x − ⌊O/2⌋)/O, j_y − h − (f_y − ⌊O/2⌋)/O).
use crate::error::ImagingError;
use crate::plan::GridPlan;
use beamfloor_core::{ImageGeometry, Pol, VoltageBeam};
use num_complex::{Complex32, Complex64};
use rustfft::{Fft, FftPlanner};
use std::f64::consts::PI;
use std::sync::Arc;

/// |ξ| (cycles per cell, each axis) below which taper × beam is sampled (the ξ grid of M = 2P
/// points at spacing 1/P spans [−1, 1)).
pub(crate) const XI_CUT: f64 = 1.0;
/// Largest kernel period tried, cells.
const MAX_PERIOD: usize = 1024;

/// Half-width (rad, along l and along m) of the square around the phase centre on which the
/// kernels of [`crate::KernelAProjection`] evaluate the beam: pad · cell, with pad the
/// padded grid size (≥ 2 n) of `geometry`'s larger axis. Build the imaging beam so that it is
/// tabulated out to this half-width (for a `DishBeam`: `max_abs_lm` at least this); a pattern
/// that returns exactly 0 inside it is refused at construction.
pub fn kernel_beam_half_width_rad(geometry: ImageGeometry) -> Result<f64, ImagingError> {
    let ignore = crate::GridderParams { epsilon: 1e-1, w_term: crate::WTerm::Ignore };
    let plan = GridPlan::new(geometry, &ignore, crate::WRange::new(0.0, 0.0)?)?;
    Ok(plan.kernel_beam_half_width())
}

impl GridPlan {
    /// See [`kernel_beam_half_width_rad`].
    pub(crate) fn kernel_beam_half_width(&self) -> f64 {
        XI_CUT * self.pad_nx.max(self.pad_ny) as f64 * self.geometry.cell_rad
    }
}

/// What one kernel is made of: the beam's time index (PA bin), frequency and receptor.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct KernelSpec {
    pub bin: usize,
    pub freq_hz: f64,
    pub pol: Pol,
}

/// An oversampled kernel table (layout in the module doc).
#[derive(Clone, Debug)]
pub(crate) struct KernelTable {
    /// Support S (odd), cells.
    pub support: usize,
    /// Oversampling O (lattice points per cell).
    pub oversampling: usize,
    pub data: Vec<Complex32>,
}

impl KernelTable {
    /// The S × S slice of sub-offsets (fy, fx), each in 0..=O.
    #[inline]
    pub fn slice(&self, fy: usize, fx: usize) -> &[Complex32] {
        let s2 = self.support * self.support;
        let start = (fy * (self.oversampling + 1) + fx) * s2;
        &self.data[start..start + s2]
    }
}

/// Bytes of a table with oversampling `o` and support `s` ((O + 1)² S² single-precision complex).
pub(crate) fn table_bytes(o: usize, s: usize) -> usize {
    (o + 1) * (o + 1) * s * s * std::mem::size_of::<Complex32>()
}

/// F(ξ) = ψ̂(ξ_x) ψ̂(ξ_y) A on the M × M points ξ_n = (n − M/2)/P (zero beyond the cut), rows
/// along y.
struct Spectrum {
    period: usize,
    m: usize,
    values: Vec<Complex64>,
    fft: Arc<dyn Fft<f64>>,
}

impl Spectrum {
    fn new<B: VoltageBeam + ?Sized>(
        plan: &GridPlan,
        beam: &B,
        spec: KernelSpec,
        period: usize,
    ) -> Result<Self, ImagingError> {
        let m = 2 * period;
        let xi = |n: usize| (n as f64 - (m / 2) as f64) / period as f64;
        let taper: Vec<f64> = (0..m).map(|n| plan.kernel.fourier(xi(n))).collect();
        let g = plan.geometry;
        let (cx, cy) = g.centre_pixel();
        let mut values = vec![Complex64::new(0.0, 0.0); m * m];
        for (ny, row) in values.chunks_mut(m).enumerate() {
            if taper[ny] == 0.0 {
                continue;
            }
            let y = cy as f64 + xi(ny) * plan.pad_ny as f64;
            for (nx, v) in row.iter_mut().enumerate() {
                if taper[nx] == 0.0 {
                    continue;
                }
                let x = cx as f64 + xi(nx) * plan.pad_nx as f64;
                let (l, mm) = g.lm_of_pixel(x, y);
                let a = beam.voltage(0, spec.bin, spec.freq_hz, spec.pol, l, mm).norm_sqr();
                if a == 0.0 {
                    return Err(ImagingError::Parameter {
                        name: "beam",
                        value: format!(
                            "|E|² = 0 at (l, m) = ({l:.5}, {mm:.5}) rad, {} Hz, bin {}",
                            spec.freq_hz, spec.bin
                        ),
                        why: "the A-kernels need the imaging beam tabulated out to \
                              kernel_beam_half_width_rad(geometry) along l and m",
                    });
                }
                *v = Complex64::new(taper[ny] * taper[nx] * a, 0.0);
            }
        }
        let fft = FftPlanner::new().plan_fft_inverse(m);
        Ok(Self { period, m, values, fft })
    }

    /// The phase ramp exp(2πi ξ_n τ) that shifts the kernel by τ cells along one axis.
    fn ramp(&self, tau: f64) -> Vec<Complex64> {
        let (m, p) = (self.m, self.period as f64);
        (0..m)
            .map(|n| Complex64::from_polar(1.0, 2.0 * PI * (n as f64 - (m / 2) as f64) / p * tau))
            .collect()
    }

    /// K(k/2 + τ) for every k (mod M), τ = (τ_x, τ_y) cells: the phase-ramped inverse FFT,
    /// scaled by 1/P² and the (−1)^{k_x + k_y} of the centred ξ grid. Row-major `[ky][kx]`.
    fn shifted(&self, tau_x: f64, tau_y: f64, out: &mut [Complex64], scratch: &mut Vec<Complex64>) {
        let m = self.m;
        let p = self.period as f64;
        let (rx, ry) = (self.ramp(tau_x), self.ramp(tau_y));
        for (ny, (o, f)) in out.chunks_mut(m).zip(self.values.chunks(m)).enumerate() {
            for (nx, (o, f)) in o.iter_mut().zip(f).enumerate() {
                *o = f * rx[nx] * ry[ny];
            }
        }
        fft_2d(&self.fft, out, m, scratch);
        let scale = 1.0 / (p * p);
        for (ky, row) in out.chunks_mut(m).enumerate() {
            for (kx, v) in row.iter_mut().enumerate() {
                let sign = if (kx + ky) % 2 == 0 { scale } else { -scale };
                *v *= sign;
            }
        }
    }
}

/// In-place unnormalised 2-D FFT of a square `m × m` row-major array (rows, transpose, rows,
/// transpose).
fn fft_2d(fft: &Arc<dyn Fft<f64>>, data: &mut [Complex64], m: usize, scratch: &mut Vec<Complex64>) {
    scratch.resize(fft.get_inplace_scratch_len(), Complex64::new(0.0, 0.0));
    for _ in 0..2 {
        fft.process_with_scratch(data, scratch);
        for i in 0..m {
            for j in i + 1..m {
                data.swap(i * m + j, j * m + i);
            }
        }
    }
}

/// Signed lattice index k of output index `i` of an M-point transform (k ≡ i mod M).
#[inline]
fn signed(i: usize, m: usize) -> i64 {
    if i < m / 2 {
        i as i64
    } else {
        i as i64 - m as i64
    }
}

/// Period P (cells) and support S of a kernel: the probe of the module doc.
pub(crate) fn probe_support<B: VoltageBeam + ?Sized>(
    plan: &GridPlan,
    beam: &B,
    spec: KernelSpec,
) -> Result<(usize, usize), ImagingError> {
    let threshold = plan.kernel.epsilon();
    let mut period = 32;
    let mut scratch = Vec::new();
    loop {
        let sp = Spectrum::new(plan, beam, spec, period)?;
        let m = sp.m;
        let mut k = vec![Complex64::new(0.0, 0.0); m * m];
        sp.shifted(0.0, 0.0, &mut k, &mut scratch);
        let peak = k.iter().map(|v| v.norm()).fold(0.0, f64::max);

        let mut r_max = 0.0f64;
        for (i, v) in k.iter().enumerate() {
            if v.norm() > threshold * peak {
                let tx = signed(i % m, m).unsigned_abs() as f64 * 0.5;
                let ty = signed(i / m, m).unsigned_abs() as f64 * 0.5;
                r_max = r_max.max(tx.max(ty));
            }
        }
        if r_max <= 0.5 * period as f64 - 4.0 {
            // Cells left out of a footprint lie at |t| ≥ h + 1/2 from the sample; the probe's
            // next sample beyond r_max (at r_max + 1/2) is below the threshold.
            let h = r_max.ceil() as usize;
            return Ok((period, 2 * h + 1));
        }
        period *= 2;
        if period > MAX_PERIOD {
            return Err(ImagingError::Parameter {
                name: "A-kernel support",
                value: format!("more than {} cells at {} Hz", MAX_PERIOD / 2, spec.freq_hz),
                why: "the beam's uv footprint does not fit a kernel; use a coarser grid or a \
                      smaller field",
            });
        }
    }
}

/// Build the oversampled table of one kernel with the period and support from
/// [`probe_support`].
pub(crate) fn build_table<B: VoltageBeam + ?Sized>(
    plan: &GridPlan,
    beam: &B,
    spec: KernelSpec,
    period: usize,
    support: usize,
    oversampling: usize,
) -> Result<KernelTable, ImagingError> {
    let o = oversampling as i64;
    let sp = Spectrum::new(plan, beam, spec, period)?;
    let m = sp.m;
    let h = (support / 2) as i64;
    let half_o = o / 2;
    // The FFT outputs step by 1/2 cell, i.e. O/2 lattice points (O even); for odd O only every
    // second output (a whole cell, O points) lies on the lattice.
    let (step, every) = if o % 2 == 0 { (o / 2, 1) } else { (o, 2) };
    // Per axis, per residue r: (table index f, cell j, FFT output index).
    let mut lists: Vec<Vec<(usize, usize, usize)>> = vec![Vec::new(); step as usize];
    for f in 0..=o {
        for j in 0..support as i64 {
            let t_o = (j - h) * o - (f - half_o);
            let r = t_o.rem_euclid(step);
            let k = (t_o - r) / step * every;
            lists[r as usize].push((f as usize, j as usize, k.rem_euclid(m as i64) as usize));
        }
    }
    let n_f = oversampling + 1;
    let mut data = vec![Complex32::new(0.0, 0.0); n_f * n_f * support * support];
    // The shifted kernels are separable transforms: for each x residue the transforms along x
    // are shared by every y residue, and along y only the columns the table reads are needed
    // (the same values as [`Spectrum::shifted`] for each (τ_x, τ_y), in a third of the work).
    let scale = 1.0 / (sp.period as f64 * sp.period as f64);
    let mut rows = vec![Complex64::new(0.0, 0.0); m * m];
    let mut column = vec![Complex64::new(0.0, 0.0); m];
    let mut scratch = vec![Complex64::new(0.0, 0.0); sp.fft.get_inplace_scratch_len()];
    // The same residues r / O shift along x and along y.
    let ramps: Vec<Vec<Complex64>> =
        (0..lists.len()).map(|r| sp.ramp(r as f64 / o as f64)).collect();
    for (lx, ramp_x) in lists.iter().zip(&ramps) {
        for (row, values) in rows.chunks_mut(m).zip(sp.values.chunks(m)) {
            for ((r, v), p) in row.iter_mut().zip(values).zip(ramp_x) {
                *r = v * p;
            }
        }
        sp.fft.process_with_scratch(&mut rows, &mut scratch);
        let mut columns: Vec<usize> = lx.iter().map(|&(_, _, kx)| kx).collect();
        columns.sort_unstable();
        columns.dedup();
        for (ly, ramp_y) in lists.iter().zip(&ramps) {
            for &kx in &columns {
                for (ny, c) in column.iter_mut().enumerate() {
                    *c = rows[ny * m + kx] * ramp_y[ny];
                }
                sp.fft.process_with_scratch(&mut column, &mut scratch);
                for &(fx, jx, _) in lx.iter().filter(|e| e.2 == kx) {
                    for &(fy, jy, ky) in ly {
                        // (−1)^{k_x + k_y} of the centred ξ grid, and 1/P².
                        let sign = if (kx + ky) % 2 == 0 { scale } else { -scale };
                        let v = column[ky] * sign;
                        data[((fy * n_f + fx) * support + jy) * support + jx] =
                            Complex32::new(v.re as f32, v.im as f32);
                    }
                }
            }
        }
    }
    Ok(KernelTable { support, oversampling, data })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::params::{GridderParams, WRange, WTerm};

    /// A beam with E ≡ 1 everywhere: A ≡ 1, so K must be the ES kernel ψ(t_x) ψ(t_y).
    struct Flat;
    impl VoltageBeam for Flat {
        fn n_antennas(&self) -> usize {
            1
        }
        fn voltage(&self, _: usize, _: usize, _: f64, _: Pol, _: f64, _: f64) -> Complex64 {
            Complex64::new(1.0, 0.0)
        }
    }

    #[test]
    fn a_flat_beam_gives_the_es_kernel() {
        // Reference: ψ(t) = φ(2t/W), φ(z) = exp(β(√(1 − z²) − 1)) (Barnett, Magland &
        // af Klinteberg 2019, eq. 1.8). The table is the inverse transform of ψ̂ sampled on
        // |ξ| < 1, i.e. ψ band-limited: near |t| = W/2, where ψ jumps from e^{−β} ≈ 1e-8 to 0,
        // the two differ by a few 1e-8 (measured); f32 storage adds up to 6e-8 (half an ulp of
        // numbers ≤ 1), so 1.5e-7 of the peak bounds them.
        let g = ImageGeometry::new(32, 32, 1e-3);
        let params = GridderParams { epsilon: 1e-7, w_term: WTerm::Ignore };
        let plan = GridPlan::new(g, &params, WRange::new(0.0, 0.0).unwrap()).unwrap();
        let spec = KernelSpec { bin: 0, freq_hz: 1e9, pol: Pol::R };
        let (period, support) = probe_support(&plan, &Flat, spec).unwrap();
        // The band-limited ψ falls below ε = 1e-7 of its peak between |t| = 3.5 and 4 (ψ(3.5)
        // = 7.5e-5, ψ(4) = e^{−β} ≈ 1e-8): r = 3.5, h = 4, S = 9 = W + 1.
        assert_eq!(support, 9, "period {period}");
        for o in [1, 3, 4] {
            let t = build_table(&plan, &Flat, spec, period, support, o).unwrap();
            assert_eq!(t.data.len() * 8, table_bytes(o, support));
            let h = (support / 2) as f64;
            let mut err = 0.0f64;
            for fy in 0..=o {
                for fx in 0..=o {
                    let sl = t.slice(fy, fx);
                    for jy in 0..support {
                        for jx in 0..support {
                            let tx = jx as f64 - h - (fx as f64 - (o / 2) as f64) / o as f64;
                            let ty = jy as f64 - h - (fy as f64 - (o / 2) as f64) / o as f64;
                            let k = plan.kernel();
                            let want = k.phi(tx / 4.0) * k.phi(ty / 4.0);
                            let v = sl[jy * support + jx];
                            err = err.max((v.re as f64 - want).hypot(v.im as f64));
                        }
                    }
                }
            }
            assert!(err < 1.5e-7, "O = {o}: {err:e}");
        }
    }

    /// A beam with a tilted, off-centre |E|² (no symmetry), so the kernel is complex.
    struct Tilted;
    impl VoltageBeam for Tilted {
        fn n_antennas(&self) -> usize {
            1
        }
        fn voltage(&self, _: usize, _: usize, _: f64, _: Pol, l: f64, m: f64) -> Complex64 {
            let (x, y) = (l / 0.02 - 0.2, m / 0.03 + 0.1);
            Complex64::from_polar((-(x * x + y * y + 0.5 * x * y)).exp() + 0.05, 3.0 * l)
        }
    }

    #[test]
    fn table_equals_the_shifted_kernels_of_the_definition() {
        // Reference: every (τ_x, τ_y) shift transformed whole by `Spectrum::shifted` (the 2-D
        // inverse FFT of the phase-ramped spectrum, the kernel's definition here) and sampled at
        // the table's lattice points; the table shares the x transforms between y shifts and
        // transforms along y only the columns it keeps. Equal to f32 rounding (6e-8 of values
        // ≤ 1, plus f64 FFT round-off).
        let g = ImageGeometry::new(32, 32, 1e-3);
        let params = GridderParams { epsilon: 1e-6, w_term: WTerm::Ignore };
        let plan = GridPlan::new(g, &params, WRange::new(0.0, 0.0).unwrap()).unwrap();
        let spec = KernelSpec { bin: 0, freq_hz: 1e9, pol: Pol::R };
        let (period, support) = probe_support(&plan, &Tilted, spec).unwrap();
        for o in [3, 4, 6] {
            let table = build_table(&plan, &Tilted, spec, period, support, o).unwrap();
            let sp = Spectrum::new(&plan, &Tilted, spec, period).unwrap();
            let (m, h, half_o) = (sp.m as i64, (support / 2) as i64, (o / 2) as i64);
            let (mut buf, mut scratch) = (vec![Complex64::new(0.0, 0.0); sp.m * sp.m], Vec::new());
            let mut err = 0.0f64;
            for fy in 0..=o as i64 {
                for fx in 0..=o as i64 {
                    // Offset of cell j from the lattice point, in cells: (j − h) − (f − O/2)/O;
                    // output k of the shifted transform sits at k/2 + τ cells.
                    let t_of = |j: i64, f: i64| (j - h) as f64 - (f - half_o) as f64 / o as f64;
                    let tau = |t: f64| t - (2.0 * t).floor() / 2.0;
                    for jy in 0..support as i64 {
                        for jx in 0..support as i64 {
                            let (tx, ty) = (t_of(jx, fx), t_of(jy, fy));
                            sp.shifted(tau(tx), tau(ty), &mut buf, &mut scratch);
                            let k = |t: f64| ((2.0 * t).floor() as i64).rem_euclid(m) as usize;
                            let want = buf[k(ty) * sp.m + k(tx)];
                            let v = table.slice(fy as usize, fx as usize)
                                [jy as usize * support + jx as usize];
                            let got = Complex64::new(v.re as f64, v.im as f64);
                            err = err.max((got - want).norm());
                        }
                    }
                }
            }
            assert!(err < 2e-7, "O = {o}: {err:e}");
        }
    }
}
