//! Writing results: the human-readable report, its figures, and small table writers. Computes no
//! physics.
//!
//! The confrontation prepares plain data ([`ReportInput`], [`AllowedMap`], [`BoundsCurves`]);
//! this module turns it into `report.html` (self-contained: inline CSS and SVG, no scripts, no
//! network), `report.md` (the same content), and the figures `allowed.svg`/`.png` and
//! `bounds.svg`/`.png`. Output bytes depend only on the input; the generation time sits on one
//! line marked with [`VOLATILE_MARKER`] so comparisons can drop it ([`strip_volatile`]).
//!
//! ```no_run
//! # fn demo(input: &dwarfbound::report::ReportInput,
//! #         map: &dwarfbound::report::AllowedMap,
//! #         curves: &dwarfbound::report::BoundsCurves) -> Result<(), dwarfbound::report::ReportError> {
//! dwarfbound::report::write_report(std::path::Path::new("reports/latest"), input, map, curves)?;
//! # Ok(()) }
//! ```

mod document;
mod figures;
mod html;
mod input;
mod markdown;
pub mod tables;
pub mod text;

use std::path::Path;

pub use figures::{
    outline_style_name, render_allowed_png, render_allowed_svg, render_bounds_png,
    render_bounds_svg, ALLOWED_SIZE, BOUNDS_WIDTH,
};
pub use input::{
    AllowedMap, AllowedRange, AxisSpec, BestFit, BoundSeries, BoundsCurves, CatalogueSummary,
    ClassContribution, ClassOutline, Consistency, DriverRow, GridDescription, Level,
    ModelDescription, ReductionError, ReportInput, Shift, StandardGravityStatus, TensionRow,
    TensionTable, UpsilonInterval, Warning, WorstObject,
};

use crate::output::{write_atomic, OutputError};

/// Marks the one line of `report.html` and `report.md` that holds the generation time.
pub const VOLATILE_MARKER: &str = "<!-- volatile: generated-at -->";

/// Names of the files [`write_report`] writes, in the order it writes them.
pub const REPORT_FILES: [&str; 6] = [
    "allowed.svg",
    "allowed.png",
    "bounds.svg",
    "bounds.png",
    "report.md",
    "report.html",
];

/// Why the report could not be written.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    /// The prepared data is inconsistent (ragged grid, NaN, unordered axis): a bug upstream.
    #[error("invalid report input: {0}")]
    InvalidInput(String),
    /// The plotting library failed.
    #[error("cannot draw the {plot}: {message}")]
    Draw {
        /// Which figure.
        plot: &'static str,
        /// What went wrong.
        message: String,
    },
    /// A file could not be written.
    #[error(transparent)]
    Output(#[from] OutputError),
    /// A table could not be serialised.
    #[error("cannot serialise {what}: {message}")]
    Serialise {
        /// Which table or document.
        what: String,
        /// What went wrong.
        message: String,
    },
}

/// The report files in memory: what [`write_report`] writes.
#[derive(Debug, Clone, PartialEq)]
pub struct RenderedReport {
    /// `report.html`.
    pub html: String,
    /// `report.md`.
    pub markdown: String,
    /// `allowed.svg`.
    pub allowed_svg: String,
    /// `allowed.png`.
    pub allowed_png: Vec<u8>,
    /// `bounds.svg`.
    pub bounds_svg: String,
    /// `bounds.png`.
    pub bounds_png: Vec<u8>,
}

/// Renders every report file in memory without touching the disk.
pub fn render_report(
    input: &ReportInput,
    map: &AllowedMap,
    curves: &BoundsCurves,
) -> Result<RenderedReport, ReportError> {
    input.validate()?;
    let allowed_svg = render_allowed_svg(map)?;
    let allowed_png = render_allowed_png(map)?;
    let bounds_svg = render_bounds_svg(curves)?;
    let bounds_png = render_bounds_png(curves)?;
    let doc = document::build(input, map, allowed_svg.clone(), bounds_svg.clone());
    Ok(RenderedReport {
        html: html::render(&doc),
        markdown: markdown::render(&doc),
        allowed_svg,
        allowed_png,
        bounds_svg,
        bounds_png,
    })
}

/// Writes `report.html`, `report.md`, `allowed.svg`, `allowed.png`, `bounds.svg` and
/// `bounds.png` into `dir` (created if missing), each atomically. Everything is rendered before
/// the first file is written, so a drawing failure leaves the folder untouched.
pub fn write_report(
    dir: &Path,
    input: &ReportInput,
    map: &AllowedMap,
    curves: &BoundsCurves,
) -> Result<(), ReportError> {
    let r = render_report(input, map, curves)?;
    let files: [(&str, &[u8]); 6] = [
        ("allowed.svg", r.allowed_svg.as_bytes()),
        ("allowed.png", &r.allowed_png),
        ("bounds.svg", r.bounds_svg.as_bytes()),
        ("bounds.png", &r.bounds_png),
        ("report.md", r.markdown.as_bytes()),
        ("report.html", r.html.as_bytes()),
    ];
    for (name, bytes) in files {
        write_atomic(&dir.join(name), bytes)?;
    }
    Ok(())
}

/// Drops every line carrying [`VOLATILE_MARKER`], for comparing two reports byte for byte.
pub fn strip_volatile(text: &str) -> String {
    text.split_inclusive('\n')
        .filter(|l| !l.contains(VOLATILE_MARKER))
        .collect()
}
