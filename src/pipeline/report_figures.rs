//! The data of the figures that put the data beside the theory: each class's masses against
//! its bound, the white dwarfs with their model mass–radius curves, and the Δχ² profile along
//! τ = 0. The model curves are computed
//! here (the report draws, it does not compute): finite-temperature radii at standard gravity
//! from the committed table, and the same scaled to the best fit by the zero-temperature ratio
//! R_cold(M; ϒ, τ)/R_cold(M; 0, 0), as the radius test itself anchors them.
//!
//! ```ignore
//! let data = data_figures(&ctx);
//! report::write_report_with(out_dir, &input, &map, &curves, &data)?;
//! ```

use super::outputs::OutputContext;
use crate::confront::engine::{LeftOut, Term};
use crate::confront::regions::Level;
use crate::confront::wd_radius::WdRadiusModel;
use crate::report::{
    DataFigures, MassBounds, MassMark, MassObject, MassPanel, ModelCurve, ProfileTau0,
    WdMassRadius, WdPoint, WdPointFlag,
};
use crate::theory::hot_wd::{table::HotWdTable, tov, Core, Envelope};
use crate::theory::outcome::Outcome;
use crate::theory::white_dwarf::WdMassRadius as ColdTable;

/// Effective temperatures of the standard-gravity curves, K: from cool to hot, a spread over
/// which white-dwarf radii change by tens of per cent (choice).
const CURVE_TEFF_K: [f64; 4] = [5_000.0, 10_000.0, 20_000.0, 40_000.0];
/// Below this mass the curves use helium cores, above it carbon–oxygen cores (the default by
/// mass of the radius test, common practice, no source).
const HELIUM_BELOW_MSUN: f64 = 0.45;
/// Mass step of the model curves, M☉.
const CURVE_STEP_MSUN: f64 = 0.01;

/// Most objects drawn in one panel of the masses-against-bounds figure. A panel of a million
/// points (each with its hover title) made the report hundreds of megabytes and most of a
/// large run's memory; above this, every object in tension is drawn and the others are thinned
/// evenly (every k-th in catalogue order, deterministic), and the panel's title says so.
const MAX_PANEL_OBJECTS: usize = 5_000;

/// Which of a panel's objects are drawn: at most [`MAX_PANEL_OBJECTS`], those above the tension
/// threshold (at standard gravity or at the best fit) all, the others every `step`-th. Decided
/// from the counts alone, so that a million-object panel never builds the objects it drops
/// (their ids were the largest allocation of a 10⁶-object run).
struct Thinning {
    n: usize,
    step: usize,
    seen_others: usize,
}

impl Thinning {
    /// From the panel's object count and how many of them are in tension.
    fn new(n: usize, n_tension: usize) -> Self {
        let step = if n <= MAX_PANEL_OBJECTS {
            1
        } else {
            let room = MAX_PANEL_OBJECTS.saturating_sub(n_tension).max(1);
            (n - n_tension).div_ceil(room).max(1)
        };
        Self {
            n,
            step,
            seen_others: 0,
        }
    }

    /// Whether the next object (in order) is drawn.
    fn keep(&mut self, in_tension: bool) -> bool {
        if in_tension || self.n <= MAX_PANEL_OBJECTS {
            return true;
        }
        self.seen_others += 1;
        (self.seen_others - 1).is_multiple_of(self.step)
    }

    /// The note for the title, or `None` when nothing was left out.
    fn note(&self, drawn: usize) -> Option<String> {
        (self.n > MAX_PANEL_OBJECTS).then(|| {
            format!(
                " — {drawn} of {} objects drawn (all in tension, every {}th of the others; objects.csv lists all)",
                self.n, self.step
            )
        })
    }
}

/// Masses from `lo` to `hi` in steps of [`CURVE_STEP_MSUN`] (both ends included).
fn masses(lo: f64, hi: f64) -> Vec<f64> {
    let n = ((hi - lo) / CURVE_STEP_MSUN).round().max(0.0) as usize;
    (0..=n)
        .map(|i| lo + (hi - lo) * i as f64 / n.max(1) as f64)
        .collect()
}

