//! The decomposition's table (CSV, JSON) and one bar chart per strategy.

use std::path::Path;

use beamfloor_metrics::{Cell, Table};
use beamfloor_report::{write_bar_chart, write_text_file, AxisScale, BarChart};
use serde_json::json;

use super::variants::{ALL_EFFECTS, NUMERICAL_FLOOR};
use super::Decomposition;
use crate::run::{table_csv, table_json, RunError};

/// The long-form table: one row per (strategy, variant) with the floor, the floor in units of
/// σ_img, and for the single-effect variants the cost c_X and its share c_X² / F_all².
pub fn decomposition_table(d: &Decomposition) -> Table {
    let columns = [
        "strategy",
        "variant",
        "what changed",
        "floor_rms_jy_per_beam",
        "floor_over_thermal",
        "cost_jy_per_beam",
        "share_of_floor_variance",
    ];
    let mut rows = Vec::new();
    for strategy in &d.strategies {
        let all = d.floor(ALL_EFFECTS, strategy);
        for v in &d.variants {
            let floor = d.floor(&v.variant.name, strategy);
            let single = v.variant.name != ALL_EFFECTS && v.variant.name != NUMERICAL_FLOOR;
            let cost = if single { d.cost(&v.variant.name, strategy) } else { None };
            let share = match (cost, all) {
                (Some(c), Some(a)) if a > 0.0 => Some(c * c / (a * a)),
                _ => None,
            };
            rows.push(vec![
                Cell::Text(strategy.clone()),
                Cell::Text(v.variant.name.clone()),
                Cell::Text(v.variant.label.clone()),
                Cell::from(floor),
                Cell::from(floor.map(|f| f / v.sigma_img_jy_per_beam)),
                Cell::from(cost),
                Cell::from(share),
            ]);
        }
    }
    Table { columns: columns.iter().map(|s| s.to_string()).collect(), rows }
}

/// Writes `decomposition.csv`, `decomposition.json` and `decomposition-<strategy>.png` into
/// `out_dir` (each atomically).
pub fn write_decomposition(out_dir: &Path, d: &Decomposition) -> Result<(), RunError> {
    let table = decomposition_table(d);
    write_text_file(&out_dir.join("decomposition.csv"), &table_csv(&table))?;
    let json = json!({
        "method": "floor without effect X vs as configured; cost_X = sqrt(max(0, F_all^2 - F_without_X^2)); \
                   effects interact, so the shares need not sum to 1",
        "variants": d.variants.iter().map(|v| json!({
            "name": v.variant.name,
            "what_changed": v.variant.label,
            "run_folder": v.out_dir.display().to_string(),
            "skipped_strategies": v.skipped.iter().map(|(n, r)| json!({"name": n, "reason": r})).collect::<Vec<_>>(),
        })).collect::<Vec<_>>(),
        "table": table_json(&table),
    });
    let text = serde_json::to_string_pretty(&json).unwrap_or_default() + "\n";
    write_text_file(&out_dir.join("decomposition.json"), &text)?;
    for strategy in &d.strategies {
        let mut bars = Vec::new();
        for v in &d.variants {
            let value = if v.variant.name == ALL_EFFECTS || v.variant.name == NUMERICAL_FLOOR {
                d.floor(&v.variant.name, strategy)
                    .map(|f| (format!("floor: {}", v.variant.label), f))
            } else {
                d.cost(&v.variant.name, strategy).map(|c| {
                    (format!("cost of {}", v.variant.name.trim_start_matches("without-")), c)
                })
            };
            // A missing value (strategy skipped) is drawn as an empty, labelled bar.
            bars.push(
                value.unwrap_or_else(|| (format!("{} (not imaged)", v.variant.name), f64::NAN)),
            );
        }
        let mut chart = BarChart::new(
            format!("What each effect costs \"{strategy}\" (quadrature share of the floor)"),
            "Jy/beam",
            bars,
        );
        chart.scale = AxisScale::Log;
        write_bar_chart(&out_dir.join(format!("decomposition-{strategy}.png")), &chart)?;
    }
    Ok(())
}
