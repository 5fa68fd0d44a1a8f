//! Everything a run writes (through the report crate): images, quick-looks, plots, metrics,
//! manifest and the HTML page.

use std::path::{Path, PathBuf};
use std::time::Instant;

use beamfloor_core::ImageGeometry;
use beamfloor_metrics::{radial_table, source_table, summary_table, Scores, SourceTruth};
use beamfloor_predict::VisSet;
use beamfloor_report::{
    write_bar_chart, write_fits_cube, write_fits_image, write_image_png, write_line_plot,
    write_text_file, write_uv_coverage_png, AxisScale, BarChart, BrightnessUnit, ColourMap,
    ColourScale, CubeAxis, FitsImageMeta, ImagePngOptions, LinePlot, Series, Stretch,
};
use ndarray::{stack, Array2, Axis};
use serde_json::json;
use sha2::{Digest, Sha256};

use super::strategy::{BeamTaylor, StrategyImages};
use super::tables::{table_csv, table_json};
use super::RunError;
use crate::config::Config;
use crate::scenario::Scenario;

/// Everything the writers need.
pub(crate) struct OutputContext<'a> {
    pub config: &'a Config,
    pub config_path: Option<&'a Path>,
    pub out_dir: &'a Path,
    pub scenario: &'a Scenario,
    pub vis: &'a VisSet,
    pub geometry: ImageGeometry,
    pub sigma_img: f64,
    pub images: &'a [StrategyImages],
    pub scores: &'a [(String, Scores)],
    pub truths: &'a [(Vec<SourceTruth>, Array2<f64>, BeamTaylor)],
    pub reused_visibilities: bool,
    pub skipped: &'a [(String, String)],
    pub quick_estimate: Option<&'a super::QuickEstimate>,
    pub stokes_v: Option<&'a super::StokesV>,
}

fn mkdir(path: &Path) -> Result<(), RunError> {
    std::fs::create_dir_all(path)
        .map_err(|source| RunError::Io { path: path.to_path_buf(), source })
}