/// Splits `(mass, radius?)` into runs of consecutive modelled points.
fn runs(values: impl Iterator<Item = (f64, Option<f64>)>) -> Vec<Vec<(f64, f64)>> {
    let mut out = vec![Vec::new()];
    for (m, r) in values {
        match r.filter(|r| r.is_finite() && *r > 0.0) {
            Some(r) => out
                .last_mut()
                .map_or((), |run: &mut Vec<_>| run.push((m, r))),
            None if out.last().is_some_and(|r| !r.is_empty()) => out.push(Vec::new()),
            None => {}
        }
    }
    out.retain(|r| r.len() >= 2);
    out
}

/// Teff as a legend label, e.g. "10 000 K".
fn teff_label(teff_k: f64) -> String {
    let s = format!("{:.0}", teff_k);
    let mut grouped = String::new();
    for (i, c) in s.chars().enumerate() {
        if i > 0 && (s.len() - i) % 3 == 0 {
            grouped.push('\u{202f}');
        }
        grouped.push(c);
    }
    format!("Teff = {grouped} K")
}

/// The model curves: standard gravity, and scaled to the best fit when the best point has a
/// zero-temperature table.
fn model_curves(ctx: &OutputContext<'_>) -> (Vec<ModelCurve>, usize, String) {
    let std_cold = ctx.surface.standard_cold();
    let best_cold: Option<ColdTable> = match ctx.grid.wd_table(ctx.best_index) {
        Some(Outcome::Ok(t)) => Some(t),
        _ => None,
    };
    let ratio = |m: f64| -> Option<f64> {
        let a = best_cold.as_ref()?.radius_rsun(m, 2.0).ok()?;
        let b = std_cold?.radius_rsun(m, 2.0).ok()?;
        (b > 0.0).then_some(a / b)
    };
    let mut curves = Vec::new();
    let mut push = |label: String, k: usize, standard: Vec<Vec<(f64, f64)>>| {
        let scaled: Vec<Vec<(f64, f64)>> = standard
            .iter()
            .flat_map(|run| runs(run.iter().map(|&(m, r)| (m, ratio(m).map(|q| q * r)))))
            .collect();
        curves.push(ModelCurve {
            label: label.clone(),
            runs: standard,
            best_fit: false,
            colour_index: k,
        });
        if !scaled.is_empty() {
            curves.push(ModelCurve {
                label,
                runs: scaled,
                best_fit: true,
                colour_index: k,
            });
        }
    };
    let hot = match ctx.eopts.radius.model {
        WdRadiusModel::Hot => HotWdTable::standard().ok(),
        WdRadiusModel::Cold => None,
    };
    if let Some(table) = hot {
        let range = |core| table.mass_range_msun(core).unwrap_or((1.0, 0.0));
        let (he_lo, he_hi) = range(Core::Helium);
        let (co_lo, co_hi) = range(Core::CarbonOxygen);
        for (k, &teff) in CURVE_TEFF_K.iter().enumerate() {
            // The same standard-gravity radius as the radius test: the table times the
            // general-relativistic correction of the core (none above its TOV maximum mass).
            let at = |core, m: f64| {
                let r = table.radius_rsun(m, teff, core, Envelope::Thick).ok()?;
                let gr = tov::tov_correction(core).ok()?.ratio(m)?;
                Some(r.radius_rsun * gr)
            };
            let mut all = runs(
                masses(he_lo, he_hi.min(HELIUM_BELOW_MSUN))
                    .into_iter()
                    .map(|m| (m, at(Core::Helium, m))),
            );
            all.extend(runs(
                masses(co_lo.max(HELIUM_BELOW_MSUN), co_hi)
                    .into_iter()
                    .map(|m| (m, at(Core::CarbonOxygen, m))),
            ));
            push(teff_label(teff), k, all);
        }
        let note = "thick H layer; He core < 0.45 M☉, C/O above".to_string();
        (curves, CURVE_TEFF_K.len(), note)
    } else {
        let cold = runs(
            masses(0.15, 1.35)
                .into_iter()
                .map(|m| (m, std_cold.and_then(|t| t.radius_rsun(m, 2.0).ok()))),
        );
        push("zero temperature".into(), 0, cold);
        (curves, 1, "zero temperature, μe = 2".to_string())
    }
}

