//! The whole config: its sections, the resolution of defaults that depend on other keys, the
//! validation pass with its cross-field rules, the resolved TOML text and the truth hash.

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use super::array::{ArrayConfig, Layout};
use super::beam::BeamConfig;
use super::check::Checker;
use super::error::ConfigError;
use super::experiment::ExperimentSection;
use super::imaging::{ImagingConfig, Weighting};
use super::observation::ObservationConfig;
use super::output::OutputConfig;
use super::sky::SkyConfig;
use super::strategy::{ConjugateFrequency, Gridding, Spectral, StrategyConfig};
use super::sweep::SweepConfig;
use super::truth::{NoiseConfig, TruthSwitches};

/// A complete experiment description, as read from one TOML file.
///
/// Obtained from [`parse_config`](super::parse_config) or [`load_config`](super::load_config),
/// which validate it and fill in every default, so that [`Config::to_toml_string`] writes a file
/// from which the same run can be repeated.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Config {
    /// `[experiment]`: name, seed, description. Required.
    pub experiment: ExperimentSection,
    /// `[array]`: antenna layout and site latitude. Required.
    pub array: ArrayConfig,
    /// `[observation]`: phase centre, hour-angle range, band. Required.
    pub observation: ObservationConfig,
    /// `[sky]`: the true sources. Required.
    pub sky: SkyConfig,
    /// `[beam]`: the dish aperture and beam effects. Default: [`BeamConfig::default`].
    #[serde(default)]
    pub beam: BeamConfig,
    /// `[truth]`: which effects the simulated visibilities contain. Default: all on.
    #[serde(default)]
    pub truth: TruthSwitches,
    /// `[noise]`: thermal noise level. Default: [`NoiseConfig::default`].
    #[serde(default)]
    pub noise: NoiseConfig,
    /// `[imaging]`: settings shared by every strategy. Default: [`ImagingConfig::default`].
    #[serde(default)]
    pub imaging: ImagingConfig,
    /// `[[strategy]]`: the imaging strategies to compare, at least one. Required.
    pub strategy: Vec<StrategyConfig>,
    /// `[output]`: where products go and which. Default: [`OutputConfig::default`].
    #[serde(default)]
    pub output: OutputConfig,
    /// `[sweep]`: keys to vary, one run per point (see [`SweepConfig`]). Default: absent (a
    /// single run; `beamfloor run` ignores the section).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sweep: Option<SweepConfig>,
}

/// The part of a config that determines the simulated visibilities, in a fixed order; the
/// truth hash is taken over its JSON form.
#[derive(Serialize)]
struct TruthPart<'a> {
    schema: &'static str,
    seed: u64,
    array: &'a ArrayConfig,
    observation: &'a ObservationConfig,
    sky: &'a SkyConfig,
    beam: &'a BeamConfig,
    truth: &'a TruthSwitches,
    noise: &'a NoiseConfig,
}

impl Config {
    /// The resolved config as TOML text, every default written out, so that loading it gives
    /// back an equal `Config` and the same run.
    pub fn to_toml_string(&self) -> Result<String, ConfigError> {
        let body =
            toml::to_string(self).map_err(|e| ConfigError::Serialize { message: e.to_string() })?;
        Ok(format!(
            "# beamfloor experiment config, resolved: every default is written out.\n\n{body}"
        ))
    }

    /// A stable SHA-256 (lower-case hex) of everything that determines the simulated
    /// visibilities: the experiment seed and the `array`, `observation`, `sky`, `beam`, `truth`
    /// and `noise` sections, after defaults are filled in. Imaging strategies, output settings,
    /// the experiment's name and description do not enter it, so runs that differ only in how
    /// they image share truth. The hash covers an antenna file's path, not its contents.
    ///
    /// The canonical form is JSON with struct fields in declaration order and numbers in their
    /// shortest round-trip decimal form; a schema tag guards against silent meaning changes.
    pub fn truth_hash(&self) -> String {
        let part = TruthPart {
            schema: "beamfloor-truth-v1",
            seed: self.experiment.seed,
            array: &self.array,
            observation: &self.observation,
            sky: &self.sky,
            beam: &self.beam,
            truth: &self.truth,
            noise: &self.noise,
        };
        // Serializing plain structs of numbers, strings and booleans to JSON cannot fail; an
        // empty input would still give a well-defined (if useless) hash.
        let bytes = serde_json::to_vec(&part).unwrap_or_default();
        let digest = Sha256::digest(&bytes);
        digest.iter().map(|b| format!("{b:02x}")).collect()
    }

    /// Fills every default that depends on other keys (see the fields' docs). Idempotent.
    pub(crate) fn resolve(&mut self) {
        let reference = self.observation.reference_freq_ghz();
        self.observation.reference_freq_ghz = Some(reference);
        for source in &mut self.sky.source {
            source.ref_freq_ghz.get_or_insert(reference);
        }
        let dish = self.beam.dish_diameter_m;
        if let Layout::RandomDisc(disc) = &mut self.array.layout {
            disc.min_spacing_m.get_or_insert(1.5 * dish);
        }
        if self.imaging.weighting == Weighting::Briggs {
            self.imaging.robust.get_or_insert(0.0);
        }
        for strategy in &mut self.strategy {
            if strategy.spectral == Spectral::MultiTerm {
                strategy.taylor_terms.get_or_insert(2);
            }
            if strategy.gridding == Gridding::WidebandA {
                strategy.conjugate_frequency.get_or_insert(ConjugateFrequency::Scaling);
            }
            let clean = &mut strategy.clean;
            if clean.threshold_jy.is_none() {
                clean.threshold_sigma.get_or_insert(3.0);
            }
        }
    }

