use beamfloor_core::{Pol, VoltageBeam};
use beamfloor_sky::Component;
use num_complex::Complex64;
use rayon::prelude::*;

/// Voltage-pattern values E_p(l_c, m_c; ν_k, t, antenna) for a block of consecutive time samples,
/// every antenna, component, channel and receptor: evaluated once per antenna rather than once
/// per baseline.
///
/// Layout `[time - first_time][antenna][component][channel][pol]`, pol in `Pol::BOTH` order, so a
/// row's loop over channels for one component reads two contiguous runs.
pub(crate) struct BeamTable {
    pub(crate) first_time: usize,
    pub(crate) n_times: usize,
    n_antennas: usize,
    n_components: usize,
    n_channels: usize,
    values: Vec<Complex64>,
}

impl BeamTable {
    /// Evaluate the beam for time samples `first_time .. first_time + n_times`, in parallel over
    /// (time, antenna).
    pub(crate) fn build(
        beam: &dyn VoltageBeam,
        n_antennas: usize,
        components: &[Component],
        frequencies_hz: &[f64],
        first_time: usize,
        n_times: usize,
    ) -> Self {
        let (n_components, n_channels) = (components.len(), frequencies_hz.len());
        let per_antenna = n_components * n_channels * 2;
        let mut values = vec![Complex64::new(0.0, 0.0); n_times * n_antennas * per_antenna];
        if per_antenna > 0 {
            values.par_chunks_mut(per_antenna).enumerate().for_each(|(index, chunk)| {
                let time = first_time + index / n_antennas;
                let antenna = index % n_antennas;
                let mut k = 0;
                for c in components {
                    for &freq in frequencies_hz {
                        for pol in Pol::BOTH {
                            chunk[k] = beam.voltage(antenna, time, freq, pol, c.l, c.m);
                            k += 1;
                        }
                    }
                }
            });
        }
        Self { first_time, n_times, n_antennas, n_components, n_channels, values }
    }

    /// Values `[channel][pol]` of `antenna` towards `component` at `time` (must be in the block).
    #[inline]
    pub(crate) fn slice(&self, time: usize, antenna: usize, component: usize) -> &[Complex64] {
        let per = self.n_channels * 2;
        let start = (((time - self.first_time) * self.n_antennas + antenna) * self.n_components
            + component)
            * per;
        &self.values[start..start + per]
    }

    /// Whether `time` is in this block.
    #[inline]
    pub(crate) fn contains(&self, time: usize) -> bool {
        time >= self.first_time && time < self.first_time + self.n_times
    }
}
