//! Per-object verdicts at the two reference points, standard gravity (ϒ = τ = 0) and the best
//! fit: each object's bound, tension and probability there, the list of objects in tension with
//! standard gravity, the Šidák verdict on whether the best fit is consistent at all, and the
//! crowding check around the MMHB.
//!
//! A reference point is seen only through [`ReferencePoint`] (its class bounds) and the radius
//! tests prepared by the engine ([`super::wd_radius::ObjectRadius`]), so this module, like the
//! rest of the comparator, knows nothing of how the theory solved them.
//!
//! ```
//! use dwarfbound::catalogue::{CatalogueObject, MassLimit, ObjectClass, ObjectDetails, OptF64};
//! use dwarfbound::confront::engine::EngineOptions;
//! use dwarfbound::confront::tension::{mass_tensions, ReferencePoint};
//! let dwarf = CatalogueObject { id: "B1".into(), class: ObjectClass::BrownDwarf, mass_msun: 0.095,
//!     mass_err_lo_msun: OptF64::some(0.002), mass_err_hi_msun: OptF64::some(0.002), mass_limit: MassLimit::None,
//!     mass_method: Default::default(),
//!     details: ObjectDetails { age_gyr: OptF64::some(5.0), ..Default::default() }.into(),
//!     source_file: "a.csv".into(), source_row: 1 };
//! // A brown dwarf 0.02 M☉ above an MMHB of 0.075 M☉ (floor 0.005 M☉) is on the wrong side.
//! let point = ReferencePoint { mmhb_msun: Some(0.075), chandrasekhar_mu2_msun: Some(1.4563) };
//! let t = mass_tensions(&[dwarf], &point, &EngineOptions::default(), 3.0);
//! assert_eq!(t.len(), 1);
//! assert!(t[0].1 > 3.0);
//! ```

use rayon::prelude::*;

use super::engine::{
    self, BoundSurface, Confrontation, EngineOptions, ObjectUse, ObjectUses, Term,
};
use super::regions::{
    absolute_consistency, crowding, AbsoluteConsistency, Crowding, CrowdingOptions,
};
use super::spin::{ObjectSpin, SpinVerdict};
use super::wd_radius::ObjectRadius;
use crate::catalogue::{CatalogueObject, OptF64};

/// How many of the least probable objects the consistency verdict names.
const WORST_LISTED: usize = 5;

/// What the verdicts need of one grid or reference point.
#[derive(Clone, Copy)]
pub struct ReferencePoint {
    /// The MMHB used against data there, M☉; `None` where no model exists.
    pub mmhb_msun: Option<f64>,
    /// The Chandrasekhar mass for μe = 2 there, M☉.
    pub chandrasekhar_mu2_msun: Option<f64>,
}

impl ReferencePoint {
    /// The bound of a mass term at this point (class value: μe = 2 for white dwarfs).
    pub fn class_bound(&self, term: Term) -> Option<f64> {
        match term {
            Term::WhiteDwarfMass => self.chandrasekhar_mu2_msun,
            Term::HBurning | Term::BrownDwarf => self.mmhb_msun,
            Term::WhiteDwarfRadius | Term::Spin => None,
        }
    }

    /// The bound object `o` faces at this point, M☉: its class's bound scaled to the object
    /// by its use `u` (by (2/μe)² for a white dwarf, by the slow-rotation factor of a spinning
    /// star), for every object, also one left out of the fit. Made when it is written rather
    /// than held per object (one product).
    pub fn object_bound(&self, o: &CatalogueObject, u: &ObjectUse) -> Option<f64> {
        self.class_bound(Term::mass_test_of(o.class))
            .map(|b| b * u.bound_scale)
    }
}

/// Which test an object is in tension with.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TensionTest {
    /// Its class's mass bound (one-sided).
    MassBound,
    /// The white-dwarf mass–radius relation (two-sided).
    MassRadius,
    /// The spin (break-up) test (one-sided: positive = spinning faster than break-up).
    Spin,
}

