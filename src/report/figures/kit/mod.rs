//! The drawing kit shared by every figure: the embedded font, the pen that puts text on SVG and
//! PNG alike, the palette, axes with their ticks, line work and markers, and the two renderers
//! (SVG string, PNG bytes).
//!
//! A figure is one drawing routine generic over the plotters backend; [`svg_string`] and
//! [`png_bytes`] run it once per format, so both files always show the same picture. Text uses
//! the embedded DejaVu Sans (registered once through plotters' `ab_glyph` support): no system
//! font is read at run time and the bytes are identical for identical input. In the PNG the
//! text goes glyph by glyph with corrected bearings ([`bitmap_text`]).
//!
//! ```ignore
//! fn draw<DB: DrawingBackend>(root: &DrawingArea<DB, Shift>, pen: Pen<'_>) -> DrawResult {
//!     root.fill(&WHITE).map_err(err)?;
//!     pen.text(root, "ϒ", &text_style(16.0), (20, 20))
//! }
//! let svg = svg_string((200, 100), "example (SVG)", |root| draw(root, SVG_PEN))?;
//! let png = png_bytes((200, 100), "example (PNG)", |root| draw(root, png_pen()))?;
//! ```

pub(crate) mod axes;
mod bitmap_text;
pub(crate) mod hover;
pub(crate) mod marks;
pub(crate) mod palette;

use std::sync::OnceLock;

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::{FontDesc, FontFamily, FontStyle};

use self::bitmap_text::{draw_text_glyphwise, FontMetrics};
use self::palette::INK;
use crate::report::ReportError;

/// The font family name under which the embedded font is registered. It doubles as the SVG
/// `font-family` value, so a browser without DejaVu Sans falls back to its own sans-serif.
pub(crate) const FONT: &str = "DejaVu Sans, sans-serif";
/// The embedded DejaVu Sans (licence in `assets/fonts/`): no system font is read at run time.
pub(crate) static FONT_BYTES: &[u8] = include_bytes!("../../../../assets/fonts/DejaVuSans.ttf");

/// Registers the embedded font with plotters (once per process); every renderer calls it first.
pub(crate) fn ensure_font() -> Result<(), ReportError> {
    static REGISTERED: OnceLock<bool> = OnceLock::new();
    let ok = *REGISTERED.get_or_init(|| {
        plotters::style::register_font(FONT, FontStyle::Normal, FONT_BYTES).is_ok()
    });
    if ok {
        Ok(())
    } else {
        Err(ReportError::Draw {
            plot: "fonts",
            message: "the embedded DejaVu Sans could not be parsed".into(),
        })
    }
}

fn font(size: f64) -> FontDesc<'static> {
    FontDesc::new(FontFamily::Name(FONT), size, FontStyle::Normal)
}

/// Text of `size` pixels in the embedded font and the ink colour.
pub(crate) fn text_style(size: f64) -> TextStyle<'static> {
    TextStyle::from(font(size)).color(&INK)
}

/// What a drawing step returns: plotters' errors as text, wrapped into a [`ReportError`] by the
/// renderer that knows which figure failed.
pub(crate) type DrawResult = Result<(), String>;

/// Turns any plotters error into the text of a [`DrawResult`].
pub(crate) fn err<E: std::fmt::Display>(e: E) -> String {
    e.to_string()
}

/// How text is put on a figure: whole strings (SVG, where the viewer lays text out) or glyph by
/// glyph with corrected bearings (PNG, see [`bitmap_text`]).
#[derive(Clone, Copy)]
pub(crate) struct Pen<'m> {
    glyphs: Option<&'m FontMetrics<'static>>,
}

impl Pen<'_> {
    /// Draws `text` at `pos` (anchored as `style` says).
    pub(crate) fn text<DB: DrawingBackend>(
        &self,
        area: &DrawingArea<DB, Shift>,
        text: &str,
        style: &TextStyle<'_>,
        pos: (i32, i32),
    ) -> DrawResult {
        match self.glyphs {
            Some(m) => draw_text_glyphwise(area, text, style, pos, m),
            None => area.draw_text(text, style, pos).map_err(err),
        }
    }
}

/// The SVG pen: whole strings, laid out by the viewer.
pub(crate) const SVG_PEN: Pen<'static> = Pen { glyphs: None };