/// Writes every output the `[output]` switches ask for; returns the page's path if written.
/// The manifest is written last so that its timings include the outputs.
pub(crate) fn write_outputs(
    c: &OutputContext<'_>,
    timings: &mut Vec<(String, f64)>,
    run_start: Instant,
    outputs_start: Instant,
) -> Result<Option<PathBuf>, RunError> {
    let out = &c.config.output;
    let resolved = c.config.to_toml_string().unwrap_or_default();
    write_text_file(&c.out_dir.join("config.resolved.toml"), &resolved)?;
    let plots_dir = c.out_dir.join("plots");
    mkdir(&plots_dir)?;
    for im in c.images {
        mkdir(&strategy_dir(c.out_dir, &im.name))?;
    }
    if out.fits {
        for (im, truth) in c.images.iter().zip(c.truths) {
            write_strategy_fits(c, im, &truth.1)?;
        }
    }
    if let (true, Some(v)) = (out.fits, c.stokes_v) {
        let mut m = FitsImageMeta::new(
            c.geometry,
            c.vis.phase_centre_ra_rad,
            c.vis.phase_centre_dec_rad,
            BrightnessUnit::JyPerBeam,
            "Stokes V dirty image, (RR - LL)/2, apparent frame",
        );
        m.truth_hash = Some(c.config.truth_hash());
        m.seed = Some(c.config.experiment.seed);
        write_fits_image(&c.out_dir.join("stokes-v-dirty.fits"), v.image.view(), &m)?;
    }
    if out.png {
        write_quick_looks(c)?;
    }
    if out.plots {
        write_plots(c, &plots_dir)?;
    }
    if out.metrics {
        let summary = summary_table(c.scores);
        let sources = source_table(c.scores);
        let radial = radial_table(c.scores);
        let metrics = json!({
            "sigma_img_jy_per_beam": finite_or_null(c.sigma_img),
            "summary": table_json(&summary),
            "sources": table_json(&sources),
            "radial": table_json(&radial),
            "stokes_v_dirty": c.stokes_v.map(|v| json!({
                "peak_abs_v_jy_per_beam": finite_or_null(v.peak_abs_jy_per_beam),
                "peak_abs_i_jy_per_beam": finite_or_null(v.i_peak_abs_jy_per_beam),
                "peak_v_over_peak_i": finite_or_null(v.leakage()),
            })),
            "quick_estimate": c.quick_estimate.map(|q| json!({
                "strategy": q.strategy,
                "beam_error_rms_jy_per_beam": finite_or_null(q.beam_error_rms_jy_per_beam),
                "predicted_floor_jy_per_beam": finite_or_null(q.predicted_floor_jy_per_beam),
                "predicted_peak_error_jy_per_beam": finite_or_null(q.predicted_peak_error_jy_per_beam),
                "measured_floor_jy_per_beam": finite_or_null(q.measured_floor_jy_per_beam),
                "predicted_over_measured": finite_or_null(q.ratio()),
            })),
        });
        write_text_file(&c.out_dir.join("metrics.json"), &pretty(&metrics))?;
        write_text_file(&c.out_dir.join("metrics.csv"), &table_csv(&summary))?;
        write_text_file(&c.out_dir.join("sources.csv"), &table_csv(&sources))?;
        write_text_file(&c.out_dir.join("radial.csv"), &table_csv(&radial))?;
    }
    let html = if out.html {
        let path = c.out_dir.join("report.html");
        let page = super::page::report_page(c, &resolved);
        beamfloor_report::write_html(&path, &page)?;
        Some(path)
    } else {
        None
    };
    if let Some(last) = timings.last_mut() {
        last.1 = outputs_start.elapsed().as_secs_f64();
    }
    timings.push(("total".into(), run_start.elapsed().as_secs_f64()));
    let manifest = json!({
        "tool": "beamfloor",
        "tool_version": env!("CARGO_PKG_VERSION"),
        "config_file": c.config_path.map(|p| p.display().to_string()),
        "config_hash_sha256": hex(&Sha256::digest(resolved.as_bytes())),
        "truth_hash": c.config.truth_hash(),
        "seed": c.config.experiment.seed,
        "visibilities_reused": c.reused_visibilities,
        "timings_s": timings.iter().map(|(k, v)| json!({"stage": k, "seconds": v})).collect::<Vec<_>>(),
        "peak_memory_bytes": peak_memory_bytes(),
        "skipped_strategies": c.skipped.iter().map(|(n, r)| json!({"name": n, "reason": r})).collect::<Vec<_>>(),
        "strategies": c.images.iter().map(|im| json!({
            "name": im.name,
            "taylor_terms": im.n_terms,
            "major_cycles": im.cycles.len().saturating_sub(1),
            "stop": format!("{:?}", im.stop),
            "seconds": im.seconds,
        })).collect::<Vec<_>>(),
    });
    write_text_file(&c.out_dir.join("manifest.json"), &pretty(&manifest))?;
    Ok(html)
}

fn pretty(v: &serde_json::Value) -> String {
    serde_json::to_string_pretty(v).unwrap_or_default() + "\n"
}

fn finite_or_null(x: f64) -> serde_json::Value {
    if x.is_finite() {
        json!(x)
    } else {
        serde_json::Value::Null
    }
}

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

/// Peak resident memory of this process (VmHWM in /proc/self/status), bytes; None where the
/// file does not exist (not Linux).
fn peak_memory_bytes() -> Option<u64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb * 1024)
}

/// `strategies/<name>` under the run folder.
pub(crate) fn strategy_dir(out_dir: &Path, name: &str) -> PathBuf {
    out_dir.join("strategies").join(name)
}

fn meta(
    c: &OutputContext<'_>,
    im: &StrategyImages,
    geometry: ImageGeometry,
    unit: BrightnessUnit,
    object: &str,
) -> FitsImageMeta {
    let mut m = FitsImageMeta::new(
        geometry,
        c.vis.phase_centre_ra_rad,
        c.vis.phase_centre_dec_rad,
        unit,
        object,
    );
    m.restoring_beam = Some(beamfloor_report::RestoringBeam {
        major_rad: im.beam.major_fwhm_rad,
        minor_rad: im.beam.minor_fwhm_rad,
        position_angle_rad: im.beam.position_angle_rad,
    });
    m.strategy = Some(im.name.clone());
    m.truth_hash = Some(c.config.truth_hash());
    m.seed = Some(c.config.experiment.seed);
    m.history.push(format!(
        "beamfloor {} run of experiment {}",
        env!("CARGO_PKG_VERSION"),
        c.config.experiment.name
    ));
    m
}

