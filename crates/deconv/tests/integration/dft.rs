//! Slow, obvious direct-Fourier-transform imaging over a small synthetic uv-coverage: the
//! reference the deconvolution tests build their PSFs and dirty images with.
use beamfloor_core::{
    derive_seed, taylor_weight, ImageGeometry, SeedPurpose, SPEED_OF_LIGHT_M_PER_S,
};
use ndarray::Array2;
use rand::Rng;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use std::f64::consts::PI;

/// 11 equally weighted channels from 1 to 2 GHz, reference 1.5 GHz.
pub fn channels() -> (Vec<f64>, f64) {
    ((0..11).map(|i| 1.0e9 + 1.0e8 * i as f64).collect(), 1.5e9)
}

/// Baselines (u, v) in metres: 10 antennas at seeded random positions within 250 m, each
/// baseline turned through 8 angles over 105° (a crude stand-in for earth rotation).
pub fn baselines_m() -> Vec<(f64, f64)> {
    let mut rng = ChaCha8Rng::seed_from_u64(derive_seed(7, SeedPurpose::Test, 0));
    let ants: Vec<(f64, f64)> = (0..10)
        .map(|_| {
            let r = 250.0 * rng.random::<f64>().sqrt();
            let t = 2.0 * PI * rng.random::<f64>();
            (r * t.cos(), r * t.sin())
        })
        .collect();
    let mut out = Vec::new();
    for i in 0..ants.len() {
        for j in i + 1..ants.len() {
            let (bx, by) = (ants[j].0 - ants[i].0, ants[j].1 - ants[i].1);
            for k in 0..8 {
                let a = (k as f64) * (105.0f64.to_radians() / 7.0);
                out.push((bx * a.cos() - by * a.sin(), bx * a.sin() + by * a.cos()));
            }
        }
    }
    out
}

/// Grid used by the tests: 64² pixels of 5e-5 rad (about 4 pixels across the 2 GHz beam).
pub fn geometry() -> ImageGeometry {
    ImageGeometry::new(64, 64, 5e-5)
}

/// Visibilities V(u,v) = Σ_p S_p(ν) exp(−2πi (u l_p + v m_p)) of point components
/// (l, m, flux at each channel) for every (baseline, channel): [baseline][channel] (re, im).
pub fn predict(
    points: &[(f64, f64, Vec<f64>)],
    bl: &[(f64, f64)],
    freqs: &[f64],
) -> Vec<Vec<(f64, f64)>> {
    bl.iter()
        .map(|&(um, vm)| {
            freqs
                .iter()
                .enumerate()
                .map(|(c, &f)| {
                    let (u, v) = (um * f / SPEED_OF_LIGHT_M_PER_S, vm * f / SPEED_OF_LIGHT_M_PER_S);
                    points.iter().fold((0.0, 0.0), |acc, (l, m, s)| {
                        let ph = -2.0 * PI * (u * l + v * m);
                        (acc.0 + s[c] * ph.cos(), acc.1 + s[c] * ph.sin())
                    })
                })
                .collect()
        })
        .collect()
}

/// Dirty Taylor images r_t = Σ_ν w_t(ν) Σ_k Re[V_k(ν) exp(+2πi (u l + v m))] / (N_ν N_k) on
/// `geom` (each visibility stands for itself and its conjugate, so the image is real). Since l
/// depends only on x and m only on y, exp(2πi(ul + vm)) = exp(2πi ul) · exp(2πi vm): the two
/// factors are tabulated per sample, which keeps the sum direct but cheap.
pub fn image_taylor(
    vis: &[Vec<(f64, f64)>],
    bl: &[(f64, f64)],
    freqs: &[f64],
    nu0: f64,
    nterms: usize,
    geom: &ImageGeometry,
) -> Vec<Array2<f64>> {
    let norm = 1.0 / (freqs.len() * bl.len()) as f64;
    let (nx, ny) = (geom.nx, geom.ny);
    let ls: Vec<f64> = (0..nx).map(|ix| geom.lm_of_pixel(ix as f64, 0.0).0).collect();
    let ms: Vec<f64> = (0..ny).map(|iy| geom.lm_of_pixel(0.0, iy as f64).1).collect();
    let mut out: Vec<Array2<f64>> = (0..nterms).map(|_| Array2::zeros((ny, nx))).collect();
    let mut chan = Array2::<f64>::zeros((ny, nx));
    let mut ex = vec![(0.0, 0.0); nx];
    let mut ey = vec![(0.0, 0.0); ny];
    for (c, &f) in freqs.iter().enumerate() {
        chan.fill(0.0);
        for (k, &(um, vm)) in bl.iter().enumerate() {
            let (u, v) = (um * f / SPEED_OF_LIGHT_M_PER_S, vm * f / SPEED_OF_LIGHT_M_PER_S);
            for (e, &l) in ex.iter_mut().zip(&ls) {
                let (sn, cs) = (2.0 * PI * u * l).sin_cos();
                *e = (cs, sn);
            }
            let (re, im) = vis[k][c];
            for (e, &m) in ey.iter_mut().zip(&ms) {
                // Fold the visibility into the y factor: V · exp(2πi v m).
                let (sn, cs) = (2.0 * PI * v * m).sin_cos();
                *e = (re * cs - im * sn, re * sn + im * cs);
            }
            for (iy, row) in chan.outer_iter_mut().enumerate() {
                let (ar, ai) = ey[iy];
                for (px, &(br, bi)) in row.into_iter().zip(&ex) {
                    *px += ar * br - ai * bi;
                }
            }
        }
        for (t, o) in out.iter_mut().enumerate() {
            o.scaled_add(taylor_weight(f, nu0, t) * norm, &chan);
        }
    }
    out
}

/// The 2N−1 spectral PSFs: images of unit visibilities at every sample, Taylor-weighted, on a
/// grid twice the image size (PSF_0 peak = 1 by the normalisation with the sum of weights).
pub fn spectral_psfs(
    bl: &[(f64, f64)],
    freqs: &[f64],
    nu0: f64,
    nterms: usize,
) -> Vec<Array2<f64>> {
    let g = geometry();
    let big = ImageGeometry::new(2 * g.nx, 2 * g.ny, g.cell_rad);
    let ones = vec![vec![(1.0, 0.0); freqs.len()]; bl.len()];
    image_taylor(&ones, bl, freqs, nu0, 2 * nterms - 1, &big)
}

/// Channel fluxes of S0 (ν/ν0)^α.
pub fn power_law(s0: f64, alpha: f64, freqs: &[f64], nu0: f64) -> Vec<f64> {
    freqs.iter().map(|f| s0 * (f / nu0).powf(alpha)).collect()
}

/// The seven spectral PSFs PSF_0 … PSF_6 (enough for N ≤ 4), computed once per test binary.
pub fn shared_psfs() -> &'static [Array2<f64>] {
    static PSFS: std::sync::OnceLock<Vec<Array2<f64>>> = std::sync::OnceLock::new();
    PSFS.get_or_init(|| {
        let (freqs, nu0) = channels();
        spectral_psfs(&baselines_m(), &freqs, nu0, 4)
    })
}
