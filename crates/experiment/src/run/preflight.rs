//! Preflight: the physical sanity of a valid config, checked against the observation it
//! describes before anything heavy runs, and the memory the run will need against the memory
//! this machine has.
//!
//! The checks, in order (each failure is a located config error naming the key to change, its
//! value and what would be valid):
//! 1. Memory: visibilities, imaging grids, images and PSFs (see [`MemoryEstimate`]) against
//!    `MemAvailable` of `/proc/meminfo`, from the config's counts alone, so that a run that
//!    cannot fit is refused before even the observation's rows are built. Once the observation
//!    exists (its parallactic angles set the PA bins), the A-kernel tables of every A-projection
//!    strategy are added from the imaging crate's own estimate ([`kernel_table_memory`]) and
//!    checked again, against the machine and against the operator's table cap.
//! 2. The track: at least one time sample must have the phase centre above the elevation limit.
//! 3. The cell against the longest projected baseline at the top of the band (Nyquist):
//!    Δθ ≤ 1 / (2 u_max) (Thompson, Moran & Swenson, §5.2: the image is the Fourier transform of
//!    a band-limited uv-plane; a cell above the bound folds the outer baselines over).
//! 4. The gridding kernel's footprint around the longest baseline against the padded grid:
//!    u_max Δθ + W / (2 N_pad) ≤ 1/2, with W the kernel support for `imaging.accuracy` and
//!    N_pad the padded grid (the smallest 2^a 3^b 5^c ≥ 2 N, as the imaging crate plans it);
//!    beyond it the kernel's taps wrap to the opposite side of the uv-plane.
//! 5. Every source inside the image, at least a margin of max(3 synthesized beams, 8 pixels)
//!    from its edge (a Gaussian's FWHM added), so that CLEAN sees it and the PSF patch around it
//!    is not cut by the image edge.

use std::fmt::Write;
use std::path::Path;

use beamfloor_array::{ArrayError, Observation};
use beamfloor_core::ImageGeometry;
use beamfloor_imaging::{good_fft_size, EsKernel, UPSAMPLING};
use beamfloor_sky::Shape;

use super::RunError;
use crate::config::{locate_problems, Config, Gridding, Layout, Problem, SourcePosition};
use crate::scenario::{Scenario, ScenarioError};

mod memory;

pub use memory::{
    estimate_memory, kernel_table_memory, KernelTableMemory, MemoryEstimate, StrategyMemory,
    ALLOCATOR_SHARE, PROBE_ALL_BINS_MAX_TABLES,
};
use memory::{kernel_tables_problem, memory_problem};

const ARCSEC_PER_RAD: f64 = 180.0 * 3600.0 / std::f64::consts::PI;
const ARCMIN_PER_RAD: f64 = ARCSEC_PER_RAD / 60.0;
const GIB: f64 = 1024.0 * 1024.0 * 1024.0;
/// Synthesized beams of margin between a source and the image edge.
const EDGE_MARGIN_BEAMS: f64 = 3.0;
/// Pixels of margin between a source and the image edge, at least.
const EDGE_MARGIN_PIXELS: f64 = 8.0;
/// The numbers a preflight found, for `beamfloor check` and the run's log.
#[derive(Debug, Clone)]
pub struct PreflightReport {
    /// Longest projected baseline of any unflagged sample at the top channel, wavelengths.
    pub max_uv_wavelengths: f64,
    /// The largest cell the longest baseline allows (Nyquist), arcsec.
    pub nyquist_cell_arcsec: f64,
    /// Pixels across the synthesized beam (≈ 1 / u_max) at the configured cell.
    pub pixels_per_beam: f64,
    /// Time samples above the elevation limit, of all.
    pub unflagged_times: (usize, usize),
    /// The memory estimate.
    pub memory: MemoryEstimate,
    /// `MemAvailable` of this machine, bytes (None where it cannot be read).
    pub available_memory_bytes: Option<u64>,
}

