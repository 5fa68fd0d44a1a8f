//! The memory a run will hold: counted from the config alone before anything is built, and the
//! A-kernel tables once the observation's parallactic-angle bins exist.

use std::fmt::Write;

use beamfloor_array::Observation;
use beamfloor_core::ImageGeometry;
use beamfloor_imaging::{
    kernel_table_bytes, ConjugateFrequency, EsKernel, KernelTableEstimate, UPSAMPLING,
};

use super::super::aproj::{a_operator_params, binned_imaging_beam, kernel_max_freq_hz};
use super::super::RunError;
use super::{problem, GIB};
use crate::config::{Config, Gridding, Problem};
use beamfloor_imaging::good_fft_size;

/// The kernel A-projection operator's budget for its window of w-plane grids per pass (its
/// `WINDOW_BYTES`): images beyond it are gridded in further passes.
const A_WINDOW_PASS_BYTES: f64 = (1u64 << 30) as f64;
/// Bytes per (row, channel) of the kernel operator's sample placement: the `Site` (two table
/// indices, corner, sub-offsets, fractions, support, w: 88 bytes), its plane span (16) and its
/// bucket entry (8).
const A_SITE_BYTES: f64 = 112.0;

/// Share of the counted memory added for what the allocator holds beyond the live arrays
/// (blocks freed by one imaging call and kept for the next, and the fragmentation between
/// them). Measured on the demo (`scripts/time_demo.sh`): 2.13-2.18 GiB of peak resident memory
/// in four runs against 1.88 GiB counted, +13-16 %; 20 % leaves a margin. With every large
/// block mapped and unmapped on its own (`GLIBC_TUNABLES=glibc.malloc.mmap_threshold=131072`)
/// the same run peaks at 1.96 GiB: most of the gap is the allocator's, about 4 % arrays that
/// the model does not count.
pub const ALLOCATOR_SHARE: f64 = 0.2;

/// `counted` bytes with the allocator allowance ([`ALLOCATOR_SHARE`]) on top.
fn with_allowance(counted: u64) -> u64 {
    (counted as f64 * (1.0 + ALLOCATOR_SHARE)) as u64
}

/// The counted bytes that fit in `available` once the allowance is on top (the inverse of
/// [`with_allowance`]).
fn within_allowance(available: u64) -> f64 {
    available as f64 / (1.0 + ALLOCATOR_SHARE)
}

/// What a run will hold in memory at its peak, bytes, by part.
///
/// Model (from how the runner and the imaging crate allocate): the visibility set (complex128
/// data, f64 weight, bool flag per sample and hand; uvw and indices per row) plus the runner's
/// working copies per sample — the imaging weights (f64), the weighted PSF values (complex128)
/// and the residual visibilities of a major cycle (two complex128); then, for the strategy that
/// needs most (strategies run one after another): its gridding memory, the PSFs and Taylor
/// images, and for A-projection the kernel tables (see [`StrategyMemory`]); on top of both, the
/// allocator allowance ([`ALLOCATOR_SHARE`]).
#[derive(Debug, Clone, PartialEq)]
pub struct MemoryEstimate {
    /// Rows (baselines × time samples), channels, and hands per sample.
    pub rows: u64,
    /// Channels.
    pub channels: u64,
    /// Visibility set and the runner's per-sample working copies, bytes.
    pub visibilities_bytes: u64,
    /// Per strategy: name, grids, images (incl. PSFs), A-kernel tables, bytes.
    pub strategies: Vec<StrategyMemory>,
    /// What the allocator holds beyond the counted arrays ([`ALLOCATOR_SHARE`] of them), bytes.
    pub allowance_bytes: u64,
    /// Visibilities plus the largest strategy, plus the allowance, bytes.
    pub total_bytes: u64,
    /// Rayon threads the grids are counted for.
    pub threads: usize,
}

impl MemoryEstimate {
    /// Recomputes `total_bytes` after a strategy's part changed.
    pub(super) fn update_total(&mut self) {
        let largest = self.strategies.iter().map(StrategyMemory::total_bytes).max().unwrap_or(0);
        let counted = self.visibilities_bytes.saturating_add(largest);
        self.total_bytes = with_allowance(counted);
        self.allowance_bytes = self.total_bytes.saturating_sub(counted);
    }
}

