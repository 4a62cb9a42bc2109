//! The white-dwarf mass–radius diagram: each white dwarf with a measured radius, with its error
//! bars and a marker for its place in the radius test, objects in radius tension ringed in red,
//! over model curves at standard gravity (solid, one per Teff) and at the best fit (dashed).
//! The SVG carries a `<title>` per point (id, mass, radius, Teff, σ) for hovering.
//!
//! ```no_run
//! # fn demo(d: &dwarfbound::report::WdMassRadius) -> Result<(), dwarfbound::report::ReportError> {
//! let svg = dwarfbound::report::render_wd_mass_radius_svg(d)?;
//! let png = dwarfbound::report::render_wd_mass_radius_png(d)?;
//! assert!(svg.contains("<title>") && png.starts_with(b"\x89PNG"));
//! # Ok(()) }
//! ```

use std::cell::RefCell;

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::kit::axes::{draw_axis_text, draw_mesh};
use super::kit::hover::add_hover_titles;
use super::kit::marks::{clip_polyline, dash_polyline, place_label, to_px};
use super::kit::palette::{curve_colour, INK, LEVEL_FILLS, TENSION};
use super::kit::{
    err, png_bytes, png_pen, short, svg_string, text_style, DrawResult, Pen, SVG_PEN,
};
use crate::report::figure_data::{WdMassRadius, WdPoint, WdPointFlag};
use crate::report::ReportError;

/// Pixel size of the diagram.
pub const WD_MASS_RADIUS_SIZE: (u32, u32) = (1100, 720);
/// Width of the legend column on the right.
const LEGEND_W: i32 = 300;
/// Dash pattern of the best-fit curves.
const BEST_DASHES: &[f64] = &[9.0, 5.0];

/// Renders the diagram as an SVG document with a hover title per point.
pub fn render_wd_mass_radius_svg(d: &WdMassRadius) -> Result<String, ReportError> {
    d.validate()?;
    let hovers = RefCell::new(Vec::new());
    let svg = svg_string(
        WD_MASS_RADIUS_SIZE,
        "white-dwarf mass–radius diagram (SVG)",
        |root| {
            hovers.borrow_mut().clear();
            draw(root, d, SVG_PEN, &hovers)
        },
    )?;
    let items = hovers.into_inner();
    Ok(add_hover_titles(svg, &items))
}

/// Renders the diagram as PNG bytes.
pub fn render_wd_mass_radius_png(d: &WdMassRadius) -> Result<Vec<u8>, ReportError> {
    d.validate()?;
    let hovers = RefCell::new(Vec::new());
    png_bytes(
        WD_MASS_RADIUS_SIZE,
        "white-dwarf mass–radius diagram (PNG)",
        |root| draw(root, d, png_pen(), &hovers),
    )
}

/// The hover title of one point.
fn hover_text(p: &WdPoint) -> String {
    let mass_err = match p.mass_err_msun {
        Some((a, b)) if a == b => format!(" ± {}", short(a)),
        Some((a, b)) => format!(" −{}/+{}", short(a), short(b)),
        None => String::new(),
    };
    let radius_err = p
        .radius_err_rsun
        .map_or(String::new(), |e| format!(" ± {}", short(e)));
    let teff = p
        .teff_k
        .map_or("Teff not given".to_string(), |t| format!("Teff {:.0} K", t));
    let sigma = p
        .sigma
        .map_or("σ —".to_string(), |s| format!("σ = {:+.2}", s));
    format!(
        "{}: M = {}{} M☉, R = {}{} R☉, {}, {} ({})",
        p.id,
        short(p.mass_msun),
        mass_err,
        short(p.radius_rsun),
        radius_err,
        teff,
        sigma,
        p.flag.words()
    )
}

/// Whether a point is highlighted as in radius tension.
fn in_tension(p: &WdPoint, threshold: f64) -> bool {
    p.sigma.is_some_and(|s| s.abs() > threshold)
}