impl PreflightReport {
    /// A few lines for a terminal.
    pub fn describe(&self) -> String {
        let mut s = String::new();
        let m = &self.memory;
        let _ = writeln!(
            s,
            "sampling     longest baseline {:.3} kλ at the top channel: cells ≤ {:.3}″ (Nyquist); the synthesized beam is {:.1} pixels across",
            self.max_uv_wavelengths / 1e3,
            self.nyquist_cell_arcsec,
            self.pixels_per_beam
        );
        let _ = writeln!(
            s,
            "track        {} of {} time samples above the elevation limit",
            self.unflagged_times.0, self.unflagged_times.1
        );
        let _ = writeln!(
            s,
            "memory       about {:.2} GiB at peak ({:.2} GiB visibilities and working copies; largest strategy {:.2} GiB; grids counted for {} threads; {:.2} GiB allowance for the allocator){}",
            m.total_bytes as f64 / GIB,
            m.visibilities_bytes as f64 / GIB,
            m.strategies.iter().map(StrategyMemory::total_bytes).max().unwrap_or(0) as f64 / GIB,
            m.threads,
            m.allowance_bytes as f64 / GIB,
            match self.available_memory_bytes {
                Some(a) => format!(", {:.2} GiB available", a as f64 / GIB),
                None => String::new(),
            }
        );
        for part in &m.strategies {
            if let Some(t) = &part.kernel_tables {
                let _ = writeln!(
                    s,
                    "A-kernels    strategy \"{}\": {:.3} GiB of tables ({} tables on {} PA bins, supports {}..={} cells; the operator's cap is {:.2} GiB)",
                    part.name,
                    t.estimate.bytes as f64 / GIB,
                    t.estimate.n_tables,
                    t.n_pa_bins,
                    t.estimate.min_support,
                    t.estimate.max_support,
                    t.max_table_bytes as f64 / GIB
                );
            }
        }
        s
    }
}

/// A checked scenario: the config mapped onto the compute crates, and what the checks found.
pub struct Preflight {
    /// The scenario, ready to simulate.
    pub scenario: Scenario,
    /// The numbers behind the checks.
    pub report: PreflightReport,
}

/// Runs every preflight check of the module doc against this machine's available memory, and
/// returns the scenario it built on the way. Problems are [`RunError::Config`] (bad input),
/// located in the file at `config_path` (or, without one, in the resolved config's text).
pub fn preflight(config: &Config, config_path: Option<&Path>) -> Result<Preflight, RunError> {
    preflight_with_memory(config, config_path, available_memory_bytes())
}

