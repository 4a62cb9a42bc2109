//! Hover titles for SVG figures without scripts: an invisible disc with a `<title>` child over
//! each data point, appended to the finished SVG (plotters writes no `<title>` elements).
//!
//! ```ignore
//! let svg = add_hover_titles(svg, &[(120, 80, "WD 0001: 0.60 M☉".to_string())]);
//! assert!(svg.contains("<title>WD 0001"));
//! ```

use crate::report::text::escape_html;

/// Inserts one invisible, hoverable disc of radius 7 px per `(x, y, title)` before the closing
/// `</svg>`; the discs come last so they sit above the drawing.
pub(crate) fn add_hover_titles(svg: String, items: &[(i32, i32, String)]) -> String {
    let Some(end) = svg.rfind("</svg>") else {
        return svg;
    };
    let mut layer = String::from("<g class=\"hover\">\n");
    for (x, y, title) in items {
        layer.push_str(&format!(
            "<circle cx=\"{x}\" cy=\"{y}\" r=\"7\" fill=\"#fff\" fill-opacity=\"0\" \
             pointer-events=\"all\"><title>{}</title></circle>\n",
            escape_html(title)
        ));
    }
    layer.push_str("</g>\n");
    let mut out = svg;
    out.insert_str(end, &layer);
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn titles_are_escaped_and_placed_inside_the_svg() {
        // XML 1.0 predefined entities (W3C XML 1.0, section 4.6).
        let svg = add_hover_titles("<svg>\n</svg>\n".into(), &[(1, 2, "a<b & c".into())]);
        assert!(svg.contains("<title>a&lt;b &amp; c</title>"));
        assert!(svg.trim_end().ends_with("</svg>"));
    }
}
