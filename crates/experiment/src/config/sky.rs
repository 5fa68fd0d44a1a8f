//! `[sky]`: the true sources, their positions, shapes and spectra.

use serde::{Deserialize, Serialize};

use super::check::Checker;

/// The `[sky]` section (required): a list of `[[sky.source]]` tables.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SkyConfig {
    /// The sources, at least one (written as `[[sky.source]]`). Required.
    pub source: Vec<SkySource>,
}

/// One source: S(ν) = flux_jy · (ν/ν0)^(alpha + beta · ln(ν/ν0)) with ν0 = `ref_freq_ghz`.
///
/// In the file the position is given in exactly one of four ways (flat keys in the source's
/// table): `l_arcmin` + `m_arcmin`; `ra_offset_arcmin` + `dec_offset_arcmin`;
/// `radius_arcmin` + `position_angle_deg`; or `beam_power` + `position_angle_deg`.
/// `kind = "gaussian"` needs `major_arcsec` and `minor_arcsec` (and takes `pa_deg`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "RawSource", into = "RawSource")]
pub struct SkySource {
    /// Unique, non-empty name used in reports. Required.
    pub name: String,
    /// Point or elliptical Gaussian. Default: point.
    pub shape: SourceShape,
    /// Where the source is relative to the phase centre. Required.
    pub position: SourcePosition,
    /// Integrated Stokes I flux density at `ref_freq_ghz`, Jy (> 0). Required.
    pub flux_jy: f64,
    /// Reference frequency ν0 of the spectrum, GHz (> 0). Default: the observation's reference
    /// frequency (filled in when the config is resolved).
    pub ref_freq_ghz: Option<f64>,
    /// Spectral index, within [-5, 5]. Default: `0.0`.
    pub alpha: f64,
    /// Spectral curvature, within [-3, 3]. Default: `0.0`.
    pub beta: f64,
}

/// A source's shape.
#[derive(Debug, Clone, PartialEq)]
pub enum SourceShape {
    /// A point source (`kind = "point"`).
    Point,
    /// An elliptical Gaussian (`kind = "gaussian"`), integrated flux `flux_jy`.
    Gaussian {
        /// Full width at half maximum of the major axis, arcsec (> 0).
        major_arcsec: f64,
        /// Full width at half maximum of the minor axis, arcsec (> 0, ≤ major).
        minor_arcsec: f64,
        /// Position angle of the major axis, degrees east of north, within [-360, 360].
        /// Default: `0.0`.
        pa_deg: f64,
    },
}

/// A source's position relative to the phase centre.
#[derive(Debug, Clone, PartialEq)]
pub enum SourcePosition {
    /// Direction cosines (l towards east, m towards north), each written in arcmin
    /// (the direction cosine times 180·60/π); l² + m² < 1.
    Lm {
        /// l in arcmin.
        l_arcmin: f64,
        /// m in arcmin.
        m_arcmin: f64,
    },
    /// Offsets in the equatorial coordinates themselves: Δα (of right ascension, not
    /// multiplied by cos δ) and Δδ, arcmin.
    RaDecOffset {
        /// Δα in arcmin of right ascension.
        ra_offset_arcmin: f64,
        /// Δδ in arcmin of declination.
        dec_offset_arcmin: f64,
    },
    /// An angular distance from the phase centre along a position angle.
    Radius {
        /// Angular distance from the phase centre, arcmin within [0, 5400).
        radius_arcmin: f64,
        /// Position angle, degrees east of north, within [-360, 360].
        position_angle_deg: f64,
    },
    /// At the radius where the (truth) primary beam's power, azimuthally averaged, falls to
    /// `beam_power` of its peak at the observation's reference frequency, along a position
    /// angle; the radius inside the main lobe is meant.
    BeamPower {
        /// Fraction of peak power, within (0, 1].
        beam_power: f64,
        /// Position angle, degrees east of north, within [-360, 360].
        position_angle_deg: f64,
    },
}