/// The imaging memory of one strategy, bytes.
///
/// - Grids: the larger of the spectral-PSF pass (one padded complex grid per output per rayon
///   thread, 2N − 1 outputs on a grid padded from twice the image size) and, for A-projection,
///   the kernel operator's working set while it grids or degrids the N Taylor images: a sliding
///   window of W + 1 padded complex grids per image (W the ES kernel support; images beyond 1 GiB
///   of such grids go in further passes) and the placement of every (row, channel) sample on
///   the kernel lattice (table indices, footprint corner, sub-offsets, fractions, support and
///   w-plane coordinate, with its plane span and bucket index: 112 bytes).
/// - Images: the PSFs and their scale-convolved copies for the minor cycle (L(L+1)/2 · (2N − 1)
///   PSF-sized images for L scales) and the Taylor images (model, residual, restored, primary-beam
///   corrected, spectral maps, truth and error images).
/// - Kernel tables (A-projection): the oversampled A-kernels, one per PA bin, channel and hand
///   (twice for wideband), (O + 1)² S² single-precision complex values each; they live from the
///   operator's construction to the end of the strategy. Known only once the observation's PA
///   bins and the kernels' supports are (see [`kernel_table_memory`]); 0 in the count-only
///   estimate of [`estimate_memory`].
#[derive(Debug, Clone, PartialEq)]
pub struct StrategyMemory {
    /// The strategy's name.
    pub name: String,
    /// Padded complex grids and per-sample working set of the largest gridding pass.
    pub grids_bytes: u64,
    /// PSFs, their scale-convolved copies, and the Taylor images.
    pub images_bytes: u64,
    /// A-kernel tables (0 for plain and w, and before they are estimated).
    pub kernel_tables_bytes: u64,
    /// The imaging crate's estimate behind `kernel_tables_bytes`, once made.
    pub kernel_tables: Option<KernelTableMemory>,
}

impl StrategyMemory {
    /// Everything this strategy holds.
    pub fn total_bytes(&self) -> u64 {
        self.grids_bytes.saturating_add(self.images_bytes).saturating_add(self.kernel_tables_bytes)
    }
}

/// The A-kernel tables of one A-projection strategy, as its operator will allocate them.
#[derive(Debug, Clone, PartialEq)]
pub struct KernelTableMemory {
    /// The imaging crate's estimate ([`beamfloor_imaging::kernel_table_bytes`]) for all PA bins.
    pub estimate: KernelTableEstimate,
    /// PA bins of the track at the strategy's `pa_bin_deg`.
    pub n_pa_bins: usize,
    /// Range of the (unwrapped) parallactic angle over the track, degrees.
    pub pa_range_deg: f64,
    /// True when the supports were probed for the first PA bin only and the table count scaled
    /// to all bins (more than [`PROBE_ALL_BINS_MAX_TABLES`] tables): a rotating beam keeps the
    /// same uv-footprint radius (the aperture's autocorrelation, D/λ), so every bin's kernels
    /// have the first bin's supports (checked in the tests).
    pub extrapolated: bool,
    /// The operator's cap on the tables, bytes (construction is refused above it).
    pub max_table_bytes: usize,
}

/// Above this many kernel tables the preflight probes the supports of the first PA bin only
/// (one small FFT per probed kernel) and scales the count to all bins.
pub const PROBE_ALL_BINS_MAX_TABLES: usize = 2048;

