//! The two figures: the allowed-region map in the (Υ, τ) plane and the bounds against Υ.
//!
//! One drawing routine per figure, generic over the plotters backend, renders both the SVG
//! string and the PNG bytes, so the two files always show the same picture. Text uses the
//! embedded DejaVu Sans (registered once through plotters' `ab_glyph` support): no system font
//! is read at run time and the bytes are identical for identical input.
//!
//! Colours are our own: the three confidence levels are dark, medium and light steps of one
//! slate-blue family (they stay ordered in greyscale); class outlines differ by dash pattern
//! first and colour second, with a white halo so they read on any fill; markers differ by shape.
//!
//! ```no_run
//! # fn demo(map: &dwarfbound::report::AllowedMap) -> Result<(), dwarfbound::report::ReportError> {
//! let svg = dwarfbound::report::render_allowed_svg(map)?;
//! let png = dwarfbound::report::render_allowed_png(map)?;
//! assert!(svg.starts_with("<svg") && png.starts_with(b"\x89PNG"));
//! # Ok(()) }
//! ```

use std::sync::OnceLock;

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::{FontDesc, FontFamily, FontStyle, FontTransform};

use super::bitmap_text::{draw_text_glyphwise, FontMetrics};
use super::contour::{region_loops, Loop};
use super::input::{AllowedMap, BoundsCurves};
use super::ReportError;

/// The font family name under which the embedded font is registered. It doubles as the SVG
/// `font-family` value, so a browser without DejaVu Sans falls back to its own sans-serif.
pub(crate) const FONT: &str = "DejaVu Sans, sans-serif";
pub(crate) static FONT_BYTES: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");

/// Pixel size of the allowed-region map.
pub const ALLOWED_SIZE: (u32, u32) = (1000, 720);
/// Width of the bounds figure; its height grows with the number of panels.
pub const BOUNDS_WIDTH: u32 = 1100;

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

fn text_style(size: f64) -> TextStyle<'static> {
    TextStyle::from(font(size)).color(&INK)
}

/// Body text colour (near-black).
const INK: RGBColor = RGBColor(20, 20, 24);
/// Fills of the three levels, innermost (68.27 %) first: dark, medium, light slate blue.
pub(crate) const LEVEL_FILLS: [RGBColor; 3] = [
    RGBColor(27, 58, 107),
    RGBColor(84, 131, 186),
    RGBColor(190, 213, 235),
];
const NO_MODEL_FILL: RGBColor = RGBColor(236, 236, 236);
const NO_MODEL_HATCH: RGBColor = RGBColor(105, 105, 105);
const GRID_LINE: RGBColor = RGBColor(150, 150, 150);

/// One outline style: colour, dash pattern in pixels (on, off, …; empty = solid) and its name in
/// words for the tables.
pub(crate) struct LineLook {
    pub colour: RGBColor,
    pub dashes: &'static [f64],
    pub name: &'static str,
}

/// Class outline styles, cycled in the order the classes are given.
pub(crate) const OUTLINE_LOOKS: [LineLook; 5] = [
    LineLook {
        colour: RGBColor(176, 60, 0),
        dashes: &[11.0, 5.0],
        name: "long dashes",
    },
    LineLook {
        colour: RGBColor(95, 35, 150),
        dashes: &[2.5, 3.5],
        name: "dots",
    },
    LineLook {
        colour: RGBColor(0, 0, 0),
        dashes: &[],
        name: "solid",
    },
    LineLook {
        colour: RGBColor(0, 105, 60),
        dashes: &[12.0, 4.0, 2.5, 4.0],
        name: "dash-dot",
    },
    LineLook {
        colour: RGBColor(120, 80, 0),
        dashes: &[5.0, 4.0],
        name: "short dashes",
    },
];

/// Dash patterns of the τ curves in the bounds figure, cycled.
const CURVE_DASHES: [&[f64]; 6] = [
    &[],
    &[12.0, 5.0],
    &[3.0, 4.0],
    &[12.0, 4.0, 3.0, 4.0],
    &[6.0, 4.0],
    &[18.0, 4.0, 3.0, 4.0, 3.0, 4.0],
];

/// The style name (for tables and captions) of the outline of the `index`-th class.
pub fn outline_style_name(index: usize) -> &'static str {
    OUTLINE_LOOKS[index % OUTLINE_LOOKS.len()].name
}

/// Lightness ramp for the τ curves: dark violet → red-brown → orange; greyscale lightness rises
/// monotonically along it.
fn curve_colour(k: usize, n: usize) -> RGBColor {
    let stops = [
        (45.0, 20.0, 95.0),
        (140.0, 40.0, 60.0),
        (205.0, 105.0, 20.0),
    ];
    let t = if n <= 1 {
        0.0
    } else {
        k as f64 / (n - 1) as f64
    };
    let (a, b, f) = if t <= 0.5 {
        (stops[0], stops[1], t / 0.5)
    } else {
        (stops[1], stops[2], (t - 0.5) / 0.5)
    };
    let mix = |x: f64, y: f64| (x + (y - x) * f).round().clamp(0.0, 255.0) as u8;
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

type DrawResult = Result<(), String>;

fn err<E: std::fmt::Display>(e: E) -> String {
    e.to_string()
}

/// How text is put on a figure: whole strings (SVG, where the viewer lays text out) or glyph by
/// glyph with corrected bearings (PNG, see [`super::bitmap_text`]).
#[derive(Clone, Copy)]
struct Pen<'m> {
    glyphs: Option<&'m FontMetrics<'static>>,
}