/// [`preflight`] against `available_bytes` of memory (None: no memory check).
pub fn preflight_with_memory(
    config: &Config,
    config_path: Option<&Path>,
    available_bytes: Option<u64>,
) -> Result<Preflight, RunError> {
    let threads = rayon::current_num_threads();
    let antennas = antenna_count(config, config_path);
    let mut memory = estimate_memory(config, antennas, threads);
    if let Some(available) = available_bytes {
        if memory.total_bytes > available {
            return Err(located(
                config,
                config_path,
                &[memory_problem(config, &memory, available)],
            ));
        }
    }
    let scenario = match Scenario::build(config, config_path) {
        Ok(s) => s,
        Err(ScenarioError::Array {
            source: e @ ArrayError::AllSamplesBelowLimit { .. }, ..
        }) => {
            return Err(located(config, config_path, &[track_problem(config, &e)]));
        }
        Err(e) => return Err(e.into()),
    };
    // The A-kernel tables, now that the PA bins exist: against the operator's cap and against
    // what the machine has left beside everything else the run holds.
    let cell_rad = (config.imaging.cell_arcsec / 3600.0).to_radians();
    let n_px = config.imaging.image_size_px as usize;
    let geometry = ImageGeometry::new(n_px, n_px, cell_rad);
    for (index, strategy) in config.strategy.iter().enumerate() {
        if matches!(strategy.gridding, Gridding::A | Gridding::WidebandA) {
            let tables = kernel_table_memory(config, index, &scenario.observation, geometry)?;
            memory.strategies[index].kernel_tables_bytes =
                u64::try_from(tables.estimate.bytes).unwrap_or(u64::MAX);
            memory.strategies[index].kernel_tables = Some(tables);
        }
    }
    memory.update_total();
    let table_problems: Vec<Problem> = memory
        .strategies
        .iter()
        .enumerate()
        .filter_map(|(index, part)| {
            let tables = part.kernel_tables.as_ref()?;
            let rest = memory
                .visibilities_bytes
                .saturating_add(part.total_bytes() - part.kernel_tables_bytes);
            kernel_tables_problem(config, index, tables, rest, available_bytes)
        })
        .collect();
    let observation = &scenario.observation;
    let mut problems = table_problems;
    let u_max = observation.max_uv_distance_wavelengths();
    let nyquist_rad = if u_max > 0.0 { 0.5 / u_max } else { f64::INFINITY };
    if cell_rad > nyquist_rad {
        problems.push(nyquist_problem(config, observation, u_max, cell_rad));
    } else if let Some(p) = kernel_problem(config, u_max, cell_rad) {
        problems.push(p);
    }
    problems.extend(source_problems(config, &scenario, u_max, cell_rad));
    locate(config, config_path, &problems)?;
    let report = PreflightReport {
        max_uv_wavelengths: u_max,
        nyquist_cell_arcsec: nyquist_rad * ARCSEC_PER_RAD,
        pixels_per_beam: if u_max > 0.0 { 1.0 / (u_max * cell_rad) } else { f64::INFINITY },
        unflagged_times: (observation.timeline.n_unflagged(), observation.n_times()),
        memory,
        available_memory_bytes: available_bytes,
    };
    Ok(Preflight { scenario, report })
}

/// `MemAvailable` of `/proc/meminfo`, bytes: the memory the kernel can give a new process
/// without swapping. None where the file does not exist (not Linux) or lacks the line.
pub fn available_memory_bytes() -> Option<u64> {
    let text = std::fs::read_to_string("/proc/meminfo").ok()?;
    let line = text.lines().find(|l| l.starts_with("MemAvailable:"))?;
    let kib: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    kib.checked_mul(1024)
}

/// Antennas of the layout: from the generator's settings, or the data lines of a layout file
/// (None when it cannot be read; the scenario then reports the file).
fn antenna_count(config: &Config, config_path: Option<&Path>) -> Option<u64> {
    if let Some(n) = config.array.layout.antenna_count() {
        return Some(n);
    }
    let Layout::File(file) = &config.array.layout else { return None };
    let path = match config_path {
        Some(c) => crate::config::resolve_relative(c, file),
        None => file.clone(),
    };
    let text = std::fs::read_to_string(path).ok()?;
    let lines = text.lines().filter(|l| !l.split('#').next().unwrap_or("").trim().is_empty());
    Some(lines.count() as u64)
}

/// The error for `problems`, which must not be empty.
fn located(config: &Config, config_path: Option<&Path>, problems: &[Problem]) -> RunError {
    match locate(config, config_path, problems) {
        Err(e) => e,
        // Unreachable for a non-empty list; say what was refused rather than panic.
        Ok(()) => RunError::Config(Box::new(crate::config::ConfigError::Several(Vec::new()))),
    }
}

/// Locates `problems` in the config file's text, or in the resolved config's text.
fn locate(
    config: &Config,
    config_path: Option<&Path>,
    problems: &[Problem],
) -> Result<(), RunError> {
    if problems.is_empty() {
        return Ok(());
    }
    let from_file = config_path
        .and_then(|p| std::fs::read_to_string(p).ok().map(|text| (p.display().to_string(), text)));
    let (origin, text) = from_file.unwrap_or_else(|| {
        ("resolved config".to_string(), config.to_toml_string().unwrap_or_default())
    });
    locate_problems(&origin, &text, problems).map_err(|e| RunError::Config(Box::new(e)))
}

