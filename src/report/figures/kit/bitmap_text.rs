//! Correct glyph placement for text in the PNG figures.
//!
//! plotters 0.3.7 rasterises `ab_glyph` text by placing each glyph's pixel box at the pen
//! position, dropping the glyph's left side bearing, so letters drift by up to a pixel or two
//! ("dim ension"). For the PNG figures the plotting code therefore draws text one glyph at a
//! time with the bearing added back ([`draw_text_glyphwise`]); the SVG keeps whole strings. The bearings come from the embedded font's own `hhea`, `OS/2`, `cmap`
//! (format 4) and `hmtx` tables (OpenType specification, Microsoft/Adobe), read here in ~100
//! lines because the crate that knows them (`ab_glyph`) is not one of our direct dependencies.
//!
//! ```ignore
//! let metrics = FontMetrics::parse(FONT_BYTES).unwrap();
//! draw_text_glyphwise(&area, "ϒ (dimensionless)", &style, (400, 700), &metrics)?;
//! ```

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos};

/// The metrics needed to place glyphs: units per pixel height and, per character, the left side
/// bearing in font units.
pub(crate) struct FontMetrics<'a> {
    font: &'a [u8],
    /// ascender − descender in font units (the height `ab_glyph` scales to the pixel size).
    height_units: f64,
    num_h_metrics: usize,
    hmtx: usize,
    hmtx_len: usize,
    cmap4: usize,
}

fn u16_at(b: &[u8], at: usize) -> Option<u16> {
    Some(u16::from_be_bytes([*b.get(at)?, *b.get(at + 1)?]))
}
fn i16_at(b: &[u8], at: usize) -> Option<i16> {
    u16_at(b, at).map(|v| v as i16)
}
fn u32_at(b: &[u8], at: usize) -> Option<u32> {
    Some(u32::from_be_bytes([
        *b.get(at)?,
        *b.get(at + 1)?,
        *b.get(at + 2)?,
        *b.get(at + 3)?,
    ]))
}

impl<'a> FontMetrics<'a> {
    /// Reads the tables; `None` if the font lacks one of them (text then falls back to plotters'
    /// own placement).
    pub fn parse(font: &'a [u8]) -> Option<Self> {
        let num_tables = u16_at(font, 4)? as usize;
        let table = |tag: &[u8; 4]| -> Option<(usize, usize)> {
            (0..num_tables).find_map(|k| {
                let rec = 12 + 16 * k;
                (font.get(rec..rec + 4)? == tag).then_some((
                    u32_at(font, rec + 8)? as usize,
                    u32_at(font, rec + 12)? as usize,
                ))
            })
        };
        let (hhea, _) = table(b"hhea")?;
        let (hmtx, hmtx_len) = table(b"hmtx")?;
        let (cmap, _) = table(b"cmap")?;
        let num_h_metrics = u16_at(font, hhea + 34)? as usize;
        // Ascender/descender as the rasteriser reads them: OS/2 typographic values when the font
        // sets USE_TYPO_METRICS (fsSelection bit 7), else hhea.
        let mut ascender = i16_at(font, hhea + 4)? as f64;
        let mut descender = i16_at(font, hhea + 6)? as f64;
        if let Some((os2, _)) = table(b"OS/2") {
            if u16_at(font, os2 + 62).is_some_and(|sel| sel & (1 << 7) != 0) {
                ascender = i16_at(font, os2 + 68)? as f64;
                descender = i16_at(font, os2 + 70)? as f64;
            }
        }
        // A Unicode BMP subtable in format 4: (3, 1) or any platform-0 encoding.
        let n_sub = u16_at(font, cmap + 2)? as usize;
        let cmap4 = (0..n_sub).find_map(|k| {
            let rec = cmap + 4 + 8 * k;
            let (platform, encoding) = (u16_at(font, rec)?, u16_at(font, rec + 2)?);
            let sub = cmap + u32_at(font, rec + 4)? as usize;
            let unicode = platform == 0 || (platform == 3 && encoding == 1);
            (unicode && u16_at(font, sub)? == 4).then_some(sub)
        })?;
        let height_units = ascender - descender;
        (height_units > 0.0).then_some(Self {
            font,
            height_units,
            num_h_metrics,
            hmtx,
            hmtx_len,
            cmap4,
        })
    }

    fn glyph_id(&self, c: char) -> Option<u16> {
        let c = u32::from(c);
        if c > 0xFFFF {
            return None;
        }
        let c = c as u16;
        let b = self.font;
        let t = self.cmap4;
        let seg_count = (u16_at(b, t + 6)? / 2) as usize;
        let ends = t + 14;
        let starts = ends + 2 * seg_count + 2;
        let deltas = starts + 2 * seg_count;
        let offsets = deltas + 2 * seg_count;
        // Segments are sorted by end code; the first with end ≥ c is the candidate.
        let (mut lo, mut hi) = (0usize, seg_count);
        while lo < hi {
            let mid = (lo + hi) / 2;
            if u16_at(b, ends + 2 * mid)? < c {
                lo = mid + 1;
            } else {
                hi = mid;
            }
        }
        let k = lo;
        if k >= seg_count || u16_at(b, starts + 2 * k)? > c {
            return None;
        }
        let start = u16_at(b, starts + 2 * k)?;
        let delta = u16_at(b, deltas + 2 * k)?;
        let range_offset = u16_at(b, offsets + 2 * k)?;
        let gid = if range_offset == 0 {
            c.wrapping_add(delta)
        } else {
            let at = offsets + 2 * k + range_offset as usize + 2 * (c - start) as usize;
            match u16_at(b, at)? {
                0 => 0,
                g => g.wrapping_add(delta),
            }
        };
        (gid != 0).then_some(gid)
    }

