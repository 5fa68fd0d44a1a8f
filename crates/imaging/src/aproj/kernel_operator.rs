use super::kernel_table::{build_table, probe_support, table_bytes, KernelSpec, KernelTable};
use super::operator::{check_identical, ConjugateFrequency};
use crate::error::ImagingError;
use crate::params::{GridderParams, WRange};
use crate::plan::GridPlan;
use beamfloor_core::{ImageGeometry, Pol, VoltageBeam};
use beamfloor_predict::VisSet;
use rayon::prelude::*;
use std::sync::Arc;

/// How a sample's kernel is read from the oversampled table.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum KernelInterpolation {
    /// The nearest lattice point (one table slice per sample). Its image-domain error falls as
    /// 1/O: the footprint is shifted by up to 1/(2O) cell, a phase error up to π ξ / O at
    /// image frequency ξ ≤ 1/4 cycles per cell.
    Nearest,
    /// Bilinear interpolation between the four surrounding lattice points (four slices per
    /// sample). Its error falls as 1/O²; its mean effect, a gain sinc²(ξ_x/O) sinc²(ξ_y/O)
    /// (the Fourier transform of the linear-interpolation hat), is divided out with the grid
    /// correction. Default.
    #[default]
    Bilinear,
}

/// Tuning knobs of a [`KernelAProjection`]. Every field states its default.
#[derive(Clone, Debug, PartialEq)]
pub struct KernelAProjectionParams {
    /// Accuracy and w treatment of the underlying gridder (ES kernel, w-stacking planes).
    /// Default [`GridderParams::default`] (ε = 1e-7, w-stacking). ε also sets the A-kernel
    /// support (tails below ε/10 of the peak are dropped).
    pub gridder: GridderParams,
    /// Kernel oversampling O: lattice points per grid cell in the tables. Default 16; allowed
    /// 1..=256. Table memory grows as (O + 1)².
    pub oversampling: usize,
    /// Table lookup. Default [`KernelInterpolation::Bilinear`].
    pub interpolation: KernelInterpolation,
    /// Adjacent channels sharing one kernel set (groups of this many consecutive channels, the
    /// last possibly shorter; the kernel uses the beam at the mean frequency of its channels).
    /// Default 1 (a kernel per channel). Cost in accuracy: the beam of channel ν is replaced by
    /// the group's, an error of about |∂A/∂ln ν| · |ν − ν̄|/ν̄ — for a pattern that scales as
    /// r ν, |r ∂A/∂r| · |ν − ν̄|/ν̄, largest (≈ 0.7 of the peak per unit relative frequency) near
    /// the half-power radius; so only channels much narrower than ε ν share kernels freely.
    pub max_channels_per_group: usize,
    /// Same meaning as [`crate::AProjectionParams::assume_identical_antennas`]. Default false.
    pub assume_identical_antennas: bool,
    /// Beam frequency for gridding. Default [`ConjugateFrequency::Same`] (grid = adjoint).
    pub conjugate: ConjugateFrequency,
    /// Largest total size of the kernel tables, bytes ([`kernel_table_bytes`]); construction
    /// is refused above it. Default 4 GiB.
    pub max_table_bytes: usize,
}

impl Default for KernelAProjectionParams {
    fn default() -> Self {
        Self {
            gridder: GridderParams::default(),
            oversampling: 16,
            interpolation: KernelInterpolation::Bilinear,
            max_channels_per_group: 1,
            assume_identical_antennas: false,
            conjugate: ConjugateFrequency::Same,
            max_table_bytes: 4 << 30,
        }
    }
}

/// The kernel tables a [`KernelAProjection`] would build, known before it builds them.
#[derive(Clone, Debug, PartialEq)]
pub struct KernelTableEstimate {
    /// Bytes of all tables (exactly what the operator allocates for them).
    pub bytes: usize,
    /// Number of tables: PA bins × channel groups × 2 hands, twice for wideband gridding.
    pub n_tables: usize,
    /// Smallest and largest kernel support S, cells.
    pub min_support: usize,
    /// Largest kernel support S, cells.
    pub max_support: usize,
}

