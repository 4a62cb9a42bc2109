//! The comparator: every vetted object against every grid point, without an N × G term.
//!
//! Each mass test depends on a grid point only through one scalar bound (the MMHB for
//! `hburning` and `brown_dwarf`, the Chandrasekhar mass for `white_dwarf`), so each bound's term
//! is tabulated once in the bound's value ([`BoundTerm`], `docs/bounds.md` §8.5) and the grid
//! is evaluated by interpolation. White dwarfs with a
//! measured radius also confront the modified mass–radius relation; that term depends on the
//! object's own mass, so it is evaluated per object and grid point from the tabulated R(M).
//! Objects with a rotation period add one more term, the spin test of [`super::spin`], which
//! also applies their first-order slow-rotation corrections before the terms are built.
//!
//! The engine sees the theory only through [`BoundSurface`], so it can be tested with simple
//! synthetic bounds and knows nothing of how the bounds were solved.
//!
//! ```
//! use dwarfbound::catalogue::{CatalogueObject, MassLimit, ObjectClass, ObjectDetails, OptF64};
//! use dwarfbound::confront::engine::{confront, BoundSurface, EngineOptions};
//! use dwarfbound::confront::wd_radius::{WdQuery, WdStandard};
//! struct Flat;
//! impl BoundSurface for Flat {
//!     fn upsilon(&self) -> &[f64] { &[-0.1, 0.0, 0.1] }
//!     fn tau(&self) -> &[f64] { &[0.0] }
//!     fn mmhb_msun(&self, i: usize) -> Option<f64> { Some(0.075 * (1.0 + 0.1 * self.upsilon()[i])) }
//!     fn chandrasekhar_mu2_msun(&self, _i: usize) -> Option<f64> { Some(1.4563) }
//!     fn wd_radii_rsun(&self, _i: usize, q: &[(f64, f64)]) -> Vec<Option<f64>> { vec![None; q.len()] }
//!     fn wd_standard_radii(&self, q: &[WdQuery]) -> Vec<Option<WdStandard>> { vec![None; q.len()] }
//! }
//! let star = CatalogueObject { id: "S1".into(), class: ObjectClass::HBurning, mass_msun: 0.09,
//!     mass_err_lo_msun: OptF64::some(0.002), mass_err_hi_msun: OptF64::some(0.002), mass_limit: MassLimit::None,
//!     mass_method: Default::default(),
//!     details: ObjectDetails { age_gyr: OptF64::some(5.0), ..Default::default() }.into(),
//!     source_file: "a.csv".into(), source_row: 1 };
//! let c = confront(&[star], &Flat, &EngineOptions::default()).unwrap();
//! assert_eq!(c.joint.len(), 3);
//! ```

use rayon::prelude::*;

use super::mass_terms::{BoundTerm, MassTermOptions};
use super::prob::{
    check_u32_positions, ln_prob_consistent, tension_sigma, ClassMeasurements, MassKind,
    Measurement, MeasurementSource, Side, StatsError,
};
use super::reduce::{ClassCounts, ReduceOptions};
use super::regions::PopulationTerm;
use super::wd_radius::{self, ObjectRadius, RadiusOptions, ResolvedCore, WdQuery, WdStandard};
use crate::catalogue::{CatalogueObject, MassLimit, MassMethod, ObjectClass};
use crate::theory::white_dwarf::RadiusQueries;

/// The bounds over the grid, as the comparator needs them. Index `i` runs over grid points in
/// row-major order: τ outer, ϒ inner (`i = j_tau * n_upsilon + i_upsilon`).
pub trait BoundSurface: Sync {
    /// ϒ values (ascending).
    fn upsilon(&self) -> &[f64];
    /// τ values (ascending).
    fn tau(&self) -> &[f64];
    /// The MMHB used for confronting data at point `i`, M☉; `None` where no model exists.
    fn mmhb_msun(&self, i: usize) -> Option<f64>;
    /// The Chandrasekhar mass for μe = 2 at point `i`, M☉ (other μe scale as 4/μe²).
    fn chandrasekhar_mu2_msun(&self, i: usize) -> Option<f64>;
    /// White-dwarf radii at point `i`, R☉, for each (mass in M☉, μe) query, in order; `None`
    /// above the maximum mass or where no model exists. Batched because looking up a grid
    /// point's mass–radius table costs far more than one radius from it.
    fn wd_radii_rsun(&self, i: usize, queries: &[(f64, f64)]) -> Vec<Option<f64>>;
    /// [`BoundSurface::wd_radii_rsun`] of queries prepared once for every point they are asked
    /// at (what depends on the query alone is not worked out again per point); the same
    /// values. The default asks [`BoundSurface::wd_radii_rsun`].
    fn wd_radii_prepared(&self, i: usize, queries: &RadiusQueries) -> Vec<Option<f64>> {
        self.wd_radii_rsun(i, queries.pairs())
    }
    /// The standard-gravity radius model for each query (mass, Teff, core, envelope), asked
    /// once per confrontation; `None` where the model has no star. The radius at a grid point
    /// is this radius times the ratio of [`BoundSurface::wd_radii_rsun`] at the point to
    /// [`WdStandard::cold_rsun`].
    fn wd_standard_radii(&self, queries: &[WdQuery]) -> Vec<Option<WdStandard>>;
    /// First-order slow-rotation coefficients of the polytrope of index `n` at point `i`
    /// (`docs/rotation.md` §1.2): the structure behind a spinning white dwarf's radius
    /// correction (n its effective index there). The default solves them at the point's (ϒ, τ)
    /// without anisotropy; a theory grid answers for its own ansatz from a table interpolated
    /// in (ϒ, τ, n). `None` where no model exists.
    fn slow_rotation_at(
        &self,
        i: usize,
        n: f64,
    ) -> Option<crate::theory::slow_rotation::SlowRotation> {
        let nu = self.upsilon().len().max(1);
        let (u, t) = (*self.upsilon().get(i % nu)?, *self.tau().get(i / nu)?);
        crate::theory::slow_rotation::slow_rotation(n, u, t, crate::theory::Anisotropy::None).ok()
    }
    /// First-order slow-rotation coefficients of the n = 3/2 polytrope at point `i`: the
    /// structure behind the MMHB's slow-rotation correction of a spinning brown dwarf or star
    /// (`docs/rotation.md`). The default is [`BoundSurface::slow_rotation_at`] with n = 3/2.
    fn slow_rotation_n32(&self, i: usize) -> Option<crate::theory::slow_rotation::SlowRotation> {
        self.slow_rotation_at(i, 1.5)
    }
}

/// Choices of the comparison (defaults from `docs/bounds.md` §4–§5 and `docs/structure.md` §4.6).
#[derive(Debug, Clone, PartialEq)]
pub struct EngineOptions {
    /// Theory floor of the MMHB (1σ), M☉.
    pub mmhb_floor_msun: f64,
    /// Theory floor of the Chandrasekhar mass (1σ) for μe = 2, M☉.
    pub chandrasekhar_floor_msun: f64,
    /// The white-dwarf radius test: model, floors, domain.
    pub radius: RadiusOptions,
    /// Objects of the MMHB classes younger than this are left out of the MMHB test, Gyr.
    pub age_min_mmhb_gyr: f64,
    /// Keep young objects in the MMHB test anyway.
    pub include_young: bool,
    /// Leave objects without an age out of the MMHB test.
    pub exclude_age_unknown: bool,
    /// Default μe of white dwarfs without one.
    pub default_mu_e: f64,
    /// Tabulation of the class curves.
    pub reduce: ReduceOptions,
    /// Population-aware option of `docs/bounds.md` §8.7: a mass window [lo, hi] (M☉) around the MMHB
    /// in which the stars' and brown dwarfs' true masses are taken as flat on either side of
    /// the bound; adds −n_star ln(hi − B) − n_bd ln(B − lo) to ln L. `None` (default) keeps the
    /// plain product of consistency probabilities.
    pub population_window_msun: Option<(f64, f64)>,
    /// Shared systematics, likelihood model and their settings (documented in `docs/` under statistics: shared systematics, calibrated likelihood). The
    /// floors above are the widths of the shared shifts (or, with
    /// [`super::mass_terms::Systematics::PerObject`], the per-object errors).
    pub mass_terms: MassTermOptions,
    /// The spin test and the slow-rotation corrections ([`super::spin`]).
    pub spin: super::spin::SpinOptions,
}

