use crate::BeamError;

/// How the antenna is mounted, which decides whether its pattern turns on the sky.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Mount {
    /// Alt-azimuth: the antenna frame turns on the sky by the parallactic angle q, so the
    /// aperture's "up" (elevation) axis points to sky position angle q (north through east).
    AltAz,
    /// Equatorial: the antenna frame keeps a fixed orientation on the sky (aperture y along
    /// north, x along east); no rotation.
    Equatorial,
}

/// Circular-feed beam squint: the R and L beams are displaced in opposite directions.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SquintParams {
    /// Displacement of each hand's beam centre as a fraction of the half-power beam width
    /// (full width) at the current frequency, so the shift scales with wavelength; R and L peaks
    /// are separated by twice this. Default 0.0 (no squint).
    pub fraction_of_hpbw: f64,
    /// Direction of the R displacement in the antenna frame, measured from the aperture y
    /// ("up") axis through x, rad; L goes the opposite way. It turns with the parallactic angle
    /// for an alt-az mount. Default 0.
    pub direction_rad: f64,
}

impl Default for SquintParams {
    fn default() -> Self {
        Self { fraction_of_hpbw: 0.0, direction_rad: 0.0 }
    }
}

/// Per-antenna pointing offsets in the antenna frame (they turn with the parallactic angle).
///
/// Antenna a's offset at time t (since the start) is
/// o_a(t) = fixed + r_a + (fixed_drift + d_a) · t,
/// where r_a and d_a are drawn from a `ChaCha8Rng` seeded with
/// `derive_seed(seed, SeedPurpose::Pointing, a)` (four normal draws, in the order r_x, r_y,
/// d_x, d_y). Components are (x, y) in the aperture frame; +y is "up" in elevation, so a
/// positive y offset moves the beam centre towards the zenith (sky position angle q).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PointingParams {
    /// Offset common to every antenna, (x, y), rad. Default (0, 0).
    pub fixed_offset_rad: [f64; 2],
    /// Rms per axis of the random per-antenna offset, rad. Default 0.
    pub random_rms_rad: f64,
    /// Common linear drift rate, (x, y), rad/s. Default (0, 0).
    pub fixed_drift_rad_per_s: [f64; 2],
    /// Rms per axis of a random per-antenna drift rate, rad/s. Default 0.
    pub random_drift_rms_rad_per_s: f64,
    /// Experiment seed for the random parts. Default 0.
    pub seed: u64,
}

impl Default for PointingParams {
    fn default() -> Self {
        Self {
            fixed_offset_rad: [0.0; 2],
            random_rms_rad: 0.0,
            fixed_drift_rad_per_s: [0.0; 2],
            random_drift_rms_rad_per_s: 0.0,
            seed: 0,
        }
    }
}

/// Standing-wave ripple: the voltage pattern is multiplied by g(ν) = 1 + a cos(2π ν / P + φ),
/// so power gains (1 + a cos(…))².
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RippleParams {
    /// Amplitude a (0 ≤ a < 1). Default 0.
    pub amplitude: f64,
    /// Period P in frequency, Hz. Default 17 MHz (a few tens of MHz is typical of a
    /// feed-to-subreflector standing wave: c / 2h for a focal distance h of ~9 m).
    pub period_hz: f64,
    /// Phase φ, rad. Default 0.
    pub phase_rad: f64,
}

impl Default for RippleParams {
    fn default() -> Self {
        Self { amplitude: 0.0, period_hz: 17.0e6, phase_rad: 0.0 }
    }
}

/// One effect that can be switched off on its own (used by the floor decomposition).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Effect {
    /// Rotation of the pattern with parallactic angle (off = equatorial mount).
    Rotation,
    /// Scaling of the pattern with frequency (off = frozen at the reference frequency ν0).
    FrequencyScaling,
    /// R/L squint.
    Squint,
    /// Pointing offsets (fixed, random and drifting).
    Pointing,
    /// Standing-wave ripple.
    Ripple,
}

impl Effect {
    /// Every effect, in a fixed order.
    pub const ALL: [Effect; 5] = [
        Effect::Rotation,
        Effect::FrequencyScaling,
        Effect::Squint,
        Effect::Pointing,
        Effect::Ripple,
    ];
}

