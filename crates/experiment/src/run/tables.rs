//! Metrics tables as JSON and CSV text, and cells as short text for the page.

use beamfloor_metrics::{Cell, Table};
use serde_json::{json, Map, Value};

/// A table as a JSON array of objects keyed by column name; NaN and infinities become `null`
/// (JSON has no such numbers), empty cells too.
pub fn table_json(table: &Table) -> Value {
    Value::Array(
        table
            .rows
            .iter()
            .map(|row| {
                let mut obj = Map::new();
                for (name, cell) in table.columns.iter().zip(row) {
                    let v = match cell {
                        Cell::Text(t) => json!(t),
                        Cell::Number(x) if x.is_finite() => json!(x),
                        _ => Value::Null,
                    };
                    obj.insert(name.clone(), v);
                }
                Value::Object(obj)
            })
            .collect(),
    )
}

/// A table as CSV (RFC 4180 quoting); NaN written as `nan`, infinities as `inf`/`-inf`, empty
/// cells empty; numbers in shortest round-trip form.
pub fn table_csv(table: &Table) -> String {
    let mut out = String::new();
    let line = |cells: Vec<String>| cells.join(",") + "\n";
    out.push_str(&line(table.columns.iter().map(|c| quote(c)).collect()));
    for row in &table.rows {
        out.push_str(&line(
            row.iter()
                .map(|c| match c {
                    Cell::Text(t) => quote(t),
                    Cell::Number(x) if x.is_nan() => "nan".into(),
                    Cell::Number(x) if x.is_infinite() => {
                        if *x > 0.0 {
                            "inf".into()
                        } else {
                            "-inf".into()
                        }
                    }
                    Cell::Number(x) => format!("{x}"),
                    Cell::Empty => String::new(),
                })
                .collect(),
        ));
    }
    out
}

fn quote(s: &str) -> String {
    if s.contains([',', '"', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// A cell as short text for the page: 4 significant digits, "–" for no value.
pub fn cell_text(cell: &Cell) -> String {
    match cell {
        Cell::Text(t) => t.clone(),
        Cell::Number(x) if x.is_nan() => "NaN".into(),
        Cell::Number(x) => short_number(*x),
        Cell::Empty => "–".into(),
    }
}

/// 4 significant digits, scientific notation outside [1e-3, 1e5).
pub fn short_number(x: f64) -> String {
    if x == 0.0 {
        "0".into()
    } else if x.is_infinite() {
        if x > 0.0 {
            "∞".into()
        } else {
            "−∞".into()
        }
    } else if (1e-3..1e5).contains(&x.abs()) {
        let digits = (3 - x.abs().log10().floor() as i32).max(0) as usize;
        format!("{x:.digits$}")
    } else {
        format!("{x:.3e}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nan_is_null_in_json_and_nan_in_csv() {
        let t = Table {
            columns: vec!["name".into(), "v".into(), "e".into()],
            rows: vec![vec![Cell::Text("a,b".into()), Cell::Number(f64::NAN), Cell::Empty]],
        };
        let j = table_json(&t);
        assert_eq!(j[0]["v"], Value::Null);
        assert_eq!(j[0]["name"], json!("a,b"));
        assert_eq!(table_csv(&t), "name,v,e\n\"a,b\",nan,\n");
        assert_eq!(short_number(0.012345), "0.01235");
        assert_eq!(short_number(1234.5), "1234");
    }
}