impl Pen<'_> {
    fn text<DB: DrawingBackend>(
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

const SVG_PEN: Pen<'static> = Pen { glyphs: None };

/// The PNG pen: glyph-wise text when the font's metrics can be read, else plotters' own.
fn png_pen() -> Pen<'static> {
    static METRICS: OnceLock<Option<FontMetrics<'static>>> = OnceLock::new();
    Pen {
        glyphs: METRICS
            .get_or_init(|| FontMetrics::parse(FONT_BYTES))
            .as_ref(),
    }
}

/// Axes and faint grid lines of a plot with `labels` ticks per axis. Tick labels are drawn by
/// [`draw_axis_text`]; the mesh's label style must still name a registered font.
fn draw_mesh<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
    labels: usize,
    font_px: f64,
    grid_alpha: f64,
) -> Result<(), String> {
    chart
        .configure_mesh()
        .x_labels(labels)
        .y_labels(labels)
        .label_style(text_style(font_px))
        .x_label_formatter(&|_| String::new())
        .y_label_formatter(&|_| String::new())
        .bold_line_style(GRID_LINE.mix(grid_alpha).stroke_width(1))
        .light_line_style(TRANSPARENT)
        .axis_style(INK.stroke_width(1))
        .draw()
        .map_err(err)
}

/// Tick labels and axis descriptions, drawn with the pen (plotters' mesh draws only lines).
#[allow(clippy::too_many_arguments)]
fn draw_axis_text<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    chart: &ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
    ticks: (usize, usize),
    x_desc: &str,
    y_desc: &str,
    sizes: (f64, f64),
    pen: Pen<'_>,
) -> DrawResult {
    let spec = chart.as_coord_spec();
    let (x_range, y_range) = (spec.get_x_range(), spec.get_y_range());
    let label = text_style(sizes.0);
    let (left, top) = chart.backend_coord(&(x_range.start, y_range.end));
    let (right, bottom) = chart.backend_coord(&(x_range.end, y_range.start));
    let (mut lowest_label_edge, mut leftmost_label_edge) = (bottom, left);
    let x_ticks = spec.x_spec().key_points(ticks.0);
    let y_ticks = spec.y_spec().key_points(ticks.1);
    let decimals = (tick_decimals(&x_ticks), tick_decimals(&y_ticks));
    for x in x_ticks {
        let (px, _) = chart.backend_coord(&(x, y_range.start));
        let style = label.pos(Pos::new(HPos::Center, VPos::Top));
        pen.text(root, &fmt_tick(x, decimals.0), &style, (px, bottom + 9))?;
        let (_, h) = root.estimate_text_size("0", &style).map_err(err)?;
        lowest_label_edge = lowest_label_edge.max(bottom + 9 + h as i32);
    }
    for y in y_ticks {
        let (_, py) = chart.backend_coord(&(x_range.start, y));
        let text = fmt_tick(y, decimals.1);
        let style = label.pos(Pos::new(HPos::Right, VPos::Center));
        pen.text(root, &text, &style, (left - 9, py))?;
        let (w, _) = root.estimate_text_size(&text, &style).map_err(err)?;
        leftmost_label_edge = leftmost_label_edge.min(left - 9 - w as i32);
    }
    let desc = text_style(sizes.1);
    pen.text(
        root,
        x_desc,
        &desc.pos(Pos::new(HPos::Center, VPos::Top)),
        ((left + right) / 2, lowest_label_edge + 14),
    )?;
    pen.text(
        root,
        y_desc,
        &desc
            .transform(FontTransform::Rotate270)
            .pos(Pos::new(HPos::Center, VPos::Bottom)),
        (leftmost_label_edge - 10, (top + bottom) / 2),
    )
}

/// Renders the allowed-region map as an SVG document.
pub fn render_allowed_svg(map: &AllowedMap) -> Result<String, ReportError> {
    map.validate()?;
    ensure_font()?;
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, ALLOWED_SIZE).into_drawing_area();
        draw_allowed(&root, map, SVG_PEN)
            .and_then(|_| root.present().map_err(err))
            .map_err(|message| ReportError::Draw {
                plot: "allowed-region map (SVG)",
                message,
            })?;
    }
    Ok(out)
}

/// Renders the allowed-region map as PNG bytes.
pub fn render_allowed_png(map: &AllowedMap) -> Result<Vec<u8>, ReportError> {
    map.validate()?;
    ensure_font()?;
    png_via_file(ALLOWED_SIZE, "allowed-region map (PNG)", |root| {
        draw_allowed(root, map, png_pen())
    })
}

/// Renders the bounds figure as an SVG document.
pub fn render_bounds_svg(curves: &BoundsCurves) -> Result<String, ReportError> {
    curves.validate()?;
    ensure_font()?;
    let size = bounds_size(curves);
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, size).into_drawing_area();
        draw_bounds(&root, curves, SVG_PEN)
            .and_then(|_| root.present().map_err(err))
            .map_err(|message| ReportError::Draw {
                plot: "bounds figure (SVG)",
                message,
            })?;
    }
    Ok(out)
}

