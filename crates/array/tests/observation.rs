//! Observation-level checks: row order and counts, uvw against a direct evaluation and against
//! the uv-track geometry of Thompson, Moran & Swenson (3rd ed., §4.2), coverage helpers.
use beamfloor_array::{
    enu_to_equatorial_xyz, random_disc, uvw_m, ArrayError, Layout, Observation, ObservationParams,
    RandomDiscParams, Timeline, TimelineParams, MAX_ROWS,
};
use beamfloor_core::SPEED_OF_LIGHT_M_PER_S;
use std::f64::consts::TAU;

fn params(layout: Layout, dec_deg: f64, hours: f64) -> ObservationParams {
    ObservationParams {
        layout,
        latitude_rad: (-27.5f64).to_radians(),
        phase_centre_ra_rad: 2.0,
        phase_centre_dec_rad: dec_deg.to_radians(),
        hour_angle_start_rad: -hours * TAU / 24.0,
        hour_angle_end_rad: hours * TAU / 24.0,
        integration_s: 120.0,
        band_min_hz: 0.9e9,
        band_max_hz: 1.8e9,
        n_channels: 6,
        elevation_limit_rad: 10f64.to_radians(),
    }
}

fn small_layout() -> Layout {
    let text = "# test array\n0 0 0\n250 0 1.5\n-40 310 -2\n600 -120 0.5\n35 -480 3\n";
    Layout::from_text(text, 20.0).unwrap()
}

fn obs_times(p: &ObservationParams) -> usize {
    let t = Timeline::new(&TimelineParams {
        hour_angle_start_rad: p.hour_angle_start_rad,
        hour_angle_end_rad: p.hour_angle_end_rad,
        integration_s: p.integration_s,
        declination_rad: p.phase_centre_dec_rad,
        latitude_rad: p.latitude_rad,
        elevation_limit_rad: p.elevation_limit_rad,
    });
    t.unwrap().len()
}

