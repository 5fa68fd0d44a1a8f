//! Horizontal bar charts: one bar per named quantity (e.g. what each simulated effect adds to
//! the residual floor).

use std::path::Path;

use plotters::coord::ranged1d::{AsRangedCoord, ValueFormatter};
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use crate::png_canvas::{format_value, msg, render_png, Canvas, FONT, SERIES_COLOURS};
use crate::png_lines::{axis_range, AxisScale};
use crate::ReportError;

/// A horizontal bar chart: names down the left, bar lengths along x.
#[derive(Clone, Debug, PartialEq)]
pub struct BarChart {
    /// Title above the chart.
    pub title: String,
    /// Label of the value axis (with unit).
    pub value_label: String,
    /// Value-axis scale; on a log axis non-positive bars are drawn empty and labelled.
    pub scale: AxisScale,
    /// (name, value) per bar, top to bottom.
    pub bars: Vec<(String, f64)>,
    /// Canvas width in pixels; the height follows from the number of bars. Default 800.
    pub width_px: u32,
}

impl BarChart {
    /// A chart with a linear axis and the default width.
    pub fn new(
        title: impl Into<String>,
        value_label: impl Into<String>,
        bars: Vec<(String, f64)>,
    ) -> Self {
        Self {
            title: title.into(),
            value_label: value_label.into(),
            scale: AxisScale::Linear,
            bars,
            width_px: 800,
        }
    }
}

/// Write `chart` as a PNG to `path` (replacing any file), atomically.
pub fn write_bar_chart(path: &Path, chart: &BarChart) -> Result<(), ReportError> {
    if chart.bars.is_empty() {
        return Err(ReportError::InvalidInput {
            what: "bar chart",
            value: "0 bars".into(),
            why: "need at least one bar",
        });
    }
    let values = chart.bars.iter().map(|b| b.1);
    let (lo, hi) = match chart.scale {
        // Bars start at zero on a linear axis, so zero is always in range.
        AxisScale::Linear => {
            let (lo, hi) = axis_range(values.chain([0.0]), AxisScale::Linear, "bar values")?;
            (lo.min(0.0), hi.max(0.0))
        }
        AxisScale::Log => axis_range(values, AxisScale::Log, "bar values")?,
    };
    let height = (110 + 42 * chart.bars.len() as u32).clamp(200, 4000);
    let name_px = chart.bars.iter().map(|b| b.0.chars().count()).max().unwrap_or(1) as u32 * 8 + 20;
    let size = (chart.width_px, height);
    render_png(path, size, |root| match chart.scale {
        AxisScale::Linear => draw(root, chart, lo..hi, 0.0, name_px),
        AxisScale::Log => draw(root, chart, (lo..hi).log_scale(), lo, name_px),
    })
}

fn draw<XR>(root: &Canvas<'_>, c: &BarChart, xr: XR, base: f64, name_px: u32) -> Result<(), String>
where
    XR: AsRangedCoord<Value = f64>,
    XR::CoordDescType: ValueFormatter<f64>,
{
    let n = c.bars.len();
    let mut chart = ChartBuilder::on(root)
        .caption(&c.title, (FONT, 20))
        .margin(14)
        .margin_right(40)
        .x_label_area_size(50)
        .y_label_area_size(name_px.min(c.width_px / 2))
        // Bar k occupies y ∈ [n−1−k, n−k] (first bar on top); names are drawn beside it.
        .build_cartesian_2d(xr, 0.0..n as f64)
        .map_err(msg)?;
    chart
        .configure_mesh()
        .disable_y_mesh()
        .x_desc(c.value_label.as_str())
        .x_label_formatter(&|v| format_value(*v))
        .y_labels(0)
        .light_line_style(RGBColor(235, 235, 235))
        .bold_line_style(RGBColor(205, 205, 205))
        .label_style((FONT, 14))
        .axis_desc_style((FONT, 15))
        .draw()
        .map_err(msg)?;
    let colour = SERIES_COLOURS[0];
    for (k, (_, v)) in c.bars.iter().enumerate() {
        let seg = (n - 1 - k) as f64;
        let drawable = v.is_finite() && (base == 0.0 || *v > 0.0);
        if drawable {
            let mut rect =
                Rectangle::new([(base, seg), (*v, seg + 1.0)], colour.mix(0.85).filled());
            // Shrink the bar inside its segment by a few pixels top and bottom.
            rect.set_margin(6, 6, 0, 0);
            chart.draw_series(std::iter::once(rect)).map_err(msg)?;
        }
        let text =
            if drawable { format_value(*v) } else { format!("{} (not shown)", format_value(*v)) };
        let at = if drawable { v.max(base) } else { base };
        chart
            .draw_series(std::iter::once(Text::new(
                format!(" {text}"),
                (at, seg + 0.5),
                (FONT, 13).into_font().color(&BLACK).pos(Pos::new(HPos::Left, VPos::Center)),
            )))
            .map_err(msg)?;
    }
    let name_style = (FONT, 14).into_font().color(&BLACK).pos(Pos::new(HPos::Right, VPos::Center));
    let left = chart.plotting_area().get_pixel_range().0.start;
    for (k, (name, _)) in c.bars.iter().enumerate() {
        let (_, py) = chart.backend_coord(&(base, (n - 1 - k) as f64 + 0.5));
        let px = left;
        root.draw(&Text::new(name.clone(), (px - 8, py), name_style.clone())).map_err(msg)?;
    }
    Ok(())
}
