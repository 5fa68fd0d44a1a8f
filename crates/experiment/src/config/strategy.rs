//! `[[strategy]]`: the ways the same visibilities are imaged and deconvolved.

use serde::{Deserialize, Serialize};

use super::beam::{BeamConfig, BeamOverride};
use super::check::Checker;

/// One `[[strategy]]` table. At least one is required.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct StrategyConfig {
    /// Unique name, used for output folders: letters, digits, `-`, `_` and `.`. Required.
    pub name: String,
    /// How visibilities are gridded: `"plain"` (no corrections; the image is divided by a
    /// time- and frequency-averaged beam afterwards), `"w"` (w-term corrected), `"a"`
    /// (time-dependent A-projection with the w-term) or `"wideband-a"` (A-projection with
    /// conjugate-frequency kernels). Required.
    pub gridding: Gridding,
    /// Spectral treatment: `"cube"` (one image per channel), `"mfs"` (one image for the band) or
    /// `"multi-term"` (multi-term multi-frequency synthesis). Default: `"multi-term"`.
    #[serde(default = "default_spectral")]
    pub spectral: Spectral,
    /// Number of Taylor terms, within 1..=4; only with `spectral = "multi-term"`. Default: `2`
    /// (filled in when the config is resolved).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub taylor_terms: Option<u32>,
    /// Multi-scale CLEAN scale sizes in pixels (0 = a point), each within [0, 1000], unique;
    /// at least one. Default: `[0.0]` (point components only).
    #[serde(default = "default_scales_px")]
    pub scales_px: Vec<f64>,
    /// Width of the parallactic-angle bins within which one A-kernel is used, degrees within
    /// (0, 90]; used by `"a"` and `"wideband-a"`. Default: `5.0`.
    #[serde(default = "default_pa_bin_deg")]
    pub pa_bin_deg: f64,
    /// Oversampling of tabulated convolution kernels (samples per grid cell), within 1..=256.
    /// Default: `16`.
    #[serde(default = "default_kernel_oversampling")]
    pub kernel_oversampling: u32,
    /// Normalization of A-projected images: `"flat-sky"` (divide by the beam: the image is the
    /// sky) or `"flat-noise"` (divide by its square root: uniform noise). Default: `"flat-sky"`.
    #[serde(default = "default_normalization")]
    pub normalization: Normalization,
    /// How `"wideband-a"` picks the conjugate frequency of its gridding kernels: `"scaling"`
    /// (ν_c = ν0² / ν, exact for a beam that scales with wavelength) or `"fitted"` (found
    /// numerically for the actual aperture model). Only with `gridding = "wideband-a"`.
    /// Default: `"scaling"` (filled in when the config is resolved).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub conjugate_frequency: Option<ConjugateFrequency>,
    /// A beam model for imaging that differs from the truth's `[beam]`: any `[beam]` key given
    /// here replaces the truth's value for this strategy. Default: absent (image with the
    /// truth's beam).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub imaging_beam: Option<BeamOverride>,
    /// CLEAN settings. Default: see [`CleanConfig`].
    #[serde(default)]
    pub clean: CleanConfig,
}

fn default_spectral() -> Spectral {
    Spectral::MultiTerm
}
fn default_scales_px() -> Vec<f64> {
    vec![0.0]
}
fn default_pa_bin_deg() -> f64 {
    5.0
}
fn default_kernel_oversampling() -> u32 {
    16
}
fn default_normalization() -> Normalization {
    Normalization::FlatSky
}

/// How visibilities are gridded.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Gridding {
    /// No direction-dependent corrections; average-beam correction after imaging.
    Plain,
    /// w-term correction only.
    W,
    /// Time-dependent A-projection (with the w-term).
    A,
    /// Wideband A-projection with conjugate-frequency kernels.
    WidebandA,
}

