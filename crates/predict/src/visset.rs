use beamfloor_core::Correlation;
use ndarray::{Array2, Array3};
use num_complex::Complex64;

/// A set of visibilities: the rows of an observation (one per baseline and time sample), each with
/// one complex sample per channel and parallel-hand polarization.
///
/// Rows are ordered by baseline, then time. `data`, `weights` and `flags` are shaped
/// `[row][channel][polarization]` with the polarization axis `[RR, LL]`.
#[derive(Clone, Debug, PartialEq)]
pub struct VisSet {
    /// Channel centre frequencies, Hz, increasing.
    pub frequencies_hz: Vec<f64>,
    /// Channel width, Hz.
    pub channel_width_hz: f64,
    /// Integration time of one sample, s.
    pub integration_s: f64,
    /// Hour angle of the phase centre per time index, rad.
    pub hour_angles_rad: Vec<f64>,
    /// Parallactic angle per time index, rad.
    pub parallactic_angles_rad: Vec<f64>,
    /// Right ascension of the phase centre, rad.
    pub phase_centre_ra_rad: f64,
    /// Declination of the phase centre, rad.
    pub phase_centre_dec_rad: f64,
    /// First antenna of each row.
    pub antenna1: Vec<u32>,
    /// Second antenna of each row.
    pub antenna2: Vec<u32>,
    /// Time index of each row (into `hour_angles_rad`).
    pub time_index: Vec<u32>,
    /// Baseline coordinates per row, metres, shape `[row][3]`.
    pub uvw_m: Array2<f64>,
    /// Visibilities, Jy, shape `[row][channel][pol]`.
    pub data: Array3<Complex64>,
    /// Weights (1/σ² for one real or imaginary part), shape `[row][channel][pol]`.
    pub weights: Array3<f64>,
    /// Flags (true = do not use), shape `[row][channel][pol]`.
    pub flags: Array3<bool>,
    /// Polarization products along the last axis.
    pub correlations: Vec<Correlation>,
    /// Experiment seed the set was simulated with.
    pub seed: u64,
    /// Hash of the part of the experiment that determines the truth (hex).
    pub truth_hash: String,
}

/// Why a [`VisSet`] is inconsistent.
#[derive(Debug, thiserror::Error, PartialEq)]
pub enum VisSetError {
    /// An array's shape disagrees with the others.
    #[error("visibility set field `{field}` has shape {found:?}, expected {expected:?}")]
    Shape {
        /// Offending field.
        field: &'static str,
        /// Shape found.
        found: Vec<usize>,
        /// Shape implied by the other fields.
        expected: Vec<usize>,
    },
    /// A value is out of its valid range.
    #[error("visibility set field `{field}` has invalid value {value}: {why}")]
    Value {
        /// Offending field.
        field: &'static str,
        /// The value, printed.
        value: String,
        /// What would be valid.
        why: &'static str,
    },
}

impl VisSet {
    /// Number of rows.
    pub fn n_rows(&self) -> usize {
        self.antenna1.len()
    }

    /// Number of channels.
    pub fn n_channels(&self) -> usize {
        self.frequencies_hz.len()
    }

    /// Number of polarization products.
    pub fn n_correlations(&self) -> usize {
        self.correlations.len()
    }

    /// Number of time samples.
    pub fn n_times(&self) -> usize {
        self.hour_angles_rad.len()
    }

