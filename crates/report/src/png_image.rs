//! Image quick-looks: the image on sky offsets with a colour bar and a title.

use std::path::Path;

use beamfloor_core::ImageGeometry;
use ndarray::ArrayView2;
use plotters::prelude::*;

use crate::colour::{ColourMap, ColourScale};
use crate::colour_bar::{draw_colour_bar, BAR_AREA_PX};
#[cfg(test)]
use crate::png_canvas::render_rgb;
use crate::png_canvas::{format_value, msg, render_png, Canvas, FONT};
use crate::{ReportError, RestoringBeam};

/// How an image quick-look is drawn.
#[derive(Clone, Debug, PartialEq)]
pub struct ImagePngOptions {
    /// Title above the image.
    pub title: String,
    /// Value → colour scale; pass the same one to several images to compare them.
    pub scale: ColourScale,
    /// Colour map.
    pub colour_map: ColourMap,
    /// Label of the colour bar, e.g. "Jy/beam".
    pub value_label: String,
    /// Side of the image area in screen pixels (the longer image axis). Default 560.
    pub image_side_px: u32,
    /// Restoring beam drawn as an outlined ellipse in the lower-left corner, if given.
    pub beam: Option<RestoringBeam>,
}

impl ImagePngOptions {
    /// Options with the default size.
    pub fn new(
        title: impl Into<String>,
        scale: ColourScale,
        colour_map: ColourMap,
        value_label: impl Into<String>,
    ) -> Self {
        Self {
            title: title.into(),
            scale,
            colour_map,
            value_label: value_label.into(),
            image_side_px: 560,
            beam: None,
        }
    }
}

/// Angular unit for the offset axes, picked from the field size.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct AngleUnit {
    pub(crate) name: &'static str,
    pub(crate) per_rad: f64,
}

pub(crate) fn angle_unit(half_field_rad: f64) -> AngleUnit {
    let deg = half_field_rad.to_degrees();
    if deg >= 2.0 {
        AngleUnit { name: "deg", per_rad: 180.0 / std::f64::consts::PI }
    } else if deg * 60.0 >= 2.0 {
        AngleUnit { name: "arcmin", per_rad: 180.0 * 60.0 / std::f64::consts::PI }
    } else {
        AngleUnit { name: "arcsec", per_rad: 180.0 * 3600.0 / std::f64::consts::PI }
    }
}

const LEFT_PX: u32 = 80;
const BOTTOM_PX: u32 = 60;
const TOP_PX: u32 = 50;
const BAR_PX: u32 = BAR_AREA_PX;
const MARGIN_PX: u32 = 12;

fn canvas_size(geometry: &ImageGeometry, side: u32) -> (u32, u32, u32, u32) {
    let long = geometry.nx.max(geometry.ny).max(1) as f64;
    let w = ((side as f64 * geometry.nx as f64 / long).round() as u32).max(40);
    let h = ((side as f64 * geometry.ny as f64 / long).round() as u32).max(40);
    (w + LEFT_PX + 2 * MARGIN_PX + BAR_PX, h + TOP_PX + BOTTOM_PX + MARGIN_PX, w, h)
}

/// Write `image` (`[y][x]`, on `geometry`) as a PNG quick-look to `path` (replacing any file).
///
/// Axes show offsets from the phase centre in arcsec, arcmin or degrees (picked from the field
/// size), (180/π)·l horizontally with east (positive l) on the left and (180/π)·m vertically with
/// north up. NaN pixels are grey. Written to a temporary name and renamed.
pub fn write_image_png(
    path: &Path,
    image: ArrayView2<'_, f64>,
    geometry: &ImageGeometry,
    options: &ImagePngOptions,
) -> Result<(), ReportError> {
    check_image(image, geometry, options)?;
    let (cw, ch, _, _) = canvas_size(geometry, options.image_side_px);
    render_png(path, (cw, ch), |root| draw_image(root, image, geometry, options))
}

/// Same drawing as [`write_image_png`] into an RGB buffer; returns `(width, height, rgb)`.
#[cfg(test)]
pub(crate) fn render_image_rgb(
    image: ArrayView2<'_, f64>,
    geometry: &ImageGeometry,
    options: &ImagePngOptions,
) -> Result<(u32, u32, Vec<u8>), ReportError> {
    check_image(image, geometry, options)?;
    let (cw, ch, _, _) = canvas_size(geometry, options.image_side_px);
    let buf = render_rgb((cw, ch), |root| draw_image(root, image, geometry, options))?;
    Ok((cw, ch, buf))
}