/// Spectral treatment of the band.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Spectral {
    /// One image per channel.
    Cube,
    /// One image for the whole band.
    Mfs,
    /// Multi-term multi-frequency synthesis (Rau & Cornwell 2011).
    MultiTerm,
}

/// Normalization of A-projected images.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Normalization {
    /// The image divided by the noise-weighted beam: noise varies, flux is the sky's.
    FlatSky,
    /// The image divided by the square root of the noise-weighted beam: uniform noise.
    FlatNoise,
}

/// How a wideband A-projection chooses the conjugate frequency of its kernels.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum ConjugateFrequency {
    /// ν_c = ν0² / ν.
    Scaling,
    /// Found numerically for the aperture model.
    Fitted,
}

/// `[strategy.clean]`: the deconvolution loop.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct CleanConfig {
    /// Loop gain: the fraction of a peak removed per minor iteration, within (0, 1].
    /// Default: `0.1`.
    pub gain: f64,
    /// Stop cleaning when the peak residual falls below this, Jy/beam (> 0). At most one of
    /// `threshold_jy` and `threshold_sigma`. Default: absent.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub threshold_jy: Option<f64>,
    /// Stop cleaning when the peak residual falls below this many times the expected thermal
    /// noise of the image (> 0). Default: `3.0` when `threshold_jy` is absent (filled in when
    /// the config is resolved).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub threshold_sigma: Option<f64>,
    /// Cap on the total number of minor iterations, within 0..=10_000_000 (0: no cleaning, the
    /// dirty image is restored as is). Default: `10000`.
    pub max_iterations: u32,
    /// Cap on the number of major cycles, within 1..=1000. Default: `10`.
    pub max_major_cycles: u32,
    /// Minor-cycle PSF patch, within [0, 1): each component is subtracted only over the
    /// smallest centred square of the PSF outside which every sidelobe is at most this
    /// fraction of the peak, and the residuals are recomputed exactly (FFT of the whole PSF
    /// against the components found) every few hundred components and before each minor
    /// cycle ends (Clark 1980). Faster by about the image-to-patch area ratio; the components
    /// chosen between refreshes see residuals a few per cent off. `0` subtracts the whole PSF
    /// every time. Default: `0.05`.
    pub psf_patch_sidelobe: f64,
}

impl Default for CleanConfig {
    fn default() -> Self {
        Self {
            gain: 0.1,
            threshold_jy: None,
            threshold_sigma: None,
            max_iterations: 10_000,
            max_major_cycles: 10,
            psf_patch_sidelobe: 0.05,
        }
    }
}

/// The stopping threshold of a CLEAN, resolved.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CleanThreshold {
    /// An absolute level, Jy/beam.
    Jy(f64),
    /// A multiple of the expected thermal noise of the image.
    Sigma(f64),
}

impl CleanConfig {
    /// The threshold in force: `threshold_jy` if given, else `threshold_sigma`, else 3 σ.
    pub fn threshold(&self) -> CleanThreshold {
        match (self.threshold_jy, self.threshold_sigma) {
            (Some(jy), _) => CleanThreshold::Jy(jy),
            (None, Some(s)) => CleanThreshold::Sigma(s),
            (None, None) => CleanThreshold::Sigma(3.0),
        }
    }
}

impl StrategyConfig {
    /// The number of Taylor terms this strategy images with (1 unless multi-term).
    pub fn taylor_terms(&self) -> u32 {
        match self.spectral {
            Spectral::MultiTerm => self.taylor_terms.unwrap_or(2),
            _ => 1,
        }
    }

    /// The beam model this strategy images with: `[beam]` with `imaging_beam` applied.
    pub fn imaging_beam(&self, truth_beam: &BeamConfig) -> BeamConfig {
        match &self.imaging_beam {
            Some(o) => o.apply_to(truth_beam),
            None => truth_beam.clone(),
        }
    }

