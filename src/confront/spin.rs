//! The spin test: every object with a measured rotation period must spin slower than mass
//! shedding, P_obs ≥ P_break(M, R; ϒ, τ), and the first-order slow-rotation correction that a
//! measured spin makes to that object's own bound.
//!
//! One job: turn each spinning object into one more one-sided term of the likelihood and into
//! per-object corrections. Maximum spin is one of the classic white-dwarf tests of this theory
//! class (Jain, Kouvaris & Nielsen 2016, PRL 116, 151103). The break-up period is the Roche one,
//! P_break = 2πκ√(R³/(GM)) with κ = (3/2)^{3/2} (`docs/rotation.md#r2`): the
//! exterior gravity is standard (screened), and ϒ, τ enter only through the radius R inside.
//! That radius is, per object, and said in `objects.csv` (`spin_radius_source`):
//!
//! * `measured` — the catalogue's radius when given (then the test does not depend on the grid);
//! * `finite-temperature` — a white dwarf with a Teff under the finite-temperature radius model:
//!   the standard finite-temperature radius carried to the grid point by the ratio of cold radii,
//!   as in the radius test;
//! * `cold` — otherwise the zero-temperature radius at the grid point (μe of the object for a
//!   white dwarf, μe = 2/(1 + X) of the hydrogen-rich floor for brown dwarfs and stars). Thermal
//!   pressure only makes a real star larger, so for stars and massive brown dwarfs the break-up
//!   period it gives is a lower limit; at the lowest brown-dwarf masses the missing Coulomb
//!   (ion) term works the other way, so brown dwarfs and stars on this radius carry a wider
//!   floor ([`SpinOptions::cold_hydrogen_floor_fraction`], 15 %).
//!
//! The likelihood of one object is marginalised over its true mass with the split-normal nodes
//! of the radius test: P = Σ_k w_k Φ((P_obs − P_k)/(f P_k)) / Σ_k w_k over the nodes that have a
//! model, with f the fractional theory floor ([`SpinOptions::floor_fraction`], 5 % by default:
//! Roche against self-consistent κ is 3 %, the radius model 3 % in R, i.e. 4.5 % in P; 15 % on
//! the cold hydrogen-rich radius). A measured period error σ_P (`rotation_period_err`) adds in
//! quadrature: Φ((P_obs − P_k)/√((f P_k)² + σ_P²)); without one the period is taken as exact
//! (published periods are usually far more precise than the floor).
//!
//! Slow rotation (Chandrasekhar 1933, MNRAS 93, 390, in the modified theory:
//! `docs/rotation.md#r1`): with
//! v = Ω²/(2πGρ_c), a brown dwarf or star faces an MMHB raised by the factor 1 + v·(d ln M/dv) of
//! an n = 3/2 polytrope at fixed central conditions (applied as the object's bound scale), and a
//! white dwarf's radius at fixed mass grows by v·(d ln R/dv)|_M of the polytrope whose index
//! matches the local slope of its cold mass–radius relation. ρ_c is that polytrope's central
//! density for the object's radius at (or nearest to) standard gravity, with the coefficients of
//! ϒ = τ = 0. Beyond the first-order threshold v > v_max = 0.1 v_crit (Ω > 0.32 Ω_crit;
//! n_eff ≥ 2.95 counts as beyond: near the Chandrasekhar mass the radius at fixed mass does not
//! respond linearly) the object is flagged `spin_beyond_first_order` and left uncorrected. A
//! corrected object's factor is then taken at every grid point with that point's own structure
//! (coefficients from [`BoundSurface::slow_rotation_at`], a table interpolated in (ϒ, τ, n) on
//! a theory grid): a brown dwarf's or star's through the spin term ([`MmhbSlowRotation`]), a
//! white dwarf's on its predicted radius inside the radius term ([`RadiusCorrections`]; n_eff
//! and ρ_c at the point too).
//!
//! ```
//! use dwarfbound::confront::spin::{ln_p_spin, SpinOptions};
//!
//! // Observed 1.5 × the break-up period with a 5 % floor: z = 0.5/0.05 = 10, P ≈ 1.
//! let ln_p = ln_p_spin(1.5, &[(1.0, 1.0)], &[Some(1.0)], SpinOptions::default().floor_fraction);
//! assert!(ln_p.unwrap() > -1e-20);
//! // Observed at exactly the break-up period: P = 1/2.
//! let ln_p = ln_p_spin(1.0, &[(1.0, 1.0)], &[Some(1.0)], 0.05).unwrap();
//! assert!((ln_p - 0.5f64.ln()).abs() < 1e-15);
//! ```

use rayon::prelude::*;

use super::engine::{radius_mass_nodes, BoundSurface, EngineOptions, ObjectUses};
use super::prob::{ln_normal_cdf, ln_prob_consistent, Measurement};
use super::wd_radius::{ObjectRadius, WdQuery, WdRadiusModel};
use crate::catalogue::{CatalogueObject, MassLimit, ObjectClass};
use crate::theory::rotation::{breakup_period_s, BreakupModel};
use crate::theory::slow_rotation::{rotation_parameter_v, slow_rotation, SlowRotationError};
use crate::theory::white_dwarf::RadiusQueries;
use crate::theory::Anisotropy;

/// Largest effective polytropic index for which a white dwarf's radius is corrected at first
/// order: towards n = 3 (the Chandrasekhar mass) d ln R/dv at fixed mass diverges.
pub const WD_MAX_EFFECTIVE_INDEX: f64 = 2.95;

/// Choices of the spin test.
#[derive(Debug, Clone, PartialEq)]
pub struct SpinOptions {
    /// 1σ theory floor of the break-up period, as a fraction of it (default 0.05).
    pub floor_fraction: f64,
    /// The floor for brown dwarfs and stars whose radius is the cold hydrogen-rich structure
    /// (default 0.15): that structure has no Coulomb (ion) term, which makes real cold radii
    /// smaller at the lowest masses, and no thermal pressure, which makes real radii larger.
    pub cold_hydrogen_floor_fraction: f64,
    /// μe of the cold hydrogen-rich structure used for brown dwarfs and hydrogen-burning stars
    /// without a measured radius: 2/(1 + X) with X = 0.75 (the theory check values' choice).
    pub hydrogen_rich_mu_e: f64,
    /// Apply the first-order slow-rotation corrections (default true).
    pub slow_rotation: bool,
}

