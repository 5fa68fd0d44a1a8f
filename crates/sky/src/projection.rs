use crate::SkyError;

/// Direction cosines (l, m) of the celestial position (α, δ) about the phase centre (α0, δ0), by
/// the orthographic (SIN) projection (Greisen & Calabretta 2002, A&A 395, 1061, §5.1.5):
///
/// l = cos δ sin Δα,  m = sin δ cos δ0 − cos δ sin δ0 cos Δα,  Δα = α − α0.
///
/// l points towards increasing right ascension (east), m towards north. Positions more than 90°
/// from the phase centre project onto the same (l, m) as their mirror image in front, so they
/// are rejected with [`SkyError::FarHemisphere`].
pub fn lm_from_radec(
    ra_rad: f64,
    dec_rad: f64,
    phase_centre_ra_rad: f64,
    phase_centre_dec_rad: f64,
) -> Result<(f64, f64), SkyError> {
    for (ra, dec) in [(ra_rad, dec_rad), (phase_centre_ra_rad, phase_centre_dec_rad)] {
        if !(ra.is_finite() && dec.is_finite() && dec.abs() <= std::f64::consts::FRAC_PI_2) {
            return Err(SkyError::CelestialPosition { ra_rad: ra, dec_rad: dec });
        }
    }
    let d_ra = ra_rad - phase_centre_ra_rad;
    let (sd, cd) = dec_rad.sin_cos();
    let (sd0, cd0) = phase_centre_dec_rad.sin_cos();
    let (sa, ca) = d_ra.sin_cos();
    // n = cosine of the angular distance from the phase centre.
    let n = sd * sd0 + cd * cd0 * ca;
    if n < 0.0 {
        return Err(SkyError::FarHemisphere { ra_rad, dec_rad });
    }
    Ok((cd * sa, sd * cd0 - cd * sd0 * ca))
}

/// Celestial position (α, δ) of the direction cosines (l, m) about the phase centre (α0, δ0):
/// the inverse of [`lm_from_radec`] on the front hemisphere (Greisen & Calabretta 2002, §5.1.5).
///
/// With n = √(1 − l² − m²): sin δ = m cos δ0 + n sin δ0 and
/// Δα = atan2(l, n cos δ0 − m sin δ0). The returned α is α0 + Δα (not wrapped into [0, 2π)).
pub fn radec_from_lm(
    l: f64,
    m: f64,
    phase_centre_ra_rad: f64,
    phase_centre_dec_rad: f64,
) -> Result<(f64, f64), SkyError> {
    let r2 = l * l + m * m;
    if !(l.is_finite() && m.is_finite() && r2 <= 1.0) {
        return Err(SkyError::Direction { l, m });
    }
    if !(phase_centre_ra_rad.is_finite()
        && phase_centre_dec_rad.is_finite()
        && phase_centre_dec_rad.abs() <= std::f64::consts::FRAC_PI_2)
    {
        return Err(SkyError::CelestialPosition {
            ra_rad: phase_centre_ra_rad,
            dec_rad: phase_centre_dec_rad,
        });
    }
    let n = (1.0 - r2).sqrt();
    let (sd0, cd0) = phase_centre_dec_rad.sin_cos();
    let sin_dec = (m * cd0 + n * sd0).clamp(-1.0, 1.0);
    let d_ra = l.atan2(n * cd0 - m * sd0);
    Ok((phase_centre_ra_rad + d_ra, sin_dec.asin()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn phase_centre_maps_to_origin_and_round_trips() {
        // At the phase centre l = m = 0 by the definition (Greisen & Calabretta 2002, §5.1.5).
        let (l, m) = lm_from_radec(1.0, -0.5, 1.0, -0.5).unwrap();
        assert!(l.abs() < 1e-16 && m.abs() < 1e-16);
        // Round trip through the inverse: exact up to a few ulps of the trig functions (1e-14).
        for &(ra, dec) in &[(1.05, -0.45), (0.9, -0.6), (1.3, -0.2), (0.99, -0.501)] {
            let (l, m) = lm_from_radec(ra, dec, 1.0, -0.5).unwrap();
            let (ra2, dec2) = radec_from_lm(l, m, 1.0, -0.5).unwrap();
            assert!((ra - ra2).abs() < 1e-14 && (dec - dec2).abs() < 1e-14, "{ra} {dec}");
        }
    }

    #[test]
    fn small_offsets_are_flat_sky() {
        // For small offsets about the equator l ≈ Δα and m ≈ Δδ (first-order expansion of the SIN
        // projection); the third-order terms (Δα δ²/2, δ³/6) are ~2e-12 for 2e-4 rad offsets.
        let (l, m) = lm_from_radec(2.0 + 1e-4, 2e-4, 2.0, 0.0).unwrap();
        assert!((l - 1e-4).abs() < 1e-11 && (m - 2e-4).abs() < 1e-11);
        assert!((l - 1e-4).abs() > 1e-13, "the expansion is not exact: {l}");
    }

    #[test]
    fn far_side_and_bad_input_rejected() {
        assert!(matches!(
            lm_from_radec(1.0 + 3.0, 0.0, 1.0, 0.0),
            Err(SkyError::FarHemisphere { .. })
        ));
        assert!(matches!(
            lm_from_radec(f64::NAN, 0.0, 1.0, 0.0),
            Err(SkyError::CelestialPosition { .. })
        ));
        assert!(matches!(radec_from_lm(0.9, 0.9, 0.0, 0.0), Err(SkyError::Direction { .. })));
    }
}
