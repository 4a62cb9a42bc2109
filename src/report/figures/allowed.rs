//! The allowed-region map: the joint Δχ² levels in the (ϒ, τ) plane, each class's own region
//! as an outline, cells without a model hatched, the disfavoured ϒ range, the best-fit and
//! standard-gravity markers, and a legend.
//!
//! Levels are filled by contours of the gridded Δχ² ([`super::contour`]), painted outermost first
//! so nested loops land on top; a grid with a single row or column gets one square per point
//! instead.
//!
//! ```no_run
//! # fn demo(map: &dwarfbound::report::AllowedMap) -> Result<(), dwarfbound::report::ReportError> {
//! let svg = dwarfbound::report::render_allowed_svg(map)?;
//! let png = dwarfbound::report::render_allowed_png(map)?;
//! assert!(svg.starts_with("<svg") && png.starts_with(b"\x89PNG"));
//! # Ok(()) }
//! ```

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::contour::{region_loops, Loop};
use super::kit::axes::{axis_range, draw_axis_text, draw_mesh};
use super::kit::marks::{boxed_text, draw_best_fit_marker, draw_standard_marker, halo_line, hatch};
use super::kit::palette::{INK, LEVEL_FILLS, NO_MODEL_FILL, OUTLINE_LOOKS};
use super::kit::{
    err, png_bytes, png_pen, short, svg_string, text_style, truncate, DrawResult, Pen, SVG_PEN,
};
use crate::report::input::AllowedMap;
use crate::report::ReportError;

/// Pixel size of the allowed-region map.
pub const ALLOWED_SIZE: (u32, u32) = (1000, 720);

/// Renders the allowed-region map as an SVG document.
pub fn render_allowed_svg(map: &AllowedMap) -> Result<String, ReportError> {
    map.validate()?;
    svg_string(ALLOWED_SIZE, "allowed-region map (SVG)", |root| {
        draw_allowed(root, map, &Extras::default(), SVG_PEN)
    })
}

/// Renders the allowed-region map as PNG bytes.
pub fn render_allowed_png(map: &AllowedMap) -> Result<Vec<u8>, ReportError> {
    map.validate()?;
    png_bytes(ALLOWED_SIZE, "allowed-region map (PNG)", |root| {
        draw_allowed(root, map, &Extras::default(), png_pen())
    })
}

/// What a variant of the map adds to the plain one: its own title, and a one-parameter interval
/// at τ = 0 read from a finer ϒ axis, drawn as a bar with end ticks (the zoomed panel).
#[derive(Debug, Clone, Default)]
pub(crate) struct Extras {
    /// Replaces the title when given.
    pub title: Option<String>,
    /// (legend label, lower end, upper end) of the bar at τ = 0.
    pub fine_interval: Option<(String, f64, f64)>,
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

/// Fill of a level index; white where every level excludes the point.
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

/// Draws the whole map (plot and legend) on `root`.
pub(crate) fn draw_allowed<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    map: &AllowedMap,
    extras: &Extras,
    pen: Pen<'_>,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let (width, height) = root.dim_in_pixel();
    let (chart_area, legend_area) = root.split_horizontally(width as i32 - 290);
    let chart_area = chart_area.margin(10, 10, 10, 10);
    let title = extras
        .title
        .as_deref()
        .unwrap_or("Region of (ϒ, τ) allowed by the catalogues");
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
        "ϒ (dimensionless)",
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

    // 5. Theoretically disfavoured ϒ range.
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

    // 6. The finer one-parameter interval at τ = 0, clipped to the plot.
    let fine = extras
        .fine_interval
        .as_ref()
        .filter(|_| (y_lo..=y_hi).contains(&0.0));
    if let Some((_, lo, hi)) = fine {
        let (lo, hi) = (lo.max(x_lo), hi.min(x_hi));
        if lo < hi {
            let a = chart.backend_coord(&(lo, 0.0));
            let b = chart.backend_coord(&(hi, 0.0));
            draw_fine_bar(root, a, b)?;
        }
    }

    // 7. Markers.
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
        // With the finer bar along τ = 0, the label goes above or below, off the bar's row.
        let off_bar_row = |p: &&(i32, i32)| fine.is_none() || p.1 != c.1;
        let pos = candidates
            .iter()
            .filter(|p| fits(p))
            .filter(off_bar_row)
            .max_by_key(|p| distance(p))
            .copied()
            .unwrap_or(candidates[0]);
        boxed_text(root, label, pos, size, pen)?;
    }
    if inside(map.best_fit) {
        draw_best_fit_marker(root, best_px)?;
    }

    // 8. Legend.
    draw_allowed_legend(
        &legend_area,
        map,
        any_missing,
        inside(map.standard_gravity),
        height,
        pen,
    )?;
    if let Some((label, _, _)) = fine {
        let (_, lh) = legend_area.dim_in_pixel();
        let y = lh as i32 - 60;
        draw_fine_bar(&legend_area, (8, y), (42, y))?;
        let body = text_style(14.0).pos(Pos::new(HPos::Left, VPos::Center));
        pen.text(&legend_area, &truncate(label, 36), &body, (52, y - 9))?;
        pen.text(
            &legend_area,
            "τ = 0, on the 10× finer ϒ axis",
            &body,
            (52, y + 9),
        )?;
    }
    Ok(())
}

/// A thick bar with end ticks between two pixel points on one row.
fn draw_fine_bar<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    a: (i32, i32),
    b: (i32, i32),
) -> DrawResult {
    let pts = [(a.0 as f64, a.1 as f64), (b.0 as f64, b.1 as f64)];
    halo_line(area, &pts, INK, &[], 3)?;
    for x in [a.0, b.0] {
        halo_line(
            area,
            &[(x as f64, a.1 as f64 - 8.0), (x as f64, a.1 as f64 + 8.0)],
            INK,
            &[],
            3,
        )?;
    }
    Ok(())
}

/// The legend column: levels, missing-model hatching, class outlines, markers, disfavoured range.
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
        "standard gravity (ϒ = τ = 0)".to_string()
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
            &format!("ϒ < {} disfavoured:", short(*u)),
            &body,
            (x0 + 44, y),
        )?;
        y += 19;
        pen.text(area, &truncate(label, 34), &small, (x0 + 44, y))?;
    }
    Ok(())
}
