//! Axes of a figure: the mesh (axis lines and faint grid), tick labels with just enough
//! decimals, axis descriptions, and the data range of an axis.
//!
//! plotters' mesh draws only the lines here; labels go through the [`Pen`] so the PNG gets the
//! same corrected glyph placement as every other text.
//!
//! ```ignore
//! let (x_lo, x_hi) = axis_range(&upsilon);
//! let mut chart = ChartBuilder::on(&area).build_cartesian_2d(x_lo..x_hi, 0.0..1.0).map_err(err)?;
//! draw_mesh(&mut chart, 8, 15.0, 0.3)?;
//! draw_axis_text(&root, &chart, (8, 8), "ϒ (dimensionless)", "bound", (15.0, 18.0), pen)?;
//! ```

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::FontTransform;

use super::palette::{GRID_LINE, INK};
use super::{err, text_style, DrawResult, Pen};

/// Axes and faint grid lines of a plot with `labels` ticks per axis. Tick labels are drawn by
/// [`draw_axis_text`]; the mesh's label style must still name a registered font.
pub(crate) fn draw_mesh<DB: DrawingBackend>(
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
pub(crate) fn draw_axis_text<DB: DrawingBackend>(
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

/// A tick label with `decimals` places; a value that rounds to zero shows as 0, never −0.
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

/// The plotted range of an ascending axis; a single value gets a small pad on each side.
pub(crate) fn axis_range(values: &[f64]) -> (f64, f64) {
    let lo = values.first().copied().unwrap_or(0.0);
    let hi = values.last().copied().unwrap_or(1.0);
    if hi > lo {
        (lo, hi)
    } else {
        let pad = if lo == 0.0 { 0.05 } else { lo.abs() * 0.1 };
        (lo - pad, hi + pad)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tick_labels_do_not_show_negative_zero() {
        assert_eq!(fmt_tick(-0.0001, 2), "0.00");
        assert_eq!(fmt_tick(-0.25, 2), "-0.25");
        assert_eq!(tick_decimals(&[-0.3, -0.2, -0.1, 0.0]), 1);
        assert_eq!(tick_decimals(&[0.0725, 0.075, 0.0775]), 4);
        assert_eq!(tick_decimals(&[1.0, 2.0]), 0);
    }
}