impl Default for SpinOptions {
    fn default() -> Self {
        Self {
            floor_fraction: 0.05,
            cold_hydrogen_floor_fraction: 0.15,
            hydrogen_rich_mu_e: 2.0 / 1.75,
            slow_rotation: true,
        }
    }
}

/// Where the radius inside the break-up period comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SpinRadiusSource {
    /// The catalogue's measured radius.
    Measured,
    /// The finite-temperature white-dwarf radius, carried to the point by the cold-radius ratio.
    FiniteTemperature,
    /// The zero-temperature radius at the grid point (a lower limit on the radius).
    Cold,
}

impl SpinRadiusSource {
    /// Name in outputs.
    pub fn label(self) -> &'static str {
        match self {
            SpinRadiusSource::Measured => "measured",
            SpinRadiusSource::FiniteTemperature => "finite-temperature",
            SpinRadiusSource::Cold => "cold",
        }
    }
}

/// The first-order slow-rotation outcome of one object.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SlowRotationStatus {
    /// Corrected: v and the fractional change applied (MMHB for brown dwarfs and stars, radius
    /// at fixed mass for white dwarfs).
    Corrected {
        /// v = Ω²/(2πGρ_c).
        v: f64,
        /// The fractional change applied.
        change: f64,
    },
    /// Beyond the first-order threshold: flagged, not corrected.
    BeyondFirstOrder {
        /// v = Ω²/(2πGρ_c).
        v: f64,
    },
    /// No correction could be formed (no radius at standard gravity, or corrections off).
    NotApplied,
}

/// One object's spin test, prepared once per confrontation.
#[derive(Debug, Clone, PartialEq)]
pub struct ObjectSpin {
    /// Index into the caller's object list.
    pub index: usize,
    /// Observed rotation period, s.
    pub period_s: f64,
    /// 1σ error of the observed period, s (0 when the catalogue gives none).
    pub period_err_s: f64,
    /// μe of the structure whose radius is used.
    pub mu_e: f64,
    /// Where the radius comes from.
    pub source: SpinRadiusSource,
    /// Mass nodes (M☉) and weights of the marginalisation over the true mass.
    pub nodes: Vec<(f64, f64)>,
    /// The nominal mass, M☉.
    pub mass_msun: f64,
    /// Per node, then the nominal mass: the factor that turns the cold radius at a point into
    /// the radius used (1 for `cold`; hot/cold at standard gravity for `finite-temperature`;
    /// `None` where the standard model has no star).
    pub scale: Vec<Option<f64>>,
    /// The measured radius, R☉ (source `measured`).
    pub measured_rsun: Option<f64>,
    /// The slow-rotation outcome.
    pub slow: SlowRotationStatus,
    /// The factor applied to the object's white-dwarf radius prediction (1 when none).
    pub radius_factor: f64,
    /// A corrected brown dwarf's or star's MMHB correction, carried to each grid point.
    pub mmhb: Option<MmhbSlowRotation>,
    /// 1σ theory floor of its break-up period, as a fraction of it.
    pub floor_fraction: f64,
}

/// A generous bound on how far a first-order MMHB factor can move from its standard value: the
/// factor is at most 1 + v_max (d ln M/dv) = 1 + 0.1 v_crit (d ln M/dv), about 1 % for n = 3/2
/// (0.94 % at standard gravity, 0.78 % at ϒ = 0.3).
pub const MMHB_FACTOR_RANGE: f64 = 0.05;

/// A change of −2 ln L this small moves no interval end or verdict (Δχ² levels are read to far
/// coarser precision).
pub const MMHB_CHANGE_NEGLIGIBLE: f64 = 1e-9;

/// The slow-rotation change of one brown dwarf's or star's MMHB at every grid point.
///
/// The object's mass test runs inside its class's term with the standard-gravity factor
/// f₀ = 1 + v₀ (d ln M/dv)₀ on its bound ([`super::engine::ObjectUse::bound_scale`]). At a
/// grid point the first-order factor is f = 1 + v (d ln M/dv), with the coefficients of the
/// n = 3/2 polytrope of that point's (ϒ, τ) ([`BoundSurface::slow_rotation_n32`]) and
/// v = Ω²/(2πGρ_c) from that polytrope's central density for the object's radius there
/// (measured, or cold at the point). The spin term carries the difference,
/// −2 ln P(m | f B) + 2 ln P(m | f₀ B), so that the mass test is in effect taken at the point's
/// factor: exact with per-object floors; with a shared systematic the difference is taken at
/// zero shift (first order in a product of two small quantities). Where first order fails at a
/// point (v above that point's threshold, or no model), the factor stays f₀; so it does where
/// the mass test cannot feel it ([`MmhbSlowRotation::matters_at`]), which spares the point's
/// lookup.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MmhbSlowRotation {
    /// Ω² of the observed period, s⁻².
    pub omega2_per_s2: f64,
    /// The object's mass test as the engine runs it (scale including f₀).
    pub measurement: Measurement,
    /// f₀, the standard-gravity factor inside `measurement`.
    pub factor_standard: f64,
    /// The MMHB floor of the mass test, M☉.
    pub floor_msun: f64,
}

impl MmhbSlowRotation {
    /// The first-order MMHB factor at a point with coefficients `coeffs` and the object's radius
    /// there (f₀ where either is missing or first order fails).
    pub fn factor_at(
        &self,
        mass_msun: f64,
        coeffs: Option<&crate::theory::slow_rotation::SlowRotation>,
        radius_rsun: Option<f64>,
    ) -> f64 {
        let (Some(c), Some(r)) = (coeffs, radius_rsun) else {
            return self.factor_standard;
        };
        let contrast = c.xi1.powi(3) / (3.0 * c.omega);
        let rho_c = central_density_kg_m3(mass_msun, r, contrast);
        let v = self.omega2_per_s2 / (2.0 * std::f64::consts::PI * crate::constants::G_SI * rho_c);
        match c.at(v) {
            Ok(ch) if ch.mass.is_finite() => 1.0 + ch.mass,
            _ => self.factor_standard,
        }
    }

