//! The zoomed allowed-region map: when the allowed region fills a small part of the grid, a
//! second panel on the window around it, with the one-parameter interval at τ = 0 from the
//! 10× finer ϒ axis drawn as a bar, and the `--upsilon`/`--tau` ranges that would resolve it.
//!
//! The window is a selection of the grid's own points (the outermost level's region, padded by
//! two grid steps): the two-dimensional map has no finer grid, and the caption says so. Only the
//! τ = 0 line has a finer axis, which the bar shows.
//!
//! ```ignore
//! if let Some(z) = zoom_of(&map, profile.as_ref()) {
//!     let svg = render_zoom_svg(&z)?;
//!     println!("{}", z.suggestion);
//! }
//! ```

use super::allowed::{draw_allowed, Extras, ALLOWED_SIZE};
use super::kit::{png_bytes, png_pen, svg_string, SVG_PEN};
use crate::report::figure_data::ProfileTau0;
use crate::report::input::{AllowedMap, ClassOutline};
use crate::report::ReportError;

/// Below this fraction of the grid's points inside the outermost level, the map gets a zoom:
/// a region in under a quarter of the cells is drawn by few blocks, and the padded window is
/// still a small part of the plane.
pub const ZOOM_BELOW_FRACTION: f64 = 0.25;

/// Grid steps of padding around the region in the zoomed window.
const PAD_STEPS: usize = 2;

/// How much finer than the current grid the suggested rerun is, per axis.
const SUGGESTED_REFINEMENT: usize = 4;

/// The zoomed panel: its map (a window of the full one) and what the caption says.
#[derive(Debug, Clone, PartialEq)]
pub struct Zoom {
    /// The window of the full map.
    pub map: AllowedMap,
    /// Fraction of the full grid's points inside the outermost level.
    pub fraction_of_grid: f64,
    /// (level label, lower, upper) of the one-parameter interval at τ = 0 on the finer axis,
    /// clipped to the window where an end is open.
    pub fine_interval: Option<(String, f64, f64)>,
    /// The command-line ranges that would resolve the region, e.g.
    /// `--upsilon=-0.26:0.16:85 --tau=-0.1:0.16:53`.
    pub suggestion: String,
    /// Grid steps of the full map (ϒ, τ), for the caption.
    pub steps: (f64, f64),
}

/// A grid value as command-line text: rounded to 10 decimals so that `-0.26000000000000001`
/// reads `-0.26`, ASCII minus.
fn arg_number(x: f64) -> String {
    let r = (x * 1e10).round() / 1e10;
    let r = if r == 0.0 { 0.0 } else { r };
    format!("{r}")
}

/// Inclusive index range of the rows/columns holding a point inside `threshold`.
fn extent(map: &AllowedMap, threshold: f64) -> Option<((usize, usize), (usize, usize))> {
    let nu = map.upsilon.len();
    let mut iu = (usize::MAX, 0);
    let mut it = (usize::MAX, 0);
    for (k, v) in map.delta_chi2.iter().enumerate() {
        if v.is_some_and(|v| v <= threshold) {
            let (i, j) = (k % nu, k / nu);
            iu = (iu.0.min(i), iu.1.max(i));
            it = (it.0.min(j), it.1.max(j));
        }
    }
    (iu.0 != usize::MAX).then_some((iu, it))
}

/// Rows `j0..=j1`, columns `i0..=i1` of a row-major field.
fn window(
    field: &[Option<f64>],
    nu: usize,
    (i0, i1): (usize, usize),
    (j0, j1): (usize, usize),
) -> Vec<Option<f64>> {
    (j0..=j1)
        .flat_map(|j| (i0..=i1).map(move |i| field[j * nu + i]))
        .collect()
}