fn problem(key_path: impl Into<String>, value: impl ToString, allowed: String) -> Problem {
    Problem { key_path: key_path.into(), value: value.to_string(), allowed }
}

fn track_problem(config: &Config, e: &ArrayError) -> Problem {
    let o = &config.observation;
    let (phi, dec) = (config.array.latitude_deg.to_radians(), o.dec_deg.to_radians());
    // Elevation e at hour angle H: sin e = sin φ sin δ + cos φ cos δ cos H (Thompson, Moran &
    // Swenson, ch. 4); above the limit for |H| < H0 with cos H0 = (sin e_lim − sin φ sin δ) /
    // (cos φ cos δ).
    let cos_h0 = (o.elevation_limit_deg.to_radians().sin() - phi.sin() * dec.sin())
        / (phi.cos() * dec.cos());
    let window = if cos_h0 <= -1.0 {
        "at every hour angle".to_string()
    } else {
        format!(
            "only for hour angles within ±{:.2} h",
            cos_h0.clamp(-1.0, 1.0).acos().to_degrees() / 15.0
        )
    };
    let highest = match e {
        ArrayError::AllSamplesBelowLimit { max_sample_elevation_rad, .. } => {
            format!(" (the highest reaches {:.1} deg)", max_sample_elevation_rad.to_degrees())
        }
        _ => String::new(),
    };
    problem(
        "observation.hour_angle_start_h",
        o.hour_angle_start_h,
        format!(
            "every time sample of the track from hour angle {} h to {} h (one per {} s, at its centre) is below observation.elevation_limit_deg = {}{highest}, so every sample would be flagged; at latitude {} deg the phase centre (dec {} deg) is above the limit {window}: move the track there",
            o.hour_angle_start_h,
            o.hour_angle_end_h,
            o.integration_s,
            o.elevation_limit_deg,
            config.array.latitude_deg,
            o.dec_deg
        ),
    )
}

fn nyquist_problem(
    config: &Config,
    observation: &Observation,
    u_max: f64,
    cell_rad: f64,
) -> Problem {
    let beam_arcsec = ARCSEC_PER_RAD / u_max;
    problem(
        "imaging.cell_arcsec",
        config.imaging.cell_arcsec,
        format!(
            "undersamples the longest projected baseline, {:.3} kλ at {:.4} GHz (the top channel): the synthesized beam (≈ 1/u_max = {beam_arcsec:.2}″) would be only {:.2} pixels across; need cell_arcsec ≤ {:.3} (Nyquist, 1/(2 u_max)); 3 to 5 pixels across the beam is common practice",
            u_max / 1e3,
            observation.channels.highest_hz() / 1e9,
            1.0 / (u_max * cell_rad),
            0.5 * beam_arcsec
        ),
    )
}

fn kernel_problem(config: &Config, u_max: f64, cell_rad: f64) -> Option<Problem> {
    let kernel = EsKernel::for_epsilon(config.imaging.accuracy).ok()?;
    let w = kernel.support() as f64;
    let n = u64::from(config.imaging.image_size_px);
    let pad = good_fft_size((UPSAMPLING * n as f64).ceil() as usize) as f64;
    // In cells of the padded grid, the longest baseline sits at u_max Δθ N_pad from the centre
    // and its kernel reaches W/2 further; the grid's edge is N_pad / 2 away.
    let reach = u_max * cell_rad * pad + 0.5 * w;
    if reach <= 0.5 * pad {
        return None;
    }
    let fraction = u_max * cell_rad;
    let min_pad = w / (1.0 - 2.0 * fraction);
    let min_n = ((min_pad / UPSAMPLING / 2.0).ceil() as u64 * 2).max(16);
    let max_cell = (0.5 - 0.5 * w / pad) / u_max * ARCSEC_PER_RAD;
    Some(problem(
        "imaging.image_size_px",
        n,
        format!(
            "the gridding kernel ({w} cells wide for imaging.accuracy = {}) around the longest baseline reaches {reach:.1} cells from the centre of the {pad}-cell padded grid, beyond its edge at {}: its taps would wrap to the opposite side of the uv-plane; need image_size_px ≥ {min_n}, or cell_arcsec ≤ {max_cell:.3}, or a coarser imaging.accuracy",
            config.imaging.accuracy,
            0.5 * pad
        ),
    ))
}

