//! The bounds figure: each predicted bound against ϒ, one panel per bound (two columns), one
//! curve per τ with a shared legend; a curve breaks where there is no model.
//!
//! ```no_run
//! # fn demo(curves: &dwarfbound::report::BoundsCurves) -> Result<(), dwarfbound::report::ReportError> {
//! let svg = dwarfbound::report::render_bounds_svg(curves)?;
//! let png = dwarfbound::report::render_bounds_png(curves)?;
//! assert!(svg.starts_with("<svg") && png.starts_with(b"\x89PNG"));
//! # Ok(()) }
//! ```

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::kit::axes::{axis_range, draw_axis_text, draw_mesh};
use super::kit::marks::{dash_polyline, to_px};
use super::kit::palette::{curve_colour, CURVE_DASHES};
use super::kit::{
    err, png_bytes, png_pen, short, svg_string, text_style, truncate, DrawResult, Pen, SVG_PEN,
};
use crate::report::input::BoundsCurves;
use crate::report::ReportError;

/// Width of the bounds figure; its height grows with the number of panels.
pub const BOUNDS_WIDTH: u32 = 1100;

/// Renders the bounds figure as an SVG document.
pub fn render_bounds_svg(curves: &BoundsCurves) -> Result<String, ReportError> {
    curves.validate()?;
    svg_string(bounds_size(curves), "bounds figure (SVG)", |root| {
        draw_bounds(root, curves, SVG_PEN)
    })
}

/// Renders the bounds figure as PNG bytes.
pub fn render_bounds_png(curves: &BoundsCurves) -> Result<Vec<u8>, ReportError> {
    curves.validate()?;
    png_bytes(bounds_size(curves), "bounds figure (PNG)", |root| {
        draw_bounds(root, curves, png_pen())
    })
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

/// Height of one row of panels.
const PANEL_HEIGHT: u32 = 470;

/// Pixel size of the figure: a row of two panels per two bounds, under a title band.
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

/// Draws the panels and the τ legend on `root`.
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
        "Predicted bounds against ϒ at fixed τ",
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
            "ϒ (dimensionless)",
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
