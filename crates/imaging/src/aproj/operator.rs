use super::screens::{a_screen, screen_cache_bytes};
use crate::error::ImagingError;
use crate::operator::{check_degrid_args, check_grid_args, GridOutput, ImagingOperator};
use crate::params::{GridderParams, WRange};
use crate::plan::GridPlan;
use beamfloor_core::{ImageGeometry, Pol, VoltageBeam};
use beamfloor_predict::VisSet;
use ndarray::{Array2, Array3, ArrayView3};
use num_complex::Complex64;
use std::borrow::Cow;

/// Which beam frequency the *gridding* side of an [`AProjection`] uses per channel.
#[derive(Clone, Debug, PartialEq, Default)]
pub enum ConjugateFrequency {
    /// Plain A-projection: grid with the beam at the channel's own frequency ν, so `grid` is the
    /// exact adjoint of `degrid`. Default.
    #[default]
    Same,
    /// Wideband A-projection with the reciprocal choice ν_c = ν0² / ν (see
    /// [`crate::reciprocal_conjugate_frequency`]).
    Reciprocal {
        /// Reference frequency ν0, Hz.
        ref_freq_hz: f64,
    },
    /// Wideband A-projection with one conjugate frequency per channel, Hz (e.g. from
    /// [`crate::fitted_conjugate_frequencies`]).
    PerChannel(Vec<f64>),
}

/// Tuning knobs of an [`AProjection`]. Every field states its default.
#[derive(Clone, Debug, PartialEq)]
pub struct AProjectionParams {
    /// Accuracy and w treatment of the underlying gridder. Default [`GridderParams::default`]
    /// (ε = 1e-7, w-stacking).
    pub gridder: GridderParams,
    /// The operator evaluates antenna 0's pattern for every baseline. With `false` (default)
    /// the constructor checks that claim: it compares every antenna's voltage with antenna 0's
    /// on a 5 × 5 grid of directions over the field, at the first and last PA bin, the band
    /// edges and both receptors, and refuses a beam whose antennas differ by more than 1e-12 of
    /// the peak. `true` skips the check (the caller vouches for it).
    pub assume_identical_antennas: bool,
    /// Beam frequency for gridding. Default [`ConjugateFrequency::Same`].
    pub conjugate: ConjugateFrequency,
    /// Largest A-screen cache, bytes (see [`crate::screen_cache_bytes`]). Screens are built once
    /// at construction when they fit; otherwise they are evaluated again in every call (same
    /// result, slower). Default 2 GiB.
    pub max_cache_bytes: usize,
}

impl Default for AProjectionParams {
    fn default() -> Self {
        Self {
            gridder: GridderParams::default(),
            assume_identical_antennas: false,
            conjugate: ConjugateFrequency::Same,
            max_cache_bytes: 2 << 30,
        }
    }
}