/// A read-only view of one tabulated A-kernel K(t) (see [`KernelAProjection`]): samples on
/// the lattice t = k / O cells (k integer per axis) with |t| within the support.
#[derive(Clone, Copy, Debug)]
pub struct KernelView<'a> {
    table: &'a KernelTable,
}

impl KernelView<'_> {
    /// Support S (odd), cells.
    pub fn support(&self) -> usize {
        self.table.support
    }

    /// Oversampling O.
    pub fn oversampling(&self) -> usize {
        self.table.oversampling
    }

    /// K at t = (k_x / O, k_y / O) cells, as stored (single precision widened), or None when
    /// t lies outside the table (|t| beyond about S/2).
    pub fn value(&self, k_x: i64, k_y: i64) -> Option<num_complex::Complex64> {
        let t = self.table;
        let (o, h) = (t.oversampling as i64, (t.support / 2) as i64);
        // Entry (f, j) holds t · O = (j − h) O − (f − ⌊O/2⌋): find one with 0 ≤ j < S.
        let find = |k: i64| {
            (0..=o).find_map(|f| {
                let num = k + f - o / 2;
                let j = num.div_euclid(o) + h;
                (num.rem_euclid(o) == 0 && (0..t.support as i64).contains(&j))
                    .then_some((f as usize, j as usize))
            })
        };
        let ((fx, jx), (fy, jy)) = (find(k_x)?, find(k_y)?);
        let v = t.slice(fy, fx)[jy * t.support + jx];
        Some(num_complex::Complex64::new(v.re as f64, v.im as f64))
    }
}

/// Which beam a kernel set carries.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) enum Side {
    Forward,
    Gridding,
}

/// Everything about the kernels that is decided before the tables are filled.
#[derive(Clone, Debug)]
pub(crate) struct KernelLayout {
    pub n_bins: usize,
    pub group_of_channel: Vec<usize>,
    pub n_groups: usize,
    /// Beam frequency of every group, per side.
    pub forward_freqs: Vec<f64>,
    pub gridding_freqs: Vec<f64>,
    pub wideband: bool,
    /// (spec, period, support) per table, index ((side · bins + bin) · groups + group) · 2 +
    /// hand, side 1 only when wideband. Both hands of a (side, bin, group) share P and S.
    pub tables: Vec<(KernelSpec, usize, usize)>,
}

fn check_params(p: &KernelAProjectionParams) -> Result<(), ImagingError> {
    if !(1..=256).contains(&p.oversampling) {
        return Err(ImagingError::Parameter {
            name: "oversampling",
            value: p.oversampling.to_string(),
            why: "must be in 1..=256",
        });
    }
    if p.max_channels_per_group == 0 {
        return Err(ImagingError::Parameter {
            name: "max_channels_per_group",
            value: "0".into(),
            why: "must be at least 1",
        });
    }
    Ok(())
}

/// Gridding beam frequency per channel for a conjugate-frequency choice.
pub(crate) fn gridding_frequencies(
    conjugate: &ConjugateFrequency,
    freqs: &[f64],
) -> Result<Vec<f64>, ImagingError> {
    match conjugate {
        ConjugateFrequency::Same => Ok(freqs.to_vec()),
        ConjugateFrequency::Reciprocal { ref_freq_hz } => {
            if !(ref_freq_hz.is_finite() && *ref_freq_hz > 0.0) {
                return Err(ImagingError::Parameter {
                    name: "ConjugateFrequency::Reciprocal::ref_freq_hz",
                    value: ref_freq_hz.to_string(),
                    why: "must be finite and positive",
                });
            }
            Ok(freqs
                .iter()
                .map(|&f| super::reciprocal_conjugate_frequency(f, *ref_freq_hz))
                .collect())
        }
        ConjugateFrequency::PerChannel(v) => {
            if v.len() != freqs.len() || v.iter().any(|f| !(f.is_finite() && *f > 0.0)) {
                return Err(ImagingError::Parameter {
                    name: "ConjugateFrequency::PerChannel",
                    value: format!("{v:?}"),
                    why: "needs one finite, positive frequency per channel",
                });
            }
            Ok(v.clone())
        }
    }
}

