//! The report's section on the data against the theory: the Δχ² profile along τ = 0, each
//! class's masses against its bound and the white-dwarf mass–radius diagram, each as a figure block with a caption that says what is
//! drawn and how many objects sit where. Only wording: the numbers arrive prepared.
//!
//! ```ignore
//! let rendered = Rendered { profile_svg: Some(svg), wd_svg: None, mass_svg: None };
//! let blocks = blocks(&data, rendered);
//! assert!(matches!(blocks[0], Block::Heading(_)));
//! ```

use super::document::{Block, FigureKind, Inline};
use super::figure_data::{DataFigures, WdPointFlag};
use super::figures::Zoom;
use super::text::fmt_sig;

/// The SVG text of each data figure that was drawn.
pub(crate) struct Rendered {
    /// `profile_tau0.svg`.
    pub profile_svg: Option<String>,
    /// `wd_mass_radius.svg`.
    pub wd_svg: Option<String>,
    /// `mass_bounds.svg`.
    pub mass_svg: Option<String>,
}

fn t(s: impl Into<String>) -> Inline {
    Inline::Text(s.into())
}

/// The blocks of the section, empty when no data figure was drawn.
pub(crate) fn blocks(data: &DataFigures, rendered: Rendered) -> Vec<Block> {
    let mut out = Vec::new();
    if let (Some(p), Some(svg)) = (&data.profile_tau0, rendered.profile_svg) {
        let ends: Vec<String> = p
            .intervals
            .iter()
            .map(|(level, lo, hi)| {
                let end = |x: &Option<f64>| x.map_or("open".to_string(), |v| fmt_sig(v, 3));
                format!("{level}: [{}, {}]", end(lo), end(hi))
            })
            .collect();
        out.push(Block::Figure {
            kind: FigureKind::ProfileTau0,
            svg,
            alt: "One-parameter Δχ² against ϒ along τ = 0".into(),
            caption: vec![t(format!(
                "The joint Δχ² of all classes along τ = 0 against ϒ, on the 10× finer axis the \
                 interval is read from; dashed: the one-parameter thresholds; ticks: the interval \
                 ends where the curve crosses them ({}); diamond: standard gravity.{}",
                ends.join("; "),
                if p.profile_over_tau.is_empty() {
                    ""
                } else {
                    " Orange, dashed: the profile of ϒ over τ (the minimum over τ at each ϒ \
                     node of the grid, relative to the global minimum), whose crossings give the \
                     profile intervals; it lies under the τ = 0 curve wherever another τ fits \
                     better."
                }
            ))],
        });
    }
    if let (Some(m), Some(svg)) = (&data.mass_bounds, rendered.mass_svg) {
        let tension: Vec<&str> = m
            .panels
            .iter()
            .flat_map(|p| p.objects.iter())
            .filter(|o| o.sigma.0.is_some_and(|s| s > m.tension_sigma))
            .map(|o| o.id.as_str())
            .collect();
        let mut caption = format!(
            "Per class, every object's mass with its error bar, side by side in order of mass, \
             against the bound it is tested with: solid with its theory floor (1σ) as a band at \
             standard gravity, dashed at the best fit (ϒ = {}, τ = {}). White-dwarf bounds are \
             drawn for μe = 2 (each object is tested against its own, scaled by (2/μe)²). Open \
             markers: left out of the test, for the reason in the legend; arrowheads on an edge: \
             beyond the drawn mass range. Hover an object in the HTML page for its σ.",
            fmt_sig(m.best_fit.0, 3),
            fmt_sig(m.best_fit.1, 3)
        );
        if !tension.is_empty() {
            caption.push_str(&format!(
                " Ringed in red, in tension above {} σ at standard gravity: {}.",
                fmt_sig(m.tension_sigma, 3),
                tension.join(", ")
            ));
        }
        out.push(Block::Figure {
            kind: FigureKind::MassBounds,
            svg,
            alt: "Each object's mass against its class bound, per class".into(),
            caption: vec![t(caption)],
        });
    }
    if let (Some(w), Some(svg)) = (&data.wd_mass_radius, rendered.wd_svg) {
        let n_test = w
            .points
            .iter()
            .filter(|p| p.flag == WdPointFlag::InTest)
            .count();
        let tension: Vec<&str> = w
            .points
            .iter()
            .filter(|p| p.sigma.is_some_and(|s| s.abs() > w.tension_sigma))
            .map(|p| p.id.as_str())
            .collect();
        let mut caption = format!(
            "{} white dwarf(s) with a measured radius, {} of them in the radius test (filled \
             discs); the open markers are left out of it, for the reason in the legend. Solid: \
             the standard-gravity model at a few Teff; dashed: the same at the best fit (ϒ = {}, \
             τ = {}), scaled by the zero-temperature ratio R(M; ϒ, τ)/R(M; 0, 0). Hover a point \
             in the HTML page for its id, mass, radius, Teff and σ.",
            w.points.len(),
            n_test,
            fmt_sig(w.best_fit.0, 3),
            fmt_sig(w.best_fit.1, 3)
        );
        if !tension.is_empty() {
            caption.push_str(&format!(
                " Ringed in red, in radius tension above {} σ: {}.",
                fmt_sig(w.tension_sigma, 3),
                tension.join(", ")
            ));
        }
        out.push(Block::Figure {
            kind: FigureKind::WdMassRadius,
            svg,
            alt: "White-dwarf masses and radii against the model's mass–radius curves".into(),
            caption: vec![t(caption)],
        });
    }
    if !out.is_empty() {
        out.insert(0, Block::Heading("The data against the theory".into()));
    }
    out
}

/// The zoomed map after the full one: the figure, and a caption saying what it covers, that the
/// two-dimensional map is at the grid's own resolution, and which ranges would resolve it.
pub(crate) fn zoom_blocks(z: &Zoom, svg: String) -> Vec<Block> {
    let m = &z.map;
    let (u, tt) = (&m.upsilon, &m.tau);
    let mut caption = format!(
        "The region allowed at {} fills {} % of the grid, so this panel zooms on ϒ ∈ [{}, {}], \
         τ ∈ [{}, {}] (the region and two grid steps around it). It is drawn at the grid's own \
         resolution (steps {} in ϒ and {} in τ): no finer two-dimensional grid is computed, so \
         the outlines are as coarse as the grid.",
        m.levels[2].label,
        fmt_sig(100.0 * z.fraction_of_grid, 2),
        fmt_sig(u[0], 4),
        fmt_sig(u[u.len() - 1], 4),
        fmt_sig(tt[0], 4),
        fmt_sig(tt[tt.len() - 1], 4),
        fmt_sig(z.steps.0, 3),
        fmt_sig(z.steps.1, 3)
    );
    if let Some((label, lo, hi)) = &z.fine_interval {
        caption.push_str(&format!(
            " The bar at τ = 0 is the {} [{}, {}], read from the τ = 0 line on its 10× finer \
             ϒ axis.",
            label.trim_end_matches(':'),
            fmt_sig(*lo, 3),
            fmt_sig(*hi, 3)
        ));
    }
    caption.push_str(" To resolve the region, run again over this window with finer steps: ");
    vec![Block::Figure {
        kind: FigureKind::AllowedZoom,
        svg,
        alt: "Zoom on the allowed region in the (ϒ, τ) plane".into(),
        caption: vec![
            t(caption),
            Inline::Code(z.suggestion.clone()),
            t(" (a quarter of the present spacing)."),
        ],
    }]
}