/// `kind` of a source as written in the file.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
enum SourceKind {
    #[default]
    Point,
    Gaussian,
}

/// A source's table exactly as written; checked for consistency when turned into a
/// [`SkySource`].
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawSource {
    name: String,
    #[serde(default)]
    kind: SourceKind,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    l_arcmin: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    m_arcmin: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    ra_offset_arcmin: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    dec_offset_arcmin: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    radius_arcmin: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    beam_power: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    position_angle_deg: Option<f64>,
    flux_jy: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    ref_freq_ghz: Option<f64>,
    #[serde(default)]
    alpha: f64,
    #[serde(default)]
    beta: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    major_arcsec: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    minor_arcsec: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pa_deg: Option<f64>,
}

const POSITION_FORMS: &str = "give the position exactly one way: `l_arcmin` + `m_arcmin`, \
    `ra_offset_arcmin` + `dec_offset_arcmin`, `radius_arcmin` + `position_angle_deg`, \
    or `beam_power` + `position_angle_deg`";

impl TryFrom<RawSource> for SkySource {
    type Error = String;

    fn try_from(raw: RawSource) -> Result<Self, String> {
        let groups: [(&str, bool); 4] = [
            ("l_arcmin/m_arcmin", raw.l_arcmin.is_some() || raw.m_arcmin.is_some()),
            (
                "ra_offset_arcmin/dec_offset_arcmin",
                raw.ra_offset_arcmin.is_some() || raw.dec_offset_arcmin.is_some(),
            ),
            ("radius_arcmin", raw.radius_arcmin.is_some()),
            ("beam_power", raw.beam_power.is_some()),
        ];
        let given: Vec<&str> = groups.iter().filter(|(_, g)| *g).map(|(n, _)| *n).collect();
        match given.as_slice() {
            [] => return Err(format!("source `{}` has no position; {POSITION_FORMS}", raw.name)),
            [_] => {}
            _ => {
                return Err(format!(
                    "source `{}` gives its position more than one way ({}); {POSITION_FORMS}",
                    raw.name,
                    given.join(", ")
                ))
            }
        }
        let needs_angle = raw.radius_arcmin.is_some() || raw.beam_power.is_some();
        if !needs_angle && raw.position_angle_deg.is_some() {
            return Err(format!(
                "source `{}`: `position_angle_deg` only goes with `radius_arcmin` or `beam_power`",
                raw.name
            ));
        }
        let position = if let (Some(l), Some(m)) = (raw.l_arcmin, raw.m_arcmin) {
            SourcePosition::Lm { l_arcmin: l, m_arcmin: m }
        } else if let (Some(ra), Some(dec)) = (raw.ra_offset_arcmin, raw.dec_offset_arcmin) {
            SourcePosition::RaDecOffset { ra_offset_arcmin: ra, dec_offset_arcmin: dec }
        } else if needs_angle {
            let Some(position_angle_deg) = raw.position_angle_deg else {
                return Err(format!(
                    "source `{}`: `{}` needs `position_angle_deg` (degrees east of north)",
                    raw.name, given[0]
                ));
            };
            match (raw.radius_arcmin, raw.beam_power) {
                (Some(radius_arcmin), _) => {
                    SourcePosition::Radius { radius_arcmin, position_angle_deg }
                }
                (_, Some(beam_power)) => {
                    SourcePosition::BeamPower { beam_power, position_angle_deg }
                }
                _ => unreachable_position(&raw.name)?,
            }
        } else {
            return Err(format!(
                "source `{}`: `{}` needs both of its keys; {POSITION_FORMS}",
                raw.name, given[0]
            ));
        };
        let shape = match raw.kind {
            SourceKind::Point => {
                let extra: Vec<&str> = [
                    ("major_arcsec", raw.major_arcsec.is_some()),
                    ("minor_arcsec", raw.minor_arcsec.is_some()),
                    ("pa_deg", raw.pa_deg.is_some()),
                ]
                .iter()
                .filter(|(_, g)| *g)
                .map(|(n, _)| *n)
                .collect();
                if !extra.is_empty() {
                    return Err(format!(
                        "source `{}` is a point source but has {}; set `kind = \"gaussian\"` or remove them",
                        raw.name,
                        extra.join(", ")
                    ));
                }
                SourceShape::Point
            }
            SourceKind::Gaussian => match (raw.major_arcsec, raw.minor_arcsec) {
                (Some(major_arcsec), Some(minor_arcsec)) => SourceShape::Gaussian {
                    major_arcsec,
                    minor_arcsec,
                    pa_deg: raw.pa_deg.unwrap_or(0.0),
                },
                _ => {
                    return Err(format!(
                        "source `{}` is a Gaussian and needs `major_arcsec` and `minor_arcsec` (FWHM, arcsec)",
                        raw.name
                    ))
                }
            },
        };
        Ok(SkySource {
            name: raw.name,
            shape,
            position,
            flux_jy: raw.flux_jy,
            ref_freq_ghz: raw.ref_freq_ghz,
            alpha: raw.alpha,
            beta: raw.beta,
        })
    }
}

