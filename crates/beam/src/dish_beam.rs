use crate::aperture::{ApertureParams, ApertureSamples};
use crate::effects::{EffectParams, Mount};
use crate::pointing::pointing_offsets;
use crate::profile::SampledProfile;
use crate::table::{PatternTable, TableParams};
use crate::BeamError;
use beamfloor_core::{Pol, VoltageBeam, SPEED_OF_LIGHT_M_PER_S};
use num_complex::Complex64;
use std::f64::consts::PI;

/// Everything a [`DishBeam`] is built from except the timeline.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DishBeamParams {
    /// Aperture model. Default [`ApertureParams::default`].
    pub aperture: ApertureParams,
    /// Time, frequency and polarization effects. Default: alt-az, frequency scaling, nothing else.
    pub effects: EffectParams,
    /// Tabulation and interpolation. Default [`TableParams::default`].
    pub table: TableParams,
    /// Number of antennas. Default 1.
    pub n_antennas: usize,
    /// Reference frequency ν0, Hz (the frozen frequency when scaling is off). Default 1.4 GHz.
    pub ref_freq_hz: f64,
    /// Largest |l| or |m| the caller will ask about. Default 0.05.
    pub max_abs_lm: f64,
    /// Highest frequency the caller will ask about, Hz. Default 2 GHz.
    pub max_freq_hz: f64,
}

impl Default for DishBeamParams {
    fn default() -> Self {
        Self {
            aperture: ApertureParams::default(),
            effects: EffectParams::default(),
            table: TableParams::default(),
            n_antennas: 1,
            ref_freq_hz: 1.4e9,
            max_abs_lm: 0.05,
            max_freq_hz: 2.0e9,
        }
    }
}

/// The dish beam of every antenna over a timeline: the tabulated aperture pattern with
/// rotation, frequency scaling, squint, pointing offsets and ripple.
///
/// For antenna a, time t, frequency ν and receptor p ∈ {R, L}:
///
/// 1. sky → antenna frame by the parallactic angle q_t (alt-az; q = 0 for equatorial):
///    x = l cos q − m sin q,  y = l sin q + m cos q (so the aperture's up axis lies at sky
///    position angle q, measured north through east);
/// 2. table coordinates (p, q) = ((x, y) − o_a(t)) · ν/c ∓ s, with o_a(t) the pointing offset
///    (rad) and s the squint shift in table units (+ for R moves the R beam to +s);
/// 3. E = E_table(p, q) · (1 + a cos(2π ν / P + φ)).
///
/// The table is E(p, q) = Ã(p, q) / Ã(0, 0) of the aperture actually modelled (blockage, legs
/// and taper included), so a perfectly pointed, unsquinted antenna has E = 1 at its beam centre
/// at every frequency (times the ripple gain). Directions beyond the coverage given at
/// construction return 0.
#[derive(Clone, Debug)]
pub struct DishBeam {
    pub(crate) table: PatternTable,
    pub(crate) params: DishBeamParams,
    pub(crate) n_times: usize,
    rotation: Vec<[f64; 2]>,
    offsets: Vec<[f64; 2]>,
    squint_table: [f64; 2],
    ripple: Option<[f64; 3]>,
    pub(crate) intrinsic: SampledProfile,
    pub(crate) stokes_i: SampledProfile,
    half_power_rho: f64,
    max_offset_rad: f64,
}

const INV_C: f64 = 1.0 / SPEED_OF_LIGHT_M_PER_S;

/// Number of azimuths for an azimuthal mean out to table radius `rho` for dish `d`: twice the
/// highest azimuthal harmonic πDρ a band-limited pattern can carry there, plus margin.
pub(crate) fn azimuth_count(d: f64, rho: f64) -> usize {
    (2.0 * (PI * d * rho).ceil()) as usize + 64
}

/// Mean of `f(p, q)` over `n_az` equally spaced azimuths at radius `rho` (trapezoid rule, which
/// is spectrally accurate for periodic functions).
pub(crate) fn azimuthal_mean(rho: f64, n_az: usize, f: impl Fn(f64, f64) -> f64) -> f64 {
    let mut acc = 0.0;
    for k in 0..n_az {
        let (s, c) = (2.0 * PI * k as f64 / n_az as f64).sin_cos();
        acc += f(rho * s, rho * c);
    }
    acc / n_az as f64
}

