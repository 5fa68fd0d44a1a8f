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