/// Reached only if the two branches above disagree; reported as an error, never a panic.
fn unreachable_position(name: &str) -> Result<SourcePosition, String> {
    Err(format!("source `{name}`: {POSITION_FORMS}"))
}

impl From<SkySource> for RawSource {
    fn from(s: SkySource) -> Self {
        let mut raw = RawSource {
            name: s.name,
            kind: SourceKind::Point,
            l_arcmin: None,
            m_arcmin: None,
            ra_offset_arcmin: None,
            dec_offset_arcmin: None,
            radius_arcmin: None,
            beam_power: None,
            position_angle_deg: None,
            flux_jy: s.flux_jy,
            ref_freq_ghz: s.ref_freq_ghz,
            alpha: s.alpha,
            beta: s.beta,
            major_arcsec: None,
            minor_arcsec: None,
            pa_deg: None,
        };
        match s.position {
            SourcePosition::Lm { l_arcmin, m_arcmin } => {
                raw.l_arcmin = Some(l_arcmin);
                raw.m_arcmin = Some(m_arcmin);
            }
            SourcePosition::RaDecOffset { ra_offset_arcmin, dec_offset_arcmin } => {
                raw.ra_offset_arcmin = Some(ra_offset_arcmin);
                raw.dec_offset_arcmin = Some(dec_offset_arcmin);
            }
            SourcePosition::Radius { radius_arcmin, position_angle_deg } => {
                raw.radius_arcmin = Some(radius_arcmin);
                raw.position_angle_deg = Some(position_angle_deg);
            }
            SourcePosition::BeamPower { beam_power, position_angle_deg } => {
                raw.beam_power = Some(beam_power);
                raw.position_angle_deg = Some(position_angle_deg);
            }
        }
        if let SourceShape::Gaussian { major_arcsec, minor_arcsec, pa_deg } = s.shape {
            raw.kind = SourceKind::Gaussian;
            raw.major_arcsec = Some(major_arcsec);
            raw.minor_arcsec = Some(minor_arcsec);
            raw.pa_deg = Some(pa_deg);
        }
        raw
    }
}

const ARCMIN_PER_RAD: f64 = 180.0 * 60.0 / std::f64::consts::PI;

