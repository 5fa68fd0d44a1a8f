//! Helpers shared by the integration tests.
#![allow(dead_code)]

/// Parallactic angle q = atan2(sin H, tan φ cos δ − sin δ cos H) (spherical astronomy, e.g.
/// Thompson, Moran & Swenson, ch. 4; cross-checked against pyerfa's hd2pa in
/// tests/crosscheck/test_beam.py).
pub fn parallactic_angle(h: f64, dec: f64, lat: f64) -> f64 {
    h.sin().atan2(lat.tan() * dec.cos() - dec.sin() * h.cos())
}

/// Location (l, m) of the maximum of `f` near `guess`, by repeated grid refinement (21×21
/// points, step shrinking 4× per round): a slow but obviously correct peak finder.
pub fn find_peak(f: impl Fn(f64, f64) -> f64, guess: (f64, f64), width: f64) -> (f64, f64) {
    let (mut cl, mut cm) = guess;
    let mut step = width / 10.0;
    for _ in 0..12 {
        let mut best = (f64::NEG_INFINITY, cl, cm);
        for i in -10..=10 {
            for j in -10..=10 {
                let (l, m) = (cl + i as f64 * step, cm + j as f64 * step);
                let v = f(l, m);
                if v > best.0 {
                    best = (v, l, m);
                }
            }
        }
        (cl, cm) = (best.1, best.2);
        step /= 4.0;
    }
    (cl, cm)
}