/// The memory a run of `config` needs (see [`MemoryEstimate`]), from the config's counts alone;
/// `antennas` is None when a layout file cannot be read (counted as 0 antennas).
pub fn estimate_memory(config: &Config, antennas: Option<u64>, threads: usize) -> MemoryEstimate {
    let a = antennas.unwrap_or(0);
    let times = config.observation.time_samples();
    let channels = u64::from(config.observation.channels);
    let rows = (a.saturating_mul(a.saturating_sub(1)) / 2).saturating_mul(times);
    let samples = rows.saturating_mul(channels).saturating_mul(2);
    // Set: 16 + 8 + 1 bytes per sample, uvw (3 f64) and three u32 indices per row. Working
    // copies: weights 8, PSF values 16, residual and predicted visibilities 2 × 16 per sample.
    let visibilities_bytes = samples
        .saturating_mul(25 + 8 + 16 + 32)
        .saturating_add(rows.saturating_mul(3 * 8 + 3 * 4 + 48));
    // Products of counts can pass 2^64 for absurd configs: count in f64, which saturates to
    // u64::MAX on the way back instead of wrapping.
    let n = f64::from(config.imaging.image_size_px);
    let pad = good_fft_size((UPSAMPLING * n).ceil() as usize) as f64;
    let pad_psf = good_fft_size((UPSAMPLING * 2.0 * n).ceil() as usize) as f64;
    let t = threads.max(1) as f64;
    let es_support =
        EsKernel::for_epsilon(config.imaging.accuracy).map_or(16.0, |k| k.support() as f64);
    let samples_per_hand = rows as f64 * channels as f64;
    let strategies = config
        .strategy
        .iter()
        .map(|s| {
            let terms = f64::from(s.taylor_terms());
            let psfs = 2.0 * terms - 1.0;
            let grids = (t * psfs * 16.0 * pad_psf * pad_psf).max(t * terms * 16.0 * pad * pad);
            let scales =
                s.scales_px.len().max(1) as f64 + f64::from(u8::from(!s.scales_px.contains(&0.0)));
            let psf_images = (1.0 + scales * (scales + 1.0) / 2.0) * psfs * 4.0 * n * n * 8.0;
            let taylor_images = (8.0 * terms + 8.0) * n * n * 8.0;
            let a_working_set = match s.gridding {
                Gridding::A | Gridding::WidebandA => {
                    // The kernel operator's sliding window of W + 1 padded grids per image while
                    // gridding (W while degridding), the N Taylor images per pass while they fit
                    // in 1 GiB, and its sample placement.
                    let window = (es_support + 1.0) * 16.0 * pad * pad;
                    let per_pass = (A_WINDOW_PASS_BYTES / window).floor().clamp(1.0, terms);
                    per_pass * window + samples_per_hand * A_SITE_BYTES
                }
                _ => 0.0,
            };
            StrategyMemory {
                name: s.name.clone(),
                grids_bytes: grids.max(a_working_set) as u64,
                images_bytes: (psf_images + taylor_images) as u64,
                kernel_tables_bytes: 0,
                kernel_tables: None,
            }
        })
        .collect::<Vec<_>>();
    let mut estimate = MemoryEstimate {
        rows,
        channels,
        visibilities_bytes,
        allowance_bytes: 0,
        total_bytes: 0,
        strategies,
        threads,
    };
    estimate.update_total();
    estimate
}

/// The A-kernel tables strategy `index` (gridding `"a"` or `"wideband-a"`) will allocate on
/// `observation`'s PA bins: the imaging beam built and binned as the runner builds it, the
/// operator's parameters from `run::aproj::a_operator_params`, and the imaging crate's
/// [`kernel_table_bytes`], which probes every kernel's support (one small FFT each) and counts
/// (O + 1)² S² · 8 bytes per table — exactly what the operator allocates. Above
/// [`PROBE_ALL_BINS_MAX_TABLES`] tables only the first PA bin is probed and its tables are
/// counted once per bin.
pub fn kernel_table_memory(
    config: &Config,
    index: usize,
    observation: &Observation,
    geometry: ImageGeometry,
) -> Result<KernelTableMemory, RunError> {
    let strategy = &config.strategy[index];
    let imaging = |source| RunError::Imaging { strategy: strategy.name.clone(), source };
    let freqs = &observation.channels.frequencies_hz;
    let max_freq_hz = kernel_max_freq_hz(config, index, freqs);
    let binned = binned_imaging_beam(config, index, observation, &geometry, max_freq_hz)?;
    let params = a_operator_params(config, index, &binned, freqs)?;
    let n_pa_bins = binned.bin_of_time.iter().max().map_or(0, |b| b + 1);
    let sides = if params.conjugate == ConjugateFrequency::Same { 1 } else { 2 };
    let per_bin = freqs.len().div_ceil(params.max_channels_per_group.max(1)) * 2 * sides;
    let extrapolated = n_pa_bins.saturating_mul(per_bin) > PROBE_ALL_BINS_MAX_TABLES;
    let estimate = if extrapolated {
        let one = kernel_table_bytes(geometry, &binned.beam, 1, freqs, &params).map_err(imaging)?;
        KernelTableEstimate {
            bytes: one.bytes.saturating_mul(n_pa_bins),
            n_tables: one.n_tables.saturating_mul(n_pa_bins),
            ..one
        }
    } else {
        kernel_table_bytes(geometry, &binned.beam, n_pa_bins, freqs, &params).map_err(imaging)?
    };
    Ok(KernelTableMemory {
        estimate,
        n_pa_bins,
        pa_range_deg: unwrapped_range_rad(&observation.timeline.parallactic_angles_rad)
            .to_degrees(),
        extrapolated,
        max_table_bytes: params.max_table_bytes,
    })
}

