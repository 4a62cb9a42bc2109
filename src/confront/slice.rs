//! The one-parameter view at τ = 0: the joint likelihood along ϒ on a 10× finer axis, from
//! which the ϒ interval is read and on which the drivers are found.
//!
//! The mass classes depend on a grid point only through their bound, which is smooth in ϒ, so
//! each bound is interpolated along the coarse τ = 0 row (not-a-knot cubic) and the class curve
//! is evaluated on the fine axis. The white-dwarf radius term and the spin term (a break-up
//! period ∝ R^{3/2} against a floor of a few per cent) are sharply curved in ϒ, so the predicted
//! cold radii are interpolated instead and both likelihoods are evaluated exactly at each fine
//! point. The paper's statistics section defines the interval; this module only builds the
//! slice it is read from.
//!
//! ```
//! use dwarfbound::catalogue::{CatalogueObject, MassLimit, ObjectClass, ObjectDetails, OptF64};
//! use dwarfbound::confront::engine::{confront, BoundSurface, EngineOptions};
//! use dwarfbound::confront::slice::{tau0_slice, SLICE_REFINE};
//! use dwarfbound::confront::wd_radius::{WdQuery, WdStandard};
//! struct Tilted;
//! impl BoundSurface for Tilted {
//!     fn upsilon(&self) -> &[f64] { &[-0.2, -0.1, 0.0, 0.1, 0.2] }
//!     fn tau(&self) -> &[f64] { &[0.0] }
//!     fn mmhb_msun(&self, i: usize) -> Option<f64> { Some(0.075 * (1.0 + self.upsilon()[i])) }
//!     fn chandrasekhar_mu2_msun(&self, _i: usize) -> Option<f64> { Some(1.4563) }
//!     fn wd_radii_rsun(&self, _i: usize, q: &[(f64, f64)]) -> Vec<Option<f64>> { vec![None; q.len()] }
//!     fn wd_standard_radii(&self, q: &[WdQuery]) -> Vec<Option<WdStandard>> { vec![None; q.len()] }
//! }
//! let star = CatalogueObject { id: "S1".into(), class: ObjectClass::HBurning, mass_msun: 0.076,
//!     mass_err_lo_msun: OptF64::some(0.002), mass_err_hi_msun: OptF64::some(0.002), mass_limit: MassLimit::None,
//!     mass_method: Default::default(),
//!     details: ObjectDetails { age_gyr: OptF64::some(5.0), ..Default::default() }.into(),
//!     source_file: "a.csv".into(), source_row: 1 };
//! let objects = [star];
//! let opts = EngineOptions::default();
//! let conf = confront(&objects, &Tilted, &opts).unwrap();
//! let s = tau0_slice(&conf, &Tilted).unwrap().unwrap();
//! assert_eq!(s.slice.upsilon_fine.len(), 4 * SLICE_REFINE + 1);
//! ```

use rayon::prelude::*;

use super::engine::{Bound, BoundSurface, Confrontation, EngineOptions, Term, TermMembers};
use super::mass_terms::{BoundTerm, Systematics};
use super::nuisance::SharedNuisance;
use super::prob::StatsError;
use super::reduce::{
    bound_range, spline_second_derivatives, CubicSpline, SplineEnd, SplineWeights,
};
use super::regions::{self, UpsilonSlice};
use super::wd_radius::{
    radius_term_from, radius_total_from, radius_totals_leaving_out, shared_nuisance, split_floor,
    warm_started, ObjectRadius, RadiusTerm,
};
use crate::catalogue::CatalogueObject;
use crate::theory::white_dwarf::RadiusQueries;

/// The ϒ interval at τ = 0 is read on a grid this many times finer than the ϒ axis (the
/// paper's statistics section: 10).
pub const SLICE_REFINE: usize = 10;

/// Fine points per block of the radius term along the fine axis: blocks run in parallel, the
/// points of a block in order, each point's shared-scale search starting at the previous
/// point's δ̂. Fixed (not set by the thread count), so that the outputs are too.
const FINE_BLOCK: usize = 16;

