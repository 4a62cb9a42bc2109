//! Line work and markers: dashed polylines in pixels, lines with a white halo, boxed labels, the
//! best-fit and standard-gravity markers, and the hatching of cells without a model.
//!
//! Everything here works in backend pixels, after the chart has mapped data to the page, so a
//! dash pattern keeps its length however the axes are scaled.
//!
//! ```ignore
//! halo_line(&root, &[(10.0, 10.0), (90.0, 40.0)], look.colour, look.dashes, 2)?;
//! draw_best_fit_marker(&root, (50, 25))?;
//! hatch(&root, (0, 0), (40, 20), 7)?;
//! ```

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::palette::{INK, NO_MODEL_FILL, NO_MODEL_HATCH};
use super::{err, text_style, DrawResult, Pen};

/// Splits a pixel polyline into dashes following `pattern` (on, off, on, …); empty = solid.
pub(crate) fn dash_polyline(points: &[(f64, f64)], pattern: &[f64]) -> Vec<Vec<(f64, f64)>> {
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

/// Rounds a pixel polyline to integer pixels, dropping repeated points.
pub(crate) fn to_px(points: &[(f64, f64)]) -> Vec<(i32, i32)> {
    let mut v: Vec<(i32, i32)> = points
        .iter()
        .map(|&(x, y)| (x.round() as i32, y.round() as i32))
        .collect();
    v.dedup();
    v
}

/// Draws a pixel polyline with a white halo under it, so it reads on dark and light fills.
pub(crate) fn halo_line<DB: DrawingBackend>(
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
pub(crate) fn boxed_text<DB: DrawingBackend>(
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
pub(crate) fn draw_standard_marker<DB: DrawingBackend>(
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
pub(crate) fn draw_best_fit_marker<DB: DrawingBackend>(
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
pub(crate) fn hatch<DB: DrawingBackend>(
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

/// Puts a small coloured label next to a marker at `c`, trying four corners in turn and
/// skipping it when every corner would overlap a label already placed (`placed` holds their
/// pixel boxes): crowded labels would be unreadable, and the caption and hover titles still
/// name every object.
pub(crate) fn place_label<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    placed: &mut Vec<[i32; 4]>,
    text: &str,
    c: (i32, i32),
    colour: RGBColor,
    pen: Pen<'_>,
) -> DrawResult {
    let style = text_style(13.0).color(&colour);
    let (w, h) = area.estimate_text_size(text, &style).map_err(err)?;
    let (w, h) = (w as i32, h as i32);
    for (dx, dy) in [(9, -9 - h), (9, 9), (-9 - w, -9 - h), (-9 - w, 9)] {
        let b = [c.0 + dx, c.1 + dy, c.0 + dx + w, c.1 + dy + h];
        let clash = placed
            .iter()
            .any(|p| b[0] < p[2] && p[0] < b[2] && b[1] < p[3] && p[1] < b[3]);
        if !clash {
            placed.push(b);
            let style = style.pos(Pos::new(HPos::Left, VPos::Top));
            return pen.text(area, text, &style, (b[0], b[1]));
        }
    }
    Ok(())
}

/// Clips a data-space polyline to the box [x0, x1] × [y0, y1] (Liang–Barsky per segment): the
/// pieces inside, so a curve leaving the axes stops at their edge instead of crossing labels.
pub(crate) fn clip_polyline(
    points: &[(f64, f64)],
    (x0, x1): (f64, f64),
    (y0, y1): (f64, f64),
) -> Vec<Vec<(f64, f64)>> {
    let mut out: Vec<Vec<(f64, f64)>> = Vec::new();
    let mut current: Vec<(f64, f64)> = Vec::new();
    for w in points.windows(2) {
        let ((ax, ay), (bx, by)) = (w[0], w[1]);
        let (dx, dy) = (bx - ax, by - ay);
        let (mut t0, mut t1) = (0.0f64, 1.0f64);
        let mut inside = true;
        for (p, q) in [(-dx, ax - x0), (dx, x1 - ax), (-dy, ay - y0), (dy, y1 - ay)] {
            if p == 0.0 {
                if q < 0.0 {
                    inside = false;
                }
            } else {
                let r = q / p;
                if p < 0.0 {
                    t0 = t0.max(r);
                } else {
                    t1 = t1.min(r);
                }
            }
        }
        if !inside || t0 > t1 {
            if current.len() >= 2 {
                out.push(std::mem::take(&mut current));
            }
            current.clear();
            continue;
        }
        let a = (ax + t0 * dx, ay + t0 * dy);
        let b = (ax + t1 * dx, ay + t1 * dy);
        if current.last() != Some(&a) {
            if current.len() >= 2 {
                out.push(std::mem::take(&mut current));
            }
            current = vec![a];
        }
        current.push(b);
        if t1 < 1.0 {
            out.push(std::mem::take(&mut current));
        }
    }
    if current.len() >= 2 {
        out.push(current);
    }
    out
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
    fn clipping_stops_at_the_box_edge() {
        // The line y = 2x from (0, 0) to (1, 2) leaves the unit box at (0.5, 1) (geometry).
        let c = clip_polyline(&[(0.0, 0.0), (1.0, 2.0)], (0.0, 1.0), (0.0, 1.0));
        assert_eq!(c.len(), 1);
        assert!((c[0][1].0 - 0.5).abs() < 1e-12 && (c[0][1].1 - 1.0).abs() < 1e-12);
        assert!(clip_polyline(&[(2.0, 2.0), (3.0, 3.0)], (0.0, 1.0), (0.0, 1.0)).is_empty());
    }
}
