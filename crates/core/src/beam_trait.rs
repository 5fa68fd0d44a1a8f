use crate::Pol;
use num_complex::Complex64;

/// The complex voltage pattern of every antenna of an array, as truth prediction and imaging see
/// it: E_p(l, m; ν, t, antenna).
///
/// `time_index` indexes the observation's timeline (hour angle, parallactic angle, time since
/// start); implementations precompute whatever depends on it. The value is normalised so that an
/// unobstructed, perfectly pointed antenna has E = 1 at the beam centre at the reference
/// frequency. Implementations must be cheap to call and thread-safe.
pub trait VoltageBeam: Sync {
    /// Number of antennas the beam is defined for.
    fn n_antennas(&self) -> usize;

    /// Voltage pattern of `antenna`'s receptor `pol` towards (l, m) at `freq_hz` and time sample
    /// `time_index`.
    fn voltage(
        &self,
        antenna: usize,
        time_index: usize,
        freq_hz: f64,
        pol: Pol,
        l: f64,
        m: f64,
    ) -> Complex64;

    /// The baseline product E_i E_j* towards (l, m) (what a parallel-hand correlation sees).
    // The arguments are the coordinates of one sample of a 6-dimensional function; bundling them
    // into a struct would only move the same list elsewhere.
    #[allow(clippy::too_many_arguments)]
    fn baseline_product(
        &self,
        antenna_i: usize,
        antenna_j: usize,
        time_index: usize,
        freq_hz: f64,
        pol: Pol,
        l: f64,
        m: f64,
    ) -> Complex64 {
        self.voltage(antenna_i, time_index, freq_hz, pol, l, m)
            * self.voltage(antenna_j, time_index, freq_hz, pol, l, m).conj()
    }
}
