//! The vertical colour bar beside image and uv plots, with ticks at round values.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use crate::colour::{ColourMap, ColourScale, Stretch};
use crate::png_canvas::{format_value, msg, Canvas, FONT};

/// Width of the area a colour bar needs, pixels.
pub(crate) const BAR_AREA_PX: u32 = 150;
const BAR_LEFT_PX: i32 = 14;
const BAR_WIDTH_PX: i32 = 28;

/// Round tick values between `lo` and `hi`, about `target` of them: multiples of 1, 2 or 5
/// times a power of ten.
pub(crate) fn linear_ticks(lo: f64, hi: f64, target: usize) -> Vec<f64> {
    let raw = (hi - lo) / target.max(1) as f64;
    if !(raw.is_finite() && raw > 0.0) {
        return vec![lo];
    }
    let mag = 10f64.powf(raw.log10().floor());
    let step =
        [1.0, 2.0, 5.0, 10.0].iter().map(|f| f * mag).find(|s| *s >= raw).unwrap_or(10.0 * mag);
    let (first, last) = ((lo / step).ceil() as i64, (hi / step).floor() as i64);
    (first..=last).map(|k| k as f64 * step).collect()
}

/// Tick values for `scale`: round linear ticks, or for an asinh stretch 0 and ±{1, 2, 5}·10^k
/// chosen so that ticks stay at least 6 % of the bar apart (powers of ten first).
pub(crate) fn colour_ticks(scale: &ColourScale) -> Vec<f64> {
    match scale.stretch {
        Stretch::Linear => linear_ticks(scale.min, scale.max, 6),
        Stretch::Asinh { softening } => {
            let top = scale.min.abs().max(scale.max.abs());
            let (k0, k1) = ((softening.log10().floor() as i32) - 2, top.log10().ceil() as i32);
            let mut candidates = vec![0.0];
            for c in [1.0, 2.0, 5.0] {
                for k in (k0..=k1).rev() {
                    let v = c * 10f64.powi(k);
                    candidates.extend([v, -v]);
                }
            }
            let mut kept: Vec<(f64, f64)> = Vec::new();
            for v in candidates.into_iter().filter(|v| *v >= scale.min && *v <= scale.max) {
                let t = scale.position(v).unwrap_or(0.0);
                if kept.iter().all(|(_, u)| (t - u).abs() >= 0.06) {
                    kept.push((v, t));
                }
            }
            kept.sort_by(|a, b| a.1.total_cmp(&b.1));
            kept.into_iter().map(|(v, _)| v).collect()
        }
    }
}

/// Draw a colour bar in `area` (a column [`BAR_AREA_PX`] wide), its gradient spanning the
/// absolute pixel rows `rows` (top, bottom) so it lines up with the plot beside it. The bar
/// shows map positions `t_span` (a sub-range keeps very light colours off a white page).
pub(crate) fn draw_colour_bar(
    area: &Canvas<'_>,
    rows: (i32, i32),
    scale: &ColourScale,
    map: ColourMap,
    t_span: (f64, f64),
    label: &str,
) -> Result<(), String> {
    let (_, ay) = area.get_base_pixel();
    let (w, _) = area.dim_in_pixel();
    let (top, bottom) = (rows.0 - ay, rows.1 - ay);
    let h = (bottom - top).max(1);
    let colour_at = |t: f64| {
        let [r, g, b] = map.rgb(t_span.0 + t * (t_span.1 - t_span.0));
        RGBColor(r, g, b)
    };
    for py in top..bottom {
        let t = 1.0 - ((py - top) as f64 + 0.5) / h as f64;
        let c = colour_at(t);
        area.draw(&PathElement::new([(BAR_LEFT_PX, py), (BAR_LEFT_PX + BAR_WIDTH_PX - 1, py)], c))
            .map_err(msg)?;
    }
    let right = BAR_LEFT_PX + BAR_WIDTH_PX;
    area.draw(&Rectangle::new(
        [(BAR_LEFT_PX - 1, top - 1), (right, bottom)],
        BLACK.stroke_width(1),
    ))
    .map_err(msg)?;
    let text = (FONT, 13).into_font().color(&BLACK).pos(Pos::new(HPos::Left, VPos::Center));
    for v in colour_ticks(scale) {
        let t = scale.position(v).unwrap_or(0.0);
        let y = bottom - (t * h as f64).round() as i32;
        area.draw(&PathElement::new([(right, y), (right + 5, y)], BLACK)).map_err(msg)?;
        area.draw(&Text::new(format_value(v), (right + 8, y), text.clone())).map_err(msg)?;
    }
    let desc = (FONT, 14)
        .into_font()
        .transform(FontTransform::Rotate90)
        .color(&BLACK)
        .pos(Pos::new(HPos::Center, VPos::Center));
    area.draw(&Text::new(label.to_string(), (w as i32 - 24, (top + bottom) / 2), desc))
        .map_err(msg)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_ticks() {
        // 1-2-5 steps (common practice for axis ticks).
        let t = linear_ticks(-0.001, 1.0, 6);
        assert_eq!(t.len(), 6);
        assert!((t[1] - 0.2).abs() < 1e-15 && t[0] == 0.0);
        let t = linear_ticks(1.0, 1.875, 6);
        assert!((t[0] - 1.0).abs() < 1e-15 && (t[1] - 1.2).abs() < 1e-12 && t.len() == 5, "{t:?}");
        let s = ColourScale::new(-2e-3, 1.0, Stretch::Asinh { softening: 2e-3 }).unwrap();
        let t = colour_ticks(&s);
        assert!(t.contains(&0.0) && t.contains(&1.0) && t.contains(&0.01), "{t:?}");
        assert!(t.windows(2).all(|w| w[0] < w[1]));
    }
}
