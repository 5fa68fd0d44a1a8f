/// A regular image grid on the tangent plane: `nx × ny` pixels of `cell_rad` radians.
///
/// The reference pixel (l = m = 0) is at the integer pixel `(nx / 2, ny / 2)` (zero-based), which
/// is where an FFT of an even-sized grid puts the origin after the usual shift. Pixel x runs
/// towards decreasing l (east to the left), pixel y towards increasing m (north up):
///
/// l = −(x − nx/2) · cell,   m = (y − ny/2) · cell.
///
/// In FITS terms: `CRPIX1 = nx/2 + 1`, `CDELT1 = −cell`, `CRPIX2 = ny/2 + 1`, `CDELT2 = +cell`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ImageGeometry {
    /// Number of pixels along x (towards decreasing l).
    pub nx: usize,
    /// Number of pixels along y (towards increasing m).
    pub ny: usize,
    /// Pixel size in radians (both axes).
    pub cell_rad: f64,
}

impl ImageGeometry {
    /// A grid of `nx × ny` pixels of `cell_rad` radians.
    pub fn new(nx: usize, ny: usize, cell_rad: f64) -> Self {
        Self { nx, ny, cell_rad }
    }

    /// Zero-based pixel coordinates of the phase centre (l = m = 0).
    pub fn centre_pixel(&self) -> (usize, usize) {
        (self.nx / 2, self.ny / 2)
    }

    /// Direction cosines (l, m) of the (possibly fractional) pixel position (x, y).
    pub fn lm_of_pixel(&self, x: f64, y: f64) -> (f64, f64) {
        let (cx, cy) = self.centre_pixel();
        (-(x - cx as f64) * self.cell_rad, (y - cy as f64) * self.cell_rad)
    }

    /// Fractional pixel position (x, y) of the direction (l, m).
    pub fn pixel_of_lm(&self, l: f64, m: f64) -> (f64, f64) {
        let (cx, cy) = self.centre_pixel();
        (cx as f64 - l / self.cell_rad, cy as f64 + m / self.cell_rad)
    }

    /// Number of pixels, `nx · ny`.
    pub fn len(&self) -> usize {
        self.nx * self.ny
    }

    /// True when the grid has no pixels.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Half-width of the field along l and m, radians (centre to the edge of the outermost pixel).
    pub fn half_field_rad(&self) -> (f64, f64) {
        (self.nx as f64 * self.cell_rad / 2.0, self.ny as f64 * self.cell_rad / 2.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn centre_and_orientation() {
        // Orientation convention (east left, north up) as used in FITS images with a negative
        // CDELT1 (Greisen & Calabretta 2002, FITS WCS paper I/II): moving +1 pixel in x lowers l.
        let g = ImageGeometry::new(128, 64, 2.0e-5);
        assert_eq!(g.lm_of_pixel(64.0, 32.0), (0.0, 0.0));
        let (l, m) = g.lm_of_pixel(65.0, 33.0);
        assert!((l + 2.0e-5).abs() < 1e-20 && (m - 2.0e-5).abs() < 1e-20);
        for &(l, m) in &[(1.3e-4, -7.7e-4), (-3.0e-3, 2.5e-4)] {
            let (x, y) = g.pixel_of_lm(l, m);
            let (l2, m2) = g.lm_of_pixel(x, y);
            assert!((l - l2).abs() < 1e-18 && (m - m2).abs() < 1e-18);
        }
    }
}