/// Time-dependent (and optionally wideband) A-projection.
///
/// Forward model (`degrid`), per row k (antennas i, j, time t), channel ν and parallel hand p:
///
/// V = Σ_pixels I(l, m) · E_p E_p*(l, m; ν, b(t)) · exp(−2πi (u l + v m + w (n − 1)))
///
/// with b = `bin_of_time[t]` the parallactic-angle bin the beam is evaluated in (passed to
/// [`VoltageBeam::voltage`] as its time index: the caller builds the imaging beam on a timeline
/// of bin centres, so the bin width is the caller's accuracy knob) and E_p antenna 0's pattern
/// for receptor p (R for RR, L for LL: they differ by squint). `grid` is the exact adjoint with
/// [`ConjugateFrequency::Same`]:
///
/// I(l, m) = Re Σ f(ν) c · A_p(l, m; ν, b) · exp(+2πi (u l + v m + w (n − 1)))
///
/// (A = |E_p|² is real, so its conjugate is itself). With a conjugate frequency the gridding
/// screens use ν_c instead of ν, and `grid` is deliberately *not* the adjoint of `degrid`
/// (Bhatnagar et al. 2013, ApJ 770, 91: the product of the data's beam at ν and the kernel's at
/// ν_c is nearly frequency independent, so the Taylor images see the sky's own spectrum); use
/// [`AProjection::forward_adjoint`] for the true adjoint.
///
/// How the beam is applied: the A-term of a (bin, channel, hand) group is applied in the image
/// domain, exactly, on the pixel grid — multiply the model by the screen before the
/// exponential-of-semicircle degridder, multiply the gridded image by it after — instead of
/// convolving with a tabulated uv-kernel FT(taper × A × w-screen). Both are the same linear
/// operator; this one has no kernel-support or oversampling truncation of the A-term (its error
/// is the gridder's ε), and the w-term stays with the gridder's w-stacking planes, which are
/// exact for any field, rather than being folded into a per-w kernel whose support would grow
/// with w. The price is one padded FFT per w-plane per group, so the cost grows with
/// (PA bins × channels × 2 hands); the screens (nx · ny f64 each) are the "kernel cache".
///
/// Stokes I = (RR + LL)/2 as in [`crate::dirty_images`]: both hands gridded, each with its own
/// screen.
#[derive(Debug)]
pub struct AProjection<'a, B: VoltageBeam + ?Sized> {
    plan: GridPlan,
    beam: &'a B,
    bin_of_time: Vec<usize>,
    n_bins: usize,
    frequencies_hz: Vec<f64>,
    grid_freqs_hz: Vec<f64>,
    params: AProjectionParams,
    /// Prediction screens, index ((bin · n_chan) + chan) · 2 + hand; None when over the cap.
    forward: Option<Vec<Array2<f64>>>,
    /// Gridding screens at ν_c (same indexing); None when ν_c = ν or over the cap.
    gridding: Option<Vec<Array2<f64>>>,
}

// Manual impl: a derive would demand `B: Clone`, but only the reference is copied.
impl<B: VoltageBeam + ?Sized> Clone for AProjection<'_, B> {
    fn clone(&self) -> Self {
        Self {
            plan: self.plan.clone(),
            beam: self.beam,
            bin_of_time: self.bin_of_time.clone(),
            n_bins: self.n_bins,
            frequencies_hz: self.frequencies_hz.clone(),
            grid_freqs_hz: self.grid_freqs_hz.clone(),
            params: self.params.clone(),
            forward: self.forward.clone(),
            gridding: self.gridding.clone(),
        }
    }
}

#[derive(Clone, Copy, PartialEq)]
pub(crate) enum Side {
    Forward,
    Gridding,
}

fn hand_index(p: Pol) -> usize {
    match p {
        Pol::R => 0,
        Pol::L => 1,
    }
}

