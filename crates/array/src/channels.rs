use crate::error::ArrayError;

/// The spectral channels of an observation: a band [f_min, f_max] split into equal channels.
#[derive(Clone, Debug, PartialEq)]
pub struct Channels {
    /// Channel centre frequencies, Hz, increasing: f_k = f_min + (k + ½) Δν.
    pub frequencies_hz: Vec<f64>,
    /// Channel width Δν = (f_max − f_min) / n, Hz.
    pub width_hz: f64,
}

impl Channels {
    /// Split the band from `f_min_hz` to `f_max_hz` (its outer edges) into `n_channels` equal
    /// channels. Errors: [`ArrayError::Band`] unless 0 < f_min < f_max (finite), and
    /// [`ArrayError::InvalidCount`] for zero channels.
    pub fn from_band(f_min_hz: f64, f_max_hz: f64, n_channels: usize) -> Result<Self, ArrayError> {
        if !(f_min_hz.is_finite() && f_max_hz.is_finite() && f_min_hz > 0.0 && f_max_hz > f_min_hz)
        {
            return Err(ArrayError::Band { f_min_hz, f_max_hz });
        }
        if n_channels == 0 {
            return Err(ArrayError::InvalidCount {
                name: "n_channels",
                value: 0,
                expected: ">= 1",
            });
        }
        let width_hz = (f_max_hz - f_min_hz) / n_channels as f64;
        let frequencies_hz =
            (0..n_channels).map(|k| f_min_hz + (k as f64 + 0.5) * width_hz).collect();
        Ok(Self { frequencies_hz, width_hz })
    }

    /// Number of channels.
    pub fn len(&self) -> usize {
        self.frequencies_hz.len()
    }

    /// True when there are no channels (never the case for channels made by [`Self::from_band`]).
    pub fn is_empty(&self) -> bool {
        self.frequencies_hz.is_empty()
    }

    /// Highest channel centre frequency, Hz (0 when there are no channels).
    pub fn highest_hz(&self) -> f64 {
        self.frequencies_hz.iter().copied().fold(0.0, f64::max)
    }

    /// Lower and upper edge of the band the channels cover, Hz.
    pub fn band_edges_hz(&self) -> (f64, f64) {
        match (self.frequencies_hz.first(), self.frequencies_hz.last()) {
            (Some(&lo), Some(&hi)) => (lo - self.width_hz / 2.0, hi + self.width_hz / 2.0),
            _ => (0.0, 0.0),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn channel_layout_by_definition() {
        // By definition: n equal channels tiling [f_min, f_max], centres at f_min + (k+½)Δν.
        let c = Channels::from_band(1.0e9, 2.0e9, 8).unwrap();
        assert_eq!(c.len(), 8);
        assert!((c.width_hz - 125.0e6).abs() < 1e-6);
        assert!((c.frequencies_hz[0] - 1.0625e9).abs() < 1e-6);
        assert!((c.frequencies_hz[7] - 1.9375e9).abs() < 1e-6);
        for w in c.frequencies_hz.windows(2) {
            assert!((w[1] - w[0] - c.width_hz).abs() < 1e-6);
        }
        let (lo, hi) = c.band_edges_hz();
        assert!((lo - 1.0e9).abs() < 1e-6 && (hi - 2.0e9).abs() < 1e-6);
        assert_eq!(c.highest_hz(), c.frequencies_hz[7]);
        let one = Channels::from_band(1.4e9, 1.5e9, 1).unwrap();
        assert!((one.frequencies_hz[0] - 1.45e9).abs() < 1e-6);
    }

    #[test]
    fn bad_bands() {
        assert!(matches!(Channels::from_band(2.0e9, 1.0e9, 4), Err(ArrayError::Band { .. })));
        assert!(matches!(Channels::from_band(0.0, 1.0e9, 4), Err(ArrayError::Band { .. })));
        assert!(matches!(Channels::from_band(1.0e9, f64::NAN, 4), Err(ArrayError::Band { .. })));
        assert!(matches!(
            Channels::from_band(1.0e9, 2.0e9, 0),
            Err(ArrayError::InvalidCount { name: "n_channels", .. })
        ));
    }
}