/// The time, frequency and polarization effects of the beam, each switchable on its own.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct EffectParams {
    /// Mount (alt-az rotates with parallactic angle). Default [`Mount::AltAz`].
    pub mount: Mount,
    /// Scale the pattern with frequency (E a function of l ν / c). When false the beam is frozen
    /// at the reference frequency ν0 (pattern and squint; ripple still follows ν). Default true.
    pub frequency_scaling: bool,
    /// Squint. Default none.
    pub squint: SquintParams,
    /// Pointing offsets. Default none.
    pub pointing: PointingParams,
    /// Ripple. Default none.
    pub ripple: RippleParams,
}

impl Default for EffectParams {
    fn default() -> Self {
        Self {
            mount: Mount::AltAz,
            frequency_scaling: true,
            squint: SquintParams::default(),
            pointing: PointingParams::default(),
            ripple: RippleParams::default(),
        }
    }
}

impl EffectParams {
    /// The same parameters with `effect` switched off.
    pub fn without(mut self, effect: Effect) -> Self {
        match effect {
            Effect::Rotation => self.mount = Mount::Equatorial,
            Effect::FrequencyScaling => self.frequency_scaling = false,
            Effect::Squint => self.squint.fraction_of_hpbw = 0.0,
            Effect::Pointing => {
                self.pointing = PointingParams { seed: self.pointing.seed, ..Default::default() }
            }
            Effect::Ripple => self.ripple.amplitude = 0.0,
        }
        self
    }

    /// The same parameters with every effect switched off (a static, frequency-frozen beam).
    pub fn all_off(self) -> Self {
        Effect::ALL.iter().fold(self, |p, &e| p.without(e))
    }

    /// Checks every field, naming the offending value.
    pub fn validate(&self) -> Result<(), BeamError> {
        let s = self.squint.fraction_of_hpbw;
        if !(s.is_finite() && (0.0..1.0).contains(&s) && self.squint.direction_rad.is_finite()) {
            return Err(BeamError::InvalidSquint(s));
        }
        let p = &self.pointing;
        let checks = [
            ("fixed_offset_rad[0]", p.fixed_offset_rad[0], false),
            ("fixed_offset_rad[1]", p.fixed_offset_rad[1], false),
            ("random_rms_rad", p.random_rms_rad, true),
            ("fixed_drift_rad_per_s[0]", p.fixed_drift_rad_per_s[0], false),
            ("fixed_drift_rad_per_s[1]", p.fixed_drift_rad_per_s[1], false),
            ("random_drift_rms_rad_per_s", p.random_drift_rms_rad_per_s, true),
        ];
        for (name, value, non_negative) in checks {
            if !value.is_finite() || (non_negative && value < 0.0) {
                return Err(BeamError::InvalidPointing { name, value });
            }
        }
        let r = &self.ripple;
        if !(r.amplitude.is_finite()
            && (0.0..1.0).contains(&r.amplitude)
            && r.period_hz.is_finite()
            && r.period_hz > 0.0
            && r.phase_rad.is_finite())
        {
            return Err(BeamError::InvalidRipple {
                amplitude: r.amplitude,
                period_hz: r.period_hz,
            });
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn switches_turn_off_one_at_a_time() {
        let on = EffectParams {
            squint: SquintParams { fraction_of_hpbw: 0.05, direction_rad: 0.3 },
            pointing: PointingParams { random_rms_rad: 1e-4, seed: 9, ..Default::default() },
            ripple: RippleParams { amplitude: 0.01, ..Default::default() },
            ..Default::default()
        };
        assert_eq!(on.without(Effect::Rotation).mount, Mount::Equatorial);
        assert!(!on.without(Effect::FrequencyScaling).frequency_scaling);
        let no_squint = on.without(Effect::Squint);
        assert_eq!(no_squint.squint.fraction_of_hpbw, 0.0);
        assert_eq!(no_squint.pointing, on.pointing);
        assert_eq!(on.without(Effect::Pointing).pointing.random_rms_rad, 0.0);
        assert_eq!(on.without(Effect::Ripple).ripple.amplitude, 0.0);
        let off = on.all_off();
        assert_eq!(off.mount, Mount::Equatorial);
        assert!(!off.frequency_scaling && off.ripple.amplitude == 0.0);
        assert!(on.validate().is_ok());
        let bad = EffectParams { ripple: RippleParams { amplitude: 1.5, ..on.ripple }, ..on };
        assert!(matches!(bad.validate(), Err(BeamError::InvalidRipple { .. })));
    }
}