impl<'a, B: VoltageBeam + ?Sized> AProjection<'a, B> {
    /// Plan the operator for `geometry`, the imaging `beam`, the map `bin_of_time` from every
    /// visibility time index to its PA bin (= the beam's time index), the channel frequencies
    /// (Hz) it will be applied to and the w range of the samples.
    pub fn new(
        geometry: ImageGeometry,
        beam: &'a B,
        bin_of_time: Vec<usize>,
        frequencies_hz: Vec<f64>,
        w_range: WRange,
        params: AProjectionParams,
    ) -> Result<Self, ImagingError> {
        let plan = GridPlan::new(geometry, &params.gridder, w_range)?;
        if beam.n_antennas() == 0 {
            return Err(ImagingError::Parameter {
                name: "beam",
                value: "0 antennas".into(),
                why: "the imaging beam must define antenna 0",
            });
        }
        if bin_of_time.is_empty() {
            return Err(ImagingError::Parameter {
                name: "bin_of_time",
                value: "[]".into(),
                why: "needs one PA bin per visibility time index",
            });
        }
        if frequencies_hz.is_empty() || frequencies_hz.iter().any(|f| !(f.is_finite() && *f > 0.0))
        {
            return Err(ImagingError::Parameter {
                name: "frequencies_hz",
                value: format!("{frequencies_hz:?}"),
                why: "needs at least one finite, positive frequency",
            });
        }
        let n_bins = bin_of_time.iter().max().map_or(0, |b| b + 1);
        let grid_freqs_hz: Vec<f64> = match &params.conjugate {
            ConjugateFrequency::Same => frequencies_hz.clone(),
            ConjugateFrequency::Reciprocal { ref_freq_hz } => {
                if !(ref_freq_hz.is_finite() && *ref_freq_hz > 0.0) {
                    return Err(ImagingError::Parameter {
                        name: "ConjugateFrequency::Reciprocal::ref_freq_hz",
                        value: ref_freq_hz.to_string(),
                        why: "must be finite and positive",
                    });
                }
                frequencies_hz
                    .iter()
                    .map(|&f| super::reciprocal_conjugate_frequency(f, *ref_freq_hz))
                    .collect()
            }
            ConjugateFrequency::PerChannel(v) => {
                if v.len() != frequencies_hz.len() || v.iter().any(|f| !(f.is_finite() && *f > 0.0))
                {
                    return Err(ImagingError::Parameter {
                        name: "ConjugateFrequency::PerChannel",
                        value: format!("{v:?}"),
                        why: "needs one finite, positive frequency per channel",
                    });
                }
                v.clone()
            }
        };
        if !params.assume_identical_antennas {
            check_identical(beam, geometry, n_bins, &frequencies_hz)?;
        }
        let wideband = grid_freqs_hz != frequencies_hz;
        let mut op = Self {
            plan,
            beam,
            bin_of_time,
            n_bins,
            frequencies_hz,
            grid_freqs_hz,
            params,
            forward: None,
            gridding: None,
        };
        if op.cache_bytes_needed() <= op.params.max_cache_bytes {
            op.forward = Some(op.build_screens(Side::Forward));
            if wideband {
                op.gridding = Some(op.build_screens(Side::Gridding));
            }
        }
        Ok(op)
    }

    /// Bytes the screen cache of this plan needs ([`crate::screen_cache_bytes`]).
    pub fn cache_bytes_needed(&self) -> usize {
        screen_cache_bytes(
            self.plan.image_geometry(),
            self.n_bins,
            self.frequencies_hz.len(),
            self.is_wideband(),
        )
    }

    /// True when the screens are cached (the plan fits under `max_cache_bytes`).
    pub fn is_cached(&self) -> bool {
        self.forward.is_some()
    }

    /// True when gridding uses a conjugate frequency different from ν (grid ≠ adjoint).
    pub fn is_wideband(&self) -> bool {
        self.grid_freqs_hz != self.frequencies_hz
    }

    /// Number of PA bins (largest entry of `bin_of_time` + 1).
    pub fn n_pa_bins(&self) -> usize {
        self.n_bins
    }

    /// Beam frequency of the gridding screens per channel, Hz.
    pub fn gridding_frequencies_hz(&self) -> &[f64] {
        &self.grid_freqs_hz
    }

    /// The underlying exponential-of-semicircle plan.
    pub fn grid_plan(&self) -> &GridPlan {
        &self.plan
    }

    /// The exact adjoint of this operator's `degrid`: the same plan with gridding at ν
    /// (identical to `self` for plain A-projection). For the dot-product test of a wideband
    /// operator and for anything that needs a true adjoint.
    pub fn forward_adjoint(&self) -> Self {
        Self {
            grid_freqs_hz: self.frequencies_hz.clone(),
            params: AProjectionParams {
                conjugate: ConjugateFrequency::Same,
                ..self.params.clone()
            },
            gridding: None,
            ..self.clone()
        }
    }

    fn build_screens(&self, side: Side) -> Vec<Array2<f64>> {
        let nc = self.frequencies_hz.len();
        let mut out = Vec::with_capacity(self.n_bins * nc * 2);
        for bin in 0..self.n_bins {
            for c in 0..nc {
                for p in Pol::BOTH {
                    out.push(self.compute_screen(side, bin, c, p));
                }
            }
        }
        out
    }

    fn compute_screen(&self, side: Side, bin: usize, c: usize, p: Pol) -> Array2<f64> {
        let f = match side {
            Side::Forward => self.frequencies_hz[c],
            Side::Gridding => self.grid_freqs_hz[c],
        };
        a_screen(self.beam, self.plan.image_geometry(), bin, f, p)
    }