    /// Every rule of every section and the rules between sections.
    pub(crate) fn check(&self, c: &mut Checker) {
        let antennas = self.array.layout.antenna_count();
        self.experiment.check(c);
        self.array.check(c);
        self.observation.check(c);
        self.sky.check(c, self.observation.dec_deg);
        self.beam.check(c, "beam", antennas);
        self.noise.check(c);
        self.imaging.check(c);
        self.output.check(c);
        if let Some(sweep) = &self.sweep {
            sweep.check(c);
        }
        if self.strategy.is_empty() {
            c.fail("strategy", "[]", "must list at least one [[strategy]]");
        }
        for (i, strategy) in self.strategy.iter().enumerate() {
            let p = format!("strategy[{i}]");
            strategy.check(c, &p, &self.beam, antennas);
            if let Some(first) = self.strategy[..i].iter().position(|s| s.name == strategy.name) {
                c.fail(
                    &format!("{p}.name"),
                    format!("{:?}", strategy.name),
                    format!(
                        "duplicate strategy name (also strategy[{first}]); names must be unique"
                    ),
                );
            }
            let terms = strategy.taylor_terms();
            let channels = self.observation.channels;
            if strategy.spectral == Spectral::MultiTerm && channels > 0 && terms > channels {
                c.fail(
                    &format!("{p}.taylor_terms"),
                    terms,
                    format!(
                        "needs at least as many channels as Taylor terms (observation.channels = {})",
                        self.observation.channels
                    ),
                );
            }
        }
        self.check_layout_against_dish(c);
        self.check_elevation(c);
    }

    /// Antennas must not overlap, and a random layout must be able to place its antennas.
    fn check_layout_against_dish(&self, c: &mut Checker) {
        let dish = self.beam.dish_diameter_m;
        if !(dish.is_finite() && dish > 0.0) {
            return;
        }
        match &self.array.layout {
            Layout::RandomDisc(disc) => {
                let p = "array.layout.random-disc.min_spacing_m";
                let Some(spacing) = disc.min_spacing_m else { return };
                if !(spacing.is_finite() && spacing > 0.0) {
                    return;
                }
                if spacing <= dish {
                    c.fail(
                        p,
                        spacing,
                        format!("must exceed beam.dish_diameter_m = {dish} (metres), or dishes would collide"),
                    );
                    return;
                }
                // Discs of diameter s placed one by one at random stop fitting ("jam") when they
                // cover about 54.7 % of the plane (Feder 1980, random sequential adsorption);
                // asking for more than half the area of the disc grown by s/2 cannot succeed.
                let r = disc.radius_m + 0.5 * spacing;
                let covered = f64::from(disc.count) * (0.5 * spacing).powi(2) / (r * r);
                if disc.radius_m > 0.0 && covered > 0.5 {
                    c.fail(
                        p,
                        spacing,
                        format!(
                            "{} antennas {spacing} m apart would cover {:.0} % of a {} m disc; random placement jams above ~55 %: lower count or spacing, or enlarge radius_m",
                            disc.count,
                            100.0 * covered,
                            disc.radius_m
                        ),
                    );
                }
            }
            Layout::LogSpiral(spiral) if spiral.arms >= 2 => {
                // Arms start evenly spaced in azimuth on the inner circle.
                let chord = 2.0
                    * spiral.inner_radius_m
                    * (std::f64::consts::PI / f64::from(spiral.arms)).sin();
                if spiral.inner_radius_m > 0.0 && chord <= dish {
                    c.fail(
                        "array.layout.log-spiral.inner_radius_m",
                        spiral.inner_radius_m,
                        format!(
                            "the innermost antennas of neighbouring arms would be {chord:.2} m apart, not more than beam.dish_diameter_m = {dish}: need inner_radius_m > {:.2}",
                            dish / (2.0 * (std::f64::consts::PI / f64::from(spiral.arms)).sin())
                        ),
                    );
                }
            }
            _ => {}
        }
    }

    /// The phase centre must rise above the elevation limit at some time in the track:
    /// sin e = sin φ sin δ + cos φ cos δ cos H (Thompson, Moran & Swenson, ch. 4), highest at the
    /// hour angle nearest to 0.
    fn check_elevation(&self, c: &mut Checker) {
        let o = &self.observation;
        let values = [
            self.array.latitude_deg,
            o.dec_deg,
            o.hour_angle_start_h,
            o.hour_angle_end_h,
            o.elevation_limit_deg,
        ];
        if values.iter().any(|v| !v.is_finite()) || o.hour_angle_end_h <= o.hour_angle_start_h {
            return;
        }
        let best_h = 0.0_f64.clamp(o.hour_angle_start_h, o.hour_angle_end_h);
        let (phi, dec, h) = (
            self.array.latitude_deg.to_radians(),
            o.dec_deg.to_radians(),
            (best_h * 15.0).to_radians(),
        );
        let sin_el = phi.sin() * dec.sin() + phi.cos() * dec.cos() * h.cos();
        let max_el = sin_el.clamp(-1.0, 1.0).asin().to_degrees();
        if max_el < o.elevation_limit_deg {
            c.fail(
                "observation.dec_deg",
                o.dec_deg,
                format!(
                    "the phase centre reaches at most {max_el:.1} deg elevation during the track at latitude {} deg, below observation.elevation_limit_deg = {}: every sample would be flagged",
                    self.array.latitude_deg, o.elevation_limit_deg
                ),
            );
        }
    }
}
