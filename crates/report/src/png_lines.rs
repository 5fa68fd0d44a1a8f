//! Line plots: several named series against one x axis (radial beam profiles, floor against a
//! swept parameter).

use std::path::Path;

use plotters::coord::ranged1d::{AsRangedCoord, ValueFormatter};
use plotters::prelude::*;

use crate::png_canvas::{format_value, msg, render_png, Canvas, FONT, SERIES_COLOURS};
use crate::ReportError;

/// Linear or logarithmic axis.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum AxisScale {
    /// Linear.
    Linear,
    /// Base-10 logarithmic; non-positive values are left out of the plot.
    Log,
}

/// One named curve.
#[derive(Clone, Debug, PartialEq)]
pub struct Series {
    /// Legend entry.
    pub name: String,
    /// (x, y) points in drawing order; non-finite points (and non-positive ones on a log axis)
    /// break the line.
    pub points: Vec<(f64, f64)>,
}

/// A line plot of several series.
#[derive(Clone, Debug, PartialEq)]
pub struct LinePlot {
    /// Title above the plot.
    pub title: String,
    /// x-axis label (with unit).
    pub x_label: String,
    /// y-axis label (with unit).
    pub y_label: String,
    /// x-axis scale.
    pub x_scale: AxisScale,
    /// y-axis scale.
    pub y_scale: AxisScale,
    /// The curves; colours cycle through a fixed palette in this order.
    pub series: Vec<Series>,
    /// Fixed x-axis range (lo, hi); `None` spans the data.
    pub x_range: Option<(f64, f64)>,
    /// Fixed y-axis range (lo, hi); `None` spans the data, on a log axis at most 10 decades
    /// below the largest value (deep nulls would otherwise squash everything else).
    pub y_range: Option<(f64, f64)>,
    /// Also mark each point with a small circle (useful for sparse sweeps).
    pub markers: bool,
    /// Canvas size in pixels. Default (800, 560).
    pub size_px: (u32, u32),
}

impl LinePlot {
    /// An empty plot with linear axes and the default size.
    pub fn new(
        title: impl Into<String>,
        x_label: impl Into<String>,
        y_label: impl Into<String>,
    ) -> Self {
        Self {
            title: title.into(),
            x_label: x_label.into(),
            y_label: y_label.into(),
            x_scale: AxisScale::Linear,
            y_scale: AxisScale::Linear,
            series: Vec::new(),
            x_range: None,
            y_range: None,
            markers: false,
            size_px: (800, 560),
        }
    }
}

fn usable(v: f64, scale: AxisScale) -> bool {
    v.is_finite() && (scale == AxisScale::Linear || v > 0.0)
}

