//! The Δχ² profile along τ = 0: the one-parameter Δχ² of the τ = 0 slice against ϒ on the fine
//! axis, with the 1/4/9 thresholds as dashed lines and the ends of each interval marked where
//! the curve crosses its threshold; beside it, dashed, the profile of ϒ over τ (min over τ at
//! each ϒ node of the grid), whose crossings are the profile intervals.
//!
//! ```no_run
//! # fn demo(p: &dwarfbound::report::ProfileTau0) -> Result<(), dwarfbound::report::ReportError> {
//! let svg = dwarfbound::report::render_profile_svg(p)?;
//! let png = dwarfbound::report::render_profile_png(p)?;
//! assert!(svg.starts_with("<svg") && png.starts_with(b"\x89PNG"));
//! # Ok(()) }
//! ```

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::kit::axes::{draw_axis_text, draw_mesh};
use super::kit::marks::{clip_polyline, dash_polyline, draw_standard_marker, to_px};
use super::kit::palette::{GRID_LINE, INK, LEVEL_FILLS};
use super::kit::{
    err, png_bytes, png_pen, short, svg_string, text_style, DrawResult, Pen, SVG_PEN,
};
use crate::report::figure_data::ProfileTau0;
use crate::report::text::fmt_sig;
use crate::report::ReportError;

/// Colour of the profile over τ (an orange, distinct from the blue threshold lines).
const OVER_TAU: RGBColor = RGBColor(205, 105, 15);

/// Pixel size of the profile figure.
pub const PROFILE_SIZE: (u32, u32) = (1000, 560);

/// Renders the profile as an SVG document.
pub fn render_profile_svg(p: &ProfileTau0) -> Result<String, ReportError> {
    p.validate()?;
    svg_string(PROFILE_SIZE, "Δχ² profile along τ = 0 (SVG)", |root| {
        draw(root, p, SVG_PEN)
    })
}

/// Renders the profile as PNG bytes.
pub fn render_profile_png(p: &ProfileTau0) -> Result<Vec<u8>, ReportError> {
    p.validate()?;
    png_bytes(PROFILE_SIZE, "Δχ² profile along τ = 0 (PNG)", |root| {
        draw(root, p, png_pen())
    })
}

/// The ϒ range shown: where the profile lies under the top of the axes, padded by a quarter
/// of its width on each side and widened to include ϒ = 0, within the computed axis.
fn zoom(p: &ProfileTau0, y_hi: f64) -> (f64, f64) {
    let (first, last) = (p.upsilon[0], p.upsilon[p.upsilon.len() - 1]);
    let inside = p
        .upsilon
        .iter()
        .zip(&p.delta_chi2)
        .filter(|(_, d)| **d <= y_hi)
        .map(|(u, _)| *u);
    let (lo, hi) = inside.fold((f64::INFINITY, f64::NEG_INFINITY), |a, u| {
        (a.0.min(u), a.1.max(u))
    });
    // The profile over τ's part under the top counts too (within the computed axis).
    let (lo, hi) = p
        .profile_over_tau
        .iter()
        .filter(|(u, d)| *d <= y_hi && *u >= first && *u <= last)
        .fold((lo, hi), |a, (u, _)| (a.0.min(*u), a.1.max(*u)));
    if !lo.is_finite() {
        return (first, last);
    }
    let (lo, hi) = (lo.min(0.0f64.max(first)), hi.max(0.0f64.min(last)));
    let pad = 0.25 * (hi - lo).max(1e-6);
    ((lo - pad).max(first), (hi + pad).min(last))
}

/// Δχ² of the profile at `u` by linear interpolation (the fine axis is dense).
fn value_at(p: &ProfileTau0, u: f64) -> Option<f64> {
    let k = p.upsilon.windows(2).position(|w| u >= w[0] && u <= w[1])?;
    let (u0, u1) = (p.upsilon[k], p.upsilon[k + 1]);
    let f = if u1 > u0 { (u - u0) / (u1 - u0) } else { 0.0 };
    Some(p.delta_chi2[k] + f * (p.delta_chi2[k + 1] - p.delta_chi2[k]))
}

fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    p: &ProfileTau0,
    pen: Pen<'_>,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let (width, _) = root.dim_in_pixel();
    pen.text(
        root,
        if p.profile_over_tau.is_empty() {
            "One-parameter Δχ² along τ = 0"
        } else {
            "One-parameter Δχ²: along τ = 0 and profiled over τ"
        },
        &text_style(22.0).pos(Pos::new(HPos::Center, VPos::Top)),
        (width as i32 / 2, 10),
    )?;
    let top_threshold = p.thresholds.iter().map(|t| t.1).fold(1.0, f64::max);
    let max = p.delta_chi2.iter().copied().fold(0.0, f64::max);
    let y_hi = if max > top_threshold * 1.35 {
        top_threshold * 1.35
    } else {
        (max * 1.1).max(top_threshold * 1.15)
    };
    let x = zoom(p, y_hi);
    let mut chart = ChartBuilder::on(&root.margin(46, 10, 10, 12))
        .x_label_area_size(56)
        .y_label_area_size(70)
        .margin_right(150)
        .build_cartesian_2d(x.0..x.1, 0.0..y_hi)
        .map_err(err)?;
    draw_mesh(&mut chart, 10, 15.0, 0.3)?;
    draw_axis_text(
        root,
        &chart,
        (10, 8),
        "ϒ (dimensionless)",
        "Δχ²",
        (15.0, 18.0),
        pen,
    )?;
    let label = text_style(14.0).pos(Pos::new(HPos::Left, VPos::Center));
    // Thresholds: dashed lines labelled at the right edge.
    for (k, (name, level)) in p.thresholds.iter().enumerate() {
        if *level > y_hi {
            continue;
        }
        let colour = LEVEL_FILLS[k.min(LEVEL_FILLS.len() - 1)];
        let colour = if k == 2 { GRID_LINE } else { colour };
        let a = chart.backend_coord(&(x.0, *level));
        let b = chart.backend_coord(&(x.1, *level));
        for piece in dash_polyline(
            &[(a.0 as f64, a.1 as f64), (b.0 as f64, b.1 as f64)],
            &[7.0, 5.0],
        ) {
            root.draw(&PathElement::new(to_px(&piece), colour.stroke_width(2)))
                .map_err(err)?;
        }
        pen.text(
            root,
            &format!("Δχ² = {} ({name})", short(*level)),
            &label,
            (b.0 + 8, b.1),
        )?;
    }
    // The profile over τ (grid nodes), dashed, under the slice.
    let over: Vec<(f64, f64)> = p.profile_over_tau.clone();
    for piece in clip_polyline(&over, x, (0.0, y_hi)) {
        let px: Vec<(f64, f64)> = piece
            .iter()
            .map(|q| {
                let c = chart.backend_coord(q);
                (c.0 as f64, c.1 as f64)
            })
            .collect();
        for dash in dash_polyline(&px, &[10.0, 6.0]) {
            root.draw(&PathElement::new(to_px(&dash), OVER_TAU.stroke_width(2)))
                .map_err(err)?;
        }
    }
    // The profile itself.
    let pts: Vec<(f64, f64)> = p
        .upsilon
        .iter()
        .copied()
        .zip(p.delta_chi2.iter().copied())
        .collect();
    for piece in clip_polyline(&pts, x, (0.0, y_hi)) {
        let px: Vec<(i32, i32)> = piece.iter().map(|q| chart.backend_coord(q)).collect();
        root.draw(&PathElement::new(px, INK.stroke_width(2)))
            .map_err(err)?;
    }
    // Interval ends: a short vertical tick on the threshold line, the value outside the curve.
    let below = |h| text_style(13.0).pos(Pos::new(h, VPos::Top));
    for ((_, lo, hi), (_, level)) in p.intervals.iter().zip(&p.thresholds) {
        if *level > y_hi {
            continue;
        }
        for (end, h, dx) in [(lo, HPos::Right, -5), (hi, HPos::Left, 5)] {
            let Some(end) = end else { continue };
            let c = chart.backend_coord(&(*end, *level));
            root.draw(&PathElement::new(
                vec![(c.0, c.1 - 8), (c.0, c.1 + 8)],
                INK.stroke_width(2),
            ))
            .map_err(err)?;
            pen.text(root, &fmt_sig(*end, 3), &below(h), (c.0 + dx, c.1 + 5))?;
        }
    }
    // Standard gravity on the curve.
    if let Some(v) = value_at(p, 0.0).filter(|v| *v <= y_hi) {
        draw_standard_marker(root, chart.backend_coord(&(0.0, v)), 7)?;
    }
    let (right, top) = chart.backend_coord(&(x.1, y_hi));
    draw_standard_marker(root, (right + 16, top + 12), 7)?;
    pen.text(root, "ϒ = 0 (standard", &label, (right + 30, top + 12))?;
    pen.text(root, "gravity)", &label, (right + 30, top + 30))?;
    let key = |y: i32| (right + 8, top + y);
    root.draw(&PathElement::new(
        vec![key(58), (key(58).0 + 18, key(58).1)],
        INK.stroke_width(2),
    ))
    .map_err(err)?;
    pen.text(root, "τ = 0", &label, (right + 30, top + 58))?;
    if !p.profile_over_tau.is_empty() {
        for dash in dash_polyline(
            &[
                (key(82).0 as f64, key(82).1 as f64),
                (key(82).0 as f64 + 18.0, key(82).1 as f64),
            ],
            &[6.0, 3.0],
        ) {
            root.draw(&PathElement::new(to_px(&dash), OVER_TAU.stroke_width(2)))
                .map_err(err)?;
        }
        pen.text(root, "profiled", &label, (right + 30, top + 82))?;
        pen.text(root, "over τ", &label, (right + 30, top + 100))?;
    }
    Ok(())
}