/// Renders the bounds figure as PNG bytes.
pub fn render_bounds_png(curves: &BoundsCurves) -> Result<Vec<u8>, ReportError> {
    curves.validate()?;
    ensure_font()?;
    png_via_file(bounds_size(curves), "bounds figure (PNG)", |root| {
        draw_bounds(root, curves, png_pen())
    })
}

/// plotters encodes PNG only when writing a file; our crate has no PNG encoder of its own, so
/// the image goes through a private temporary folder and is read back.
fn png_via_file<F>(size: (u32, u32), plot: &'static str, draw: F) -> Result<Vec<u8>, ReportError>
where
    F: for<'a> Fn(&DrawingArea<BitMapBackend<'a>, Shift>) -> DrawResult,
{
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

/// The fewest decimal places that show every tick value exactly (to a millionth of the tick
/// spacing), so labels neither repeat nor carry noise digits.
fn tick_decimals(ticks: &[f64]) -> usize {
    let spacing = ticks
        .windows(2)
        .map(|w| (w[1] - w[0]).abs())
        .filter(|d| *d > 0.0)
        .fold(f64::INFINITY, f64::min);
    if !spacing.is_finite() {
        return 2;
    }
    (0..=10)
        .find(|&d| {
            let scale = 10f64.powi(d as i32);
            ticks
                .iter()
                .all(|v| ((v * scale).round() / scale - v).abs() < spacing * 1e-6)
        })
        .unwrap_or(10)
}

fn fmt_tick(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    if s.trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        s.trim_start_matches('-').to_string()
    } else {
        s
    }
}

fn axis_range(values: &[f64]) -> (f64, f64) {
    let lo = values.first().copied().unwrap_or(0.0);
    let hi = values.last().copied().unwrap_or(1.0);
    if hi > lo {
        (lo, hi)
    } else {
        let pad = if lo == 0.0 { 0.05 } else { lo.abs() * 0.1 };
        (lo - pad, hi + pad)
    }
}

/// Splits a pixel polyline into dashes following `pattern` (on, off, on, …); empty = solid.
fn dash_polyline(points: &[(f64, f64)], pattern: &[f64]) -> Vec<Vec<(f64, f64)>> {
    if points.len() < 2 {
        return Vec::new();
    }
    if pattern.is_empty() || pattern.iter().sum::<f64>() <= 0.0 {
        return vec![points.to_vec()];
    }
    let mut out = Vec::new();
    let mut current: Vec<(f64, f64)> = vec![points[0]];
    let mut k = 0usize;
    let mut left = pattern[0];
    let mut on = true;
    for w in points.windows(2) {
        let (mut x0, mut y0) = w[0];
        let (x1, y1) = w[1];
        let mut seg = ((x1 - x0).powi(2) + (y1 - y0).powi(2)).sqrt();
        while seg > left {
            let f = left / seg;
            let (xm, ym) = (x0 + (x1 - x0) * f, y0 + (y1 - y0) * f);
            if on {
                current.push((xm, ym));
                out.push(std::mem::take(&mut current));
            } else {
                current = vec![(xm, ym)];
            }
            seg -= left;
            x0 = xm;
            y0 = ym;
            on = !on;
            k = (k + 1) % pattern.len();
            left = pattern[k];
        }
        left -= seg;
        if on {
            current.push((x1, y1));
        }
    }
    if on && current.len() >= 2 {
        out.push(current);
    }
    out
}

fn to_px(points: &[(f64, f64)]) -> Vec<(i32, i32)> {
    let mut v: Vec<(i32, i32)> = points
        .iter()
        .map(|&(x, y)| (x.round() as i32, y.round() as i32))
        .collect();
    v.dedup();
    v
}

/// Draws a pixel polyline with a white halo under it, so it reads on dark and light fills.
fn halo_line<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    points: &[(f64, f64)],
    colour: RGBColor,
    dashes: &[f64],
    width: u32,
) -> DrawResult {
    for piece in dash_polyline(points, dashes) {
        let px = to_px(&piece);
        if px.len() < 2 {
            continue;
        }
        area.draw(&PathElement::new(
            px.clone(),
            WHITE.mix(0.85).stroke_width(width + 3),
        ))
        .map_err(err)?;
    }
    for piece in dash_polyline(points, dashes) {
        let px = to_px(&piece);
        if px.len() < 2 {
            continue;
        }
        area.draw(&PathElement::new(px, colour.stroke_width(width)))
            .map_err(err)?;
    }
    Ok(())
}

