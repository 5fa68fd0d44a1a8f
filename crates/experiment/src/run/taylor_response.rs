//! From a multi-term A-projection model to the sky's Taylor coefficients.
//!
//! The minor cycle of a multi-term A-projection strategy models b, the Taylor expansion of the
//! *apparent* spectrum in the flat-noise frame (see [`super::channel_model`]): in channel c the
//! sky is S_c = b_c / (g W_c), with W_c the channel's sensitivity and g = 1/√W_0. The sky's own
//! N Taylor coefficients a are the least-squares fit of S_c over the channels, weighted as the
//! data weigh them, w_c W_c (the information a channel carries about the sky at that pixel):
//! Σ_c w_c W_c x_c^t (Σ_s a_s x_c^s − S_c) = 0 for t < N. Since w_c W_c S_c = w_c b_c / g, this is
//! W a = √W_0 H b with W_st = W_{s+t} (the sensitivity's spectral moments) and H the minor
//! cycle's phase-centre Hessian, so a = g · T b with T = Ĥ⁻¹ H and Ĥ = W / W_0. At the phase
//! centre of a beam that does not change over the band T = I; with one Taylor term T = 1.
//! Where the beam product is small in part of the band, Ĥ is poorly conditioned and T large:
//! the higher sky terms there are poorly determined by the data, and the sky-frame images say so
//! by their noise.

use beamfloor_deconv::TermHessian;
use ndarray::Array2;

/// T(p) = Ĥ(p)⁻¹ H per pixel, for N Taylor terms: sky Taylor coefficients = g · T · b.
pub struct TaylorResponse {
    n: usize,
    dim: (usize, usize),
    /// Row-major N×N matrices, one per pixel in row-major pixel order.
    matrices: Vec<f64>,
}

impl TaylorResponse {
    /// From the sensitivity's 2N − 1 spectral moments `moments` (W_0 first) and the minor
    /// cycle's phase-centre Hessian. Pixels where `valid` is false (blanked: g = 0), or where
    /// Ĥ is not positive definite (the beam product vanishes in all but fewer than N channels),
    /// get T = I.
    pub fn new(moments: &[Array2<f64>], hessian: &TermHessian, valid: &Array2<bool>) -> Self {
        let n = hessian.nterms();
        let dim = valid.dim();
        let mut matrices = vec![0.0; dim.0 * dim.1 * n * n];
        let mut normalised = vec![0.0; n * n];
        for (pixel, ((iy, ix), &ok)) in valid.indexed_iter().enumerate() {
            let t = &mut matrices[pixel * n * n..(pixel + 1) * n * n];
            let w0 = moments[0][[iy, ix]];
            let local = if ok && w0 > 0.0 {
                for s in 0..n {
                    for u in 0..n {
                        normalised[s * n + u] = moments[s + u][[iy, ix]] / w0;
                    }
                }
                TermHessian::from_matrix(normalised.clone(), n, 0).ok()
            } else {
                None
            };
            match local {
                Some(h_local) => {
                    for s in 0..n {
                        for u in 0..n {
                            t[s * n + u] =
                                (0..n).map(|k| h_local.inverse_get(s, k) * hessian.get(k, u)).sum();
                        }
                    }
                }
                None => (0..n).for_each(|s| t[s * n + s] = 1.0),
            }
        }
        Self { n, dim, matrices }
    }

    /// T applied per pixel: out_s(p) = Σ_u T_su(p) images_u(p). `images` holds N images of the
    /// response's shape.
    pub fn apply(&self, images: &[Array2<f64>]) -> Vec<Array2<f64>> {
        let n = self.n;
        let mut out = vec![Array2::<f64>::zeros(self.dim); n];
        for (pixel, (iy, ix)) in
            (0..self.dim.0).flat_map(|iy| (0..self.dim.1).map(move |ix| (iy, ix))).enumerate()
        {
            let t = &self.matrices[pixel * n * n..(pixel + 1) * n * n];
            for s in 0..n {
                out[s][[iy, ix]] = (0..n).map(|u| t[s * n + u] * images[u][[iy, ix]]).sum();
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Two pixels: one where the beam product's moments equal the phase-centre ones (T = I), one
    /// with a beam product falling linearly over the band (weights 1 − 2x at three channels
    /// x = −0.2, 0, 0.2: moments worked by hand), where Ĥ T must give back H; and a blanked
    /// pixel (T = I).
    #[test]
    fn transform_restores_the_phase_centre_response() {
        let xs = [-0.2, 0.0, 0.2];
        let moment = |k: i32, weight: &dyn Fn(f64) -> f64| -> f64 {
            xs.iter().map(|&x| weight(x) * x.powi(k)).sum::<f64>() / 3.0
        };
        let flat = |_: f64| 1.0;
        let falling = |x: f64| 0.8 * (1.0 - 2.0 * x);
        let h = TermHessian::from_peaks(&[1.0, moment(1, &flat), moment(2, &flat)], 2, 0).unwrap();
        let moments: Vec<Array2<f64>> = (0..3)
            .map(|k| {
                Array2::from_shape_vec(
                    (1, 3),
                    vec![moment(k, &flat), moment(k, &falling), moment(k, &falling)],
                )
                .unwrap()
            })
            .collect();
        let valid = Array2::from_shape_vec((1, 3), vec![true, true, false]).unwrap();
        let response = TaylorResponse::new(&moments, &h, &valid);
        let m = [Array2::from_elem((1, 3), 2.0), Array2::from_elem((1, 3), -0.5)];
        let out = response.apply(&m);
        // Pixels 0 and 2: identity.
        for p in [0, 2] {
            assert!((out[0][[0, p]] - 2.0).abs() < 1e-14 && (out[1][[0, p]] + 0.5).abs() < 1e-14);
        }
        // Pixel 1: Ĥ (T m) = H m, with Ĥ_su = W_{s+u} / W_0.
        let w = |k: i32| moment(k, &falling) / moment(0, &falling);
        let hm = [h.get(0, 0) * 2.0 - h.get(0, 1) * 0.5, h.get(1, 0) * 2.0 - h.get(1, 1) * 0.5];
        let tm = [out[0][[0, 1]], out[1][[0, 1]]];
        let back = [w(0) * tm[0] + w(1) * tm[1], w(1) * tm[0] + w(2) * tm[1]];
        for s in 0..2 {
            assert!((back[s] - hm[s]).abs() < 1e-12, "term {s}: {} vs {}", back[s], hm[s]);
        }
        // The transform is not the identity there (the test can fail).
        assert!((tm[1] + 0.5).abs() > 0.1, "{tm:?}");
    }
}
