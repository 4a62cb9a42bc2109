//! Turns one confrontation's results into the plain data the report module draws and writes.
//! No physics and no statistics here: only selection, wording and formatting of results.

use std::path::Path;

use super::error::PipelineError;
use super::outputs::OutputContext;
use crate::confront::engine::{BoundSurface, LeftOut, Term};
use crate::confront::regions::Level;
use crate::confront::tension::{TensionTest, TestKey};
use crate::report::text::fmt_sig;
use crate::report::{
    self, AllowedMap, AllowedRange, AxisSpec, BestFit, BoundSeries, BoundsCurves, CatalogueSummary,
    ClassContribution, ClassOutline, Consistency, DriverRow, GridDescription, IntervalRow,
    ModelDescription, NearBest, ReductionError, ReportInput, Shift, SideBySide, TensionRow,
    TensionTable, TermTabulation, UpsilonInterval, Warning, WorstObject,
};
use crate::theory::point::Warning as TheoryWarning;

/// The relativistic existence bound ϒ₁ > −4/9 (Babichev, Koyama, Langlois, Saito & Sakstein
/// 2016, arXiv:1606.06627), drawn on the map as theoretically disfavoured.
const RELATIVISTIC_BOUND_UPSILON: f64 = -4.0 / 9.0;

fn mass_text(ctx: &OutputContext<'_>, k: usize) -> String {
    let o = &ctx.vetted.objects[k];
    let err = match (o.mass_err_lo_msun.get(), o.mass_err_hi_msun.get()) {
        (Some(a), Some(b)) if a == b => format!(" ± {a:.4}"),
        (Some(a), Some(b)) => format!(" −{a:.4}/+{b:.4}"),
        _ => String::new(),
    };
    let lim = match o.mass_limit.label() {
        "upper" => "≤ ",
        "lower" => "≥ ",
        _ => "",
    };
    format!("{lim}{:.4}{err} M☉", o.mass_msun)
}

fn term_words(t: Term) -> &'static str {
    match t {
        Term::HBurning => "hydrogen-burning stars (mass ≥ MMHB)",
        Term::BrownDwarf => "brown dwarfs (mass ≤ MMHB)",
        Term::WhiteDwarfMass => "white dwarfs (mass ≤ Chandrasekhar mass)",
        Term::WhiteDwarfRadius => "white-dwarf radii (modified mass–radius relation)",
        Term::Spin => "spins (rotation period ≥ break-up period; Jain, Kouvaris & Nielsen 2016)",
    }
}

/// What one term constrains, in words, from its own Δχ² map: the width of its 95.45 % region
/// along each axis as a fraction of the grid.
fn term_summary(ctx: &OutputContext<'_>, t: Term, delta: &[Option<f64>]) -> String {
    let (nu, nt) = (ctx.conf.n_upsilon, ctx.conf.n_tau);
    let thr = Level::Cl95.dchi2(2);
    let mut u_span = (f64::INFINITY, f64::NEG_INFINITY);
    let mut t_span = (f64::INFINITY, f64::NEG_INFINITY);
    let mut n_allowed = 0usize;
    for j in 0..nt {
        for i in 0..nu {
            if delta[j * nu + i].is_some_and(|d| d <= thr) {
                n_allowed += 1;
                let (u, tt) = (ctx.surface.upsilon()[i], ctx.surface.tau()[j]);
                u_span = (u_span.0.min(u), u_span.1.max(u));
                t_span = (t_span.0.min(tt), t_span.1.max(tt));
            }
        }
    }
    if n_allowed == 0 {
        return format!("{}: no grid point has a model.", term_words(t));
    }
    let frac = n_allowed as f64 / (nu * nt) as f64;
    let axis_w = |v: &[f64]| v.last().copied().unwrap_or(0.0) - v.first().copied().unwrap_or(0.0);
    let (uw, tw) = (axis_w(ctx.surface.upsilon()), axis_w(ctx.surface.tau()));
    let cuts = |span: (f64, f64), w: f64| w > 0.0 && (span.1 - span.0) < 0.999 * w;
    let what = match (cuts(u_span, uw), cuts(t_span, tw)) {
        (true, true) => "constrains both ϒ and τ",
        (true, false) => "constrains ϒ (not τ) on this grid",
        (false, true) => "constrains τ (not ϒ) on this grid",
        (false, false) if frac < 0.999 => {
            "excludes part of the grid (a corner or an edge) without closing the range of either parameter"
        }
        (false, false) => "excludes no grid point",
    };
    format!(
        "{}: {what}; its own 95.45 % region spans ϒ ∈ [{:.3}, {:.3}], τ ∈ [{:.3}, {:.3}] ({:.0} % of the grid).",
        term_words(t),
        u_span.0,
        u_span.1,
        t_span.0,
        t_span.1,
        100.0 * frac
    )
}

/// A period in the unit that reads best: s below 10 min, min below 10 h, h above.
fn period_text(p_s: f64) -> String {
    if p_s < 600.0 {
        format!("{} s", fmt_sig(p_s, 3))
    } else if p_s < 36_000.0 {
        format!("{} min", fmt_sig(p_s / 60.0, 3))
    } else {
        format!("{} h", fmt_sig(p_s / 3600.0, 3))
    }
}