/// Text on a white box, for labels placed over the map.
fn boxed_text<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    text: &str,
    pos: (i32, i32),
    size: f64,
    pen: Pen<'_>,
) -> DrawResult {
    let style = text_style(size).pos(Pos::new(HPos::Left, VPos::Center));
    let (w, h) = area.estimate_text_size(text, &style).map_err(err)?;
    let (w, h) = (w as i32, h as i32);
    area.draw(&Rectangle::new(
        [
            (pos.0 - 3, pos.1 - h / 2 - 3),
            (pos.0 + w + 3, pos.1 + h / 2 + 3),
        ],
        WHITE.mix(0.9).filled(),
    ))
    .map_err(err)?;
    area.draw(&Rectangle::new(
        [
            (pos.0 - 3, pos.1 - h / 2 - 3),
            (pos.0 + w + 3, pos.1 + h / 2 + 3),
        ],
        INK.stroke_width(1),
    ))
    .map_err(err)?;
    pen.text(area, text, &style, pos)
}

fn diamond(c: (i32, i32), r: i32) -> Vec<(i32, i32)> {
    vec![
        (c.0, c.1 - r),
        (c.0 + r, c.1),
        (c.0, c.1 + r),
        (c.0 - r, c.1),
    ]
}

/// Standard-gravity marker: white diamond with a black edge.
fn draw_standard_marker<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    c: (i32, i32),
    radius: i32,
) -> DrawResult {
    area.draw(&Polygon::new(diamond(c, radius), WHITE.filled()))
        .map_err(err)?;
    let mut outline = diamond(c, radius);
    outline.push(outline[0]);
    area.draw(&PathElement::new(outline, INK.stroke_width(2)))
        .map_err(err)?;
    area.draw(&Circle::new(c, 2, INK.filled())).map_err(err)
}

/// Best-fit marker: black-edged white disc with a black cross.
fn draw_best_fit_marker<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    c: (i32, i32),
) -> DrawResult {
    area.draw(&Circle::new(c, 8, WHITE.filled())).map_err(err)?;
    area.draw(&Circle::new(c, 8, INK.stroke_width(2)))
        .map_err(err)?;
    for (a, b) in [((-5, -5), (5, 5)), ((-5, 5), (5, -5))] {
        area.draw(&PathElement::new(
            vec![(c.0 + a.0, c.1 + a.1), (c.0 + b.0, c.1 + b.1)],
            INK.stroke_width(2),
        ))
        .map_err(err)?;
    }
    Ok(())
}

/// Diagonal hatching of a pixel rectangle (x0 < x1, y0 < y1), lines at 45° every `step` px.
fn hatch<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    (x0, y0): (i32, i32),
    (x1, y1): (i32, i32),
    step: i32,
) -> DrawResult {
    area.draw(&Rectangle::new(
        [(x0, y0), (x1, y1)],
        NO_MODEL_FILL.filled(),
    ))
    .map_err(err)?;
    // Lines x + y = c, anchored to absolute pixels so neighbouring rectangles line up.
    let first = ((x0 + y0) / step) * step;
    let mut c = first;
    while c <= x1 + y1 {
        // Intersect x + y = c with the rectangle.
        let xa = (c - y1).max(x0);
        let xb = (c - y0).min(x1);
        if xa < xb {
            area.draw(&PathElement::new(
                vec![(xa, c - xa), (xb, c - xb)],
                NO_MODEL_HATCH.stroke_width(1),
            ))
            .map_err(err)?;
        }
        c += step;
    }
    Ok(())
}

/// Grid-cell bounds around index k on an axis: halfway to each neighbour, the axis end at the
/// edges.
fn cell_bounds(axis: &[f64], k: usize) -> (f64, f64) {
    let lo = if k == 0 {
        axis[0]
    } else {
        0.5 * (axis[k - 1] + axis[k])
    };
    let hi = if k + 1 == axis.len() {
        axis[k]
    } else {
        0.5 * (axis[k] + axis[k + 1])
    };
    (lo, hi)
}

fn level_fill(level: Option<usize>) -> RGBColor {
    match level {
        Some(k) => LEVEL_FILLS[k],
        None => WHITE,
    }
}

/// Index of the innermost level that allows `v`, or None when excluded at every level.
fn level_of(map: &AllowedMap, v: f64) -> Option<usize> {
    map.levels.iter().position(|l| v <= l.threshold)
}