/// The zoomed panel of `map`, when its outermost region covers less than
/// [`ZOOM_BELOW_FRACTION`] of a two-dimensional grid and the padded window is smaller than the
/// grid. `profile` supplies the finer interval at τ = 0.
pub fn zoom_of(map: &AllowedMap, profile: Option<&ProfileTau0>) -> Option<Zoom> {
    let (nu, nt) = (map.upsilon.len(), map.tau.len());
    if nu < 3 || nt < 3 {
        return None;
    }
    let outer = map.levels[2].threshold;
    let inside = map
        .delta_chi2
        .iter()
        .filter(|v| v.is_some_and(|v| v <= outer))
        .count();
    let fraction_of_grid = inside as f64 / (nu * nt) as f64;
    if fraction_of_grid >= ZOOM_BELOW_FRACTION {
        return None;
    }
    let ((u0, u1), (t0, t1)) = extent(map, outer)?;
    let iu = (u0.saturating_sub(PAD_STEPS), (u1 + PAD_STEPS).min(nu - 1));
    let it = (t0.saturating_sub(PAD_STEPS), (t1 + PAD_STEPS).min(nt - 1));
    if iu.1 - iu.0 < 2 || it.1 - it.0 < 2 || (iu == (0, nu - 1) && it == (0, nt - 1)) {
        return None;
    }
    let sub = AllowedMap {
        upsilon: map.upsilon[iu.0..=iu.1].to_vec(),
        tau: map.tau[it.0..=it.1].to_vec(),
        delta_chi2: window(&map.delta_chi2, nu, iu, it),
        levels: map.levels.clone(),
        class_outlines: map
            .class_outlines
            .iter()
            .map(|c| ClassOutline {
                class_label: c.class_label.clone(),
                delta_chi2: window(&c.delta_chi2, nu, iu, it),
            })
            .collect(),
        best_fit: map.best_fit,
        standard_gravity: map.standard_gravity,
        anisotropy_name: map.anisotropy_name.clone(),
        disfavoured_below_upsilon: map.disfavoured_below_upsilon.clone(),
    };
    let (ulo, uhi) = (sub.upsilon[0], sub.upsilon[sub.upsilon.len() - 1]);
    let (tlo, thi) = (sub.tau[0], sub.tau[sub.tau.len() - 1]);
    let fine_interval = profile.and_then(|p| {
        let label = &map.levels[1].label;
        let (_, lo, hi) = p.intervals.iter().find(|(l, _, _)| l == label)?;
        let lo = lo.unwrap_or(ulo).max(ulo);
        let hi = hi.unwrap_or(uhi).min(uhi);
        (lo < hi && tlo <= 0.0 && 0.0 <= thi)
            .then(|| (format!("{label} interval, one parameter:"), lo, hi))
    });
    // Suggested rerun: the same window at a quarter of the current spacing.
    let count = |n_cells: usize| n_cells * SUGGESTED_REFINEMENT + 1;
    let suggestion = format!(
        "--upsilon={}:{}:{} --tau={}:{}:{}",
        arg_number(ulo),
        arg_number(uhi),
        count(iu.1 - iu.0),
        arg_number(tlo),
        arg_number(thi),
        count(it.1 - it.0)
    );
    let steps = (
        (map.upsilon[nu - 1] - map.upsilon[0]) / (nu - 1) as f64,
        (map.tau[nt - 1] - map.tau[0]) / (nt - 1) as f64,
    );
    Some(Zoom {
        map: sub,
        fraction_of_grid,
        fine_interval,
        suggestion,
        steps,
    })
}

fn extras(z: &Zoom) -> Extras {
    Extras {
        title: Some("Zoom on the allowed region (grid resolution)".into()),
        fine_interval: z.fine_interval.clone(),
    }
}

/// Renders the zoomed panel as an SVG document.
pub fn render_zoom_svg(z: &Zoom) -> Result<String, ReportError> {
    z.map.validate()?;
    svg_string(ALLOWED_SIZE, "zoomed allowed-region map (SVG)", |root| {
        draw_allowed(root, &z.map, &extras(z), SVG_PEN)
    })
}

/// Renders the zoomed panel as PNG bytes.
pub fn render_zoom_png(z: &Zoom) -> Result<Vec<u8>, ReportError> {
    z.map.validate()?;
    png_bytes(ALLOWED_SIZE, "zoomed allowed-region map (PNG)", |root| {
        draw_allowed(root, &z.map, &extras(z), png_pen())
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::input::Level;

    fn map(nu: usize, nt: usize, allowed: &[(usize, usize)]) -> AllowedMap {
        let upsilon: Vec<f64> = (0..nu).map(|i| -0.3 + 0.02 * i as f64).collect();
        let tau: Vec<f64> = (0..nt).map(|j| -0.3 + 0.02 * j as f64).collect();
        let mut d = vec![Some(100.0); nu * nt];
        for &(i, j) in allowed {
            d[j * nu + i] = Some(1.0);
        }
        AllowedMap {
            upsilon,
            tau,
            delta_chi2: d,
            levels: [
                Level {
                    label: "68.27 %".into(),
                    threshold: 2.30,
                },
                Level {
                    label: "95.45 %".into(),
                    threshold: 6.18,
                },
                Level {
                    label: "99.73 %".into(),
                    threshold: 11.83,
                },
            ],
            class_outlines: vec![],
            best_fit: (0.0, 0.0),
            standard_gravity: (0.0, 0.0),
            anisotropy_name: "density-squared".into(),
            disfavoured_below_upsilon: None,
        }
    }

    /// Source: the definition of the window (region ± two grid steps, a quarter of the spacing
    /// in the suggestion): cells 15..=16 × 15 of a 31 × 31 grid at step 0.02 from −0.3.
    #[test]
    fn small_region_gets_a_padded_window_and_a_finer_suggestion() {
        let m = map(31, 31, &[(15, 15), (16, 15)]);
        let z = zoom_of(&m, None).unwrap();
        assert_eq!(z.map.upsilon.len(), 6); // 13..=18
        assert_eq!(z.map.tau.len(), 5); // 13..=17
        assert_eq!(z.suggestion, "--upsilon=-0.04:0.06:21 --tau=-0.04:0.04:17");
        assert!(z.fraction_of_grid < ZOOM_BELOW_FRACTION);
    }

    /// A region over a quarter of the grid gets no zoom (the rule of the feature).
    #[test]
    fn large_region_gets_none() {
        let cells: Vec<(usize, usize)> = (0..5).flat_map(|i| (0..5).map(move |j| (i, j))).collect();
        assert!(zoom_of(&map(10, 10, &cells), None).is_none());
    }
}