/// The plotted ranges: the points with their error bars, padded; the curves only where they
/// fall inside the mass range, capped so a steep hot curve cannot squash the data.
fn ranges(d: &WdMassRadius) -> ((f64, f64), (f64, f64)) {
    let mut x = (f64::INFINITY, f64::NEG_INFINITY);
    let mut y = (f64::INFINITY, f64::NEG_INFINITY);
    for p in &d.points {
        let (lo, hi) = p.mass_err_msun.unwrap_or((0.0, 0.0));
        x = (x.0.min(p.mass_msun - lo), x.1.max(p.mass_msun + hi));
        let e = p.radius_err_rsun.unwrap_or(0.0);
        y = (y.0.min(p.radius_rsun - e), y.1.max(p.radius_rsun + e));
    }
    if !x.0.is_finite() {
        x = (0.4, 1.2);
        y = (0.008, 0.016);
    }
    let xpad = (0.08 * (x.1 - x.0)).max(0.03);
    let x = ((x.0 - xpad).max(0.05), x.1 + xpad);
    let (mut ylo, mut yhi) = (y.0, y.1);
    for &(m, r) in d.curves.iter().flat_map(|c| c.runs.iter().flatten()) {
        if m >= x.0 && m <= x.1 {
            ylo = ylo.min(r);
            yhi = yhi.max(r);
        }
    }
    let span = y.1 - y.0;
    let ylo = ylo.max(y.0 - span);
    let yhi = yhi.min(y.1 + span);
    let ypad = 0.05 * (yhi - ylo).max(1e-4);
    (x, ((ylo - ypad).max(0.0), yhi + ypad))
}

/// The marker of a point by its flag; `c` in pixels.
fn draw_marker<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    c: (i32, i32),
    flag: WdPointFlag,
) -> DrawResult {
    let open = INK.stroke_width(2);
    match flag {
        WdPointFlag::InTest => {
            area.draw(&Circle::new(c, 5, LEVEL_FILLS[0].filled()))
                .map_err(err)?;
            area.draw(&Circle::new(c, 5, INK.stroke_width(1)))
                .map_err(err)
        }
        WdPointFlag::ModelMass => area
            .draw(&Rectangle::new(
                [(c.0 - 5, c.1 - 5), (c.0 + 5, c.1 + 5)],
                open,
            ))
            .map_err(err),
        WdPointFlag::NoTeff => area
            .draw(&PathElement::new(
                vec![
                    (c.0, c.1 - 6),
                    (c.0 + 6, c.1 + 5),
                    (c.0 - 6, c.1 + 5),
                    (c.0, c.1 - 6),
                ],
                open,
            ))
            .map_err(err),
        WdPointFlag::Elm => area
            .draw(&PathElement::new(
                vec![
                    (c.0, c.1 - 7),
                    (c.0 + 6, c.1),
                    (c.0, c.1 + 7),
                    (c.0 - 6, c.1),
                    (c.0, c.1 - 7),
                ],
                open,
            ))
            .map_err(err),
        WdPointFlag::OutsideModel => {
            for (a, b) in [((-5, -5), (5, 5)), ((-5, 5), (5, -5))] {
                area.draw(&PathElement::new(
                    vec![(c.0 + a.0, c.1 + a.1), (c.0 + b.0, c.1 + b.1)],
                    open,
                ))
                .map_err(err)?;
            }
            Ok(())
        }
    }
}

/// A legend line sample (solid or dashed) from `x` to `x + 40` at height `y`.
fn line_sample<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    (x, y): (i32, i32),
    colour: RGBColor,
    dashes: &[f64],
) -> DrawResult {
    for piece in dash_polyline(&[(x as f64, y as f64), (x as f64 + 40.0, y as f64)], dashes) {
        area.draw(&PathElement::new(to_px(&piece), colour.stroke_width(2)))
            .map_err(err)?;
    }
    Ok(())
}