    /// Whether the factor can matter at MMHB `bound_msun`: the change of −2 ln P for a factor
    /// [`MMHB_FACTOR_RANGE`] away from f₀ on either side exceeds [`MMHB_CHANGE_NEGLIGIBLE`].
    /// Where it cannot (an object far on the safe side of that bound), the point's coefficients
    /// are not solved and the factor stays f₀.
    pub fn matters_at(&self, bound_msun: f64) -> bool {
        [1.0 - MMHB_FACTOR_RANGE, 1.0 + MMHB_FACTOR_RANGE]
            .iter()
            .any(|r| {
                self.minus_two_ln_l_change(self.factor_standard * r, bound_msun)
                    .abs()
                    > MMHB_CHANGE_NEGLIGIBLE
            })
    }

    /// −2 ln P of the mass test at MMHB `bound_msun` with the factor `factor`, minus the same
    /// with f₀: what the spin term adds at that point.
    pub fn minus_two_ln_l_change(&self, factor: f64, bound_msun: f64) -> f64 {
        if !self.measurement.informative() || factor == self.factor_standard {
            return 0.0;
        }
        let at = Measurement {
            scale: self.measurement.scale / self.factor_standard * factor,
            ..self.measurement
        };
        let d = -2.0
            * (ln_prob_consistent(&at, bound_msun, self.floor_msun)
                - ln_prob_consistent(&self.measurement, bound_msun, self.floor_msun));
        if d.is_finite() {
            d
        } else {
            0.0
        }
    }
}

/// The spin test at one grid point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpinAt {
    /// ln P of the test (`None` where no node has a model).
    pub ln_p: Option<f64>,
    /// ln(1 − P), computed directly (the tension of objects far on the safe side).
    pub ln_q: Option<f64>,
    /// Break-up period at the nominal mass, s (`None` without a model there).
    pub breakup_s: Option<f64>,
    /// A corrected brown dwarf's or star's MMHB factor at the point ([`MmhbSlowRotation`]).
    pub mmhb_factor: Option<f64>,
    /// What the spin term adds for that factor at the point's MMHB (0 without one).
    pub mmhb_change: f64,
}

/// ln P that P_obs ≥ P_break, marginalised over the mass nodes: ln[Σ w_k Φ((P − P_k)/(f P_k)) /
/// Σ w_k] over nodes with a break-up period (`None` when no node has one). Any period unit.
pub fn ln_p_spin(
    period: f64,
    nodes: &[(f64, f64)],
    breakup: &[Option<f64>],
    floor_fraction: f64,
) -> Option<f64> {
    ln_p_side(period, 0.0, nodes, breakup, floor_fraction, 1.0)
}

/// [`ln_p_spin`] with a 1σ error `period_err` on the observed period (same unit), added to the
/// floor in quadrature: ln[Σ w_k Φ((P − P_k)/√((f P_k)² + σ_P²)) / Σ w_k].
pub fn ln_p_spin_with_error(
    period: f64,
    period_err: f64,
    nodes: &[(f64, f64)],
    breakup: &[Option<f64>],
    floor_fraction: f64,
) -> Option<f64> {
    ln_p_side(period, period_err, nodes, breakup, floor_fraction, 1.0)
}

/// ln P (`sign` = 1) or ln(1 − P) (`sign` = −1) of [`ln_p_spin_with_error`].
fn ln_p_side(
    period: f64,
    period_err: f64,
    nodes: &[(f64, f64)],
    breakup: &[Option<f64>],
    floor_fraction: f64,
    sign: f64,
) -> Option<f64> {
    let mut terms = Vec::with_capacity(nodes.len());
    let mut weight = 0.0;
    for ((_, w), pb) in nodes.iter().zip(breakup) {
        let Some(pb) = pb.filter(|p| p.is_finite() && *p > 0.0) else {
            continue;
        };
        if *w <= 0.0 {
            continue;
        }
        let sigma = (floor_fraction * pb)
            .hypot(period_err)
            .max(f64::MIN_POSITIVE);
        terms.push(w.ln() + ln_normal_cdf(sign * (period - pb) / sigma));
        weight += w;
    }
    if terms.is_empty() || weight <= 0.0 {
        return None;
    }
    let top = terms.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let sum: f64 = terms.iter().map(|t| (t - top).exp()).sum();
    Some((top + sum.ln() - weight.ln()).min(0.0))
}

