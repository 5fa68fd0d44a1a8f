//! End to end: a small wideband run (9 antennas, 2 h, 4 channels over 1–2 GHz, 128² image,
//! plain and w strategies, noise on) writes every promised file, a page whose every link
//! exists, parseable metrics, and the radiometer σ_img.

mod common;

use std::path::PathBuf;

use beamfloor_experiment::run::{run_experiment, RunObserver};
use beamfloor_experiment::{load_config, parse_config};
use beamfloor_predict::{stokes_i_image_noise_jy, unflagged_samples_per_correlation, NoiseModel};

struct Quiet;
impl RunObserver for Quiet {}

fn small_config_path() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/run_small.toml")
}

/// The folder a crosscheck export goes to (same rule as the other crates' export tests).
fn crosscheck_dir() -> PathBuf {
    std::env::var_os("BEAMFLOOR_CROSSCHECK_DIR").map(PathBuf::from).unwrap_or_else(|| {
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/crosscheck")
    })
}

#[test]
fn small_run_writes_a_complete_folder() {
    let path = small_config_path();
    let config = load_config(&path).unwrap_or_else(|e| panic!("{e}"));
    let out = crosscheck_dir().join("run_small");
    let _ = std::fs::remove_dir_all(&out);
    let summary =
        run_experiment(&config, Some(&path), &out, &mut Quiet).unwrap_or_else(|e| panic!("{e}"));
    assert!(!summary.reused_visibilities);

    for f in [
        "config.resolved.toml",
        "manifest.json",
        "metrics.json",
        "metrics.csv",
        "sources.csv",
        "radial.csv",
        "report.html",
        "visibilities/manifest.json",
        "plots/uv-coverage.png",
        "plots/beam-profile.png",
        "plots/floors.png",
        "plots/radial-rms.png",
        "plots/source-flux-errors.png",
        "plots/source-alpha-errors.png",
        "plots/stokes-v-dirty.png",
        "stokes-v-dirty.fits",
    ] {
        assert!(out.join(f).is_file(), "missing {f}");
    }
    for s in ["plain", "w"] {
        for f in [
            "restored.fits",
            "residual.fits",
            "model.fits",
            "psf.fits",
            "alpha.fits",
            "error.fits",
            "restored.png",
            "residual.png",
            "error.png",
        ] {
            assert!(out.join("strategies").join(s).join(f).is_file(), "missing {s}/{f}");
        }
    }

    // The page: well-formed enough to hold one html/body pair, no scripts or remote resources,
    // and every relative reference resolves inside the run folder.
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(html.starts_with("<!DOCTYPE html>") && html.trim_end().ends_with("</html>"));
    assert_eq!(html.matches("<body>").count(), 1);
    assert_eq!(html.matches("<table>").count(), html.matches("</table>").count());
    assert!(!html.contains("<script") && !html.contains("http://") && !html.contains("https://"));
    assert!(html.contains("simulations"), "the page must carry the caution");
    let refs = common::report_links::check_report_references(&out);
    assert!(refs.len() >= 10, "{refs:?}");
    // Every image the run folder holds is on the page.
    for s in ["plain", "w"] {
        for f in ["restored.png", "residual.png", "error.png"] {
            let r = format!("strategies/{s}/{f}");
            assert!(refs.contains(&r), "report.html does not show {r}: {refs:?}");
        }
    }

    // metrics.json parses and holds one summary row per strategy with a finite floor.
    let metrics: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("metrics.json")).unwrap()).unwrap();
    let rows = metrics["summary"].as_array().unwrap();
    assert_eq!(rows.len(), 2);
    for row in rows {
        assert!(row["floor_rms_jy_per_beam"].as_f64().unwrap() > 0.0);
    }
    let manifest: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("manifest.json")).unwrap()).unwrap();
    assert_eq!(manifest["truth_hash"], serde_json::json!(config.truth_hash()));
    assert_eq!(manifest["config_hash_sha256"].as_str().unwrap().len(), 64);

    // σ_img for natural weighting equals the radiometer check value of the predict crate,
    // σ / √(2 N) (Thompson, Moran & Swenson §6.2; both hands of Stokes I), to rounding.
    let vis = beamfloor_report::read_visset(&out.join("visibilities")).unwrap();
    let noise = NoiseModel {
        sefd_jy: config.noise.sefd_jy,
        correlator_efficiency: config.noise.efficiency,
    };
    let sigma = noise.sigma_jy(vis.channel_width_hz, vis.integration_s).unwrap();
    let expected = stokes_i_image_noise_jy(sigma, unflagged_samples_per_correlation(&vis));
    println!("σ_img runner {:.6e}, radiometer {:.6e}", summary.sigma_img_jy_per_beam, expected);
    // Sums of ~10³ equal terms in f64: relative error ~1e-13.
    assert!((summary.sigma_img_jy_per_beam / expected - 1.0).abs() < 1e-10);

    // Export for tests/crosscheck/test_run.py: the run folder and the phase centre (degrees).
    let fits: Vec<String> = ["plain", "w"]
        .iter()
        .flat_map(|s| {
            ["restored", "residual", "model", "psf", "alpha", "error"]
                .map(|k| format!("strategies/{s}/{k}.fits"))
        })
        .chain(["stokes-v-dirty.fits".to_string()])
        .collect();
    let export = serde_json::json!({
        "run_dir": out.canonicalize().unwrap(),
        "fits": fits,
        "phase_centre_ra_deg": vis.phase_centre_ra_rad.to_degrees(),
        "phase_centre_dec_deg": vis.phase_centre_dec_rad.to_degrees(),
        "cell_deg": config.imaging.cell_arcsec / 3600.0,
    });
    std::fs::write(crosscheck_dir().join("run_small.json"), export.to_string()).unwrap();

    // A second run into the same folder reuses the visibilities (same truth hash).
    let again = run_experiment(&config, Some(&path), &out, &mut Quiet).unwrap();
    assert!(again.reused_visibilities);
    assert_eq!(again.strategies[0].floor_jy_per_beam, summary.strategies[0].floor_jy_per_beam);
}