fn check_image(
    image: ArrayView2<'_, f64>,
    geometry: &ImageGeometry,
    options: &ImagePngOptions,
) -> Result<(), ReportError> {
    if image.shape() != [geometry.ny, geometry.nx] || geometry.is_empty() {
        return Err(ReportError::InvalidInput {
            what: "image shape [ny, nx]",
            value: format!("{:?} (geometry {} x {})", image.shape(), geometry.ny, geometry.nx),
            why: "the image must be non-empty with the geometry's ny rows of nx pixels",
        });
    }
    if !(geometry.cell_rad.is_finite() && geometry.cell_rad > 0.0) {
        return Err(ReportError::InvalidInput {
            what: "cell_rad",
            value: geometry.cell_rad.to_string(),
            why: "the pixel size must be finite and positive",
        });
    }
    if !(64..=4000).contains(&options.image_side_px) {
        return Err(ReportError::InvalidInput {
            what: "image_side_px",
            value: options.image_side_px.to_string(),
            why: "must be between 64 and 4000",
        });
    }
    // Re-check the scale: the fields are public and may have been set directly.
    ColourScale::new(options.scale.min, options.scale.max, options.scale.stretch).map(|_| ())
}

fn draw_image(
    root: &Canvas<'_>,
    image: ArrayView2<'_, f64>,
    g: &ImageGeometry,
    o: &ImagePngOptions,
) -> Result<(), String> {
    let (cw, _, _, _) = canvas_size(g, o.image_side_px);
    let (left, right) = root.split_horizontally(cw - BAR_PX);
    let (cx, cy) = g.centre_pixel();
    let unit = angle_unit(g.half_field_rad().0.max(g.half_field_rad().1));
    let to_unit = g.cell_rad * unit.per_rad;
    // Plot coordinate X = −l (so it increases to the right); pixel edges bound the axes.
    let x_lo = (-0.5 - cx as f64) * to_unit;
    let x_hi = (g.nx as f64 - 0.5 - cx as f64) * to_unit;
    let y_lo = (-0.5 - cy as f64) * to_unit;
    let y_hi = (g.ny as f64 - 0.5 - cy as f64) * to_unit;
    let mut chart = ChartBuilder::on(&left)
        .caption(&o.title, (FONT, 20))
        .margin(MARGIN_PX)
        .margin_right(0)
        .x_label_area_size(BOTTOM_PX - MARGIN_PX)
        .y_label_area_size(LEFT_PX)
        .build_cartesian_2d(x_lo..x_hi, y_lo..y_hi)
        .map_err(msg)?;
    chart
        .configure_mesh()
        .disable_mesh()
        .x_desc(format!("offset l [{}], east \u{2190}", unit.name))
        .y_desc(format!("offset m [{}], north \u{2191}", unit.name))
        // X is −l: print l, so values grow to the left like RA.
        .x_label_formatter(&|x| format_value(if *x == 0.0 { 0.0 } else { -x }))
        .y_label_formatter(&|y| format_value(*y))
        .label_style((FONT, 14))
        .axis_desc_style((FONT, 15))
        .draw()
        .map_err(msg)?;
    let (_, rows) = chart.plotting_area().get_pixel_range();
    let area = chart.plotting_area().strip_coord_spec();
    let (pw, ph) = area.dim_in_pixel();
    for py in 0..ph {
        // Screen rows go down, image y goes up.
        let fy = (ph - py) as f64 - 0.5;
        let iy = ((fy / ph as f64) * g.ny as f64).floor() as usize;
        for px in 0..pw {
            let fx = px as f64 + 0.5;
            let ix = ((fx / pw as f64) * g.nx as f64).floor() as usize;
            let v = image[[iy.min(g.ny - 1), ix.min(g.nx - 1)]];
            let [r, gg, b] = o.colour_map.rgb_of_value(&o.scale, v);
            area.draw_pixel((px as i32, py as i32), &RGBColor(r, gg, b)).map_err(msg)?;
        }
    }
    if let Some(beam) = o.beam {
        let px_per_rad = pw as f64 / (g.nx as f64 * g.cell_rad);
        draw_beam(&area, beam, px_per_rad, ph)?;
    }
    draw_colour_bar(
        &right,
        (rows.start, rows.end),
        &o.scale,
        o.colour_map,
        (0.0, 1.0),
        &o.value_label,
    )
}