impl KernelLayout {
    fn new<B: VoltageBeam + ?Sized>(
        plan: &GridPlan,
        beam: &B,
        n_bins: usize,
        freqs: &[f64],
        params: &KernelAProjectionParams,
    ) -> Result<Self, ImagingError> {
        check_params(params)?;
        if freqs.is_empty() || freqs.iter().any(|f| !(f.is_finite() && *f > 0.0)) {
            return Err(ImagingError::Parameter {
                name: "frequencies_hz",
                value: format!("{freqs:?}"),
                why: "needs at least one finite, positive frequency",
            });
        }
        if n_bins == 0 {
            return Err(ImagingError::Parameter {
                name: "n_pa_bins",
                value: "0".into(),
                why: "needs at least one PA bin",
            });
        }
        let grid_freqs = gridding_frequencies(&params.conjugate, freqs)?;
        let wideband = grid_freqs != freqs;
        let k = params.max_channels_per_group;
        let group_of_channel: Vec<usize> = (0..freqs.len()).map(|c| c / k).collect();
        let n_groups = freqs.len().div_ceil(k);
        let mean = |v: &[f64], g: usize| {
            let s = &v[g * k..((g + 1) * k).min(v.len())];
            s.iter().sum::<f64>() / s.len() as f64
        };
        let forward_freqs: Vec<f64> = (0..n_groups).map(|g| mean(freqs, g)).collect();
        let gridding_freqs: Vec<f64> = (0..n_groups).map(|g| mean(&grid_freqs, g)).collect();
        let sides: &[&[f64]] =
            if wideband { &[&forward_freqs, &gridding_freqs] } else { &[&forward_freqs] };
        let mut specs = Vec::new();
        for side_freqs in sides {
            for bin in 0..n_bins {
                for &freq_hz in side_freqs.iter() {
                    for pol in Pol::BOTH {
                        specs.push(KernelSpec { bin, freq_hz, pol });
                    }
                }
            }
        }
        let probed: Vec<(usize, usize)> =
            specs.par_iter().map(|&s| probe_support(plan, beam, s)).collect::<Result<_, _>>()?;
        let mut tables = Vec::with_capacity(specs.len());
        for (pair, specs) in probed.chunks(2).zip(specs.chunks(2)) {
            let period = pair[0].0.max(pair[1].0);
            let support = pair[0].1.max(pair[1].1);
            for &s in specs {
                tables.push((s, period, support));
            }
        }
        Ok(Self {
            n_bins,
            group_of_channel,
            n_groups,
            forward_freqs,
            gridding_freqs,
            wideband,
            tables,
        })
    }

    fn estimate(&self, oversampling: usize) -> KernelTableEstimate {
        let sup = self.tables.iter().map(|t| t.2);
        KernelTableEstimate {
            bytes: self.tables.iter().map(|t| table_bytes(oversampling, t.2)).sum(),
            n_tables: self.tables.len(),
            min_support: sup.clone().min().unwrap_or(0),
            max_support: sup.max().unwrap_or(0),
        }
    }

    /// Index of the table of (side, bin, group, hand).
    #[inline]
    pub fn index(&self, side: Side, bin: usize, group: usize, hand: usize) -> usize {
        let s = if side == Side::Gridding && self.wideband { 1 } else { 0 };
        ((s * self.n_bins + bin) * self.n_groups + group) * 2 + hand
    }
}

/// The memory the kernel tables of a [`KernelAProjection`] with these inputs will take, found
/// before any table is filled: every kernel's support is probed (one small FFT per kernel, at
/// half-cell spacing), and a table costs (O + 1)² S² · 8 bytes (single-precision complex). Print it before a run; the
/// constructor refuses plans above [`KernelAProjectionParams::max_table_bytes`]. To reduce
/// it: lower `oversampling`, widen the PA bins (fewer bins), or share kernels across channels
/// (`max_channels_per_group`).
pub fn kernel_table_bytes<B: VoltageBeam + ?Sized>(
    geometry: ImageGeometry,
    beam: &B,
    n_pa_bins: usize,
    frequencies_hz: &[f64],
    params: &KernelAProjectionParams,
) -> Result<KernelTableEstimate, ImagingError> {
    let plan = GridPlan::unfolded(geometry, &params.gridder, WRange::new(0.0, 0.0)?, false)?;
    let layout = KernelLayout::new(&plan, beam, n_pa_bins, frequencies_hz, params)?;
    Ok(layout.estimate(params.oversampling))
}

