//! Arrays for pictures of the beam (someone else draws them).

use crate::{BeamError, DishBeam};
use beamfloor_core::{ImageGeometry, Pol, SPEED_OF_LIGHT_M_PER_S};
use ndarray::Array2;

/// Power pattern and its frequency derivative along a radius.
#[derive(Clone, Debug, PartialEq)]
pub struct RadialProfile {
    /// Radii, rad.
    pub radius_rad: Vec<f64>,
    /// P = |E|² of the intrinsic pattern (no pointing, squint or ripple).
    pub power: Vec<f64>,
    /// ν ∂P/∂ν (signed; plot its absolute value). With E a function of (l ν/c, m ν/c) this is
    /// 2 Re(E* (p ∂E/∂p + q ∂E/∂q)), computed from the analytic derivative of the table's
    /// interpolating polynomial; 0 when frequency scaling is off.
    pub nu_dp_dnu: Vec<f64>,
}

impl DishBeam {
    /// Power pattern |E_pol|² of `antenna` at `time_index` and `freq_hz` on every pixel.
    pub fn power_image(
        &self,
        geometry: &ImageGeometry,
        antenna: usize,
        time_index: usize,
        freq_hz: f64,
        pol: Pol,
    ) -> Result<Array2<f64>, BeamError> {
        self.check_indices(antenna, time_index)?;
        Ok(Array2::from_shape_fn((geometry.ny, geometry.nx), |(iy, ix)| {
            let (l, m) = geometry.lm_of_pixel(ix as f64, iy as f64);
            self.power(antenna, time_index, freq_hz, pol, l, m)
        }))
    }

    /// Instantaneous Stokes-I power beam (|E_R|² + |E_L|²)/2 of `antenna` at `time_index` and
    /// `freq_hz`, minus the averaged, symmetrized beam over `average_freqs_hz`
    /// ([`DishBeam::average_power_image`]): the error standard imaging makes at that moment.
    pub fn beam_change_image(
        &self,
        geometry: &ImageGeometry,
        antenna: usize,
        time_index: usize,
        freq_hz: f64,
        average_freqs_hz: &[f64],
    ) -> Result<Array2<f64>, BeamError> {
        self.check_indices(antenna, time_index)?;
        let avg = self.average_power_image(geometry, average_freqs_hz)?;
        Ok(Array2::from_shape_fn((geometry.ny, geometry.nx), |(iy, ix)| {
            let (l, m) = geometry.lm_of_pixel(ix as f64, iy as f64);
            let r = self.power(antenna, time_index, freq_hz, Pol::R, l, m);
            let lp = self.power(antenna, time_index, freq_hz, Pol::L, l, m);
            0.5 * (r + lp) - avg[[iy, ix]]
        }))
    }

    /// P and ν ∂P/∂ν of the intrinsic pattern at `freq_hz` along the antenna-frame direction
    /// `position_angle_rad` (from the aperture's up axis through x), at each radius.
    pub fn radial_profile(
        &self,
        freq_hz: f64,
        radii_rad: &[f64],
        position_angle_rad: f64,
    ) -> Result<RadialProfile, BeamError> {
        if !(freq_hz.is_finite() && freq_hz > 0.0) {
            return Err(BeamError::InvalidFrequency(freq_hz));
        }
        let k = self.pattern_freq_hz(freq_hz) / SPEED_OF_LIGHT_M_PER_S;
        let scaling = if self.params.effects.frequency_scaling { 1.0 } else { 0.0 };
        let (s, c) = position_angle_rad.sin_cos();
        let mut power = Vec::with_capacity(radii_rad.len());
        let mut nu_dp_dnu = Vec::with_capacity(radii_rad.len());
        for &r in radii_rad {
            let (p, q) = (r * s * k, r * c * k);
            let (e, ep, eq) = self.table.value_and_gradient(p, q);
            power.push(e.norm_sqr());
            nu_dp_dnu.push(scaling * 2.0 * (e.conj() * (ep * p + eq * q)).re);
        }
        Ok(RadialProfile { radius_rad: radii_rad.to_vec(), power, nu_dp_dnu })
    }
}
