//! Primary-beam correction of Taylor-term images by the averaged beam's own Taylor coefficients.

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
}
