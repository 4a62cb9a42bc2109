//! Leave-one-out influence: which objects move the ϒ interval at τ = 0, and by how much.
//!
//! Because ℓ is a sum over objects, removing object i is exact and cheap: the slice without it
//! is χ² + 2 ln P_i along the slice (`docs/bounds.md` §8.6). Only objects whose −2 ln P_i
//! exceeds a small threshold somewhere on the slice can move a crossing by more than that, so
//! only they are recomputed. Each candidate's shift is the larger change of the two interval
//! ends; an end that opens or closes counts as an infinite shift and is listed first. The
//! per-object decomposition is exact for the per-object theory floor and the product
//! likelihood; [`slice_drivers`] applies it to a whole confrontation in that form, white-dwarf
//! radius terms included. [`slice_drivers_in_fit`] takes each object out under the likelihood
//! the run actually uses (shared shifts and the shared radius scale fitted again without the
//! object, calibrated probabilities), which is what the pipeline reports.
//!
//! ```
//! use dwarfbound::confront::drivers::{leave_one_out, DriverOptions, SliceClass};
//! use dwarfbound::confront::prob::{ln_prob_consistent, MassKind, Measurement, Side};
//! use dwarfbound::confront::regions::refine_axis;
//! let fine = refine_axis(&[-1.0, 0.0, 1.0], 100).unwrap();
//! let bound: Vec<f64> = fine.iter().map(|u| 0.075 * (1.0 + 0.2 * u)).collect();
//! let m = |mass, side| Measurement {
//!     mass_msun: mass, kind: MassKind::Measured { lo: 0.001, hi: 0.001 }, side, scale: 1.0 };
//! let objects = [m(0.076, Side::AtLeast), m(0.074, Side::AtMost)];
//! let chi2: Vec<f64> = bound.iter()
//!     .map(|&b| -2.0 * objects.iter().map(|o| ln_prob_consistent(o, b, 0.001)).sum::<f64>())
//!     .collect();
//! let class = SliceClass { measurements: &objects, floor_msun: 0.001, bound_fine_msun: &bound };
//! let report = leave_one_out(&fine, &chi2, &[class], &DriverOptions::default()).unwrap();
//! assert_eq!(report.drivers.len(), 2);
//! assert!(report.drivers[0].shift.is_infinite()); // each object alone closes one end
//! ```

use rayon::prelude::*;

use super::engine::{Bound, Confrontation, EngineOptions, Term};
use super::mass_terms::BoundTerm;
use super::nuisance::eliminate;
use super::prob::{ln_prob_consistent, Measurement, Side, StatsError};
use super::regions::{interval_from_slice, Interval, Level};
use super::slice::{radius_totals_fine_leaving_out, SliceResult};
use super::tension::{ReferencePoint, TensionTest};
use crate::catalogue::{CatalogueObject, OptF64};

/// Settings of the driver analysis (`docs/bounds.md` §8.6 defaults).
#[derive(Debug, Clone, PartialEq)]
pub struct DriverOptions {
    /// Candidates are objects whose −2 ln P_i exceeds this somewhere on the slice (2e-3).
    pub candidate_min_minus_two_ln_p: f64,
    /// How many drivers to return (10).
    pub top: usize,
    /// The interval's level, 1 dof (95.45 %, Δχ² ≤ 4).
    pub level: Level,
}

impl Default for DriverOptions {
    fn default() -> Self {
        Self {
            candidate_min_minus_two_ln_p: 2e-3,
            top: 10,
            level: Level::Cl95,
        }
    }
}

/// One class on the τ = 0 slice: its objects, its floor and its bound at every point of the
/// fine ϒ axis (class values; each object applies its own scale).
#[derive(Debug, Clone, Copy)]
pub struct SliceClass<'a> {
    /// All objects of the class, in the caller's order.
    pub measurements: &'a [Measurement],
    /// The class's theory floor, M☉.
    pub floor_msun: f64,
    /// The class bound B_c(ϒ, 0) on the fine axis, M☉.
    pub bound_fine_msun: &'a [f64],
}

/// One object's influence on the interval.
#[derive(Debug, Clone, PartialEq)]
pub struct Driver {
    /// Position of the class in the slice passed to [`leave_one_out`].
    pub class: usize,
    /// Position of the object within its class's measurements.
    pub index: usize,
    /// max(|Δlower|, |Δupper|) in ϒ; +∞ when an end opens or closes.
    pub shift: f64,
    /// The interval without this object.
    pub interval_without: Interval,
    /// Largest −2 ln P_i along the slice (its weight in the fit).
    pub max_minus_two_ln_p: f64,
}