/// The plotted range of the usable values: 5 % padding on a linear axis, a factor 1.25 on a
/// log axis; a single value gets a range around it.
pub(crate) fn axis_range(
    values: impl Iterator<Item = f64>,
    scale: AxisScale,
    what: &'static str,
) -> Result<(f64, f64), ReportError> {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for v in values.filter(|v| usable(*v, scale)) {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if lo > hi {
        return Err(ReportError::InvalidInput {
            what,
            value: "no usable values".into(),
            why: "need at least one finite value (positive on a log axis)",
        });
    }
    Ok(match scale {
        AxisScale::Linear => {
            let pad = if hi > lo { 0.05 * (hi - lo) } else { 0.5 * lo.abs().max(1.0) };
            (lo - pad, hi + pad)
        }
        AxisScale::Log => {
            let f = if hi > lo { 1.25 } else { 3.0 };
            (lo / f, hi * f)
        }
    })
}

/// Write `plot` as a PNG to `path` (replacing any file), atomically.
pub fn write_line_plot(path: &Path, plot: &LinePlot) -> Result<(), ReportError> {
    let all = || plot.series.iter().flat_map(|s| s.points.iter());
    let usable_point = |p: &&(f64, f64)| usable(p.0, plot.x_scale) && usable(p.1, plot.y_scale);
    let x = match plot.x_range {
        Some(r) => checked_range(r, plot.x_scale, "line plot x_range")?,
        None => {
            axis_range(all().filter(usable_point).map(|p| p.0), plot.x_scale, "line plot x values")?
        }
    };
    let y = match plot.y_range {
        Some(r) => checked_range(r, plot.y_scale, "line plot y_range")?,
        None => {
            let (lo, hi) = axis_range(
                all().filter(usable_point).map(|p| p.1),
                plot.y_scale,
                "line plot y values",
            )?;
            match plot.y_scale {
                AxisScale::Log => (lo.max(hi * 1e-10), hi),
                AxisScale::Linear => (lo, hi),
            }
        }
    };
    let legend = legend_corner(plot, x, y);
    render_png(path, plot.size_px, |root| match (plot.x_scale, plot.y_scale) {
        (AxisScale::Linear, AxisScale::Linear) => draw(root, plot, legend, x.0..x.1, y.0..y.1),
        (AxisScale::Linear, AxisScale::Log) => {
            draw(root, plot, legend, x.0..x.1, (y.0..y.1).log_scale())
        }
        (AxisScale::Log, AxisScale::Linear) => {
            draw(root, plot, legend, (x.0..x.1).log_scale(), y.0..y.1)
        }
        (AxisScale::Log, AxisScale::Log) => {
            draw(root, plot, legend, (x.0..x.1).log_scale(), (y.0..y.1).log_scale())
        }
    })
}

fn checked_range(
    r: (f64, f64),
    scale: AxisScale,
    what: &'static str,
) -> Result<(f64, f64), ReportError> {
    if usable(r.0, scale) && usable(r.1, scale) && r.0 < r.1 {
        Ok(r)
    } else {
        Err(ReportError::InvalidInput {
            what,
            value: format!("{r:?}"),
            why: "need finite lo < hi (both positive on a log axis)",
        })
    }
}

/// The corner of the plot with the fewest data points under where the legend would go.
fn legend_corner(plot: &LinePlot, x: (f64, f64), y: (f64, f64)) -> SeriesLabelPosition {
    let norm = |v: f64, r: (f64, f64), s: AxisScale| match s {
        AxisScale::Linear => (v - r.0) / (r.1 - r.0),
        AxisScale::Log => (v.ln() - r.0.ln()) / (r.1.ln() - r.0.ln()),
    };
    let mut counts = [0usize; 4];
    for &(px, py) in plot.series.iter().flat_map(|s| s.points.iter()) {
        if !(usable(px, plot.x_scale) && usable(py, plot.y_scale)) {
            continue;
        }
        let (u, v) = (norm(px, x, plot.x_scale), norm(py, y, plot.y_scale));
        let (right, left, upper, lower) = (u > 0.6, u < 0.4, v > 0.7, v < 0.3);
        for (k, hit) in
            [right && upper, left && upper, right && lower, left && lower].into_iter().enumerate()
        {
            counts[k] += hit as usize;
        }
    }
    let corners = [
        SeriesLabelPosition::UpperRight,
        SeriesLabelPosition::UpperLeft,
        SeriesLabelPosition::LowerRight,
        SeriesLabelPosition::LowerLeft,
    ];
    let best = (0..4).min_by_key(|&k| counts[k]).unwrap_or(0);
    corners[best].clone()
}

fn draw<XR, YR>(
    root: &Canvas<'_>,
    plot: &LinePlot,
    legend: SeriesLabelPosition,
    xr: XR,
    yr: YR,
) -> Result<(), String>
where
    XR: AsRangedCoord<Value = f64>,
    YR: AsRangedCoord<Value = f64>,
    XR::CoordDescType: ValueFormatter<f64>,
    YR::CoordDescType: ValueFormatter<f64>,
{
    let mut chart = ChartBuilder::on(root)
        .caption(&plot.title, (FONT, 20))
        .margin(14)
        .x_label_area_size(50)
        .y_label_area_size(80)
        .build_cartesian_2d(xr, yr)
        .map_err(msg)?;
    chart
        .configure_mesh()
        .x_desc(plot.x_label.as_str())
        .y_desc(plot.y_label.as_str())
        .x_label_formatter(&|v| format_value(*v))
        .y_label_formatter(&|v| format_value(*v))
        .light_line_style(RGBColor(235, 235, 235))
        .bold_line_style(RGBColor(205, 205, 205))
        .label_style((FONT, 14))
        .axis_desc_style((FONT, 15))
        .draw()
        .map_err(msg)?;
    for (k, s) in plot.series.iter().enumerate() {
        let colour = SERIES_COLOURS[k % SERIES_COLOURS.len()];
        let style = colour.stroke_width(2);
        let ok = |p: &(f64, f64)| usable(p.0, plot.x_scale) && usable(p.1, plot.y_scale);
        // Split at unusable points so a gap shows as a gap, not as a straight join.
        let mut first = true;
        for run in s.points.split(|p| !ok(p)).filter(|r| !r.is_empty()) {
            let series =
                chart.draw_series(LineSeries::new(run.iter().copied(), style)).map_err(msg)?;
            if first {
                series.label(s.name.as_str()).legend(move |(x, y)| {
                    PathElement::new([(x, y), (x + 22, y)], colour.stroke_width(2))
                });
                first = false;
            }
            if plot.markers {
                chart
                    .draw_series(run.iter().map(|&p| Circle::new(p, 3, colour.filled())))
                    .map_err(msg)?;
            }
        }
    }
    chart
        .configure_series_labels()
        .position(legend)
        .background_style(WHITE.mix(0.85))
        .border_style(RGBColor(150, 150, 150))
        .label_font((FONT, 14))
        .draw()
        .map_err(msg)?;
    Ok(())
}