/// max − min of a sequence of angles unwrapped as [`super::parallactic_angle_bins`] unwraps
/// them (no step larger than π between neighbours), radians.
fn unwrapped_range_rad(angles: &[f64]) -> f64 {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    let mut prev: Option<f64> = None;
    for &q in angles {
        let q = match prev {
            Some(p) => {
                p + (q - p + std::f64::consts::PI).rem_euclid(std::f64::consts::TAU)
                    - std::f64::consts::PI
            }
            None => q,
        };
        lo = lo.min(q);
        hi = hi.max(q);
        prev = Some(q);
    }
    if hi >= lo {
        hi - lo
    } else {
        0.0
    }
}

pub(super) fn memory_problem(config: &Config, m: &MemoryEstimate, available: u64) -> Problem {
    let largest = m.strategies.iter().max_by_key(|s| s.total_bytes());
    let gib = |b: u64| b as f64 / GIB;
    let mut parts = format!(
        "visibilities {:.2} GiB ({} rows × {} channels × 2 hands, with working copies)",
        gib(m.visibilities_bytes),
        m.rows,
        m.channels
    );
    if let Some(s) = largest {
        let _ = write!(
            parts,
            "; strategy \"{}\" {:.2} GiB (grids {:.2} for {} threads, images and PSFs {:.2}, A-kernel tables {:.2})",
            s.name,
            gib(s.total_bytes()),
            gib(s.grids_bytes),
            m.threads,
            gib(s.images_bytes),
            gib(s.kernel_tables_bytes)
        );
    }
    let _ = write!(
        parts,
        "; {:.2} GiB allowance for the allocator ({:.0} % of the rest)",
        gib(m.allowance_bytes),
        100.0 * ALLOCATOR_SHARE
    );
    let imaging_dominates = largest.is_some_and(|s| s.total_bytes() >= m.visibilities_bytes);
    let (key, value, reduce) = if imaging_dominates {
        (
            "imaging.image_size_px",
            config.imaging.image_size_px.to_string(),
            "a smaller imaging.image_size_px (memory grows as its square), fewer Taylor terms or scales_px, or a wider pa_bin_deg",
        )
    } else {
        (
            "observation.integration_s",
            config.observation.integration_s.to_string(),
            "a longer observation.integration_s, fewer observation.channels or antennas, or a shorter track",
        )
    };
    problem(
        key,
        value,
        format!(
            "the run would need about {:.2} GiB ({parts}) but this machine has {:.2} GiB available (MemAvailable): reduce it with {reduce}",
            gib(m.total_bytes),
            gib(available)
        ),
    )
}