    pub(crate) fn check(
        &self,
        c: &mut Checker,
        p: &str,
        truth_beam: &BeamConfig,
        antennas: Option<u64>,
    ) {
        c.file_name_like(&format!("{p}.name"), &self.name);
        match (self.spectral, self.taylor_terms) {
            (Spectral::MultiTerm, Some(t)) if !(1..=4).contains(&t) => {
                c.fail(&format!("{p}.taylor_terms"), t, "must be within 1..=4");
            }
            (Spectral::MultiTerm, _) | (_, None) => {}
            (s, Some(t)) => c.fail(
                &format!("{p}.taylor_terms"),
                t,
                format!(
                    "only applies with spectral = \"multi-term\" (spectral is \"{}\"); remove it",
                    match s {
                        Spectral::Cube => "cube",
                        _ => "mfs",
                    }
                ),
            ),
        }
        if self.scales_px.is_empty() {
            c.fail(&format!("{p}.scales_px"), "[]", "must list at least one scale (0 for points)");
        }
        for (i, &s) in self.scales_px.iter().enumerate() {
            let sp = format!("{p}.scales_px[{i}]");
            if !(s.is_finite() && (0.0..=1000.0).contains(&s)) {
                c.fail(&sp, s, "must be within [0, 1000] (pixels)");
            } else if self.scales_px[..i].contains(&s) {
                c.fail(&sp, s, "duplicate scale; scales must be unique");
            }
        }
        let pa = self.pa_bin_deg;
        if !(pa.is_finite() && pa > 0.0 && pa <= 90.0) {
            c.fail(&format!("{p}.pa_bin_deg"), pa, "must be within (0, 90] (degrees)");
        }
        if !(1..=256).contains(&self.kernel_oversampling) {
            c.fail(
                &format!("{p}.kernel_oversampling"),
                self.kernel_oversampling,
                "must be within 1..=256",
            );
        }
        if self.conjugate_frequency.is_some() && self.gridding != Gridding::WidebandA {
            c.fail(
                &format!("{p}.conjugate_frequency"),
                format!("{:?}", self.conjugate_frequency),
                "only applies with gridding = \"wideband-a\"; remove it",
            );
        }
        if let Some(over) = &self.imaging_beam {
            let resolved = self.imaging_beam(truth_beam);
            resolved.check(c, &format!("{p}.imaging_beam"), antennas);
            over.check(c, &format!("{p}.imaging_beam"), &resolved);
        }
        let cl = &self.clean;
        let cp = format!("{p}.clean");
        if !(cl.gain.is_finite() && cl.gain > 0.0 && cl.gain <= 1.0) {
            c.fail(&format!("{cp}.gain"), cl.gain, "must be within (0, 1]");
        }
        if cl.threshold_jy.is_some() && cl.threshold_sigma.is_some() {
            c.fail(
                &format!("{cp}.threshold_sigma"),
                cl.threshold_sigma.unwrap_or_default(),
                "give at most one of threshold_jy and threshold_sigma",
            );
        }
        if let Some(t) = cl.threshold_jy {
            c.positive(&format!("{cp}.threshold_jy"), t, "Jy/beam");
        }
        if let Some(t) = cl.threshold_sigma {
            c.positive(&format!("{cp}.threshold_sigma"), t, "times the thermal noise");
        }
        if cl.max_iterations > 10_000_000 {
            c.fail(
                &format!("{cp}.max_iterations"),
                cl.max_iterations,
                "must be within 0..=10000000",
            );
        }
        if !(cl.psf_patch_sidelobe.is_finite() && (0.0..1.0).contains(&cl.psf_patch_sidelobe)) {
            c.fail(
                &format!("{cp}.psf_patch_sidelobe"),
                cl.psf_patch_sidelobe,
                "must be within [0, 1) (0: the whole PSF for every component)",
            );
        }
        if !(1..=1000).contains(&cl.max_major_cycles) {
            c.fail(
                &format!("{cp}.max_major_cycles"),
                cl.max_major_cycles,
                "must be within 1..=1000",
            );
        }
    }
}