#[test]
fn a_projection_strategy_runs_beside_the_others_and_cube_is_refused() {
    let text = std::fs::read_to_string(small_config_path()).unwrap();
    let with_a =
        format!("{text}\n[[strategy]]\nname = \"ap\"\ngridding = \"a\"\npa_bin_deg = 10.0\n");
    let config = parse_config(&with_a, "with_a.toml").unwrap();
    let out = tempfile::tempdir().unwrap();
    let summary = run_experiment(&config, None, out.path(), &mut Quiet).unwrap();
    // Both sources sit inside the main lobe, where A-projection's CLEAN converges: it is imaged
    // and scored like the others, not skipped.
    assert!(summary.skipped.is_empty(), "{:?}", summary.skipped);
    let ap = summary.strategies.iter().find(|s| s.name == "ap").expect("ap imaged");
    println!("A-projection floor {:.4e} Jy/beam", ap.floor_jy_per_beam);
    assert!(ap.floor_jy_per_beam.is_finite() && ap.floor_jy_per_beam > 0.0);
    assert!(out.path().join("strategies/ap/restored.fits").is_file());

    let cube = text.replace("gridding = \"w\"", "gridding = \"w\"\nspectral = \"cube\"");
    let config = parse_config(&cube, "cube.toml").unwrap();
    let err = run_experiment(&config, None, out.path(), &mut Quiet).unwrap_err();
    assert!(err.is_bad_input() && err.to_string().contains("spectral"), "{err}");
}

/// The reference scanner itself, on a hand-written page with every quoting the HTML standard
/// allows, character references, srcset candidates and CSS urls.
#[test]
fn report_reference_scanner_reads_every_attribute_form() {
    let html = "<!DOCTYPE html><html><head><style>b { background: url('plots/a.png') }</style>\
                </head><body><a HREF='x y.html'>x</a><img src=plots/b.png alt=\"b\">\
                <img srcset=\"c.png 1x, d.png 2x\" src=\"e&amp;f.png\"><a href=\"#top\">t</a>\
                <p style=\"background:url(g.png)\">p</p></body></html>";
    let refs = common::report_links::references(html);
    assert_eq!(
        refs,
        ["x y.html", "plots/b.png", "c.png", "d.png", "e&f.png", "#top", "g.png", "plots/a.png"]
    );
}

/// The report check refuses what a browser offline could not show: a missing file, an empty
/// file, a file that is not the PNG it claims to be, a remote resource, a path out of the folder.
#[test]
fn report_reference_check_finds_every_kind_of_broken_link() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("empty.png"), b"").unwrap();
    std::fs::write(dir.path().join("text.png"), b"not an image").unwrap();
    std::fs::write(dir.path().join("ok.png"), b"\x89PNG\r\n\x1a\nrest").unwrap();
    std::fs::write(
        dir.path().join("report.html"),
        "<html><body><img src=\"ok.png\"><img src=\"missing.png\"><img src=\"empty.png\">\
         <img src=\"text.png\"><a href=\"https://example.org/x\">x</a>\
         <img src=\"../outside.png\"></body></html>",
    )
    .unwrap();
    let path = dir.path().to_path_buf();
    let panic = std::panic::catch_unwind(|| common::report_links::check_report_references(&path))
        .expect_err("a page with broken links must be refused");
    let message = panic.downcast_ref::<String>().cloned().unwrap_or_default();
    for expected in [
        "missing.png: No such file",
        "empty.png: empty file",
        "text.png: not a PNG file",
        "https://example.org/x: not a relative path",
        "../outside.png: leaves the run folder",
    ] {
        assert!(message.contains(expected), "`{expected}` not in: {message}");
    }
    assert!(!message.contains("ok.png"), "{message}");
}
