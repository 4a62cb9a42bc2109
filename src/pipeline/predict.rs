//! `predict`: the theory alone, and what it prints or writes. At one (ϒ, τ) every bound and
//! the Lane–Emden constants, as readable text or as the `--json` document whose keys the README
//! documents (the contract lives here, in [`point_json`]); over a grid, `bounds.csv` and the
//! bounds figure, with a short account of what was written. The numbers come from
//! [`crate::theory::point`] and [`crate::theory::grid`], the figure from [`crate::report`].
//!
//! ```
//! use dwarfbound::pipeline::predict::{point_json, predict_point};
//! use dwarfbound::theory::point::TheorySettings;
//! let settings = TheorySettings::default();
//! let p = predict_point(&settings, 0.0, 0.0).unwrap();
//! let doc = point_json(&p, &settings);
//! // Standard gravity: the anchored MMHB is the anchor itself.
//! assert!(doc["mmhb_msun"].as_f64().unwrap() > 0.07);
//! assert_eq!(doc["tau"], 0.0);
//! ```

use std::path::Path;

use serde_json::{json, Map, Value};

use super::error::PipelineError;
use crate::output::write_atomic;
use crate::report::text::fmt_sig;
use crate::report::{
    render_bounds_png, render_bounds_svg, render_breakup_png, render_breakup_svg, BoundSeries,
    BoundsCurves, BreakupFigure, BreakupLine, BreakupPanel,
};
use crate::theory::grid::{compute, grid_value, GridOptions, TheoryGrid};
use crate::theory::mmhb::MmhbMode;
use crate::theory::point::{
    post_newtonian_mass_msun, Failure, Outcome, PointBounds, PointEvaluator, TheorySettings,
    CHANDRASEKHAR_REPORT_MU_E,
};
use crate::theory::white_dwarf::WdMassRadius;
use crate::theory::Axis;

/// Masses (M☉, μ_e = 2) at which `predict` prints white-dwarf radii.
const WD_MASSES_MSUN: [f64; 7] = [0.2, 0.4, 0.6, 0.8, 1.0, 1.2, 1.4];

/// Masses (M☉) of the minimum-period curve of the hydrogen-rich (brown-dwarf and star) structure.
const BREAKUP_CURVE_LOW_MSUN: [f64; 12] = [
    0.01, 0.02, 0.03, 0.04, 0.05, 0.06, 0.07, 0.075, 0.08, 0.09, 0.1, 0.15,
];

/// Masses (M☉) of the minimum-period curve of the white-dwarf structure (μ_e = 2).
const BREAKUP_CURVE_WD_MSUN: [f64; 14] = [
    0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0, 1.1, 1.2, 1.3, 1.35, 1.4,
];

/// The minimum (break-up) period against mass for each class's cold structure at one point:
/// the hydrogen-rich floor of brown dwarfs and stars (μ_e = 2/(1 + X) of the break-up reference,
/// periods in minutes and hours) and white dwarfs (μ_e = 2, periods in seconds). Roche model; a
/// mass without a model (above the maximum mass) is null. Keys documented in the README.
pub fn breakup_curves_json(table: &WdMassRadius, s: &TheorySettings) -> Value {
    use crate::theory::rotation::{breakup_curve, BreakupModel};
    let curve = |mu_e: f64, masses: &[f64]| {
        let pts = breakup_curve(table, mu_e, masses, BreakupModel::Roche);
        let radius: Vec<Value> = pts
            .iter()
            .map(|p| num(p.as_ref().ok().map(|p| p.radius_rsun)))
            .collect();
        let period: Vec<Option<f64>> = pts
            .iter()
            .map(|p| p.as_ref().ok().map(|p| p.period_s))
            .collect();
        (radius, period)
    };
    let mu_low = s.breakup.mu_e();
    let (r_low, p_low) = curve(mu_low, &BREAKUP_CURVE_LOW_MSUN);
    let (r_wd, p_wd) = curve(CHANDRASEKHAR_REPORT_MU_E, &BREAKUP_CURVE_WD_MSUN);
    let scaled =
        |p: &[Option<f64>], k: f64| p.iter().map(|x| num(x.map(|x| x / k))).collect::<Vec<_>>();
    json!({
        "model": "roche",
        "brown_dwarf": {
            "mu_e": mu_low,
            "mass_msun": BREAKUP_CURVE_LOW_MSUN,
            "radius_rsun": r_low,
            "breakup_period_min": scaled(&p_low, 60.0),
            "breakup_period_h": scaled(&p_low, 3600.0),
        },
        "white_dwarf": {
            "mu_e": CHANDRASEKHAR_REPORT_MU_E,
            "mass_msun": BREAKUP_CURVE_WD_MSUN,
            "radius_rsun": r_wd,
            "breakup_period_s": scaled(&p_wd, 1.0),
        },
    })
}

