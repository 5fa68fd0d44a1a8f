/// Baseline coordinates (u, v, w) in metres from the baseline's equatorial (X, Y, Z) in metres,
/// the hour angle `hour_angle_rad` and declination `declination_rad` of the phase centre
/// (Thompson, Moran & Swenson, 3rd ed., eq. 4.1):
///
/// u = sin H · X + cos H · Y,
/// v = −sin δ cos H · X + sin δ sin H · Y + cos δ · Z,
/// w = cos δ cos H · X − cos δ sin H · Y + sin δ · Z.
///
/// w lies along the direction of the phase centre, u towards east and v towards north on the
/// sky; the matrix is orthogonal, so |uvw| equals the baseline length. Divide by the wavelength
/// for uvw in wavelengths. For many baselines at one time, build a [`UvwRotation`] once.
pub fn uvw_m(xyz_m: [f64; 3], hour_angle_rad: f64, declination_rad: f64) -> [f64; 3] {
    UvwRotation::new(hour_angle_rad, declination_rad).apply(xyz_m)
}

/// The rotation of [`uvw_m`] for one (hour angle, declination), with its sines and cosines
/// evaluated once so it can be applied to every baseline of a time sample.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct UvwRotation {
    matrix: [[f64; 3]; 3],
}

impl UvwRotation {
    /// The rotation for hour angle `hour_angle_rad` and declination `declination_rad`
    /// (TMS eq. 4.1, see [`uvw_m`]).
    pub fn new(hour_angle_rad: f64, declination_rad: f64) -> Self {
        let (sin_h, cos_h) = hour_angle_rad.sin_cos();
        let (sin_d, cos_d) = declination_rad.sin_cos();
        Self {
            matrix: [
                [sin_h, cos_h, 0.0],
                [-sin_d * cos_h, sin_d * sin_h, cos_d],
                [cos_d * cos_h, -cos_d * sin_h, sin_d],
            ],
        }
    }

    /// (u, v, w) in metres of the equatorial baseline `xyz_m` (metres).
    #[inline]
    pub fn apply(&self, xyz_m: [f64; 3]) -> [f64; 3] {
        let m = &self.matrix;
        let [x, y, z] = xyz_m;
        [
            m[0][0] * x + m[0][1] * y,
            m[1][0] * x + m[1][1] * y + m[1][2] * z,
            m[2][0] * x + m[2][1] * y + m[2][2] * z,
        ]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn check_value() {
        // Worked example of TMS eq. 4.1: (X, Y, Z) = (100, 200, 300) m, H = 30°, δ = 45° →
        // (223.2051, 221.6055, 202.6586) m; quoted to 1e-4 m, so a 1e-4 m tolerance. By hand,
        // with sin δ = cos δ = √2/2: u = 100·½ + 200·√3/2 = 223.2051;
        // v = √2/2·(−100·√3/2 + 200·½ + 300) = 221.6055; w = √2/2·(100·√3/2 − 200·½ + 300) =
        // 202.6586.
        let uvw = uvw_m([100.0, 200.0, 300.0], 30f64.to_radians(), 45f64.to_radians());
        let expect = [223.2051, 221.6055, 202.6586];
        for k in 0..3 {
            assert!((uvw[k] - expect[k]).abs() < 1e-4, "{uvw:?}");
        }
    }

    #[test]
    fn preserves_length_and_points_w_at_the_source() {
        // An orthogonal matrix keeps length (TMS §4.1); w is the projection on the source
        // direction s = (cos δ cos H, −cos δ sin H, sin δ) in XYZ (same section).
        let b: [f64; 3] = [123.0, -456.0, 78.9];
        let len = (b[0] * b[0] + b[1] * b[1] + b[2] * b[2]).sqrt();
        for i in 0..25 {
            let h = -3.0 + 0.25 * i as f64;
            let d = -1.5 + 0.125 * i as f64;
            let uvw = uvw_m(b, h, d);
            let l2 = (uvw[0] * uvw[0] + uvw[1] * uvw[1] + uvw[2] * uvw[2]).sqrt();
            // rounding of a 9-term product on ~500 m values: a few ulp of 500 ≈ 1e-13 m.
            assert!((l2 - len).abs() < 1e-11);
            let s = [d.cos() * h.cos(), -d.cos() * h.sin(), d.sin()];
            assert!((uvw[2] - (b[0] * s[0] + b[1] * s[1] + b[2] * s[2])).abs() < 1e-11);
        }
    }
}
