//! Values for the Python cross-checks in tests/crosscheck/test_beam.py (scipy Airy/Bessel
//! patterns, pyerfa parallactic angles, numpy least-squares polynomial fits).

use beamfloor_beam::{
    ApertureParams, ApertureSamples, DishBeam, DishBeamParams, EffectParams, FeedLegs, Mount,
    PointingParams, Taper,
};
use beamfloor_core::{
    derive_seed, ImageGeometry, Pol, SeedPurpose, VoltageBeam, SPEED_OF_LIGHT_M_PER_S,
};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde_json::json;
use std::f64::consts::PI;
use std::path::PathBuf;

mod common;
use common::{find_peak, parallactic_angle};

const C: f64 = SPEED_OF_LIGHT_M_PER_S;

fn export_dir() -> PathBuf {
    std::env::var_os("BEAMFLOOR_CROSSCHECK_DIR").map(PathBuf::from).unwrap_or_else(|| {
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/crosscheck")
    })
}

fn write(name: &str, value: serde_json::Value) {
    let dir = export_dir();
    std::fs::create_dir_all(&dir).expect("create export dir");
    std::fs::write(dir.join(format!("{name}.json")), value.to_string()).expect("write export");
}

/// Aperture sampling used for the comparison with continuous (Bessel-function) patterns.
const SAMPLES_ACROSS: usize = 512;
const SUPERSAMPLING: usize = 8;

fn static_beam(aperture: ApertureParams, max_abs_lm: f64) -> DishBeam {
    let params = DishBeamParams {
        aperture,
        effects: EffectParams { mount: Mount::Equatorial, ..EffectParams::default() },
        max_abs_lm,
        ref_freq_hz: 1.5e9,
        max_freq_hz: 1.5e9,
        ..DishBeamParams::default()
    };
    DishBeam::new(&params, vec![0.0], vec![0.0]).expect("beam")
}

#[test]
fn export_bessel_patterns() {
    // Profiles of E along two directions for the uniform disc, the disc with a 0.2 central
    // blockage, and the (1 − r²) taper, as functions of x-axis radius in units of λ/D; Python
    // compares with 2J1(x)/x, the blocked Airy formula and 8 J2(x)/x² (scipy.special).
    let d = 12.0;
    let f = 1.5e9;
    let lod = C / f / d;
    let u: Vec<f64> = (0..=1500).map(|i| i as f64 * 0.002).collect();
    let radii: Vec<f64> = u.iter().map(|x| x * lod).collect();
    let base = ApertureParams {
        samples_across: SAMPLES_ACROSS,
        supersampling: SUPERSAMPLING,
        ..ApertureParams::uniform_disc(d)
    };
    let cases = [
        ("uniform", base),
        ("blocked_0.2", ApertureParams { blockage_diameter_m: 0.2 * d, ..base }),
        (
            "taper_1_minus_r2",
            ApertureParams {
                taper: Taper::ParabolicOnPedestal {
                    edge_taper_db_x: f64::INFINITY,
                    edge_taper_db_y: f64::INFINITY,
                },
                ..base
            },
        ),
    ];
    let mut out = serde_json::Map::new();
    for (name, ap) in cases {
        let b = static_beam(ap, 3.2 * lod / std::f64::consts::SQRT_2);
        let mut dirs = Vec::new();
        for pa in [0.3f64, 1.1] {
            let (s, c) = pa.sin_cos();
            let field: Vec<f64> =
                radii.iter().map(|&r| b.voltage(0, 0, f, Pol::R, r * s, r * c).re).collect();
            let imag: f64 = radii
                .iter()
                .map(|&r| b.voltage(0, 0, f, Pol::R, r * s, r * c).im.abs())
                .fold(0.0, f64::max);
            let prof = b.radial_profile(f, &radii, pa).expect("profile");
            dirs.push(json!({
                "position_angle_rad": pa,
                "field": field,
                "max_abs_imag": imag,
                "nu_dp_dnu": prof.nu_dp_dnu,
            }));
        }
        let hp = b.half_power_width_rad(f) / lod;
        let r10 = b.power_level_radius_rad(f, 0.1).expect("10% radius") / lod;
        out.insert(
            name.to_string(),
            json!({"directions": dirs, "hpbw_lambda_over_d": hp, "r10_lambda_over_d": r10}),
        );
    }
    write(
        "beam_bessel_patterns",
        json!({"radius_lambda_over_d": u, "samples_across": SAMPLES_ACROSS,
               "supersampling": SUPERSAMPLING, "cases": out}),
    );
}