/// The white-dwarf diagram, or `None` when no white dwarf has a radius.
fn wd_mass_radius(ctx: &OutputContext<'_>) -> Option<WdMassRadius> {
    let mut points = Vec::new();
    for (k, u) in ctx.conf.uses.iter().enumerate() {
        let o = ctx.vetted.objects.get(k)?;
        let Some(radius_rsun) = o.radius_rsun().get().filter(|r| *r > 0.0) else {
            continue;
        };
        if o.class.label() != "white_dwarf" || o.mass_msun <= 0.0 {
            continue;
        }
        let has = |f: &str| u.flags.iter().any(|g| g == f);
        let flag = if u.radius_term {
            WdPointFlag::InTest
        } else if has("model_mass") {
            WdPointFlag::ModelMass
        } else if has("no_teff") {
            WdPointFlag::NoTeff
        } else if has("elm") {
            WdPointFlag::Elm
        } else {
            WdPointFlag::OutsideModel
        };
        points.push(WdPoint {
            id: o.id.to_string(),
            mass_msun: o.mass_msun,
            mass_err_msun: match (o.mass_err_lo_msun.get(), o.mass_err_hi_msun.get()) {
                (Some(a), Some(b)) => Some((a, b)),
                _ => None,
            },
            radius_rsun,
            radius_err_rsun: o.radius_err_rsun().get(),
            teff_k: o.teff_k().get(),
            sigma: ctx
                .verdicts
                .radius_sigma_standard(k)
                .filter(|s| s.is_finite()),
            flag,
        });
    }
    if points.is_empty() {
        return None;
    }
    let (curves, n_colours, model_note) = model_curves(ctx);
    Some(WdMassRadius {
        points,
        curves,
        n_colours,
        best_fit: (ctx.regions.best.upsilon, ctx.regions.best.tau),
        tension_sigma: ctx.settings.statistics.tension_sigma,
        model_note,
    })
}

/// The Δχ² profile along τ = 0, or `None` when the slice was not computed.
fn profile_tau0(ctx: &OutputContext<'_>) -> Option<ProfileTau0> {
    let sl = &ctx.slice?.slice;
    let delta: Vec<f64> = sl.chi2_fine.iter().map(|c| c - sl.chi2_min).collect();
    if delta.iter().any(|d| !d.is_finite()) {
        return None;
    }
    let label = |l: Level| format!("{:.2} %", 100.0 * l.probability());
    Some(ProfileTau0 {
        upsilon: sl.upsilon_fine.clone(),
        delta_chi2: delta,
        thresholds: Level::ALL.iter().map(|&l| (label(l), l.dchi2(1))).collect(),
        intervals: Level::ALL
            .iter()
            .zip(&sl.intervals)
            .map(|(&l, i)| (label(l), i.lower, i.upper))
            .collect(),
        profile_over_tau: profile_over_tau(ctx),
    })
}

/// The profile of ϒ over τ on the grid's ϒ nodes (Δχ² relative to its minimum), or empty with
/// a single τ (then it is the slice itself).
fn profile_over_tau(ctx: &OutputContext<'_>) -> Vec<(f64, f64)> {
    let chi2 = &ctx.profile.upsilon_profile;
    let upsilon = ctx.grid.upsilon.values();
    if ctx.grid.tau.values().len() < 2 || chi2.len() != upsilon.len() {
        return Vec::new();
    }
    let min = chi2
        .iter()
        .copied()
        .filter(|c| c.is_finite())
        .fold(f64::INFINITY, f64::min);
    if !min.is_finite() {
        return Vec::new();
    }
    upsilon
        .iter()
        .zip(chi2)
        .filter(|(_, c)| c.is_finite())
        .map(|(&u, &c)| (u, c - min))
        .collect()
}

