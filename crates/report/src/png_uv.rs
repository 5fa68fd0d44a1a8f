//! uv-coverage plots: every unflagged (row, channel) sample and its conjugate, in kλ, coloured
//! by frequency.

use std::path::Path;

use beamfloor_core::SPEED_OF_LIGHT_M_PER_S;
use beamfloor_predict::VisSet;
use plotters::prelude::*;

use crate::colour::{ColourMap, ColourScale, Stretch};
use crate::colour_bar::{draw_colour_bar, BAR_AREA_PX};
use crate::png_canvas::{format_value, msg, render_png, Canvas, FONT};
use crate::ReportError;

const SIDE_PX: u32 = 600;
const BAR_PX: u32 = BAR_AREA_PX;
/// Part of the sequential map used for points: its palest end would vanish on white.
const T_SPAN: (f64, f64) = (0.0, 0.8);

/// Write the uv-coverage of `vis` to `path` (replacing any file), atomically.
///
/// Each row's baseline (u, v) = uvw_m[0..2] · ν / c is plotted for every channel in which at
/// least one polarization is unflagged, together with (−u, −v), since V(−u, −v) = V(u, v)*
/// for a real sky. Points are coloured by frequency (colour bar in GHz); u grows to the right.
pub fn write_uv_coverage_png(path: &Path, vis: &VisSet, title: &str) -> Result<(), ReportError> {
    vis.validate().map_err(|source| ReportError::InvalidVisSet { path: path.into(), source })?;
    let f = &vis.frequencies_hz;
    let (f_lo, f_hi) = (f[0], f[f.len() - 1]);
    let scale_ghz = if f_hi > f_lo {
        ColourScale::new(f_lo / 1e9, f_hi / 1e9, Stretch::Linear)?
    } else {
        ColourScale::new(f_lo / 1e9 * 0.99, f_lo / 1e9 * 1.01, Stretch::Linear)?
    };
    let mut uv_max = 0.0f64;
    for row in vis.uvw_m.rows() {
        uv_max = uv_max.max(row[0].hypot(row[1]) * f_hi / SPEED_OF_LIGHT_M_PER_S / 1e3);
    }
    let half = if uv_max > 0.0 { uv_max * 1.05 } else { 1.0 };
    let size = (SIDE_PX + BAR_PX, SIDE_PX);
    render_png(path, size, |root| draw(root, vis, title, half, &scale_ghz))
}

fn draw(
    root: &Canvas<'_>,
    vis: &VisSet,
    title: &str,
    half: f64,
    scale_ghz: &ColourScale,
) -> Result<(), String> {
    let (left, right) = root.split_horizontally(SIDE_PX);
    let mut chart = ChartBuilder::on(&left)
        .caption(title, (FONT, 20))
        .margin(12)
        .margin_right(0)
        .x_label_area_size(48)
        .y_label_area_size(80)
        .build_cartesian_2d(-half..half, -half..half)
        .map_err(msg)?;
    chart
        .configure_mesh()
        .x_desc("u [k\u{3bb}]")
        .y_desc("v [k\u{3bb}]")
        .x_label_formatter(&|v| format_value(*v))
        .y_label_formatter(&|v| format_value(*v))
        .light_line_style(RGBColor(240, 240, 240))
        .bold_line_style(RGBColor(215, 215, 215))
        .label_style((FONT, 14))
        .axis_desc_style((FONT, 15))
        .draw()
        .map_err(msg)?;
    let area = chart.plotting_area();
    let spec = area.as_coord_spec().clone();
    let plain = area.strip_coord_spec();
    let (x0, y0) = plain.get_base_pixel();
    let (w, h) = plain.dim_in_pixel();
    let map = ColourMap::Sequential;
    for (c, &freq) in vis.frequencies_hz.iter().enumerate() {
        let t = scale_ghz.position(freq / 1e9).unwrap_or(0.0);
        let [r, g, b] = map.rgb(T_SPAN.0 + t * (T_SPAN.1 - T_SPAN.0));
        let colour = RGBColor(r, g, b);
        let k = freq / SPEED_OF_LIGHT_M_PER_S / 1e3;
        for (row, uvw) in vis.uvw_m.rows().into_iter().enumerate() {
            if vis.flags.slice(ndarray::s![row, c, ..]).iter().all(|&f| f) {
                continue;
            }
            for sign in [1.0, -1.0] {
                let (px, py) = spec.translate(&(sign * uvw[0] * k, sign * uvw[1] * k));
                let (px, py) = (px - x0, py - y0);
                // A 2 x 2 pixel dot, clipped to the plotting area.
                for (dx, dy) in [(0, 0), (1, 0), (0, 1), (1, 1)] {
                    let (qx, qy) = (px + dx, py + dy);
                    if qx >= 0 && qy >= 0 && (qx as u32) < w && (qy as u32) < h {
                        plain.draw_pixel((qx, qy), &colour).map_err(msg)?;
                    }
                }
            }
        }
    }
    let rows = (y0, y0 + h as i32);
    draw_colour_bar(&right, rows, scale_ghz, map, T_SPAN, "frequency [GHz]")
}