impl ObjectSpin {
    /// The (mass, μe) queries of this object for [`BoundSurface::wd_radii_rsun`]: the nodes, then
    /// the nominal mass.
    pub fn queries(&self) -> impl Iterator<Item = (f64, f64)> + '_ {
        self.nodes
            .iter()
            .map(|&(m, _)| m)
            .chain(std::iter::once(self.mass_msun))
            .map(move |m| (m, self.mu_e))
    }

    /// Number of queries ([`ObjectSpin::queries`]).
    pub fn n_queries(&self) -> usize {
        self.nodes.len() + 1
    }

    fn breakup_s(&self, mass_msun: f64, scale: Option<f64>, cold: Option<f64>) -> Option<f64> {
        let radius = match self.source {
            SpinRadiusSource::Measured => self.measured_rsun?,
            _ => cold? * scale?,
        };
        breakup_period_s(mass_msun, radius, BreakupModel::Roche).ok()
    }

    /// The object's radius at its nominal mass given the cold radius there (measured when
    /// given).
    pub fn nominal_radius_rsun(&self, cold_nominal: Option<f64>) -> Option<f64> {
        match self.source {
            SpinRadiusSource::Measured => self.measured_rsun,
            _ => Some(cold_nominal? * self.scale.last().copied().flatten()?),
        }
    }

    /// The test at a point with n = 3/2 slow-rotation coefficients `coeffs` and MMHB
    /// `mmhb_msun`, given the cold radii there for [`ObjectSpin::queries`]: [`ObjectSpin::at`]
    /// with the MMHB correction of [`MmhbSlowRotation`] carried to the point.
    pub fn at_point(
        &self,
        cold: &[Option<f64>],
        coeffs: Option<&crate::theory::slow_rotation::SlowRotation>,
        mmhb_msun: Option<f64>,
    ) -> SpinAt {
        self.at_point_with(cold, coeffs, mmhb_msun, true)
    }

    /// [`ObjectSpin::at_point`], with ln(1 − P) only when `with_ln_q`.
    fn at_point_with(
        &self,
        cold: &[Option<f64>],
        coeffs: Option<&crate::theory::slow_rotation::SlowRotation>,
        mmhb_msun: Option<f64>,
        with_ln_q: bool,
    ) -> SpinAt {
        let mut at = self.at_with(cold, with_ln_q);
        if let Some(m) = &self.mmhb {
            let radius = self.nominal_radius_rsun(cold.get(self.nodes.len()).copied().flatten());
            let f = m.factor_at(self.mass_msun, coeffs, radius);
            at.mmhb_factor = Some(f);
            at.mmhb_change = mmhb_msun.map_or(0.0, |b| m.minus_two_ln_l_change(f, b));
        }
        at
    }

    /// The test at one point, given the cold radii there for [`ObjectSpin::queries`] (the
    /// break-up test alone, without the MMHB correction of [`ObjectSpin::at_point`]).
    pub fn at(&self, cold: &[Option<f64>]) -> SpinAt {
        self.at_with(cold, true)
    }

    /// ln P of the test at one point ([`ObjectSpin::at`]'s `ln_p`), without ln(1 − P): what the
    /// sums over grid points use.
    pub fn ln_p_at(&self, cold: &[Option<f64>]) -> Option<f64> {
        self.at_with(cold, false).ln_p
    }

    /// [`ObjectSpin::at`], with ln(1 − P) only when `with_ln_q` (the grid sums use ln P alone;
    /// ln(1 − P) is one more normal CDF per node, needed only for the verdicts' z).
    fn at_with(&self, cold: &[Option<f64>], with_ln_q: bool) -> SpinAt {
        let floor_fraction = self.floor_fraction;
        let pb: Vec<Option<f64>> = self
            .queries()
            .zip(&self.scale)
            .zip(cold.iter().chain(std::iter::repeat(&None)))
            .map(|(((m, _), s), c)| self.breakup_s(m, *s, *c))
            .collect();
        let (node_pb, nominal) = pb.split_at(self.nodes.len());
        let (p, e) = (self.period_s, self.period_err_s);
        SpinAt {
            ln_p: ln_p_side(p, e, &self.nodes, node_pb, floor_fraction, 1.0),
            ln_q: if with_ln_q {
                ln_p_side(p, e, &self.nodes, node_pb, floor_fraction, -1.0)
            } else {
                None
            },
            breakup_s: nominal.first().copied().flatten(),
            mmhb_factor: None,
            mmhb_change: 0.0,
        }
    }
}

/// The spin tests of every object at grid point `i`, in the order of `spins`.
pub fn spins_at(spins: &[ObjectSpin], surface: &dyn BoundSurface, i: usize) -> Vec<SpinAt> {
    spins_at_with(spins, &spin_queries(spins), surface, i, true)
}

/// The radius queries of every object of `spins` ([`ObjectSpin::queries`], in order), prepared
/// once for the many points [`spins_at_with`] asks them at.
pub fn spin_queries(spins: &[ObjectSpin]) -> RadiusQueries {
    RadiusQueries::new(
        &spins
            .iter()
            .flat_map(ObjectSpin::queries)
            .collect::<Vec<_>>(),
    )
}

/// [`spins_at`], with ln(1 − P) only when `with_ln_q` (`None` otherwise): sums over grid
/// points and the MMHB factors need ln P alone, and ln(1 − P) costs one more normal CDF per node.
/// `queries` are [`spin_queries`] of `spins`.
pub fn spins_at_with(
    spins: &[ObjectSpin],
    queries: &RadiusQueries,
    surface: &dyn BoundSurface,
    i: usize,
    with_ln_q: bool,
) -> Vec<SpinAt> {
    let cold = surface.wd_radii_prepared(i, queries);
    let any_mmhb = spins.iter().any(|s| s.mmhb.is_some());
    let mmhb = if any_mmhb { surface.mmhb_msun(i) } else { None };
    // The point's coefficients are looked up only where some corrected object's mass test can
    // feel them.
    let needed = mmhb.is_some_and(|b| {
        spins
            .iter()
            .filter_map(|s| s.mmhb.as_ref())
            .any(|m| m.matters_at(b))
    });
    let coeffs = if needed {
        surface.slow_rotation_n32(i)
    } else {
        None
    };
    let mut at = 0;
    spins
        .iter()
        .map(|s| {
            let n = s.n_queries();
            let slice = cold.get(at..at + n).unwrap_or(&[]);
            at += n;
            s.at_point_with(slice, coeffs.as_ref(), mmhb, with_ln_q)
        })
        .collect()
}

/// One object's spin test over the whole grid: what its verdict reports besides the standard
/// and best points, gathered in the grid pass ([`minus_two_ln_l_grid`]) so that the verdicts
/// need not solve every point's test a second time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpinSpan {
    /// Smallest and largest break-up period at the nominal mass over the grid, s.
    pub breakup_range_s: Option<(f64, f64)>,
    /// Smallest −2 ln P over the grid (+∞ where no point has a model).
    pub lo: f64,
    /// Largest −2 ln P over the grid (−∞ where no point has a model).
    pub hi: f64,
}

impl Default for SpinSpan {
    fn default() -> Self {
        Self {
            breakup_range_s: None,
            lo: f64::INFINITY,
            hi: f64::NEG_INFINITY,
        }
    }
}

impl SpinSpan {
    /// Takes one more grid point's test into the span (points in grid order).
    fn add(&mut self, a: &SpinAt) {
        if let Some(p) = a.breakup_s {
            self.breakup_range_s = Some(
                self.breakup_range_s
                    .map_or((p, p), |(lo, hi)| (lo.min(p), hi.max(p))),
            );
        }
        if let Some(l) = a.ln_p {
            self.lo = self.lo.min(-2.0 * l);
            self.hi = self.hi.max(-2.0 * l);
        }
    }
}

/// Grid points whose spin tests are held at once in [`minus_two_ln_l_grid`]: enough for both
/// cores to share, few enough that memory does not grow with the grid.
const SPIN_POINTS_PER_BATCH: usize = 64;

