use beamfloor_core::{ImageGeometry, Pol, VoltageBeam};
use ndarray::Array2;
use rayon::prelude::*;

/// Bytes the A-screen cache of an [`crate::AProjection`] needs: one real `f64` screen of
/// `nx · ny` pixels per (parallactic-angle bin, channel, polarization), doubled for wideband
/// A-projection (the gridding screens at the conjugate frequency differ from the prediction
/// screens). Call it before planning to decide the bin width or the cache cap.
pub fn screen_cache_bytes(
    geometry: ImageGeometry,
    n_pa_bins: usize,
    n_channels: usize,
    wideband: bool,
) -> usize {
    let per_screen = geometry.nx * geometry.ny * std::mem::size_of::<f64>();
    let sets = if wideband { 2 } else { 1 };
    per_screen * n_pa_bins * n_channels * 2 * sets
}

/// The A-screen of one kernel group: the baseline product E_0 E_0*(l, m) of antenna 0 (every
/// antenna shares it, see [`crate::AProjection`]) for receptor `pol`, PA bin `bin` (the beam's
/// time index) and frequency `freq_hz`, on every pixel `[iy][ix]`. Real, because E E* = |E|².
pub(crate) fn a_screen<B: VoltageBeam + ?Sized>(
    beam: &B,
    geometry: ImageGeometry,
    bin: usize,
    freq_hz: f64,
    pol: Pol,
) -> Array2<f64> {
    let (nx, ny) = (geometry.nx, geometry.ny);
    let mut out = Array2::<f64>::zeros((ny, nx));
    out.as_slice_mut().expect("fresh array is contiguous").par_chunks_mut(nx).enumerate().for_each(
        |(iy, row)| {
            for (ix, v) in row.iter_mut().enumerate() {
                let (l, m) = geometry.lm_of_pixel(ix as f64, iy as f64);
                *v = beam.voltage(0, bin, freq_hz, pol, l, m).norm_sqr();
            }
        },
    );
    out
}

/// Samples per Nyquist interval of [`sampled_a_screen`]: the screen is sampled this many times
/// more finely than its band limit requires (common practice for local interpolation of a
/// band-limited function; the error it leaves is measured in the test below).
const SCREEN_OVERSAMPLING: f64 = 6.0;
/// Taps per axis of the Lagrange interpolation between samples.
const SCREEN_TAPS: usize = 8;

/// The sample spacing, in pixels, at which a screen whose spatial-frequency content lies within
/// `band_cells` cells of a padded grid of `pad_n` cells (|u| ≤ band_cells / (2 · pad_n · cell))
/// is sampled [`SCREEN_OVERSAMPLING`] times finer than Nyquist: ⌊pad_n / (band_cells · 6)⌋,
/// at least 1.
pub(crate) fn screen_step(pad_n: usize, band_cells: usize) -> usize {
    ((pad_n as f64 / (band_cells.max(1) as f64 * SCREEN_OVERSAMPLING)).floor() as usize).max(1)
}

/// [`a_screen`] evaluated on every `step`-th pixel (and [`SCREEN_TAPS`] / 2 samples beyond each
/// edge) and interpolated to every pixel with 8-point Lagrange polynomials along x, then y.
///
/// Exact to the interpolation error when the screen is band-limited to well below the sample
/// rate: |E|² of an aperture of diameter D at wavelength λ has no spatial frequency above D/λ
/// (the autocorrelation of the aperture), so the A-kernel's support in uv cells bounds it, and
/// [`screen_step`] picks the spacing from that support. `step = 1` is [`a_screen`] itself.
///
/// Written into `out` (`[ny][nx]`, every value overwritten), so that the caller can reuse one
/// buffer for many screens: a fresh one each time cost a page fault per 4 KiB.
pub(crate) fn sampled_a_screen_into<B: VoltageBeam + ?Sized>(
    beam: &B,
    geometry: ImageGeometry,
    bin: usize,
    freq_hz: f64,
    pol: Pol,
    step: usize,
    out: &mut Array2<f64>,
) {
    let (nx, ny) = (geometry.nx, geometry.ny);
    assert_eq!(out.dim(), (ny, nx), "screen buffer shape");
    if step <= 1 {
        out.assign(&a_screen(beam, geometry, bin, freq_hz, pol));
        return;
    }
    let half = SCREEN_TAPS / 2;
    // Sample k sits at pixel (k − half) · step, for k = 0 … n − 1 covering [−half·step,
    // (n_pix − 1) + half·step].
    let samples = |n_pix: usize| (n_pix - 1) / step + 2 * half + 1;
    let (sx, sy) = (samples(nx), samples(ny));
    let pixel = |k: usize| (k as f64 - half as f64) * step as f64;
    let mut coarse = vec![0.0; sx * sy];
    coarse.par_chunks_mut(sx).enumerate().for_each(|(ky, row)| {
        for (kx, v) in row.iter_mut().enumerate() {
            let (l, m) = geometry.lm_of_pixel(pixel(kx), pixel(ky));
            *v = beam.voltage(0, bin, freq_hz, pol, l, m).norm_sqr();
        }
    });
    // Stencil start and weights of every pixel along one axis.
    let stencils = |n_pix: usize| -> Vec<(usize, [f64; SCREEN_TAPS])> {
        (0..n_pix)
            .map(|i| {
                let k = i / step + half; // sample at or just left of pixel i
                let t = (i % step) as f64 / step as f64; // offset from it, in samples
                (k + 1 - half, lagrange_weights(t))
            })
            .collect()
    };
    let (wx, wy) = (stencils(nx), stencils(ny));
    // Along x: every sample row to pixel columns.
    let mut rows = vec![0.0; sy * nx];
    rows.par_chunks_mut(nx).enumerate().for_each(|(ky, out)| {
        let src = &coarse[ky * sx..(ky + 1) * sx];
        for (o, (k0, w)) in out.iter_mut().zip(&wx) {
            *o = w.iter().zip(&src[*k0..*k0 + SCREEN_TAPS]).map(|(a, b)| a * b).sum();
        }
    });
    // Along y.
    out.as_slice_mut()
        .expect("screen buffers are contiguous")
        .par_chunks_mut(nx)
        .enumerate()
        .for_each(|(iy, dst)| {
            let (k0, w) = &wy[iy];
            let row = |j: usize| &rows[(k0 + j) * nx..(k0 + j + 1) * nx];
            // The first tap writes without reading: reading a fresh zeroed page first maps the
            // shared zero page, and the write after it then costs a copy-on-write fault with a
            // TLB flush on every core.
            for (d, s) in dst.iter_mut().zip(row(0)) {
                *d = w[0] * s;
            }
            for (j, &wj) in w.iter().enumerate().skip(1) {
                for (d, s) in dst.iter_mut().zip(row(j)) {
                    *d += wj * s;
                }
            }
        });
}

/// Lagrange weights of the [`SCREEN_TAPS`] nodes −3 … 4 (relative to the sample at or left of
/// the point) for a point at offset t ∈ [0, 1): w_j = Π_{i≠j} (t − x_i) / (x_j − x_i).
fn lagrange_weights(t: f64) -> [f64; SCREEN_TAPS] {
    let node = |j: usize| j as f64 - (SCREEN_TAPS / 2 - 1) as f64;
    std::array::from_fn(|j| {
        (0..SCREEN_TAPS).filter(|&i| i != j).map(|i| (t - node(i)) / (node(j) - node(i))).product()
    })
}