/// The τ = 0 slice of the joint likelihood on the fine ϒ axis, with what the driver analysis
/// needs to take one object out of it.
#[derive(Debug, Clone)]
pub struct SliceResult {
    /// The slice and its intervals.
    pub slice: UpsilonSlice,
    /// Per mass term (in the order of the confrontation's curves): its bound along the fine
    /// axis, M☉ (class value, μe = 2 for white dwarfs).
    pub bounds_fine: Vec<(Term, Vec<f64>)>,
    /// Per white dwarf with a radius term: (object index, its −2 ln L along the fine axis; with
    /// a shared radius systematic, at the shared scale profiled at each fine point).
    pub radius_fine: Vec<(usize, Vec<f64>)>,
    /// The radius terms' −2 ln L of all objects together along the fine axis (with a shared
    /// radius systematic not the sum of `radius_fine`: the scale is eliminated jointly).
    pub radius_total_fine: Vec<f64>,
    /// Per fine point, the structure solver's cold radius at every radius object's mass nodes
    /// (object after object, as [`super::wd_radius::radius_term`] takes them): what the radius term is built
    /// from, kept so that it can be rebuilt without one object or with another floor
    /// treatment ([`radius_total_fine`]). Empty in the slice of [`tau0_slice_other_floor`].
    pub radius_nodes_fine: FineRadii,
    /// The spin term's −2 ln L along the fine axis (zero without spin tests).
    pub spin_fine: Vec<f64>,
    /// Per object with a spin test: (object index, its −2 ln P along the fine axis), so that the
    /// driver analysis can take one spin test out of the slice.
    pub spin_fine_per_object: Vec<(usize, Vec<f64>)>,
}

/// The τ = 0 slice of `conf` (computed on `surface`), or `None` when the grid
/// has no τ = 0 row or fewer than two ϒ values with a model on it.
///
/// The slice uses the contiguous run of ϒ values with a model on the τ = 0 row that holds the
/// most points: failures sit at the low-ϒ existence bound, and a spline must not cross them.
pub fn tau0_slice(
    conf: &Confrontation,
    surface: &dyn BoundSurface,
) -> Result<Option<SliceResult>, StatsError> {
    let nu = conf.n_upsilon;
    let Some(j0) = surface.tau().iter().position(|&t| t == 0.0) else {
        return Ok(None);
    };
    let ok: Vec<bool> = (0..nu).map(|i| conf.joint[j0 * nu + i].is_some()).collect();
    let (mut best, mut start) = ((0, 0), None);
    for (i, ok_i) in ok.iter().copied().chain(std::iter::once(false)).enumerate() {
        match (ok_i, start) {
            (true, None) => start = Some(i),
            (false, Some(s)) => {
                if i - s > best.1 - best.0 {
                    best = (s, i);
                }
                start = None;
            }
            _ => {}
        }
    }
    let (a, b) = best;
    if b - a < 2 {
        return Ok(None);
    }
    let axis: Vec<f64> = surface.upsilon()[a..b].to_vec();
    let idx = |i: usize| j0 * nu + i;
    let mut splines: Vec<(Term, CubicSpline)> = Vec::new();
    for (term, _) in &conf.class_counts {
        let ys: Vec<f64> = (a..b)
            .map(|i| {
                let i = idx(i);
                match term {
                    Term::WhiteDwarfMass => surface.chandrasekhar_mu2_msun(i),
                    _ => surface.mmhb_msun(i),
                }
                .unwrap_or(f64::NAN)
            })
            .collect();
        splines.push((*term, CubicSpline::new(&axis, &ys, SplineEnd::NotAKnot)?));
    }
    let fine = regions::refine_axis(&axis, SLICE_REFINE)?;
    let row = Row {
        axis: &axis,
        first: a,
        j0,
    };
    let (radius_fine, radius_total, radius_nodes_fine) =
        radius_terms_on_fine_axis(conf, surface, &row, &fine)?;
    let mmhb_fine: Option<Vec<f64>> = splines
        .iter()
        .find(|(t, _)| matches!(t, Term::HBurning | Term::BrownDwarf))
        .map(|(_, sp)| fine.iter().map(|&u| sp.eval(u)).collect());
    let spin_fine_per_object =
        spin_terms_on_fine_axis(conf, surface, &row, &fine, mmhb_fine.as_deref())?;
    let spin_fine: Vec<f64> = (0..fine.len())
        .map(|k| spin_fine_per_object.iter().map(|(_, v)| v[k]).sum())
        .collect();
    let chi2_fine: Vec<f64> = fine
        .iter()
        .enumerate()
        .map(|(k, &u)| {
            // The mass terms with their shared systematics eliminated (and the population
            // term, if any), at the bounds interpolated along ϒ.
            let at = |want: fn(Term) -> bool| {
                splines
                    .iter()
                    .find(|(t, _)| want(*t))
                    .map(|(_, sp)| sp.eval(u))
            };
            let s = conf.mass_minus_two_ln_l(
                at(|t| matches!(t, Term::HBurning | Term::BrownDwarf)),
                at(|t| t == Term::WhiteDwarfMass),
            );
            s + radius_total.get(k).copied().unwrap_or(0.0) + spin_fine[k]
        })
        .collect();
    let slice = regions::slice_from_values(fine, chi2_fine)?;
    let bounds_fine = splines
        .iter()
        .map(|(t, s)| (*t, slice.upsilon_fine.iter().map(|&u| s.eval(u)).collect()))
        .collect();
    Ok(Some(SliceResult {
        slice,
        bounds_fine,
        radius_fine,
        radius_total_fine: radius_total,
        radius_nodes_fine,
        spin_fine,
        spin_fine_per_object,
    }))
}

