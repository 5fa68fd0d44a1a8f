//! Primary-beam correction of Taylor-term images by the averaged beam's own Taylor coefficients.

use beamfloor_deconv::TermHessian;
use ndarray::Array2;

/// Divides apparent Taylor images I'_t (sky × beam) by the beam's Taylor coefficients P_t.
///
/// With I'(ν) = I(ν) P(ν) and both expanded in x = (ν − ν0)/ν0, matching powers of x gives
/// I'_t = Σ_{s ≤ t} I_{t−s} P_s, solved term by term:
/// I_0 = I'_0 / P_0, I_1 = (I'_1 − I_0 P_1) / P_0, I_2 = (I'_2 − I_1 P_1 − I_0 P_2) / P_0, …
/// (the product rule of two series; Rau & Cornwell 2011, A&A 532, A71, describe this division
/// of the beam's spectrum out of the Taylor images). Pixels where `valid` is false become NaN.
pub fn divide_beam_taylor(
    apparent: &[Array2<f64>],
    beam_taylor: &[Array2<f64>],
    valid: &Array2<bool>,
) -> Vec<Array2<f64>> {
    let n = apparent.len();
    let dim = apparent[0].dim();
    let mut out: Vec<Array2<f64>> = vec![Array2::from_elem(dim, f64::NAN); n];
    for ((iy, ix), &ok) in valid.indexed_iter() {
        if !ok {
            continue;
        }
        let p0 = beam_taylor[0][[iy, ix]];
        for t in 0..n {
            let mut v = apparent[t][[iy, ix]];
            for s in 1..=t {
                let ps = beam_taylor.get(s).map_or(0.0, |p| p[[iy, ix]]);
                v -= out[t - s][[iy, ix]] * ps;
            }
            out[t][[iy, ix]] = v / p0;
        }
    }
    out
}

/// Pixels where P_0 is at least `cutoff` × its largest value over the image.
pub fn beam_validity(p0: &Array2<f64>, cutoff: f64) -> Array2<bool> {
    let peak = p0.iter().copied().filter(|v| v.is_finite()).fold(0.0f64, f64::max);
    p0.mapv(|v| v.is_finite() && peak > 0.0 && v >= cutoff * peak)
}

/// The Taylor coefficients of an A-projection strategy's per-channel gain in the flat-noise
/// frame, G_c = g · W_c (a sky flux S_c in channel c at a pixel appears there as G_c S_c, with
/// W_c the channel's sensitivity and g = 1/√W_0), fitted over the channels with the imaging
/// weights: G_t = g Σ_u (H⁻¹)_tu W_u for t < N, from the sensitivity's spectral moments
/// W_u = Σ_c w_c x_c^u W_c / Σ w and the minor cycle's phase-centre Hessian H. Dividing the
/// restored Taylor images by G_t ([`divide_beam_taylor`]) is the same correction average-beam
/// imaging makes with its beam's Taylor terms; with one term it is × 1/√W_0 = × g.
pub fn gain_taylor(
    moments: &[Array2<f64>],
    hessian: &TermHessian,
    g: &Array2<f64>,
) -> Vec<Array2<f64>> {
    let n = hessian.nterms();
    (0..n)
        .map(|t| {
            let mut out = Array2::<f64>::zeros(g.dim());
            for (u, moment) in moments.iter().enumerate().take(n) {
                out.scaled_add(hessian.inverse_get(t, u), moment);
            }
            out * g
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A power-law sky times a beam with a linear spectrum: the apparent coefficients built by
    /// the series product (worked by hand: (a0 + a1 x + a2 x²)(p0 + p1 x + p2 x²) up to x²)
    /// must come back exactly.
    #[test]
    fn division_inverts_the_series_product() {
        let (a, p) = ([2.0, -1.4, 0.3], [0.6, -0.5, 0.2]);
        let apparent =
            [a[0] * p[0], a[1] * p[0] + a[0] * p[1], a[2] * p[0] + a[1] * p[1] + a[0] * p[2]];
        let img = |v: f64| Array2::from_elem((1, 2), v);
        let app: Vec<_> = apparent.iter().map(|&v| img(v)).collect();
        let beam: Vec<_> = p.iter().map(|&v| img(v)).collect();
        let mut valid = Array2::from_elem((1, 2), true);
        valid[[0, 1]] = false;
        let sky = divide_beam_taylor(&app, &beam, &valid);
        for t in 0..3 {
            // Three divisions and products in f64: a few ulps.
            assert!((sky[t][[0, 0]] - a[t]).abs() < 1e-14, "term {t}: {}", sky[t][[0, 0]]);
            assert!(sky[t][[0, 1]].is_nan());
        }
    }

    /// A gain linear in x over three equally weighted channels (x = −0.2, 0, 0.2):
    /// W_c = 0.5 + 0.4 x. Its weighted least-squares fit with two terms is exact, so
    /// G = g · (0.5, 0.4) with g = 1/√W_0 = 1/√0.5 (moments and Hessian worked by hand:
    /// W_0 = 0.5, W_1 = 0.4 · 0.08/3, H = [[1, 0], [0, 0.08/3]]).
    #[test]
    fn gain_taylor_fits_a_linear_gain_exactly() {
        let m2 = 0.08 / 3.0;
        let h = TermHessian::from_peaks(&[1.0, 0.0, m2], 2, 0).unwrap();
        let moments = [Array2::from_elem((1, 1), 0.5), Array2::from_elem((1, 1), 0.4 * m2)];
        let g = Array2::from_elem((1, 1), 1.0 / 0.5f64.sqrt());
        let gain = gain_taylor(&moments, &h, &g);
        assert!((gain[0][[0, 0]] - 0.5 * g[[0, 0]]).abs() < 1e-14, "{}", gain[0][[0, 0]]);
        assert!((gain[1][[0, 0]] - 0.4 * g[[0, 0]]).abs() < 1e-14, "{}", gain[1][[0, 0]]);
    }
}