/// The driver analysis of one slice.
#[derive(Debug, Clone, PartialEq)]
pub struct DriverReport {
    /// The interval with every object.
    pub baseline: Interval,
    /// Number of candidates examined.
    pub n_candidates: usize,
    /// The `top` largest shifts: infinite first, then decreasing; ties by (class, index).
    pub drivers: Vec<Driver>,
}

/// Leave-one-out drivers of the ϒ interval at τ = 0 (`docs/bounds.md` §8.6).
///
/// `chi2_fine` is the full slice χ² on `upsilon_fine` (the same values the interval was taken
/// from); each candidate's slice is recomputed exactly as χ² + 2 ln P_i, with its own minimum.
pub fn leave_one_out(
    upsilon_fine: &[f64],
    chi2_fine: &[f64],
    classes: &[SliceClass<'_>],
    opts: &DriverOptions,
) -> Result<DriverReport, StatsError> {
    let n = upsilon_fine.len();
    if n < 2 || chi2_fine.len() != n {
        return Err(StatsError::InvalidInput(format!(
            "the slice has {n} abscissae and {} χ² values",
            chi2_fine.len()
        )));
    }
    for (c, class) in classes.iter().enumerate() {
        if class.bound_fine_msun.len() != n || class.bound_fine_msun.iter().any(|b| !b.is_finite())
        {
            return Err(StatsError::InvalidInput(format!(
                "class {c}: the bound along the slice must have {n} finite values"
            )));
        }
        for (i, m) in class.measurements.iter().enumerate() {
            m.validate(i)?;
        }
    }
    let dchi2 = opts.level.dchi2(1);
    let baseline = interval_from_slice(upsilon_fine, chi2_fine, dchi2)?;
    // Candidates: P_i is monotone in B, so its smallest value on the slice is at the extreme B.
    let mut candidates: Vec<(usize, usize, f64)> = Vec::new();
    for (c, class) in classes.iter().enumerate() {
        let b_min = class
            .bound_fine_msun
            .iter()
            .copied()
            .fold(f64::INFINITY, f64::min);
        let b_max = class
            .bound_fine_msun
            .iter()
            .copied()
            .fold(f64::NEG_INFINITY, f64::max);
        for (i, m) in class.measurements.iter().enumerate() {
            if !m.informative() {
                continue;
            }
            let worst_b = match m.side {
                Side::AtLeast => b_max,
                Side::AtMost => b_min,
            };
            let weight = -2.0 * ln_prob_consistent(m, worst_b, class.floor_msun);
            if weight > opts.candidate_min_minus_two_ln_p {
                candidates.push((c, i, weight));
            }
        }
    }
    let mut drivers: Vec<Driver> = candidates
        .par_iter()
        .map(|&(c, i, weight)| {
            let class = &classes[c];
            let m = &class.measurements[i];
            let without: Vec<f64> = chi2_fine
                .iter()
                .zip(class.bound_fine_msun)
                .map(|(&chi2, &b)| chi2 + 2.0 * ln_prob_consistent(m, b, class.floor_msun))
                .collect();
            let interval_without = interval_from_slice(upsilon_fine, &without, dchi2)?;
            let shift = end_shift(baseline.lower, interval_without.lower)
                .max(end_shift(baseline.upper, interval_without.upper));
            Ok(Driver {
                class: c,
                index: i,
                shift,
                interval_without,
                max_minus_two_ln_p: weight,
            })
        })
        .collect::<Result<_, StatsError>>()?;
    drivers.sort_by(|a, b| {
        b.shift
            .total_cmp(&a.shift)
            .then(a.class.cmp(&b.class))
            .then(a.index.cmp(&b.index))
    });
    let n_candidates = drivers.len();
    drivers.truncate(opts.top);
    Ok(DriverReport {
        baseline,
        n_candidates,
        drivers,
    })
}

/// Change of one interval end; opening or closing is infinite.
fn end_shift(before: Option<f64>, after: Option<f64>) -> f64 {
    match (before, after) {
        (Some(a), Some(b)) => (a - b).abs(),
        (None, None) => 0.0,
        _ => f64::INFINITY,
    }
}

/// The drivers of one confrontation's τ = 0 slice: (object index, shift), largest shift first
/// (ties by object index), at most `opts.top`.
///
/// The mass classes go through [`leave_one_out`]. White dwarfs feed the radius term too, and
/// spinning objects the spin term, which that analysis does not see: each one's radius and
/// spin contributions are taken out of the slice the same way ([`radius_drivers`],
/// [`spin_drivers`]), and an object found by more than one keeps its largest shift.
pub fn slice_drivers(
    conf: &Confrontation,
    objects: &[CatalogueObject],
    s: &SliceResult,
    eopts: &EngineOptions,
    opts: &DriverOptions,
) -> Result<Vec<(usize, f64)>, StatsError> {
    let mut per_class: Vec<(Term, Vec<usize>, Vec<Measurement>)> = Vec::new();
    for (term, _) in &conf.class_counts {
        let idx = conf.members(*term);
        let ms = conf.member_measurements(objects, *term).collect();
        per_class.push((*term, idx, ms));
    }
    let classes: Vec<SliceClass<'_>> = per_class
        .iter()
        .zip(&s.bounds_fine)
        .map(|((term, _, ms), (_, b))| SliceClass {
            measurements: ms,
            floor_msun: if *term == Term::WhiteDwarfMass {
                eopts.chandrasekhar_floor_msun
            } else {
                eopts.mmhb_floor_msun
            },
            bound_fine_msun: b,
        })
        .collect();
    let report = leave_one_out(&s.slice.upsilon_fine, &s.slice.chi2_fine, &classes, opts)?;
    let mut out: Vec<(usize, f64)> = report
        .drivers
        .iter()
        .map(|d| (per_class[d.class].1[d.index], d.shift))
        .collect();
    for (k, shift) in radius_drivers(conf, s, opts)?
        .into_iter()
        .chain(spin_drivers(s, opts)?)
    {
        match out.iter_mut().find(|(j, _)| *j == k) {
            Some(row) => row.1 = row.1.max(shift),
            None => out.push((k, shift)),
        }
    }
    out.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
    out.truncate(opts.top);
    Ok(out)
}

/// Leave-one-out shifts of the ϒ interval at τ = 0 (at `opts.level`) from removing each white
/// dwarf's radius term: (object index, shift), +∞ when an end opens or closes; objects that
/// do not move it are left out. With per-object radius floors this is exact, since the
/// likelihood is a sum: the slice without the object is the slice minus its own term on the
/// fine axis. With the shared radius scale the scale is fitted again without the object: the
/// whole radius term is rebuilt from the slice's cold radii without it and the scale eliminated
/// again at every fine point ([`radius_totals_fine_leaving_out`]), which is what a run without the object
/// gives. That costs a whole radius term per candidate, so it is done for the 2 × `opts.top`
/// candidates with the largest shifts at the scale held at its fitted value (the first-order
/// estimate, which ranks them); any further candidates keep that estimate.
pub fn radius_drivers(
    conf: &Confrontation,
    s: &SliceResult,
    opts: &DriverOptions,
) -> Result<Vec<(usize, f64)>, StatsError> {
    let fine = &s.slice.upsilon_fine;
    let dchi2 = opts.level.dchi2(1);
    let baseline = interval_from_slice(fine, &s.slice.chi2_fine, dchi2)?;
    let shift_of = |without: &[f64]| -> Result<f64, StatsError> {
        let iv = interval_from_slice(fine, without, dchi2)?;
        Ok(end_shift(baseline.lower, iv.lower).max(end_shift(baseline.upper, iv.upper)))
    };
    // (position among the radius objects, object index, shift at the scale held fixed)
    let mut held = held_shifts(s, &s.radius_fine, opts)?;
    let refit = conf.radius_shared.as_ref().filter(|_| {
        !s.radius_nodes_fine.is_empty()
            && s.radius_fine.len() == conf.radius_objects.len()
            && s.radius_total_fine.len() == fine.len()
    });
    if let Some(shared) = refit {
        held.sort_by(|a, b| b.2.total_cmp(&a.2).then(a.1.cmp(&b.1)));
        let n_refit = held.len().min(2 * opts.top);
        let positions: Vec<usize> = held[..n_refit].iter().map(|h| h.0).collect();
        let refitted =
            radius_totals_fine_leaving_out(s, &conf.radius_objects, &positions, Some(shared));
        let exact: Vec<f64> = refitted
            .iter()
            .map(|radius| {
                let without: Vec<f64> = s
                    .slice
                    .chi2_fine
                    .iter()
                    .zip(&s.radius_total_fine)
                    .zip(radius)
                    .map(|((c, all), r)| c - all + r)
                    .collect();
                shift_of(&without)
            })
            .collect::<Result<_, StatsError>>()?;
        for (h, e) in held.iter_mut().zip(exact) {
            h.2 = e;
        }
    }
    Ok(held
        .into_iter()
        .filter(|h| h.2 > 0.0)
        .map(|(_, k, shift)| (k, shift))
        .collect())
}

/// Leave-one-out shifts of the ϒ interval at τ = 0 (at `opts.level`) from removing each
/// object's spin test: (object index, shift), +∞ when an end opens or closes; objects that do
/// not move it are left out. Exact: the spin term is a sum over objects with nothing shared, so
/// the slice without the object is the slice minus its own −2 ln P on the fine axis.
pub fn spin_drivers(
    s: &SliceResult,
    opts: &DriverOptions,
) -> Result<Vec<(usize, f64)>, StatsError> {
    Ok(held_shifts(s, &s.spin_fine_per_object, opts)?
        .into_iter()
        .filter(|h| h.2 > 0.0)
        .map(|(_, k, shift)| (k, shift))
        .collect())
}

/// The shift of the interval from subtracting each object's own contribution along the fine
/// axis from the slice, for every candidate (an object whose contribution is not flat):
/// (position in `per_object`, object index, shift), zero shifts included.
fn held_shifts(
    s: &SliceResult,
    per_object: &[(usize, Vec<f64>)],
    opts: &DriverOptions,
) -> Result<Vec<(usize, usize, f64)>, StatsError> {
    let fine = &s.slice.upsilon_fine;
    let dchi2 = opts.level.dchi2(1);
    let baseline = interval_from_slice(fine, &s.slice.chi2_fine, dchi2)?;
    let mut out = Vec::new();
    for (pos, (k, contrib)) in per_object.iter().enumerate() {
        let spread = contrib.iter().copied().fold(f64::NEG_INFINITY, f64::max)
            - contrib.iter().copied().fold(f64::INFINITY, f64::min);
        if spread <= opts.candidate_min_minus_two_ln_p {
            continue; // a constant offset cannot move a Δχ² crossing
        }
        let without: Vec<f64> = s
            .slice
            .chi2_fine
            .iter()
            .zip(contrib)
            .map(|(c, r)| c - r)
            .collect();
        let iv = interval_from_slice(fine, &without, dchi2)?;
        let shift = end_shift(baseline.lower, iv.lower).max(end_shift(baseline.upper, iv.upper));
        out.push((pos, *k, shift));
    }
    Ok(out)
}

/// One driver of the τ = 0 interval, with the test it drives through.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SliceDriver {
    /// Index of the object in the caller's list.
    pub object: usize,
    /// max(|Δlower|, |Δupper|) in ϒ; +∞ when an end opens or closes.
    pub shift: f64,
    /// The test whose removal gives that shift: its mass bound (one-sided), for a white dwarf
    /// the mass–radius relation (two-sided), or its spin test (one-sided); an object found
    /// through more than one keeps the largest shift.
    pub test: TensionTest,
}