fn draw_allowed<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    map: &AllowedMap,
    pen: Pen<'_>,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let (width, height) = root.dim_in_pixel();
    let (chart_area, legend_area) = root.split_horizontally(width as i32 - 290);
    let chart_area = chart_area.margin(10, 10, 10, 10);
    let title = "Region of (Υ, τ) allowed by the catalogues";
    pen.text(
        &chart_area,
        title,
        &text_style(23.0).pos(Pos::new(HPos::Center, VPos::Top)),
        ((width as i32 - 290) / 2 - 10, 4),
    )?;
    let chart_area = chart_area.margin(38, 0, 0, 0);

    let (x_lo, x_hi) = axis_range(&map.upsilon);
    let (y_lo, y_hi) = axis_range(&map.tau);
    let mut chart = ChartBuilder::on(&chart_area)
        .x_label_area_size(58)
        .y_label_area_size(78)
        .margin_right(16)
        .build_cartesian_2d(x_lo..x_hi, y_lo..y_hi)
        .map_err(err)?;

    let nu = map.upsilon.len();
    let nt = map.tau.len();
    let two_dimensional = map.is_two_dimensional();

    // 1. Filled levels, painted outermost first so nested loops land on top.
    if two_dimensional {
        let mut loops: Vec<(usize, Loop)> = Vec::new();
        for (k, level) in map.levels.iter().enumerate() {
            for l in region_loops(&map.upsilon, &map.tau, &map.delta_chi2, level.threshold) {
                loops.push((k, l));
            }
        }
        // Larger |area| first; ties (coincident loops): outer boundaries of looser levels first,
        // holes of tighter levels first (a hole of a looser level lies inside a tighter one's).
        loops.sort_by(|(ka, a), (kb, b)| {
            b.signed_area
                .abs()
                .total_cmp(&a.signed_area.abs())
                .then_with(|| match (a.is_hole(), b.is_hole()) {
                    (false, false) => kb.cmp(ka),
                    (true, true) => ka.cmp(kb),
                    (false, true) => std::cmp::Ordering::Less,
                    (true, false) => std::cmp::Ordering::Greater,
                })
        });
        for (k, l) in &loops {
            let colour = if l.is_hole() {
                level_fill(if *k + 1 < 3 { Some(*k + 1) } else { None })
            } else {
                level_fill(Some(*k))
            };
            chart
                .draw_series(std::iter::once(Polygon::new(
                    l.points.clone(),
                    colour.filled(),
                )))
                .map_err(err)?;
        }
    } else {
        // A single row or column of points: one coloured square per point.
        for it in 0..nt {
            for iu in 0..nu {
                let c = chart.backend_coord(&(map.upsilon[iu], map.tau[it]));
                let v = map.delta_chi2[it * nu + iu];
                let style = match v {
                    Some(v) => level_fill(level_of(map, v)).filled(),
                    None => NO_MODEL_FILL.filled(),
                };
                root.draw(&Rectangle::new(
                    [(c.0 - 7, c.1 - 7), (c.0 + 7, c.1 + 7)],
                    style,
                ))
                .map_err(err)?;
                root.draw(&Rectangle::new(
                    [(c.0 - 7, c.1 - 7), (c.0 + 7, c.1 + 7)],
                    INK.stroke_width(1),
                ))
                .map_err(err)?;
            }
        }
    }

    // 2. Points without a model: hatched cells, merged along rows.
    let mut any_missing = false;
    for it in 0..nt {
        let mut iu = 0;
        while iu < nu {
            if map.delta_chi2[it * nu + iu].is_some() {
                iu += 1;
                continue;
            }
            any_missing = true;
            let start = iu;
            while iu < nu && map.delta_chi2[it * nu + iu].is_none() {
                iu += 1;
            }
            let (xa, _) = cell_bounds(&map.upsilon, start);
            let (_, xb) = cell_bounds(&map.upsilon, iu - 1);
            let (ya, yb) = cell_bounds(&map.tau, it);
            let (xa, xb) = if xa == xb {
                (xa - (x_hi - x_lo) * 0.01, xb + (x_hi - x_lo) * 0.01)
            } else {
                (xa, xb)
            };
            let (ya, yb) = if ya == yb {
                (ya - (y_hi - y_lo) * 0.01, yb + (y_hi - y_lo) * 0.01)
            } else {
                (ya, yb)
            };
            let p0 = chart.backend_coord(&(xa, yb));
            let p1 = chart.backend_coord(&(xb, ya));
            hatch(root, p0, p1, 7)?;
        }
    }

    // 3. Axes, ticks and faint grid lines over the fills.
    let tau_desc = format!(
        "τ (anisotropy strength, {})",
        truncate(&map.anisotropy_name, 40)
    );
    draw_mesh(&mut chart, 10, 16.5, 0.35)?;
    draw_axis_text(
        root,
        &chart,
        (10, 10),
        "Υ (dimensionless)",
        &tau_desc,
        (16.5, 20.0),
        pen,
    )?;

    // 4. Each class's own 95.45 % region, thin dashed outlines (pieces along the grid edge skipped).
    let outline_level = map.levels[1].threshold;
    if two_dimensional {
        for (ci, class) in map.class_outlines.iter().enumerate() {
            let look = &OUTLINE_LOOKS[ci % OUTLINE_LOOKS.len()];
            for l in region_loops(&map.upsilon, &map.tau, &class.delta_chi2, outline_level) {
                let n = l.points.len();
                // Start at a vertex after a grid-edge piece so runs are not split at index 0.
                let start = (0..n)
                    .find(|&k| l.on_grid_edge[k] && !l.on_grid_edge[(k + 1) % n])
                    .unwrap_or(0);
                let mut run: Vec<(f64, f64)> = Vec::new();
                for step in 0..=n {
                    let k = (start + step) % n;
                    let prev = (start + step + n - 1) % n;
                    let along_edge = step > 0 && l.on_grid_edge[k] && l.on_grid_edge[prev];
                    let c = chart.backend_coord(&l.points[k]);
                    let p = (c.0 as f64, c.1 as f64);
                    if along_edge {
                        if run.len() >= 2 {
                            halo_line(root, &run, look.colour, look.dashes, 2)?;
                        }
                        run = vec![p];
                    } else {
                        run.push(p);
                    }
                }
                if run.len() >= 2 {
                    halo_line(root, &run, look.colour, look.dashes, 2)?;
                }
            }
        }
    }

    // 5. Theoretically disfavoured Υ range.
    if let Some((u, _)) = &map.disfavoured_below_upsilon {
        if *u > x_lo && *u < x_hi {
            let a = chart.backend_coord(&(*u, y_lo));
            let b = chart.backend_coord(&(*u, y_hi));
            halo_line(
                root,
                &[(a.0 as f64, a.1 as f64), (b.0 as f64, b.1 as f64)],
                INK,
                &[4.0, 3.0, 1.0, 3.0],
                1,
            )?;
        }
    }

    // 6. Markers.
    let inside = |(u, t): (f64, f64)| u >= x_lo && u <= x_hi && t >= y_lo && t <= y_hi;
    let best_px = chart.backend_coord(&map.best_fit);
    if inside(map.standard_gravity) {
        let c = chart.backend_coord(&map.standard_gravity);
        // When the best fit sits on standard gravity, a larger diamond stays visible around the
        // best-fit disc drawn on top of it.
        let close = (c.0 - best_px.0).abs().max((c.1 - best_px.1).abs()) < 14;
        let radius = if close && inside(map.best_fit) { 15 } else { 9 };
        draw_standard_marker(root, c, radius)?;
        // Of four places around the marker, the one inside the plot farthest from the best fit.
        let label = "standard gravity";
        let size = 15.5;
        let (w, h) = root
            .estimate_text_size(label, &text_style(size))
            .map_err(err)?;
        let (w, h) = (w as i32, h as i32);
        let (left, top) = chart.backend_coord(&(x_lo, y_hi));
        let (right, bottom) = chart.backend_coord(&(x_hi, y_lo));
        let best = best_px;
        let gap = radius + 8;
        let candidates = [
            (c.0 + gap, c.1),
            (c.0 - gap - w, c.1),
            (c.0 - w / 2, c.1 - h / 2 - gap),
            (c.0 - w / 2, c.1 + h / 2 + gap),
        ];
        let fits = |&(x, y): &(i32, i32)| {
            x - 4 > left && x + w + 4 < right && y - h / 2 - 4 > top && y + h / 2 + 4 < bottom
        };
        let distance = |&(x, y): &(i32, i32)| {
            let (dx, dy) = ((x + w / 2 - best.0) as i64, (y - best.1) as i64);
            dx * dx + dy * dy
        };
        let pos = candidates
            .iter()
            .filter(|p| fits(p))
            .max_by_key(|p| distance(p))
            .copied()
            .unwrap_or(candidates[0]);
        boxed_text(root, label, pos, size, pen)?;
    }
    if inside(map.best_fit) {
        draw_best_fit_marker(root, best_px)?;
    }

    // 7. Legend.
    draw_allowed_legend(
        &legend_area,
        map,
        any_missing,
        inside(map.standard_gravity),
        height,
        pen,
    )
}

