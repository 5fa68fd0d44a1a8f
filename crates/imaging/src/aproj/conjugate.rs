use crate::error::ImagingError;
use beamfloor_core::{Pol, VoltageBeam};
use std::f64::consts::PI;

/// The reciprocal conjugate frequency ν_c = ν0² / ν of wideband A-projection (Bhatnagar,
/// Rau & Golap 2013, ApJ 770, 91): for a pattern that is a function of r ν alone,
/// P(r; ν) P(r; ν_c) then matches P(r; ν0)² to first order in (ν − ν0) at small r.
pub fn reciprocal_conjugate_frequency(freq_hz: f64, ref_freq_hz: f64) -> f64 {
    ref_freq_hz * ref_freq_hz / freq_hz
}

/// Settings of the numerical conjugate-frequency fit ([`fitted_conjugate_frequencies`]).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ConjugateFitParams {
    /// Reference frequency ν0, Hz (no default: the band's reference).
    pub ref_freq_hz: f64,
    /// Search range of ν_c, Hz (no default: must lie inside the beam's frequency coverage).
    pub search_min_hz: f64,
    /// Upper end of the search range, Hz.
    pub search_max_hz: f64,
    /// Largest radius searched for the first null of the reference-frequency power pattern,
    /// rad (no default: about 2 λ0/D).
    pub null_search_max_rad: f64,
    /// PA bin (beam time index) the pattern is taken at. Suggested 0.
    pub bin: usize,
    /// Radii across the main lobe (midpoint rule). Suggested 48.
    pub n_radii: usize,
    /// Azimuths per radius. Suggested 24.
    pub n_azimuths: usize,
}

impl ConjugateFitParams {
    fn check(&self) -> Result<(), ImagingError> {
        let ok = self.ref_freq_hz.is_finite()
            && self.ref_freq_hz > 0.0
            && self.search_min_hz > 0.0
            && self.search_max_hz.is_finite()
            && self.search_min_hz < self.search_max_hz
            && self.null_search_max_rad > 0.0
            && self.null_search_max_rad.is_finite()
            && self.n_radii >= 4
            && self.n_azimuths >= 1;
        if ok {
            Ok(())
        } else {
            Err(ImagingError::Parameter {
                name: "ConjugateFitParams",
                value: format!("{self:?}"),
                why: "needs a positive ν0, an ordered positive search range, a positive null \
                      search radius, n_radii >= 4 and n_azimuths >= 1",
            })
        }
    }
}

fn power<B: VoltageBeam + ?Sized>(b: &B, bin: usize, f: f64, p: Pol, l: f64, m: f64) -> f64 {
    b.voltage(0, bin, f, p, l, m).norm_sqr()
}

/// Radius of the first null of the azimuthally averaged reference-frequency power pattern of
/// antenna 0 (both hands averaged): the first local minimum of P̄(r; ν0) found by scanning
/// 4000 radii up to `null_search_max_rad`.
pub fn first_null_radius_rad<B: VoltageBeam + ?Sized>(
    beam: &B,
    params: &ConjugateFitParams,
) -> Result<f64, ImagingError> {
    params.check()?;
    let n = 4000;
    let step = params.null_search_max_rad / n as f64;
    let mean = |r: f64| {
        let mut acc = 0.0;
        for a in 0..params.n_azimuths {
            let (s, c) = (2.0 * PI * a as f64 / params.n_azimuths as f64).sin_cos();
            for p in Pol::BOTH {
                acc += power(beam, params.bin, params.ref_freq_hz, p, r * s, r * c);
            }
        }
        acc
    };
    let mut prev = mean(0.0);
    for i in 1..=n {
        let r = i as f64 * step;
        let v = mean(r);
        if v > prev {
            return Ok(r - step);
        }
        prev = v;
    }
    Err(ImagingError::Parameter {
        name: "ConjugateFitParams::null_search_max_rad",
        value: params.null_search_max_rad.to_string(),
        why: "the reference power pattern has no first null inside this radius",
    })
}