    /// Check every shape and range; called after building and after reading from disk.
    pub fn validate(&self) -> Result<(), VisSetError> {
        let (nr, nc, np) = (self.n_rows(), self.n_channels(), self.n_correlations());
        let shape = |field, found: &[usize], expected: Vec<usize>| {
            if found == expected.as_slice() {
                Ok(())
            } else {
                Err(VisSetError::Shape { field, found: found.to_vec(), expected })
            }
        };
        shape("antenna2", &[self.antenna2.len()], vec![nr])?;
        shape("time_index", &[self.time_index.len()], vec![nr])?;
        shape(
            "parallactic_angles_rad",
            &[self.parallactic_angles_rad.len()],
            vec![self.n_times()],
        )?;
        shape("uvw_m", self.uvw_m.shape(), vec![nr, 3])?;
        shape("data", self.data.shape(), vec![nr, nc, np])?;
        shape("weights", self.weights.shape(), vec![nr, nc, np])?;
        shape("flags", self.flags.shape(), vec![nr, nc, np])?;
        if nc == 0 {
            return Err(VisSetError::Value {
                field: "frequencies_hz",
                value: "[]".into(),
                why: "at least one channel is needed",
            });
        }
        if let Some(f) = self.frequencies_hz.iter().find(|f| !(f.is_finite() && **f > 0.0)) {
            return Err(VisSetError::Value {
                field: "frequencies_hz",
                value: f.to_string(),
                why: "frequencies must be finite and positive",
            });
        }
        if self.frequencies_hz.windows(2).any(|w| w[1] <= w[0]) {
            return Err(VisSetError::Value {
                field: "frequencies_hz",
                value: format!("{:?}", self.frequencies_hz),
                why: "frequencies must increase strictly",
            });
        }
        let nt = self.n_times() as u32;
        if let Some(t) = self.time_index.iter().find(|&&t| t >= nt) {
            return Err(VisSetError::Value {
                field: "time_index",
                value: t.to_string(),
                why: "time indices must be below the number of time samples",
            });
        }
        // Finite and not negative (−0 included; NaN fails both): written as two comparisons of
        // |w| that vectorise, where `is_finite() && w >= 0.0` compiles to scalar bit tests.
        if let Some(w) =
            first_failing(&self.weights, |w| (w.abs() < f64::INFINITY) & (w.abs() == w))
        {
            return Err(VisSetError::Value {
                field: "weights",
                value: w.to_string(),
                why: "weights must be finite and non-negative",
            });
        }
        if first_failing(&self.uvw_m, |x| x.abs() < f64::INFINITY).is_some() {
            return Err(VisSetError::Value {
                field: "uvw_m",
                value: "non-finite".into(),
                why: "uvw must be finite",
            });
        }
        Ok(())
    }
}

/// The first value of `a` (in logical order) for which `good` fails. A contiguous array is first
/// tested as a whole without early exits, which vectorises: this check runs on every visibility
/// before each gridding call, and almost always passes.
fn first_failing<S: ndarray::Data<Elem = f64>, D: ndarray::Dimension>(
    a: &ndarray::ArrayBase<S, D>,
    good: impl Fn(f64) -> bool,
) -> Option<f64> {
    if let Some(s) = a.as_slice_memory_order() {
        // Eight independent lanes, so that the compiler keeps them in vector registers.
        let mut ok = [true; 8];
        let mut blocks = s.chunks_exact(8);
        for block in &mut blocks {
            for (ok, &x) in ok.iter_mut().zip(block) {
                *ok &= good(x);
            }
        }
        if ok.iter().all(|&t| t) && blocks.remainder().iter().all(|&x| good(x)) {
            return None;
        }
    }
    a.iter().copied().find(|&x| !good(x))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn set(n_rows: usize) -> VisSet {
        VisSet {
            frequencies_hz: vec![1e9, 1.5e9],
            channel_width_hz: 1e6,
            integration_s: 1.0,
            hour_angles_rad: vec![0.0],
            parallactic_angles_rad: vec![0.0],
            phase_centre_ra_rad: 0.0,
            phase_centre_dec_rad: 0.0,
            antenna1: vec![0; n_rows],
            antenna2: vec![1; n_rows],
            time_index: vec![0; n_rows],
            uvw_m: Array2::from_elem((n_rows, 3), 10.0),
            weights: Array3::ones((n_rows, 2, 1)),
            flags: Array3::from_elem((n_rows, 2, 1), false),
            data: Array3::zeros((n_rows, 2, 1)),
            correlations: vec![Correlation::BOTH[0]],
            seed: 0,
            truth_hash: String::new(),
        }
    }

    /// Every bad weight or coordinate is caught wherever it sits, including past the first block
    /// of the vectorised whole-array test, and the error names the offending weight.
    #[test]
    fn bad_weights_and_coordinates_are_found_anywhere() {
        let n = 5000;
        assert!(set(n).validate().is_ok());
        for at in [0, 4095, 4096, 2 * n - 1] {
            for bad in [-1.0, f64::NAN, f64::INFINITY] {
                let mut v = set(n);
                v.weights[[at / 2, at % 2, 0]] = bad;
                match v.validate() {
                    Err(VisSetError::Value { field: "weights", value, .. }) => {
                        assert_eq!(value, bad.to_string())
                    }
                    other => panic!("weight {bad} at {at}: {other:?}"),
                }
            }
        }
        for at in [0, 3 * n - 1] {
            let mut v = set(n);
            v.uvw_m[[at / 3, at % 3]] = f64::NEG_INFINITY;
            assert!(matches!(v.validate(), Err(VisSetError::Value { field: "uvw_m", .. })));
        }
    }
}