impl DishBeam {
    /// Builds the beam for `params.n_antennas` antennas over a timeline of per-time parallactic
    /// angles (rad) and times since the start (s).
    pub fn new(
        params: &DishBeamParams,
        parallactic_angles_rad: Vec<f64>,
        times_s: Vec<f64>,
    ) -> Result<Self, BeamError> {
        params.aperture.validate()?;
        params.effects.validate()?;
        params.table.validate()?;
        if params.n_antennas == 0 {
            return Err(BeamError::InvalidAntennaCount(0));
        }
        for f in [params.ref_freq_hz, params.max_freq_hz] {
            if !(f.is_finite() && f > 0.0) {
                return Err(BeamError::InvalidFrequency(f));
            }
        }
        if !(params.max_abs_lm.is_finite() && params.max_abs_lm > 0.0 && params.max_abs_lm <= 0.7) {
            return Err(BeamError::InvalidCoverage(params.max_abs_lm));
        }
        if parallactic_angles_rad.len() != times_s.len() {
            return Err(BeamError::TimelineLengthMismatch {
                parallactic_angles: parallactic_angles_rad.len(),
                times: times_s.len(),
            });
        }
        for (index, &value) in parallactic_angles_rad.iter().chain(&times_s).enumerate() {
            if !value.is_finite() {
                return Err(BeamError::NonFiniteTimeline {
                    index: index % times_s.len().max(1),
                    value,
                });
            }
        }
        let fx = &params.effects;
        let d = params.aperture.dish_diameter_m;
        let rotation = parallactic_angles_rad
            .iter()
            .map(|&q| match fx.mount {
                Mount::AltAz => {
                    let (s, c) = q.sin_cos();
                    [s, c]
                }
                Mount::Equatorial => [0.0, 1.0],
            })
            .collect();
        let offsets = pointing_offsets(&fx.pointing, params.n_antennas, &times_s);
        let max_offset = offsets.iter().map(|o| o[0].hypot(o[1])).fold(0.0, f64::max);
        let nu_max = if fx.frequency_scaling {
            params.max_freq_hz.max(params.ref_freq_hz)
        } else {
            params.ref_freq_hz
        };
        let squint_frac = fx.squint.fraction_of_hpbw;
        // Coverage: any direction within √2·max|l|, shifted by pointing, plus the squint shift
        // (< fraction × 2 / D in table units for any taper here, HPBW < 1.3 λ/D) and at least
        // 4/D so the main lobe's profile (and its level radii) always exists.
        let p_needed = (std::f64::consts::SQRT_2 * params.max_abs_lm + max_offset) * nu_max * INV_C
            + squint_frac * 2.0 / d;
        let p_max = p_needed.max(4.0 / d);
        let samples = ApertureSamples::new(&params.aperture)?;
        let table = PatternTable::new(&samples, d, p_max, &params.table)?;
        let hw = table.covered_half_width();
        let delta = table.spacing();
        let n_az = azimuth_count(d, hw);
        let n_prof = (hw / delta).floor() as usize;
        let intrinsic = SampledProfile::new(n_prof, delta, |rho| {
            azimuthal_mean(rho, n_az, |p, q| table.value(p, q).norm_sqr())
        });
        let half_power_rho =
            level_radius(&intrinsic, 0.5).ok_or(BeamError::PowerLevelNotReached(0.5))?;
        let shift = squint_frac * 2.0 * half_power_rho;
        let (sd, cd) = fx.squint.direction_rad.sin_cos();
        let squint_table = [shift * sd, shift * cd];
        let n_prof_i = ((hw - shift) / delta).floor().max(0.0) as usize;
        let stokes_i = SampledProfile::new(n_prof_i, delta, |rho| {
            azimuthal_mean(rho, n_az, |p, q| {
                let r = table.value(p - squint_table[0], q - squint_table[1]).norm_sqr();
                let l = table.value(p + squint_table[0], q + squint_table[1]).norm_sqr();
                0.5 * (r + l)
            })
        });
        let rp = &fx.ripple;
        let ripple =
            (rp.amplitude > 0.0).then(|| [rp.amplitude, 2.0 * PI / rp.period_hz, rp.phase_rad]);
        Ok(Self {
            table,
            params: *params,
            n_times: times_s.len(),
            rotation,
            offsets,
            squint_table,
            ripple,
            intrinsic,
            stokes_i,
            half_power_rho,
            max_offset_rad: max_offset,
        })
    }

    /// The parameters the beam was built from.
    pub fn params(&self) -> &DishBeamParams {
        &self.params
    }

    /// Number of time samples in the timeline.
    pub fn n_times(&self) -> usize {
        self.n_times
    }

    /// The tabulated aperture pattern E(p, q).
    pub fn table(&self) -> &PatternTable {
        &self.table
    }

    /// The frequency at which the pattern is evaluated: ν, or ν0 when scaling is switched off.
    pub fn pattern_freq_hz(&self, freq_hz: f64) -> f64 {
        if self.params.effects.frequency_scaling {
            freq_hz
        } else {
            self.params.ref_freq_hz
        }
    }

    /// Largest distance from the phase centre (rad) at which every antenna, time and receptor
    /// is tabulated at `freq_hz` (beyond it [`VoltageBeam::voltage`] may return 0); at least
    /// √2 · `max_abs_lm` for frequencies up to `max_freq_hz`.
    pub fn max_radius_rad(&self, freq_hz: f64) -> f64 {
        let shift = self.squint_table[0].hypot(self.squint_table[1]);
        let rho = self.table.covered_half_width() - shift;
        rho * SPEED_OF_LIGHT_M_PER_S / self.pattern_freq_hz(freq_hz) - self.max_offset_rad
    }