fn draw_allowed_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    map: &AllowedMap,
    any_missing: bool,
    standard_inside: bool,
    height: u32,
    pen: Pen<'_>,
) -> DrawResult {
    let x0 = 8;
    let mut y = 62;
    let heading = text_style(17.5).pos(Pos::new(HPos::Left, VPos::Center));
    let body = text_style(16.0).pos(Pos::new(HPos::Left, VPos::Center));
    let small = text_style(14.0).pos(Pos::new(HPos::Left, VPos::Center));
    let swatch = |y: i32, colour: RGBColor| -> DrawResult {
        area.draw(&Rectangle::new(
            [(x0, y - 9), (x0 + 34, y + 9)],
            colour.filled(),
        ))
        .map_err(err)?;
        area.draw(&Rectangle::new(
            [(x0, y - 9), (x0 + 34, y + 9)],
            INK.stroke_width(1),
        ))
        .map_err(err)
    };
    pen.text(area, "Joint region allowed at", &heading, (x0, y))?;
    y += 31;
    for (k, level) in map.levels.iter().enumerate() {
        swatch(y, LEVEL_FILLS[k])?;
        let text = format!(
            "{}  (Δχ² ≤ {:.2})",
            truncate(&level.label, 14),
            level.threshold
        );
        pen.text(area, &text, &body, (x0 + 44, y))?;
        y += 30;
    }
    swatch(y, WHITE)?;
    let excluded = format!("excluded at {}", truncate(&map.levels[2].label, 14));
    pen.text(area, &excluded, &body, (x0 + 44, y))?;
    y += 30;
    if any_missing {
        hatch(area, (x0, y - 9), (x0 + 34, y + 9), 7)?;
        area.draw(&Rectangle::new(
            [(x0, y - 9), (x0 + 34, y + 9)],
            INK.stroke_width(1),
        ))
        .map_err(err)?;
        pen.text(area, "no model at these points", &body, (x0 + 44, y))?;
        y += 19;
        pen.text(
            area,
            "(no solution; not a constraint)",
            &small,
            (x0 + 44, y),
        )?;
        y += 30;
    }
    // Outlines are drawn only on a two-dimensional grid.
    if !map.class_outlines.is_empty() && map.is_two_dimensional() {
        y += 12;
        let text = format!("Each class alone, {}:", truncate(&map.levels[1].label, 14));
        pen.text(area, &text, &heading, (x0, y))?;
        y += 31;
        for (ci, class) in map.class_outlines.iter().enumerate() {
            let look = &OUTLINE_LOOKS[ci % OUTLINE_LOOKS.len()];
            halo_line(
                area,
                &[(x0 as f64, y as f64), (x0 as f64 + 44.0, y as f64)],
                look.colour,
                look.dashes,
                2,
            )?;
            pen.text(area, &truncate(&class.class_label, 22), &body, (x0 + 52, y))?;
            y += 29;
            if y > height as i32 - 150 {
                break;
            }
        }
    }
    y += 12;
    pen.text(area, "Markers", &heading, (x0, y))?;
    y += 31;
    draw_best_fit_marker(area, (x0 + 17, y))?;
    pen.text(
        area,
        &format!(
            "best fit ({}, {})",
            short(map.best_fit.0),
            short(map.best_fit.1)
        ),
        &body,
        (x0 + 44, y),
    )?;
    y += 33;
    draw_standard_marker(area, (x0 + 17, y), 9)?;
    let sg = if standard_inside {
        "standard gravity (Υ = τ = 0)".to_string()
    } else {
        "standard gravity: outside the grid".to_string()
    };
    pen.text(area, &sg, &body, (x0 + 44, y))?;
    y += 30;
    let shown = map
        .disfavoured_below_upsilon
        .as_ref()
        .filter(|(u, _)| *u > map.upsilon[0] && *u < map.upsilon[map.upsilon.len() - 1]);
    if let Some((u, label)) = shown {
        halo_line(
            area,
            &[
                (x0 as f64 + 17.0, y as f64 - 11.0),
                (x0 as f64 + 17.0, y as f64 + 11.0),
            ],
            INK,
            &[4.0, 3.0, 1.0, 3.0],
            1,
        )?;
        pen.text(
            area,
            &format!("Υ < {} disfavoured:", short(*u)),
            &body,
            (x0 + 44, y),
        )?;
        y += 19;
        pen.text(area, &truncate(label, 34), &small, (x0 + 44, y))?;
    }
    Ok(())
}