/// The part of the τ = 0 row the slice uses: its ϒ values, the index of the first of them on
/// the ϒ axis, and the row's τ index.
struct Row<'a> {
    axis: &'a [f64],
    first: usize,
    j0: usize,
}

/// (object index, its −2 ln L along the fine axis) per white dwarf with a radius term.
type PerObjectFine = Vec<(usize, Vec<f64>)>;

/// The cold radii of a list of queries (mass, μe) along the fine τ = 0 axis, kept as each
/// query's interpolant along the coarse row and evaluated at a fine point on demand
/// ([`FineRadii::at`]). Holding every fine point's radii instead (fine points × queries, with
/// the refined axis ten times the row) cost ~1 MB per white dwarf with a radius on a 201-point
/// row: gigabytes for a catalogue of ten thousand.
///
/// The interpolants are two flat tables with the row's axis held once: the radius at each
/// coarse point and the spline's second derivative there (17 bytes per query and point). One
/// [`CubicSpline`] per query held its own copy of the axis and of the values besides, in four
/// allocations: about 45 bytes per query and point, 90 MB of a 2 000-white-dwarf run's 250 MB
/// peak (heaptrack), 2.7 GB at 20 000. The tables are point-major (every query at one coarse
/// point, then the next): a fine point reads its two coarse points' rows front to back, where
/// the query-major layout took a cache miss per query and knot (perf on 2 000 white dwarfs with
/// radii: the evaluation was 12 % of the run, nearly all of it waiting on memory).
#[derive(Debug, Clone, Default)]
pub struct FineRadii {
    axis: Vec<f64>,
    fine: Vec<f64>,
    /// A spline on the row's axis (any values): where a fine point falls and its weights are
    /// the same for every query. `None` when no query has a radius at every coarse point.
    knots: Option<CubicSpline>,
    /// Per coarse point and query (point-major, index `point · queries + query`): the cold
    /// radius, 0 where there is none.
    ys: Vec<f64>,
    /// Per coarse point and query: whether there is a radius.
    present: Vec<bool>,
    /// Per coarse point and query: the not-a-knot spline's second derivative, for a query
    /// with a radius at every point (0 otherwise).
    second: Vec<f64>,
    /// Per query: whether it has a radius at every coarse point (and so a spline).
    complete: Vec<bool>,
}

