//! Each class's masses against its bound: one panel per class, the objects side by side in
//! order of mass with their error bars, the bound at standard gravity with its theory floor as
//! a band, and the bound at the best fit dashed. Objects in tension at standard gravity (on the
//! wrong side of the bound by more than the threshold) are ringed in red; young, model-mass and otherwise left-out objects are drawn with open markers.
//! The mass axis spans the bound ± its own size (at least 8 floors): objects beyond it sit as
//! arrowheads on the edge. The SVG carries a `<title>` per object.
//!
//! ```no_run
//! # fn demo(m: &dwarfbound::report::MassBounds) -> Result<(), dwarfbound::report::ReportError> {
//! let svg = dwarfbound::report::render_mass_bounds_svg(m)?;
//! let png = dwarfbound::report::render_mass_bounds_png(m)?;
//! assert!(svg.starts_with("<svg") && png.starts_with(b"\x89PNG"));
//! # Ok(()) }
//! ```

use std::cell::RefCell;

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::kit::axes::{draw_axis_text, draw_mesh};
use super::kit::hover::add_hover_titles;
use super::kit::marks::{dash_polyline, place_label, to_px};
use super::kit::palette::{INK, LEVEL_FILLS, TENSION};
use super::kit::{
    err, png_bytes, png_pen, short, svg_string, text_style, DrawResult, Pen, SVG_PEN,
};
use crate::report::figure_data::{MassBounds, MassMark, MassObject, MassPanel};
use crate::report::ReportError;

/// Width of the figure; its height grows with the number of panels.
pub const MASS_BOUNDS_WIDTH: u32 = 1100;
/// Height of one panel.
const PANEL_H: u32 = 400;
/// Width of the legend column.
const LEGEND_W: i32 = 250;
/// Colour of the bound lines.
const BOUND: RGBColor = RGBColor(176, 60, 0);

type Hovers = RefCell<Vec<(i32, i32, String)>>;

fn size(m: &MassBounds) -> (u32, u32) {
    (
        MASS_BOUNDS_WIDTH,
        50 + PANEL_H * m.panels.len().max(1) as u32,
    )
}

/// Renders the figure as an SVG document with a hover title per object.
pub fn render_mass_bounds_svg(m: &MassBounds) -> Result<String, ReportError> {
    m.validate()?;
    let hovers = RefCell::new(Vec::new());
    let svg = svg_string(size(m), "masses against bounds (SVG)", |root| {
        hovers.borrow_mut().clear();
        draw(root, m, SVG_PEN, &hovers)
    })?;
    let items = hovers.into_inner();
    Ok(add_hover_titles(svg, &items))
}

/// Renders the figure as PNG bytes.
pub fn render_mass_bounds_png(m: &MassBounds) -> Result<Vec<u8>, ReportError> {
    m.validate()?;
    let hovers = RefCell::new(Vec::new());
    png_bytes(size(m), "masses against bounds (PNG)", |root| {
        draw(root, m, png_pen(), &hovers)
    })
}

fn hover_text(o: &MassObject, bound: &str) -> String {
    let e = match o.mass_err_msun {
        Some((a, b)) if a == b => format!(" ± {}", short(a)),
        Some((a, b)) => format!(" −{}/+{}", short(a), short(b)),
        None => String::new(),
    };
    let s = |x: Option<f64>| x.map_or("—".to_string(), |v| format!("{v:+.2} σ"));
    format!(
        "{}: M = {}{} M☉; against the {bound}: {} at standard gravity, {} at the best fit ({})",
        o.id,
        short(o.mass_msun),
        e,
        s(o.sigma.0),
        s(o.sigma.1),
        o.mark.words()
    )
}

/// Mass tensions are one-sided: positive σ is the wrong side of the bound.
fn in_tension(o: &MassObject, threshold: f64) -> bool {
    o.sigma.0.is_some_and(|s| s > threshold)
}

/// The mass window of a panel: the data, within the bound ± max(bound, 8 floors).
fn window(p: &MassPanel) -> (f64, f64) {
    let b = p.bound_standard_msun;
    let w = b.max(8.0 * p.floor_msun);
    let mut lo = b - 2.0 * p.floor_msun;
    let mut hi = b + 2.0 * p.floor_msun;
    if let Some(best) = p.bound_best_msun {
        lo = lo.min(best);
        hi = hi.max(best);
    }
    for o in &p.objects {
        let (a, c) = o.mass_err_msun.unwrap_or((0.0, 0.0));
        lo = lo.min(o.mass_msun - a);
        hi = hi.max(o.mass_msun + c);
    }
    let (lo, hi) = (lo.max(b - w).max(0.0), hi.min(b + w));
    let pad = 0.04 * (hi - lo).max(1e-6);
    (lo - pad, hi + pad)
}