fn norm(v: [f64; 3]) -> f64 {
    (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt()
}

#[test]
fn rows_are_ordered_by_baseline_then_time_with_direct_uvw() {
    let obs = Observation::new(&params(small_layout(), -40.0, 5.0)).unwrap();
    let (n_ant, n_t) = (obs.n_antennas(), obs.n_times());
    assert_eq!(obs.n_baselines(), 10);
    assert_eq!(obs.n_rows(), 10 * n_t);
    assert_eq!(obs.n_visibilities(), obs.n_rows() * 6 * 2);
    let mut k = 0;
    for a1 in 0..n_ant {
        for a2 in a1 + 1..n_ant {
            let b = obs.baseline_index(a1, a2).unwrap();
            for t in 0..n_t {
                let row = obs.rows[k];
                assert_eq!((row.antenna1, row.antenna2, row.time_index), (a1, a2, t));
                assert_eq!(obs.row_index(a1, a2, t), Some(k));
                assert_eq!(b * n_t + t, k);
                assert_eq!(row.flagged, obs.timeline.flagged[t]);
                // Slow reference: rotate position(a2) − position(a1) directly by TMS eq. 4.1.
                let p1 = obs.antennas_enu_m[a1];
                let p2 = obs.antennas_enu_m[a2];
                let d = [p2[0] - p1[0], p2[1] - p1[1], p2[2] - p1[2]];
                let xyz = enu_to_equatorial_xyz(d, obs.latitude_rad);
                let expect = uvw_m(xyz, obs.timeline.hour_angles_rad[t], obs.phase_centre_dec_rad);
                for (got, want) in row.uvw_m.iter().zip(expect) {
                    // Same formula, possibly different operation order: rounding only.
                    assert!((got - want).abs() < 1e-10);
                }
                // A rotation preserves length: |uvw| = |baseline| (TMS §4.1). Values of a few
                // hundred metres, so 1e-10 m is rounding with a wide margin.
                assert!((norm(row.uvw_m) - norm(d)).abs() < 1e-10);
                k += 1;
            }
        }
    }
    let slice = obs.baseline_rows(1, 3).unwrap();
    assert_eq!(slice.len(), n_t);
    assert!(slice
        .iter()
        .enumerate()
        .all(|(t, r)| (r.antenna1, r.antenna2, r.time_index) == (1, 3, t)));
    assert_eq!(obs.baseline_rows(3, 1), None);
    assert_eq!(obs.baseline_index(3, 3), None);
    assert_eq!(obs.baseline_index(4, 2), None);
    assert_eq!(obs.row_index(0, 1, n_t), None);
}

#[test]
fn east_west_track_is_an_ellipse_with_axis_ratio_sin_dec() {
    // TMS §4.2: an east-west baseline of length L has (X, Y, Z) = (0, L, 0), so
    // u = L cos H, v = L sin δ sin H: the ellipse u²/L² + v²/(L sin δ)² = 1.
    let l = 800.0;
    let layout = Layout::new(vec![[0.0, 0.0, 0.0], [l, 0.0, 0.0]], 10.0).unwrap();
    for dec in [-75.0f64, -30.0, -5.0] {
        let obs = Observation::new(&params(layout.clone(), dec, 6.0)).unwrap();
        let s = dec.to_radians().sin();
        for r in &obs.rows {
            let [u, v, _] = r.uvw_m;
            let e = (u / l).powi(2) + (v / (l * s)).powi(2);
            assert!((e - 1.0).abs() < 1e-12, "dec {dec}: {e}");
        }
        // Least-squares fit of the axis ratio²: v² = a (L² − u²) → a = Σ v² g / Σ g², g = L² − u².
        let (mut num, mut den) = (0.0, 0.0);
        for r in &obs.rows {
            let g = l * l - r.uvw_m[0].powi(2);
            num += r.uvw_m[1].powi(2) * g;
            den += g * g;
        }
        let ratio = (num / den).sqrt();
        assert!((ratio - s.abs()).abs() < 1e-12, "dec {dec}: ratio {ratio}");
    }
}

#[test]
fn any_baseline_tracks_the_ellipse_of_tms_4_2() {
    // TMS §4.2, general baseline: u² + ((v − Z cos δ) / sin δ)² = X² + Y², an ellipse centred on
    // (0, Z cos δ) whose semi-axes are sqrt(X² + Y²) and sin δ times that.
    let obs = Observation::new(&params(small_layout(), -50.0, 5.0)).unwrap();
    let dec = obs.phase_centre_dec_rad;
    for r in &obs.rows {
        let p1 = obs.antennas_enu_m[r.antenna1];
        let p2 = obs.antennas_enu_m[r.antenna2];
        let d = [p2[0] - p1[0], p2[1] - p1[1], p2[2] - p1[2]];
        let [x, y, z] = enu_to_equatorial_xyz(d, obs.latitude_rad);
        let [u, v, _] = r.uvw_m;
        let lhs = u * u + ((v - z * dec.cos()) / dec.sin()).powi(2);
        // Values up to ~4e5 m²: 1e-8 relative is rounding with margin.
        assert!((lhs - (x * x + y * y)).abs() < 1e-8 * (x * x + y * y), "{lhs}");
    }
}

#[test]
fn coverage_helpers_agree_with_a_direct_scan() {
    // ±8 h at δ = −40°, φ = −27.5°: the ends of the track are below 10° elevation.
    let obs = Observation::new(&params(small_layout(), -40.0, 8.0)).unwrap();
    let f_top = *obs.channels.frequencies_hz.last().unwrap();
    let scale = f_top / SPEED_OF_LIGHT_M_PER_S;
    // Slow reference: all ordered pairs, both directions.
    let p = &obs.antennas_enu_m;
    let mut longest: f64 = 0.0;
    for a in 0..p.len() {
        for b in 0..p.len() {
            longest = longest.max(norm([p[a][0] - p[b][0], p[a][1] - p[b][1], p[a][2] - p[b][2]]));
        }
    }
    assert_eq!(obs.longest_baseline_m(), longest);
    assert!((obs.longest_baseline_wavelengths() - longest * scale).abs() < 1e-9);
    let max = obs.max_abs_uvw_wavelengths();
    let unflagged: Vec<_> = obs.rows.iter().filter(|r| !r.flagged).collect();
    assert!(unflagged.len() < obs.n_rows(), "the test wants some flagged rows");
    for (c, &got) in max.iter().enumerate() {
        let m = unflagged.iter().map(|r| r.uvw_m[c].abs()).fold(0.0, f64::max) * scale;
        assert_eq!(got, m);
        assert!(got <= obs.longest_baseline_wavelengths() * (1.0 + 1e-12));
    }
    let uv_max = obs.max_uv_distance_wavelengths();
    assert!(
        uv_max >= max[0].max(max[1])
            && uv_max <= obs.longest_baseline_wavelengths() * (1.0 + 1e-12)
    );

    let pts = obs.uv_coverage_klambda(2); // channels 0, 2, 4
    assert_eq!(pts.len(), unflagged.len() * 3 * 2);
    let r = unflagged[7];
    let f = obs.channels.frequencies_hz[2];
    let u = r.uvw_m[0] * f / SPEED_OF_LIGHT_M_PER_S / 1e3;
    let v = r.uvw_m[1] * f / SPEED_OF_LIGHT_M_PER_S / 1e3;
    // Same products in another order: agreement to a few ulp.
    let close = |a: [f64; 2], b: [f64; 2]| (a[0] - b[0]).abs() + (a[1] - b[1]).abs() < 1e-14;
    assert!(close(pts[(7 * 3 + 1) * 2], [u, v]));
    assert!(close(pts[(7 * 3 + 1) * 2 + 1], [-u, -v]));
    assert_eq!(obs.uv_coverage_klambda(0).len(), unflagged.len() * 6 * 2);
}

#[test]
fn observation_from_a_generated_layout_and_its_errors() {
    let layout = random_disc(
        &RandomDiscParams {
            n_antennas: 12,
            radius_m: 2000.0,
            min_spacing_m: 30.0,
            dish_diameter_m: 15.0,
            max_tries: RandomDiscParams::DEFAULT_MAX_TRIES,
        },
        99,
    )
    .unwrap();
    let obs = Observation::new(&params(layout.clone(), -60.0, 4.0)).unwrap();
    assert_eq!(obs.n_baselines(), 66);
    assert_eq!(obs.antennas_enu_m, layout.antennas_enu_m());
    // A declination that never clears 10° at latitude −27.5°: δ = +60° culminates at 2.5°.
    let e = Observation::new(&params(layout.clone(), 60.0, 4.0)).unwrap_err();
    match &e {
        ArrayError::NeverRises { max_elevation_rad, .. } => {
            assert!((max_elevation_rad.to_degrees() - 2.5).abs() < 1e-9)
        }
        other => panic!("unexpected {other:?}"),
    }
    assert!(e.to_string().contains("60.0000°") && e.to_string().contains("2.5000°"), "{e}");
    let mut p = params(layout.clone(), -60.0, 4.0);
    p.phase_centre_ra_rad = TAU;
    assert!(matches!(
        Observation::new(&p),
        Err(ArrayError::InvalidParameter { name: "phase_centre_ra_rad", .. })
    ));
    // 20 antennas (190 baselines) × 957 k samples of 0.03 s = 1.8e8 rows > MAX_ROWS.
    let line = Layout::new((0..20).map(|i| [30.0 * i as f64, 0.0, 0.0]).collect(), 20.0).unwrap();
    let mut p = params(line, -60.0, 4.0);
    p.integration_s = 0.03;
    match Observation::new(&p) {
        Err(ArrayError::InvalidCount { value, .. }) => {
            assert_eq!(value, 190 * obs_times(&p));
            assert!(value > MAX_ROWS);
        }
        other => panic!("unexpected {other:?}"),
    }
    let mut p = params(layout, -60.0, 4.0);
    p.band_max_hz = p.band_min_hz;
    assert!(matches!(Observation::new(&p), Err(ArrayError::Band { .. })));
}