/// What each spinning object constrains, one sentence each: its period against the break-up
/// period at standard gravity and across the grid, and how far its own Δχ² moves.
fn spin_words(ctx: &OutputContext<'_>) -> String {
    use crate::confront::spin::SlowRotationStatus;
    // Named one by one: every object whose own Δχ² moves by 0.1 or more (largest first, at most
    // eight), then the three spinning closest to break-up at standard gravity; the rest in one
    // sentence.
    let ratio = |v: &crate::confront::spin::SpinVerdict| {
        v.breakup_standard_s
            .map_or(f64::INFINITY, |p| v.period_s / p)
    };
    let mut by_span: Vec<usize> = (0..ctx.spin_verdicts.len())
        .filter(|&k| ctx.spin_verdicts[k].delta_chi2_span >= 0.1)
        .collect();
    by_span.sort_by(|&a, &b| {
        ctx.spin_verdicts[b]
            .delta_chi2_span
            .total_cmp(&ctx.spin_verdicts[a].delta_chi2_span)
    });
    by_span.truncate(8);
    let mut by_ratio: Vec<usize> = (0..ctx.spin_verdicts.len()).collect();
    by_ratio
        .sort_by(|&a, &b| ratio(&ctx.spin_verdicts[a]).total_cmp(&ratio(&ctx.spin_verdicts[b])));
    let mut named = by_span;
    for k in by_ratio.into_iter().take(3) {
        if !named.contains(&k) {
            named.push(k);
        }
    }
    let mut out = Vec::new();
    for v in named.iter().map(|&k| &ctx.spin_verdicts[k]) {
        let o = &ctx.vetted.objects[v.index];
        let mut s = format!(
            "{} ({}, {:.3} M☉) spins in {}",
            o.id,
            o.class.label(),
            o.mass_msun,
            period_text(v.period_s)
        );
        if let Some(p) = v.breakup_standard_s {
            s += &format!(
                "; break-up period {} at standard gravity ({} radius), P/P_break = {:.2}",
                period_text(p),
                v.source.label(),
                v.period_s / p
            );
        }
        if let Some((lo, hi)) = v.breakup_range_s {
            s += &format!(", {}–{} over the grid", period_text(lo), period_text(hi));
            if hi < v.period_s {
                // P_break ∝ R^{3/2}: shedding needs the radius larger by (P/P_break)^{2/3}.
                s += &format!(
                    "; shedding would need a radius {:.2}× the largest on the grid",
                    (v.period_s / hi).powf(2.0 / 3.0)
                );
            }
        }
        let verdict = if v.delta_chi2_span < 0.1 {
            "it constrains nothing on this grid"
        } else if v.delta_chi2_span < Level::Cl95.dchi2(2) {
            "it constrains little (Δχ² moves by less than the 95.45 % threshold)"
        } else {
            "it excludes part of the grid on its own"
        };
        s += &format!(" (Δχ² span {:.2}): {verdict}", v.delta_chi2_span);
        match v.slow {
            SlowRotationStatus::Corrected { v: x, change } => {
                let what = if o.class == crate::catalogue::ObjectClass::WhiteDwarf {
                    "its predicted radius"
                } else {
                    "its MMHB"
                };
                s += &format!(
                    "; slow rotation (v = {x:.2e}) moves {what} by {:+.2e}",
                    change
                );
            }
            SlowRotationStatus::BeyondFirstOrder { v: x } => {
                s += &format!(
                    "; too fast for the first-order slow-rotation correction (v = {x:.2e}), flagged and not corrected"
                );
            }
            SlowRotationStatus::NotApplied => {}
        }
        out.push(s + ".");
    }
    let rest: Vec<&crate::confront::spin::SpinVerdict> = ctx
        .spin_verdicts
        .iter()
        .enumerate()
        .filter(|(k, _)| !named.contains(k))
        .map(|(_, v)| v)
        .collect();
    if !rest.is_empty() {
        let slowest = rest.iter().map(|v| ratio(v)).fold(f64::INFINITY, f64::min);
        let span = rest.iter().map(|v| v.delta_chi2_span).fold(0.0, f64::max);
        out.push(format!(
            "The other {} spinning objects rotate at {} or more times their break-up period at standard gravity; none moves its own Δχ² by more than {:.2} (objects.csv lists each).",
            rest.len(),
            if slowest.is_finite() { fmt_sig(slowest, 3) } else { "—".into() },
            span
        ));
    }
    out.join(" ")
}

/// Δχ² of a grid vector relative to its own minimum (`None` where there is no model).
fn delta_of(v: &[Option<f64>]) -> Vec<Option<f64>> {
    let min = v.iter().flatten().copied().fold(f64::INFINITY, f64::min);
    v.iter().map(|c| c.map(|c| c - min)).collect()
}

/// Three intervals as report rows, innermost first.
fn level_rows(iv: &[crate::confront::regions::Interval; 3]) -> Vec<UpsilonInterval> {
    Level::ALL
        .iter()
        .zip(iv)
        .map(|(l, i)| UpsilonInterval {
            level: format!("{:.2} %", 100.0 * l.probability()),
            lower: i.lower,
            upper: i.upper,
        })
        .collect()
}

