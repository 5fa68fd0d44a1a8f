//! The pieces every PNG shares: the embedded font, write-then-rename, number formatting.

use std::path::Path;
use std::sync::OnceLock;

use plotters::coord::Shift;
use plotters::prelude::*;

use crate::atomic::TempSibling;
use crate::ReportError;

/// The drawing surface every plot function draws on.
pub(crate) type Canvas<'a> = DrawingArea<BitMapBackend<'a>, Shift>;

/// Font family name the plots ask for; registered from the embedded DejaVu Sans.
pub(crate) const FONT: &str = "sans-serif";

static FONT_READY: OnceLock<Result<(), &'static str>> = OnceLock::new();

/// Register DejaVu Sans (regular and bold) with plotters once per process, so text renders the
/// same on every machine without a system font library.
pub(crate) fn ensure_font() -> Result<(), ReportError> {
    let r = FONT_READY.get_or_init(|| {
        plotters::style::register_font(FONT, FontStyle::Normal, dejavu::sans::regular())
            .map_err(|_| "embedded DejaVu Sans regular")?;
        plotters::style::register_font(FONT, FontStyle::Bold, dejavu::sans::bold())
            .map_err(|_| "embedded DejaVu Sans bold")?;
        Ok(())
    });
    r.map_err(|which| ReportError::InvalidInput {
        what: "font",
        value: which.to_string(),
        why: "the font data could not be parsed",
    })
}

/// Draw with `draw` on a white `size` canvas and write it to `path` as PNG, atomically.
pub(crate) fn render_png<F>(path: &Path, size: (u32, u32), draw: F) -> Result<(), ReportError>
where
    F: FnOnce(&Canvas<'_>) -> Result<(), String>,
{
    let is_png =
        path.extension().and_then(|e| e.to_str()).is_some_and(|e| e.eq_ignore_ascii_case("png"));
    if !is_png {
        return Err(ReportError::BadPath {
            path: path.into(),
            why: "PNG outputs must end in .png",
        });
    }
    check_size(size)?;
    ensure_font()?;
    let plot_err = |message: String| ReportError::Plot { path: path.into(), message };
    let temp = TempSibling::file(path)?;
    {
        let root = BitMapBackend::new(temp.path(), size).into_drawing_area();
        root.fill(&WHITE).map_err(|e| plot_err(e.to_string()))?;
        draw(&root).map_err(plot_err)?;
        root.present().map_err(|e| plot_err(e.to_string()))?;
    }
    temp.commit()
}

/// Draw into an RGB buffer of `size` instead of a file (for checking what a plot shows).
#[cfg(test)]
pub(crate) fn render_rgb<F>(size: (u32, u32), draw: F) -> Result<Vec<u8>, ReportError>
where
    F: FnOnce(&Canvas<'_>) -> Result<(), String>,
{
    check_size(size)?;
    ensure_font()?;
    let plot_err = |message: String| ReportError::Plot { path: "<memory>".into(), message };
    let mut buf = vec![0u8; size.0 as usize * size.1 as usize * 3];
    {
        let root = BitMapBackend::with_buffer(&mut buf, size).into_drawing_area();
        root.fill(&WHITE).map_err(|e| plot_err(e.to_string()))?;
        draw(&root).map_err(plot_err)?;
        root.present().map_err(|e| plot_err(e.to_string()))?;
    }
    Ok(buf)
}

fn check_size(size: (u32, u32)) -> Result<(), ReportError> {
    if size.0 < 200 || size.1 < 150 || size.0 > 8000 || size.1 > 8000 {
        return Err(ReportError::InvalidInput {
            what: "PNG size",
            value: format!("{} x {}", size.0, size.1),
            why: "must be between 200 x 150 and 8000 x 8000 pixels",
        });
    }
    Ok(())
}

/// Turn any displayable plotting error into the message kept in [`ReportError::Plot`].
pub(crate) fn msg<E: std::fmt::Display>(e: E) -> String {
    e.to_string()
}

/// A short label for a tick value: plain decimals between 1e-3 and 1e4, otherwise scientific,
/// at most 3 significant digits, no trailing zeros.
pub(crate) fn format_value(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return if v == 0.0 { "0".into() } else { v.to_string() };
    }
    let a = v.abs();
    if (1e-3..1e4).contains(&a) {
        let decimals = (2 - a.log10().floor() as i32).max(0) as usize;
        let s = format!("{v:.decimals$}");
        if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        }
    } else {
        let s = format!("{v:.2e}");
        let (mant, exp) = s.split_once('e').unwrap_or((&s, "0"));
        let mant = if mant.contains('.') {
            mant.trim_end_matches('0').trim_end_matches('.')
        } else {
            mant
        };
        format!("{mant}e{exp}")
    }
}

/// Distinguishable line colours (our own choice), cycled over series.
pub(crate) const SERIES_COLOURS: [RGBColor; 8] = [
    RGBColor(20, 90, 180),
    RGBColor(215, 95, 10),
    RGBColor(20, 145, 70),
    RGBColor(190, 30, 120),
    RGBColor(110, 75, 35),
    RGBColor(80, 80, 80),
    RGBColor(10, 160, 185),
    RGBColor(150, 120, 0),
];

#[cfg(test)]
mod tests {
    use super::format_value;

    #[test]
    fn tick_labels() {
        assert_eq!(format_value(0.0), "0");
        assert_eq!(format_value(1.0), "1");
        assert_eq!(format_value(-2.5), "-2.5");
        assert_eq!(format_value(0.0123456), "0.0123");
        assert_eq!(format_value(1234.4), "1234");
        assert_eq!(format_value(1.0e-5), "1e-5");
        assert_eq!(format_value(2.5e6), "2.5e6");
    }
}