impl Default for EngineOptions {
    fn default() -> Self {
        Self {
            mmhb_floor_msun: 0.005,
            chandrasekhar_floor_msun: 0.03,
            radius: RadiusOptions::default(),
            age_min_mmhb_gyr: 1.0,
            include_young: false,
            exclude_age_unknown: false,
            default_mu_e: 2.0,
            reduce: ReduceOptions::default(),
            population_window_msun: None,
            mass_terms: MassTermOptions::default(),
            spin: super::spin::SpinOptions::default(),
        }
    }
}

/// Which term of the likelihood an object feeds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Term {
    /// `hburning` against the MMHB (M ≥ B).
    HBurning,
    /// `brown_dwarf` against the MMHB (M ≤ B).
    BrownDwarf,
    /// `white_dwarf` against the Chandrasekhar mass (M ≤ B).
    WhiteDwarfMass,
    /// `white_dwarf` radius against the modified mass–radius relation.
    WhiteDwarfRadius,
    /// Any object with a rotation period against its break-up period (P ≥ P_break).
    Spin,
}

impl Term {
    /// All terms in output order.
    pub const ALL: [Term; 5] = [
        Term::HBurning,
        Term::BrownDwarf,
        Term::WhiteDwarfMass,
        Term::WhiteDwarfRadius,
        Term::Spin,
    ];

    /// Name used in outputs (`grid.csv` column suffixes, the report).
    pub fn name(self) -> &'static str {
        match self {
            Term::HBurning => "hburning",
            Term::BrownDwarf => "brown_dwarf",
            Term::WhiteDwarfMass => "white_dwarf",
            Term::WhiteDwarfRadius => "white_dwarf_radius",
            Term::Spin => "spin",
        }
    }

    /// The mass test of an object's class (whether or not the object is left out of it).
    pub fn mass_test_of(class: ObjectClass) -> Term {
        match class {
            ObjectClass::HBurning => Term::HBurning,
            ObjectClass::BrownDwarf => Term::BrownDwarf,
            ObjectClass::WhiteDwarf => Term::WhiteDwarfMass,
        }
    }

    fn index(self) -> usize {
        self as usize
    }
}

/// How one object enters the comparison. Use `k` is object `k` of the caller's list (the
/// uses are built in object order), so it holds no index.
///
/// One use per object is held until the outputs are written, so it keeps only what its object
/// does not give: the statistics' view of the mass is derived again from the object
/// ([`ObjectUse::measurement`]) and only its bound scale is held (the slow-rotation change of a
/// spinning star's MMHB makes it more than the class's scale).
#[derive(Debug, Clone, PartialEq)]
pub struct ObjectUse {
    /// The mass test it feeds (`None` if left out).
    pub mass_term: Option<Term>,
    /// The scale of its bound ([`Measurement::scale`]): 4/μe² for a white dwarf, 1 for the
    /// other classes, times the slow-rotation factor f₀ of a spinning star or brown dwarf
    /// ([`super::spin::prepare`]).
    pub bound_scale: f64,
    /// Whether it feeds the mass–radius term.
    pub radius_term: bool,
    /// Why it is left out of its mass test, if it is ([`LeftOut::Young`],
    /// [`LeftOut::AgeUnknown`] or [`LeftOut::ModelMass`]).
    pub excluded: Option<LeftOut>,
    /// Why a white dwarf with a radius is left out of the radius test, if it is.
    pub radius_excluded: Option<LeftOut>,
    /// Flags for `objects.csv` (`young`, `age_unknown`, `limit_uninformative`, `model_mass`,
    /// `mass_method_unknown`, `no_teff`, `elm`, `no_hot_model`, `radius_anchored`).
    pub flags: Flags,
    /// Core of a white dwarf after the default by mass.
    pub core: Option<ResolvedCore>,
    /// μe used for a white dwarf.
    pub mu_e: f64,
}

impl ObjectUse {
    /// The statistics' view of its object's mass (`o` must be the object this use was planned
    /// for): what [`measurement_of`] makes of the object, at this use's bound scale. A few
    /// comparisons, so it is made again wherever it is needed rather than held per object
    /// (48 bytes each, a million of them in a large run).
    pub fn measurement(&self, o: &CatalogueObject) -> Measurement {
        measurement_scaled(o, self.bound_scale)
    }
}

/// Every object's [`ObjectUse`], each distinct use held once: use `k` is object `k` of the
/// caller's list.
///
/// Most objects of a catalogue share their use with thousands of others (a class, its flags,
/// μe 2 and a bound scale of 1): held one per object, the uses were 40 MB of a million-object
/// run from the comparison to the last output (heaptrack). Each object now keeps a 4-byte
/// position in the list of distinct uses; a use that differs in any bit (a spinning star's
/// scale, a white dwarf's own μe) is a distinct use of its own, so nothing is rounded.
///
/// ```
/// use dwarfbound::confront::engine::{Flags, ObjectUse, ObjectUses, Term};
/// let star = ObjectUse { mass_term: Some(Term::HBurning), bound_scale: 1.0, radius_term: false,
///     excluded: None, radius_excluded: None, flags: Flags::default(), core: None, mu_e: 2.0 };
/// let uses: ObjectUses = vec![star.clone(); 1000].into_iter().collect();
/// assert_eq!((uses.len(), uses.distinct()), (1000, 1));
/// assert_eq!(uses[999], star);
/// ```
#[derive(Debug, Clone, Default)]
pub struct ObjectUses {
    /// The distinct uses, in the order first met.
    distinct: Vec<ObjectUse>,
    /// Per object: its use's position in `distinct`.
    which: Vec<u32>,
}

/// A use's bits, as the key that finds an equal use already held.
#[derive(PartialEq, Eq, Hash)]
struct UseBits {
    mass_term: Option<Term>,
    bound_scale: u64,
    radius_term: bool,
    excluded: Option<LeftOut>,
    radius_excluded: Option<LeftOut>,
    flags: Flags,
    core: Option<ResolvedCore>,
    mu_e: u64,
}

impl UseBits {
    fn of(u: &ObjectUse) -> Self {
        Self {
            mass_term: u.mass_term,
            bound_scale: u.bound_scale.to_bits(),
            radius_term: u.radius_term,
            excluded: u.excluded,
            radius_excluded: u.radius_excluded,
            flags: u.flags.clone(),
            core: u.core,
            mu_e: u.mu_e.to_bits(),
        }
    }
}

impl FromIterator<ObjectUse> for ObjectUses {
    fn from_iter<I: IntoIterator<Item = ObjectUse>>(iter: I) -> Self {
        let mut out = ObjectUses::default();
        let mut seen: std::collections::HashMap<UseBits, u32> = Default::default();
        for u in iter {
            let key = UseBits::of(&u);
            let at = match seen.get(&key) {
                Some(&at) => at,
                None => {
                    let at = out.next_position();
                    seen.insert(key, at);
                    out.distinct.push(u);
                    at
                }
            };
            out.which.push(at);
        }
        out
    }
}

impl ObjectUses {
    /// The uses of `objects` ([`plan_one`] each). More than 2³² − 1 objects are refused.
    pub fn plan(objects: &[CatalogueObject], opts: &EngineOptions) -> Result<Self, EngineError> {
        check_u32_positions(objects.len(), "in one comparison")?;
        Ok(objects.iter().map(|o| plan_one(o, opts)).collect())
    }