impl FineRadii {
    /// Number of fine points (0 when nothing was kept).
    pub fn len(&self) -> usize {
        self.fine.len()
    }

    /// Whether nothing was kept.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Every query's cold radius at fine point `k`, in the order of the queries.
    pub fn at(&self, k: usize) -> Vec<Option<f64>> {
        let x = self.fine[k];
        let w = self.weights(x);
        (0..self.complete.len())
            .map(|q| self.value(q, x, w.as_ref()))
            .collect()
    }

    /// The spline weights at `x`, shared by every query's spline (all are on the row's axis).
    fn weights(&self, x: f64) -> Option<SplineWeights> {
        self.knots.as_ref().map(|sp| sp.weights(x))
    }

    /// Every query's cold radii along the whole fine axis, one vector per query (for the few
    /// spin tests, which read each query at every fine point).
    fn along_each(&self) -> Vec<Vec<Option<f64>>> {
        let weights: Vec<Option<SplineWeights>> =
            self.fine.iter().map(|&x| self.weights(x)).collect();
        (0..self.complete.len())
            .into_par_iter()
            .map(|q| {
                self.fine
                    .iter()
                    .zip(&weights)
                    .map(|(&x, w)| self.value(q, x, w.as_ref()))
                    .collect()
            })
            .collect()
    }

    /// Query `q`'s spline value inside the row, or linear between two points that have a
    /// radius, `None` where either lacks one.
    /// `w`: the spline weights at `x` ([`FineRadii::weights`]).
    fn value(&self, q: usize, x: f64, w: Option<&SplineWeights>) -> Option<f64> {
        let axis = &self.axis;
        let n = axis.len();
        let nq = self.complete.len();
        if self.complete[q] {
            // A complete query means `knots` exists, so its weights were given.
            return w.map(|w| {
                let (k0, k1) = (w.interval() * nq + q, (w.interval() + 1) * nq + q);
                w.eval_values(self.ys[k0], self.ys[k1], self.second[k0], self.second[k1])
            });
        }
        let j = axis.partition_point(|&v| v <= x).clamp(1, n - 1);
        let t = (x - axis[j - 1]) / (axis[j] - axis[j - 1]);
        let at = |i: usize| self.present[i * nq + q].then(|| self.ys[i * nq + q]);
        match (at(j - 1), at(j)) {
            (Some(y0), Some(y1)) => Some(y0 + t * (y1 - y0)),
            _ => None,
        }
    }
}

/// Changes a coarse point's radii before they are interpolated: (grid index, radii).
type AdjustRadii<'a> = dyn Fn(usize, &mut [Option<f64>]) + Sync + 'a;

