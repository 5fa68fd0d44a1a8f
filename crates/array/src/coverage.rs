use crate::layout::distance;
use crate::observation::Observation;
use beamfloor_core::SPEED_OF_LIGHT_M_PER_S;

impl Observation {
    /// Longest baseline, m: the largest 3-D distance between two antennas.
    pub fn longest_baseline_m(&self) -> f64 {
        let p = &self.antennas_enu_m;
        let mut longest: f64 = 0.0;
        for a in 0..p.len() {
            for b in a + 1..p.len() {
                longest = longest.max(distance(p[a], p[b]));
            }
        }
        longest
    }

    /// Longest baseline in wavelengths at the highest channel frequency.
    pub fn longest_baseline_wavelengths(&self) -> f64 {
        self.longest_baseline_m() * self.channels.highest_hz() / SPEED_OF_LIGHT_M_PER_S
    }

    /// Largest |u|, |v| and |w| over the unflagged rows, in wavelengths at the highest channel
    /// frequency (the largest values the data hold; what a cell size and w-plane count must
    /// cover). Each component is maximised separately.
    pub fn max_abs_uvw_wavelengths(&self) -> [f64; 3] {
        let scale = self.channels.highest_hz() / SPEED_OF_LIGHT_M_PER_S;
        let mut max = [0.0f64; 3];
        for row in self.rows.iter().filter(|r| !r.flagged) {
            for (m, x) in max.iter_mut().zip(row.uvw_m) {
                *m = m.max(x.abs() * scale);
            }
        }
        max
    }

    /// Largest uv distance sqrt(u² + v²) over the unflagged rows, in wavelengths at the highest
    /// channel frequency. The finest angular scale the data sample is about 1 / this (rad), so a
    /// cell of at most half of that (Nyquist) is the usual choice.
    pub fn max_uv_distance_wavelengths(&self) -> f64 {
        let scale = self.channels.highest_hz() / SPEED_OF_LIGHT_M_PER_S;
        self.rows
            .iter()
            .filter(|r| !r.flagged)
            .map(|r| r.uvw_m[0].hypot(r.uvw_m[1]) * scale)
            .fold(0.0, f64::max)
    }

    /// The uv-coverage for a plot: (u, v) in kilo-wavelengths of every unflagged row at every
    /// `channel_step`-th channel (0, step, 2·step, …; a step of 0 counts as 1), each point
    /// followed by its mirror (−u, −v), since V(−u, −v) = V(u, v)* samples the same Fourier
    /// component.
    ///
    /// Order: row, then channel, then the point before its mirror. Length:
    /// unflagged rows × ⌈channels / step⌉ × 2.
    pub fn uv_coverage_klambda(&self, channel_step: usize) -> Vec<[f64; 2]> {
        let step = channel_step.max(1);
        let scales: Vec<f64> = self
            .channels
            .frequencies_hz
            .iter()
            .step_by(step)
            .map(|&f| f / SPEED_OF_LIGHT_M_PER_S / 1e3)
            .collect();
        let unflagged = self.rows.iter().filter(|r| !r.flagged);
        let mut points =
            Vec::with_capacity(self.timeline.n_unflagged() * self.n_baselines() * scales.len() * 2);
        for row in unflagged {
            for &s in &scales {
                let (u, v) = (row.uvw_m[0] * s, row.uvw_m[1] * s);
                points.push([u, v]);
                points.push([-u, -v]);
            }
        }
        points
    }
}