    /// Number of objects.
    pub fn len(&self) -> usize {
        self.which.len()
    }

    /// Whether there is no object.
    pub fn is_empty(&self) -> bool {
        self.which.is_empty()
    }

    /// Number of distinct uses held.
    pub fn distinct(&self) -> usize {
        self.distinct.len()
    }

    /// Object `k`'s use.
    pub fn get(&self, k: usize) -> Option<&ObjectUse> {
        self.which
            .get(k)
            .and_then(|&at| self.distinct.get(at as usize))
    }

    /// Every object's use, in object order.
    pub fn iter(&self) -> impl ExactSizeIterator<Item = &ObjectUse> + Clone + '_ {
        self.which.iter().map(|&at| &self.distinct[at as usize])
    }

    /// [`ObjectUses::iter`] in parallel (indexed, so it zips with the objects).
    pub fn par_iter(&self) -> impl IndexedParallelIterator<Item = &ObjectUse> + '_ {
        self.which.par_iter().map(|&at| &self.distinct[at as usize])
    }

    /// Changes object `k`'s use alone (a spin test's scale and flags, a white dwarf left out of
    /// the radius test): the changed use is held as a distinct one of its own, and the others
    /// that shared it are untouched. Nothing happens for a `k` out of range.
    pub(crate) fn update(&mut self, k: usize, change: impl FnOnce(&mut ObjectUse)) {
        let Some(mut u) = self.get(k).cloned() else {
            return;
        };
        change(&mut u);
        if self.get(k) != Some(&u) {
            let at = self.next_position();
            self.distinct.push(u);
            self.which[k] = at;
        }
    }

    /// The position the next distinct use takes (below 2³² − 1: there are no more distinct
    /// uses than objects, and [`ObjectUses::plan`] refuses more objects than that).
    fn next_position(&self) -> u32 {
        u32::try_from(self.distinct.len()).unwrap_or(u32::MAX)
    }
}

impl std::ops::Index<usize> for ObjectUses {
    type Output = ObjectUse;

    fn index(&self, k: usize) -> &ObjectUse {
        &self.distinct[self.which[k] as usize]
    }
}

/// Why an object is left out of a test. A code rather than a sentence: every object has an
/// [`ObjectUse`], and two `Option<String>`s were 48 of its bytes in each of a million uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum LeftOut {
    /// Younger than [`EngineOptions::age_min_mmhb_gyr`] (the MMHB test; `docs/bounds.md` §5).
    Young,
    /// No age, and [`EngineOptions::exclude_age_unknown`] asks to leave such objects out.
    AgeUnknown,
    /// Mass from a standard-gravity model: circular for a test of that model.
    ModelMass,
    /// A white dwarf without Teff in the finite-temperature radius test.
    NoTeff,
    /// An extremely-low-mass white dwarf, below [`RadiusOptions::elm_max_msun`].
    Elm,
    /// No finite-temperature model at the white dwarf's mass, Teff and core.
    OutsideModel,
}

impl LeftOut {
    /// The `objects.csv` flag that goes with it.
    pub fn flag(self) -> &'static str {
        match self {
            LeftOut::Young => "young",
            LeftOut::AgeUnknown => "age_unknown",
            LeftOut::ModelMass => "model_mass",
            LeftOut::NoTeff => "no_teff",
            LeftOut::Elm => "elm",
            LeftOut::OutsideModel => "outside_model",
        }
    }

    /// The reason in words.
    pub fn reason(self) -> &'static str {
        match self {
            LeftOut::Young => "young: below the minimum age of the MMHB test",
            LeftOut::AgeUnknown => "age unknown",
            LeftOut::ModelMass => "mass from a standard-gravity model (circular for this test)",
            LeftOut::NoTeff => {
                "no Teff: the finite-temperature correction (3–30 %) exceeds the floor"
            }
            LeftOut::Elm => "extremely low mass: outside the model's domain",
            LeftOut::OutsideModel => {
                "no finite-temperature model at its mass, Teff and core (outside the model's \
                 table or no hydrostatic solution)"
            }
        }
    }
}

/// The flag names objects carry, each stored in a [`Flags`] as its index here.
const KNOWN_FLAGS: [&str; 16] = [
    "young",
    "age_unknown",
    "limit_uninformative",
    "model_mass",
    "mass_method_unknown",
    "no_teff",
    "elm",
    "no_hot_model",
    "radius_anchored",
    "outside_model",
    "spin_mass_limit",
    "spin_radius_measured",
    "spin_radius_finite-temperature",
    "spin_radius_cold",
    "spin_corrected",
    "spin_beyond_first_order",
];

/// Most flags one object can carry without spilling to the heap.
const INLINE_FLAGS: usize = 14;

/// The flags of one object, in the order they were raised. Every object has some (a catalogue
/// without ages flags them all `age_unknown`), so a list of strings per object was a third of
/// the memory of a large confrontation; the known names are kept as one-byte indices inline,
/// and a list spills to strings only for a name outside [`KNOWN_FLAGS`] (boxed, so that the
/// rare spilled list does not make every object's flags 24 bytes instead of 16).
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct Flags(FlagStore);

#[derive(Debug, Clone, PartialEq, Eq, Hash)]
enum FlagStore {
    Inline {
        codes: [u8; INLINE_FLAGS],
        len: u8,
    },
    // A thin pointer, deliberately: a `Vec` or boxed slice here makes every `Flags` 24 bytes.
    #[allow(clippy::box_collection)]
    Spilled(Box<Vec<String>>),
}

impl Default for Flags {
    fn default() -> Self {
        Flags(FlagStore::Inline {
            codes: [0; INLINE_FLAGS],
            len: 0,
        })
    }
}

impl Flags {
    /// Raises a flag given as an owned name (as [`Flags::raise`]).
    pub fn push(&mut self, flag: String) {
        self.raise(&flag);
    }

    /// Raises a flag (after those already raised).
    pub fn raise(&mut self, flag: &str) {
        let code = KNOWN_FLAGS.iter().position(|k| *k == flag);
        if let FlagStore::Inline { codes, len } = &mut self.0 {
            if let Some(c) = code.filter(|_| usize::from(*len) < INLINE_FLAGS) {
                codes[usize::from(*len)] = c as u8;
                *len += 1;
                return;
            }
            let spilled = codes[..usize::from(*len)]
                .iter()
                .map(|&c| KNOWN_FLAGS[usize::from(c)].to_string())
                .collect();
            self.0 = FlagStore::Spilled(Box::new(spilled));
        }
        if let FlagStore::Spilled(v) = &mut self.0 {
            v.push(flag.to_string());
        }
    }

    /// The flags in the order they were raised.
    pub fn iter(&self) -> impl Iterator<Item = &str> + '_ {
        let (inline, spilled): (&[u8], &[String]) = match &self.0 {
            FlagStore::Inline { codes, len } => (&codes[..usize::from(*len)], &[]),
            FlagStore::Spilled(v) => (&[], v),
        };
        inline
            .iter()
            .map(|&c| KNOWN_FLAGS[usize::from(c)])
            .chain(spilled.iter().map(String::as_str))
    }

    /// The flags joined by `sep` (the `flags` cell of `objects.csv`).
    pub fn join(&self, sep: &str) -> String {
        self.iter().collect::<Vec<_>>().join(sep)
    }

    /// Whether `flag` is raised.
    pub fn contains(&self, flag: &str) -> bool {
        self.iter().any(|f| f == flag)
    }

    /// Whether no flag is raised.
    pub fn is_empty(&self) -> bool {
        self.iter().next().is_none()
    }
}