/// Time-dependent (and optionally wideband) A-projection with oversampled uv-domain kernels:
/// the same linear operator as [`crate::AProjection`] (same forward model, same conventions,
/// same inputs), computed by convolving each sample with its group's A-kernel on shared
/// w-stacking planes instead of applying the A-term on the pixel grid.
///
/// Forward model (`degrid`), per row (time t), channel ν and parallel hand p:
///
/// V = Σ_pixels I(l, m) · A_p(l, m; ν̄_g, b(t)) · exp(−2πi (u l + v m + w (n − 1)))
///
/// with A_p = |E_p|² of antenna 0 (identical antennas are checked as in
/// [`crate::AProjection`]), b = `bin_of_time[t]`, and ν̄_g the mean frequency of the channel's
/// group (ν itself with the default one channel per group). `grid` applies the kernels'
/// conjugates with the beam at the conjugate frequency (the exact adjoint with
/// [`ConjugateFrequency::Same`]).
///
/// How: each sample is spread with K(g − s) = FT(ψ̂ A)(g − s) (see the kernel tables' module:
/// the ES kernel convolved with the beam's uv transform, support S from ε) times the ES
/// weight of its w-plane; per w-plane one FFT per output image and the usual screen
/// (1/ψ̂ correction, divided also by the interpolation gain, times exp(±2πi w_p (n − 1 − c))).
/// The planes work with n − 1 shifted by c, half its most negative value over the field, which
/// about halves their number; each sample's value is multiplied by exp(+2πi w c) before
/// spreading and each prediction by exp(−2πi w c) (exact; see [`GridPlan`]). All PA bins,
/// channels and hands share the planes, so the FFT count is that of the plain gridder, and the
/// cost per sample is S² per plane it touches.
///
/// Accuracy: the kernels are read at the nearest or bilinearly interpolated lattice point of
/// spacing 1/O cells; this, not ε, sets the error. Measured against the direct beam sum (max
/// error over samples / max value, random sky over the main lobe): bilinear 6e-5 at O = 16 and
/// 1.5e-5 at O = 32 (falling as 1/O²), nearest 1.4e-2 at O = 16 (as 1/O). The tables are
/// stored in single precision (rounding 6e-8 of the peak); all sums are in f64.
///
/// Memory while running: besides the tables, gridding holds W + 1 padded grids per output image
/// (a sliding window over the w-planes, W = the ES support, 8 at ε = 1e-7, and the plane being
/// transformed) and degridding W per model image; outputs beyond 1 GiB of such grids are done
/// in further passes.
///
/// Parallelism and determinism: gridding splits the padded grid into bands of rows, each band
/// adding its samples in visibility order; degridding splits rows. Results are bitwise
/// independent of the number of rayon threads.
#[derive(Debug)]
pub struct KernelAProjection<'a, B: VoltageBeam + ?Sized> {
    pub(crate) plan: GridPlan,
    pub(crate) beam: &'a B,
    pub(crate) bin_of_time: Vec<usize>,
    pub(crate) frequencies_hz: Vec<f64>,
    pub(crate) params: KernelAProjectionParams,
    pub(crate) layout: Arc<KernelLayout>,
    pub(crate) tables: Arc<Vec<KernelTable>>,
    /// True for the [`KernelAProjection::forward_adjoint`] of a wideband operator.
    pub(crate) grid_with_forward: bool,
    /// Per-pixel real correction `[iy][ix]`: the plan's 1/(ψ̂_x ψ̂_y ψ̂_w) divided by the
    /// interpolation gain.
    pub(crate) correction: Vec<f64>,
    /// Padded grids reused between calls (shared by clones).
    pub(crate) pool: Arc<crate::grid_pool::GridPool>,
}