/// −2 ln L of the spin term at every grid point (0 where no object spins), and each object's
/// [`SpinSpan`] over the grid (in the order of `spins`). Points are solved in parallel, a batch
/// at a time, and folded into the spans in grid order.
pub fn minus_two_ln_l_grid(
    spins: &[ObjectSpin],
    surface: &dyn BoundSurface,
    n_points: usize,
) -> (Vec<Option<f64>>, Vec<SpinSpan>) {
    let mut spans = vec![SpinSpan::default(); spins.len()];
    if spins.is_empty() {
        return (vec![Some(0.0); n_points], spans);
    }
    let queries = spin_queries(spins);
    let mut totals = Vec::with_capacity(n_points);
    let mut start = 0;
    while start < n_points {
        let end = (start + SPIN_POINTS_PER_BATCH).min(n_points);
        let batch: Vec<Vec<SpinAt>> = (start..end)
            .into_par_iter()
            .map(|i| spins_at_with(spins, &queries, surface, i, false))
            .collect();
        for at in &batch {
            totals.push(Some(
                at.iter()
                    .map(|a| -2.0 * a.ln_p.unwrap_or(0.0) + a.mmhb_change)
                    .sum(),
            ));
            for (span, a) in spans.iter_mut().zip(at) {
                span.add(a);
            }
        }
        start = end;
    }
    (totals, spans)
}

/// The grid point at (or nearest to) standard gravity.
pub fn standard_index(surface: &dyn BoundSurface) -> usize {
    let nearest = |v: &[f64]| {
        v.iter()
            .enumerate()
            .fold((0, f64::INFINITY), |best, (k, x)| {
                if x.abs() < best.1 {
                    (k, x.abs())
                } else {
                    best
                }
            })
            .0
    };
    nearest(surface.tau()) * surface.upsilon().len() + nearest(surface.upsilon())
}

/// Central density (kg m⁻³) of a polytrope of mass M and radius R with ρ_c/ρ̄ = `contrast`.
fn central_density_kg_m3(mass_msun: f64, radius_rsun: f64, contrast: f64) -> f64 {
    let m = mass_msun * crate::constants::msun_kg();
    let r = radius_rsun * crate::constants::R_SUN_NOMINAL_M;
    contrast * 3.0 * m / (4.0 * std::f64::consts::PI * r * r * r)
}

/// Effective polytropic index from the local slope s = d ln R/d ln M of a mass–radius relation
/// (R ∝ M^{(1−n)/(3−n)} for a polytrope at fixed K): n = (1 − 3s)/(1 − s).
pub fn effective_index(slope: f64) -> f64 {
    (1.0 - 3.0 * slope) / (1.0 - slope)
}

/// Prepares the spin test of every object with a rotation period, flags them in `uses`, and
/// applies the slow-rotation change of the MMHB (brown dwarfs and stars: their bound scale).
/// Objects with a mass limit are left out of the spin test (flag `spin_mass_limit`), and so are
/// objects whose mass came from a standard-gravity model
/// ([`super::wd_radius::RadiusOptions::leaves_out_model_mass`]; flag `spin_model_mass` beside
/// the engine's `model_mass`): such a mass was read off the standard mass–radius relation
/// (log g, photometry), while the test pairs it with the radius of the modified structure at
/// the grid point — for a log g mass the break-up period is really 2πκ√(R/g) with the observed
/// g, so the pairing is circular, as in the mass and radius tests.
pub fn prepare(
    objects: &[CatalogueObject],
    uses: &mut ObjectUses,
    surface: &dyn BoundSurface,
    opts: &EngineOptions,
) -> Vec<ObjectSpin> {
    let so = &opts.spin;
    let i_std = standard_index(surface);
    let mut out = Vec::new();
    let mut n32 = None;
    for (k, o) in objects.iter().enumerate() {
        let Some(period_h) = o.rotation_period_h().get() else {
            continue;
        };
        // Changed on a copy and put back: the uses of other objects may share this one.
        let Some(mut u) = uses.get(k).cloned() else {
            continue;
        };
        if o.mass_limit != MassLimit::None {
            u.flags.push("spin_mass_limit".to_string());
            uses.update(k, |held| *held = u);
            continue;
        }
        if opts.radius.leaves_out_model_mass(o) {
            u.flags.push("spin_model_mass".to_string());
            uses.update(k, |held| *held = u);
            continue;
        }
        let is_wd = o.class == ObjectClass::WhiteDwarf;
        let mu_e = if is_wd { u.mu_e } else { so.hydrogen_rich_mu_e };
        let nodes = radius_mass_nodes(o);
        let n_q = nodes.len() + 1;
        let masses: Vec<f64> = nodes.iter().map(|&(m, _)| m).chain([o.mass_msun]).collect();
        let (source, scale) = if o.radius_rsun().is_some() {
            (SpinRadiusSource::Measured, vec![Some(1.0); n_q])
        } else if is_wd && opts.radius.model == WdRadiusModel::Hot && o.teff_k().is_some() {
            let core = u
                .core
                .unwrap_or_else(|| super::wd_radius::ResolvedCore::resolve(o.core(), o.mass_msun));
            let queries: Vec<WdQuery> = masses
                .iter()
                .map(|&m| WdQuery {
                    mass_msun: m,
                    mu_e,
                    teff_k: o.teff_k().get(),
                    core,
                    envelope: o.envelope(),
                })
                .collect();
            let std = surface.wd_standard_radii(&queries);
            let scale: Vec<Option<f64>> = std
                .iter()
                .map(|s| {
                    s.filter(|s| s.cold_rsun > 0.0)
                        .map(|s| s.radius_rsun / s.cold_rsun)
                })
                .collect();
            if scale.last().copied().flatten().is_some() {
                (SpinRadiusSource::FiniteTemperature, scale)
            } else {
                (SpinRadiusSource::Cold, vec![Some(1.0); n_q])
            }
        } else {
            (SpinRadiusSource::Cold, vec![Some(1.0); n_q])
        };
        u.flags.push(format!("spin_radius_{}", source.label()));
        let mut spin = ObjectSpin {
            index: k,
            period_s: period_h * 3600.0,
            period_err_s: o.rotation_period_err_h().get().map_or(0.0, |e| e * 3600.0),
            mu_e,
            source,
            nodes,
            mass_msun: o.mass_msun,
            scale,
            measured_rsun: o.radius_rsun().get(),
            slow: SlowRotationStatus::NotApplied,
            radius_factor: 1.0,
            mmhb: None,
            floor_fraction: if source == SpinRadiusSource::Cold && !is_wd {
                so.cold_hydrogen_floor_fraction
            } else {
                so.floor_fraction
            },
        };
        if so.slow_rotation {
            spin.slow = if is_wd {
                wd_slow_rotation(&spin, surface, i_std)
            } else {
                let coeffs =
                    n32.get_or_insert_with(|| slow_rotation(1.5, 0.0, 0.0, Anisotropy::None).ok());
                mmhb_slow_rotation(&spin, surface, i_std, coeffs.as_ref())
            };
            match spin.slow {
                SlowRotationStatus::Corrected { change, .. } => {
                    if is_wd {
                        spin.radius_factor = 1.0 + change;
                    } else {
                        u.bound_scale *= 1.0 + change;
                        if u.mass_term.is_some() {
                            let omega = 2.0 * std::f64::consts::PI / spin.period_s;
                            spin.mmhb = Some(MmhbSlowRotation {
                                omega2_per_s2: omega * omega,
                                measurement: u.measurement(o),
                                factor_standard: 1.0 + change,
                                floor_msun: opts.mmhb_floor_msun,
                            });
                        }
                    }
                    u.flags.push("spin_corrected".to_string());
                }
                SlowRotationStatus::BeyondFirstOrder { .. } => {
                    u.flags.push("spin_beyond_first_order".to_string());
                }
                SlowRotationStatus::NotApplied => {}
            }
        }
        uses.update(k, |held| *held = u);
        out.push(spin);
    }
    out
}