fn cube(images: &[Array2<f64>]) -> ndarray::Array3<f64> {
    let views: Vec<_> = images.iter().map(|a| a.view()).collect();
    // Every Taylor image of one strategy has the same shape, so stacking cannot fail.
    stack(Axis(0), &views).unwrap_or_else(|_| ndarray::Array3::zeros((0, 0, 0)))
}

fn write_strategy_fits(
    c: &OutputContext<'_>,
    im: &StrategyImages,
    truth_i0: &Array2<f64>,
) -> Result<(), RunError> {
    let dir = strategy_dir(c.out_dir, &im.name);
    let axis = CubeAxis::Taylor {
        reference_frequency_hz: c.config.observation.reference_freq_ghz() * 1e9,
    };
    let g = c.geometry;
    write_fits_cube(
        &dir.join("restored.fits"),
        cube(&im.restored_sky).view(),
        axis,
        &meta(c, im, g, BrightnessUnit::JyPerBeam, "restored Taylor terms, sky frame"),
    )?;
    write_fits_cube(
        &dir.join("residual.fits"),
        cube(&im.residuals).view(),
        axis,
        &meta(c, im, g, BrightnessUnit::JyPerBeam, "residual Taylor terms, apparent frame"),
    )?;
    write_fits_cube(
        &dir.join("model.fits"),
        cube(&im.model).view(),
        axis,
        &meta(c, im, g, BrightnessUnit::JyPerPixel, "CLEAN model Taylor terms, apparent frame"),
    )?;
    write_fits_image(
        &dir.join("psf.fits"),
        im.psf.view(),
        &meta(c, im, im.psf_geometry, BrightnessUnit::Dimensionless, "PSF (Taylor term 0)"),
    )?;
    write_fits_image(
        &dir.join("error.fits"),
        (&im.restored_sky[0] - truth_i0).view(),
        &meta(c, im, g, BrightnessUnit::JyPerBeam, "restored I0 minus truth convolved"),
    )?;
    if let Some(alpha) = &im.alpha {
        write_fits_image(
            &dir.join("alpha.fits"),
            alpha.view(),
            &meta(c, im, g, BrightnessUnit::Dimensionless, "spectral index"),
        )?;
    }
    Ok(())
}

/// Restored, residual and error quick-looks, with one colour scale per kind shared by all
/// strategies so that the pictures compare at a glance.
fn write_quick_looks(c: &OutputContext<'_>) -> Result<(), RunError> {
    let restored: Vec<_> = c.images.iter().map(|im| im.restored_sky[0].view()).collect();
    let residual: Vec<_> = c.images.iter().map(|im| im.residuals[0].view()).collect();
    let errors: Vec<Array2<f64>> =
        c.images.iter().zip(c.truths).map(|(im, t)| &im.restored_sky[0] - &t.1).collect();
    let error_views: Vec<_> = errors.iter().map(|e| e.view()).collect();
    // asinh with a softening of a few σ shows the noise linearly and bright sources compressed.
    let soft = Stretch::Asinh { softening: (3.0 * c.sigma_img).max(1e-12) };
    let restored_scale = ColourScale::symmetric(&restored, soft)?;
    let residual_scale = ColourScale::symmetric(&residual, Stretch::Linear)?;
    let error_scale = ColourScale::symmetric(&error_views, soft)?;
    for (i, im) in c.images.iter().enumerate() {
        let dir = strategy_dir(c.out_dir, &im.name);
        let beam = Some(beamfloor_report::RestoringBeam {
            major_rad: im.beam.major_fwhm_rad,
            minor_rad: im.beam.minor_fwhm_rad,
            position_angle_rad: im.beam.position_angle_rad,
        });
        for (file, title, view, scale) in [
            ("restored.png", "restored I0 (sky frame)", restored[i], restored_scale),
            ("residual.png", "residual I0 (apparent frame)", residual[i], residual_scale),
            ("error.png", "restored − truth ⊗ beam (I0)", error_views[i], error_scale),
        ] {
            let mut options = ImagePngOptions::new(
                format!("{}: {title}", im.name),
                scale,
                ColourMap::Diverging,
                "Jy/beam",
            );
            options.beam = beam;
            write_image_png(&dir.join(file), view, &c.geometry, &options)?;
        }
    }
    Ok(())
}

