//! Collection: one table of every complete point's metrics, a plot of the floor against the
//! swept parameter, and the list of points that are missing or failed.

use std::path::{Path, PathBuf};

use beamfloor_metrics::{Cell, Table};
use beamfloor_report::{write_line_plot, AxisScale, LinePlot, Series};
use serde_json::{json, Map, Value};

use super::folder::{write_atomic, PointState, SweepFolder};
use super::SweepError;
use crate::run::{table_csv, table_json};

/// The folder (in the sweep folder) collection writes to.
pub const COLLECTED_DIR: &str = "collected";

/// The metric plotted against the swept parameter (a column of metrics.json's summary).
const FLOOR_COLUMN: &str = "floor_rms_jy_per_beam";
/// The predicted thermal noise, drawn beside the floors.
const SIGMA_COLUMN: &str = "sigma_img_jy_per_beam";

/// A point without metrics.
#[derive(Debug, Clone, PartialEq)]
pub struct IncompletePoint {
    /// The point.
    pub index: usize,
    /// `"failed"`, `"started"` (running, or interrupted), `"pending"` or `"no-metrics"` (complete,
    /// but its metrics.json is missing or unreadable).
    pub state: &'static str,
    /// The recorded error or the reason, if any.
    pub message: Option<String>,
}

/// What collection found and wrote.
#[derive(Debug, Clone)]
pub struct Collection {
    /// One row per (complete point, strategy): point, parameter values, seed, strategy, then
    /// every metric of the point's metrics.json (see [`collect`]).
    pub table: Table,
    /// Points without metrics, in order.
    pub incomplete: Vec<IncompletePoint>,
    /// The files written.
    pub files: Vec<PathBuf>,
}

/// A JSON scalar as a table cell (`null` as empty, lists and tables as their JSON text).
fn cell(v: &Value) -> Cell {
    match v {
        Value::Null => Cell::Empty,
        Value::Number(n) => n.as_f64().map_or(Cell::Empty, Cell::Number),
        Value::String(s) => Cell::Text(s.clone()),
        other => Cell::Text(other.to_string()),
    }
}

/// The columns one strategy contributes from a point's metrics.json (see [`collect`]).
fn strategy_cells(
    metrics: &Value,
    summary_row: &Map<String, Value>,
    strategy: &str,
) -> Vec<(String, Cell)> {
    let mut out: Vec<(String, Cell)> = summary_row
        .iter()
        .filter(|(k, _)| k.as_str() != "strategy")
        .map(|(k, v)| (k.clone(), cell(v)))
        .collect();
    let Some(top) = metrics.as_object() else { return out };
    for (key, value) in top {
        match value {
            Value::Number(_) | Value::String(_) => out.push((key.clone(), cell(value))),
            Value::Object(obj) => {
                let owner = obj.get("strategy").and_then(Value::as_str);
                if owner.is_none() || owner == Some(strategy) {
                    for (k, v) in obj.iter().filter(|(k, v)| {
                        k.as_str() != "strategy" && !v.is_object() && !v.is_array()
                    }) {
                        out.push((format!("{key}.{k}"), cell(v)));
                    }
                }
            }
            Value::Array(rows) if key != "summary" => {
                let mine: Vec<&Map<String, Value>> = rows
                    .iter()
                    .filter_map(Value::as_object)
                    .filter(|r| r.get("strategy").and_then(Value::as_str) == Some(strategy))
                    .collect();
                // Rows labelled by a text column that is unique among this strategy's rows (the
                // source name) become columns `<key>.<label>.<metric>`; tables without such a
                // label (radial profiles) stay in the points' own files.
                let label = mine.first().and_then(|first| {
                    first.iter().find_map(|(k, v)| {
                        let unique = v.is_string() && k != "strategy" && {
                            let mut seen: Vec<&str> = mine
                                .iter()
                                .filter_map(|r| r.get(k).and_then(Value::as_str))
                                .collect();
                            let n = seen.len();
                            seen.sort_unstable();
                            seen.dedup();
                            n == mine.len() && seen.len() == n
                        };
                        unique.then(|| k.clone())
                    })
                });
                let Some(label) = label else { continue };
                for r in mine {
                    let name = r.get(&label).and_then(Value::as_str).unwrap_or("");
                    for (k, v) in r.iter().filter(|(k, _)| *k != &label && k.as_str() != "strategy")
                    {
                        out.push((format!("{key}.{name}.{k}"), cell(v)));
                    }
                }
            }
            _ => {}
        }
    }
    out
}