impl TensionTest {
    /// Name in outputs.
    pub fn name(self) -> &'static str {
        match self {
            TensionTest::MassBound => "mass_bound",
            TensionTest::MassRadius => "mass_radius",
            TensionTest::Spin => "spin",
        }
    }

    /// How its σ reads: `one-sided` (mass bound: positive = wrong side of the bound; spin:
    /// positive = faster than break-up) or `two-sided` (mass–radius: signed, positive = larger
    /// than the model).
    pub fn sidedness(self) -> &'static str {
        match self {
            TensionTest::MassBound | TensionTest::Spin => "one-sided",
            TensionTest::MassRadius => "two-sided",
        }
    }
}

/// An object in tension with standard gravity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tension {
    /// Index of the object.
    pub object: usize,
    /// Tension in σ (signed for the radius test: positive = larger than predicted).
    pub sigma: f64,
    /// Which test.
    pub test: TensionTest,
}

/// One object's tensions with its class's mass bound at the two reference points.
///
/// One per object, held while the outputs are written, so it holds only what is costly to
/// make again: the optional numbers are [`OptF64`] (seven `Option<f64>` were 112 bytes), and
/// the object's bounds there ([`ReferencePoint::object_bound`], one product) and the ln P of
/// its mass test at the best fit (asked only by [`consistency_at_best`], which makes it) are
/// not held; the radius tensions, which only white dwarfs in the radius test have, are in
/// [`Verdicts::radius`] (56 → 16 bytes).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ObjectVerdict {
    /// Tension with its class bound at standard gravity, σ.
    pub sigma_standard: OptF64,
    /// Tension with its class bound at the best fit, σ.
    pub sigma_best: OptF64,
}

/// The radius tensions of one white dwarf in the radius test.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RadiusVerdict {
    /// Index of the object.
    pub object: usize,
    /// Signed tension of its radius with the standard-gravity mass–radius relation, σ.
    pub sigma_standard: Option<f64>,
    /// Signed tension of its radius at the best fit, σ (enters the verdict).
    pub sigma_best: Option<f64>,
}

/// Every object's verdicts ([`object_verdicts`]).
#[derive(Debug, Clone, PartialEq)]
pub struct Verdicts {
    /// Each object's mass-bound tensions, in object order.
    pub objects: Vec<ObjectVerdict>,
    /// The radius tensions of the objects in the radius test, by object index (ascending).
    pub radius: Vec<RadiusVerdict>,
}

impl Verdicts {
    /// Object `k`'s radius tensions, if it is in the radius test.
    pub fn radius_of(&self, k: usize) -> Option<&RadiusVerdict> {
        self.radius
            .binary_search_by_key(&k, |r| r.object)
            .ok()
            .map(|i| &self.radius[i])
    }

    /// Object `k`'s signed radius tension at standard gravity, σ.
    pub fn radius_sigma_standard(&self, k: usize) -> Option<f64> {
        self.radius_of(k).and_then(|r| r.sigma_standard)
    }

    /// Object `k`'s signed radius tension at the best fit, σ.
    pub fn radius_sigma_best(&self, k: usize) -> Option<f64> {
        self.radius_of(k).and_then(|r| r.sigma_best)
    }
}