// Manual impl: a derive would demand `B: Clone`, but only the reference is copied.
impl<B: VoltageBeam + ?Sized> Clone for KernelAProjection<'_, B> {
    fn clone(&self) -> Self {
        Self {
            plan: self.plan.clone(),
            beam: self.beam,
            bin_of_time: self.bin_of_time.clone(),
            frequencies_hz: self.frequencies_hz.clone(),
            params: self.params.clone(),
            layout: self.layout.clone(),
            tables: self.tables.clone(),
            grid_with_forward: self.grid_with_forward,
            correction: self.correction.clone(),
            pool: self.pool.clone(),
        }
    }
}

impl<'a, B: VoltageBeam + ?Sized> KernelAProjection<'a, B> {
    /// Plan the operator for `geometry`, the imaging `beam` (tabulated out to
    /// [`crate::kernel_beam_half_width_rad`]), the map `bin_of_time` from every visibility time
    /// index to its PA bin (= the beam's time index), the channel frequencies (Hz) and the w
    /// range of the samples; fills every kernel table (refused above
    /// [`KernelAProjectionParams::max_table_bytes`]).
    pub fn new(
        geometry: ImageGeometry,
        beam: &'a B,
        bin_of_time: Vec<usize>,
        frequencies_hz: Vec<f64>,
        w_range: WRange,
        params: KernelAProjectionParams,
    ) -> Result<Self, ImagingError> {
        check_params(&params)?;
        // Shifted planes (about half as many; see `GridPlan`): the passes apply each sample's
        // phase factor (`Site::phasor`).
        let plan = GridPlan::unfolded(geometry, &params.gridder, w_range, true)?;
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
        let n_bins = bin_of_time.iter().max().map_or(0, |b| b + 1);
        let layout = KernelLayout::new(&plan, beam, n_bins, &frequencies_hz, &params)?;
        if !params.assume_identical_antennas {
            check_identical(beam, geometry, n_bins, &frequencies_hz)?;
        }
        let estimate = layout.estimate(params.oversampling);
        if estimate.bytes > params.max_table_bytes {
            return Err(ImagingError::Parameter {
                name: "max_table_bytes",
                value: format!(
                    "{} (the A-kernel tables need {} bytes: {} tables, support {}..={} cells, \
                     oversampling {})",
                    params.max_table_bytes,
                    estimate.bytes,
                    estimate.n_tables,
                    estimate.min_support,
                    estimate.max_support,
                    params.oversampling
                ),
                why: "the kernel tables exceed the memory cap; reduce `oversampling`, widen the \
                      PA bins (fewer bins) or share kernels across channels \
                      (`max_channels_per_group`)",
            });
        }
        let o = params.oversampling;
        let tables: Vec<KernelTable> = layout
            .tables
            .par_iter()
            .map(|&(spec, period, support)| build_table(&plan, beam, spec, period, support, o))
            .collect::<Result<_, _>>()?;
        let correction = interpolation_corrected(&plan, o, params.interpolation);
        Ok(Self {
            plan,
            beam,
            bin_of_time,
            frequencies_hz,
            params,
            layout: Arc::new(layout),
            tables: Arc::new(tables),
            grid_with_forward: false,
            correction,
            pool: Arc::default(),
        })
    }

    /// Sizes of the kernel tables this operator holds (equal to [`kernel_table_bytes`] for the
    /// same inputs).
    pub fn table_estimate(&self) -> KernelTableEstimate {
        self.layout.estimate(self.params.oversampling)
    }

    /// Bytes actually allocated for the kernel tables (the sum of their lengths).
    pub fn table_bytes_allocated(&self) -> usize {
        self.tables.iter().map(|t| t.data.len() * std::mem::size_of_val(&t.data[0])).sum()
    }

    /// Kernel support S (cells) of every table, in table order.
    pub fn supports(&self) -> Vec<usize> {
        self.tables.iter().map(|t| t.support).collect()
    }

    /// True when gridding uses a conjugate frequency different from ν (grid ≠ adjoint).
    pub fn is_wideband(&self) -> bool {
        self.layout.wideband && !self.grid_with_forward
    }