/// Bounds-figure rows: at most this many τ values.
const FIGURE_TAU_ROWS: usize = 5;

/// Every bound at one (ϒ, τ), white-dwarf table included.
pub fn predict_point(
    settings: &TheorySettings,
    upsilon: f64,
    tau: f64,
) -> Result<PointBounds, PipelineError> {
    let ev = PointEvaluator::new(settings).map_err(|e| PipelineError::Settings(e.to_string()))?;
    Ok(ev.evaluate(upsilon, tau, true))
}

/// What a grid prediction wrote.
#[derive(Debug, Clone, PartialEq)]
pub struct GridPrediction {
    /// Number of grid points.
    pub points: usize,
    /// Number of ϒ values.
    pub n_upsilon: usize,
    /// Number of τ values.
    pub n_tau: usize,
    /// Points without a full model (the reason is in `bounds.csv`).
    pub points_without_model: usize,
    /// The files written, in order.
    pub files: Vec<String>,
    /// What was not drawn, and why.
    pub notes: Vec<String>,
}

/// Computes the grid and writes `bounds.csv` and, for at least two ϒ values, the bounds figure
/// (`bounds.svg`, `bounds.png`) into `dir`.
pub fn predict_grid(
    upsilon: Axis,
    tau: Axis,
    settings: &TheorySettings,
    dir: &Path,
) -> Result<GridPrediction, PipelineError> {
    let grid = compute(upsilon, tau, settings, &GridOptions::default())
        .map_err(|e| PipelineError::Settings(e.to_string()))?;
    let csv =
        super::bounds_csv::bounds_csv(&grid).map_err(|e| PipelineError::Internal(e.to_string()))?;
    let csv_path = dir.join("bounds.csv");
    write_atomic(&csv_path, csv.as_bytes())?;
    let mut files = vec![csv_path.display().to_string()];
    let mut notes = Vec::new();
    if upsilon.count >= 2 {
        let curves = figure_curves(&grid);
        let svg = render_bounds_svg(&curves).map_err(|e| PipelineError::Internal(e.to_string()))?;
        let png = render_bounds_png(&curves).map_err(|e| PipelineError::Internal(e.to_string()))?;
        for (name, bytes) in [("bounds.svg", svg.into_bytes()), ("bounds.png", png)] {
            let path = dir.join(name);
            write_atomic(&path, &bytes)?;
            files.push(path.display().to_string());
        }
    } else {
        notes.push("the bounds figure needs at least two ϒ values; not drawn".to_string());
    }
    let fig = breakup_figure(upsilon, tau, settings)?;
    let svg = render_breakup_svg(&fig).map_err(|e| PipelineError::Internal(e.to_string()))?;
    let png = render_breakup_png(&fig).map_err(|e| PipelineError::Internal(e.to_string()))?;
    for (name, bytes) in [("breakup.svg", svg.into_bytes()), ("breakup.png", png)] {
        let path = dir.join(name);
        write_atomic(&path, &bytes)?;
        files.push(path.display().to_string());
    }
    Ok(GridPrediction {
        points: grid.points.len(),
        n_upsilon: upsilon.count,
        n_tau: tau.count,
        points_without_model: grid.points_without_model(),
        files,
        notes,
    })
}

