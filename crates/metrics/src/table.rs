use crate::scores::Scores;

/// One table cell: text, a number (possibly NaN or infinite — writers decide how to show
/// those), or nothing (a value that does not apply, e.g. no thermal σ was given).
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    /// Text.
    Text(String),
    /// A number.
    Number(f64),
    /// No value.
    Empty,
}

impl From<Option<f64>> for Cell {
    fn from(v: Option<f64>) -> Self {
        v.map_or(Cell::Empty, Cell::Number)
    }
}

/// A table: column names and rows of cells, each row as long as `columns`.
#[derive(Debug, Clone, PartialEq)]
pub struct Table {
    /// Column names; numeric columns carry their unit in the name.
    pub columns: Vec<String>,
    /// Rows of cells.
    pub rows: Vec<Vec<Cell>>,
}

fn columns(names: &[&str]) -> Vec<String> {
    names.iter().map(|s| s.to_string()).collect()
}

fn num(x: f64) -> Cell {
    Cell::Number(x)
}

/// One row per strategy: peaks, floor statistics, dynamic range, thermal ratio, error image.
pub fn summary_table(results: &[(String, Scores)]) -> Table {
    let cols = columns(&[
        "strategy",
        "peak_restored_jy_per_beam",
        "peak_restored_l_rad",
        "peak_restored_m_rad",
        "peak_residual_jy_per_beam",
        "floor_rms_jy_per_beam",
        "floor_rms_mean_removed_jy_per_beam",
        "floor_mad_sigma_jy_per_beam",
        "floor_mean_jy_per_beam",
        "floor_pixels",
        "dynamic_range",
        "thermal_sigma_jy_per_beam",
        "floor_over_thermal",
        "error_rms_jy_per_beam",
        "error_peak_jy_per_beam",
        "error_rms_source_free_jy_per_beam",
    ]);
    let rows = results
        .iter()
        .map(|(name, s)| {
            let im = &s.image;
            let e = s.error.as_ref();
            vec![
                Cell::Text(name.clone()),
                num(im.restored_peak.value_jy_per_beam),
                num(im.restored_peak.l_rad),
                num(im.restored_peak.m_rad),
                num(im.residual_peak.value_jy_per_beam),
                num(im.floor.rms_jy_per_beam),
                num(im.floor.rms_mean_removed_jy_per_beam),
                num(im.floor.mad_sigma_jy_per_beam),
                num(im.floor.mean_jy_per_beam),
                num(im.floor.n_pixels as f64),
                num(im.dynamic_range),
                im.thermal_sigma_jy_per_beam.into(),
                im.floor_over_thermal.into(),
                e.map(|e| e.rms_jy_per_beam).into(),
                e.map(|e| e.peak.value_jy_per_beam).into(),
                e.map(|e| e.rms_source_free_jy_per_beam).into(),
            ]
        })
        .collect();
    Table { columns: cols, rows }
}

/// One row per (strategy, source): flux, residual and spectral errors.
pub fn source_table(results: &[(String, Scores)]) -> Table {
    let cols = columns(&[
        "strategy",
        "source",
        "l_rad",
        "m_rad",
        "true_flux_jy",
        "reference_jy_per_beam",
        "restored_at_pixel_jy_per_beam",
        "flux_error_fraction",
        "restored_peak_near_jy_per_beam",
        "restored_peak_offset_rad",
        "peak_flux_error_fraction",
        "max_abs_residual_near_jy_per_beam",
        "near_radius_rad",
        "alpha_measured",
        "alpha_error_vs_fit",
        "alpha_error_vs_power_law",
        "beta_measured",
        "beta_error_vs_fit",
        "beta_error_vs_power_law",
    ]);
    let mut rows = Vec::new();
    for (name, s) in results {
        for src in &s.sources {
            rows.push(vec![
                Cell::Text(name.clone()),
                Cell::Text(src.name.clone()),
                num(src.l_rad),
                num(src.m_rad),
                num(src.true_flux_jy),
                num(src.reference_jy_per_beam),
                num(src.restored_at_pixel_jy_per_beam),
                num(src.flux_error_fraction),
                num(src.restored_peak_near_jy_per_beam),
                num(src.restored_peak_offset_rad),
                num(src.peak_flux_error_fraction),
                num(src.max_abs_residual_near_jy_per_beam),
                num(src.near_radius_rad),
                num(src.alpha_measured),
                num(src.alpha_error_vs_fit),
                num(src.alpha_error_vs_power_law),
                num(src.beta_measured),
                num(src.beta_error_vs_fit),
                num(src.beta_error_vs_power_law),
            ]);
        }
    }
    Table { columns: cols, rows }
}

/// One row per (strategy, profile, annulus): the radial profiles, long format for plotting.
/// The `profile` column is `residual` (over the source-free mask) or `error` (over the valid
/// region).
pub fn radial_table(results: &[(String, Scores)]) -> Table {
    let cols = columns(&[
        "strategy",
        "profile",
        "r_inner_rad",
        "r_outer_rad",
        "r_mean_rad",
        "n_pixels",
        "mean_jy_per_beam",
        "rms_jy_per_beam",
    ]);
    let mut rows = Vec::new();
    for (name, s) in results {
        for (label, profile) in [("residual", &s.residual_profile), ("error", &s.error_profile)] {
            for b in profile {
                rows.push(vec![
                    Cell::Text(name.clone()),
                    Cell::Text(label.to_string()),
                    num(b.r_inner_rad),
                    num(b.r_outer_rad),
                    num(b.r_mean_rad),
                    num(b.n_pixels as f64),
                    num(b.mean_jy_per_beam),
                    num(b.rms_jy_per_beam),
                ]);
            }
        }
    }
    Table { columns: cols, rows }
}