/// The restoring beam's half-maximum ellipse, centred a little inside the lower-left corner.
///
/// The major axis points at position angle θ from north through east; with east to the left
/// and north up on screen, a point at angle s on the ellipse is at sky offset
/// (east, north) = (a/2 cos s sin θ + b/2 sin s cos θ, a/2 cos s cos θ − b/2 sin s sin θ).
fn draw_beam(
    area: &Canvas<'_>,
    beam: RestoringBeam,
    px_per_rad: f64,
    ph: u32,
) -> Result<(), String> {
    let (a, b) = (0.5 * beam.major_rad * px_per_rad, 0.5 * beam.minor_rad * px_per_rad);
    if !(a.is_finite() && b.is_finite() && a > 0.0 && b > 0.0) {
        return Ok(());
    }
    let (st, ct) = beam.position_angle_rad.sin_cos();
    let (cx, cy) = (a + 10.0, ph as f64 - a - 10.0);
    let points: Vec<(i32, i32)> = (0..=72)
        .map(|k| {
            let (ss, cs) = (k as f64 * std::f64::consts::TAU / 72.0).sin_cos();
            let east = a * cs * st + b * ss * ct;
            let north = a * cs * ct - b * ss * st;
            ((cx - east).round() as i32, (cy - north).round() as i32)
        })
        .collect();
    area.draw(&Polygon::new(points.clone(), WHITE.mix(0.5))).map_err(msg)?;
    area.draw(&PathElement::new(points, BLACK.stroke_width(1))).map_err(msg)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::colour::Stretch;

    #[test]
    fn east_is_left_north_is_up() {
        // Convention check (FITS/astronomical display: east left, north up). A single bright
        // pixel at l > 0, m > 0 must appear in the upper-left quadrant of the image area.
        let g = ImageGeometry::new(32, 32, 1e-4);
        let mut im = ndarray::Array2::<f64>::zeros((32, 32));
        let (x, y) = g.pixel_of_lm(10e-4, 8e-4);
        im[[y as usize, x as usize]] = 1.0;
        let scale = ColourScale::new(0.0, 1.0, Stretch::Linear).unwrap();
        let o = ImagePngOptions {
            image_side_px: 320,
            ..ImagePngOptions::new("t", scale, ColourMap::Sequential, "Jy")
        };
        let (w, h, rgb) = render_image_rgb(im.view(), &g, &o).unwrap();
        // The brightest pixels (top colour of the map) locate the source; the colour bar is at
        // x > w − BAR_PX, so search only left of it.
        let top = ColourMap::Sequential.rgb(1.0);
        let mut hits = Vec::new();
        for py in 0..h {
            for px in 0..(w - BAR_PX) {
                let i = 3 * (py * w + px) as usize;
                if rgb[i..i + 3] == top {
                    hits.push((px, py));
                }
            }
        }
        assert!(!hits.is_empty());
        // The image area spans x ∈ [LEFT+MARGIN, LEFT+MARGIN+320), y ∈ [TOP-ish, +320).
        let mx = hits.iter().map(|h| h.0 as f64).sum::<f64>() / hits.len() as f64;
        let my = hits.iter().map(|h| h.1 as f64).sum::<f64>() / hits.len() as f64;
        let x0 = (LEFT_PX + MARGIN_PX) as f64;
        // Expected screen position: pixel (x, y) = (6, 24) of 32 → 6.5/32 from the left,
        // 7.5/32 from the top of a 320 px area; allow ±6 px for axis-area rounding.
        assert!((mx - (x0 + 320.0 * 6.5 / 32.0)).abs() < 6.0, "x {mx}");
        let y_top_expected = 320.0 * 7.5 / 32.0;
        assert!(my > 20.0 && my < 20.0 + TOP_PX as f64 + y_top_expected + 6.0, "y {my}");
        assert!(my < h as f64 / 2.0, "source should be in the upper half, at {my}");
    }
}