/// −2 ln L of each white dwarf's radius term along the fine τ = 0 axis: (object index, values),
/// and the whole radius term there (shared systematic eliminated).
///
/// The term is sharply curved in ϒ (radii are measured to a few per cent), so interpolating it
/// between coarse grid points would overstate Δχ² between them and make the interval depend on
/// the grid spacing. The predicted radius R(M; ϒ) is smooth in ϒ, so it is interpolated instead
/// (not-a-knot cubic along the coarse axis, per quadrature mass node) and the likelihood is
/// evaluated exactly at every fine point. Where a node's radius is missing at a coarse point
/// (mass above the maximum), the neighbouring interval falls back to linear interpolation or
/// to "no model". With a shared radius systematic, each object's values are its term at the
/// profiled shared scale of that fine point; the whole term (second value) adds the prior or
/// the marginalisation, so taking one object's values out of the slice holds the shared scale
/// at its fitted value (exact with per-object floors).
fn radius_terms_on_fine_axis(
    conf: &Confrontation,
    surface: &dyn BoundSurface,
    row: &Row<'_>,
    fine: &[f64],
) -> Result<(PerObjectFine, Vec<f64>, FineRadii), StatsError> {
    // One batched lookup per coarse point for every object's nodes (a point's table is
    // resampled once, not once per object), then per node (object after object, in the order
    // of `all_queries`) its cold radius along the fine axis.
    let all_queries: Vec<(f64, f64)> = conf
        .radius_objects
        .iter()
        .flat_map(|r| {
            let mu_e = conf.uses[r.index].mu_e;
            r.nodes.iter().map(move |&(m, _)| (m, mu_e))
        })
        .collect();
    // Spinning white dwarfs carry their slow-rotation factor at each coarse point (as on the
    // grid), and the corrected radii are interpolated along the row.
    let spun = super::spin::RadiusCorrections::new(&conf.spins, &conf.radius_objects);
    let adjust = |i: usize, radii: &mut [Option<f64>]| spun.apply(&conf.spins, surface, i, radii);
    let nodes_fine = fine_radii(
        surface,
        row,
        conf.n_upsilon,
        fine,
        &all_queries,
        (!spun.is_empty()).then_some(&adjust),
    )?;
    // At each fine point the radius term of all objects together (the shared scale, if any, is
    // eliminated there) from every node's cold radius there (the layout `radius_term` takes).
    let terms: Vec<RadiusTerm> = warm_started(fine.len(), FINE_BLOCK, |k, start| {
        let t = radius_term_from(
            &conf.radius_objects,
            &nodes_fine.at(k),
            fine[k],
            conf.radius_shared.as_ref(),
            start,
        );
        let delta_hat = t.delta_hat;
        (t, delta_hat)
    });
    let per_object = conf
        .radius_objects
        .iter()
        .enumerate()
        .map(|(j, r)| (r.index, terms.iter().map(|t| t.per_object[j]).collect()))
        .collect();
    let total = terms.iter().map(|t| t.minus_two_ln_l).collect();
    Ok((per_object, total, nodes_fine))
}

/// The whole radius term along `s`'s fine axis, rebuilt from the cold radii the slice kept
/// (`s.radius_nodes_fine`) for `objects` — the confrontation's radius objects, or copies of
/// them with another split of the floor — without the object at position `skip` (its mass
/// nodes dropped too), with the shared scale `shared` eliminated again at every fine point.
/// With `skip` this is the exact leave-one-out of a white dwarf under a shared radius scale;
/// with `skip = None` and the run's own objects and scale it returns `s.radius_total_fine`.
pub fn radius_total_fine(
    s: &SliceResult,
    objects: &[ObjectRadius],
    skip: Option<usize>,
    shared: Option<&SharedNuisance>,
) -> Vec<f64> {
    match skip {
        Some(j) => radius_totals_fine_leaving_out(s, objects, &[j], shared)
            .pop()
            .unwrap_or_default(),
        None => {
            let fine = &s.slice.upsilon_fine;
            warm_started(fine.len(), FINE_BLOCK, |k, start| {
                radius_total_from(objects, &s.radius_nodes_fine.at(k), fine[k], shared, start)
            })
        }
    }
}

/// [`radius_total_fine`] without each object of `leave_out` in turn (positions in `objects`):
/// one vector along the fine axis per entry, the same values to the bit. All of them are
/// computed together, a fine point at a time, so that each point's mixtures are flattened once
/// and the searches share the scales they have in common
/// ([`super::wd_radius::radius_totals_leaving_out`]).
pub fn radius_totals_fine_leaving_out(
    s: &SliceResult,
    objects: &[ObjectRadius],
    leave_out: &[usize],
    shared: Option<&SharedNuisance>,
) -> Vec<Vec<f64>> {
    let per_point: Vec<Vec<f64>> = s
        .slice
        .upsilon_fine
        .par_iter()
        .enumerate()
        .map(|(k, &upsilon)| {
            radius_totals_leaving_out(
                objects,
                &s.radius_nodes_fine.at(k),
                upsilon,
                shared,
                leave_out,
            )
        })
        .collect();
    (0..leave_out.len())
        .map(|c| per_point.iter().map(|p| p[c]).collect())
        .collect()
}