/// Each class's masses against its bound, or `None` when no object has a mass test.
fn mass_bounds(ctx: &OutputContext<'_>) -> Option<MassBounds> {
    let classes = [
        (
            Term::HBurning,
            "hydrogen-burning stars (mass ≥ MMHB)",
            "MMHB",
        ),
        (Term::BrownDwarf, "brown dwarfs (mass ≤ MMHB)", "MMHB"),
        (
            Term::WhiteDwarfMass,
            "white dwarfs (mass ≤ Chandrasekhar mass)",
            "M_Ch (μe = 2)",
        ),
    ];
    let mut panels = Vec::new();
    for (term, title, bound_label) in classes {
        let floor_msun = match term {
            Term::WhiteDwarfMass => ctx.eopts.chandrasekhar_floor_msun,
            _ => ctx.eopts.mmhb_floor_msun,
        };
        let tension_sigma = ctx.settings.statistics.tension_sigma;
        // The panel's objects in order, with their use and verdict.
        let members = || {
            ctx.conf.uses.iter().enumerate().filter_map(move |(k, u)| {
                let (o, v) = (ctx.vetted.objects.get(k)?, ctx.verdicts.objects.get(k)?);
                (Term::mass_test_of(o.class) == term && o.mass_msun > 0.0).then_some((u, o, v))
            })
        };
        let sigma_of = |v: &crate::confront::tension::ObjectVerdict| {
            (
                v.sigma_standard.get().filter(|s| s.is_finite()),
                v.sigma_best.get().filter(|s| s.is_finite()),
            )
        };
        let in_tension = |s: (Option<f64>, Option<f64>)| {
            s.0.is_some_and(|x| x > tension_sigma) || s.1.is_some_and(|x| x > tension_sigma)
        };
        // First pass: the counts that decide the thinning.
        let (mut n, mut n_tension) = (0usize, 0usize);
        for (_, _, v) in members() {
            n += 1;
            n_tension += usize::from(in_tension(sigma_of(v)));
        }
        // The class values (μe = 2; an object's own bound is the class's times its scale).
        let (standard, best) = (
            ctx.standard_bounds.class_bound(term),
            ctx.best_bounds.class_bound(term),
        );
        // Second pass: only the objects drawn are built.
        let mut thinning = Thinning::new(n, n_tension);
        let mut objects = Vec::new();
        for (u, o, v) in members() {
            let sigma = sigma_of(v);
            if !thinning.keep(in_tension(sigma)) {
                continue;
            }
            let has = |f: &str| u.flags.iter().any(|g| g == f);
            let mark = if u.mass_term.is_some() {
                MassMark::InFit
            } else if u.excluded == Some(LeftOut::Young) {
                MassMark::Young
            } else if has("model_mass") {
                MassMark::ModelMass
            } else {
                MassMark::LeftOut
            };
            objects.push(MassObject {
                id: o.id.to_string(),
                mass_msun: o.mass_msun,
                mass_err_msun: match (o.mass_err_lo_msun.get(), o.mass_err_hi_msun.get()) {
                    (Some(a), Some(b)) => Some((a, b)),
                    _ => None,
                },
                sigma,
                mark,
            });
        }
        if let (Some(bound_standard_msun), false) = (standard, objects.is_empty()) {
            let note = thinning.note(objects.len());
            panels.push(MassPanel {
                title: format!("{title}{}", note.unwrap_or_default()),
                bound_label: bound_label.into(),
                bound_standard_msun,
                bound_best_msun: best,
                floor_msun,
                objects,
            });
        }
    }
    (!panels.is_empty()).then_some(MassBounds {
        panels,
        tension_sigma: ctx.settings.statistics.tension_sigma,
        best_fit: (ctx.regions.best.upsilon, ctx.regions.best.tau),
    })
}

/// Every data-against-theory figure this run can draw.
pub(crate) fn data_figures(ctx: &OutputContext<'_>) -> DataFigures {
    DataFigures {
        wd_mass_radius: wd_mass_radius(ctx),
        profile_tau0: profile_tau0(ctx),
        mass_bounds: mass_bounds(ctx),
    }
}