/// The break-up figure of a prediction: the minimum period against mass for each class's cold
/// structure, at the τ of the grid nearest 0 and at up to three ϒ values (the ends of the axis
/// and the value nearest 0), so that it shows how ϒ moves the floor.
fn breakup_figure(
    upsilon: Axis,
    tau: Axis,
    settings: &TheorySettings,
) -> Result<BreakupFigure, PipelineError> {
    let nearest0 = |a: &Axis| {
        (0..a.count)
            .map(|i| grid_value(a, i))
            .fold(f64::NAN, |best, x| {
                if best.is_nan() || x.abs() < best.abs() {
                    x
                } else {
                    best
                }
            })
    };
    let t0 = nearest0(&tau);
    let mut ups: Vec<f64> = vec![grid_value(&upsilon, 0), nearest0(&upsilon)];
    ups.push(grid_value(&upsilon, upsilon.count.saturating_sub(1)));
    ups.sort_by(f64::total_cmp);
    ups.dedup();
    let ev = PointEvaluator::new(settings).map_err(|e| PipelineError::Settings(e.to_string()))?;
    let mut low = Vec::new();
    let mut wd = Vec::new();
    for u in ups {
        let p = ev.evaluate(u, t0, true);
        let label = format!("ϒ = {}, τ = {}", fmt_sig(u, 4), fmt_sig(t0, 4));
        let Some(table) = p.white_dwarf.as_ref().and_then(|w| w.ok()) else {
            continue;
        };
        let line = |mu_e: f64, masses: &[f64], unit_s: f64| BreakupLine {
            label: label.clone(),
            mass_msun: masses.to_vec(),
            period: crate::theory::rotation::breakup_curve(
                table,
                mu_e,
                masses,
                crate::theory::rotation::BreakupModel::Roche,
            )
            .iter()
            .map(|r| r.as_ref().ok().map(|p| p.period_s / unit_s))
            .collect(),
        };
        low.push(line(settings.breakup.mu_e(), &BREAKUP_CURVE_LOW_MSUN, 60.0));
        wd.push(line(CHANDRASEKHAR_REPORT_MU_E, &BREAKUP_CURVE_WD_MSUN, 1.0));
    }
    Ok(BreakupFigure {
        title: "Minimum (break-up) spin period against mass, cold structures, Roche model".into(),
        panels: vec![
            BreakupPanel {
                label: format!(
                    "brown dwarfs and stars (μe = {})",
                    fmt_sig(settings.breakup.mu_e(), 3)
                ),
                unit: "min".into(),
                lines: low,
            },
            BreakupPanel {
                label: "white dwarfs (μe = 2)".into(),
                unit: "s".into(),
                lines: wd,
            },
        ],
    })
}

/// The `--json` document of a grid prediction.
pub fn grid_json(g: &GridPrediction, s: &TheorySettings) -> Value {
    json!({
        "points": g.points,
        "points_without_model": g.points_without_model,
        "anisotropy": s.anisotropy.name(),
        "mmhb_model": s.mmhb_model.name(),
        "mmhb_mode": s.mmhb_mode.name(),
        "files": g.files,
        "notes": g.notes,
    })
}

/// Readable text of a grid prediction.
pub fn grid_text(g: &GridPrediction, s: &TheorySettings) -> String {
    let mut t = format!(
        "{} points ({} × {}), {} without a full model (reason in bounds.csv); anisotropy {}, MMHB {} {}\n",
        g.points,
        g.n_upsilon,
        g.n_tau,
        g.points_without_model,
        s.anisotropy.name(),
        s.mmhb_model.name(),
        s.mmhb_mode.name()
    );
    for f in &g.files {
        t.push_str(&format!("wrote {f}\n"));
    }
    for n in &g.notes {
        t.push_str(&format!("note: {n}\n"));
    }
    t
}

/// A JSON document as printed: pretty, with a final newline.
pub fn json_text(doc: &Value) -> Result<String, PipelineError> {
    serde_json::to_string_pretty(doc)
        .map(|t| t + "\n")
        .map_err(|e| PipelineError::Internal(format!("cannot write JSON: {e}")))
}

