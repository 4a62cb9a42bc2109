//! Writing results: the human-readable report, its figures, and small table writers. Computes no
//! physics.
//!
//! The confrontation prepares plain data ([`ReportInput`], [`AllowedMap`], [`BoundsCurves`]);
//! this module turns it into `report.html` (self-contained: inline CSS and SVG, no scripts, no
//! network), `report.md` (the same content), and the figures `allowed.svg`/`.png`,
//! `bounds.svg`/`.png` and, when their data is given ([`DataFigures`]), `profile_tau0`,
//! `mass_bounds` and `wd_mass_radius`. Output bytes depend only on the input; the generation time sits on one
//! line marked with [`VOLATILE_MARKER`] so comparisons can drop it ([`strip_volatile`]).
//!
//! ```no_run
//! # fn demo(input: &dwarfbound::report::ReportInput,
//! #         map: &dwarfbound::report::AllowedMap,
//! #         curves: &dwarfbound::report::BoundsCurves) -> Result<(), dwarfbound::report::ReportError> {
//! dwarfbound::report::write_report(std::path::Path::new("reports/latest"), input, map, curves)?;
//! # Ok(()) }
//! ```

mod data_blocks;
mod document;
mod figure_data;
mod figures;
mod html;
mod input;
mod markdown;
pub mod tables;
pub mod text;

use std::path::Path;

use rayon::prelude::*;

