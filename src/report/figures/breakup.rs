//! The break-up figure: the minimum spin period against mass, one panel per structure (the
//! hydrogen-rich floor of brown dwarfs and stars, white dwarfs), one curve per theory point; a
//! curve breaks where there is no model (above the maximum mass).
//!
//! ```no_run
//! use dwarfbound::report::{render_breakup_svg, BreakupFigure, BreakupLine, BreakupPanel};
//! let fig = BreakupFigure {
//!     title: "Minimum spin period against mass".into(),
//!     panels: vec![BreakupPanel {
//!         label: "white dwarfs".into(),
//!         unit: "s".into(),
//!         lines: vec![BreakupLine {
//!             label: "ϒ = 0, τ = 0".into(),
//!             mass_msun: vec![0.6, 1.0],
//!             period: vec![Some(34.0), Some(14.0)],
//!         }],
//!     }],
//! };
//! assert!(render_breakup_svg(&fig).unwrap().starts_with("<svg"));
//! ```

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::kit::axes::{draw_axis_text, draw_mesh};
use super::kit::marks::{dash_polyline, to_px};
use super::kit::palette::{curve_colour, CURVE_DASHES};
use super::kit::{
    err, png_bytes, png_pen, svg_string, text_style, truncate, DrawResult, Pen, SVG_PEN,
};
use crate::report::ReportError;

/// Pixel size of the break-up figure.
pub const BREAKUP_SIZE: (u32, u32) = (1100, 520);

/// One curve: the break-up period against mass at one theory point.
#[derive(Debug, Clone, PartialEq)]
pub struct BreakupLine {
    /// Legend text (the theory point).
    pub label: String,
    /// Masses, M☉, ascending.
    pub mass_msun: Vec<f64>,
    /// Break-up period at each mass in the panel's unit; `None` where there is no model.
    pub period: Vec<Option<f64>>,
}

/// One panel: one structure.
#[derive(Debug, Clone, PartialEq)]
pub struct BreakupPanel {
    /// Panel title (the structure).
    pub label: String,
    /// Unit of the periods (`min`, `s`).
    pub unit: String,
    /// The curves, in legend order.
    pub lines: Vec<BreakupLine>,
}

/// The whole figure.
#[derive(Debug, Clone, PartialEq)]
pub struct BreakupFigure {
    /// Figure title.
    pub title: String,
    /// The panels, left to right.
    pub panels: Vec<BreakupPanel>,
}

impl BreakupFigure {
    fn validate(&self) -> Result<(), ReportError> {
        for p in &self.panels {
            for l in &p.lines {
                let finite = l.mass_msun.iter().all(|m| m.is_finite())
                    && l.period.iter().flatten().all(|x| x.is_finite());
                if !finite || l.mass_msun.len() != l.period.len() {
                    return Err(ReportError::InvalidInput(format!(
                        "break-up curve `{}` has a non-finite value or mismatched lengths",
                        l.label
                    )));
                }
            }
        }
        Ok(())
    }
}

/// Renders the break-up figure as an SVG document.
pub fn render_breakup_svg(fig: &BreakupFigure) -> Result<String, ReportError> {
    fig.validate()?;
    svg_string(BREAKUP_SIZE, "break-up figure (SVG)", |root| {
        draw(root, fig, SVG_PEN)
    })
}

/// Renders the break-up figure as PNG bytes.
pub fn render_breakup_png(fig: &BreakupFigure) -> Result<Vec<u8>, ReportError> {
    fig.validate()?;
    png_bytes(BREAKUP_SIZE, "break-up figure (PNG)", |root| {
        draw(root, fig, png_pen())
    })
}

fn range_of(xs: impl Iterator<Item = f64>) -> (f64, f64) {
    let (lo, hi) = xs.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
        (a.min(x), b.max(x))
    });
    if hi > lo {
        (lo, hi)
    } else if lo.is_finite() {
        let pad = if lo == 0.0 { 1.0 } else { 0.1 * lo.abs() };
        (lo - pad, lo + pad)
    } else {
        (0.0, 1.0)
    }
}

fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    fig: &BreakupFigure,
    pen: Pen<'_>,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let (width, _) = root.dim_in_pixel();
    let (main, legend) = root.split_horizontally(width as i32 - 210);
    pen.text(
        &main,
        &fig.title,
        &text_style(23.0).pos(Pos::new(HPos::Center, VPos::Top)),
        ((width as i32 - 210) / 2, 8),
    )?;
    let main = main.margin(46, 4, 4, 4);
    let n_lines = fig.panels.iter().map(|p| p.lines.len()).max().unwrap_or(0);
    if !fig.panels.is_empty() {
        let areas = main.split_evenly((1, fig.panels.len()));
        for (panel, area) in fig.panels.iter().zip(areas.iter()) {
            let (x_lo, x_hi) =
                range_of(panel.lines.iter().flat_map(|l| l.mass_msun.iter().copied()));
            let (y_lo, y_hi) = range_of(
                panel
                    .lines
                    .iter()
                    .flat_map(|l| l.period.iter().flatten().copied()),
            );
            let pad = 0.06 * (y_hi - y_lo);
            let area = area.margin(6, 10, 6, 14);
            pen.text(
                &area,
                &truncate(&panel.label, 44),
                &text_style(18.5).pos(Pos::new(HPos::Center, VPos::Top)),
                (area.dim_in_pixel().0 as i32 / 2 + 40, 0),
            )?;
            let area = area.margin(26, 0, 0, 0);
            let mut chart = ChartBuilder::on(&area)
                .x_label_area_size(52)
                .y_label_area_size(82)
                .margin_right(12)
                .build_cartesian_2d(x_lo..x_hi, (y_lo - pad).max(0.0)..y_hi + pad)
                .map_err(err)?;
            draw_mesh(&mut chart, 8, 15.0, 0.3)?;
            draw_axis_text(
                root,
                &chart,
                (8, 8),
                "mass (M☉)",
                &format!("break-up period ({})", truncate(&panel.unit, 8)),
                (15.0, 18.0),
                pen,
            )?;
            for (k, line) in panel.lines.iter().enumerate() {
                let colour = curve_colour(k, n_lines);
                let dashes = CURVE_DASHES[k % CURVE_DASHES.len()];
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
                    }
                    run.clear();
                    Ok(())
                };
                for (m, p) in line.mass_msun.iter().zip(&line.period) {
                    match p {
                        Some(p) => {
                            let c = chart.backend_coord(&(*m, *p));
                            run.push((c.0 as f64, c.1 as f64));
                            root.draw(&Circle::new(c, 3, colour.filled()))
                                .map_err(err)?;
                        }
                        None => flush(&mut run)?,
                    }
                }
                flush(&mut run)?;
            }
        }
    }
    // Legend: one entry per curve (the theory point), shared by the panels.
    let x0 = 6;
    let mut y = 80;
    let body = text_style(15.0).pos(Pos::new(HPos::Left, VPos::Center));
    pen.text(
        &legend,
        "theory point",
        &text_style(17.5).pos(Pos::new(HPos::Left, VPos::Center)),
        (x0, y),
    )?;
    y += 28;
    if let Some(first) = fig.panels.first() {
        for (k, line) in first.lines.iter().enumerate() {
            let colour = curve_colour(k, n_lines);
            let dashes = CURVE_DASHES[k % CURVE_DASHES.len()];
            for piece in dash_polyline(
                &[(x0 as f64, y as f64), (x0 as f64 + 40.0, y as f64)],
                dashes,
            ) {
                legend
                    .draw(&PathElement::new(to_px(&piece), colour.stroke_width(2)))
                    .map_err(err)?;
            }
            pen.text(&legend, &truncate(&line.label, 22), &body, (x0 + 48, y))?;
            y += 26;
        }
    }
    Ok(())
}