/// MMHB, Chandrasekhar mass and break-up period against ϒ for a few τ.
fn figure_curves(grid: &TheoryGrid) -> BoundsCurves {
    let rows = grid.representative_tau_rows(FIGURE_TAU_ROWS);
    let curves = grid.curves(&rows);
    let mut series = Vec::new();
    let mmhb_label = format!("MMHB, {}", grid.settings.mmhb_mode.name());
    for c in &curves {
        series.push(BoundSeries {
            bound_label: mmhb_label.clone(),
            unit: "M☉".into(),
            tau: c.tau,
            values: c.mmhb_msun.clone(),
        });
    }
    for c in &curves {
        series.push(BoundSeries {
            bound_label: "Chandrasekhar mass, μe = 2".into(),
            unit: "M☉".into(),
            tau: c.tau,
            values: c.chandrasekhar_msun.clone(),
        });
    }
    for c in &curves {
        series.push(BoundSeries {
            bound_label: "break-up period".into(),
            unit: "min".into(),
            tau: c.tau,
            values: c.breakup_period_min.clone(),
        });
    }
    BoundsCurves {
        upsilon: (0..grid.upsilon.count)
            .map(|i| grid_value(&grid.upsilon, i))
            .collect(),
        series,
    }
}

fn num(x: Option<f64>) -> Value {
    match x {
        Some(v) if v.is_finite() => json!(v),
        _ => Value::Null,
    }
}

fn wd_radii(table: &WdMassRadius) -> Vec<(f64, Result<f64, String>)> {
    WD_MASSES_MSUN
        .iter()
        .map(|&m| {
            (
                m,
                table
                    .radius_rsun(m, CHANDRASEKHAR_REPORT_MU_E)
                    .map_err(|e| e.to_string()),
            )
        })
        .collect()
}

/// The `--json` document of one point (keys documented in the README).
pub fn point_json(p: &PointBounds, s: &TheorySettings) -> Value {
    let mut errors = Map::new();
    let mut note = |key: &str, f: Option<&Failure>| {
        if let Some(f) = f {
            errors.insert(key.into(), json!({"code": f.code, "reason": f.reason}));
        }
    };
    note("lane_emden.n1.5", p.lane_emden_n15.failure());
    note("lane_emden.n3", p.lane_emden_n3.failure());
    note("mmhb", p.mmhb.failure());
    note("chandrasekhar", p.chandrasekhar.failure());
    note("sc_fraction", p.sc.failure());
    note("breakup", p.breakup.failure());
    let wd_table = p.white_dwarf.as_ref().and_then(|w| w.ok());
    if let Some(Outcome::Failed(f)) = &p.white_dwarf {
        note("white_dwarf", Some(f));
    }
    let m = p.mmhb.ok();
    let c = p.chandrasekhar.ok();
    let l15 = p.lane_emden_n15.ok();
    let l3 = p.lane_emden_n3.ok();
    let b = p.breakup.ok();
    let sc = p.sc.ok();
    let white_dwarf = wd_table.map(|t| {
        let mut wd = json!({
            "mu_e": CHANDRASEKHAR_REPORT_MU_E,
            "wd_radius_floor_fraction": s.wd_radius_floor_fraction,
            "post_newtonian_mass_msun": num(post_newtonian_mass_msun(t, CHANDRASEKHAR_REPORT_MU_E)),
            "radii": wd_radii(t).into_iter().map(|(mass, r)| match r {
                Ok(r) => json!({"mass_msun": mass, "radius_rsun": r, "radius_km": r * crate::constants::R_SUN_NOMINAL_M / 1e3}),
                Err(e) => json!({"mass_msun": mass, "radius_rsun": null, "radius_km": null, "reason": e}),
            }).collect::<Vec<_>>(),
        });
        if let Some(o) = wd.as_object_mut() {
            super::names::json_with_deprecated("predict JSON", o);
        }
        wd
    });
    let mut doc = json!({
        "version": env!("CARGO_PKG_VERSION"),
        "upsilon": p.upsilon,
        "tau": p.tau,
        "anisotropy": s.anisotropy.name(),
        "mmhb_msun": num(m.map(|m| m.value_msun)),
        "mmhb_raw_msun": num(m.map(|m| m.raw_msun)),
        "mmhb_floor_msun": num(m.map(|m| m.floor_msun)),
        "mmhb_phi": num(m.map(|m| m.phi)),
        "mmhb_model": s.mmhb_model.name(),
        "mmhb_mode": s.mmhb_mode.name(),
        "mmhb_anchor_msun": num(match s.mmhb_mode {
            MmhbMode::Anchored { anchor_msun, .. } => Some(anchor_msun),
            MmhbMode::Raw => None,
        }),
        "chandrasekhar_msun": num(c.map(|c| c.value_msun)),
        "chandrasekhar_newtonian_mu_e2_msun": num(c.map(|c| c.newtonian_mu_e2_msun)),
        "chandrasekhar_omega3_ratio": num(c.map(|c| c.omega3_ratio)),
        "chandrasekhar_floor_msun": num(c.map(|c| c.floor_msun)),
        "chandrasekhar_mode": s.chandrasekhar_mode.name(),
        "chandrasekhar_mu_e": CHANDRASEKHAR_REPORT_MU_E,
        "lane_emden": {
            "n1.5": {
                "xi1": num(l15.map(|l| l.xi1)),
                "omega": num(l15.map(|l| l.omega)),
                "density_contrast": num(l15.map(|l| l.density_contrast())),
                "j_k": num(l15.and_then(|l| l.j_k)),
                "k": s.mmhb_config().model_a.k_index(),
            },
            "n3": {
                "xi1": num(l3.map(|l| l.xi1)),
                "omega": num(l3.map(|l| l.omega)),
                "density_contrast": num(l3.map(|l| l.density_contrast())),
            },
        },
        "sc_fraction": num(sc.map(|v| v.q_sc)),
        "sc_ratio": num(sc.map(|v| v.ratio)),
        "sc_lambda": s.sc.lambda(),
        "breakup_period_h": num(b.map(|b| b.period_h)),
        "breakup_radius_rjup": num(b.map(|b| b.radius_rjup())),
        "breakup_reference": s.breakup.describe(),
        "breakup_curves": wd_table.map(|t| breakup_curves_json(t, s)).unwrap_or(Value::Null),
        "white_dwarf": white_dwarf.unwrap_or(Value::Null),
        "warnings": p.warnings.iter().map(|w| json!({"code": w.code(), "message": w.message()})).collect::<Vec<_>>(),
        "errors": Value::Object(errors),
    });
    if let Some(o) = doc.as_object_mut() {
        super::names::json_with_deprecated("predict JSON", o);
    }
    doc
}