/// Cold radii of `queries` along the fine τ = 0 axis: looked up once per coarse point
/// (batched), then interpolated per query along the row (not-a-knot cubic; linear where a
/// neighbouring point has no radius, `None` where neither has one), evaluated on demand.
/// `adjust`, if given, changes each coarse point's radii (grid index, radii) before they are
/// interpolated.
fn fine_radii(
    surface: &dyn BoundSurface,
    row: &Row<'_>,
    nu: usize,
    fine: &[f64],
    queries: &[(f64, f64)],
    adjust: Option<&AdjustRadii<'_>>,
) -> Result<FineRadii, StatsError> {
    let axis = row.axis;
    let n = axis.len();
    let prepared = RadiusQueries::new(queries);
    let n_queries = queries.len();
    let mut ys = vec![0.0; n_queries * n];
    let mut present = vec![false; n_queries * n];
    // Each coarse point's lookup (every query's radius there) is its row of the point-major
    // tables.
    ys.par_chunks_mut(n_queries.max(1))
        .zip(present.par_chunks_mut(n_queries.max(1)))
        .enumerate()
        .for_each(|(i, (y, p))| {
            let at = row.j0 * nu + row.first + i;
            let mut radii = surface.wd_radii_prepared(at, &prepared);
            if let Some(f) = adjust {
                f(at, &mut radii);
            }
            for ((y, p), r) in y.iter_mut().zip(p.iter_mut()).zip(&radii) {
                if let Some(r) = *r {
                    *y = r;
                    *p = true;
                }
            }
        });
    let complete: Vec<bool> = (0..n_queries)
        .into_par_iter()
        .map(|q| (0..n).all(|i| present[i * n_queries + q]))
        .collect();
    // The knots' spline checks the axis as each query's own spline did (≥ 2 strictly
    // increasing points), before any second derivative is formed on it.
    let knots = if complete.iter().any(|&c| c) {
        Some(CubicSpline::new(axis, &vec![0.0; n], SplineEnd::NotAKnot)?)
    } else {
        None
    };
    // Each complete query's second derivatives from its own row (gathered across the
    // point-major table), a block of queries at a time so that the transposed copies stay small.
    let mut second = vec![0.0; n_queries * n];
    const QUERY_BLOCK: usize = 4096;
    for first in (0..n_queries).step_by(QUERY_BLOCK) {
        let block: Vec<Option<Vec<f64>>> = (first..(first + QUERY_BLOCK).min(n_queries))
            .into_par_iter()
            .map(|q| -> Result<Option<Vec<f64>>, StatsError> {
                if !complete[q] {
                    return Ok(None);
                }
                let y: Vec<f64> = (0..n).map(|i| ys[i * n_queries + q]).collect();
                if y.iter().any(|v| !v.is_finite()) {
                    // The error a spline through these values gives.
                    CubicSpline::new(axis, &y, SplineEnd::NotAKnot)?;
                }
                Ok(Some(spline_second_derivatives(
                    axis,
                    &y,
                    SplineEnd::NotAKnot,
                )))
            })
            .collect::<Result<_, StatsError>>()?;
        for (q, s) in (first..).zip(block) {
            for (i, v) in s.into_iter().flatten().enumerate() {
                second[i * n_queries + q] = v;
            }
        }
    }
    Ok(FineRadii {
        axis: axis.to_vec(),
        fine: fine.to_vec(),
        knots,
        ys,
        present,
        second,
        complete,
    })
}