/// Compact number for legends: up to 4 significant digits, no trailing zeros.
fn short(x: f64) -> String {
    super::text::fmt_sig(x, 4)
}

fn truncate(s: &str, max_chars: usize) -> String {
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

/// Panels of the bounds figure: (label, unit, indices of its series), in order of appearance.
fn bound_panels(curves: &BoundsCurves) -> Vec<(String, String, Vec<usize>)> {
    let mut panels: Vec<(String, String, Vec<usize>)> = Vec::new();
    for (k, s) in curves.series.iter().enumerate() {
        match panels
            .iter_mut()
            .find(|p| p.0 == s.bound_label && p.1 == s.unit)
        {
            Some(p) => p.2.push(k),
            None => panels.push((s.bound_label.clone(), s.unit.clone(), vec![k])),
        }
    }
    panels
}

const PANEL_HEIGHT: u32 = 470;

fn bounds_size(curves: &BoundsCurves) -> (u32, u32) {
    let n = bound_panels(curves).len().max(1) as u32;
    let rows = n.div_ceil(2);
    (BOUNDS_WIDTH, 50 + rows * PANEL_HEIGHT)
}

/// Distinct τ values of all series, ascending; a curve's style is its τ's index here.
fn distinct_taus(curves: &BoundsCurves) -> Vec<f64> {
    let mut taus: Vec<f64> = curves.series.iter().map(|s| s.tau).collect();
    taus.sort_by(f64::total_cmp);
    taus.dedup();
    taus
}

fn draw_bounds<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    curves: &BoundsCurves,
    pen: Pen<'_>,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let (width, _) = root.dim_in_pixel();
    let (main, legend) = root.split_horizontally(width as i32 - 190);
    pen.text(
        &main,
        "Predicted bounds against Υ at fixed τ",
        &text_style(23.0).pos(Pos::new(HPos::Center, VPos::Top)),
        ((width as i32 - 190) / 2, 8),
    )?;
    let main = main.margin(46, 4, 4, 4);
    let panels = bound_panels(curves);
    let taus = distinct_taus(curves);
    if panels.is_empty() {
        pen.text(
            &main,
            "no bounds to show",
            &text_style(18.0).pos(Pos::new(HPos::Center, VPos::Center)),
            ((width as i32 - 190) / 2, 200),
        )?;
        return Ok(());
    }
    let cols = panels.len().min(2);
    let rows = panels.len().div_ceil(cols);
    let areas = main.split_evenly((rows, cols));
    let (x_lo, x_hi) = axis_range(&curves.upsilon);
    for ((label, unit, members), area) in panels.iter().zip(areas.iter()) {
        let values: Vec<f64> = members
            .iter()
            .flat_map(|&k| curves.series[k].values.iter().flatten().copied())
            .collect();
        let (mut y_lo, mut y_hi) = match (
            values.iter().copied().reduce(f64::min),
            values.iter().copied().reduce(f64::max),
        ) {
            (Some(a), Some(b)) => (a, b),
            _ => (0.0, 1.0),
        };
        let span = y_hi - y_lo;
        let pad = if span > 1e-12 * y_hi.abs().max(1e-300) {
            0.06 * span
        } else {
            (y_hi.abs() * 0.01).max(1e-6)
        };
        y_lo -= pad;
        y_hi += pad;
        let area = area.margin(6, 10, 6, 14);
        pen.text(
            &area,
            &truncate(label, 40),
            &text_style(18.5).pos(Pos::new(HPos::Center, VPos::Top)),
            (area.dim_in_pixel().0 as i32 / 2 + 40, 0),
        )?;
        let area = area.margin(26, 0, 0, 0);
        let mut chart = ChartBuilder::on(&area)
            .x_label_area_size(52)
            .y_label_area_size(82)
            .margin_right(12)
            .build_cartesian_2d(x_lo..x_hi, y_lo..y_hi)
            .map_err(err)?;
        draw_mesh(&mut chart, 8, 15.0, 0.3)?;
        draw_axis_text(
            root,
            &chart,
            (8, 8),
            "Υ (dimensionless)",
            &format!("{} ({})", truncate(label, 30), truncate(unit, 12)),
            (15.0, 18.0),
            pen,
        )?;
        for &k in members {
            let s = &curves.series[k];
            let style_index = taus.iter().position(|&t| t == s.tau).unwrap_or(0);
            let colour = curve_colour(style_index, taus.len());
            let dashes = CURVE_DASHES[style_index % CURVE_DASHES.len()];
            // Break the curve where there is no model.
            let mut run: Vec<(f64, f64)> = Vec::new();
            let flush = |run: &mut Vec<(f64, f64)>| -> DrawResult {
                if run.len() >= 2 {
                    for piece in dash_polyline(run, dashes) {
                        let px = to_px(&piece);
                        if px.len() >= 2 {
                            root.draw(&PathElement::new(px, colour.stroke_width(2)))
                                .map_err(err)?;
                        }
                    }
                } else if run.len() == 1 {
                    let p = (run[0].0.round() as i32, run[0].1.round() as i32);
                    root.draw(&Circle::new(p, 3, colour.filled()))
                        .map_err(err)?;
                }
                run.clear();
                Ok(())
            };
            for (iu, v) in s.values.iter().enumerate() {
                match v {
                    Some(v) => {
                        let c = chart.backend_coord(&(curves.upsilon[iu], *v));
                        run.push((c.0 as f64, c.1 as f64));
                    }
                    None => flush(&mut run)?,
                }
            }
            flush(&mut run)?;
        }
    }

    // Shared legend: one entry per τ.
    let x0 = 6;
    let mut y = 80;
    let body = text_style(16.0).pos(Pos::new(HPos::Left, VPos::Center));
    pen.text(
        &legend,
        "τ of each curve",
        &text_style(17.5).pos(Pos::new(HPos::Left, VPos::Center)),
        (x0, y),
    )?;
    y += 28;
    for (k, tau) in taus.iter().enumerate() {
        let colour = curve_colour(k, taus.len());
        let dashes = CURVE_DASHES[k % CURVE_DASHES.len()];
        for piece in dash_polyline(
            &[(x0 as f64, y as f64), (x0 as f64 + 46.0, y as f64)],
            dashes,
        ) {
            legend
                .draw(&PathElement::new(to_px(&piece), colour.stroke_width(2)))
                .map_err(err)?;
        }
        pen.text(
            &legend,
            &format!("τ = {}", short(*tau)),
            &body,
            (x0 + 54, y),
        )?;
        y += 26;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dashes_cover_the_expected_length() {
        // A 100 px line with 10 on / 10 off: five dashes of 10 px (geometry).
        let d = dash_polyline(&[(0.0, 0.0), (100.0, 0.0)], &[10.0, 10.0]);
        assert_eq!(d.len(), 5);
        for piece in &d {
            let len = piece.last().unwrap().0 - piece[0].0;
            assert!((len - 10.0).abs() < 1e-9);
        }
    }

    #[test]
    fn tick_labels_do_not_show_negative_zero() {
        assert_eq!(fmt_tick(-0.0001, 2), "0.00");
        assert_eq!(fmt_tick(-0.25, 2), "-0.25");
        assert_eq!(tick_decimals(&[-0.3, -0.2, -0.1, 0.0]), 1);
        assert_eq!(tick_decimals(&[0.0725, 0.075, 0.0775]), 4);
        assert_eq!(tick_decimals(&[1.0, 2.0]), 0);
    }

    #[test]
    fn curve_ramp_gets_lighter_in_greyscale() {
        // Rec. 709 luma weights (ITU-R BT.709), common practice for greyscale conversion.
        let luma = |c: RGBColor| 0.2126 * c.0 as f64 + 0.7152 * c.1 as f64 + 0.0722 * c.2 as f64;
        let l: Vec<f64> = (0..5).map(|k| luma(curve_colour(k, 5))).collect();
        assert!(l.windows(2).all(|w| w[1] > w[0]), "{l:?}");
        let f: Vec<f64> = LEVEL_FILLS.iter().map(|&c| luma(c)).collect();
        assert!(f.windows(2).all(|w| w[1] > w[0] + 40.0), "{f:?}");
    }
}
