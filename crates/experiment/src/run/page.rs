//! What the run's HTML page says: the runner decides the content, the report crate renders it.

use beamfloor_metrics::{source_table, summary_table, Table};
use beamfloor_report::{HtmlBlock, HtmlFigure, HtmlPage, HtmlSection};

use super::outputs::OutputContext;
use super::tables::{cell_text, short_number};

fn table_block(table: &Table, keep: &[&str]) -> HtmlBlock {
    let idx: Vec<usize> =
        keep.iter().filter_map(|k| table.columns.iter().position(|c| c == k)).collect();
    HtmlBlock::Table {
        columns: idx.iter().map(|&i| table.columns[i].replace('_', " ")).collect(),
        rows: table.rows.iter().map(|r| idx.iter().map(|&i| cell_text(&r[i])).collect()).collect(),
    }
}

/// The page of one run.
pub(crate) fn report_page(c: &OutputContext<'_>, resolved_toml: &str) -> HtmlPage {
    let config = c.config;
    let vis = c.vis;
    let (f_lo, f_hi) = (vis.frequencies_hz[0], vis.frequencies_hz[vis.frequencies_hz.len() - 1]);
    let lead = format!(
        "Experiment \"{}\": {} visibility rows × {} channels ({:.3}–{:.3} GHz) × {} correlations, \
         {} sky components, {} imaging strategies on a {}² image of {} arcsec cells. \
         Predicted thermal noise of the I0 image for these weights: σ_img = {} Jy/beam.",
        config.experiment.name,
        vis.n_rows(),
        vis.n_channels(),
        f_lo / 1e9,
        f_hi / 1e9,
        vis.n_correlations(),
        c.scenario.sky.len(),
        c.images.len(),
        c.geometry.nx,
        config.imaging.cell_arcsec,
        short_number(c.sigma_img),
    );
    let caution = HtmlBlock::Note(
        "These are simulations. The numbers below come from a model of the array, the beams and \
         the sky; they show which effects limit the image and by roughly how much, and they guide \
         the choice of a strategy, but they do not replace validation on real data."
            .into(),
    );
    let summary = summary_table(c.scores);
    let sources = source_table(c.scores);
    let mut sections = vec![HtmlSection {
        heading: "Read this first".into(),
        blocks: vec![
            caution,
            HtmlBlock::Paragraph(
                "The floor is the RMS of the Taylor-term-0 residual away from every source, \
                 measured before any primary-beam division, where the noise is flat; it is \
                 compared with the predicted thermal σ_img. A ratio near 1 means the strategy \
                 reached the noise; larger ratios measure the systematic floor it leaves. \
                 Restored images, spectral indices and the error image are in the sky frame \
                 (divided by the averaged beam's Taylor terms, blank below the cut-off)."
                    .into(),
            ),
        ],
    }];
    let mut summary_blocks = Vec::new();
    for (name, reason) in c.skipped {
        summary_blocks.push(HtmlBlock::Note(format!("Not run: {name} — {reason}")));
    }
    for note in c.images.iter().filter_map(super::strategy::stop_description) {
        summary_blocks.push(HtmlBlock::Note(note));
    }
    summary_blocks.push(table_block(
        &summary,
        &[
            "strategy",
            "peak_restored_jy_per_beam",
            "floor_rms_jy_per_beam",
            "thermal_sigma_jy_per_beam",
            "floor_over_thermal",
            "dynamic_range",
            "peak_residual_jy_per_beam",
            "error_rms_jy_per_beam",
            "error_peak_jy_per_beam",
        ],
    ));
    if let Some(q) = c.quick_estimate {
        summary_blocks.push(HtmlBlock::Paragraph(format!(
            "Quick estimate of the average-beam floor: imaging only the difference between the \
             noise-free visibilities seen through the true beams and through the averaged, \
             symmetrized beam (what an average beam cannot model), plus each source's apparent \
             spectrum minus its best fit by the strategy's Taylor terms, gives an off-source RMS of {} \
             Jy/beam (worst pixel {} Jy/beam), computed in {:.1} s without any deconvolution; \
             with the thermal noise added in quadrature the predicted floor is {} Jy/beam. \
             \"{}\" measured {} Jy/beam after CLEAN (predicted/measured = {}). CLEAN absorbs \
             part of the error that looks like sky, so the estimate can lie above the \
             measurement; a measured floor well above it means something else (the w-term for \
             plain gridding, the deconvolution) dominates that strategy's floor.",
            short_number(q.beam_error_rms_jy_per_beam),
            short_number(q.predicted_peak_error_jy_per_beam),
            q.seconds,
            short_number(q.predicted_floor_jy_per_beam),
            q.strategy,
            short_number(q.measured_floor_jy_per_beam),
            short_number(q.ratio()),
        )));
    }
    sections.push(HtmlSection { heading: "Summary per strategy".into(), blocks: summary_blocks });
    let truth_rows: Vec<Vec<String>> = c
        .truths
        .first()
        .map(|t| {
            t.0.iter()
                .map(|s| {
                    vec![
                        s.name.clone(),
                        short_number(s.l_rad.to_degrees() * 60.0),
                        short_number(s.m_rad.to_degrees() * 60.0),
                        short_number(s.flux_ref_jy),
                        short_number(s.alpha_power_law),
                        short_number(s.beta_power_law),
                        short_number(s.alpha_fit),
                        short_number(s.beta_fit),
                    ]
                })
                .collect()
        })
        .unwrap_or_default();
    sections.push(HtmlSection {
        heading: "Per source".into(),
        blocks: vec![
            HtmlBlock::Paragraph(
                "The truth: each source's own power law (α, β) and what a least-squares Taylor \
                 fit of the first strategy's order over the observed channels, with the imaging \
                 weights, recovers from it (the best a finite-order imager can do). Errors below \
                 are measured against the fitted values."
                    .into(),
            ),
            HtmlBlock::Table {
                columns: [
                    "source",
                    "l (arcmin)",
                    "m (arcmin)",
                    "flux at ν0 (Jy)",
                    "α power law",
                    "β power law",
                    "α fitted",
                    "β fitted",
                ]
                .iter()
                .map(|s| s.to_string())
                .collect(),
                rows: truth_rows,
            },
            table_block(
                &sources,
                &[
                    "strategy",
                    "source",
                    "true_flux_jy",
                    "restored_at_pixel_jy_per_beam",
                    "flux_error_fraction",
                    "max_abs_residual_near_jy_per_beam",
                    "alpha_measured",
                    "alpha_error_vs_fit",
                    "alpha_error_vs_power_law",
                ],
            ),
        ],
    });
    for (kind, what) in [
        ("restored", "Restored I0 in the sky frame, one colour scale for all strategies."),
        ("residual", "Residual I0 in the apparent frame (flat noise), shared linear scale."),
        ("error", "Restored I0 minus the truth convolved with the restoring beam, shared scale."),
    ] {
        sections.push(HtmlSection {
            heading: format!("Images: {kind}"),
            blocks: vec![
                HtmlBlock::Paragraph(what.into()),
                HtmlBlock::Figures(
                    c.images
                        .iter()
                        .map(|im| HtmlFigure {
                            src: format!("strategies/{}/{kind}.png", im.name),
                            caption: format!("{}: {kind}", im.name),
                        })
                        .collect(),
                ),
            ],
        });
    }
    let mut plots = vec![
        ("plots/floors.png", "Residual floor per strategy beside the predicted thermal noise."),
        ("plots/radial-rms.png", "Residual RMS in annuli about the phase centre."),
        ("plots/source-flux-errors.png", "Fractional flux error per source and strategy."),
        ("plots/uv-coverage.png", "uv-coverage of the observation."),
    ];
    if super::outputs::has_alpha_chart(c) {
        plots.push((
            "plots/source-alpha-errors.png",
            "Spectral-index error per source and strategy.",
        ));
    }
    if c.scenario.beam.is_some() {
        plots.push((
            "plots/beam-profile.png",
            "Primary-beam power P and its frequency sensitivity |ν ∂P/∂ν| along a radius at the \
             band edges and the reference frequency: the beam changes fastest with frequency \
             in its outer main lobe.",
        ));
    }
    let v_caption = c.stokes_v.map(|v| {
        format!(
            "Stokes V dirty image, (RR − LL)/2. The simulated sky is unpolarized, so all of it is \
             instrumental: where the two hands' beams differ (squint) a source appears circularly \
             polarized. Largest |V| = {} Jy/beam, {} of the largest |I| ({}).",
            short_number(v.peak_abs_jy_per_beam),
            short_number(v.leakage()),
            short_number(v.i_peak_abs_jy_per_beam),
        )
    });
    if let Some(caption) = &v_caption {
        plots.push(("plots/stokes-v-dirty.png", caption.as_str()));
    }
    sections.push(HtmlSection {
        heading: "Plots".into(),
        blocks: vec![HtmlBlock::Figures(
            plots
                .into_iter()
                .map(|(src, caption)| HtmlFigure { src: src.into(), caption: caption.into() })
                .collect(),
        )],
    });
    let mut files = vec![
        ("metrics.json".to_string(), "metrics.json — every number on this page".to_string()),
        ("metrics.csv".to_string(), "metrics.csv — summary per strategy".to_string()),
        ("sources.csv".to_string(), "sources.csv — per source and strategy".to_string()),
        (
            "manifest.json".to_string(),
            "manifest.json — version, hashes, seed, timings, memory".to_string(),
        ),
        (
            "config.resolved.toml".to_string(),
            "config.resolved.toml — the settings with every default".to_string(),
        ),
    ];
    if config.output.fits {
        for im in c.images {
            files.push((
                format!("strategies/{}/restored.fits", im.name),
                format!("{}: restored Taylor cube (FITS)", im.name),
            ));
        }
    }
    sections.push(HtmlSection { heading: "Files".into(), blocks: vec![HtmlBlock::Links(files)] });
    sections.push(HtmlSection {
        heading: "Settings".into(),
        blocks: vec![
            HtmlBlock::Paragraph(format!(
                "Truth hash {} · seed {} · visibilities {}.",
                config.truth_hash(),
                config.experiment.seed,
                if c.reused_visibilities {
                    "reused from an earlier run"
                } else {
                    "simulated in this run"
                }
            )),
            HtmlBlock::Preformatted(resolved_toml.to_string()),
        ],
    });
    HtmlPage { title: format!("beamfloor — {}", config.experiment.name), lead, sections }
}