fn marker<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    c: (i32, i32),
    mark: MassMark,
) -> DrawResult {
    let open = INK.stroke_width(1);
    match mark {
        MassMark::InFit => area.draw(&Circle::new(c, 3, LEVEL_FILLS[0].filled())),
        MassMark::Young => area.draw(&Circle::new(c, 4, open)),
        MassMark::ModelMass => area.draw(&Rectangle::new(
            [(c.0 - 3, c.1 - 3), (c.0 + 3, c.1 + 3)],
            open,
        )),
        MassMark::LeftOut => {
            area.draw(&PathElement::new(
                vec![(c.0 - 4, c.1 + 4), (c.0 + 4, c.1 - 4)],
                open,
            ))
            .map_err(err)?;
            area.draw(&PathElement::new(
                vec![(c.0 - 4, c.1 - 4), (c.0 + 4, c.1 + 4)],
                open,
            ))
        }
    }
    .map_err(err)
}

fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    m: &MassBounds,
    pen: Pen<'_>,
    hovers: &Hovers,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let (width, _) = root.dim_in_pixel();
    let (main, legend) = root.split_horizontally(width as i32 - LEGEND_W);
    pen.text(
        &main,
        "Each object's mass against its class bound",
        &text_style(22.0).pos(Pos::new(HPos::Center, VPos::Top)),
        ((width as i32 - LEGEND_W) / 2, 10),
    )?;
    let main = main.margin(46, 0, 0, 0);
    let areas = main.split_evenly((m.panels.len().max(1), 1));
    for (p, area) in m.panels.iter().zip(&areas) {
        draw_panel(root, area, p, m.tension_sigma, pen, hovers)?;
    }
    draw_legend(&legend, m, pen)
}

fn draw_panel<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    area: &DrawingArea<DB, Shift>,
    p: &MassPanel,
    tension: f64,
    pen: Pen<'_>,
    hovers: &Hovers,
) -> DrawResult {
    let mut objs: Vec<&MassObject> = p.objects.iter().collect();
    objs.sort_by(|a, b| a.mass_msun.total_cmp(&b.mass_msun).then(a.id.cmp(&b.id)));
    let n = objs.len().max(1) as f64;
    let (y_lo, y_hi) = window(p);
    pen.text(
        area,
        &format!(
            "{} — {} object(s); {} = {} M☉{}",
            p.title,
            objs.len(),
            p.bound_label,
            short(p.bound_standard_msun),
            p.bound_best_msun.map_or(String::new(), |b| format!(
                " ({} at the best fit)",
                short(b)
            ))
        ),
        &text_style(17.0).pos(Pos::new(HPos::Center, VPos::Top)),
        (area.dim_in_pixel().0 as i32 / 2 + 40, 4),
    )?;
    let mut chart = ChartBuilder::on(&area.margin(28, 8, 6, 12))
        .x_label_area_size(50)
        .y_label_area_size(84)
        .margin_right(10)
        .build_cartesian_2d(-0.5..n - 0.5, y_lo..y_hi)
        .map_err(err)?;
    draw_mesh(&mut chart, 8, 14.0, 0.3)?;
    draw_axis_text(
        root,
        &chart,
        (8, 7),
        "objects, in order of increasing mass",
        "mass (M☉)",
        (14.0, 16.0),
        pen,
    )?;
    // The floor band and the two bound lines.
    let b = p.bound_standard_msun;
    let band = |y: f64| chart.backend_coord(&(0.0, y.clamp(y_lo, y_hi))).1;
    let (left, _) = chart.backend_coord(&(-0.5, y_lo));
    let (right, _) = chart.backend_coord(&(n - 0.5, y_lo));
    root.draw(&Rectangle::new(
        [
            (left, band(b + p.floor_msun)),
            (right, band(b - p.floor_msun)),
        ],
        BOUND.mix(0.18).filled(),
    ))
    .map_err(err)?;
    let hline = |y: f64, dashes: &[f64]| -> DrawResult {
        if y < y_lo || y > y_hi {
            return Ok(());
        }
        let py = band(y) as f64;
        for piece in dash_polyline(&[(left as f64, py), (right as f64, py)], dashes) {
            root.draw(&PathElement::new(to_px(&piece), BOUND.stroke_width(2)))
                .map_err(err)?;
        }
        Ok(())
    };
    hline(b, &[])?;
    if let Some(best) = p.bound_best_msun {
        hline(best, &[8.0, 5.0])?;
    }
    let bar = RGBColor(110, 110, 110).stroke_width(1);
    let mut placed: Vec<[i32; 4]> = Vec::new();
    for (i, o) in objs.iter().enumerate() {
        let x = i as f64;
        let y = o.mass_msun.clamp(y_lo, y_hi);
        let c = chart.backend_coord(&(x, y));
        if o.mass_msun < y_lo || o.mass_msun > y_hi {
            let d = if o.mass_msun > y_hi { 1 } else { -1 };
            root.draw(&Polygon::new(
                vec![
                    (c.0, c.1 - 4 * d),
                    (c.0 - 4, c.1 + 3 * d),
                    (c.0 + 4, c.1 + 3 * d),
                ],
                INK.mix(0.6).filled(),
            ))
            .map_err(err)?;
        } else {
            if let Some((lo, hi)) = o.mass_err_msun {
                let a = chart.backend_coord(&(x, (o.mass_msun - lo).max(y_lo)));
                let z = chart.backend_coord(&(x, (o.mass_msun + hi).min(y_hi)));
                root.draw(&PathElement::new(vec![a, z], bar)).map_err(err)?;
            }
            marker(root, c, o.mark)?;
        }
        if in_tension(o, tension) {
            root.draw(&Circle::new(c, 8, TENSION.stroke_width(2)))
                .map_err(err)?;
            place_label(root, &mut placed, &o.id, c, TENSION, pen)?;
        }
        hovers
            .borrow_mut()
            .push((c.0, c.1, hover_text(o, &p.bound_label)));
    }
    Ok(())
}