/// Whether the spectral-index error chart has anything to draw on its log axis: some strategy
/// measured α (two or more Taylor terms) with a non-zero error.
pub(crate) fn has_alpha_chart(c: &OutputContext<'_>) -> bool {
    c.scores.iter().flat_map(|(_, s)| &s.sources).any(|src| {
        let e = src.alpha_error_vs_fit.abs();
        e.is_finite() && e > 0.0
    })
}

fn write_plots(c: &OutputContext<'_>, dir: &Path) -> Result<(), RunError> {
    write_uv_coverage_png(
        &dir.join("uv-coverage.png"),
        c.vis,
        &format!("uv-coverage: {}", c.config.experiment.name),
    )?;
    if let Some(beam) = &c.scenario.beam {
        let (hx, _) = c.geometry.half_field_rad();
        let r_max =
            (1.5 * hx).min(beam.max_radius_rad(*c.vis.frequencies_hz.last().unwrap_or(&1e9)));
        let freqs = [
            c.vis.frequencies_hz[0],
            c.scenario.ref_freq_hz,
            c.vis.frequencies_hz[c.vis.frequencies_hz.len() - 1],
        ];
        crate::pictures::beam_profile_plot(beam, &freqs, r_max, &dir.join("beam-profile.png"))
            .map_err(|e| RunError::Picture(Box::new(e)))?;
    }
    if let Some(v) = c.stokes_v {
        let view = v.image.view();
        let scale = ColourScale::symmetric(&[view], Stretch::Linear)?;
        let options = ImagePngOptions::new(
            "Stokes V dirty image (RR − LL)/2 of an unpolarized sky",
            scale,
            ColourMap::Diverging,
            "Jy/beam",
        );
        write_image_png(&dir.join("stokes-v-dirty.png"), view, &c.geometry, &options)?;
    }
    let mut bars: Vec<(String, f64)> =
        c.scores.iter().map(|(n, s)| (n.clone(), s.image.floor.rms_jy_per_beam)).collect();
    bars.push(("thermal σ_img (predicted)".into(), c.sigma_img));
    let mut floors = BarChart::new("residual floor per strategy", "off-source RMS (Jy/beam)", bars);
    floors.scale = AxisScale::Log;
    write_bar_chart(&dir.join("floors.png"), &floors)?;
    let source_bars = |f: &dyn Fn(&beamfloor_metrics::SourceScores) -> f64| -> Vec<(String, f64)> {
        c.scores
            .iter()
            .flat_map(|(n, s)| {
                s.sources.iter().map(move |src| (format!("{n}: {}", src.name), f(src)))
            })
            .collect()
    };
    let mut flux = BarChart::new(
        "per-source flux error (restored at the source pixel vs truth)",
        "|fractional error|",
        source_bars(&|s| s.flux_error_fraction.abs()),
    );
    flux.scale = AxisScale::Log;
    write_bar_chart(&dir.join("source-flux-errors.png"), &flux)?;
    if has_alpha_chart(c) {
        let mut alpha = BarChart::new(
            "per-source spectral-index error (vs the fitted truth)",
            "|α error|",
            source_bars(&|s| s.alpha_error_vs_fit.abs()),
        );
        alpha.scale = AxisScale::Log;
        write_bar_chart(&dir.join("source-alpha-errors.png"), &alpha)?;
    }
    let series = c
        .scores
        .iter()
        .map(|(n, s)| Series {
            name: n.clone(),
            points: s
                .residual_profile
                .iter()
                .map(|b| (b.r_mean_rad.to_degrees() * 60.0, b.rms_jy_per_beam))
                .collect(),
        })
        .collect();
    let mut radial =
        LinePlot::new("residual RMS against radius", "radius (arcmin)", "RMS (Jy/beam)");
    radial.series = series;
    radial.y_scale = AxisScale::Log;
    radial.markers = true;
    write_line_plot(&dir.join("radial-rms.png"), &radial)?;
    Ok(())
}
