//! The figures of the report, one file each, drawn with a shared kit.
//!
//! [`kit`] holds what every figure needs (font, pens, palette, axes and ticks, line work,
//! markers, the SVG and PNG renderers); [`allowed`] draws the allowed-region map in the (ϒ, τ)
//! plane (and [`zoom`] its zoomed panel when the region is small), [`bounds`] the predicted
//! bounds against ϒ, [`breakup`] the minimum spin period against mass, [`wd_mass_radius`] the
//! white dwarfs over
//! the model's mass–radius curves, [`profile`] the Δχ² along τ = 0 and [`mass_bounds`] each
//! class's masses against its bound. A new figure is a file here with a
//! drawing routine generic over the plotters backend and two public `render_*` functions that
//! hand it to [`kit::svg_string`] and [`kit::png_bytes`].
//!
//! ```no_run
//! # fn demo(map: &dwarfbound::report::AllowedMap, curves: &dwarfbound::report::BoundsCurves)
//! #     -> Result<(), dwarfbound::report::ReportError> {
//! let map_svg = dwarfbound::report::render_allowed_svg(map)?;
//! let bounds_png = dwarfbound::report::render_bounds_png(curves)?;
//! assert!(map_svg.starts_with("<svg") && bounds_png.starts_with(b"\x89PNG"));
//! # Ok(()) }
//! ```

mod allowed;
mod bounds;
mod breakup;
mod contour;
mod kit;
mod mass_bounds;
mod profile;
mod wd_mass_radius;
mod zoom;

pub use allowed::{render_allowed_png, render_allowed_svg, ALLOWED_SIZE};
pub use bounds::{render_bounds_png, render_bounds_svg, BOUNDS_WIDTH};
pub use breakup::{
    render_breakup_png, render_breakup_svg, BreakupFigure, BreakupLine, BreakupPanel, BREAKUP_SIZE,
};
pub use kit::palette::outline_style_name;
pub use mass_bounds::{render_mass_bounds_png, render_mass_bounds_svg, MASS_BOUNDS_WIDTH};
pub use profile::{render_profile_png, render_profile_svg, PROFILE_SIZE};
pub use wd_mass_radius::{
    render_wd_mass_radius_png, render_wd_mass_radius_svg, WD_MASS_RADIUS_SIZE,
};
pub use zoom::{render_zoom_png, render_zoom_svg, zoom_of, Zoom, ZOOM_BELOW_FRACTION};