/// The readings shown beside the τ = 0 interval: the slice with both treatments of the theory
/// floors, the profile intervals and the flat-prior posterior.
fn side_by_side(ctx: &OutputContext<'_>) -> Option<SideBySide> {
    use crate::confront::mass_terms::Systematics;
    let floor_words = |sy: Systematics| match sy {
        Systematics::Shared => {
            "slice at τ = 0, shared systematics (one shift per bound, one white-dwarf radius scale)"
        }
        Systematics::PerObject => "slice at τ = 0, per-object floors (mass and radius)",
    };
    let used = ctx.eopts.mass_terms.systematics;
    let mut rows = Vec::new();
    if let Some(sl) = ctx.slice {
        rows.push(IntervalRow {
            parameter: "ϒ".into(),
            method: format!("{} — the headline", floor_words(used)),
            intervals: level_rows(&sl.slice.intervals),
        });
    }
    if let Some((other, sl)) = ctx.slice_other_floor {
        rows.push(IntervalRow {
            parameter: "ϒ".into(),
            method: floor_words(other).to_string(),
            intervals: level_rows(&sl.slice.intervals),
        });
    }
    let p = ctx.profile;
    let post = ctx.posterior;
    rows.push(IntervalRow {
        parameter: "ϒ".into(),
        method: "profile over τ".into(),
        intervals: level_rows(&p.upsilon),
    });
    let posterior_words = |dominated: bool| {
        if dominated {
            "posterior, marginal (highest density; prior-dominated, see below)".to_string()
        } else {
            "posterior, marginal (highest density)".to_string()
        }
    };
    rows.push(IntervalRow {
        parameter: "ϒ".into(),
        method: posterior_words(post.upsilon_prior_dominated),
        intervals: level_rows(&post.upsilon),
    });
    rows.push(IntervalRow {
        parameter: "τ".into(),
        method: "profile over ϒ".into(),
        intervals: level_rows(&p.tau),
    });
    rows.push(IntervalRow {
        parameter: "τ".into(),
        method: posterior_words(post.tau_prior_dominated),
        intervals: level_rows(&post.tau),
    });
    let hpd_regions = Level::ALL
        .iter()
        .zip(&post.regions)
        .map(|(l, r)| {
            let some = |x: f64| (r.n_points > 0).then_some(x);
            AllowedRange {
                level: format!("{:.2} %", 100.0 * l.probability()),
                upsilon_min: some(r.upsilon_min),
                upsilon_max: some(r.upsilon_max),
                tau_min: some(r.tau_min),
                tau_max: some(r.tau_max),
                fraction_of_grid: r.fraction_of_grid,
            }
        })
        .collect();
    let mut formulas = vec![
        "Profile and posterior are read on the grid itself (no finer sub-grid): their ends are as precise as the grid spacing.".to_string(),
    ];
    let dominated: Vec<&str> = [
        ("ϒ", post.upsilon_prior_dominated),
        ("τ", post.tau_prior_dominated),
    ]
    .iter()
    .filter(|(_, d)| *d)
    .map(|(p, _)| *p)
    .collect();
    if !dominated.is_empty() {
        formulas.push(format!(
            "Prior-dominated ({}): the marginal posterior changes by less than a factor e^({}/2), the equivalent of Δχ² = {}, over the whole grid, so the data barely inform it; its interval shows the grid's range and the flat prior, not a measurement (docs/bounds.md §8.11).",
            dominated.join(" and "),
            crate::confront::profile::PRIOR_DOMINATED_DCHI2,
            crate::confront::profile::PRIOR_DOMINATED_DCHI2
        ));
    }
    if ctx.slice_other_floor.is_some() {
        formulas.push(
            "The two τ = 0 rows differ only in how the theory floors are shared: one shift per mass bound shared by all its objects and one radius scale (1 + δ) shared by every white dwarf in the radius test (each eliminated as a nuisance parameter), or the whole floor as an independent error per object, which averages away with many objects. The second was computed in the same run, from the same objects, grid and white-dwarf radii.".to_string(),
        );
    }
    Some(SideBySide {
        rows,
        hpd_regions,
        prior: crate::confront::profile::prior_text(ctx.surface.upsilon(), ctx.surface.tau()),
        formulas,
    })
}

/// Everything the report is rendered from, owned, so that it can be rendered after the
/// comparison's per-object state is gone ([`report_parts`], [`write_report_parts`]).
pub(crate) struct ReportParts {
    input: ReportInput,
    map: AllowedMap,
    curves: BoundsCurves,
    data: report::DataFigures,
}

/// Writes report.html, report.md and the figures from their parts. An unwritable output (a
/// folder where a file should go, no permission) is the user's environment (exit 2); anything
/// else the report refuses is a bug upstream (exit 1).
pub(crate) fn write_report_parts(parts: &ReportParts, out_dir: &Path) -> Result<(), PipelineError> {
    report::write_report_with(
        out_dir,
        &parts.input,
        &parts.map,
        &parts.curves,
        &parts.data,
    )
    .map_err(|e| match e {
        report::ReportError::Output(o) => PipelineError::Output(o),
        other => PipelineError::Internal(other.to_string()),
    })
}

