//! The figures' colours and line styles, chosen to stay distinguishable in greyscale.
//!
//! Colours are our own: the three confidence levels are dark, medium and light steps of one
//! slate-blue family (they stay ordered in greyscale); class outlines differ by dash pattern
//! first and colour second, with a white halo so they read on any fill; curves of a family
//! (one per τ) follow a lightness ramp and a dash cycle.
//!
//! ```ignore
//! let look = &OUTLINE_LOOKS[1];
//! assert_eq!(outline_style_name(1), look.name);
//! let first = curve_colour(0, 5); // the darkest of five curves
//! ```

use plotters::style::RGBColor;

/// Body text colour (near-black).
pub(crate) const INK: RGBColor = RGBColor(20, 20, 24);
/// Fills of the three levels, innermost (68.27 %) first: dark, medium, light slate blue.
pub(crate) const LEVEL_FILLS: [RGBColor; 3] = [
    RGBColor(27, 58, 107),
    RGBColor(84, 131, 186),
    RGBColor(190, 213, 235),
];
/// Fill of grid cells without a model (behind the hatching).
pub(crate) const NO_MODEL_FILL: RGBColor = RGBColor(236, 236, 236);
/// Hatching of grid cells without a model.
pub(crate) const NO_MODEL_HATCH: RGBColor = RGBColor(105, 105, 105);
/// Highlight of objects in tension (a red that stays dark in greyscale).
pub(crate) const TENSION: RGBColor = RGBColor(200, 25, 30);
/// Faint grid lines behind the data.
pub(crate) const GRID_LINE: RGBColor = RGBColor(150, 150, 150);

/// One outline style: colour, dash pattern in pixels (on, off, …; empty = solid) and its name in
/// words for the tables.
pub(crate) struct LineLook {
    pub colour: RGBColor,
    pub dashes: &'static [f64],
    pub name: &'static str,
}

/// Class outline styles, cycled in the order the classes are given.
pub(crate) const OUTLINE_LOOKS: [LineLook; 5] = [
    LineLook {
        colour: RGBColor(176, 60, 0),
        dashes: &[11.0, 5.0],
        name: "long dashes",
    },
    LineLook {
        colour: RGBColor(95, 35, 150),
        dashes: &[2.5, 3.5],
        name: "dots",
    },
    LineLook {
        colour: RGBColor(0, 0, 0),
        dashes: &[],
        name: "solid",
    },
    LineLook {
        colour: RGBColor(0, 105, 60),
        dashes: &[12.0, 4.0, 2.5, 4.0],
        name: "dash-dot",
    },
    LineLook {
        colour: RGBColor(120, 80, 0),
        dashes: &[5.0, 4.0],
        name: "short dashes",
    },
];

/// Dash patterns of the τ curves in the bounds figure, cycled.
pub(crate) const CURVE_DASHES: [&[f64]; 6] = [
    &[],
    &[12.0, 5.0],
    &[3.0, 4.0],
    &[12.0, 4.0, 3.0, 4.0],
    &[6.0, 4.0],
    &[18.0, 4.0, 3.0, 4.0, 3.0, 4.0],
];

/// The style name (for tables and captions) of the outline of the `index`-th class.
pub fn outline_style_name(index: usize) -> &'static str {
    OUTLINE_LOOKS[index % OUTLINE_LOOKS.len()].name
}

/// Lightness ramp for the τ curves: dark violet → red-brown → orange; greyscale lightness rises
/// monotonically along it.
pub(crate) fn curve_colour(k: usize, n: usize) -> RGBColor {
    let stops = [
        (45.0, 20.0, 95.0),
        (140.0, 40.0, 60.0),
        (205.0, 105.0, 20.0),
    ];
    let t = if n <= 1 {
        0.0
    } else {
        k as f64 / (n - 1) as f64
    };
    let (a, b, f) = if t <= 0.5 {
        (stops[0], stops[1], t / 0.5)
    } else {
        (stops[1], stops[2], (t - 0.5) / 0.5)
    };
    let mix = |x: f64, y: f64| (x + (y - x) * f).round().clamp(0.0, 255.0) as u8;
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn curve_ramp_gets_lighter_in_greyscale() {
        // Rec. 709 luma weights (ITU-R BT.709), common practice for greyscale conversion.
        let luma = |c: RGBColor| 0.2126 * c.0 as f64 + 0.7152 * c.1 as f64 + 0.0722 * c.2 as f64;
        let l: Vec<f64> = (0..5).map(|k| luma(curve_colour(k, 5))).collect();
        assert!(l.windows(2).all(|w| w[1] > w[0]), "{l:?}");
        let f: Vec<f64> = LEVEL_FILLS.iter().map(|&c| luma(c)).collect();
        assert!(f.windows(2).all(|w| w[1] > w[0] + 40.0), "{f:?}");
    }
}