/// Each object's verdicts at `standard` and `best`, in the order of `objects` (`uses` is the
/// comparator's plan for the same objects). Tensions are given for every object, also those
/// left out of the fit (they are flagged elsewhere).
#[allow(clippy::too_many_arguments)] // the two reference points and where the best one sits
pub fn object_verdicts(
    objects: &[CatalogueObject],
    uses: &ObjectUses,
    radius_objects: &[ObjectRadius],
    spins: &[ObjectSpin],
    standard: &ReferencePoint,
    best: &ReferencePoint,
    surface: &dyn BoundSurface,
    best_index: usize,
    eopts: &EngineOptions,
) -> Verdicts {
    let best_upsilon = surface
        .upsilon()
        .get(best_index % surface.upsilon().len().max(1))
        .copied()
        .unwrap_or(0.0);
    let mass = objects
        .par_iter()
        .zip(uses.par_iter())
        .map(|(o, u)| {
            let term = Term::mass_test_of(o.class);
            let m = u.measurement(o);
            // Every object against its class's test, also one left out of the fit.
            let sigma = |b: Option<f64>| {
                b.and_then(|b| engine::tension_of(term, &m, b, eopts))
                    .filter(|z| z.is_finite())
            };
            ObjectVerdict {
                sigma_standard: sigma(standard.class_bound(term)).into(),
                sigma_best: sigma(best.class_bound(term)).into(),
            }
        })
        .collect();
    // Each spinning white dwarf's spin test, found by index (the first one of an object).
    let mut spin_of: std::collections::HashMap<usize, &ObjectSpin> = Default::default();
    for sp in spins.iter().filter(|s| s.radius_factor != 1.0) {
        spin_of.entry(sp.index).or_insert(sp);
    }
    // The radius tests by object index (an object's first test only; the engine makes them in
    // object order, so the sort only guards the lookup).
    let mut seen = std::collections::HashSet::new();
    let mut tests: Vec<&ObjectRadius> = radius_objects
        .iter()
        .filter(|r| r.index < objects.len() && uses.get(r.index).is_some_and(|u| u.radius_term))
        .filter(|r| seen.insert(r.index))
        .collect();
    tests.sort_by_key(|r| r.index);
    let radius = tests
        .par_iter()
        .map(|r| {
            let k = r.index;
            let u = &uses[k];
            let queries: Vec<(f64, f64)> = r.nodes.iter().map(|&(m, _)| (m, u.mu_e)).collect();
            // A spinning white dwarf's slow-rotation factor at the best fit, as in the term.
            let spun = spin_of.get(&k).map_or(1.0, |s| {
                s.radius_factor_at(surface, best_index) / s.radius_factor
            });
            let cold: Vec<Option<f64>> = surface
                .wd_radii_rsun(best_index, &queries)
                .into_iter()
                .map(|c| c.map(|c| c * spun))
                .collect();
            RadiusVerdict {
                object: k,
                sigma_standard: r.standard_tension(),
                sigma_best: r.marginal_tension(&cold, best_upsilon),
            }
        })
        .collect();
    Verdicts {
        objects: mass,
        radius,
    }
}

/// The objects in tension with standard gravity above `threshold_sigma`, largest |σ| first (ties
/// by object). Mass-bound tensions are one-sided (positive = wrong side of the bound); radius
/// tensions are two-sided, listed by their absolute value.
pub fn tensions_above(verdicts: &Verdicts, threshold_sigma: f64) -> Vec<Tension> {
    let mut tensions: Vec<Tension> = Vec::new();
    for (k, r) in verdicts.objects.iter().enumerate() {
        if let Some(z) = r.sigma_standard.get().filter(|&z| z > threshold_sigma) {
            tensions.push(Tension {
                object: k,
                sigma: z,
                test: TensionTest::MassBound,
            });
        }
    }
    // After every mass-bound tension: the sort below is stable, so an object's two tests of
    // equal |σ| keep the mass test first, as when both were pushed object by object.
    for r in &verdicts.radius {
        if let Some(z) = r.sigma_standard.filter(|z| z.abs() > threshold_sigma) {
            tensions.push(Tension {
                object: r.object,
                sigma: z,
                test: TensionTest::MassRadius,
            });
        }
    }
    tensions.sort_by(|a, b| {
        b.sigma
            .abs()
            .total_cmp(&a.sigma.abs())
            .then(a.object.cmp(&b.object))
    });
    tensions
}