/// The result over the grid.
#[derive(Debug)]
pub struct Confrontation {
    /// Number of ϒ values.
    pub n_upsilon: usize,
    /// Number of τ values.
    pub n_tau: usize,
    /// −2 ln L per term and grid point (`None` where no model exists).
    pub per_term: [Vec<Option<f64>>; 5],
    /// Joint −2 ln L per grid point.
    pub joint: Vec<Option<f64>>,
    /// How each object was used.
    pub uses: ObjectUses,
    /// Per use: its position among the uses of its mass term ([`Confrontation::members`]
    /// order; `u32::MAX` without one), so that an object's term is found without a scan.
    /// Derived from `uses` when the comparison is built, so not public.
    term_positions: Vec<u32>,
    /// Each mass term's objects sorted into informative, skipped and uninformative over its
    /// bound's range (the counts and the Šidák test's N_inf).
    pub class_counts: Vec<(Term, ClassCounts)>,
    /// The population-aware term, when asked for.
    pub population: Option<PopulationTerm>,
    /// The radius tests, prepared (nodes and standard model per object).
    pub radius_objects: Vec<ObjectRadius>,
    /// The prior on the radius objects' true masses when it is their own mass function
    /// ([`wd_radius::RadiusMassPrior::Population`]; `None` with the flat prior or without
    /// objects to estimate it from).
    pub radius_mass_prior: Option<wd_radius::PopulationPrior>,
    /// The per-object radius floor's calibration on the data ([`wd_radius::FloorScale`]; `None`
    /// with `--wd-floor-size fixed` or without white dwarfs in the radius test). Its
    /// `applied` scale is already in every radius object's `floor_fraction`.
    pub radius_floor_scale: Option<wd_radius::FloorScale>,
    /// The radius systematic shared by every white dwarf in the radius test, as a nuisance
    /// parameter (`None` with per-object floors).
    pub radius_shared: Option<super::nuisance::SharedNuisance>,
    /// The mass terms actually in the likelihood, one per bound (MMHB, Chandrasekhar mass)
    /// that some object faces.
    pub bounds: Vec<(Bound, BoundTerm)>,
    /// The spin tests, prepared (one per object with a rotation period and a measured mass).
    pub spins: Vec<super::spin::ObjectSpin>,
    /// Each spin test's span over the grid (one per entry of `spins`), for its verdict.
    pub spin_spans: Vec<super::spin::SpinSpan>,
}

/// The two mass bounds of the comparison.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Bound {
    /// The hydrogen-burning limit, faced by `hburning` and `brown_dwarf`.
    Mmhb,
    /// The Chandrasekhar mass (μe = 2), faced by `white_dwarf`.
    Chandrasekhar,
}

impl Bound {
    /// Output name.
    pub fn name(self) -> &'static str {
        match self {
            Bound::Mmhb => "mmhb",
            Bound::Chandrasekhar => "chandrasekhar",
        }
    }
}

impl Confrontation {
    /// The objects in a mass term's test, as indices into the caller's object list, in order.
    pub fn members(&self, term: Term) -> Vec<usize> {
        self.uses
            .iter()
            .enumerate()
            .filter(|(_, u)| u.mass_term == Some(term))
            .map(|(k, _)| k)
            .collect()
    }

    /// The statistics' view of object `k`'s mass as the comparison used it (`objects` is the
    /// list the comparison was made of): [`ObjectUse::measurement`].
    pub fn measurement(&self, objects: &[CatalogueObject], k: usize) -> Option<Measurement> {
        Some(self.uses.get(k)?.measurement(objects.get(k)?))
    }

    /// A mass term's objects as positions, their measurements made on demand
    /// ([`TermMembers`]; `objects` is the list the comparison was made of).
    pub fn term_members<'a>(
        &'a self,
        objects: &'a [CatalogueObject],
        term: Term,
    ) -> Result<TermMembers<'a>, StatsError> {
        TermMembers::new(objects, &self.uses, term)
    }

    /// The measurements of a mass term's objects, in [`Confrontation::members`] order, made
    /// one at a time from `objects` (the list the comparison was made of).
    pub fn member_measurements<'a>(
        &'a self,
        objects: &'a [CatalogueObject],
        term: Term,
    ) -> impl Iterator<Item = Measurement> + 'a {
        self.uses
            .iter()
            .zip(objects)
            .filter(move |(u, _)| u.mass_term == Some(term))
            .map(|(u, o)| u.measurement(o))
    }

    /// −2 ln L of every mass term (shared systematics eliminated, population term included) at
    /// given values of the two bounds; a bound that is `None` contributes nothing. This is what
    /// the grid's joint value holds apart from the radius term, for points off the grid (the
    /// fine τ = 0 slice).
    pub fn mass_minus_two_ln_l(
        &self,
        mmhb_msun: Option<f64>,
        chandrasekhar_msun: Option<f64>,
    ) -> f64 {
        let mut s = 0.0;
        for (bound, t) in &self.bounds {
            let b = match bound {
                Bound::Mmhb => mmhb_msun,
                Bound::Chandrasekhar => chandrasekhar_msun,
            };
            if let Some(b) = b {
                s += t.minus_two_ln_l(b);
            }
        }
        if let (Some(pop), Some(b)) = (&self.population, mmhb_msun) {
            s += -2.0 * pop.ln_term(b);
        }
        s
    }

    /// The term of one bound, if some object faces it.
    pub fn bound_term(&self, bound: Bound) -> Option<&BoundTerm> {
        self.bounds
            .iter()
            .find(|(b, _)| *b == bound)
            .map(|(_, t)| t)
    }

    /// ln P of object `k` (caller's index; `objects` is the list the comparison was made of) in
    /// its mass test at the grid point's class bound, under the likelihood actually used
    /// (shared shift at its profiled value). `None` without a mass test.
    pub fn ln_p_in_fit(
        &self,
        objects: &[CatalogueObject],
        k: usize,
        class_bound_msun: f64,
    ) -> Option<f64> {
        let u = self.uses.get(k)?;
        let term = u.mass_term?;
        let bound = if term == Term::WhiteDwarfMass {
            Bound::Chandrasekhar
        } else {
            Bound::Mmhb
        };
        let t = self.bound_term(bound)?;
        let pos = self.term_position(k)?;
        let m = u.measurement(objects.get(k)?);
        Some(t.ln_p_object(term, pos, &m, class_bound_msun))
    }

    /// Object `k`'s position among the members of its mass term ([`Confrontation::members`]
    /// order, the positions [`Confrontation::class_counts`] counts in); `None` without one.
    pub fn term_position(&self, k: usize) -> Option<usize> {
        // `uses` and `term_positions` are built together in object order (use k is object k).
        let pos = self.term_positions.get(k).copied()?;
        (pos != u32::MAX).then_some(pos as usize)
    }
}

/// A mass term's objects, in object order, as positions in the object list: the class's
/// measurements made on demand ([`ObjectUse::measurement`], the same to the bit) for the
/// reductions, where a list of them would be 48 bytes per object against 4 here.
#[derive(Debug, Clone)]
pub struct TermMembers<'a> {
    positions: Vec<u32>,
    objects: &'a [CatalogueObject],
    uses: &'a ObjectUses,
}

impl<'a> TermMembers<'a> {
    /// The objects of `term` (`uses` are the objects' uses, in the same order). More than
    /// 2³² − 1 objects are refused.
    pub fn new(
        objects: &'a [CatalogueObject],
        uses: &'a ObjectUses,
        term: Term,
    ) -> Result<Self, StatsError> {
        let n = objects.len().min(uses.len());
        check_u32_positions(n, "in one comparison")?;
        let of_term = |u: &ObjectUse| u.mass_term == Some(term);
        // Counted first and allocated to size: collected from a filter, a list grows by
        // doubling to up to twice its length.
        let mut positions = Vec::with_capacity(uses.iter().take(n).filter(|u| of_term(u)).count());
        positions.extend(
            uses.iter()
                .take(n)
                .enumerate()
                .filter(|(_, u)| of_term(u))
                .map(|(k, _)| k as u32),
        );
        Ok(Self {
            positions,
            objects,
            uses,
        })
    }