fn draw_legend<DB: DrawingBackend>(
    legend: &DrawingArea<DB, Shift>,
    m: &MassBounds,
    pen: Pen<'_>,
) -> DrawResult {
    let body = text_style(14.0).pos(Pos::new(HPos::Left, VPos::Center));
    let small = text_style(12.5).pos(Pos::new(HPos::Left, VPos::Center));
    let x0 = 8;
    let mut y = 90;
    legend
        .draw(&Rectangle::new(
            [(x0, y - 7), (x0 + 36, y + 7)],
            BOUND.mix(0.18).filled(),
        ))
        .map_err(err)?;
    legend
        .draw(&PathElement::new(
            vec![(x0, y), (x0 + 36, y)],
            BOUND.stroke_width(2),
        ))
        .map_err(err)?;
    pen.text(legend, "bound, standard gravity", &body, (x0 + 44, y))?;
    y += 18;
    pen.text(legend, "band: ± theory floor (1σ)", &small, (x0 + 44, y))?;
    y += 26;
    for piece in dash_polyline(
        &[(x0 as f64, y as f64), (x0 as f64 + 36.0, y as f64)],
        &[8.0, 5.0],
    ) {
        legend
            .draw(&PathElement::new(to_px(&piece), BOUND.stroke_width(2)))
            .map_err(err)?;
    }
    pen.text(legend, "bound at the best fit", &body, (x0 + 44, y))?;
    y += 18;
    pen.text(
        legend,
        &format!("ϒ = {}, τ = {}", short(m.best_fit.0), short(m.best_fit.1)),
        &small,
        (x0 + 44, y),
    )?;
    y += 32;
    let all = m.panels.iter().flat_map(|p| p.objects.iter());
    let present: Vec<MassMark> = [
        MassMark::InFit,
        MassMark::Young,
        MassMark::ModelMass,
        MassMark::LeftOut,
    ]
    .into_iter()
    .filter(|k| all.clone().any(|o| o.mark == *k))
    .collect();
    for mark in present {
        marker(legend, (x0 + 18, y), mark)?;
        pen.text(legend, mark.words(), &small, (x0 + 44, y))?;
        y += 22;
    }
    legend
        .draw(&Polygon::new(
            vec![(x0 + 18, y - 4), (x0 + 14, y + 3), (x0 + 22, y + 3)],
            INK.mix(0.6).filled(),
        ))
        .map_err(err)?;
    pen.text(legend, "beyond the axis (edge)", &small, (x0 + 44, y))?;
    y += 24;
    if all.clone().any(|o| in_tension(o, m.tension_sigma)) {
        legend
            .draw(&Circle::new((x0 + 18, y), 8, TENSION.stroke_width(2)))
            .map_err(err)?;
        pen.text(
            legend,
            &format!("tension > {} σ", short(m.tension_sigma)),
            &small,
            (x0 + 44, y),
        )?;
    }
    Ok(())
}