#[test]
fn export_parallactic_angles() {
    // q from our formula for a spread of (H, δ, φ) and the sky position angle of the beam centre
    // of an alt-az antenna pointed one HPBW "up"; Python checks both against erfa.hd2pa.
    let cases: Vec<(f64, f64, f64)> = vec![
        (-3.0, -60.0, -30.0),
        (-1.0, 10.0, -30.0),
        (0.5, -45.0, -30.0),
        (2.5, 20.0, 35.0),
        (4.0, 60.0, 52.0),
        (-5.5, -10.0, 5.0),
    ];
    let rad: Vec<(f64, f64, f64)> =
        cases.iter().map(|&(h, d, p)| (h * PI / 12.0, d.to_radians(), p.to_radians())).collect();
    let q: Vec<f64> = rad.iter().map(|&(h, d, p)| parallactic_angle(h, d, p)).collect();
    let f = 1.4e9;
    let hpbw = 1.2 * C / f / 12.0;
    let params = DishBeamParams {
        aperture: ApertureParams {
            samples_across: 96,
            supersampling: 4,
            legs: FeedLegs { count: 0, ..FeedLegs::default() },
            ..ApertureParams::default()
        },
        effects: EffectParams {
            pointing: PointingParams { fixed_offset_rad: [0.0, hpbw], ..Default::default() },
            ..EffectParams::default()
        },
        max_abs_lm: 0.02,
        ..DishBeamParams::default()
    };
    let times = vec![0.0; q.len()];
    let b = DishBeam::new(&params, q.clone(), times).expect("beam");
    let peak_pa: Vec<f64> = (0..q.len())
        .map(|t| {
            let (l, m) = find_peak(|l, m| b.power(0, t, f, Pol::R, l, m), (0.0, 0.0), 2.0 * hpbw);
            l.atan2(m)
        })
        .collect();
    write(
        "beam_parallactic",
        json!({
            "hour_angle_rad": rad.iter().map(|c| c.0).collect::<Vec<_>>(),
            "dec_rad": rad.iter().map(|c| c.1).collect::<Vec<_>>(),
            "lat_rad": rad.iter().map(|c| c.2).collect::<Vec<_>>(),
            "q_rad": q,
            "beam_centre_pa_rad": peak_pa,
        }),
    );
}

#[test]
fn export_taylor_fit() {
    // Per-channel symmetrized power along one image row and our least-squares Taylor
    // coefficients; Python refits with numpy.polynomial.polynomial.polyfit.
    let params = DishBeamParams {
        aperture: ApertureParams {
            samples_across: 96,
            supersampling: 4,
            ..ApertureParams::default()
        },
        max_abs_lm: 0.03,
        ref_freq_hz: 1.5e9,
        max_freq_hz: 2.0e9,
        ..DishBeamParams::default()
    };
    let b = DishBeam::new(&params, vec![0.0], vec![0.0]).expect("beam");
    let freqs: Vec<f64> = (0..12).map(|i| 1.0e9 + i as f64 * 1.0e9 / 11.0).collect();
    let g = ImageGeometry::new(64, 1, 4e-4);
    let coeffs = b.average_power_taylor(&g, &freqs, 3).expect("taylor");
    let l: Vec<f64> = (0..64).map(|ix| g.lm_of_pixel(ix as f64, 0.0).0).collect();
    let power: Vec<Vec<f64>> = l
        .iter()
        .map(|&l| freqs.iter().map(|&f| b.symmetrized_power(l.abs(), f)).collect())
        .collect();
    let c: Vec<Vec<f64>> = coeffs.iter().map(|a| a.row(0).to_vec()).collect();
    write(
        "beam_taylor",
        json!({"freqs_hz": freqs, "ref_freq_hz": 1.5e9, "l": l, "power": power, "coefficients": c}),
    );
}

#[test]
fn measure_interpolation_error_default_table() {
    // The headline accuracy: default aperture (256 samples across, 8x8 sub-samples, 12 m dish
    // with blockage, 4 legs, 12 dB taper) made asymmetric (3 legs, elliptical taper) so the
    // pattern is complex; default table (16x Nyquist, 6-point Lagrange); coverage out to
    // |l|,|m| ≤ 0.05 at 2 GHz (well into the sidelobes). 4000 random points against the direct
    // aperture sum over the same samples. Requirement: ≤ 1e-7 of the peak.
    let ap = ApertureParams {
        legs: FeedLegs { count: 3, width_m: 0.3, first_angle_rad: 0.2 },
        taper: Taper::ParabolicOnPedestal { edge_taper_db_x: 10.0, edge_taper_db_y: 14.0 },
        ..ApertureParams::default()
    };
    let params =
        DishBeamParams { aperture: ap, max_abs_lm: 0.05, max_freq_hz: 2.0e9, ..Default::default() };
    let b = DishBeam::new(&params, vec![0.0], vec![0.0]).expect("beam");
    let samples = ApertureSamples::new(&ap).expect("samples");
    let p_max = 0.05 * 2.0e9 / C;
    let mut rng = ChaCha8Rng::seed_from_u64(derive_seed(3, SeedPurpose::Test, 0));
    let (mut worst, mut sum2) = (0.0f64, 0.0);
    let n = 4000;
    for _ in 0..n {
        let (p, q) = (rng.random_range(-p_max..p_max), rng.random_range(-p_max..p_max));
        let e = (b.table().value(p, q) - samples.direct_pattern(p, q)).norm();
        worst = worst.max(e);
        sum2 += e * e;
    }
    let rms = (sum2 / n as f64).sqrt();
    println!("interpolation vs direct sum: max {worst:e}, rms {rms:e} over {n} points");
    assert!(worst <= 1e-7, "max error {worst:e}");
    write(
        "beam_interpolation_error",
        json!({"max_abs_error": worst, "rms_error": rms, "points": n,
               "table_nodes_per_axis": b.table().nodes_per_axis()}),
    );
}