/// The object's radius at standard gravity for the slow-rotation estimate of ρ_c.
fn standard_radius(
    spin: &ObjectSpin,
    surface: &dyn BoundSurface,
    i_std: usize,
    mass_msun: f64,
) -> Option<f64> {
    match spin.measured_rsun {
        Some(r) if mass_msun == spin.mass_msun => Some(r),
        _ => surface
            .wd_radii_rsun(i_std, &[(mass_msun, spin.mu_e)])
            .first()
            .copied()
            .flatten(),
    }
}

fn status_of(change: Result<f64, SlowRotationError>, v: f64) -> SlowRotationStatus {
    match change {
        Ok(change) if change.is_finite() => SlowRotationStatus::Corrected { v, change },
        Err(SlowRotationError::TooFastForFirstOrder { .. }) => {
            SlowRotationStatus::BeyondFirstOrder { v }
        }
        _ => SlowRotationStatus::NotApplied,
    }
}

fn mmhb_slow_rotation(
    spin: &ObjectSpin,
    surface: &dyn BoundSurface,
    i_std: usize,
    coeffs: Option<&crate::theory::slow_rotation::SlowRotation>,
) -> SlowRotationStatus {
    let (Some(c), Some(r)) = (
        coeffs,
        standard_radius(spin, surface, i_std, spin.mass_msun),
    ) else {
        return SlowRotationStatus::NotApplied;
    };
    let contrast = c.xi1.powi(3) / (3.0 * c.omega);
    let v = rotation_parameter_v(
        spin.period_s,
        central_density_kg_m3(spin.mass_msun, r, contrast),
    );
    if !v.is_finite() {
        return SlowRotationStatus::NotApplied;
    }
    status_of(c.at(v).map(|x| x.mass), v)
}

/// A white dwarf's first-order radius change at grid point `i` (`docs/rotation.md` §3): the
/// effective index n_eff from the local slope of the cold mass–radius relation at the point
/// (rounded to 0.01 and kept within [1.05, 2.95]), the coefficients of that polytrope at the
/// point's (ϒ, τ) ([`BoundSurface::slow_rotation_at`]), ρ_c of that polytrope for the object's
/// radius there (measured, or the cold radius at the point), and the change
/// v (d ln R/dv)|_M. At the standard point this is the object's standard correction.
fn wd_slow_rotation(spin: &ObjectSpin, surface: &dyn BoundSurface, i: usize) -> SlowRotationStatus {
    let m = spin.mass_msun;
    let h = 1e-3 * m;
    let radii = surface.wd_radii_rsun(i, &[(m - h, spin.mu_e), (m, spin.mu_e), (m + h, spin.mu_e)]);
    let (Some(lo), Some(mid), Some(hi)) = (
        radii.first().copied().flatten(),
        radii.get(1).copied().flatten(),
        radii.get(2).copied().flatten(),
    ) else {
        return SlowRotationStatus::NotApplied;
    };
    let slope = (hi.ln() - lo.ln()) / ((m + h).ln() - (m - h).ln());
    let n = effective_index(slope);
    // ρ_c of the matching polytrope; v from it even where the index is too close to 3.
    let index = (n.clamp(1.05, WD_MAX_EFFECTIVE_INDEX) * 100.0).round() / 100.0;
    let Some(c) = surface.slow_rotation_at(i, index) else {
        return SlowRotationStatus::NotApplied;
    };
    let radius = spin.measured_rsun.unwrap_or(mid);
    let contrast = c.xi1.powi(3) / (3.0 * c.omega);
    let v = rotation_parameter_v(spin.period_s, central_density_kg_m3(m, radius, contrast));
    if !v.is_finite() {
        return SlowRotationStatus::NotApplied;
    }
    if n >= WD_MAX_EFFECTIVE_INDEX {
        return SlowRotationStatus::BeyondFirstOrder { v };
    }
    let change = c.at(v).and_then(|x| {
        x.radius_at_fixed_mass
            .ok_or(SlowRotationError::InvalidV { v })
    });
    status_of(change, v)
}

impl ObjectSpin {
    /// A white dwarf's slow-rotation factor on its radius at grid point `i`:
    /// f(ϒ, τ) = 1 + v(ϒ, τ) (d ln R/dv)|_M(n_eff; ϒ, τ), with everything taken at the point
    /// (the standard correction's recipe, at the point). 1 (no correction) for an object not
    /// corrected at standard gravity. At a point where first order fails (v above that point's
    /// threshold, n_eff ≥ 2.95) or there is no model, the standard factor f₀, as for the MMHB:
    /// dropping to the uncorrected radius there would make the prediction jump at the threshold
    /// and move it away from a rotating star's, which is at least as large as first order says.
    /// At the standard point it is [`ObjectSpin::radius_factor`] exactly.
    pub fn radius_factor_at(&self, surface: &dyn BoundSurface, i: usize) -> f64 {
        if self.radius_factor == 1.0 {
            return 1.0;
        }
        match wd_slow_rotation(self, surface, i) {
            SlowRotationStatus::Corrected { change, .. } => 1.0 + change,
            _ => self.radius_factor,
        }
    }
}