/// The PNG pen: glyph-wise text when the font's metrics can be read, else plotters' own.
pub(crate) fn png_pen() -> Pen<'static> {
    static METRICS: OnceLock<Option<FontMetrics<'static>>> = OnceLock::new();
    Pen {
        glyphs: METRICS
            .get_or_init(|| FontMetrics::parse(FONT_BYTES))
            .as_ref(),
    }
}

/// Draws a figure of `size` pixels into an SVG document; `plot` names the figure in errors.
pub(crate) fn svg_string<F>(
    size: (u32, u32),
    plot: &'static str,
    draw: F,
) -> Result<String, ReportError>
where
    F: for<'a> Fn(&DrawingArea<SVGBackend<'a>, Shift>) -> DrawResult,
{
    ensure_font()?;
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, size).into_drawing_area();
        draw(&root)
            .and_then(|_| root.present().map_err(err))
            .map_err(|message| ReportError::Draw { plot, message })?;
    }
    Ok(out)
}

/// Draws a figure of `size` pixels into PNG bytes; `plot` names the figure in errors.
///
/// plotters encodes PNG only when writing a file; our crate has no PNG encoder of its own, so
/// the image goes through a private temporary folder and is read back.
pub(crate) fn png_bytes<F>(
    size: (u32, u32),
    plot: &'static str,
    draw: F,
) -> Result<Vec<u8>, ReportError>
where
    F: for<'a> Fn(&DrawingArea<BitMapBackend<'a>, Shift>) -> DrawResult,
{
    ensure_font()?;
    let fail = |message: String| ReportError::Draw { plot, message };
    let dir = tempfile::tempdir().map_err(|e| fail(e.to_string()))?;
    let path = dir.path().join("figure.png");
    {
        let root = BitMapBackend::new(&path, size).into_drawing_area();
        draw(&root)
            .and_then(|_| root.present().map_err(err))
            .map_err(fail)?;
    }
    std::fs::read(&path).map_err(|e| fail(e.to_string()))
}

/// Compact number for legends: up to 4 significant digits, no trailing zeros.
pub(crate) fn short(x: f64) -> String {
    crate::report::text::fmt_sig(x, 4)
}

/// `s` with control characters blanked, cut to `max_chars` with an ellipsis: user text (labels,
/// file names) must not overflow a legend.
pub(crate) fn truncate(s: &str, max_chars: usize) -> String {
    let clean: String = s
        .chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .collect();
    if clean.chars().count() <= max_chars {
        clean
    } else {
        let mut t: String = clean.chars().take(max_chars.saturating_sub(1)).collect();
        t.push('…');
        t
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Dark pixels of `text` drawn at 48 px with the PNG pen, on a 64 × 64 white square.
    fn ink(text: &str) -> Vec<bool> {
        ensure_font().unwrap();
        let mut buf = vec![255u8; 64 * 64 * 3];
        {
            let root = BitMapBackend::with_buffer(&mut buf, (64, 64)).into_drawing_area();
            png_pen()
                .text(&root, text, &text_style(48.0), (8, 4))
                .unwrap();
            root.present().unwrap();
        }
        buf.chunks(3).map(|p| p[0] < 128).collect()
    }

    /// The parameter's symbol must not read as a Latin "Y" in the PNG figures. Rasterised in the
    /// embedded font, the Greek capital Upsilon (U+03A5) is the Latin Y's shape (Unicode's
    /// confusables list pairs them), while the upsilon with hook (U+03D2) differs by a large
    /// share of its ink (its curled arms). Thresholds: common practice, no source.
    #[test]
    fn upsilon_with_hook_does_not_rasterise_as_latin_y() {
        let differ = |a: &[bool], b: &[bool]| a.iter().zip(b).filter(|(x, y)| x != y).count();
        let (y, capital, hook) = (ink("Y"), ink("Υ"), ink("ϒ"));
        let y_ink = y.iter().filter(|&&p| p).count();
        assert!(y_ink > 50, "the font drew no Y");
        assert!(
            differ(&y, &capital) * 10 < y_ink,
            "U+03A5 is expected to look like Y: {} of {y_ink}",
            differ(&y, &capital)
        );
        assert!(
            differ(&y, &hook) * 10 > 3 * y_ink,
            "U+03D2 too close to Y: {} of {y_ink}",
            differ(&y, &hook)
        );
    }
}