impl SkyConfig {
    pub(crate) fn check(&self, c: &mut Checker, dec_deg: f64) {
        if self.source.is_empty() {
            c.fail("sky.source", "[]", "must list at least one [[sky.source]]");
        }
        for (i, s) in self.source.iter().enumerate() {
            let p = format!("sky.source[{i}]");
            if s.name.trim().is_empty() {
                c.fail(&format!("{p}.name"), format!("{:?}", s.name), "must be a non-empty name");
            } else if let Some(first) = self.source[..i].iter().position(|o| o.name == s.name) {
                c.fail(
                    &format!("{p}.name"),
                    format!("{:?}", s.name),
                    format!(
                        "duplicate source name (also sky.source[{first}]); names must be unique"
                    ),
                );
            }
            c.positive(&format!("{p}.flux_jy"), s.flux_jy, "Jy");
            if let Some(f) = s.ref_freq_ghz {
                c.positive(&format!("{p}.ref_freq_ghz"), f, "GHz");
            }
            c.in_range(&format!("{p}.alpha"), s.alpha, -5.0, 5.0, "spectral index");
            c.in_range(&format!("{p}.beta"), s.beta, -3.0, 3.0, "spectral curvature");
            if let SourceShape::Gaussian { major_arcsec, minor_arcsec, pa_deg } = s.shape {
                c.positive(&format!("{p}.major_arcsec"), major_arcsec, "arcsec");
                c.positive(&format!("{p}.minor_arcsec"), minor_arcsec, "arcsec");
                if minor_arcsec > major_arcsec {
                    c.fail(
                        &format!("{p}.minor_arcsec"),
                        minor_arcsec,
                        format!("must be <= major_arcsec = {major_arcsec} (arcsec)"),
                    );
                }
                c.in_range(&format!("{p}.pa_deg"), pa_deg, -360.0, 360.0, "degrees");
            }
            match s.position {
                SourcePosition::Lm { l_arcmin, m_arcmin } => {
                    if !(l_arcmin.is_finite() && m_arcmin.is_finite()) {
                        c.fail(
                            &format!("{p}.l_arcmin"),
                            l_arcmin,
                            "l and m must be finite numbers",
                        );
                    } else {
                        let (l, m) = (l_arcmin / ARCMIN_PER_RAD, m_arcmin / ARCMIN_PER_RAD);
                        if l * l + m * m >= 1.0 {
                            c.fail(
                                &format!("{p}.l_arcmin"),
                                l_arcmin,
                                format!(
                                    "l² + m² must be < 1 (the direction must lie above the horizon); \
                                     |(l, m)| < {ARCMIN_PER_RAD:.1} arcmin"
                                ),
                            );
                        }
                    }
                }
                SourcePosition::RaDecOffset { ra_offset_arcmin, dec_offset_arcmin } => {
                    c.in_range(
                        &format!("{p}.ra_offset_arcmin"),
                        ra_offset_arcmin,
                        -21600.0,
                        21600.0,
                        "arcmin",
                    );
                    let dec = dec_deg + dec_offset_arcmin / 60.0;
                    if !(dec.is_finite() && (-90.0..=90.0).contains(&dec)) {
                        c.fail(
                            &format!("{p}.dec_offset_arcmin"),
                            dec_offset_arcmin,
                            format!(
                                "puts the source at declination {dec} deg; observation.dec_deg + offset must stay within [-90, 90]"
                            ),
                        );
                    }
                }
                SourcePosition::Radius { radius_arcmin, position_angle_deg } => {
                    if !(radius_arcmin.is_finite() && (0.0..5400.0).contains(&radius_arcmin)) {
                        c.fail(
                            &format!("{p}.radius_arcmin"),
                            radius_arcmin,
                            "must be within [0, 5400) (arcmin; 5400 arcmin is the horizon)",
                        );
                    }
                    c.in_range(
                        &format!("{p}.position_angle_deg"),
                        position_angle_deg,
                        -360.0,
                        360.0,
                        "degrees",
                    );
                }
                SourcePosition::BeamPower { beam_power, position_angle_deg } => {
                    if !(beam_power.is_finite() && beam_power > 0.0 && beam_power <= 1.0) {
                        c.fail(
                            &format!("{p}.beam_power"),
                            beam_power,
                            "must be within (0, 1] (fraction of the beam's peak power)",
                        );
                    }
                    c.in_range(
                        &format!("{p}.position_angle_deg"),
                        position_angle_deg,
                        -360.0,
                        360.0,
                        "degrees",
                    );
                }
            }
        }
    }
}