    /// Left side bearing of `c` in font units.
    fn lsb_units(&self, c: char) -> Option<i16> {
        let gid = self.glyph_id(c)? as usize;
        let at = if gid < self.num_h_metrics {
            self.hmtx + 4 * gid + 2
        } else {
            self.hmtx + 4 * self.num_h_metrics + 2 * (gid - self.num_h_metrics)
        };
        (at + 2 <= self.hmtx + self.hmtx_len)
            .then(|| i16_at(self.font, at))
            .flatten()
    }

    /// Advance width of `c` in font units (for tests).
    #[cfg(test)]
    fn advance_units(&self, c: char) -> Option<u16> {
        let gid = (self.glyph_id(c)? as usize).min(self.num_h_metrics - 1);
        u16_at(self.font, self.hmtx + 4 * gid)
    }

    /// The pixel shift the rasteriser drops for `c` at pixel size `size`: floor(bearing × scale),
    /// exactly as the glyph's pixel box is computed.
    fn bearing_px(&self, c: char, size: f64) -> i32 {
        self.lsb_units(c)
            .map(|l| (l as f64 * size / self.height_units).floor() as i32)
            .unwrap_or(0)
    }
}

/// Draws `text` on a bitmap one glyph at a time, each at its pen position (the laid-out width
/// of the text before it, kerning included) plus its bearing, honouring the style's anchor and
/// rotation.
pub(crate) fn draw_text_glyphwise<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    text: &str,
    style: &TextStyle<'_>,
    pos: (i32, i32),
    metrics: &FontMetrics<'_>,
) -> Result<(), String> {
    let width = |s: &str| -> Result<i32, String> {
        if s.is_empty() {
            return Ok(0);
        }
        let ((x0, _), (x1, _)) = style.font.layout_box(s).map_err(|e| e.to_string())?;
        Ok(x1 - x0)
    };
    let total = width(text)?;
    let start = match style.pos.h_pos {
        HPos::Left => 0,
        HPos::Center => -total / 2,
        HPos::Right => -total,
    };
    let size = style.font.get_size();
    let transform = style.font.get_transform();
    let glyph_style = style.pos(Pos::new(HPos::Left, style.pos.v_pos));
    for (byte, c) in text.char_indices() {
        if c.is_whitespace() {
            continue;
        }
        let along = start + width(&text[..byte])? + metrics.bearing_px(c, size);
        let (dx, dy) = transform.transform(along, 0);
        let mut buf = [0u8; 4];
        area.draw_text(
            c.encode_utf8(&mut buf),
            &glyph_style,
            (pos.0 + dx, pos.1 + dy),
        )
        .map_err(|e| e.to_string())?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use plotters::style::{FontDesc, FontFamily as PFamily, FontStyle as PStyle};

    fn metrics() -> FontMetrics<'static> {
        FontMetrics::parse(super::super::FONT_BYTES).expect("DejaVu Sans tables")
    }

    #[test]
    fn cmap_covers_the_report_alphabet() {
        let m = metrics();
        for c in "AZaz09ϒτΔχ²☉σ−±≤".chars() {
            assert!(m.glyph_id(c).is_some(), "{c} has no glyph");
        }
        assert!(m.glyph_id('\u{E000}').is_none());
    }

    #[test]
    fn advances_agree_with_ab_glyph() {
        // Cross-check against an independent reader of the same font: plotters' text width
        // comes from ab_glyph (ttf-parser). Kerning aside, the summed advances must agree to
        // within the integer truncation of the width.
        super::super::ensure_font().unwrap();
        let m = metrics();
        let size = 40.0;
        let text = "Hmm 0.075 ϒτ";
        let font = FontDesc::new(PFamily::Name(super::super::FONT), size, PStyle::Normal);
        let (w, _) = font.box_size(text).unwrap();
        let ours: f64 = text
            .chars()
            .map(|c| m.advance_units(c).unwrap() as f64 * size / m.height_units)
            .sum();
        assert!((ours - w as f64).abs() <= 2.0, "ours {ours}, ab_glyph {w}");
    }

    #[test]
    fn bearings_are_small_and_mostly_positive() {
        let m = metrics();
        // Common practice, no source: sans-serif lower-case letters sit just right of the pen.
        for c in "mnhi".chars() {
            let b = m.lsb_units(c).unwrap();
            assert!(b > 0 && b < 400, "{c}: {b}");
        }
    }
}