    /// Number of PA bins (largest entry of `bin_of_time` + 1).
    pub fn n_pa_bins(&self) -> usize {
        self.layout.n_bins
    }

    /// Number of channel groups (kernel sets along frequency).
    pub fn n_channel_groups(&self) -> usize {
        self.layout.n_groups
    }

    /// The parameters the operator was planned with.
    pub fn params(&self) -> &KernelAProjectionParams {
        &self.params
    }

    /// The underlying exponential-of-semicircle plan (w planes, padded grid).
    pub fn grid_plan(&self) -> &GridPlan {
        &self.plan
    }

    /// The tabulated prediction kernel of PA bin `bin`, channel `channel` and receptor `pol`
    /// (None when the bin or channel is out of range).
    pub fn kernel_view(&self, bin: usize, channel: usize, pol: Pol) -> Option<KernelView<'_>> {
        if bin >= self.layout.n_bins || channel >= self.frequencies_hz.len() {
            return None;
        }
        let hand = if pol == Pol::R { 0 } else { 1 };
        let t = &self.tables
            [self.layout.index(Side::Forward, bin, self.layout.group_of_channel[channel], hand)];
        Some(KernelView { table: t })
    }

    /// The exact adjoint of this operator's `degrid`: the same tables, gridding with the
    /// forward kernels (identical to `self` for plain A-projection).
    pub fn forward_adjoint(&self) -> Self {
        Self { grid_with_forward: true, ..self.clone() }
    }

    /// Table index for a sample on `side`.
    #[inline]
    pub(crate) fn table_index(&self, side: Side, bin: usize, chan: usize, hand: usize) -> usize {
        let side = if self.grid_with_forward { Side::Forward } else { side };
        self.layout.index(side, bin, self.layout.group_of_channel[chan], hand)
    }

    /// PA bin of every row of `vis`, after checking channels and the time → bin map.
    pub(crate) fn bins_of_rows(&self, vis: &VisSet) -> Result<Vec<usize>, ImagingError> {
        if vis.frequencies_hz != self.frequencies_hz {
            return Err(ImagingError::Parameter {
                name: "vis.frequencies_hz",
                value: format!("{:?}", vis.frequencies_hz),
                why: "must equal the channels the A-projection was planned for",
            });
        }
        vis.time_index
            .iter()
            .map(|&t| {
                self.bin_of_time.get(t as usize).copied().ok_or(ImagingError::Parameter {
                    name: "bin_of_time",
                    value: format!("has {} entries, time index {t} used", self.bin_of_time.len()),
                    why: "must map every time index of the visibilities to a PA bin",
                })
            })
            .collect()
    }
}

/// sinc(x) = sin(πx)/(πx).
fn sinc(x: f64) -> f64 {
    if x == 0.0 {
        1.0
    } else {
        (PI_F * x).sin() / (PI_F * x)
    }
}
const PI_F: f64 = std::f64::consts::PI;

/// The plan's correction divided by the interpolation's mean gain along each axis: sinc(ξ/O)
/// for nearest-point lookup (a box of width 1/O), sinc²(ξ/O) for bilinear (a hat).
fn interpolation_corrected(plan: &GridPlan, o: usize, how: KernelInterpolation) -> Vec<f64> {
    let g = plan.geometry;
    let gain = |j: f64, pad: usize| {
        let s = sinc(j / pad as f64 / o as f64);
        match how {
            KernelInterpolation::Nearest => s,
            KernelInterpolation::Bilinear => s * s,
        }
    };
    let gx: Vec<f64> =
        (0..g.nx).map(|ix| gain(ix as f64 - (g.nx / 2) as f64, plan.pad_nx)).collect();
    let base = plan.inverse_correction.as_slice().expect("plan arrays are contiguous");
    base.iter()
        .enumerate()
        .map(|(k, &c)| {
            let (iy, ix) = (k / g.nx, k % g.nx);
            c / (gx[ix] * gain(iy as f64 - (g.ny / 2) as f64, plan.pad_ny))
        })
        .collect()
}