/// Absolute consistency at the best fit (Šidák test over the objects' ln P there).
///
/// N_inf counts the informative objects the one-dimensional reduction did not skip: objects that
/// cannot constrain any grid point must not dilute the look-elsewhere factor (the paper's
/// statistics section). Keys of the returned tests: the object index for a mass test, plus the
/// object count for a radius test, plus twice the object count for a spin test
/// ([`TestKey`] decodes them). `objects` is the list the comparison was made of, `best` the
/// best fit's bounds.
pub fn consistency_at_best(
    conf: &Confrontation,
    objects: &[CatalogueObject],
    best: &ReferencePoint,
    eopts: &EngineOptions,
    verdicts: &Verdicts,
    spins: &[SpinVerdict],
) -> (AbsoluteConsistency, Vec<(usize, f64)>) {
    // The objects counted informative in their mass term, in object order: each found by its
    // position in its term (no list of every member's position, 8 bytes per object at a large
    // run's peak).
    let counted: Vec<usize> = (conf.uses.iter().enumerate())
        .filter(|&(k, u)| {
            let (Some(term), Some(pos)) = (u.mass_term, conf.term_position(k)) else {
                return false;
            };
            conf.class_counts
                .iter()
                .any(|(t, c)| *t == term && c.informative_indices().binary_search(&pos).is_ok())
        })
        .map(|(k, _)| k)
        .collect();
    // The ln P of each counted object's mass test at the best fit, in object order: made here,
    // the one place that asks for it, rather than held in every object's verdict. Collected in
    // place (one entry per counted object, the ones without a test marked and removed), not
    // through the chunks of an unindexed collect that doubled the list at the peak.
    const NO_TEST: usize = usize::MAX;
    let mut ln_ps: Vec<(usize, f64)> = counted
        .par_iter()
        .map(|&k| {
            let ln_p = || {
                let (o, u) = (objects.get(k)?, conf.uses.get(k)?);
                let term = u.mass_term?;
                let m = u.measurement(o);
                if !m.informative() {
                    return None;
                }
                let b = best.class_bound(term)?;
                Some(engine::ln_p_object(term, &m, b, eopts))
            };
            ln_p().map_or((NO_TEST, 0.0), |l| (k, l))
        })
        .collect();
    drop(counted);
    ln_ps.retain(|&(k, _)| k != NO_TEST);
    // Every test in the likelihood enters the verdict: the radius tests too, each as its
    // two-sided p = 2Φ(−|z|) at the best fit (keys offset by the object count so that a white
    // dwarf's two tests stay distinct).
    let n_obj = verdicts.objects.len();
    for r in &verdicts.radius {
        if let Some(z) = r.sigma_best.filter(|z| z.is_finite()) {
            let ln_p = super::prob::ln_normal_cdf(-z.abs()) + std::f64::consts::LN_2;
            ln_ps.push((n_obj + r.object, ln_p.min(0.0)));
        }
    }
    // The spin tests, one-sided like the mass tests, each with its own ln P at the best fit;
    // counted only where the test can constrain some grid point (−2 ln P above the drivers'
    // candidate threshold somewhere), for the same reason as the mass tests.
    for v in spins {
        if v.max_minus_two_ln_p <= SPIN_INFORMATIVE_MIN_MINUS_TWO_LN_P {
            continue;
        }
        if let Some(l) = v.ln_p_best.filter(|l| l.is_finite()) {
            ln_ps.push((2 * n_obj + v.index, l.min(0.0)));
        }
    }
    let failing = verdict_failures(&ln_ps);
    (absolute_consistency(&ln_ps, WORST_LISTED), failing)
}

/// A spin test enters the Šidák count when its −2 ln P exceeds this somewhere on the grid (the
/// drivers' candidate threshold, `docs/bounds.md` §8.6): a test that no grid point can fail
/// constrains nothing and must not dilute the look-elsewhere factor.
pub const SPIN_INFORMATIVE_MIN_MINUS_TWO_LN_P: f64 = 2e-3;

/// Which test a key of [`consistency_at_best`] names, and whose.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct TestKey {
    /// Index of the object.
    pub object: usize,
    /// The test.
    pub test: TensionTest,
}

impl TestKey {
    /// Decodes a key of [`consistency_at_best`] for a catalogue of `n_objects` objects.
    pub fn decode(key: usize, n_objects: usize) -> Self {
        let n = n_objects.max(1);
        let test = match key / n {
            0 => TensionTest::MassBound,
            1 => TensionTest::MassRadius,
            _ => TensionTest::Spin,
        };
        Self {
            object: key % n,
            test,
        }
    }
}