/// −2 ln P of each spin test along the fine τ = 0 axis: (object index, values).
///
/// Evaluated as the radius term is: the break-up period goes as R^{3/2} and the floor is a few
/// per cent of it, so the term can be as sharply curved in ϒ as the radius term. The cold radii
/// of each object's mass nodes are interpolated along the row ([`fine_radii`]) and
/// the test is evaluated exactly at every fine point (equal to the grid's values at the coarse
/// points). A test without a model at a fine point adds nothing there, as on the grid. A
/// corrected brown dwarf's or star's MMHB change ([`super::spin::MmhbSlowRotation`]) is added at
/// the fine point's MMHB (`mmhb_fine`, the class spline) with its factor interpolated along the
/// row (not-a-knot cubic: the factor is smooth in ϒ).
fn spin_terms_on_fine_axis(
    conf: &Confrontation,
    surface: &dyn BoundSurface,
    row: &Row<'_>,
    fine: &[f64],
    mmhb_fine: Option<&[f64]>,
) -> Result<Vec<(usize, Vec<f64>)>, StatsError> {
    if conf.spins.is_empty() {
        return Ok(Vec::new());
    }
    let prepared = super::spin::spin_queries(&conf.spins);
    let per_query =
        fine_radii(surface, row, conf.n_upsilon, fine, prepared.pairs(), None)?.along_each();
    // The MMHB factors of corrected objects at the coarse points of the row.
    let coarse: Vec<Vec<super::spin::SpinAt>> = if conf.spins.iter().any(|s| s.mmhb.is_some()) {
        (0..row.axis.len())
            .into_par_iter()
            .map(|i| {
                super::spin::spins_at_with(
                    &conf.spins,
                    &prepared,
                    surface,
                    row.j0 * conf.n_upsilon + row.first + i,
                    false,
                )
            })
            .collect()
    } else {
        Vec::new()
    };
    let mut out = Vec::with_capacity(conf.spins.len());
    let mut at = 0;
    for (j, s) in conf.spins.iter().enumerate() {
        let n = s.n_queries();
        let mine = &per_query[at..at + n];
        at += n;
        let mut values: Vec<f64> = (0..fine.len())
            .map(|k| {
                let cold: Vec<Option<f64>> = mine.iter().map(|v| v[k]).collect();
                -2.0 * s.ln_p_at(&cold).unwrap_or(0.0)
            })
            .collect();
        if let (Some(m), Some(b)) = (&s.mmhb, mmhb_fine) {
            let f: Vec<f64> = coarse
                .iter()
                .map(|c| c[j].mmhb_factor.unwrap_or(m.factor_standard))
                .collect();
            let spline = CubicSpline::new(row.axis, &f, SplineEnd::NotAKnot)?;
            for ((v, &u), &b) in values.iter_mut().zip(fine).zip(b) {
                *v += m.minus_two_ln_l_change(spline.eval(u), b);
            }
        }
        out.push((s.index, values));
    }
    Ok(out)
}