/// The main-lobe mismatch of a conjugate frequency ν_c for channel ν, the criterion the fit
/// minimises:
///
/// D(ν_c) = Σ_{p ∈ {R, L}} ∫_0^{r0} ∫_0^{2π} [P_p(r, θ; ν) P_p(r, θ; ν_c) − P_p(r, θ; ν0)²]² r dθ dr
///          / (2 · 2π ∫_0^{r0} r dr)
///
/// i.e. the area-weighted mean squared departure of the wideband product from the
/// reference-frequency product over the main lobe (r0 = `null_radius_rad`, the reference
/// frequency's first null), P = |E|² of antenna 0 in PA bin `params.bin`. Midpoint rule in r,
/// equally spaced azimuths.
pub fn main_lobe_mismatch<B: VoltageBeam + ?Sized>(
    beam: &B,
    freq_hz: f64,
    conjugate_hz: f64,
    null_radius_rad: f64,
    params: &ConjugateFitParams,
) -> f64 {
    let (nr, na) = (params.n_radii, params.n_azimuths);
    let (mut acc, mut area) = (0.0, 0.0);
    for i in 0..nr {
        let r = (i as f64 + 0.5) * null_radius_rad / nr as f64;
        for a in 0..na {
            let (s, c) = (2.0 * PI * a as f64 / na as f64).sin_cos();
            let (l, m) = (r * s, r * c);
            for p in Pol::BOTH {
                let b = params.bin;
                let d = power(beam, b, freq_hz, p, l, m) * power(beam, b, conjugate_hz, p, l, m)
                    - power(beam, b, params.ref_freq_hz, p, l, m).powi(2);
                acc += d * d * r;
                area += r;
            }
        }
    }
    acc / area
}

/// Our refinement of wideband A-projection: for every channel frequency in `freqs_hz`, the
/// conjugate frequency ν_c in [`search_min_hz`, `search_max_hz`] that minimises
/// [`main_lobe_mismatch`] for the actual beam (not only a pattern that scales as r ν). Found by
/// a scan over 49 log-spaced candidates followed by golden-section search (Kiefer 1953) in the
/// bracket around the best candidate, to a relative width of 1e-7.
///
/// Limitation (by construction, not a defect of the search): with a 2:1 band no single ν_c
/// makes the product flat out to the ~10% power radius at the top of the band, where P(r; ν)
/// approaches its first null and no kernel factor can restore it; the criterion weights the
/// whole main lobe by area, so the fit trades the outer lobe against the inner part.
///
/// [`search_min_hz`]: ConjugateFitParams::search_min_hz
/// [`search_max_hz`]: ConjugateFitParams::search_max_hz
pub fn fitted_conjugate_frequencies<B: VoltageBeam + ?Sized>(
    beam: &B,
    freqs_hz: &[f64],
    params: &ConjugateFitParams,
) -> Result<Vec<f64>, ImagingError> {
    params.check()?;
    let r0 = first_null_radius_rad(beam, params)?;
    Ok(freqs_hz
        .iter()
        .map(|&f| {
            let cost = |x: f64| main_lobe_mismatch(beam, f, x, r0, params);
            let n = 49;
            let ratio = (params.search_max_hz / params.search_min_hz).ln();
            let at = |k: usize| params.search_min_hz * (ratio * k as f64 / (n - 1) as f64).exp();
            let best = (0..n)
                .map(|k| (k, cost(at(k))))
                .min_by(|a, b| a.1.total_cmp(&b.1))
                .map_or(0, |(k, _)| k);
            let (mut a, mut b) = (at(best.saturating_sub(1)), at((best + 1).min(n - 1)));
            let g = 0.5 * (5f64.sqrt() - 1.0);
            let mut x1 = b - g * (b - a);
            let mut x2 = a + g * (b - a);
            let (mut f1, mut f2) = (cost(x1), cost(x2));
            while b - a > 1e-7 * b {
                if f1 <= f2 {
                    b = x2;
                    x2 = x1;
                    f2 = f1;
                    x1 = b - g * (b - a);
                    f1 = cost(x1);
                } else {
                    a = x1;
                    x1 = x2;
                    f1 = f2;
                    x2 = a + g * (b - a);
                    f2 = cost(x2);
                }
            }
            0.5 * (a + b)
        })
        .collect())
}