pub use figure_data::{
    DataFigures, MassBounds, MassMark, MassObject, MassPanel, ModelCurve, ProfileTau0,
    WdMassRadius, WdPoint, WdPointFlag,
};
pub use figures::{
    outline_style_name, render_allowed_png, render_allowed_svg, render_bounds_png,
    render_bounds_svg, render_breakup_png, render_breakup_svg, render_mass_bounds_png,
    render_mass_bounds_svg, render_profile_png, render_profile_svg, render_wd_mass_radius_png,
    render_wd_mass_radius_svg, render_zoom_png, render_zoom_svg, zoom_of, BreakupFigure,
    BreakupLine, BreakupPanel, Zoom, ALLOWED_SIZE, BOUNDS_WIDTH, BREAKUP_SIZE, MASS_BOUNDS_WIDTH,
    PROFILE_SIZE, WD_MASS_RADIUS_SIZE, ZOOM_BELOW_FRACTION,
};
pub use input::{
    AllowedMap, AllowedRange, AxisSpec, BestFit, BoundSeries, BoundsCurves, CatalogueSummary,
    ClassContribution, ClassOutline, Consistency, DriverRow, GridDescription, IntervalRow, Level,
    ModelDescription, NearBest, ReductionError, ReportInput, Shift, SideBySide,
    StandardGravityStatus, TensionRow, TensionTable, TermTabulation, UpsilonInterval, Warning,
    WorstObject,
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
    /// The data-against-theory figures drawn for this run: (file stem, SVG, PNG), e.g.
    /// `wd_mass_radius`; only those whose data was given.
    pub data_figures: Vec<(&'static str, String, Vec<u8>)>,
}

/// Renders every report file in memory without touching the disk (no data-against-theory
/// figures; see [`render_report_with`]).
pub fn render_report(
    input: &ReportInput,
    map: &AllowedMap,
    curves: &BoundsCurves,
) -> Result<RenderedReport, ReportError> {
    render_report_with(input, map, curves, &DataFigures::default())
}

/// Renders every report file in memory, with the data-against-theory figures of `data`.
pub fn render_report_with(
    input: &ReportInput,
    map: &AllowedMap,
    curves: &BoundsCurves,
    data: &DataFigures,
) -> Result<RenderedReport, ReportError> {
    input.validate()?;
    data.validate()?;
    let zoom = zoom_of(map, data.profile_tau0.as_ref());
    // Rasterising and encoding the PNGs is most of the drawing time, and each figure is
    // independent of the others: they are drawn in parallel, each by the same code as before
    // (so the same bytes), while the SVGs are drawn here; results keep the fixed order below.
    type PngJob<'a> = Box<dyn Fn() -> Result<Vec<u8>, ReportError> + Send + Sync + 'a>;
    let mut png_jobs: Vec<PngJob<'_>> = vec![
        Box::new(|| render_allowed_png(map)),
        Box::new(|| render_bounds_png(curves)),
    ];
    if let Some(z) = &zoom {
        png_jobs.push(Box::new(move || render_zoom_png(z)));
    }
    if let Some(p) = &data.profile_tau0 {
        png_jobs.push(Box::new(move || render_profile_png(p)));
    }
    if let Some(m) = &data.mass_bounds {
        png_jobs.push(Box::new(move || render_mass_bounds_png(m)));
    }
    if let Some(w) = &data.wd_mass_radius {
        png_jobs.push(Box::new(move || render_wd_mass_radius_png(w)));
    }
    let (pngs, svgs) = rayon::join(
        || {
            png_jobs
                .par_iter()
                .map(|job| job())
                .collect::<Vec<Result<Vec<u8>, ReportError>>>()
        },
        || -> Result<_, ReportError> {
            let mut data_svgs = Vec::new();
            if let Some(z) = &zoom {
                data_svgs.push(("allowed_zoom", render_zoom_svg(z)?));
            }
            if let Some(p) = &data.profile_tau0 {
                data_svgs.push(("profile_tau0", render_profile_svg(p)?));
            }
            if let Some(m) = &data.mass_bounds {
                data_svgs.push(("mass_bounds", render_mass_bounds_svg(m)?));
            }
            if let Some(w) = &data.wd_mass_radius {
                data_svgs.push(("wd_mass_radius", render_wd_mass_radius_svg(w)?));
            }
            Ok((
                render_allowed_svg(map)?,
                render_bounds_svg(curves)?,
                data_svgs,
            ))
        },
    );
    // A drawing error (a bug: the inputs were validated above) is reported SVGs first, then
    // the PNGs in order.
    let (allowed_svg, bounds_svg, data_svgs, allowed_png, bounds_png, data_pngs) = {
        let mut pngs = pngs.into_iter();
        let mut next_png = || pngs.next().unwrap_or(Ok(Vec::new()));
        let (allowed_svg, bounds_svg, data_svgs) = svgs?;
        let (allowed_png, bounds_png) = (next_png()?, next_png()?);
        let data_pngs = data_svgs
            .iter()
            .map(|_| next_png())
            .collect::<Result<Vec<_>, _>>()?;
        (
            allowed_svg,
            bounds_svg,
            data_svgs,
            allowed_png,
            bounds_png,
            data_pngs,
        )
    };
    let mut zoom_section = Vec::new();
    if let Some(z) = &zoom {
        zoom_section = data_blocks::zoom_blocks(z, data_svgs[0].1.clone());
    }
    let data_figures: Vec<(&'static str, String, Vec<u8>)> = data_svgs
        .into_iter()
        .zip(data_pngs)
        .map(|((stem, svg), png)| (stem, svg, png))
        .collect();
    let svg_of = |stem: &str| {
        data_figures
            .iter()
            .find(|f| f.0 == stem)
            .map(|f| f.1.clone())
    };
    let extra = data_blocks::Rendered {
        profile_svg: svg_of("profile_tau0"),
        wd_svg: svg_of("wd_mass_radius"),
        mass_svg: svg_of("mass_bounds"),
    };
    let doc = document::build(
        input,
        map,
        allowed_svg.clone(),
        bounds_svg.clone(),
        zoom_section,
        data_blocks::blocks(data, extra),
    );
    Ok(RenderedReport {
        html: html::render(&doc),
        markdown: markdown::render(&doc),
        allowed_svg,
        allowed_png,
        bounds_svg,
        bounds_png,
        data_figures,
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
    write_report_with(dir, input, map, curves, &DataFigures::default())
}

/// The figures a report draws only when it has their data (file stems).
const OPTIONAL_FIGURES: [&str; 4] = [
    "allowed_zoom",
    "profile_tau0",
    "mass_bounds",
    "wd_mass_radius",
];

/// As [`write_report`], plus the data-against-theory figures of `data` (`<stem>.svg` and
/// `<stem>.png` each, before the two pages that show them).
pub fn write_report_with(
    dir: &Path,
    input: &ReportInput,
    map: &AllowedMap,
    curves: &BoundsCurves,
    data: &DataFigures,
) -> Result<(), ReportError> {
    let r = render_report_with(input, map, curves, data)?;
    for (stem, svg, png) in &r.data_figures {
        write_atomic(&dir.join(format!("{stem}.svg")), svg.as_bytes())?;
        write_atomic(&dir.join(format!("{stem}.png")), png)?;
    }
    // A figure this report does not draw must not survive from an earlier report in the same
    // folder: a reader would take it for this run's.
    for stem in OPTIONAL_FIGURES {
        if r.data_figures.iter().any(|(s, _, _)| *s == stem) {
            continue;
        }
        for ext in ["svg", "png"] {
            let path = dir.join(format!("{stem}.{ext}"));
            match std::fs::remove_file(&path) {
                Ok(()) => {}
                Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
                Err(e) => return Err(OutputError::new(&path, e).into()),
            }
        }
    }
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