/// Readable text for one point.
pub fn point_text(p: &PointBounds, s: &TheorySettings) -> String {
    let mut out = String::new();
    let mut w = |line: String| {
        out.push_str(&line);
        out.push('\n');
    };
    let g = |x: f64| fmt_sig(x, 7);
    let why = |f: Option<&Failure>| {
        f.map(|f| format!("no value: {}", f.reason))
            .unwrap_or_default()
    };
    w(format!(
        "dwarfbound predict: ϒ = {}, τ = {} (anisotropy: {})",
        p.upsilon,
        p.tau,
        s.anisotropy.name()
    ));
    w(String::new());
    w(format!(
        "Minimum hydrogen-burning mass (= brown-dwarf ceiling): model {}, mode {}",
        s.mmhb_model.name(),
        s.mmhb_mode.name()
    ));
    match p.mmhb.ok() {
        Some(m) => {
            w(format!(
                "  MMHB used against data   {} M☉   (1σ theory floor {} M☉)",
                g(m.value_msun),
                g(m.floor_msun)
            ));
            if let Some(a) = m.anchor_msun {
                w(format!(
                    "  anchored: {} M☉ × Φ, Φ = MMHB(ϒ,τ)/MMHB(0,0) = {}",
                    g(a),
                    fmt_sig(m.phi, 9)
                ));
            } else {
                w(format!("  Φ = MMHB(ϒ,τ)/MMHB(0,0) = {}", fmt_sig(m.phi, 9)));
            }
            w(format!(
                "  raw analytic value       {} M☉",
                fmt_sig(m.raw_msun, 9)
            ));
        }
        None => w(format!("  {}", why(p.mmhb.failure()))),
    }
    w(String::new());
    w(format!(
        "Chandrasekhar mass (μe = 2; scales as (2/μe)²), mode {}",
        s.chandrasekhar_mode.name()
    ));
    match p.chandrasekhar.ok() {
        Some(c) => {
            w(format!(
                "  M_Ch used against data   {} M☉   (1σ theory floor {} M☉)",
                g(c.value_msun),
                g(c.floor_msun)
            ));
            w(format!(
                "  Newtonian pure-EOS value {} M☉, ω₃(ϒ,τ)/ω₃(0,0) = {}",
                g(c.newtonian_mu_e2_msun),
                fmt_sig(c.omega3_ratio, 9)
            ));
        }
        None => w(format!("  {}", why(p.chandrasekhar.failure()))),
    }
    w(String::new());
    w("Lane–Emden constants (true-G units)".into());
    match p.lane_emden_n15.ok() {
        Some(l) => w(format!(
            "  n = 1.5   ξ1 = {}   ω = {}   ρc/ρ̄ = {}   J_{} = {}",
            fmt_sig(l.xi1, 11),
            fmt_sig(l.omega, 11),
            fmt_sig(l.density_contrast(), 9),
            s.mmhb_config().model_a.k_index(),
            l.j_k.map(|j| fmt_sig(j, 10)).unwrap_or_default()
        )),
        None => w(format!("  n = 1.5   {}", why(p.lane_emden_n15.failure()))),
    }
    match p.lane_emden_n3.ok() {
        Some(l) => w(format!(
            "  n = 3     ξ1 = {}   ω = {}   ρc/ρ̄ = {}",
            fmt_sig(l.xi1, 11),
            fmt_sig(l.omega, 11),
            fmt_sig(l.density_contrast(), 9)
        )),
        None => w(format!("  n = 3     {}", why(p.lane_emden_n3.failure()))),
    }
    w(String::new());
    w(format!(
        "Schönberg–Chandrasekhar fraction ({}, λ = μ_env/μ_core = {})",
        s.sc_variant.name(),
        g(s.sc.lambda())
    ));
    match p.sc.ok() {
        Some(v) => w(format!(
            "  q_SC = {}   (ratio to standard gravity {})",
            g(v.q_sc),
            fmt_sig(v.ratio, 9)
        )),
        None => w(format!("  {}", why(p.sc.failure()))),
    }
    w(String::new());
    w("Break-up period".into());
    w(format!("  reference: {}", s.breakup.describe()));
    match p.breakup.ok() {
        Some(b) => w(format!(
            "  P_min = {} min ({} h); radius {} R_J",
            fmt_sig(b.period_min(), 6),
            fmt_sig(b.period_h, 6),
            fmt_sig(b.radius_rjup(), 6)
        )),
        None => w(format!("  {}", why(p.breakup.failure()))),
    }
    w(String::new());
    w("White dwarfs: zero-temperature Chandrasekhar EOS, μe = 2, Newtonian order".into());
    match &p.white_dwarf {
        Some(Outcome::Ok(t)) => {
            w("  M [M☉]    R [km]      R [R☉]".into());
            for (m, r) in wd_radii(t) {
                match r {
                    Ok(r) => w(format!(
                        "  {:<8}  {:<10}  {}",
                        m,
                        fmt_sig(r * crate::constants::R_SUN_NOMINAL_M / 1e3, 6),
                        fmt_sig(r, 6)
                    )),
                    Err(e) => w(format!("  {m:<8}  no model: {e}")),
                }
            }
            if let Some(m) = post_newtonian_mass_msun(t, CHANDRASEKHAR_REPORT_MU_E) {
                w(format!(
                    "  GM/(Rc²) exceeds 5e-4 above {} M☉: there post-Newtonian physics matters",
                    fmt_sig(m, 4)
                ));
            }
            w(format!(
                "  radius theory floor {} % (1σ)",
                g(100.0 * s.wd_radius_floor_fraction)
            ));
        }
        Some(Outcome::Failed(f)) => w(format!("  no table: {}", f.reason)),
        None => {}
    }
    if !p.warnings.is_empty() {
        w(String::new());
        w("Warnings".into());
        for x in &p.warnings {
            w(format!("  - {}", x.message()));
        }
    }
    out
}