/// The drivers of one confrontation's τ = 0 slice under the likelihood the run actually uses:
/// largest shift first (ties by object index), at most `opts.top`.
///
/// Each mass-bound object is taken out of its bound's term as the run computes it: with a
/// shared systematic, the term without the object is eliminated over the shared shift again
/// at every point of the slice (a few objects can pin the shift, so holding it at δ̂ is not
/// enough) for the leading candidates — every candidate is first ranked with the shift held
/// at δ̂, and at least 2 × `opts.top` of them with a positive held shift (those tied with the
/// last included) are refitted, the others keep their held shift, as [`radius_drivers`] does
/// for the radius scale; with per-object floors its ln P is subtracted, which with the product likelihood is
/// the exact leave-one-out of [`leave_one_out`]. For a calibrated bound the object's calibrated
/// probability is removed with the deconvolved mass function held fixed (it is estimated from
/// all objects and is not re-estimated without the one removed). Candidates are the objects
/// whose −2 ln P at δ̂ exceeds `opts.candidate_min_minus_two_ln_p` at one of the two fine points
/// where the shifted bound B + δ̂(B) is extreme (ln P is monotone in the shifted bound).
/// White-dwarf radius terms are taken out as [`radius_drivers`] does (exact with per-object
/// floors; with the shared radius scale, the scale is fitted again without the object), spin
/// tests as [`spin_drivers`] does (exact).
pub fn slice_drivers_in_fit(
    conf: &Confrontation,
    objects: &[CatalogueObject],
    s: &SliceResult,
    opts: &DriverOptions,
) -> Result<Vec<SliceDriver>, StatsError> {
    let none = ReferencePoint {
        mmhb_msun: None,
        chandrasekhar_mu2_msun: None,
    };
    Ok(slice_drivers_in_fit_and_ln_p_at(conf, objects, s, opts, &none)?.0)
}