/// Builds the report's inputs: the tables, the words and the figures' data (objects thinned).
pub(crate) fn report_parts(
    ctx: &OutputContext<'_>,
    generated_at: &str,
) -> Result<ReportParts, PipelineError> {
    let (nu, nt) = (ctx.conf.n_upsilon, ctx.conf.n_tau);
    let s = ctx.settings;
    let t = &s.theory;
    let delta_joint: Vec<Option<f64>> = ctx
        .regions
        .delta_chi2
        .iter()
        .map(|&d| d.is_finite().then_some(d))
        .collect();
    let mut outlines = Vec::new();
    let mut contributions = Vec::new();
    let best = &ctx.regions.best;
    for term in Term::ALL {
        let v = &ctx.conf.per_term[term as usize];
        let n_objects = ctx
            .conf
            .uses
            .iter()
            .enumerate()
            .filter(|(k, u)| match term {
                Term::WhiteDwarfRadius => u.radius_term,
                Term::Spin => ctx.conf.spins.iter().any(|s| s.index == *k),
                _ => u.mass_term == Some(term),
            })
            .count();
        if n_objects == 0 {
            continue;
        }
        let n_informative = ctx
            .conf
            .class_counts
            .iter()
            .find(|(tt, _)| *tt == term)
            .map_or(n_objects, |(_, c)| c.n_informative());
        let delta = delta_of(v);
        contributions.push(ClassContribution {
            class: term.name().to_string(),
            n_objects,
            n_informative,
            minus_two_ln_l_at_best_fit: v[ctx.best_index].unwrap_or(0.0),
            summary: match term {
                Term::Spin => format!("{} {}", term_summary(ctx, term, &delta), spin_words(ctx)),
                _ => term_summary(ctx, term, &delta),
            },
        });
        outlines.push(ClassOutline {
            class_label: term.name().to_string(),
            delta_chi2: delta,
        });
    }
    let upsilon = ctx.surface.upsilon().to_vec();
    let tau = ctx.surface.tau().to_vec();
    let map = AllowedMap {
        upsilon: upsilon.clone(),
        tau: tau.clone(),
        delta_chi2: delta_joint,
        levels: report::Level::two_parameter_defaults(),
        class_outlines: outlines,
        best_fit: (best.upsilon, best.tau),
        standard_gravity: (0.0, 0.0),
        anisotropy_name: t.anisotropy.name().to_string(),
        disfavoured_below_upsilon: (upsilon.first().copied().unwrap_or(0.0)
            < RELATIVISTIC_BOUND_UPSILON)
            .then(|| {
                (
                    RELATIVISTIC_BOUND_UPSILON,
                    "relativistic existence bound ϒ > −4/9 (Babichev et al. 2016)".to_string(),
                )
            }),
    };
    let rows = ctx.grid.representative_tau_rows(5);
    let mut series = Vec::new();
    for c in ctx.grid.curves(&rows) {
        series.push(BoundSeries {
            bound_label: "MMHB".into(),
            unit: "M☉".into(),
            tau: c.tau,
            values: c.mmhb_msun.clone(),
        });
        series.push(BoundSeries {
            bound_label: "Chandrasekhar mass (μe = 2)".into(),
            unit: "M☉".into(),
            tau: c.tau,
            values: c.chandrasekhar_msun.clone(),
        });
    }
    let curves = BoundsCurves {
        upsilon: upsilon.clone(),
        series,
    };

    let mode = t.mmhb_mode.name();
    let standard = ctx.grid_standard_status();
    let mut warnings = Vec::new();
    if let Some(c) = ctx.crowd.filter(|c| c.warn) {
        warnings.push(Warning::Crowding {
            n_hburning: c.n_hburning_near,
            n_brown_dwarf: c.n_brown_dwarf_near,
        });
    }
    let pn_ids: Vec<String> = ctx
        .vetted
        .objects
        .iter()
        .filter(|o| o.class.label() == "white_dwarf" && o.mass_msun > 1.253)
        .map(|o| o.id.to_string())
        .collect();
    if !pn_ids.is_empty() {
        warnings.push(Warning::PostNewtonianWhiteDwarf {
            ids: pn_ids,
            compactness_threshold: 5e-4,
        });
    }
    if ctx.grid.points.iter().any(|p| {
        p.warnings
            .iter()
            .any(|w| matches!(w, TheoryWarning::BelowRelativisticBound))
    }) {
        warnings.push(Warning::BelowRelativisticExistenceBound {
            upsilon_bound: RELATIVISTIC_BOUND_UPSILON,
            source: "Babichev, Koyama, Langlois, Saito & Sakstein 2016 (arXiv:1606.06627)".into(),
        });
    }
    if let Some(n) = &ctx.cache_note {
        warnings.push(Warning::Other(n.clone()));
    }
    let left_out = |why: LeftOut| {
        ctx.conf
            .uses
            .iter()
            .filter(|u| u.excluded == Some(why))
            .count()
    };
    let n_young = left_out(LeftOut::Young);
    let n_no_age = left_out(LeftOut::AgeUnknown);
    let count_flag = |flag: &str| {
        ctx.conf
            .uses
            .iter()
            .filter(|u| u.flags.iter().any(|f| f == flag))
            .count()
    };
    let n_model_mass = count_flag("model_mass");
    if n_model_mass > 0 {
        warnings.push(Warning::Other(if ctx.eopts.radius.include_model_masses {
            format!("{n_model_mass} object(s) with masses from a standard-gravity model (mass_method = model) are kept in their tests on request, although that is circular for a test of that model")
        } else {
            format!("{n_model_mass} object(s) with masses from a standard-gravity model (mass_method = model: a mass–radius relation, log g, photometry or tracks) left out of their mass and radius tests: circular for a test of that model (flag model_mass; keep them with --include-model-masses)")
        }));
    }
    let n_spin_model = count_flag("spin_model_mass");
    if n_spin_model > 0 {
        warnings.push(Warning::Other(format!(
            "{n_spin_model} of them with a rotation period left out of the spin test too: the break-up period pairs the mass with the modified structure's radius, and a mass read off the standard mass–radius relation makes that circular (docs/rotation.md §3; flag spin_model_mass)"
        )));
    }
    let n_unknown = count_flag("mass_method_unknown");
    if n_unknown > 0 {
        warnings.push(Warning::Other(format!(
            "{n_unknown} object(s) without a mass_method are included as if their masses were independent of any structure model; if some came from a model, say so in the catalogue (mass_method = model)"
        )));
    }
    let radius_out: Vec<String> = [
        ("no_teff", "without Teff"),
        ("elm", "of extremely low mass"),
        (
            "outside_model",
            "outside the finite-temperature model's table",
        ),
    ]
    .iter()
    .filter_map(|(flag, what)| {
        let n = count_flag(flag);
        (n > 0).then(|| format!("{n} {what}"))
    })
    .collect();
    if !radius_out.is_empty() {
        warnings.push(Warning::Other(format!(
            "White dwarfs with a radius left out of the radius test (outside the model's domain, flagged in objects.csv): {}",
            radius_out.join(", ")
        )));
    }
    // With thousands of white dwarfs in the radius test its statistical error falls below what
    // the floor's assumed size is known to: a floor larger than the real scatter then pulls τ
    // (docs/white-dwarfs.md §13.1: Δχ² ≈ 8 at 20 000 invented objects drawn in standard gravity).
    // The fitted floor (the default) takes its size from the data; a fixed one keeps the risk.
    let n_radius = ctx.conf.radius_objects.len();
    if n_radius >= LARGE_RADIUS_TEST
        && ctx.eopts.radius.floor_fit == crate::confront::wd_radius::FloorFit::Fixed
    {
        warnings.push(Warning::Other(format!(
            "{n_radius} white dwarfs in the radius test: at this size the result depends on the assumed size of the per-object theory floor (a floor larger than the real scatter pulls τ; docs/white-dwarfs.md §13.1), and it was kept fixed (--wd-floor-size fixed); compare the shared-scale and per-object rows of the τ = 0 table before quoting a bound, or let the data size the floor"
        )));
    }
    let n_anchored = count_flag("radius_anchored");
    if n_anchored > 0 {
        warnings.push(Warning::Other(format!(
            "{n_anchored} white dwarf(s) tested against their own radius_model (anchored: radius_model × R(M; ϒ, τ)/R(M; 0, 0)); the others against the tool's {} model",
            ctx.eopts.radius.model.name()
        )));
    }
    if n_young > 0 {
        warnings.push(Warning::Other(format!(
            "{n_young} object(s) younger than {} Gyr left out of the MMHB test (docs/bounds.md §5: they may not have reached steady burning, or may still be contracting); their tensions are listed in objects.csv",
            ctx.eopts.age_min_mmhb_gyr
        )));
    }
    if n_no_age > 0 {
        warnings.push(Warning::Other(format!(
            "{n_no_age} object(s) without an age left out of the MMHB test (the run excludes them on request)"
        )));
    }
    if ctx.consistency.n_informative == 0 {
        warnings.push(Warning::Other(
            "No object constrains the bounds on this grid (no informative object after the reduction): the verdict and the allowed region carry no information.".into(),
        ));
    }
    if ctx.slice.is_none() {
        warnings.push(Warning::Other(
            "No ϒ interval at τ = 0: the grid has no τ = 0 row with a model on at least two ϒ values.".into(),
        ));
    }
    let reduction_error = Some(ReductionError {
        terms: ctx
            .conf
            .bounds
            .iter()
            .map(|(bound, t)| TermTabulation {
                bound: match bound {
                    crate::confront::engine::Bound::Mmhb => "MMHB".into(),
                    crate::confront::engine::Bound::Chandrasekhar => "Chandrasekhar mass".into(),
                },
                likelihood: t.model().name().into(),
                data_nodes: t.data_nodes(),
                table_nodes: t.table_nodes(),
                check_points: t.n_check(),
                max_abs_delta_chi2: t.achieved_error(),
            })
            .collect(),
    })
    .filter(|r| !r.terms.is_empty());
    let input = ReportInput {
        title: "dwarfbound: allowed (ϒ, τ) from very-low-mass stars, brown dwarfs and white dwarfs"
            .into(),
        generated_at: generated_at.into(),
        version: env!("CARGO_PKG_VERSION").into(),
        model: ModelDescription {
            structure: "Newtonian hydrostatic equilibrium with the beyond-Horndeski term G[M/r² + (ϒ/4) d²M/dr²] inside matter (Kobayashi, Watanabe & Yamauchi 2015; Koyama & Sakstein 2015), polytropic Lane–Emden models (n = 3/2 for fully convective objects, n = 3 for the Chandrasekhar mass) and the zero-temperature Chandrasekhar equation of state for white-dwarf radii".into(),
            anisotropy_ansatz: format!(
                "{} (τ is this ansatz's strength; see docs/structure.md §2)",
                t.anisotropy.name()
            ),
            mmhb_model: match t.mmhb_model.name() {
                n if n.contains("lum") => "luminosity balance (Burrows & Liebert 1993 analytic model)".into(),
                n => format!("{n} (maximum central temperature against an ignition temperature)"),
            },
            mmhb_mode: mode.to_string(),
            mmhb_anchor: match t.mmhb_mode {
                crate::theory::mmhb::MmhbMode::Anchored { anchor_msun, .. } => format!(
                    "{anchor_msun} M☉ in standard gravity (evolutionary models, ≈ 0.072–0.075 M☉; from memory, docs/bounds.md §4) times the analytic shift Φ(ϒ, τ)"
                ),
                crate::theory::mmhb::MmhbMode::Raw => "none: the raw analytic value".into(),
            },
            theory_floor: format!(
                "{}, Gaussian: MMHB {} M☉, Chandrasekhar mass {} M☉ (μe = 2, scaled by 4/μe²){}; {}",
                match ctx.eopts.mass_terms.systematics {
                    crate::confront::mass_terms::Systematics::Shared => format!(
                        "shared by every object of a bound (one shift per bound, a nuisance parameter, {}d) for the mass bounds",
                        ctx.eopts.mass_terms.method.name()
                    ),
                    crate::confront::mass_terms::Systematics::PerObject => "per object".to_string(),
                },
                ctx.eopts.mmhb_floor_msun,
                ctx.eopts.chandrasekhar_floor_msun,
                match ctx.eopts.mass_terms.systematics {
                    crate::confront::mass_terms::Systematics::Shared => format!(
                        "; each mass probability keeps a per-object scatter of {} × the floor",
                        ctx.eopts.mass_terms.scatter_fraction
                    ),
                    crate::confront::mass_terms::Systematics::PerObject => String::new(),
                },
                match ctx.conf.radius_shared {
                    Some(n) => format!(
                        "white-dwarf radius: a scale of {} % shared by every white dwarf in the radius test (the structure model itself; a nuisance parameter, {}d), taken out of each object's floor in quadrature, so that one object's total is the floor below; ",
                        100.0 * n.sigma,
                        n.method.name()
                    ),
                    None => String::new(),
                } + &match ctx.eopts.radius.model {
                    crate::confront::wd_radius::WdRadiusModel::Cold => format!(
                        "white-dwarf radius {} % per object (choices, docs/bounds.md §4 and docs/structure.md §4.6)",
                        100.0 * ctx.eopts.radius.cold_floor_fraction
                    ),
                    crate::confront::wd_radius::WdRadiusModel::Hot => format!(
                        "white-dwarf radius, per object: {} % for carbon–oxygen cores up to {} K, rising to {} % at {} K, helium cores {} % more in quadrature, plus half the thick–thin spread where the hydrogen layer is not stated, the Teff error through dR/dTeff and 0.5 |ϒ| (R_hot/R_cold − 1) for the anchored ϒ dependence (choices, docs/white-dwarfs.md §13)",
                        100.0 * ctx.eopts.radius.hot_floor_fraction,
                        ctx.eopts.radius.hot_ramp_start_k,
                        100.0 * (ctx.eopts.radius.hot_floor_fraction + ctx.eopts.radius.hot_ramp_extra_fraction),
                        ctx.eopts.radius.hot_ramp_end_k,
                        100.0 * ctx.eopts.radius.helium_core_fraction,
                    ),
                }
            ),
            white_dwarf: match ctx.eopts.radius.model {
                crate::confront::wd_radius::WdRadiusModel::Cold => format!(
                    "Chandrasekhar mass {} (5.82519/μe² M☉ × ω₃(ϒ,τ)/ω₃(0,0)); Newtonian order, zero temperature, no Coulomb or envelope corrections; radii from the full-EOS R(M) tabulated per grid point (the zero-temperature model, chosen with --wd-model cold)",
                    t.chandrasekhar_mode.name()
                ),
                crate::confront::wd_radius::WdRadiusModel::Hot => format!(
                    "Chandrasekhar mass {} (5.82519/μe² M☉ × ω₃(ϒ,τ)/ω₃(0,0)), Newtonian order; radii: finite-temperature white dwarfs (Fermi–Dirac electrons, ions, radiation, Salpeter's electrostatic lattice, exchange and Thomas–Fermi terms, H and He layers over a He, C/O or O/Ne core, Kramers and conductive opacities, isothermal core) at standard gravity, tabulated in mass and Teff, with the general-relativistic correction R_TOV/R_Newton of the same cold matter at standard gravity (−0.05 % at 0.6 M☉, −0.26 % at 1.0 M☉, −2.7 % at 1.3 M☉ for C/O; objects above the core's TOV maximum mass, 1.3836 M☉ for C/O, are outside the model), times the ratio R_cold(M; ϒ, τ)/R_cold(M; 0, 0) of the zero-temperature structure at the grid point, so that the modified theory enters at Newtonian order (anchored; the error of the anchoring is carried as a theory error). Idealised: fully ionised envelopes, no neutrino cooling, no residual hydrogen burning, no crystallisation (docs/white-dwarfs.md)",
                    t.chandrasekhar_mode.name()
                ),
            },
            likelihood: format!(
                "{}; evaluated through the one-dimensional reduction (§8.5); white-dwarf radii as a Gaussian likelihood marginalised over the object's true mass with {}{}{}",
                ctx.conf
                    .bounds
                    .iter()
                    .map(|(b, t)| format!(
                        "{}: {}{} ({})",
                        b.name(),
                        match t.model() {
                            crate::confront::mass_terms::LikelihoodModel::Product => "product over objects of the probability of lying on the allowed side of the bound (exact split-normal)",
                            crate::confront::mass_terms::LikelihoodModel::Calibrated => "calibrated: each label's probability with a mass function deconvolved from all objects of the bound's classes as the prior on the true mass",
                        },
                        match t.mass_function() {
                            Some(m) if m.grouped => format!(
                                ", fitted to {} objects grouped into {} rows of similar mass and error (docs/bounds.md §8.9: an approximation; {})",
                                m.n_objects,
                                m.n_rows,
                                match ctx.eopts.mass_terms.calibrated.deconvolve.grouping.exact_up_to {
                                    0 => "chosen with --mass-function-fit grouped".to_string(),
                                    n => format!("used above {n} objects; --mass-function-fit exact fits every object"),
                                }
                            ),
                            _ => String::new(),
                        },
                        t.rule()
                    ))
                    .collect::<Vec<_>>()
                    .join("; "),
                match (ctx.eopts.radius.mass_prior, &ctx.conf.radius_mass_prior) {
                    (_, Some(p)) => format!(
                        "the white dwarfs' own mass function as the prior (deconvolved from the {} measured masses of the radius test and smoothed by {:.3} M☉, Silverman's bandwidth; docs/white-dwarfs.md)",
                        p.n_objects(),
                        p.bandwidth_msun()
                    ),
                    (crate::confront::wd_radius::RadiusMassPrior::Population, None) => "a flat prior (fewer than two white dwarfs with a mass error to estimate their mass function from)".to_string(),
                    (crate::confront::wd_radius::RadiusMassPrior::Flat, None) => "a flat prior (chosen with --wd-mass-prior flat: with thousands of white dwarfs it turns their mass distribution's peak into a false signal; docs/white-dwarfs.md)".to_string(),
                },
                floor_size_text(ctx),
                match ctx.eopts.population_window_msun {
                    Some((lo, hi)) => format!("; population-aware term of docs/bounds.md §8.7 with the mass window [{lo}, {hi}] M☉ (flat true-mass densities on either side of the MMHB, profiled)"),
                    None => String::new(),
                }
            ),
            extra: vec![(
                "Sensitivity".into(),
                "In this framework the MMHB moves by well under 1 % for |ϒ| ≤ 0.1 but by about 10 % per 0.1 in τ: the hydrogen-burning and brown-dwarf tests constrain τ; the white-dwarf tests carry most of the information on ϒ.".into(),
            )],
        },
        grid: GridDescription {
            upsilon: AxisSpec {
                start: s.upsilon.start,
                stop: s.upsilon.stop,
                count: s.upsilon.count,
            },
            tau: AxisSpec {
                start: s.tau.start,
                stop: s.tau.stop,
                count: s.tau.count,
            },
            anisotropy: t.anisotropy.name().into(),
            points_without_model: ctx.regions.n_invalid,
        },
        catalogues: ctx
            .vetted
            .tallies
            .iter()
            .map(|c| CatalogueSummary {
                path: c.path.clone(),
                rows_in: c.rows_in,
                rows_accepted: c.rows_accepted,
                rows_quarantined: c.rows_quarantined,
                sha256: ctx.checksums.get(&c.path).cloned().unwrap_or_default(),
            })
            .collect(),
        best_fit: BestFit {
            upsilon: best.upsilon,
            tau: best.tau,
            minus_two_ln_l: best.chi2_min,
            on_grid_edge: best.on_grid_edge(nu, nt),
            not_unique: (!ctx.regions.best_unique).then(|| {
                let n = &ctx.regions.near_best;
                NearBest {
                    dchi2: crate::confront::regions::INDISTINGUISHABLE_DCHI2,
                    n_points: n.n_points,
                    fraction_of_grid: n.fraction_of_grid,
                    upsilon: (n.upsilon_min, n.upsilon_max),
                    tau: (n.tau_min, n.tau_max),
                }
            }),
        },
        allowed: Level::ALL
            .iter()
            .zip(&ctx.regions.allowed)
            .map(|(l, b)| {
                let some = |x: f64| (b.n_points > 0).then_some(x);
                AllowedRange {
                    level: format!("{:.2} %", 100.0 * l.probability()),
                    upsilon_min: some(b.upsilon_min),
                    upsilon_max: some(b.upsilon_max),
                    tau_min: some(b.tau_min),
                    tau_max: some(b.tau_max),
                    fraction_of_grid: b.fraction_of_grid,
                }
            })
            .collect(),
        upsilon_interval_at_tau0: match ctx.slice {
            Some(sl) => Level::ALL
                .iter()
                .enumerate()
                .map(|(n, l)| UpsilonInterval {
                    level: format!("{:.2} %", 100.0 * l.probability()),
                    lower: sl.slice.intervals[n].lower,
                    upper: sl.slice.intervals[n].upper,
                })
                .collect(),
            None => Vec::new(),
        },
        standard_gravity: standard,
        consistency: Consistency {
            consistent: ctx.consistency.consistent_cl95,
            p_catalogue: ctx.consistency.p_cat,
            n_informative: ctx.consistency.n_informative,
            worst_objects: ctx
                .consistency
                .worst
                .iter()
                .map(|&(k, lnp)| {
                    // Keys name the test as well as the object (confront::tension::TestKey).
                    let key = TestKey::decode(k, ctx.vetted.objects.len());
                    let o = &ctx.vetted.objects[key.object];
                    WorstObject {
                        id: match key.test {
                            TensionTest::MassBound => o.id.to_string(),
                            TensionTest::MassRadius => format!("{} (radius)", o.id),
                            TensionTest::Spin => format!("{} (spin)", o.id),
                        },
                        class: o.class.label().into(),
                        probability: lnp.exp(),
                    }
                })
                .collect(),
        },
        tensions: TensionTable {
            threshold_sigma: s.statistics.tension_sigma,
            rows: ctx
                .tensions
                .iter()
                .map(|t| {
                    let k = t.object;
                    let o = &ctx.vetted.objects[k];
                    let (class, text) = match t.test {
                        TensionTest::MassBound => {
                            (o.class.label().to_string(), mass_text(ctx, k))
                        }
                        TensionTest::Spin => (
                            format!("{} (spin test)", o.class.label()),
                            mass_text(ctx, k),
                        ),
                        TensionTest::MassRadius => (
                            format!("{} (mass–radius test)", o.class.label()),
                            format!(
                                "{}; R = {:.5} ± {:.5} R☉",
                                mass_text(ctx, k),
                                o.radius_rsun().get().unwrap_or(0.0),
                                o.radius_err_rsun().get().unwrap_or(0.0)
                            ),
                        ),
                    };
                    TensionRow {
                        id: o.id.to_string(),
                        class,
                        mass_text: text,
                        sigma_standard_gravity: t.sigma,
                        sigma_best_fit: match t.test {
                            TensionTest::MassBound => ctx.sigma_best(k),
                            TensionTest::MassRadius => ctx.verdicts.radius_sigma_best(k),
                            TensionTest::Spin => ctx.driver_sigma(k),
                        },
                        two_sided: t.test == TensionTest::MassRadius,
                    }
                })
                .collect(),
        },
        drivers: ctx
            .drivers_sorted()
            .into_iter()
            .map(|(rank, k, shift)| DriverRow {
                rank,
                id: ctx.vetted.objects[k].id.to_string(),
                class: ctx.vetted.objects[k].class.label().into(),
                shift: if shift.is_finite() {
                    Shift::Finite(shift)
                } else {
                    Shift::EndOpensOrCloses
                },
                test: match ctx.driver_test(k) {
                    Some(TensionTest::MassRadius) => "mass–radius (two-sided)".into(),
                    Some(TensionTest::Spin) => "spin, break-up (one-sided)".into(),
                    _ => "mass bound (one-sided)".into(),
                },
                sigma_best_fit: ctx.driver_sigma(k),
            })
            .collect(),
        side_by_side: side_by_side(ctx),
        class_contributions: contributions,
        reduction_error,
        warnings,
        since_previous: ctx.since_previous.clone(),
        cautions: vec![
            "Intervals are read off a grid: their precision is limited by the grid spacing (the ϒ interval at τ = 0 uses a 10× finer sub-grid with cubic interpolation of the bounds).".into(),
        ],
    };
    let data = super::report_figures::data_figures(ctx);
    Ok(ReportParts {
        input,
        map,
        curves,
        data,
    })
}