/// Collects `folder` into `folder/collected/`: `metrics.csv` and `metrics.json` (one row per
/// complete point and strategy: `point`, one column per swept key, `seed`, `strategy`, then the
/// strategy's summary metrics, the point-wide numbers such as `sigma_img_jy_per_beam`, and
/// per-source metrics as `sources.<source>.<metric>`), `floor.png` (the residual floor of each
/// strategy and the predicted thermal noise against the first swept key; one curve per value
/// of a second key) when any point is complete, and `incomplete.json` (points without metrics,
/// with their state and recorded error).
pub fn collect(folder: &SweepFolder) -> Result<Collection, SweepError> {
    let out_dir = folder.dir.join(COLLECTED_DIR);
    std::fs::create_dir_all(&out_dir).map_err(|e| SweepError::io(&out_dir, e))?;
    let keys: Vec<String> = folder.plan.parameters.iter().map(|p| p.key.clone()).collect();
    let mut rows: Vec<Vec<(String, Cell)>> = Vec::new();
    let mut incomplete = Vec::new();
    for point in &folder.plan.points {
        let i = point.index;
        match folder.state(i) {
            PointState::Done => {}
            PointState::Failed(message) => {
                incomplete.push(IncompletePoint {
                    index: i,
                    state: "failed",
                    message: Some(message),
                });
                continue;
            }
            PointState::Started { host, pid } => {
                incomplete.push(IncompletePoint {
                    index: i,
                    state: "started",
                    message: Some(format!("started on {host} by process {pid}, not finished")),
                });
                continue;
            }
            PointState::Pending => {
                incomplete.push(IncompletePoint { index: i, state: "pending", message: None });
                continue;
            }
        }
        let path = folder.run_dir(i).join("metrics.json");
        let metrics: Option<Value> =
            std::fs::read_to_string(&path).ok().and_then(|t| serde_json::from_str(&t).ok());
        let Some(metrics) = metrics else {
            incomplete.push(IncompletePoint {
                index: i,
                state: "no-metrics",
                message: Some(format!("{} is missing or unreadable", path.display())),
            });
            continue;
        };
        let summary = metrics.get("summary").and_then(Value::as_array).cloned().unwrap_or_default();
        for row in summary.iter().filter_map(Value::as_object) {
            let strategy = row.get("strategy").and_then(Value::as_str).unwrap_or("").to_string();
            let mut cells = vec![("point".to_string(), Cell::Number(i as f64))];
            for (key, value) in keys.iter().zip(&point.values) {
                cells.push((key.clone(), cell(value)));
            }
            cells.push(("seed".into(), Cell::Text(point.seed.to_string())));
            cells.push(("strategy".into(), Cell::Text(strategy.clone())));
            cells.extend(strategy_cells(&metrics, row, &strategy));
            rows.push(cells);
        }
    }
    let table = to_table(rows);
    let mut files = Vec::new();
    let csv = out_dir.join("metrics.csv");
    write_atomic(&csv, &table_csv(&table))?;
    files.push(csv);
    let json_path = out_dir.join("metrics.json");
    write_atomic(&json_path, &pretty(&table_json(&table)))?;
    files.push(json_path);
    let listing: Vec<Value> = incomplete
        .iter()
        .map(|p| {
            json!({
                "point": p.index,
                "folder": folder.plan.points[p.index].folder,
                "values": folder.plan.points[p.index].values,
                "state": p.state,
                "message": p.message,
            })
        })
        .collect();
    let inc = out_dir.join("incomplete.json");
    write_atomic(&inc, &pretty(&Value::Array(listing)))?;
    files.push(inc);
    if !table.rows.is_empty() {
        let png = out_dir.join("floor.png");
        write_floor_plot(folder, &table, &png)?;
        files.push(png);
    }
    Ok(Collection { table, incomplete, files })
}

fn pretty(v: &Value) -> String {
    serde_json::to_string_pretty(v).unwrap_or_default() + "\n"
}

