use crate::error::ImagingError;
use beamfloor_core::SPEED_OF_LIGHT_M_PER_S;
use beamfloor_predict::VisSet;

/// How the gridder treats the w-term exp(2πi w (n − 1)).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum WTerm {
    /// Drop w: image as if every sample had w = 0 (a flat-sky 2-D transform). Only useful to show
    /// what the w-term does; wrong for wide fields and long baselines.
    Ignore,
    /// w-stacking with the exponential-of-semicircle kernel along w: each sample is spread over
    /// W planes, each plane is transformed and multiplied by its phase screen exp(2πi w_p (n−1)),
    /// and the image is divided by the kernel's Fourier transform at Δw (n − 1). Exact to the
    /// requested ε for any field inside the horizon.
    Stack,
}

/// Tuning knobs of the gridding operator. Every field states its default.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct GridderParams {
    /// Requested relative accuracy of the transform (sets the kernel support W and β).
    /// Default 1e-7. Allowed range [1e-14, 1e-1].
    pub epsilon: f64,
    /// w-term treatment. Default [`WTerm::Stack`].
    pub w_term: WTerm,
}

impl Default for GridderParams {
    fn default() -> Self {
        Self { epsilon: 1e-7, w_term: WTerm::Stack }
    }
}

/// The range of w (in wavelengths) a plan must cover.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct WRange {
    /// Smallest w, wavelengths.
    pub min_lambda: f64,
    /// Largest w, wavelengths.
    pub max_lambda: f64,
}

impl WRange {
    /// A range from `min_lambda` to `max_lambda` (must be finite and ordered).
    pub fn new(min_lambda: f64, max_lambda: f64) -> Result<Self, ImagingError> {
        if !(min_lambda.is_finite() && max_lambda.is_finite() && min_lambda <= max_lambda) {
            return Err(ImagingError::Parameter {
                name: "w_range",
                value: format!("[{min_lambda}, {max_lambda}]"),
                why: "the w range must be finite with min <= max",
            });
        }
        Ok(Self { min_lambda, max_lambda })
    }

    /// The w range of every sample of `vis` (w in metres times ν / c at the band edges).
    pub fn of_visibilities(vis: &VisSet) -> Result<Self, ImagingError> {
        vis.validate()?;
        Ok(w_range_of(vis.uvw_m.column(2).iter().copied(), &vis.frequencies_hz))
    }

    /// True when `w_lambda` lies inside the range (inclusive).
    pub fn contains(&self, w_lambda: f64) -> bool {
        (self.min_lambda..=self.max_lambda).contains(&w_lambda)
    }
}

/// w range of rows with `w_m` metres over channels `freqs` (w is linear in ν, so the band edges
/// bound it).
pub(crate) fn w_range_of(w_m: impl Iterator<Item = f64>, freqs: &[f64]) -> WRange {
    let (lo_f, hi_f) = (freqs[0], freqs[freqs.len() - 1]);
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for w in w_m {
        for f in [lo_f, hi_f] {
            let wl = w * f / SPEED_OF_LIGHT_M_PER_S;
            lo = lo.min(wl);
            hi = hi.max(wl);
        }
    }
    if lo > hi {
        // No rows: an empty set of samples fits any range; report w = 0.
        return WRange { min_lambda: 0.0, max_lambda: 0.0 };
    }
    WRange { min_lambda: lo, max_lambda: hi }
}