    /// The members' positions in the object list, ascending.
    pub fn positions(&self) -> &[u32] {
        &self.positions
    }
}

impl MeasurementSource for TermMembers<'_> {
    fn len(&self) -> usize {
        self.positions.len()
    }

    fn measurement(&self, i: usize) -> Measurement {
        let k = self.positions[i] as usize;
        self.uses[k].measurement(&self.objects[k])
    }
}

impl<'a> From<&'a TermMembers<'_>> for ClassMeasurements<'a> {
    fn from(members: &'a TermMembers<'_>) -> Self {
        ClassMeasurements::made(members)
    }
}

/// Maps a catalogue object to the statistics' measurement for its class.
pub fn measurement_of(o: &CatalogueObject, mu_e: f64) -> Measurement {
    measurement_scaled(o, class_scale(o.class, mu_e))
}

/// The bound scale of a class: 4/μe² for white dwarfs (B_Ch ∝ 1/μe²), 1 otherwise.
fn class_scale(class: ObjectClass, mu_e: f64) -> f64 {
    match class {
        ObjectClass::WhiteDwarf => 4.0 / (mu_e * mu_e),
        _ => 1.0,
    }
}

/// [`measurement_of`] at a given bound scale (the one code that makes a measurement of an
/// object, so that one made again is the same to the bit).
fn measurement_scaled(o: &CatalogueObject, scale: f64) -> Measurement {
    let side = match o.class {
        ObjectClass::HBurning => Side::AtLeast,
        ObjectClass::BrownDwarf | ObjectClass::WhiteDwarf => Side::AtMost,
    };
    let sigma = match (o.mass_err_lo_msun.get(), o.mass_err_hi_msun.get()) {
        (Some(a), Some(b)) => Some(a.max(b)),
        (Some(a), None) | (None, Some(a)) => Some(a),
        (None, None) => None,
    };
    let kind = match o.mass_limit {
        MassLimit::None => MassKind::Measured {
            lo: o.mass_err_lo_msun.get().unwrap_or(0.0),
            hi: o
                .mass_err_hi_msun
                .get()
                .or(o.mass_err_lo_msun.get())
                .unwrap_or(0.0),
        },
        MassLimit::Upper => MassKind::UpperLimit { sigma },
        MassLimit::Lower => MassKind::LowerLimit { sigma },
    };
    Measurement {
        mass_msun: o.mass_msun,
        kind,
        side,
        scale,
    }
}

/// Decides how each object enters the comparison (age rule of `docs/bounds.md` §5).
pub fn plan(objects: &[CatalogueObject], opts: &EngineOptions) -> Vec<ObjectUse> {
    objects.iter().map(|o| plan_one(o, opts)).collect()
}

/// [`plan`] for one object alone (a use depends on its own object only): a quick look over a
/// large catalogue need not hold every use at once.
pub fn plan_one(o: &CatalogueObject, opts: &EngineOptions) -> ObjectUse {
    {
        {
            let mu_e = o.mu_e().get().unwrap_or(opts.default_mu_e);
            let measurement = measurement_of(o, mu_e);
            let mut flags = Flags::default();
            let mut excluded = None;
            let term = Term::mass_test_of(o.class);
            if term != Term::WhiteDwarfMass {
                match o.age_gyr().get() {
                    Some(age) if age < opts.age_min_mmhb_gyr => {
                        flags.raise("young");
                        if !opts.include_young {
                            excluded = Some(LeftOut::Young);
                        }
                    }
                    Some(_) => {}
                    None => {
                        flags.raise("age_unknown");
                        if opts.exclude_age_unknown {
                            excluded = Some(LeftOut::AgeUnknown);
                        }
                    }
                }
            }
            if !measurement.informative() {
                flags.raise("limit_uninformative");
            }
            match o.mass_method {
                MassMethod::Model => {
                    flags.raise("model_mass");
                    if opts.radius.leaves_out_model_mass(o) && excluded.is_none() {
                        excluded = Some(LeftOut::ModelMass);
                    }
                }
                MassMethod::Unknown => flags.raise("mass_method_unknown"),
                MassMethod::Dynamical | MassMethod::Redshift => {}
            }
            let is_wd = o.class == ObjectClass::WhiteDwarf;
            let mut radius_excluded = None;
            let mut radius_term = is_wd && wd_radius::has_radius_measurement(o);
            if radius_term {
                if let Some(why) = wd_radius::radius_domain(o, &opts.radius) {
                    if why != LeftOut::ModelMass {
                        flags.raise(why.flag());
                    }
                    radius_excluded = Some(why);
                    radius_term = false;
                } else if o.radius_model_rsun().is_some() {
                    flags.raise("radius_anchored");
                }
            }
            ObjectUse {
                mass_term: if excluded.is_some() { None } else { Some(term) },
                bound_scale: measurement.scale,
                radius_term,
                excluded,
                radius_excluded,
                flags,
                mu_e,
                core: is_wd.then(|| ResolvedCore::resolve(o.core(), o.mass_msun)),
            }
        }
    }
}