/// Rows of (column, cell) as one table: columns in order of first appearance, empty cells where
/// a row lacks a column.
fn to_table(rows: Vec<Vec<(String, Cell)>>) -> Table {
    let mut columns: Vec<String> = Vec::new();
    for row in &rows {
        for (name, _) in row {
            if !columns.contains(name) {
                columns.push(name.clone());
            }
        }
    }
    let rows = rows
        .into_iter()
        .map(|row| {
            columns
                .iter()
                .map(|c| row.iter().find(|(n, _)| n == c).map_or(Cell::Empty, |(_, v)| v.clone()))
                .collect()
        })
        .collect();
    Table { columns, rows }
}

fn column(table: &Table, name: &str) -> Option<usize> {
    table.columns.iter().position(|c| c == name)
}

fn number(c: &Cell) -> Option<f64> {
    match c {
        Cell::Number(x) => Some(*x),
        _ => None,
    }
}

fn text(c: &Cell) -> String {
    match c {
        Cell::Number(x) => format!("{x}"),
        Cell::Text(t) => t.clone(),
        Cell::Empty => String::new(),
    }
}

/// Floor per strategy (and thermal σ) against the first parameter: its value where every value
/// is a number, else its position in the list.
fn write_floor_plot(folder: &SweepFolder, table: &Table, path: &Path) -> Result<(), SweepError> {
    let first = &folder.plan.parameters[0];
    let numeric = first.values.iter().all(Value::is_number);
    let x_of = |row: &[Cell]| -> Option<f64> {
        let v = &row[column(table, &first.key)?];
        if numeric {
            number(v)
        } else {
            let shown = text(v);
            first.values.iter().position(|x| text(&cell(x)) == shown).map(|p| p as f64)
        }
    };
    let second = folder.plan.parameters.get(1).map(|p| p.key.clone());
    let (Some(floor_col), Some(strategy_col)) =
        (column(table, FLOOR_COLUMN), column(table, "strategy"))
    else {
        return Ok(());
    };
    let sigma_col = column(table, SIGMA_COLUMN);
    let mut series: Vec<Series> = Vec::new();
    let mut add = |name: String, x: f64, y: f64| match series.iter_mut().find(|s| s.name == name) {
        Some(s) => s.points.push((x, y)),
        None => series.push(Series { name, points: vec![(x, y)] }),
    };
    for row in &table.rows {
        let Some(x) = x_of(row) else { continue };
        let suffix = match &second {
            Some(key) => column(table, key)
                .map(|c| format!(", {key} = {}", text(&row[c])))
                .unwrap_or_default(),
            None => String::new(),
        };
        if let Some(y) = number(&row[floor_col]) {
            add(format!("{}{suffix}", text(&row[strategy_col])), x, y);
        }
    }
    // σ_img is per point, not per strategy: one curve (per value of a second key).
    if let Some(sc) = sigma_col {
        let mut seen = Vec::new();
        for row in &table.rows {
            let point = text(&row[0]);
            if seen.contains(&point) {
                continue;
            }
            seen.push(point);
            let (Some(x), Some(y)) = (x_of(row), number(&row[sc])) else { continue };
            let suffix = match &second {
                Some(key) => column(table, key)
                    .map(|c| format!(", {key} = {}", text(&row[c])))
                    .unwrap_or_default(),
                None => String::new(),
            };
            add(format!("thermal σ_img (predicted){suffix}"), x, y);
        }
    }
    for s in &mut series {
        s.points.sort_by(|a, b| a.0.total_cmp(&b.0));
    }
    let x_label = if numeric {
        first.key.clone()
    } else {
        let names: Vec<String> =
            first.values.iter().enumerate().map(|(i, v)| format!("{i}: {v}")).collect();
        format!("{} (value number; {})", first.key, names.join(", "))
    };
    let mut plot = LinePlot::new(
        format!("sweep {}: residual floor per strategy", folder.plan.experiment),
        x_label,
        "off-source residual RMS (Jy/beam)",
    );
    plot.series = series;
    plot.y_scale = AxisScale::Log;
    plot.markers = true;
    write_line_plot(path, &plot)?;
    Ok(())
}
