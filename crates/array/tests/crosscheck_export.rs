//! Exports values for the Python cross-checks in `tests/crosscheck/test_array.py`, which
//! recomputes them with pyerfa (the IAU SOFA routines `hd2pa`, `hd2ae`, `gmst82`) and numpy.
use beamfloor_array::{
    elevation, enu_to_equatorial_xyz, parallactic_angle, uvw_m, Channels, Timeline, TimelineParams,
    HOUR_ANGLE_RATE_RAD_PER_S, SIDEREAL_SECONDS_PER_SOLAR_SECOND,
};
use serde_json::{json, Value};
use std::path::PathBuf;

fn export_dir() -> PathBuf {
    std::env::var_os("BEAMFLOOR_CROSSCHECK_DIR").map(PathBuf::from).unwrap_or_else(|| {
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/crosscheck")
    })
}

fn write(name: &str, value: Value) {
    let dir = export_dir();
    std::fs::create_dir_all(&dir).expect("create export dir");
    std::fs::write(dir.join(format!("{name}.json")), value.to_string()).expect("write export");
}

/// Grid of (hour angle, declination, latitude) in radians covering both hemispheres, the
/// meridian, both sides of the pole and points near the horizon and the zenith.
fn grid() -> Vec<[f64; 3]> {
    let mut g = Vec::new();
    for ih in 0..=24 {
        let h = (-180.0 + 15.0 * ih as f64 + 0.37 * (ih % 3) as f64).to_radians();
        for &d in &[-89.5, -61.0, -30.0, -4.5, 0.0, 19.0, 44.0, 71.0, 89.5] {
            for &p in &[-80.0, -33.2, 0.0, 12.7, 52.0, 89.0] {
                g.push([h, f64::to_radians(d), f64::to_radians(p)]);
            }
        }
    }
    g
}

#[test]
fn export_angles() {
    let g = grid();
    let pa: Vec<f64> = g.iter().map(|&[h, d, p]| parallactic_angle(h, d, p)).collect();
    let el: Vec<f64> = g.iter().map(|&[h, d, p]| elevation(h, d, p)).collect();
    write(
        "array_angles",
        json!({
            "hour_angle_rad": g.iter().map(|x| x[0]).collect::<Vec<_>>(),
            "declination_rad": g.iter().map(|x| x[1]).collect::<Vec<_>>(),
            "latitude_rad": g.iter().map(|x| x[2]).collect::<Vec<_>>(),
            "parallactic_angle_rad": pa,
            "elevation_rad": el,
        }),
    );
}

#[test]
fn export_uvw() {
    // Baselines in ENU metres, including a vertical component, each at every grid point.
    let baselines: [[f64; 3]; 4] =
        [[850.0, 0.0, 0.0], [0.0, -1200.0, 0.0], [-310.5, 422.25, 17.0], [5.0, 3.0, -40.0]];
    let mut records = Vec::new();
    for &[h, d, p] in grid().iter().step_by(7) {
        for b in baselines {
            let uvw = uvw_m(enu_to_equatorial_xyz(b, p), h, d);
            records.push(json!({"enu_m": b, "ha": h, "dec": d, "lat": p, "uvw_m": uvw}));
        }
    }
    write("array_uvw", json!({ "records": records }));
}

#[test]
fn export_timeline_and_channels() {
    let params = TimelineParams {
        hour_angle_start_rad: (-100f64).to_radians(),
        hour_angle_end_rad: 95f64.to_radians(),
        integration_s: 300.0,
        declination_rad: (-20f64).to_radians(),
        latitude_rad: (-41.3f64).to_radians(),
        elevation_limit_rad: 12f64.to_radians(),
    };
    let t = Timeline::new(&params).expect("timeline");
    let c = Channels::from_band(0.95e9, 2.05e9, 11).expect("channels");
    write(
        "array_timeline",
        json!({
            "sidereal_seconds_per_solar_second": SIDEREAL_SECONDS_PER_SOLAR_SECOND,
            "hour_angle_rate_rad_per_s": HOUR_ANGLE_RATE_RAD_PER_S,
            "hour_angle_start_rad": params.hour_angle_start_rad,
            "hour_angle_end_rad": params.hour_angle_end_rad,
            "integration_s": params.integration_s,
            "declination_rad": params.declination_rad,
            "latitude_rad": params.latitude_rad,
            "elevation_limit_rad": params.elevation_limit_rad,
            "hour_angles_rad": t.hour_angles_rad,
            "times_s": t.times_s,
            "parallactic_angles_rad": t.parallactic_angles_rad,
            "elevations_rad": t.elevations_rad,
            "flagged": t.flagged,
            "band_hz": [0.95e9, 2.05e9],
            "frequencies_hz": c.frequencies_hz,
            "width_hz": c.width_hz,
        }),
    );
}
