//! A plain-text description of a resolved experiment, for `beamfloor check`.

use std::fmt::Write;

use beamfloor_array::Observation;

use crate::config::Config;

const ARCSEC_PER_RAD: f64 = 180.0 * 3600.0 / std::f64::consts::PI;

/// Bytes one visibility sample occupies in a visibility set: complex128 data, f64 weight, bool
/// flag, per polarization product.
const BYTES_PER_SAMPLE: u64 = 16 + 8 + 1;

/// Estimated bytes held by the visibility set of `observation` (data, weights, flags, uvw).
pub fn visibility_set_bytes(observation: &Observation) -> u64 {
    let samples = observation.n_visibilities() as u64;
    samples * BYTES_PER_SAMPLE + observation.n_rows() as u64 * (3 * 8 + 3 * 4)
}

/// Estimated bytes of the imaging state of one multi-term strategy: the upsampled complex grid
/// (16 bytes a cell) for each of the N residual and 2N − 1 PSF products gridded in one pass, plus
/// N model, N residual and 2N − 1 PSF images (8 bytes a pixel) and a few work images.
pub fn imaging_bytes(image_size_px: u64, grid_upsampling: f64, taylor_terms: u64) -> u64 {
    let grid = (image_size_px as f64 * grid_upsampling).ceil() as u64;
    let products = taylor_terms + 2 * taylor_terms - 1;
    let grids = products * grid * grid * 16;
    let images = (products + taylor_terms + 4) * image_size_px * image_size_px * 8;
    grids + images
}

/// The largest cell (rad) that still samples the longest projected baseline at the top of the
/// band: Δθ ≤ 1 / (2 |u|max) (Nyquist; common practice images at 3–5 cells per beam).
pub fn nyquist_cell_rad(observation: &Observation) -> f64 {
    0.5 / observation.max_uv_distance_wavelengths()
}

/// What `beamfloor check` prints.
pub fn describe(config: &Config, observation: &Observation) -> String {
    let mut s = String::new();
    let obs = &config.observation;
    let flagged = observation.timeline.flagged.iter().filter(|f| **f).count();
    let (f_lo, f_hi) = observation.channels.band_edges_hz();
    let _ =
        writeln!(s, "experiment   {} (seed {})", config.experiment.name, config.experiment.seed);
    let _ = writeln!(s, "truth hash   {}", config.truth_hash());
    let _ = writeln!(
        s,
        "array        {} antennas, {} baselines, longest {:.1} m, latitude {:+.4}°",
        observation.n_antennas(),
        observation.n_baselines(),
        observation.longest_baseline_m(),
        config.array.latitude_deg
    );
    let _ = writeln!(
        s,
        "time         {} samples of {} s over hour angle {:+.2} h to {:+.2} h ({} below the {}° elevation limit, flagged)",
        observation.n_times(),
        obs.integration_s,
        obs.hour_angle_start_h,
        obs.hour_angle_end_h,
        flagged,
        obs.elevation_limit_deg
    );
    let _ = writeln!(
        s,
        "band         {:.4}–{:.4} GHz in {} channels of {:.3} MHz, reference {:.4} GHz",
        f_lo / 1e9,
        f_hi / 1e9,
        observation.n_channels(),
        observation.channels.width_hz / 1e6,
        obs.reference_freq_ghz()
    );
    let _ = writeln!(
        s,
        "data         {} rows, {} visibilities (2 parallel hands), about {:.1} MiB",
        observation.n_rows(),
        observation.n_visibilities(),
        visibility_set_bytes(observation) as f64 / 1048576.0
    );
    let _ = writeln!(s, "sky          {} sources", config.sky.source.len());
    let nyquist_arcsec = nyquist_cell_rad(observation) * ARCSEC_PER_RAD;
    let im = &config.imaging;
    let field_deg = im.image_size_px as f64 * im.cell_arcsec / 3600.0;
    let _ = writeln!(
        s,
        "image        {0}×{0} px of {1}″ ({2:.2}° across); the longest baseline needs cells ≤ {3:.2}″",
        im.image_size_px, im.cell_arcsec, field_deg, nyquist_arcsec
    );
    for strategy in &config.strategy {
        let terms = strategy.taylor_terms() as u64;
        let bytes = imaging_bytes(im.image_size_px as u64, im.grid_upsampling, terms);
        let _ = writeln!(
            s,
            "strategy     {:<20} gridding {:?}, spectral {:?}, {} Taylor term(s), imaging ≈ {:.0} MiB",
            strategy.name,
            strategy.gridding,
            strategy.spectral,
            terms,
            bytes as f64 / 1048576.0
        );
    }
    s
}