fn source_problems(
    config: &Config,
    scenario: &Scenario,
    u_max: f64,
    cell_rad: f64,
) -> Vec<Problem> {
    let n = f64::from(config.imaging.image_size_px);
    // Pixel x runs from 0 to N − 1 with the centre at N/2: the field reaches (N/2 − 1) cells
    // on one side and N/2 on the other; the shorter side counts.
    let half = (0.5 * n - 1.0) * cell_rad;
    let beam = if u_max > 0.0 { 1.0 / u_max } else { 0.0 };
    let margin = (EDGE_MARGIN_BEAMS * beam).max(EDGE_MARGIN_PIXELS * cell_rad);
    let usable = half - margin;
    let mut problems = Vec::new();
    for (i, (component, source)) in scenario.sky.iter().zip(&config.sky.source).enumerate() {
        let extent = match &component.shape {
            Shape::Gaussian(g) => g.major_fwhm_rad,
            Shape::Point => 0.0,
        };
        let reach = component.l.abs().max(component.m.abs()) + extent;
        if reach <= usable {
            continue;
        }
        let key = match source.position {
            SourcePosition::Lm { l_arcmin, m_arcmin } => {
                if l_arcmin.abs() >= m_arcmin.abs() {
                    "l_arcmin"
                } else {
                    "m_arcmin"
                }
            }
            SourcePosition::RaDecOffset { .. } => "ra_offset_arcmin",
            SourcePosition::Radius { .. } => "radius_arcmin",
            SourcePosition::BeamPower { .. } => "beam_power",
        };
        let value = match source.position {
            SourcePosition::Lm { l_arcmin, m_arcmin } => {
                if key == "l_arcmin" {
                    l_arcmin
                } else {
                    m_arcmin
                }
            }
            SourcePosition::RaDecOffset { ra_offset_arcmin, .. } => ra_offset_arcmin,
            SourcePosition::Radius { radius_arcmin, .. } => radius_arcmin,
            SourcePosition::BeamPower { beam_power, .. } => beam_power,
        };
        // The image size that would hold it: N/2 − 1 cells ≥ reach + margin, N even.
        let need = ((reach + margin) / cell_rad + 1.0).ceil() as u64 * 2;
        problems.push(problem(
            format!("sky.source[{i}].{key}"),
            value,
            format!(
                "source `{}` at (l, m) = ({:.2}′, {:.2}′){} lies outside the image's usable field |l|, |m| ≤ {:.2}′ (imaging.image_size_px = {} of {}″, less a margin of {:.2}′ = max({EDGE_MARGIN_BEAMS} synthesized beams, {EDGE_MARGIN_PIXELS} pixels) at the edge): need image_size_px ≥ {need}, a larger cell_arcsec, or the source nearer the centre",
                source.name,
                component.l * ARCMIN_PER_RAD,
                component.m * ARCMIN_PER_RAD,
                if extent > 0.0 { format!(" with FWHM {:.2}′", extent * ARCMIN_PER_RAD) } else { String::new() },
                usable * ARCMIN_PER_RAD,
                config.imaging.image_size_px,
                config.imaging.cell_arcsec,
                margin * ARCMIN_PER_RAD,
            ),
        ));
    }
    problems
}