/// From this many white dwarfs in the radius test the report warns that the result depends on the
/// floor's assumed size (docs/white-dwarfs.md §13.1: the pull was Δχ² ≈ 5 on average at 5 000
/// invented objects, 8 at 20 000; a choice, at the low end of "thousands").
const LARGE_RADIUS_TEST: usize = 2_000;

/// The model line's account of the per-object radius floor's size (empty without a radius
/// test).
fn floor_size_text(ctx: &OutputContext<'_>) -> String {
    use crate::confront::wd_radius::{FloorFit, FLOOR_SCALE_RANGE};
    let Some(k) = &ctx.conf.radius_floor_scale else {
        return if ctx.eopts.radius.floor_fit == FloorFit::Fixed
            && !ctx.conf.radius_objects.is_empty()
        {
            "; the per-object radius floor at its stated size (chosen with --wd-floor-size fixed: with thousands of white dwarfs a floor larger than their real scatter pulls τ; docs/white-dwarfs.md §13.2)".to_string()
        } else {
            String::new()
        };
    };
    if k.applied < 1.0 {
        format!(
            "; the per-object radius floor scaled by κ = {:.3}: the white dwarfs scatter less about standard gravity than the stated floor says ({}, the stated size excluded at Δχ² = {:.1}); κ is the upper end of its 2σ interval, the widest floor the data allow (docs/white-dwarfs.md §13.2)",
            k.applied,
            if k.estimate_at_lower_end() {
                format!("κ̂ at the search's lower end, {}: no scatter beyond the other terms", FLOOR_SCALE_RANGE.0)
            } else {
                format!("κ̂ = {:.3}", k.estimate)
            },
            k.delta_chi2_stated
        )
    } else if k.stated_excluded() {
        format!(
            "; the per-object radius floor at its stated size, although the white dwarfs scatter more about standard gravity than it says (its scale κ̂ = {:.3}, the stated size excluded at Δχ² = {:.1}): the floor is never widened by the data, the excess is left to the tensions and the consistency verdict (docs/white-dwarfs.md §13.2)",
            k.estimate, k.delta_chi2_stated
        )
    } else {
        format!(
            "; the per-object radius floor at its stated size (the white dwarfs' scatter about standard gravity allows it: its scale κ̂ = {:.3}, 2σ interval [{:.3}, {:.3}]; docs/white-dwarfs.md §13.2)",
            k.estimate, k.interval.0, k.interval.1
        )
    }
}