    /// The screen A_p(l, m) of one group, cached or freshly evaluated.
    pub(crate) fn screen(&self, side: Side, bin: usize, c: usize, p: Pol) -> Cow<'_, Array2<f64>> {
        let idx = (bin * self.frequencies_hz.len() + c) * 2 + hand_index(p);
        let cache = match side {
            Side::Gridding if self.is_wideband() => &self.gridding,
            _ => &self.forward,
        };
        match cache {
            Some(v) => Cow::Borrowed(&v[idx]),
            None => {
                let side = if self.is_wideband() { side } else { Side::Forward };
                Cow::Owned(self.compute_screen(side, bin, c, p))
            }
        }
    }

    /// Forward and gridding screens of a group (for the sensitivity image).
    pub(crate) fn screen_pair(
        &self,
        bin: usize,
        c: usize,
        p: Pol,
    ) -> (Cow<'_, Array2<f64>>, Cow<'_, Array2<f64>>) {
        (self.screen(Side::Forward, bin, c, p), self.screen(Side::Gridding, bin, c, p))
    }

    /// Rows of `vis` grouped by PA bin, after checking channels and the time → bin map.
    pub(crate) fn rows_by_bin(&self, vis: &VisSet) -> Result<Vec<Vec<usize>>, ImagingError> {
        if vis.frequencies_hz != self.frequencies_hz {
            return Err(ImagingError::Parameter {
                name: "vis.frequencies_hz",
                value: format!("{:?}", vis.frequencies_hz),
                why: "must equal the channels the A-projection was planned for",
            });
        }
        let mut groups = vec![Vec::new(); self.n_bins];
        for (r, &t) in vis.time_index.iter().enumerate() {
            let bin = self.bin_of_time.get(t as usize).ok_or(ImagingError::Parameter {
                name: "bin_of_time",
                value: format!("has {} entries, time index {t} used", self.bin_of_time.len()),
                why: "must map every time index of the visibilities to a PA bin",
            })?;
            groups[*bin].push(r);
        }
        Ok(groups)
    }
}

/// The rows `rows`, channel `chan` and correlation `corr` of `vis` as a visibility set of their
/// own (data, weights and flags neutral: the operators take values separately).
pub(crate) fn sub_visset(vis: &VisSet, rows: &[usize], chan: usize, corr: usize) -> VisSet {
    let n = rows.len();
    VisSet {
        frequencies_hz: vec![vis.frequencies_hz[chan]],
        channel_width_hz: vis.channel_width_hz,
        integration_s: vis.integration_s,
        hour_angles_rad: vis.hour_angles_rad.clone(),
        parallactic_angles_rad: vis.parallactic_angles_rad.clone(),
        phase_centre_ra_rad: vis.phase_centre_ra_rad,
        phase_centre_dec_rad: vis.phase_centre_dec_rad,
        antenna1: rows.iter().map(|&r| vis.antenna1[r]).collect(),
        antenna2: rows.iter().map(|&r| vis.antenna2[r]).collect(),
        time_index: rows.iter().map(|&r| vis.time_index[r]).collect(),
        uvw_m: Array2::from_shape_fn((n, 3), |(i, k)| vis.uvw_m[[rows[i], k]]),
        data: Array3::zeros((n, 1, 1)),
        weights: Array3::ones((n, 1, 1)),
        flags: Array3::from_elem((n, 1, 1), false),
        correlations: vec![vis.correlations[corr]],
        seed: vis.seed,
        truth_hash: String::new(),
    }
}