/// Multiplies the predicted radius of every white dwarf with a slow-rotation correction by its
/// standard-gravity factor f₀ (the standard radii of its radius test, and so its
/// standard-gravity tension). At the other grid points [`RadiusCorrections`] carries each
/// prediction from f₀ to that point's own factor.
pub fn correct_radius_tests(radius_objects: &mut [ObjectRadius], spins: &[ObjectSpin]) {
    for s in spins.iter().filter(|s| s.radius_factor != 1.0) {
        for r in radius_objects.iter_mut().filter(|r| r.index == s.index) {
            for x in r.standard.iter_mut().flatten() {
                x.radius_rsun *= s.radius_factor;
            }
            if let Some(c) = r.at_nominal.as_mut() {
                c.radius_rsun *= s.radius_factor;
            }
        }
    }
}

/// The white dwarfs whose radius test carries a slow-rotation factor, located in the radius
/// term's layout once per confrontation, so that at each grid point their predictions move from
/// the standard factor f₀ to the point's own f(ϒ, τ).
///
/// The radius term predicts R_std(M) · R_c(M; ϒ, τ)/R_c(M; 0, 0) per mass node, and
/// [`correct_radius_tests`] has put f₀ into R_std. Scaling the object's cold radii at the point
/// by f(ϒ, τ)/f₀ before the term is formed makes the prediction R_std · f(ϒ, τ) · ratio inside
/// every mixture component, so the shared radius scale is eliminated with the corrected radii
/// (not a difference added afterwards). At the standard point the ratio is exactly 1.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RadiusCorrections {
    /// (position in the spins, first and end of its nodes in the radius term's layout).
    entries: Vec<(usize, usize, usize)>,
}

impl RadiusCorrections {
    /// Locates each corrected white dwarf of `spins` among `radius_objects` (in the order the
    /// radius term lays out their mass nodes).
    pub fn new(spins: &[ObjectSpin], radius_objects: &[ObjectRadius]) -> Self {
        let mut first_node = std::collections::BTreeMap::new();
        let mut at = 0;
        for r in radius_objects {
            first_node.insert(r.index, (at, at + r.nodes.len()));
            at += r.nodes.len();
        }
        let entries = spins
            .iter()
            .enumerate()
            .filter(|(_, s)| s.radius_factor != 1.0)
            .filter_map(|(k, s)| first_node.get(&s.index).map(|&(a, b)| (k, a, b)))
            .collect();
        Self { entries }
    }

    /// Whether any radius test carries a factor.
    pub fn is_empty(&self) -> bool {
        self.entries.is_empty()
    }

    /// Scales the cold radii `cold_at_point` of grid point `i` (every radius object's nodes,
    /// object after object) by each corrected object's f(ϒ, τ)/f₀.
    pub fn apply(
        &self,
        spins: &[ObjectSpin],
        surface: &dyn BoundSurface,
        i: usize,
        cold_at_point: &mut [Option<f64>],
    ) {
        for &(k, a, b) in &self.entries {
            let Some(s) = spins.get(k) else {
                continue;
            };
            let ratio = s.radius_factor_at(surface, i) / s.radius_factor;
            if ratio == 1.0 {
                continue;
            }
            for r in cold_at_point
                .get_mut(a..b.min(cold_at_point.len()))
                .unwrap_or(&mut [])
                .iter_mut()
                .flatten()
            {
                *r *= ratio;
            }
        }
    }
}

/// One object's spin test at the reference points and across the grid, for the outputs.
#[derive(Debug, Clone, PartialEq)]
pub struct SpinVerdict {
    /// Index into the caller's object list.
    pub index: usize,
    /// Observed period, s.
    pub period_s: f64,
    /// Where the radius comes from.
    pub source: SpinRadiusSource,
    /// Break-up period at the nominal mass at standard gravity, s (`None` when the grid has no
    /// ϒ = τ = 0 point or no model there).
    pub breakup_standard_s: Option<f64>,
    /// Break-up period at the nominal mass at the best fit, s.
    pub breakup_best_s: Option<f64>,
    /// One-sided tension at standard gravity, σ (positive: spinning faster than break-up).
    pub sigma_standard: Option<f64>,
    /// One-sided tension at the best fit, σ.
    pub sigma_best: Option<f64>,
    /// Shortest and longest break-up period at the nominal mass over the grid, s.
    pub breakup_range_s: Option<(f64, f64)>,
    /// Largest minus smallest −2 ln P of this object's test over the grid: how much it can
    /// move the map.
    pub delta_chi2_span: f64,
    /// Largest −2 ln P of this object's test over the grid (0 when no point has a model): a
    /// test whose maximum is tiny constrains nothing.
    pub max_minus_two_ln_p: f64,
    /// ln P of the test at the best fit (the Šidák consistency count uses it).
    pub ln_p_best: Option<f64>,
    /// The slow-rotation outcome.
    pub slow: SlowRotationStatus,
}