/// Tests that fail at the best fit: p below the per-test Šidák level 1 − 0.9545^{1/N}, so that
/// they are exactly the tests that make the catalogue verdict fail; smallest first. Keys as in
/// [`consistency_at_best`] ([`TestKey`]).
fn verdict_failures(ln_ps: &[(usize, f64)]) -> Vec<(usize, f64)> {
    let n = ln_ps.len().max(1) as f64;
    let per_test = -(super::regions::Level::Cl95.probability().ln() / n).exp_m1();
    let mut out: Vec<(usize, f64)> = ln_ps
        .iter()
        .copied()
        .filter(|&(_, l)| l < per_test.ln())
        .collect();
    out.sort_by(|a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
    out
}

/// The crowding check at an MMHB of `mmhb_msun` (the best fit's) with the MMHB floor
/// `floor_msun`, over the objects in the hydrogen-burning and brown-dwarf tests (`objects` is
/// the list the comparison was made of). Each measurement is made again as it is counted: two
/// copies of them were 41 MB at 10⁶ objects, at the run's peak.
pub fn crowding_at(
    conf: &Confrontation,
    objects: &[CatalogueObject],
    mmhb_msun: f64,
    floor_msun: f64,
) -> Crowding {
    crowding(
        conf.member_measurements(objects, Term::HBurning),
        conf.member_measurements(objects, Term::BrownDwarf),
        mmhb_msun,
        floor_msun,
        &CrowdingOptions::default(),
    )
}

/// Tension of each object with its class bound at `point`: (object index, σ) for objects above
/// `threshold_sigma`, largest first (ties by index): a quick look without a grid, which `vet`
/// uses at standard gravity. Which objects take part is `eopts`'s age rule (see
/// [`engine::plan`]).
pub fn mass_tensions(
    objects: &[CatalogueObject],
    point: &ReferencePoint,
    eopts: &EngineOptions,
    threshold_sigma: f64,
) -> Vec<(usize, f64)> {
    // One use at a time (the uses of a million objects were 144 MB held only for this), in
    // parallel; the order is fixed by the sort below. Above a threshold of 1σ the safe side
    // (P > ½, z ≤ 0) cannot pass, so its exact z is not computed.
    let wrong_side_only = threshold_sigma >= 1.0;
    let mut out: Vec<(usize, f64)> = objects
        .par_iter()
        .enumerate()
        .filter_map(|(index, o)| {
            let u = engine::plan_one(o, eopts);
            let term = u.mass_term?;
            let b = point.class_bound(term)?;
            let m = u.measurement(o);
            let z = if wrong_side_only {
                engine::wrong_side_tension(term, &m, b, eopts)?
            } else {
                engine::tension_of(term, &m, b, eopts)?
            };
            (z.is_finite() && z > threshold_sigma).then_some((index, z))
        })
        .collect();
    out.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
    out
}

/// One-sided tension (σ, positive on the wrong side) of object `k`'s mass test at grid point
/// `index` under the likelihood the run actually uses: z = −Φ⁻¹(P) with P the object's own
/// probability in the fit ([`Confrontation::ln_p_in_fit`]: the bound's shared shift at its
/// profiled value there, the per-object scatter, the calibrated probability where that model
/// is used); above P = ½ through 1 − P, without loss of digits. `None` without an informative
/// mass test or when P rounds to 1. `objects` is the list the comparison was made of.
pub fn mass_sigma_in_fit(
    conf: &Confrontation,
    objects: &[CatalogueObject],
    surface: &dyn BoundSurface,
    k: usize,
    index: usize,
) -> Option<f64> {
    let u = conf.uses.get(k)?;
    let term = u.mass_term?;
    if !conf.measurement(objects, k)?.informative() {
        return None;
    }
    let b = match term {
        Term::WhiteDwarfMass => surface.chandrasekhar_mu2_msun(index),
        _ => surface.mmhb_msun(index),
    }?;
    sigma_from_ln_p_in_fit(conf.ln_p_in_fit(objects, k, b)?)
}

/// [`mass_sigma_in_fit`] from an ln P in the fit already made (the drivers' screening hands
/// them on): z = −Φ⁻¹(P), `None` when it is not finite.
pub fn sigma_from_ln_p_in_fit(ln_p: f64) -> Option<f64> {
    let z = super::prob::tension_sigma(ln_p);
    z.is_finite().then_some(z)
}

#[cfg(test)]
mod tests {
    #[test]
    fn a_verdict_stays_compact() {
        // One verdict per object is held while the outputs are written (see its doc comment):
        // 56 bytes while it also held the object's two bounds and its ln P at the best fit
        // (each made again where it is asked for since) and its two radius tensions (now in a
        // list of the white dwarfs in the radius test, `Verdicts::radius`).
        assert_eq!(std::mem::size_of::<super::ObjectVerdict>(), 16);
    }
}
