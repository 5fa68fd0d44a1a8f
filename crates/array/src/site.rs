/// Equatorial XYZ (m) of a local east-north-up vector (m) at geodetic latitude `latitude_rad`.
///
/// X points to hour angle H = 0, declination δ = 0 (the meridian on the equator); Y to H = −6h,
/// δ = 0 (due east on the horizon); Z to the celestial pole. For latitude φ
/// (Thompson, Moran & Swenson, *Interferometry and Synthesis in Radio Astronomy*, 3rd ed., §4.1):
///
/// X = −sin φ · N + cos φ · U,  Y = E,  Z = cos φ · N + sin φ · U.
///
/// Sign check: the zenith (U) maps to (cos φ, 0, sin φ), i.e. H = 0, δ = φ; north on the horizon
/// maps to (−sin φ, 0, cos φ), i.e. δ = 90° − φ below the pole (H = 12h); east maps to Y. The
/// rotation ignores the difference between geodetic and astronomical latitude and the array's
/// longitude (which only shifts the hour angle).
pub fn enu_to_equatorial_xyz(enu_m: [f64; 3], latitude_rad: f64) -> [f64; 3] {
    let (sin_phi, cos_phi) = latitude_rad.sin_cos();
    let [e, n, u] = enu_m;
    [-sin_phi * n + cos_phi * u, e, cos_phi * n + sin_phi * u]
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::FRAC_PI_2;

    #[test]
    fn axes_point_where_they_should() {
        // Expected directions derived in the doc comment above (TMS §4.1 geometry).
        let phi = 0.6_f64;
        let up = enu_to_equatorial_xyz([0.0, 0.0, 1.0], phi);
        assert!((up[0] - phi.cos()).abs() < 1e-15 && up[1] == 0.0);
        assert!((up[2] - phi.sin()).abs() < 1e-15);
        assert_eq!(enu_to_equatorial_xyz([1.0, 0.0, 0.0], phi), [0.0, 1.0, 0.0]);
        // At the pole, north on the horizon points along −X (towards H = 12h) and up along Z.
        let north = enu_to_equatorial_xyz([0.0, 1.0, 0.0], FRAC_PI_2);
        assert!((north[0] + 1.0).abs() < 1e-15 && north[2].abs() < 1e-15);
        // A rotation preserves length.
        let v = [3.0, -4.0, 12.0];
        let x = enu_to_equatorial_xyz(v, -0.4);
        assert!(((x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt() - 13.0).abs() < 1e-12);
    }
}
