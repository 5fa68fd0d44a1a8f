//! Exports values for the Python cross-checks in `tests/crosscheck` (scripts/test.sh runs both).
use beamfloor_core::taylor_weight;
use std::path::PathBuf;

fn export_dir() -> PathBuf {
    std::env::var_os("BEAMFLOOR_CROSSCHECK_DIR").map(PathBuf::from).unwrap_or_else(|| {
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target/crosscheck")
    })
}

#[test]
fn export_taylor_weights() {
    let freqs: Vec<f64> = (0..11).map(|i| 1.0e9 + 1.0e8 * i as f64).collect();
    let nu0 = 1.5e9;
    let rows: Vec<String> = (0..4)
        .map(|t| {
            let w: Vec<String> =
                freqs.iter().map(|&f| format!("{:e}", taylor_weight(f, nu0, t))).collect();
            format!("[{}]", w.join(","))
        })
        .collect();
    let f: Vec<String> = freqs.iter().map(|f| format!("{f:e}")).collect();
    let json = format!(
        "{{\"frequencies_hz\":[{}],\"ref_freq_hz\":{nu0:e},\"weights\":[{}]}}",
        f.join(","),
        rows.join(",")
    );
    let dir = export_dir();
    std::fs::create_dir_all(&dir).expect("create export dir");
    std::fs::write(dir.join("core_taylor_weights.json"), json).expect("write export");
}