/// Why a comparison could not be made.
#[derive(Debug, thiserror::Error)]
pub enum EngineError {
    /// The statistics refused an input.
    #[error(transparent)]
    Stats(#[from] StatsError),
    /// The grid is empty or inconsistent.
    #[error("invalid grid: {0}")]
    Grid(String),
}

/// Runs the comparison over the whole grid.
pub fn confront(
    objects: &[CatalogueObject],
    surface: &dyn BoundSurface,
    opts: &EngineOptions,
) -> Result<Confrontation, EngineError> {
    let (nu, nt) = (surface.upsilon().len(), surface.tau().len());
    let n = nu * nt;
    if n == 0 {
        return Err(EngineError::Grid("the grid has no points".into()));
    }
    let mut uses = ObjectUses::plan(objects, opts)?;
    let spins = super::spin::prepare(objects, &mut uses, surface, opts);
    let mmhb: Vec<Option<f64>> = (0..n).map(|i| surface.mmhb_msun(i)).collect();
    let chandra: Vec<Option<f64>> = (0..n).map(|i| surface.chandrasekhar_mu2_msun(i)).collect();

    // Each mass term's objects in object order, as positions (4 bytes each), their
    // measurements made again wherever they are read: lists of the measurements themselves
    // were 48 bytes per object, alive at the run's peak (while the bound terms are built).
    let (hb_at, bd_at, wd_at) = (
        TermMembers::new(objects, &uses, Term::HBurning)?,
        TermMembers::new(objects, &uses, Term::BrownDwarf)?,
        TermMembers::new(objects, &uses, Term::WhiteDwarfMass)?,
    );
    let (hb, bd, wd) = (
        ClassMeasurements::from(&hb_at),
        ClassMeasurements::from(&bd_at),
        ClassMeasurements::from(&wd_at),
    );

    let mut class_counts = Vec::new();
    for (term, ms, values, floor) in [
        (Term::HBurning, hb, &mmhb, opts.mmhb_floor_msun),
        (Term::BrownDwarf, bd, &mmhb, opts.mmhb_floor_msun),
        (
            Term::WhiteDwarfMass,
            wd,
            &chandra,
            opts.chandrasekhar_floor_msun,
        ),
    ] {
        if ms.is_empty() {
            continue;
        }
        let finite: Vec<f64> = values.iter().flatten().copied().collect();
        let Some(range) = super::reduce::bound_range(&finite) else {
            continue;
        };
        class_counts.push((term, ClassCounts::new(ms, floor, range, &opts.reduce)?));
    }

    let mut bounds: Vec<(Bound, BoundTerm)> = Vec::new();
    {
        let mut mt = opts.mass_terms.clone();
        mt.reduce = opts.reduce.clone();
        for (bound, values, floor, classes) in [
            (
                Bound::Mmhb,
                &mmhb,
                opts.mmhb_floor_msun,
                vec![(Term::HBurning, hb), (Term::BrownDwarf, bd)],
            ),
            (
                Bound::Chandrasekhar,
                &chandra,
                opts.chandrasekhar_floor_msun,
                vec![(Term::WhiteDwarfMass, wd)],
            ),
        ] {
            let classes: Vec<(Term, ClassMeasurements<'_>)> = classes
                .into_iter()
                .filter(|(_, ms)| !ms.is_empty())
                .collect();
            if classes.is_empty() {
                continue;
            }
            let finite: Vec<f64> = values.iter().flatten().copied().collect();
            let Some(range) = super::reduce::bound_range(&finite) else {
                continue;
            };
            bounds.push((bound, BoundTerm::build(&classes, floor, range, &mt)?));
        }
    }
    let population = match opts.population_window_msun {
        Some(window) => {
            let term = PopulationTerm::new(window, hb.iter(), bd.iter())?;
            let finite: Vec<f64> = mmhb.iter().flatten().copied().collect();
            if let Some((lo, hi)) = super::reduce::bound_range(&finite) {
                if !term.covers(lo, hi) {
                    return Err(EngineError::Grid(format!(
                        "the population window [{}, {}] M☉ must contain every MMHB of the grid ([{lo:.4}, {hi:.4}] M☉)",
                        window.0, window.1
                    )));
                }
            }
            Some(term)
        }
        None => None,
    };
    let mut per_term: [Vec<Option<f64>>; 5] = Default::default();
    for t in Term::ALL {
        per_term[t.index()] = vec![Some(0.0); n];
    }
    for (bound, bt) in &bounds {
        let values = match bound {
            Bound::Chandrasekhar => &chandra,
            Bound::Mmhb => &mmhb,
        };
        let parts: Vec<Option<Vec<(Term, f64)>>> =
            values.par_iter().map(|b| b.map(|b| bt.split(b))).collect();
        for t in bt.terms() {
            per_term[t.index()] = parts
                .iter()
                .map(|p| {
                    p.as_ref()
                        .map(|v| v.iter().find(|(x, _)| x == t).map_or(0.0, |x| x.1))
                })
                .collect();
        }
    }
    if let Some(pop) = &population {
        // The population term belongs to the hydrogen-burning/brown-dwarf boundary; it is
        // carried in the `hburning` term so that the per-class maps still add up to the joint.
        for (i, b) in mmhb.iter().enumerate() {
            if let (Some(b), Some(v)) = (b, per_term[Term::HBurning.index()][i].as_mut()) {
                *v += -2.0 * pop.ln_term(*b);
            }
        }
    }
    let mut radius_objects = prepare_radius_objects(objects, &uses, surface, opts);
    super::spin::correct_radius_tests(&mut radius_objects, &spins);
    let (spin_grid, spin_spans) = super::spin::minus_two_ln_l_grid(&spins, surface, n);
    per_term[Term::Spin.index()] = spin_grid;
    if opts.radius.model == wd_radius::WdRadiusModel::Hot {
        // No finite-temperature model at the object's own mass and Teff (outside the table, or
        // no hydrostatic solution): left out of the radius test, flagged, never silently.
        radius_objects.retain(|r| {
            if r.at_nominal.is_some() {
                return true;
            }
            uses.update(r.index, |u| {
                u.radius_term = false;
                u.flags.raise(LeftOut::OutsideModel.flag());
                u.radius_excluded = Some(LeftOut::OutsideModel);
            });
            false
        });
    }
    // The prior on the true masses is the mass function of the objects actually in the test.
    let radius_mass_prior = weigh_by_population(objects, &mut radius_objects, &opts.radius);
    // The radius scale shared by every white dwarf (`None` with per-object floors), read by the
    // floor's fit, the grid's radius term and the confrontation's record.
    let radius_shared = wd_radius::shared_nuisance(&opts.radius, &opts.mass_terms);
    // Then the per-object floor's size, on the final objects with their final weights.
    let radius_floor_scale = match opts.radius.floor_fit {
        wd_radius::FloorFit::Fitted => {
            wd_radius::FloorScale::fit(&radius_objects, radius_shared.as_ref())
        }
        wd_radius::FloorFit::Fixed => None,
    };
    if let Some(k) = &radius_floor_scale {
        k.apply(&mut radius_objects);
    }
    if !radius_objects.is_empty() {
        let queries = RadiusQueries::new(
            &radius_objects
                .iter()
                .flat_map(|r| {
                    let mu_e = uses[r.index].mu_e;
                    r.nodes.iter().map(move |&(m, _)| (m, mu_e))
                })
                .collect::<Vec<_>>(),
        );
        let ups = surface.upsilon();
        let spun = super::spin::RadiusCorrections::new(&spins, &radius_objects);
        // Rows of constant τ in parallel, each along ϒ in order: the shared scale's search at
        // a point starts at the previous point's δ̂ (fewer Newton steps), and since a row is
        // always run in the same order the outputs do not depend on the number of threads.
        per_term[Term::WhiteDwarfRadius.index()] = wd_radius::warm_started(n, nu, |i, start| {
            if chandra[i].is_none() {
                return (None, start);
            }
            let mut radii = surface.wd_radii_prepared(i, &queries);
            // Spinning white dwarfs: the point's own slow-rotation factor, inside the term.
            spun.apply(&spins, surface, i, &mut radii);
            let (value, delta_hat) = wd_radius::radius_total_from(
                &radius_objects,
                &radii,
                ups[i % nu],
                radius_shared.as_ref(),
                start,
            );
            (Some(value), delta_hat)
        });
    }
    // A point is usable only where every bound that some object needs exists.
    let joint = (0..n)
        .map(|i| {
            if mmhb[i].is_none() || chandra[i].is_none() {
                return None;
            }
            let mut s = 0.0;
            for t in Term::ALL {
                s += per_term[t.index()][i]?;
            }
            Some(s)
        })
        .collect();
    for t in Term::ALL {
        for i in 0..n {
            if mmhb[i].is_none() || chandra[i].is_none() {
                per_term[t.index()][i] = None;
            }
        }
    }
    let term_positions = term_positions(&uses);
    Ok(Confrontation {
        n_upsilon: nu,
        n_tau: nt,
        per_term,
        joint,
        uses,
        term_positions,
        class_counts,
        population,
        radius_objects,
        radius_mass_prior,
        radius_floor_scale,
        radius_shared,
        bounds,
        spins,
        spin_spans,
    })
}

/// Each use's position among the uses of its own mass term (`u32::MAX` without one).
fn term_positions(uses: &ObjectUses) -> Vec<u32> {
    let mut next = [0u32; 5];
    uses.iter()
        .map(|u| match u.mass_term {
            Some(t) => {
                let p = next[t.index()];
                next[t.index()] += 1;
                p
            }
            None => u32::MAX,
        })
        .collect()
}

/// The radius tests of the objects that take one: mass nodes, the standard model at each node
/// (asked of the surface once for all objects), floor and Teff error.
pub fn prepare_radius_objects(
    objects: &[CatalogueObject],
    uses: &ObjectUses,
    surface: &dyn BoundSurface,
    opts: &EngineOptions,
) -> Vec<ObjectRadius> {
    let mut out: Vec<ObjectRadius> = Vec::new();
    let mut queries: Vec<WdQuery> = Vec::new();
    for (index, u) in uses.iter().enumerate().filter(|(_, u)| u.radius_term) {
        let o = &objects[index];
        let (Some(r), Some(e)) = (o.radius_rsun().get(), o.radius_err_rsun().get()) else {
            continue;
        };
        let core = u
            .core
            .unwrap_or_else(|| ResolvedCore::resolve(o.core(), o.mass_msun));
        let nodes = radius_mass_nodes(o);
        // The part of the floor common to every white dwarf (the structure model itself) is
        // one shared scale; what is left is the object's own (docs/white-dwarfs.md §13.1).
        let shared =
            wd_radius::shared_nuisance(&opts.radius, &opts.mass_terms).map_or(0.0, |n| n.sigma);
        let (floor_fraction, shared_fraction) = wd_radius::split_floor(
            wd_radius::floor_fraction(&opts.radius, core, o.teff_k().get()),
            shared,
        );
        for &(m, _) in &nodes {
            queries.push(WdQuery {
                mass_msun: m,
                mu_e: u.mu_e,
                teff_k: o.teff_k().get(),
                core,
                envelope: o.envelope(),
            });
        }
        out.push(ObjectRadius {
            index,
            radius_rsun: r,
            radius_err_rsun: e,
            nodes,
            standard: Vec::new(),
            floor_fraction,
            shared_fraction,
            teff_err_k: o.teff_err_k().get().unwrap_or(0.0),
            at_nominal: None,
        });
    }
    // One more query per object: the nominal mass (its model anchors a user's radius_model, and
    // without one the object is outside the hot model).
    let nominal_queries: Vec<WdQuery> = out
        .iter()
        .map(|r| {
            let o = &objects[r.index];
            let u = &uses[r.index];
            WdQuery {
                mass_msun: o.mass_msun,
                mu_e: u.mu_e,
                teff_k: o.teff_k().get(),
                core: u
                    .core
                    .unwrap_or_else(|| ResolvedCore::resolve(o.core(), o.mass_msun)),
                envelope: o.envelope(),
            }
        })
        .collect();
    let n_nodes = queries.len();
    queries.extend(nominal_queries);
    let answers = surface.wd_standard_radii(&queries);
    let (node_answers, nominal_answers) = answers.split_at(n_nodes.min(answers.len()));
    let mut standard = node_answers.iter().copied();
    let mut nominal = nominal_answers.iter().copied();
    for r in &mut out {
        let o = &objects[r.index];
        let mut s: Vec<Option<WdStandard>> = standard.by_ref().take(r.nodes.len()).collect();
        let mut at_nominal = nominal.next().flatten();
        if let Some(model_rsun) = o.radius_model_rsun().get() {
            // The user's model radius anchors the standard radius at the nominal mass; the
            // tool's model only carries its mass dependence to the other nodes.
            let scale = at_nominal
                .filter(|c| c.radius_rsun > 0.0)
                .map(|c| model_rsun / c.radius_rsun);
            for x in s.iter_mut() {
                *x = match (*x, scale) {
                    (Some(mut v), Some(k)) => {
                        v.radius_rsun *= k;
                        v.envelope_fraction = 0.0;
                        Some(v)
                    }
                    _ => None,
                };
            }
            at_nominal = match (at_nominal, scale) {
                (Some(mut c), Some(k)) => {
                    c.radius_rsun *= k;
                    c.envelope_fraction = 0.0;
                    Some(c)
                }
                _ => None,
            };
        }
        r.standard = s;
        r.at_nominal = at_nominal;
    }
    out
}

/// With the population prior (the default), estimates the radius objects' mass function from
/// their measured masses ([`wd_radius::PopulationPrior`]) and weighs every object's mass nodes
/// by it; the prior is returned for the report. Nothing changes with the flat prior.
fn weigh_by_population(
    objects: &[CatalogueObject],
    radius_objects: &mut [ObjectRadius],
    opts: &wd_radius::RadiusOptions,
) -> Option<wd_radius::PopulationPrior> {
    if opts.mass_prior != wd_radius::RadiusMassPrior::Population {
        return None;
    }
    let masses: Vec<(f64, f64, f64)> = radius_objects
        .iter()
        .map(|r| {
            let o = &objects[r.index];
            let (lo, hi) = radius_mass_widths(o);
            (o.mass_msun, lo, hi)
        })
        .collect();
    let prior = wd_radius::PopulationPrior::estimate(&masses)?;
    for r in radius_objects.iter_mut() {
        prior.reweight(&mut r.nodes);
    }
    Some(prior)
}

/// Number of nodes of the mass quadrature of the radius term.
const RADIUS_QUADRATURE_NODES: usize = 41;

/// The mass widths (σ₋, σ₊) of an object's radius term: the upper one defaults to the lower,
/// a missing one is 0.
fn radius_mass_widths(o: &CatalogueObject) -> (f64, f64) {
    let lo = o.mass_err_lo_msun.get().unwrap_or(0.0);
    let hi = o
        .mass_err_hi_msun
        .get()
        .or(o.mass_err_lo_msun.get())
        .unwrap_or(0.0);
    (lo, hi)
}

/// The mass nodes and weights (density × quadrature weight) over which the radius term of
/// an object is marginalised: [`split_normal_mass_nodes`] of its mass and widths.
pub fn radius_mass_nodes(o: &CatalogueObject) -> Vec<(f64, f64)> {
    let (lo, hi) = radius_mass_widths(o);
    split_normal_mass_nodes(o.mass_msun, lo, hi)
}

/// Composite Simpson nodes over [m0 − 6σ₋, m0 + 6σ₊] of the split-normal density of a measured
/// mass m0 (normalisation 2/(√(2π)(σ₋+σ₊))): (mass, density × quadrature weight), with the flat
/// prior; a single node of weight 1 for an exact mass.
pub fn split_normal_mass_nodes(m0: f64, lo: f64, hi: f64) -> Vec<(f64, f64)> {
    if lo <= 0.0 && hi <= 0.0 {
        return vec![(m0, 1.0)];
    }
    let (a, b) = (m0 - 6.0 * lo, m0 + 6.0 * hi);
    let nodes = RADIUS_QUADRATURE_NODES;
    let h = (b - a) / (nodes - 1) as f64;
    let norm = 2.0 / ((2.0 * std::f64::consts::PI).sqrt() * (lo + hi));
    (0..nodes)
        .map(|k| {
            let m = a + h * k as f64;
            let s = if m < m0 { lo } else { hi };
            let dens = if m > 0.0 {
                norm * (-0.5 * ((m - m0) / s).powi(2)).exp()
            } else {
                0.0
            };
            let w = if k == 0 || k == nodes - 1 {
                1.0
            } else if k % 2 == 1 {
                4.0
            } else {
                2.0
            };
            (m.max(f64::MIN_POSITIVE), w * dens * h / 3.0)
        })
        .collect()
}

/// ln P of one object's mass test `term` (its measurement `m`) against a bound value of its
/// class (scaled by μe for white dwarfs), with the class floor.
pub fn ln_p_object(
    term: Term,
    m: &Measurement,
    class_bound_msun: f64,
    opts: &EngineOptions,
) -> f64 {
    // The measurement's own scale (μe of a white dwarf) is applied inside.
    ln_prob_consistent(m, class_bound_msun, class_floor(term, opts))
}

/// The theory floor of a mass term's bound (1σ, class value).
fn class_floor(term: Term, opts: &EngineOptions) -> f64 {
    match term {
        Term::WhiteDwarfMass => opts.chandrasekhar_floor_msun,
        _ => opts.mmhb_floor_msun,
    }
}

/// Tension in σ of one object's mass test against its class bound (see [`ln_p_object`]):
/// z = −Φ⁻¹(P), positive on the wrong side. For P > ½ it is computed from 1 − P (the
/// probability of the opposite side), so that objects far on the safe side keep a finite,
/// exact z instead of rounding P to 1. `None` for an uninformative limit.
pub fn tension_of(
    term: Term,
    m: &Measurement,
    class_bound_msun: f64,
    opts: &EngineOptions,
) -> Option<f64> {
    if !m.informative() {
        return None;
    }
    wrong_side_tension(term, m, class_bound_msun, opts)
        .or_else(|| safe_side_tension(term, m, class_bound_msun, opts))
}

/// [`tension_of`] where it is positive: `Some(z)` (the same value) when P ≤ ½, `None` for an
/// object on the safe side (P > ½, z < 0) without evaluating the opposite side's probability.
/// A caller that keeps only tensions above a threshold of 1σ or more loses nothing: on the
/// safe side z = Φ⁻¹(1 − P) ≤ 0 up to rounding.
pub fn wrong_side_tension(
    term: Term,
    m: &Measurement,
    class_bound_msun: f64,
    opts: &EngineOptions,
) -> Option<f64> {
    let ln_p = ln_p_object(term, m, class_bound_msun, opts);
    // A NaN ln P, too, is left to `tension_of`'s safe-side path.
    let wrong_side = ln_p <= -std::f64::consts::LN_2;
    if !m.informative() || !wrong_side {
        return None;
    }
    Some(tension_sigma(ln_p))
}

/// The safe-side branch of [`tension_of`] (P > ½): z from 1 − P.
fn safe_side_tension(
    term: Term,
    m: &Measurement,
    class_bound_msun: f64,
    opts: &EngineOptions,
) -> Option<f64> {
    let floor = class_floor(term, opts);
    match m.kind {
        MassKind::Measured { .. } => {
            // What `ln_p_object` computes for the flipped side.
            let mut flipped = *m;
            flipped.side = match m.side {
                Side::AtLeast => Side::AtMost,
                Side::AtMost => Side::AtLeast,
            };
            let ln_q = ln_prob_consistent(&flipped, class_bound_msun, floor);
            Some(super::prob::normal_quantile_from_ln(ln_q))
        }
        MassKind::UpperLimit { sigma } | MassKind::LowerLimit { sigma } => {
            // P = Φ(d/s) with d the distance on the allowed side: z = −d/s exactly.
            let b = m.scale * class_bound_msun;
            let th = super::prob::effective_floor_msun(b, m.scale * floor).0;
            let s = sigma.unwrap_or(0.0).hypot(th);
            let d = match m.side {
                Side::AtLeast => m.mass_msun - b,
                Side::AtMost => b - m.mass_msun,
            };
            Some(-d / s)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::{ClassMeasurements, Flags, ObjectUse, Term};

    #[test]
    fn a_use_stays_compact() {
        // One use per object is held until the outputs are written (a million of them in a
        // large run): 144 bytes before the reasons became codes and the spilled flags a box,
        // 88 while it held its measurement (48 bytes, made again from the object since) and
        // its own index (use k is object k). What is left: the flags (16), μe and the bound
        // scale (8 each), five one-byte codes, padded to 40.
        assert_eq!(std::mem::size_of::<ObjectUse>(), 40);
        assert_eq!(std::mem::size_of::<Flags>(), 16);
    }

    #[test]
    fn a_measurement_made_again_is_the_one_planned() {
        // The use holds no measurement: every consumer makes it again from the object, and
        // the outputs stay byte-identical only if that is the measurement the plan made, to
        // the bit (common practice, no source). Each mass kind, both sides, μe ≠ 2.
        // Objects read from a catalogue's text, as a run reads them.
        let mut text = String::from("id,class,mass,mass_err_lo,mass_err_hi,mass_limit,mu_e\n");
        let mut n = 0;
        for class in ["hburning", "brown_dwarf", "white_dwarf"] {
            for limit in ["", "upper", "lower"] {
                for errs in ["0.01,0.03", ",0.02", ","] {
                    for mu_e in ["", "2.3"] {
                        n += 1;
                        text += &format!("X{n},{class},0.6,{errs},{limit},{mu_e}\n");
                    }
                }
            }
        }
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("m.csv");
        std::fs::write(&path, text).unwrap();
        let objects = crate::catalogue::vet_files(&[path], None, &Default::default())
            .unwrap()
            .objects;
        let kinds: std::collections::HashSet<_> = objects
            .iter()
            .map(|o| (o.class.label(), o.mass_limit.label(), o.mu_e().is_some()))
            .collect();
        assert!(kinds.len() >= 9, "{kinds:?}");
        let opts = super::EngineOptions::default();
        for o in &objects {
            let u = super::plan_one(o, &opts);
            let planned = super::measurement_of(o, u.mu_e);
            let again = u.measurement(o);
            assert_eq!(again, planned);
            assert_eq!(again.scale.to_bits(), planned.scale.to_bits());
        }
        // Each distinct use is held once, and every object still reads its own plan.
        let planned = super::plan(&objects, &opts);
        let uses = super::ObjectUses::plan(&objects, &opts).unwrap();
        assert_eq!(uses.len(), planned.len());
        assert!(uses.distinct() < planned.len());
        assert!(uses.iter().eq(planned.iter()));
        // A term's members lend the bound terms the same measurements, in object order.
        for t in [Term::HBurning, Term::BrownDwarf, Term::WhiteDwarfMass] {
            let members = super::TermMembers::new(&objects, &uses, t).unwrap();
            let lent: Vec<_> = ClassMeasurements::from(&members).iter().collect();
            let want: Vec<_> = uses
                .iter()
                .zip(&objects)
                .filter(|(u, _)| u.mass_term == Some(t))
                .map(|(u, o)| u.measurement(o))
                .collect();
            assert!(!want.is_empty());
            assert_eq!(lent, want);
        }
    }

    #[test]
    fn a_shared_use_changed_for_one_object_only() {
        // A spin test or a radius left out changes one object's use; the objects that shared
        // it keep theirs (common practice, no source).
        let star = ObjectUse {
            mass_term: Some(Term::HBurning),
            bound_scale: 1.0,
            radius_term: false,
            excluded: None,
            radius_excluded: None,
            flags: Flags::default(),
            core: None,
            mu_e: 2.0,
        };
        let mut uses: super::ObjectUses = vec![star.clone(); 4].into_iter().collect();
        assert_eq!(uses.distinct(), 1);
        uses.update(2, |u| {
            u.bound_scale *= 1.01;
            u.flags.raise("spin_corrected");
        });
        uses.update(3, |_| {});
        assert_eq!(uses.distinct(), 2);
        assert_eq!((&uses[0], &uses[1], &uses[3]), (&star, &star, &star));
        assert_eq!(uses[2].bound_scale, 1.01);
        assert!(uses[2].flags.contains("spin_corrected"));
        uses.update(9, |u| u.mu_e = 3.0);
        assert_eq!(uses.len(), 4);
        // A bound scale that differs in its last bit is a use of its own: nothing is rounded.
        let mut close = star.clone();
        close.bound_scale = f64::from_bits(1.0f64.to_bits() + 1);
        let two: super::ObjectUses = [star.clone(), close.clone()].into_iter().collect();
        assert_eq!((two.distinct(), &two[1]), (2, &close));
    }

    #[test]
    fn flags_keep_their_order_inline_and_spilled() {
        // The flags cell of objects.csv lists flags in the order they were raised (README);
        // storage is not allowed to change it (common practice, no source).
        let mut f = Flags::default();
        assert!(f.is_empty());
        f.raise("age_unknown");
        f.push("mass_method_unknown".to_string());
        assert_eq!(f.join(";"), "age_unknown;mass_method_unknown");
        assert!(f.contains("age_unknown") && !f.contains("young"));
        f.raise("a_new_flag");
        f.raise("young");
        assert_eq!(
            f.iter().collect::<Vec<_>>(),
            ["age_unknown", "mass_method_unknown", "a_new_flag", "young"]
        );
        let mut many = Flags::default();
        for _ in 0..20 {
            many.raise("elm");
        }
        assert_eq!(many.iter().count(), 20);
    }
}