/// The spin verdicts of every prepared object (in the order of `spins`): the grid-wide spans
/// from the grid pass (`spans`, from [`minus_two_ln_l_grid`], one per spin), the tests at the
/// standard and best points solved here.
pub fn spin_verdicts(
    spins: &[ObjectSpin],
    spans: &[SpinSpan],
    surface: &dyn BoundSurface,
    best_index: usize,
) -> Vec<SpinVerdict> {
    if spins.is_empty() {
        return Vec::new();
    }
    let (nu, nt) = (surface.upsilon().len(), surface.tau().len());
    let standard = surface
        .tau()
        .iter()
        .position(|&t| t == 0.0)
        .zip(surface.upsilon().iter().position(|&u| u == 0.0))
        .map(|(j, i)| j * nu + i);
    let solve = |i: usize| (i < nu * nt).then(|| spins_at(spins, surface, i));
    let std_all = standard.and_then(solve);
    let best_all = if Some(best_index) == standard {
        std_all.clone()
    } else {
        solve(best_index)
    };
    // z = −Φ⁻¹(P); above P = ½ from 1 − P (the test with the sides swapped), so that objects far
    // on the safe side keep a finite z instead of P rounding to 1.
    let sigma = |a: &SpinAt| {
        let ln_p = a.ln_p?;
        let z = if ln_p <= -std::f64::consts::LN_2 {
            super::prob::tension_sigma(ln_p)
        } else {
            super::prob::normal_quantile_from_ln(a.ln_q?)
        };
        z.is_finite().then_some(z)
    };
    spins
        .iter()
        .enumerate()
        .map(|(k, s)| {
            let std_at = std_all.as_ref().map(|v| v[k]);
            let best_at = best_all.as_ref().map(|v| v[k]);
            let span = spans.get(k).copied().unwrap_or_default();
            let (lo, hi) = (span.lo, span.hi);
            SpinVerdict {
                index: s.index,
                period_s: s.period_s,
                source: s.source,
                breakup_standard_s: std_at.and_then(|a| a.breakup_s),
                breakup_best_s: best_at.and_then(|a| a.breakup_s),
                sigma_standard: std_at.as_ref().and_then(sigma),
                sigma_best: best_at.as_ref().and_then(sigma),
                breakup_range_s: span.breakup_range_s,
                delta_chi2_span: if hi >= lo { hi - lo } else { 0.0 },
                max_minus_two_ln_p: if hi >= lo { hi } else { 0.0 },
                ln_p_best: best_at.and_then(|a| a.ln_p),
                slow: s.slow,
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ln_p_closed_forms() {
        // Φ(0) = 1/2 (closed form): observed exactly at break-up.
        let ln_p = ln_p_spin(2.0, &[(1.0, 1.0)], &[Some(2.0)], 0.05).unwrap();
        assert!((ln_p - 0.5f64.ln()).abs() < 1e-15);
        // Two nodes of equal weight: the mean of Φ(0) = 1/2 and Φ(−1) = 0.158655253931457
        // (Abramowitz & Stegun 1964, table 26.1).
        let ln_p = ln_p_spin(
            1.0,
            &[(0.5, 1.0), (0.6, 1.0)],
            &[Some(1.0), Some(1.0 / 0.95)],
            0.05,
        )
        .unwrap();
        assert!((ln_p.exp() - 0.5 * (0.5 + 0.158_655_253_931_457)).abs() < 1e-12);
        // A node without a model is left out and the weights renormalised.
        let ln_p = ln_p_spin(2.0, &[(0.5, 1.0), (0.6, 3.0)], &[Some(2.0), None], 0.05).unwrap();
        assert!((ln_p - 0.5f64.ln()).abs() < 1e-15);
        assert_eq!(ln_p_spin(2.0, &[(0.5, 1.0)], &[None], 0.05), None);
        // The complement: ln(1 − P) of the same test.
        let q = ln_p_side(1.0, 0.0, &[(0.5, 1.0)], &[Some(1.0 / 0.95)], 0.05, -1.0).unwrap();
        assert!((q.exp() - (1.0 - 0.158_655_253_931_457)).abs() < 1e-12);
    }

    #[test]
    fn period_error_adds_to_the_floor_in_quadrature() {
        // Break-up 1.0, floor 5 % (0.05), period error 0.12: σ = √(0.05² + 0.12²) = 0.13
        // (closed form), and the observed 0.87 is 1σ short: P = Φ(−1) = 0.158655253931457
        // (Abramowitz & Stegun 1964, table 26.1).
        let ln_p = ln_p_spin_with_error(0.87, 0.12, &[(0.5, 1.0)], &[Some(1.0)], 0.05).unwrap();
        assert!((ln_p.exp() - 0.158_655_253_931_457).abs() < 1e-12);
        // No error: the floor alone, as in ln_p_spin.
        let a = ln_p_spin_with_error(0.95, 0.0, &[(0.5, 1.0)], &[Some(1.0)], 0.05);
        assert_eq!(a, ln_p_spin(0.95, &[(0.5, 1.0)], &[Some(1.0)], 0.05));
    }

    #[test]
    fn effective_index_of_polytropes() {
        // R ∝ M^{(1−n)/(3−n)} at fixed K (closed form): n = 3/2 gives s = −1/3, n = 1 gives 0,
        // and s → −∞ approaches n = 3.
        assert!((effective_index(-1.0 / 3.0) - 1.5).abs() < 1e-15);
        assert!((effective_index(0.0) - 1.0).abs() < 1e-15);
        assert!((effective_index(-1e9) - 3.0).abs() < 1e-8);
    }

    #[test]
    fn roche_identity_in_the_test() {
        // P_break = 2π√(R_eq³/(GM)) with R_eq = (3/2)R (Roche model, docs/rotation.md §2),
        // written out with the IAU 2015 B3 nominal values.
        let (m, r) = (0.6, 0.0125);
        let req = 1.5 * r * crate::constants::R_SUN_NOMINAL_M;
        let want = 2.0
            * std::f64::consts::PI
            * (req.powi(3) / (m * crate::constants::GM_SUN_NOMINAL_M3_S2)).sqrt();
        let spin = ObjectSpin {
            index: 0,
            period_s: 100.0,
            period_err_s: 0.0,
            mu_e: 2.0,
            source: SpinRadiusSource::Cold,
            nodes: vec![(m, 1.0)],
            mass_msun: m,
            scale: vec![Some(1.0), Some(1.0)],
            measured_rsun: None,
            slow: SlowRotationStatus::NotApplied,
            radius_factor: 1.0,
            mmhb: None,
            floor_fraction: 0.05,
        };
        let at = spin.at(&[Some(r), Some(r)]);
        assert!((at.breakup_s.unwrap() / want - 1.0).abs() < 1e-13);
        // A hot/cold scale of 1.1 multiplies R, so P by 1.1^{3/2}.
        let hot = ObjectSpin {
            scale: vec![Some(1.1), Some(1.1)],
            source: SpinRadiusSource::FiniteTemperature,
            ..spin
        };
        let at = hot.at(&[Some(r), Some(r)]);
        assert!((at.breakup_s.unwrap() / want - 1.1f64.powf(1.5)).abs() < 1e-12);
    }
}