/// Draws the whole diagram; hover positions go into `hovers`.
fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    d: &WdMassRadius,
    pen: Pen<'_>,
    hovers: &RefCell<Vec<(i32, i32, String)>>,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let (width, _) = root.dim_in_pixel();
    let (main, legend) = root.split_horizontally(width as i32 - LEGEND_W);
    pen.text(
        &main,
        "White dwarfs: measured mass and radius against the model",
        &text_style(22.0).pos(Pos::new(HPos::Center, VPos::Top)),
        ((width as i32 - LEGEND_W) / 2, 10),
    )?;
    let ((x_lo, x_hi), (y_lo, y_hi)) = ranges(d);
    let mut chart = ChartBuilder::on(&main.margin(48, 6, 6, 12))
        .x_label_area_size(56)
        .y_label_area_size(92)
        .margin_right(14)
        .build_cartesian_2d(x_lo..x_hi, y_lo..y_hi)
        .map_err(err)?;
    draw_mesh(&mut chart, 8, 15.0, 0.3)?;
    draw_axis_text(
        root,
        &chart,
        (8, 8),
        "mass (M☉)",
        "radius (R☉)",
        (15.0, 18.0),
        pen,
    )?;
    // Model curves, clipped to the axes.
    for c in &d.curves {
        let colour = curve_colour(c.colour_index, d.n_colours);
        let dashes: &[f64] = if c.best_fit { BEST_DASHES } else { &[] };
        for run in &c.runs {
            for piece in clip_polyline(run, (x_lo, x_hi), (y_lo, y_hi)) {
                let px: Vec<(f64, f64)> = piece
                    .iter()
                    .map(|p| {
                        let q = chart.backend_coord(p);
                        (q.0 as f64, q.1 as f64)
                    })
                    .collect();
                for dash in dash_polyline(&px, dashes) {
                    root.draw(&PathElement::new(to_px(&dash), colour.stroke_width(2)))
                        .map_err(err)?;
                }
            }
        }
    }
    // Error bars first, markers over them, tension rings and labels last.
    let bar = RGBColor(90, 90, 90).stroke_width(1);
    for p in &d.points {
        if let Some((lo, hi)) = p.mass_err_msun {
            let a = chart.backend_coord(&(p.mass_msun - lo, p.radius_rsun));
            let b = chart.backend_coord(&(p.mass_msun + hi, p.radius_rsun));
            root.draw(&PathElement::new(vec![a, b], bar)).map_err(err)?;
        }
        if let Some(e) = p.radius_err_rsun {
            let a = chart.backend_coord(&(p.mass_msun, p.radius_rsun - e));
            let b = chart.backend_coord(&(p.mass_msun, p.radius_rsun + e));
            root.draw(&PathElement::new(vec![a, b], bar)).map_err(err)?;
        }
    }
    let mut placed: Vec<[i32; 4]> = Vec::new();
    for p in &d.points {
        let c = chart.backend_coord(&(p.mass_msun, p.radius_rsun));
        draw_marker(root, c, p.flag)?;
        if in_tension(p, d.tension_sigma) {
            root.draw(&Circle::new(c, 10, TENSION.stroke_width(2)))
                .map_err(err)?;
            place_label(root, &mut placed, &p.id, c, TENSION, pen)?;
        }
        hovers.borrow_mut().push((c.0, c.1, hover_text(p)));
    }
    draw_legend(&legend, d, pen)
}

/// The legend column: curves, then markers.
fn draw_legend<DB: DrawingBackend>(
    legend: &DrawingArea<DB, Shift>,
    d: &WdMassRadius,
    pen: Pen<'_>,
) -> DrawResult {
    let head = text_style(16.5).pos(Pos::new(HPos::Left, VPos::Center));
    let body = text_style(14.5).pos(Pos::new(HPos::Left, VPos::Center));
    let small = text_style(13.0).pos(Pos::new(HPos::Left, VPos::Center));
    let x0 = 8;
    let mut y = 66;
    pen.text(legend, "Model, standard gravity", &head, (x0, y))?;
    y += 24;
    for c in d.curves.iter().filter(|c| !c.best_fit) {
        let colour = curve_colour(c.colour_index, d.n_colours);
        line_sample(legend, (x0, y), colour, &[])?;
        pen.text(legend, &c.label, &body, (x0 + 50, y))?;
        y += 22;
    }
    if d.curves.iter().any(|c| c.best_fit) {
        y += 6;
        line_sample(legend, (x0, y), INK, BEST_DASHES)?;
        pen.text(legend, "same at the best fit", &body, (x0 + 50, y))?;
        y += 20;
        pen.text(
            legend,
            &format!("ϒ = {}, τ = {}", short(d.best_fit.0), short(d.best_fit.1)),
            &small,
            (x0 + 50, y),
        )?;
        y += 20;
    }
    pen.text(legend, &d.model_note, &small, (x0, y))?;
    y += 34;
    pen.text(legend, "White dwarfs", &head, (x0, y))?;
    y += 24;
    for flag in [
        WdPointFlag::InTest,
        WdPointFlag::ModelMass,
        WdPointFlag::NoTeff,
        WdPointFlag::Elm,
        WdPointFlag::OutsideModel,
    ] {
        if d.points.iter().any(|p| p.flag == flag) {
            draw_marker(legend, (x0 + 20, y), flag)?;
            pen.text(legend, flag.words(), &body, (x0 + 50, y))?;
            y += 22;
        }
    }
    if d.points.iter().any(|p| in_tension(p, d.tension_sigma)) {
        legend
            .draw(&Circle::new((x0 + 20, y), 10, TENSION.stroke_width(2)))
            .map_err(err)?;
        pen.text(
            legend,
            &format!("radius tension > {} σ", short(d.tension_sigma)),
            &body,
            (x0 + 50, y),
        )?;
    }
    Ok(())
}