/// [`slice_drivers_in_fit`], and beside it each object's ln P in the fit at the class bounds of
/// `at` (the best fit's: what `objects.csv` turns into `sigma_best_in_fit`), taken from the
/// same per-object posterior the candidates' weights are read from instead of a second one
/// (each was ≈ 5 % of a 10⁶-object run). Per object, in object order: the value of
/// [`Confrontation::ln_p_in_fit`] at its class bound of `at`, to the bit, where the object was
/// weighed here (an informative member of a mass term on the slice); missing otherwise, for
/// the caller to compute.
pub fn slice_drivers_in_fit_and_ln_p_at(
    conf: &Confrontation,
    objects: &[CatalogueObject],
    s: &SliceResult,
    opts: &DriverOptions,
    at: &ReferencePoint,
) -> Result<(Vec<SliceDriver>, Vec<OptF64>), StatsError> {
    let mut ln_p_at = vec![OptF64::NONE; conf.uses.len()];
    let fine = &s.slice.upsilon_fine;
    let chi2 = &s.slice.chi2_fine;
    let dchi2 = opts.level.dchi2(1);
    let baseline = interval_from_slice(fine, chi2, dchi2)?;
    // Per mass term on the slice: its bound term, the bound B along the fine axis and the
    // shifted bound B + δ̂(B) there — what every member's ln P is read at (`ObjectTerm::ln_p`
    // forms the same sum; computed once here instead of once per member and point, where the
    // spline of δ̂ was an eighth of the stage at 10⁶ objects).
    let slice_terms: Vec<(Term, &[f64], Vec<f64>, &BoundTerm)> = s
        .bounds_fine
        .iter()
        .filter_map(|(term, b_fine)| {
            let bound = match term {
                Term::WhiteDwarfMass => Bound::Chandrasekhar,
                _ => Bound::Mmhb,
            };
            let bt = conf.bound_term(bound)?;
            if b_fine.len() != fine.len() || b_fine.is_empty() {
                return None;
            }
            let shifted = b_fine.iter().map(|&b| b + bt.delta_hat(b)).collect();
            Some((*term, b_fine.as_slice(), shifted, bt))
        })
        .collect();
    // (object, term, position in its class, bound along the fine axis, its shifted bound,
    // bound term)
    type Candidate<'a> = (usize, Term, usize, &'a [f64], &'a [f64], &'a BoundTerm);
    let mut candidates: Vec<Candidate<'_>> = Vec::new();
    for (term, b_fine, shifted, bt) in &slice_terms {
        let (b_fine, bt) = (*b_fine, *bt);
        let arg = |better: fn(f64, f64) -> bool| {
            (1..shifted.len()).fold(0, |k, j| if better(shifted[j], shifted[k]) { j } else { k })
        };
        let (k_lo, k_hi) = (arg(|a, b| a < b), arg(|a, b| a > b));
        // Every informative member's weight at the two ends (a table built per object, in
        // parallel; collected in order).
        let b_at = at.class_bound(*term);
        let members = conf.members(*term);
        let weighed: Vec<Option<(bool, OptF64)>> = members
            .par_iter()
            .enumerate()
            .map(|(pos, &k)| {
                let m = conf.uses[k].measurement(&objects[k]);
                if !m.informative() {
                    return None;
                }
                let ot = bt.object_light(*term, pos, &m);
                let weight = [k_lo, k_hi]
                    .iter()
                    .map(|&kk| -2.0 * ot.ln_p_at_shifted(shifted[kk]))
                    .fold(f64::NEG_INFINITY, f64::max);
                let ln_p = b_at.map_or(OptF64::NONE, |b| OptF64::some(ot.ln_p(b)));
                Some((weight > opts.candidate_min_minus_two_ln_p, ln_p))
            })
            .collect();
        for ((pos, &k), w) in members.iter().enumerate().zip(weighed) {
            let Some((chosen, ln_p)) = w else { continue };
            ln_p_at[k] = ln_p;
            if chosen {
                candidates.push((k, *term, pos, b_fine, shifted.as_slice(), bt));
            }
        }
    }
    let shift_of = |without: &[f64]| -> Result<f64, StatsError> {
        let iv = interval_from_slice(fine, without, dchi2)?;
        Ok(end_shift(baseline.lower, iv.lower).max(end_shift(baseline.upper, iv.upper)))
    };
    // First every candidate with the shared shift held at δ̂ (the object's ln P subtracted: a
    // sum, so removal is a subtraction; exact without a shared shift).
    let held: Vec<f64> = candidates
        .par_iter()
        .map(|&(k, term, pos, _, shifted, bt)| {
            let m = conf.uses[k].measurement(&objects[k]);
            let ot = bt.object(term, pos, &m);
            let without: Vec<f64> = chi2
                .iter()
                .zip(shifted)
                .map(|(&c, &b)| c + 2.0 * ot.ln_p_at_shifted(b))
                .collect();
            shift_of(&without)
        })
        .collect::<Result<_, StatsError>>()?;
    // With a shared shift, the shift is eliminated again without the object for the leading
    // candidates only — at least 2 × top by held shift, and every one tied with the last of
    // them — as the radius drivers do: one object among many barely moves δ̂, and the few that
    // pin it lead the held ranking. (Each refit eliminates δ at every fine point, ≈ 90
    // evaluations each: all candidates of a 10⁶-object catalogue took a minute.)
    // A candidate whose held shift is 0 (its ln P vanishes in the last digit where the
    // interval ends) is not refitted: its pull on δ̂ vanishes with it, and a refit would read
    // only the difference between the tabulated term and a fresh elimination.
    let mut order: Vec<usize> = (0..candidates.len())
        .filter(|&i| candidates[i].5.nuisance().is_some() && held[i] > 0.0)
        .collect();
    order.sort_by(|&a, &b| {
        held[b]
            .total_cmp(&held[a])
            .then(candidates[a].0.cmp(&candidates[b].0))
    });
    let n_refit = match order.get(2 * opts.top) {
        None => order.len(),
        Some(_) => {
            let last = held[order[2 * opts.top - 1]];
            2 * opts.top
                + order[2 * opts.top..]
                    .iter()
                    .take_while(|&&i| held[i] == last)
                    .count()
        }
    };
    let mut refit = vec![false; candidates.len()];
    for &i in &order[..n_refit] {
        refit[i] = true;
    }
    let mut out: Vec<SliceDriver> = candidates
        .par_iter()
        .zip(&held)
        .zip(&refit)
        .map(|((&(k, term, pos, b_fine, _, bt), &held), &refit)| {
            let shift = match bt.nuisance().filter(|_| refit) {
                None => held,
                // A shared shift: the bound's term without the object, the shift eliminated
                // again at each point, replaces the term with it.
                Some(n) => {
                    let m = conf.uses[k].measurement(&objects[k]);
                    let ot = bt.object(term, pos, &m);
                    let without: Vec<f64> = chi2
                        .iter()
                        .zip(b_fine)
                        .map(|(&c, &b)| {
                            let f = |d: f64| {
                                bt.data_minus_two_ln_l(b + d) + 2.0 * ot.ln_p_at_shifted(b + d)
                            };
                            c - bt.minus_two_ln_l(b) + eliminate(&f, &n).minus_two_ln_l
                        })
                        .collect();
                    shift_of(&without)?
                }
            };
            Ok(SliceDriver {
                object: k,
                shift,
                test: TensionTest::MassBound,
            })
        })
        .collect::<Result<_, StatsError>>()?;
    out.retain(|d| d.shift > 0.0);
    let radius = radius_drivers(conf, s, opts)?
        .into_iter()
        .map(|(k, shift)| (k, shift, TensionTest::MassRadius));
    let spin = spin_drivers(s, opts)?
        .into_iter()
        .map(|(k, shift)| (k, shift, TensionTest::Spin));
    for (k, shift, test) in radius.chain(spin) {
        match out.iter_mut().find(|d| d.object == k) {
            Some(d) if shift > d.shift => {
                d.shift = shift;
                d.test = test;
            }
            Some(_) => {}
            None => out.push(SliceDriver {
                object: k,
                shift,
                test,
            }),
        }
    }
    out.sort_by(|a, b| b.shift.total_cmp(&a.shift).then(a.object.cmp(&b.object)));
    out.truncate(opts.top);
    Ok((out, ln_p_at))
}