/// The refusal for kernel tables above the operator's cap or above what `available` bytes
/// leave beside `rest` (everything else the run holds while this strategy runs), the
/// allocator allowance counted on both; None when they fit. Names `pa_bin_deg` and
/// `kernel_oversampling`, their values, and the values at which the tables would fit (tables
/// scale with the PA-bin count and as (O + 1)²).
pub(super) fn kernel_tables_problem(
    config: &Config,
    index: usize,
    tables: &KernelTableMemory,
    rest: u64,
    available: Option<u64>,
) -> Option<Problem> {
    let strategy = &config.strategy[index];
    let bytes = tables.estimate.bytes as f64;
    let cap = tables.max_table_bytes as f64;
    let left = available.map(|a| (within_allowance(a) - rest as f64).max(0.0));
    let room = left.map_or(cap, |l| l.min(cap));
    if bytes <= room {
        return None;
    }
    let limit = if left.is_some_and(|l| l < cap) {
        let a = available.unwrap_or(0);
        format!(
            "this machine's {:.2} GiB available (MemAvailable; {:.2} GiB after the {:.0} % \
             allowance for the allocator) less {:.2} GiB for the rest of the run",
            a as f64 / GIB,
            within_allowance(a) / GIB,
            100.0 * ALLOCATOR_SHARE,
            rest as f64 / GIB
        )
    } else {
        format!("the A-projection operator's cap of {:.2} GiB on its kernel tables", cap / GIB)
    };
    let e = &tables.estimate;
    let bins = tables.n_pa_bins.max(1);
    let per_bin_tables = e.n_tables / bins;
    let sides = if strategy.gridding == Gridding::WidebandA { 2 } else { 1 };
    let o = strategy.kernel_oversampling as f64;
    // Tables ∝ (O + 1)²: the largest O whose tables fit.
    let o_fit = ((o + 1.0) * (room / bytes).sqrt()).floor() - 1.0;
    // Tables ∝ bins: n bins hold while ⌊range / width⌋ + 1 ≤ n, i.e. width > range / n.
    let bins_fit = (room / (bytes / bins as f64)).floor();
    let mut fits = Vec::new();
    if bins_fit >= 1.0 {
        let width = if bins_fit >= 2.0 {
            ((tables.pa_range_deg / (bins_fit - 1.0).max(1.0)) * 100.0).ceil() / 100.0
        } else {
            // One bin only: wider than the whole range.
            ((tables.pa_range_deg + 0.01) * 100.0).ceil() / 100.0
        };
        if width <= 90.0 {
            fits.push(format!(
                "strategy[{index}].pa_bin_deg ≥ {width} (at most {} PA bins)",
                bins_fit as u64
            ));
        }
    }
    if o_fit >= 1.0 {
        fits.push(format!("strategy[{index}].kernel_oversampling ≤ {}", o_fit as u64));
    }
    let fit_text = if fits.is_empty() {
        "not even one PA bin at kernel_oversampling = 1 fits: image a smaller field (the \
         kernels' support grows with image_size_px × cell_arcsec) or use fewer channels"
            .to_string()
    } else {
        format!("they would fit with {}", fits.join(", or "))
    };
    Some(problem(
        format!("strategy[{index}].pa_bin_deg"),
        strategy.pa_bin_deg,
        format!(
            "the A-kernel tables of strategy `{}` would take {:.2} GiB: {} tables ({} PA bins of \
             pa_bin_deg = {} over the track's {:.1}° of parallactic angle × {} per bin: {} \
             channels × 2 hands{}), each (O + 1)² S² × 8 bytes with \
             strategy[{index}].kernel_oversampling = {} and supports S of {}..={} cells{}; that \
             is more than {limit}: {fit_text}",
            strategy.name,
            bytes / GIB,
            e.n_tables,
            tables.n_pa_bins,
            strategy.pa_bin_deg,
            tables.pa_range_deg,
            per_bin_tables,
            per_bin_tables / (2 * sides),
            if sides == 2 { " × 2 beams (data and conjugate frequency)" } else { "" },
            strategy.kernel_oversampling,
            e.min_support,
            e.max_support,
            if tables.extrapolated { " (first bin probed, counted per bin)" } else { "" },
        ),
    ))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::parse_config;
    use crate::scenario::Scenario;
    use beamfloor_imaging::WRange;

    /// A non-circular, squinting alt-az dish (feed legs, an elliptical taper) on a 6 h track,
    /// four channels over a 2:1 band, imaged by A-projection and wideband A-projection.
    const KERNEL_CONFIG: &str = r#"
[experiment]
name = "kernel-memory"
seed = 5
[array]
latitude_deg = -30.0
[array.layout.random-disc]
count = 6
radius_m = 60.0
[observation]
dec_deg = -60.0
hour_angle_start_h = -3.0
hour_angle_end_h = 3.0
integration_s = 900.0
band_ghz = [1.0, 2.0]
channels = 4
[beam]
dish_diameter_m = 13.5
blockage_diameter_m = 1.5
squint_fraction_of_hpbw = 0.05
[beam.legs]
count = 4
width_m = 0.8
angle_deg = 45.0
[beam.taper.parabolic-on-pedestal]
edge_taper_db = 4.0
edge_taper_y_db = 16.0
[[sky.source]]
name = "a"
flux_jy = 1.0
l_arcmin = 10.0
m_arcmin = 0.0
[imaging]
image_size_px = 96
cell_arcsec = 60.0
[[strategy]]
name = "a"
gridding = "a"
pa_bin_deg = 20.0
kernel_oversampling = 8
[[strategy]]
name = "wideband"
gridding = "wideband-a"
pa_bin_deg = 30.0
kernel_oversampling = 4
conjugate_frequency = "scaling"
"#;

    /// The preflight's table estimate is what the runner's operator allocates, to the byte:
    /// both come from the same supports, probed by the same code (the imaging crate's
    /// `kernel_table_bytes`, whose equality with the allocation its own tests check), with the
    /// runner's beam, bins and parameters rebuilt here the runner's way. The first-bin
    /// extrapolation used for very many tables is checked against the all-bin probe: a turning
    /// beam keeps its uv-footprint radius (the aperture autocorrelation, D/λ), so the supports,
    /// and with them the bytes, are the same for every bin (margin 0; measured equal).
    #[test]
    fn kernel_table_estimate_matches_the_operators_allocation() {
        let config = parse_config(KERNEL_CONFIG, "test").unwrap();
        let scenario = Scenario::build(&config, None).unwrap();
        let observation = &scenario.observation;
        let n = config.imaging.image_size_px as usize;
        let geometry = ImageGeometry::new(n, n, (config.imaging.cell_arcsec / 3600.0).to_radians());
        let freqs = &observation.channels.frequencies_hz;
        for index in 0..config.strategy.len() {
            let tables = kernel_table_memory(&config, index, observation, geometry).unwrap();
            assert!(!tables.extrapolated);
            let max_freq = kernel_max_freq_hz(&config, index, freqs);
            let binned =
                binned_imaging_beam(&config, index, observation, &geometry, max_freq).unwrap();
            let operator = crate::run::build_a_operator(
                &config,
                index,
                geometry,
                WRange::new(0.0, 50.0).unwrap(),
                &binned,
                freqs,
            )
            .unwrap();
            let allocated = operator.table_bytes_allocated();
            let params = a_operator_params(&config, index, &binned, freqs).unwrap();
            let one_bin = kernel_table_bytes(geometry, &binned.beam, 1, freqs, &params).unwrap();
            println!(
                "{}: {} PA bins over {:.1}°, {} tables, supports {}..={}, estimate {} B, \
                 allocated {allocated} B, first bin × bins {} B",
                config.strategy[index].name,
                tables.n_pa_bins,
                tables.pa_range_deg,
                tables.estimate.n_tables,
                tables.estimate.min_support,
                tables.estimate.max_support,
                tables.estimate.bytes,
                one_bin.bytes * tables.n_pa_bins
            );
            assert!(tables.n_pa_bins >= 3, "the track must span several bins");
            assert_eq!(tables.estimate.bytes, allocated);
            assert_eq!(one_bin.bytes * tables.n_pa_bins, allocated);
            assert_eq!(one_bin.n_tables * tables.n_pa_bins, tables.estimate.n_tables);
        }
    }

    /// Angles crossing ±180° unwrap into one run (a source passing north of the zenith).
    #[test]
    fn parallactic_range_unwraps() {
        let deg = |d: f64| d.to_radians();
        let r = unwrapped_range_rad(&[deg(170.0), deg(179.0), deg(-175.0), deg(-160.0)]);
        assert!((r - deg(30.0)).abs() < 1e-12, "{}", r.to_degrees());
        assert_eq!(unwrapped_range_rad(&[]), 0.0);
    }
}