pub(crate) fn check_identical<B: VoltageBeam + ?Sized>(
    beam: &B,
    geometry: ImageGeometry,
    n_bins: usize,
    freqs: &[f64],
) -> Result<(), ImagingError> {
    let (hx, hy) = (geometry.nx as f64, geometry.ny as f64);
    let bins = [0, n_bins.saturating_sub(1)];
    let fs = [freqs[0], freqs[freqs.len() - 1]];
    for a in 1..beam.n_antennas() {
        for &bin in &bins {
            for &f in &fs {
                for p in Pol::BOTH {
                    for k in 0..25 {
                        let x = hx * (0.1 + 0.2 * (k % 5) as f64);
                        let y = hy * (0.1 + 0.2 * (k / 5) as f64);
                        let (l, m) = geometry.lm_of_pixel(x, y);
                        let e0 = beam.voltage(0, bin, f, p, l, m);
                        let ea = beam.voltage(a, bin, f, p, l, m);
                        if (e0 - ea).norm() > 1e-12 {
                            return Err(ImagingError::Parameter {
                                name: "assume_identical_antennas",
                                value: format!(
                                    "false, but antenna {a} differs from antenna 0 by {:.3e} at \
                                     (l, m) = ({l:.4}, {m:.4}), {f} Hz, bin {bin}",
                                    (e0 - ea).norm()
                                ),
                                why: "the operator uses antenna 0's pattern for every baseline; \
                                      image with an identical-antenna beam or set the option",
                            });
                        }
                    }
                }
            }
        }
    }
    Ok(())
}

impl<B: VoltageBeam + ?Sized> ImagingOperator for AProjection<'_, B> {
    fn geometry(&self) -> ImageGeometry {
        self.plan.image_geometry()
    }

    fn grid(
        &self,
        vis: &VisSet,
        sources: &[ArrayView3<'_, Complex64>],
        outputs: &[GridOutput],
    ) -> Result<Vec<Array2<f64>>, ImagingError> {
        check_grid_args(vis, sources, outputs)?;
        let groups = self.rows_by_bin(vis)?;
        let g = self.geometry();
        let mut images = vec![Array2::<f64>::zeros((g.ny, g.nx)); outputs.len()];
        for (bin, rows) in groups.iter().enumerate() {
            if rows.is_empty() {
                continue;
            }
            for c in 0..vis.n_channels() {
                for (k, corr) in vis.correlations.iter().enumerate() {
                    let sub = sub_visset(vis, rows, c, k);
                    let values: Vec<Array3<Complex64>> = sources
                        .iter()
                        .map(|s| {
                            Array3::from_shape_fn((rows.len(), 1, 1), |(i, _, _)| {
                                s[[rows[i], c, k]]
                            })
                        })
                        .collect();
                    let views: Vec<_> = values.iter().map(|v| v.view()).collect();
                    let outs: Vec<GridOutput> = outputs
                        .iter()
                        .map(|o| GridOutput {
                            source: o.source,
                            channel_factors: vec![o.channel_factors[c]],
                        })
                        .collect();
                    let part = self.plan.grid(&sub, &views, &outs)?;
                    let screen = self.screen(Side::Gridding, bin, c, corr.receptor());
                    for (im, p) in images.iter_mut().zip(&part) {
                        ndarray::Zip::from(im).and(p).and(&*screen).for_each(|a, &b, &s| {
                            *a += b * s;
                        });
                    }
                }
            }
        }
        Ok(images)
    }

    fn degrid(
        &self,
        vis: &VisSet,
        images: &[Array2<f64>],
        channel_factors: &[Vec<f64>],
    ) -> Result<Array3<Complex64>, ImagingError> {
        check_degrid_args(vis, self.geometry(), images, channel_factors)?;
        let groups = self.rows_by_bin(vis)?;
        let mut out = Array3::<Complex64>::zeros(vis.data.raw_dim());
        for (bin, rows) in groups.iter().enumerate() {
            if rows.is_empty() {
                continue;
            }
            for c in 0..vis.n_channels() {
                for (k, corr) in vis.correlations.iter().enumerate() {
                    let sub = sub_visset(vis, rows, c, k);
                    let screen = self.screen(Side::Forward, bin, c, corr.receptor());
                    let screened: Vec<Array2<f64>> =
                        images.iter().map(|im| im * &*screen).collect();
                    let factors: Vec<Vec<f64>> =
                        channel_factors.iter().map(|f| vec![f[c]]).collect();
                    let v = self.plan.degrid(&sub, &screened, &factors)?;
                    for (i, &r) in rows.iter().enumerate() {
                        out[[r, c, k]] = v[[i, 0, 0]];
                    }
                }
            }
        }
        Ok(out)
    }
}