/// The τ = 0 slice under the other treatment of the theory floors than the one `eopts` asks
/// for (per-object floors when the run shares them, shared when it does not), in the same run:
/// each mass bound's term is rebuilt from the same objects and the same grid range of the
/// bound, and evaluated at the bounds of `main` (the run's own slice) along its fine axis; the
/// white-dwarf radius term is rebuilt from the same cold radii with each object's total floor
/// split again (the shared radius scale (1 + δ) is on exactly when the floors are shared, as in
/// a run made with that treatment) and its scale eliminated again at every fine point; the spin
/// and any population term are `main`'s. Returns the other treatment and its slice. Reports
/// show the two intervals side by side, which is the effect of the shared systematics.
pub fn tau0_slice_other_floor(
    conf: &Confrontation,
    objects: &[CatalogueObject],
    surface: &dyn BoundSurface,
    eopts: &EngineOptions,
    main: &SliceResult,
) -> Result<(Systematics, SliceResult), StatsError> {
    let other = match eopts.mass_terms.systematics {
        Systematics::Shared => Systematics::PerObject,
        Systematics::PerObject => Systematics::Shared,
    };
    let mut mt = eopts.mass_terms.clone();
    mt.systematics = other;
    mt.reduce = eopts.reduce.clone();
    let n = surface.upsilon().len() * surface.tau().len();
    let fine = &main.slice.upsilon_fine;
    let along = |want: fn(Term) -> bool| {
        main.bounds_fine
            .iter()
            .find(|(t, _)| want(*t))
            .map(|(_, v)| v.as_slice())
    };
    let mmhb_fine = along(|t| matches!(t, Term::HBurning | Term::BrownDwarf));
    let chandra_fine = along(|t| t == Term::WhiteDwarfMass);
    // Each bound's term along the fine axis, read as soon as the term is built so that it is
    // dropped before the next one is built (the two were held together at a large run's peak).
    let mut terms: Vec<Vec<Option<f64>>> = Vec::new();
    for (bound, floor, classes) in [
        (
            Bound::Mmhb,
            eopts.mmhb_floor_msun,
            vec![Term::HBurning, Term::BrownDwarf],
        ),
        (
            Bound::Chandrasekhar,
            eopts.chandrasekhar_floor_msun,
            vec![Term::WhiteDwarfMass],
        ),
    ] {
        // Positions, the measurements made again where read: lists of them were 48 bytes per
        // object, as large as the main run's peak.
        let ms: Vec<(Term, TermMembers<'_>)> = classes
            .into_iter()
            .map(|t| Ok((t, conf.term_members(objects, t)?)))
            .collect::<Result<Vec<_>, StatsError>>()?
            .into_iter()
            .filter(|(_, v)| !v.positions().is_empty())
            .collect();
        if ms.is_empty() {
            continue;
        }
        let values: Vec<f64> = (0..n)
            .filter_map(|i| match bound {
                Bound::Mmhb => surface.mmhb_msun(i),
                Bound::Chandrasekhar => surface.chandrasekhar_mu2_msun(i),
            })
            .collect();
        let Some(range) = bound_range(&values) else {
            continue;
        };
        let refs: Vec<(Term, &TermMembers<'_>)> = ms.iter().map(|(t, v)| (*t, v)).collect();
        let term = BoundTerm::build(&refs, floor, range, &mt)?;
        let along_fine = match bound {
            Bound::Mmhb => mmhb_fine,
            Bound::Chandrasekhar => chandra_fine,
        };
        terms.push(
            (0..fine.len())
                .map(|k| {
                    let b = along_fine.and_then(|v| v.get(k).copied())?;
                    Some(term.minus_two_ln_l(b))
                })
                .collect(),
        );
    }
    // The radius term under the other treatment: total floors split again, scale on or off.
    let other_shared = shared_nuisance(&eopts.radius, &mt);
    let other_sigma = other_shared.map_or(0.0, |n| n.sigma);
    let radius_objects: Vec<ObjectRadius> = conf
        .radius_objects
        .iter()
        .map(|r| {
            let (floor_fraction, shared_fraction) =
                split_floor(r.floor_fraction.hypot(r.shared_fraction), other_sigma);
            ObjectRadius {
                floor_fraction,
                shared_fraction,
                ..r.clone()
            }
        })
        .collect();
    let radius_total = if radius_objects.is_empty() || main.radius_nodes_fine.is_empty() {
        main.radius_total_fine.clone()
    } else {
        radius_total_fine(main, &radius_objects, None, other_shared.as_ref())
    };
    let chi2_fine: Vec<f64> = (0..fine.len())
        .map(|k| {
            let mmhb = mmhb_fine.and_then(|v| v.get(k).copied());
            let mut s: f64 = radius_total.get(k).copied().unwrap_or(0.0)
                + main.spin_fine.get(k).copied().unwrap_or(0.0);
            for t in &terms {
                if let Some(v) = t[k] {
                    s += v;
                }
            }
            if let (Some(pop), Some(b)) = (&conf.population, mmhb) {
                s += -2.0 * pop.ln_term(b);
            }
            s
        })
        .collect();
    let slice = regions::slice_from_values(fine.clone(), chi2_fine)?;
    Ok((
        other,
        SliceResult {
            slice,
            bounds_fine: main.bounds_fine.clone(),
            radius_fine: main.radius_fine.clone(),
            radius_total_fine: radius_total,
            radius_nodes_fine: FineRadii::default(),
            spin_fine: main.spin_fine.clone(),
            spin_fine_per_object: main.spin_fine_per_object.clone(),
        },
    ))
}