    /// Ripple gain g(ν) = 1 + a cos(2π ν / P + φ) (1 when ripple is off).
    #[inline]
    pub fn ripple_gain(&self, freq_hz: f64) -> f64 {
        match self.ripple {
            Some([a, w, phi]) => 1.0 + a * (w * freq_hz + phi).cos(),
            None => 1.0,
        }
    }

    /// Pointing offset (x, y) of `antenna` at `time_index`, antenna frame, rad.
    pub fn pointing_offset_rad(&self, antenna: usize, time_index: usize) -> [f64; 2] {
        self.offsets[antenna * self.n_times + time_index]
    }

    /// Squint displacement of the R beam centre (x, y) in the antenna frame at `freq_hz`, rad
    /// (L is displaced by the opposite vector).
    pub fn squint_offset_rad(&self, freq_hz: f64) -> [f64; 2] {
        let k = SPEED_OF_LIGHT_M_PER_S / self.pattern_freq_hz(freq_hz);
        [self.squint_table[0] * k, self.squint_table[1] * k]
    }

    /// Full half-power width of the azimuthally averaged intrinsic power pattern |E|² at
    /// `freq_hz`, rad (the width squint is measured in).
    pub fn half_power_width_rad(&self, freq_hz: f64) -> f64 {
        2.0 * self.half_power_rho * SPEED_OF_LIGHT_M_PER_S / self.pattern_freq_hz(freq_hz)
    }

    /// Radius (rad) where the azimuthally averaged intrinsic power pattern |E|² (no pointing,
    /// squint or ripple) first falls to `level` (e.g. 0.5 or 0.1) at `freq_hz`.
    pub fn power_level_radius_rad(&self, freq_hz: f64, level: f64) -> Result<f64, BeamError> {
        if !(level > 0.0 && level < 1.0) {
            return Err(BeamError::InvalidPowerLevel(level));
        }
        if !(freq_hz.is_finite() && freq_hz > 0.0) {
            return Err(BeamError::InvalidFrequency(freq_hz));
        }
        let rho =
            level_radius(&self.intrinsic, level).ok_or(BeamError::PowerLevelNotReached(level))?;
        Ok(rho * SPEED_OF_LIGHT_M_PER_S / self.pattern_freq_hz(freq_hz))
    }

    /// Power pattern |E_p|² (see [`VoltageBeam::voltage`]).
    #[inline]
    pub fn power(
        &self,
        antenna: usize,
        time_index: usize,
        freq_hz: f64,
        pol: Pol,
        l: f64,
        m: f64,
    ) -> f64 {
        self.voltage(antenna, time_index, freq_hz, pol, l, m).norm_sqr()
    }

    /// Checks an (antenna, time) pair before a bulk computation.
    pub(crate) fn check_indices(&self, antenna: usize, time_index: usize) -> Result<(), BeamError> {
        if antenna >= self.params.n_antennas {
            return Err(BeamError::IndexOutOfRange {
                what: "antenna",
                index: antenna,
                size: self.params.n_antennas,
            });
        }
        if time_index >= self.n_times {
            return Err(BeamError::IndexOutOfRange {
                what: "time",
                index: time_index,
                size: self.n_times,
            });
        }
        Ok(())
    }
}

/// First radius where a decreasing-from-1 profile reaches `level`: scan nodes outward, then
/// bisect on the interpolant (60 halvings: to rounding).
pub(crate) fn level_radius(profile: &SampledProfile, level: f64) -> Option<f64> {
    let step = profile.max_radius() / 4096.0;
    let mut lo = 0.0;
    let mut hi = None;
    let mut r = step;
    while r <= profile.max_radius() {
        if profile.value(r) <= level {
            hi = Some(r);
            break;
        }
        lo = r;
        r += step;
    }
    let mut hi = hi?;
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if profile.value(mid) > level {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some(0.5 * (lo + hi))
}

impl VoltageBeam for DishBeam {
    fn n_antennas(&self) -> usize {
        self.params.n_antennas
    }

    /// E_p(l, m; ν, t, antenna). Panics if `antenna` or `time_index` is out of range (they come
    /// from the program's own loops, not from users).
    #[inline]
    fn voltage(
        &self,
        antenna: usize,
        time_index: usize,
        freq_hz: f64,
        pol: Pol,
        l: f64,
        m: f64,
    ) -> Complex64 {
        let [s, c] = self.rotation[time_index];
        let x = l * c - m * s;
        let y = l * s + m * c;
        let [ox, oy] = self.offsets[antenna * self.n_times + time_index];
        let k = self.pattern_freq_hz(freq_hz) * INV_C;
        let sign = match pol {
            Pol::R => 1.0,
            Pol::L => -1.0,
        };
        let p = (x - ox) * k - sign * self.squint_table[0];
        let q = (y - oy) * k - sign * self.squint_table[1];
        let v = self.table.value(p, q);
        match self.ripple {
            Some(_) => v * self.ripple_gain(freq_hz),
            None => v,
        }
    }
}
