//! The mass-bound terms of the likelihood, one per bound: the classes that meet at it, the
//! likelihood model (product of consistency probabilities, or calibrated), and the shared
//! systematic of the bound as a nuisance parameter.
//!
//! Each bound B (the MMHB for `hburning` and `brown_dwarf`, the Chandrasekhar mass for
//! `white_dwarf`) carries one theory error δ common to every object that faces it, with a
//! Gaussian prior of the bound's floor width. The term is
//! F(B) = elim_δ [Σ_c −2 ln L_c(B + δ)] (profiled by default, or marginalised; see
//! [`super::nuisance`]), where each L_c keeps only a small per-object scatter. F depends on the
//! grid point only through B, so it is tabulated once and interpolated (the one-dimensional reduction
//! applies unchanged). The old behaviour — the whole floor as an independent error per object —
//! stays available as [`Systematics::PerObject`].
//!
//! ```
//! use dwarfbound::confront::mass_terms::{BoundTerm, MassTermOptions};
//! use dwarfbound::confront::engine::Term;
//! use dwarfbound::confront::prob::{MassKind, Measurement, Side};
//! let m = |mass, side| Measurement { mass_msun: mass,
//!     kind: MassKind::Measured { lo: 0.003, hi: 0.003 }, side, scale: 1.0 };
//! let hb = [m(0.080, Side::AtLeast)];
//! let bd = [m(0.070, Side::AtMost)];
//! let t = BoundTerm::build(&[(Term::HBurning, &hb), (Term::BrownDwarf, &bd)], 0.005,
//!     (0.07, 0.08), &MassTermOptions::default()).unwrap();
//! // Two objects bracket the bound: the profiled term is small at 0.075.
//! assert!(t.minus_two_ln_l(0.075) < 1.0);
//! ```

use super::calibrated::{CalibratedCurve, CalibratedOptions, ObjectCurve};
use super::engine::Term;
use super::nuisance::{eliminate, NuisanceMethod, SharedNuisance};
use super::prob::{ln_prob_consistent, ClassMeasurements, MassKind, Measurement, StatsError};
use super::reduce::{ClassCurve, CubicSpline, ReduceOptions, SplineEnd, SplitMix64};

/// How the bound's theory floor enters.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Systematics {
    /// One shift common to all objects of the bound, eliminated as a nuisance (default;
    /// configuration value `shared`).
    Shared,
    /// An independent error per object (the behaviour of earlier versions; `per-object`).
    PerObject,
}

impl Systematics {
    /// Configuration and output name.
    pub fn name(self) -> &'static str {
        match self {
            Systematics::Shared => "shared",
            Systematics::PerObject => "per-object",
        }
    }
    /// Parses `shared` or `per-object`.
    pub fn from_name(s: &str) -> Option<Self> {
        match s {
            "shared" => Some(Systematics::Shared),
            "per-object" | "per_object" => Some(Systematics::PerObject),
            _ => None,
        }
    }
}

/// Which likelihood of the labels is used.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LikelihoodChoice {
    /// Decide per bound by the crowding rule ([`MassTermOptions::auto_min_near`]).
    Auto,
    /// Product of consistency probabilities (flat prior on each true mass).
    Product,
    /// Calibrated with the deconvolved mass function.
    Calibrated,
}

impl LikelihoodChoice {
    /// Configuration name: `auto`, `product`, `calibrated`.
    pub fn name(self) -> &'static str {
        match self {
            LikelihoodChoice::Auto => "auto",
            LikelihoodChoice::Product => "product",
            LikelihoodChoice::Calibrated => "calibrated",
        }
    }
    /// Parses a configuration name.
    pub fn from_name(s: &str) -> Option<Self> {
        match s {
            "auto" => Some(LikelihoodChoice::Auto),
            "product" => Some(LikelihoodChoice::Product),
            "calibrated" => Some(LikelihoodChoice::Calibrated),
            _ => None,
        }
    }
}

