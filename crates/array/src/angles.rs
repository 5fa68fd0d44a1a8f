/// Parallactic angle q (rad) of a direction at hour angle H and declination δ seen from latitude φ:
/// the angle at the source between the direction to the celestial pole and the direction to the
/// zenith, positive when the source is west of the meridian (H > 0).
///
/// q = atan2(cos φ sin H, sin φ cos δ − cos φ sin δ cos H), which equals
/// atan2(sin H, tan φ cos δ − sin δ cos H) for |φ| < 90° (Thompson, Moran & Swenson, 3rd ed.,
/// §4.2; the same form as the IAU SOFA routine `hd2pa`, which avoids tan φ so it also holds at the
/// poles). Result in (−π, π]; at the zenith and the pole, where q is undefined, it is 0.
pub fn parallactic_angle(hour_angle_rad: f64, declination_rad: f64, latitude_rad: f64) -> f64 {
    let (sin_h, cos_h) = hour_angle_rad.sin_cos();
    let (sin_d, cos_d) = declination_rad.sin_cos();
    let (sin_p, cos_p) = latitude_rad.sin_cos();
    let y = cos_p * sin_h;
    let x = sin_p * cos_d - cos_p * sin_d * cos_h;
    if x == 0.0 && y == 0.0 {
        0.0
    } else {
        y.atan2(x)
    }
}

/// Elevation e (rad) of a direction at hour angle H and declination δ seen from latitude φ:
/// sin e = sin φ sin δ + cos φ cos δ cos H.
///
/// Computed as e = atan2(z, sqrt(x² + y²)) from the direction's horizon-frame vector (x towards
/// north on the horizon, y towards east, z to the zenith; the method of the IAU SOFA routine
/// `hd2ae`), which keeps full precision near the zenith where arcsin would lose it.
pub fn elevation(hour_angle_rad: f64, declination_rad: f64, latitude_rad: f64) -> f64 {
    let (sin_h, cos_h) = hour_angle_rad.sin_cos();
    let (sin_d, cos_d) = declination_rad.sin_cos();
    let (sin_p, cos_p) = latitude_rad.sin_cos();
    let x = -cos_h * cos_d * sin_p + sin_d * cos_p;
    let y = -sin_h * cos_d;
    let z = cos_h * cos_d * cos_p + sin_d * sin_p;
    z.atan2(x.hypot(y))
}

/// Highest elevation (rad) a declination reaches at a latitude: at upper transit, e = 90° − |φ − δ|.
pub fn transit_elevation(declination_rad: f64, latitude_rad: f64) -> f64 {
    std::f64::consts::FRAC_PI_2 - (latitude_rad - declination_rad).abs()
}

#[cfg(test)]
mod tests {
    use super::*;

    const LAT_DEG: f64 = 34.0784;

    fn pa_deg(h: f64, d: f64) -> f64 {
        parallactic_angle(h.to_radians(), d.to_radians(), LAT_DEG.to_radians()).to_degrees()
    }

    #[test]
    fn parallactic_angle_check_values() {
        // Worked check values, evaluated by hand from the SOFA hd2pa formula
        // q = atan2(cos φ sin H, sin φ cos δ − cos φ sin δ cos H); they are quoted to 1e-4°, so
        // the tolerance is half a unit in the last quoted digit.
        assert!((pa_deg(30.0, 20.0) - 55.8231).abs() < 5e-5, "{}", pa_deg(30.0, 20.0));
        assert!((pa_deg(0.0, 60.0) - 180.0).abs() < 5e-5, "{}", pa_deg(0.0, 60.0));
        assert!((pa_deg(45.0, 0.0) - 46.2672).abs() < 5e-5, "{}", pa_deg(45.0, 0.0));
        // Symmetry about the meridian: q(−H) = −q(H) (TMS §4.2 geometry).
        assert!((pa_deg(-30.0, 20.0) + pa_deg(30.0, 20.0)).abs() < 1e-12);
        // Undefined at the zenith (here H = δ = φ = 0, where both atan2 arguments are exactly
        // zero): 0 by the SOFA convention rather than a NaN.
        assert_eq!(parallactic_angle(0.0, 0.0, 0.0), 0.0);
    }

    #[test]
    fn elevation_matches_the_sine_formula_and_transit() {
        // sin e = sin φ sin δ + cos φ cos δ cos H (spherical astronomy, e.g. TMS §4.2 / any
        // handbook); the atan2 form must agree to rounding away from the zenith.
        let phi = LAT_DEG.to_radians();
        for &(h, d) in
            &[(30.0f64, 20.0f64), (0.0, 60.0), (45.0, 0.0), (-100.0, -30.0), (170.0, 80.0)]
        {
            let (h, d) = (h.to_radians(), d.to_radians());
            let s = phi.sin() * d.sin() + phi.cos() * d.cos() * h.cos();
            assert!((elevation(h, d, phi) - s.asin()).abs() < 1e-13);
        }
        // At transit the elevation is 90° − |φ − δ|.
        for &d in &[-40.0f64, 0.0, 34.0784, 60.0, 89.0] {
            let d = d.to_radians();
            assert!((elevation(0.0, d, phi) - transit_elevation(d, phi)).abs() < 1e-13);
        }
    }
}