/// Settings of the mass terms.
#[derive(Debug, Clone, PartialEq)]
pub struct MassTermOptions {
    /// Shared (default) or per-object floor.
    pub systematics: Systematics,
    /// Profile (default) or marginalise the shared shift.
    pub method: NuisanceMethod,
    /// The shift is searched over ±reach·σ and the class curves tabulated that far (6).
    pub reach_sigma: f64,
    /// Per-object scatter of the bound that remains with a shared floor, as a fraction of the
    /// bound's floor (default 0.4: 0.002 M☉ for the MMHB, 0.012 M☉ for the Chandrasekhar mass).
    pub scatter_fraction: f64,
    /// Product, calibrated, or automatic.
    pub likelihood: LikelihoodChoice,
    /// Automatic rule: calibrated when at least this many objects of the bound's classes lie
    /// within `auto_z` σ of the grid's range of the bound (default 10, from the coverage study).
    pub auto_min_near: usize,
    /// "Near" in σ for the rule (default 3).
    pub auto_z: f64,
    /// Automatic rule at a one-sided edge (every object on the same side of the bound, e.g.
    /// white dwarfs at the Chandrasekhar mass): calibrated, with the truncated population of
    /// [`super::calibrated::CalibratedOptions::edge_truncation`], from this many objects near
    /// the bound (default 3, from the coverage study: the product likelihood's misses grow with
    /// the number of objects at the edge, 11.5 % with 10 white dwarfs).
    pub auto_min_near_edge: usize,
    /// Class-curve tabulation (product model).
    pub reduce: ReduceOptions,
    /// Deconvolution settings (calibrated model).
    pub calibrated: CalibratedOptions,
    /// Nodes of the table of the eliminated term in B (default 257).
    pub n_nodes: usize,
}

impl Default for MassTermOptions {
    fn default() -> Self {
        Self {
            systematics: Systematics::Shared,
            method: NuisanceMethod::Profile,
            reach_sigma: 6.0,
            scatter_fraction: 0.4,
            likelihood: LikelihoodChoice::Auto,
            auto_min_near: 10,
            auto_z: 3.0,
            auto_min_near_edge: 3,
            reduce: ReduceOptions::default(),
            calibrated: CalibratedOptions::default(),
            n_nodes: 257,
        }
    }
}

/// The likelihood model actually used for a bound.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LikelihoodModel {
    /// Product of consistency probabilities.
    Product,
    /// Calibrated.
    Calibrated,
}

impl LikelihoodModel {
    /// Output name.
    pub fn name(self) -> &'static str {
        match self {
            LikelihoodModel::Product => "product",
            LikelihoodModel::Calibrated => "calibrated",
        }
    }
}

#[derive(Debug)]
enum Classes {
    Product(Vec<ClassCurve>),
    Calibrated(Box<CalibratedCurve>),
}

/// One object of a bound's term as a function of the bound ([`BoundTerm::object`]).
#[derive(Debug)]
pub struct ObjectTerm<'a> {
    bound: &'a BoundTerm,
    what: ObjectTermWhat<'a>,
}

#[derive(Debug)]
enum ObjectTermWhat<'a> {
    /// The object's class is not a class of this bound: ln P = 0.
    Absent,
    Product(&'a Measurement),
    Calibrated(ObjectCurve<'a>),
}

impl ObjectTerm<'_> {
    /// ln P at a bound already shifted, B + δ.
    pub fn ln_p_at_shifted(&self, shifted_b_msun: f64) -> f64 {
        match &self.what {
            ObjectTermWhat::Absent => 0.0,
            ObjectTermWhat::Product(m) => {
                ln_prob_consistent(m, shifted_b_msun, self.bound.scatter_msun)
            }
            ObjectTermWhat::Calibrated(oc) => oc.ln_p(shifted_b_msun),
        }
    }

    /// ln P at bound B with the shared shift at its profiled value δ̂(B).
    pub fn ln_p(&self, b_msun: f64) -> f64 {
        self.ln_p_at_shifted(b_msun + self.bound.delta_hat(b_msun))
    }
}

/// One bound's term of the likelihood.
#[derive(Debug)]
pub struct BoundTerm {
    terms: Vec<Term>,
    model: LikelihoodModel,
    rule: String,
    n_near: usize,
    nuisance: Option<SharedNuisance>,
    scatter_msun: f64,
    classes: Classes,
    table: Option<(CubicSpline, CubicSpline)>,
    range: (f64, f64),
    table_error: f64,
    /// Measured error of the term as used, in −2 ln L ([`BoundTerm::achieved_error`]).
    term_error: f64,
    /// Bounds B at which `term_error` was measured.
    n_check: usize,
}

/// Seeded check bounds at which a term's error is measured: enough to sample the interpolation
/// between the table's nodes at random phases, few enough that the direct sums they need (one
/// pass over the objects, O(N × window) each) stay a small part of the build.
const TERM_CHECKS: usize = 40;

impl BoundTerm {
    /// Builds the term of the classes `classes` (each with all its objects, in the caller's
    /// order) facing one bound whose theory floor is `floor_msun` and whose values over the grid
    /// span `bound_range_msun`. Each class is a slice or a [`ClassMeasurements`] (measurements
    /// made on demand, so that a large catalogue's are not all held while the term is built).
    pub fn build<'a, C>(
        classes: &[(Term, C)],
        floor_msun: f64,
        bound_range_msun: (f64, f64),
        opts: &MassTermOptions,
    ) -> Result<Self, StatsError>
    where
        C: Into<ClassMeasurements<'a>> + Copy,
    {
        let classes: Vec<(Term, ClassMeasurements<'a>)> =
            classes.iter().map(|&(t, c)| (t, c.into())).collect();
        Self::build_from(&classes, floor_msun, bound_range_msun, opts)
    }

    /// [`BoundTerm::build`] once its classes are views.
    fn build_from(
        classes: &[(Term, ClassMeasurements<'_>)],
        floor_msun: f64,
        bound_range_msun: (f64, f64),
        opts: &MassTermOptions,
    ) -> Result<Self, StatsError> {
        let (lo, hi) = bound_range_msun;
        if !(lo.is_finite() && hi.is_finite() && lo <= hi && lo > 0.0) {
            return Err(StatsError::InvalidInput(format!(
                "bound range [{lo}, {hi}] M☉ is not usable"
            )));
        }
        let width = hi - lo;
        let pad = if width > 0.0 {
            opts.reduce.pad_fraction * width
        } else {
            opts.reduce.pad_fraction * lo.max(1e-3)
        };
        let range = (lo - pad, hi + pad);
        let shared = opts.systematics == Systematics::Shared && floor_msun > 0.0;
        let (scatter, nuisance) = if shared {
            (
                opts.scatter_fraction * floor_msun,
                Some(SharedNuisance {
                    sigma: floor_msun,
                    method: opts.method,
                    reach_sigma: opts.reach_sigma,
                }),
            )
        } else {
            (floor_msun, None)
        };
        let reach = nuisance.map_or(0.0, |n| n.reach_sigma * n.sigma);
        let ext = ((range.0 - reach).max(1e-6 * range.0), range.1 + reach);
        // The automatic rule.
        let n_near = classes
            .iter()
            .flat_map(|(_, ms)| ms.iter())
            .filter(|m| m.informative() && matches!(m.kind, MassKind::Measured { .. }))
            .filter(|m| {
                let (a, b) = match m.kind {
                    MassKind::Measured { lo, hi } => (lo, hi),
                    _ => (0.0, 0.0),
                };
                let s = (a.max(b) / m.scale).hypot(floor_msun);
                let x = m.mass_msun / m.scale;
                x >= range.0 - opts.auto_z * s && x <= range.1 + opts.auto_z * s
            })
            .count();
        // A one-sided edge: every object facing the bound must lie on the same side of it.
        let mut sides = classes.iter().flat_map(|(_, ms)| ms.iter()).map(|m| m.side);
        let one_sided = sides.next().is_some_and(|first| sides.all(|s| s == first));
        let (model, rule) = match opts.likelihood {
            LikelihoodChoice::Product => (LikelihoodModel::Product, "product (chosen)".to_string()),
            LikelihoodChoice::Calibrated => (
                LikelihoodModel::Calibrated,
                "calibrated (chosen)".to_string(),
            ),
            LikelihoodChoice::Auto => {
                let cal = n_near >= opts.auto_min_near
                    || (one_sided && n_near >= opts.auto_min_near_edge);
                (
                    if cal {
                        LikelihoodModel::Calibrated
                    } else {
                        LikelihoodModel::Product
                    },
                    if one_sided {
                        format!(
                            "auto: {n_near} objects within {}σ of the bound's range, all on one side of it ({} needed for calibrated at a one-sided edge)",
                            opts.auto_z, opts.auto_min_near_edge
                        )
                    } else {
                        format!(
                            "auto: {n_near} objects within {}σ of the bound's range ({} needed for calibrated)",
                            opts.auto_z, opts.auto_min_near
                        )
                    },
                )
            }
        };
        // Enough nodes that an object as sharp as the per-object scatter is still tabulated
        // (objects sharper than `sharp_nodes` spacings are summed exactly at every call, which
        // would make each evaluation cost O(N)).
        let mut reduce = opts.reduce.clone();
        if scatter > 0.0 {
            let need = ((ext.1 - ext.0) * reduce.sharp_nodes / scatter).ceil() as usize + 1;
            let mut n = reduce.n_nodes.max(4);
            while n < need && 2 * n - 1 <= reduce.max_nodes {
                n = 2 * n - 1;
            }
            reduce.n_nodes = n;
        }
        let built = match model {
            LikelihoodModel::Product => Classes::Product(
                classes
                    .iter()
                    .map(|(_, ms)| ClassCurve::build_on_range(*ms, scatter, ext, &reduce))
                    .collect::<Result<_, _>>()?,
            ),
            LikelihoodModel::Calibrated => {
                let refs: Vec<ClassMeasurements<'_>> = classes.iter().map(|(_, ms)| *ms).collect();
                Classes::Calibrated(Box::new(CalibratedCurve::build(
                    &refs,
                    scatter,
                    ext,
                    &opts.calibrated,
                )?))
            }
        };
        let mut term = Self {
            terms: classes.iter().map(|(t, _)| *t).collect(),
            model,
            rule,
            n_near,
            nuisance,
            scatter_msun: scatter,
            classes: built,
            table: None,
            range,
            table_error: 0.0,
            term_error: f64::NAN,
            n_check: 0,
        };
        let mut rng = SplitMix64::new(opts.reduce.check_seed);
        let checks: Vec<f64> = (0..TERM_CHECKS)
            .map(|_| range.0 + (range.1 - range.0) * rng.next_f64())
            .collect();
        if let Some(n) = nuisance {
            let nodes = opts.n_nodes.max(8);
            let xs: Vec<f64> = (0..nodes)
                .map(|k| range.0 + (range.1 - range.0) * k as f64 / (nodes - 1) as f64)
                .collect();
            use rayon::prelude::*;
            let vals: Vec<(f64, f64)> = xs
                .par_iter()
                .map(|&b| {
                    let e = eliminate(&|d| term.data_minus_two_ln_l(b + d), &n);
                    (e.minus_two_ln_l, e.delta_hat)
                })
                .collect();
            if vals.iter().all(|v| v.0.is_finite() && v.1.is_finite()) && range.1 > range.0 {
                let f: Vec<f64> = vals.iter().map(|v| v.0).collect();
                let d: Vec<f64> = vals.iter().map(|v| v.1).collect();
                let sf = CubicSpline::new(&xs, &f, SplineEnd::NotAKnot)?;
                let sd = CubicSpline::new(&xs, &d, SplineEnd::NotAKnot)?;
                // The table against the elimination at each check bound; where the data term
                // is itself tabulated (calibrated), what the elimination read from it is
                // checked against the direct sums at the shifts it used.
                let per_check: Vec<(f64, Vec<f64>)> = checks
                    .par_iter()
                    .map(|&b| {
                        let e = eliminate(&|d| term.data_minus_two_ln_l(b + d), &n);
                        let used = term.shifts_read(b, e.delta_hat, &n);
                        ((sf.eval(b) - e.minus_two_ln_l).abs(), used)
                    })
                    .collect();
                term.table_error = per_check.iter().map(|p| p.0).fold(0.0, f64::max);
                term.term_error = match &term.classes {
                    Classes::Calibrated(c) => {
                        term.n_check = checks.len();
                        let bs: Vec<f64> = per_check.iter().flat_map(|p| p.1.clone()).collect();
                        let exact = c.exact_at(&bs);
                        let mut data_err = bs
                            .iter()
                            .zip(&exact)
                            .map(|(&b, &x)| (-2.0 * c.eval(b) + 2.0 * x).abs());
                        per_check
                            .iter()
                            .map(|(t, used)| {
                                t + (0..used.len())
                                    .filter_map(|_| data_err.next())
                                    .fold(0.0, f64::max)
                            })
                            .fold(0.0, f64::max)
                    }
                    Classes::Product(_) => {
                        term.n_check = opts.reduce.n_check;
                        term.product_error()
                    }
                };
                term.table = Some((sf, sd));
            }
        } else {
            term.term_error = match &term.classes {
                Classes::Calibrated(c) => {
                    let exact = c.exact_at(&checks);
                    term.n_check = checks.len();
                    checks
                        .iter()
                        .zip(&exact)
                        .map(|(&b, &x)| (-2.0 * c.eval(b) + 2.0 * x).abs())
                        .fold(0.0, f64::max)
                }
                Classes::Product(_) => {
                    term.n_check = opts.reduce.n_check;
                    term.product_error()
                }
            };
        }
        Ok(term)
    }

    /// The shifted bounds B + δ at which eliminating the shift at bound `b` reads the data
    /// term: the profile only at δ̂; a marginalisation over δ̂ ± 3 widths of the shift's
    /// posterior (seven points), its width from the curvature of the data term there.
    fn shifts_read(&self, b: f64, delta_hat: f64, n: &SharedNuisance) -> Vec<f64> {
        match n.method {
            NuisanceMethod::Profile => vec![b + delta_hat],
            NuisanceMethod::Marginalise => {
                let g = |d: f64| self.data_minus_two_ln_l(b + d) + (d / n.sigma).powi(2);
                let step = 1e-2 * n.sigma;
                let curv = (g(delta_hat + step) - 2.0 * g(delta_hat) + g(delta_hat - step))
                    / (step * step);
                let w = if curv.is_finite() && curv > 0.0 {
                    (2.0 / curv).sqrt().min(n.sigma)
                } else {
                    n.sigma
                };
                (-3..=3).map(|k| b + delta_hat + k as f64 * w).collect()
            }
        }
    }

    /// The product model's error: the class tables' measured errors over their whole range
    /// (doubled, as −2 ln L) plus the table of the eliminated term.
    fn product_error(&self) -> f64 {
        self.product_inner_error() + self.table_error
    }

    /// The product model's class tables' errors over their whole range, doubled.
    fn product_inner_error(&self) -> f64 {
        match &self.classes {
            Classes::Product(cs) => cs
                .iter()
                .map(|c| 2.0 * c.achieved_error())
                .filter(|x| x.is_finite())
                .sum::<f64>(),
            Classes::Calibrated(_) => 0.0,
        }
    }

    /// Σ_c −2 ln L_c at a bound value (no nuisance treatment: the data term at B).
    pub fn data_minus_two_ln_l(&self, b_msun: f64) -> f64 {
        match &self.classes {
            Classes::Product(cs) => cs.iter().map(|c| -2.0 * c.eval(b_msun)).sum(),
            Classes::Calibrated(c) => -2.0 * c.eval(b_msun),
        }
    }

    /// The shared shift at bound B: the profiled δ̂ (0 without a shared floor).
    pub fn delta_hat(&self, b_msun: f64) -> f64 {
        match (&self.table, self.nuisance) {
            (Some((_, sd)), _) if self.inside(b_msun) => sd.eval(b_msun),
            (_, Some(n)) => eliminate(&|d| self.data_minus_two_ln_l(b_msun + d), &n).delta_hat,
            _ => 0.0,
        }
    }

    fn inside(&self, b: f64) -> bool {
        b >= self.range.0 && b <= self.range.1
    }

    /// The term −2 ln L at bound B, the shared systematic eliminated.
    pub fn minus_two_ln_l(&self, b_msun: f64) -> f64 {
        match (&self.table, self.nuisance) {
            (Some((sf, _)), _) if self.inside(b_msun) => sf.eval(b_msun),
            (_, Some(n)) => eliminate(&|d| self.data_minus_two_ln_l(b_msun + d), &n).minus_two_ln_l,
            _ => self.data_minus_two_ln_l(b_msun),
        }
    }

    /// The term split by class at bound B: each class's −2 ln L at B + δ̂; what the
    /// elimination adds (the prior penalty (δ̂/σ)², or the marginalisation's width term) is
    /// carried by the first class, so the parts add up to [`BoundTerm::minus_two_ln_l`].
    pub fn split(&self, b_msun: f64) -> Vec<(Term, f64)> {
        let total = self.minus_two_ln_l(b_msun);
        let bs = b_msun + self.delta_hat(b_msun);
        let mut parts: Vec<(Term, f64)> = self
            .terms
            .iter()
            .enumerate()
            .map(|(c, t)| (*t, self.class_minus_two_ln_l(c, bs)))
            .collect();
        let sum: f64 = parts.iter().map(|p| p.1).sum();
        if let Some(first) = parts.first_mut() {
            first.1 += total - sum;
        }
        parts
    }

    fn class_minus_two_ln_l(&self, c: usize, b: f64) -> f64 {
        match &self.classes {
            Classes::Product(cs) => cs.get(c).map_or(0.0, |x| -2.0 * x.eval(b)),
            Classes::Calibrated(cc) => -2.0 * cc.eval_class(c, b),
        }
    }

    /// ln P of object `index` (position in its class's list) of class `term` at bound B, with
    /// the shared shift at its profiled value δ̂(B). With a shared floor, removing one object at
    /// fixed δ̂ is exact to first order (δ̂ is stationary), which is what leave-one-out uses.
    pub fn ln_p_object(&self, term: Term, index: usize, m: &Measurement, b_msun: f64) -> f64 {
        self.ln_p_object_at_shifted(term, index, m, b_msun + self.delta_hat(b_msun))
    }

    /// As [`BoundTerm::ln_p_object`] at a bound already shifted, B + δ, for a δ of the
    /// caller's choice: what an exact leave-one-out re-profiles the shared shift over.
    pub fn ln_p_object_at_shifted(
        &self,
        term: Term,
        index: usize,
        m: &Measurement,
        shifted_b_msun: f64,
    ) -> f64 {
        self.object_light(term, index, m)
            .ln_p_at_shifted(shifted_b_msun)
    }

    /// As [`BoundTerm::object`] for a caller with one or two queries (a calibrated object's P
    /// formed only at the nodes read; [`CalibratedCurve::object_light`]).
    pub fn object_light<'a>(
        &'a self,
        term: Term,
        index: usize,
        m: &'a Measurement,
    ) -> ObjectTerm<'a> {
        self.object_with(term, index, m, CalibratedCurve::object_light)
    }

    /// Object `index` (position in its class's list) of class `term` as a function of the
    /// bound, prepared once (its calibrated table built) for a caller that asks at many
    /// bounds; the values are those of [`BoundTerm::ln_p_object_at_shifted`] to the bit.
    pub fn object<'a>(&'a self, term: Term, index: usize, m: &'a Measurement) -> ObjectTerm<'a> {
        self.object_with(term, index, m, CalibratedCurve::object)
    }

    /// [`BoundTerm::object`] or [`BoundTerm::object_light`]: `calibrated` prepares a
    /// calibrated object (class position, index in its class).
    fn object_with<'a>(
        &'a self,
        term: Term,
        index: usize,
        m: &'a Measurement,
        calibrated: fn(&'a CalibratedCurve, usize, usize) -> ObjectCurve<'a>,
    ) -> ObjectTerm<'a> {
        let what = match self.terms.iter().position(|t| *t == term) {
            None => ObjectTermWhat::Absent,
            Some(c) => match &self.classes {
                Classes::Product(_) => ObjectTermWhat::Product(m),
                Classes::Calibrated(cc) => ObjectTermWhat::Calibrated(calibrated(cc, c, index)),
            },
        };
        ObjectTerm { bound: self, what }
    }

    /// The classes of this bound, in order.
    pub fn terms(&self) -> &[Term] {
        &self.terms
    }

    /// Product or calibrated.
    pub fn model(&self) -> LikelihoodModel {
        self.model
    }

    /// Why that model: the automatic rule with its counts, or "chosen".
    pub fn rule(&self) -> &str {
        &self.rule
    }

    /// Objects counted by the automatic rule.
    pub fn n_near(&self) -> usize {
        self.n_near
    }

    /// The shared nuisance, if the floor is shared.
    pub fn nuisance(&self) -> Option<SharedNuisance> {
        self.nuisance
    }

    /// Per-object scatter used inside each probability, M☉.
    pub fn scatter_msun(&self) -> f64 {
        self.scatter_msun
    }

    /// Largest measured error of the term as the fit uses it, in −2 ln L.
    ///
    /// Product model: the class tables' errors over their whole range (doubled) plus the table
    /// of the eliminated term (both tiny: the class tables refine to 2.5e-7 in ln L).
    /// Calibrated model: at each of [`BoundTerm::n_check`] seeded bounds B, the table of the
    /// eliminated term against the elimination, plus the largest difference between the
    /// tabulated data term and its direct sum at the shifts B + δ the elimination read (the
    /// profiled δ̂; for a marginalisation δ̂ ± 3 posterior widths). For the profile this is the
    /// error to first order: min_δ moves by the data error at δ̂ plus a second-order term. The
    /// data term's own error far from δ̂ (where it exceeds its minimum by hundreds) does not
    /// reach the fit and is [`BoundTerm::data_error_over_range`].
    pub fn achieved_error(&self) -> f64 {
        self.term_error
    }

    /// Check bounds behind [`BoundTerm::achieved_error`]: the calibrated model's seeded bounds,
    /// or the product model's class tables' own check points (its eliminated table is checked
    /// at the same seeded bounds as the calibrated one).
    pub fn n_check(&self) -> usize {
        self.n_check
    }

    /// The tabulated data term's measured error over its whole tabulated range in −2 ln L
    /// (the bound's range widened by the shift's reach), at the data table's own check points:
    /// an upper bound that includes bounds the fit never reads.
    pub fn data_error_over_range(&self) -> f64 {
        match &self.classes {
            Classes::Product(_) => self.product_inner_error(),
            Classes::Calibrated(c) => 2.0 * c.achieved_error(),
        }
    }

    /// Nodes of the tabulated data term in B: the calibrated curve's, or per product class
    /// the largest count its refinement reached.
    pub fn data_nodes(&self) -> usize {
        match &self.classes {
            Classes::Product(cs) => cs.iter().map(ClassCurve::n_nodes).max().unwrap_or(0),
            Classes::Calibrated(c) => c.n_nodes(),
        }
    }

    /// Nodes of the table of the eliminated term (`None` without a shared shift).
    pub fn table_nodes(&self) -> Option<usize> {
        self.table.as_ref().map(|(sf, _)| sf.n_nodes())
    }

    /// The deconvolved mass function, when the calibrated model is used.
    pub fn mass_function(&self) -> Option<&super::calibrated::MassFunction> {
        match &self.classes {
            Classes::Calibrated(c) => Some(c.mass_function()),
            Classes::Product(_) => None,
        }
    }
}
