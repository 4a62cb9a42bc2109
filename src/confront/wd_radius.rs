//! The white-dwarf radius test: which objects take it, with which floor, and its likelihood.
//!
//! A white dwarf with a measured radius is compared with the radius the theory predicts at its
//! mass. The prediction is anchored: R(M; ϒ, τ) = R_std(M) × R_c(M; ϒ, τ)/R_c(M; 0, 0), where
//! R_std is the standard-gravity radius of the finite-temperature model (or the user's own
//! `radius_model`) and R_c the zero-temperature radius of the structure solver at the grid
//! point. The ratio carries the modified gravity; the anchor carries temperature, envelope and
//! composition. Where the anchored ratio is only approximate (hot or helium-core stars at large
//! |ϒ|) a theory error 0.5 |ϒ| (R_hot/R_cold − 1) R is added in quadrature (the size of the
//! deviation measured against full finite-temperature solves in ϒ; see `docs/white-dwarfs.md` §8).
//!
//! This module decides the domain and the floors (documented statistics choices, see
//! [`RadiusOptions`]); the numbers of the model come through [`WdStandard`] from whoever
//! implements [`super::engine::BoundSurface`], so it is testable without any stellar structure.
//!
//! ```
//! use dwarfbound::confront::wd_radius::{floor_fraction, RadiusOptions, ResolvedCore};
//! let opts = RadiusOptions::default();
//! // A cool carbon–oxygen white dwarf: the base floor.
//! assert_eq!(floor_fraction(&opts, ResolvedCore::CarbonOxygen, Some(10_000.0)), 0.03);
//! // A helium core at 60 000 K: the hot ramp and the helium term in quadrature.
//! let f = floor_fraction(&opts, ResolvedCore::Helium, Some(60_000.0));
//! assert!((f - (0.055f64.powi(2) + 0.04f64.powi(2)).sqrt()).abs() < 1e-12);
//! ```

use rayon::prelude::*;

use super::engine::LeftOut;
use super::mass_terms::{MassTermOptions, Systematics};
use super::nuisance::{eliminate_newton_value, Local, SharedNuisance};
use crate::catalogue::{CatalogueObject, CoreLabel, EnvelopeLabel, MassLimit, MassMethod};

/// Which standard-gravity white-dwarf radius the radius test uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum WdRadiusModel {
    /// Finite temperature, H/He envelope, electrostatic term (the default).
    #[default]
    Hot,
    /// The bare zero-temperature Chandrasekhar model of earlier versions, with its flat floor;
    /// kept so that earlier results can be reproduced.
    Cold,
}

impl WdRadiusModel {
    /// Name in outputs and on the command line.
    pub fn name(self) -> &'static str {
        match self {
            WdRadiusModel::Hot => "hot",
            WdRadiusModel::Cold => "cold",
        }
    }
}

impl std::str::FromStr for WdRadiusModel {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.trim().to_ascii_lowercase().as_str() {
            "hot" | "finite-temperature" => Ok(WdRadiusModel::Hot),
            "cold" | "zero-temperature" => Ok(WdRadiusModel::Cold),
            other => Err(format!(
                "unknown white-dwarf radius model `{other}` (expected hot or cold)"
            )),
        }
    }
}

/// The domain and floors of the radius test (each value is a choice; the reasons are in the
/// field docs and in `docs/white-dwarfs.md`).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct RadiusOptions {
    /// Which standard-gravity model anchors the test.
    pub model: WdRadiusModel,
    /// Flat fractional floor of the cold model (earlier versions' 3 %).
    pub cold_floor_fraction: f64,
    /// Base fractional floor of the hot model: carbon–oxygen or oxygen–neon cores at
    /// Teff ≤ `hot_ramp_start_k`. 3 %: the model's radii sit within 0.005–0.025 dex in log g
    /// (≈ 0.6–3 % in R) of evolutionary sequences at 5–20 kK (from memory).
    pub hot_floor_fraction: f64,
    /// Extra floor reached at `hot_ramp_end_k`, added linearly in log Teff from
    /// `hot_ramp_start_k`: 2.5 % (5.5 % in all), because at 40–60 kK the fully ionised Kramers
    /// envelope and the isothermal core put the model up to 0.05 dex below evolutionary log g
    /// (≈ 5–6 % in R; from memory).
    pub hot_ramp_extra_fraction: f64,
    /// Where the hot ramp starts, K.
    pub hot_ramp_start_k: f64,
    /// Where the hot ramp reaches its full size, K.
    pub hot_ramp_end_k: f64,
    /// Added in quadrature for helium cores: 4 %, the spread that residual hydrogen burning and
    /// the unknown hydrogen mass cause in low-mass sequences (thick minus thin H is 4–8 % at
    /// 0.3–0.45 M☉ and 10–20 kK in the model itself).
    pub helium_core_fraction: f64,
    /// Prior 1σ of the radius systematic shared by every white dwarf in the test, as a fraction
    /// of R (2.5 %): the structure model itself (equation of state, opacities, boundary
    /// conditions) sits 0.005–0.025 dex in log g off evolutionary sequences in the same
    /// direction for all objects of similar mass and Teff, so that part is one scale common to
    /// all, not scatter. With shared systematics (the default) it is taken out of each object's
    /// floor in quadrature (per object √(floor² − shared²); a single object's total error is
    /// unchanged, only its correlation with the others) and eliminated as a nuisance parameter;
    /// with `--floor per-object` every object keeps its whole floor. What remains per object is
    /// truly individual: the hot ramp and helium-core terms, the hydrogen layer, the Teff error,
    /// interpolation and anchoring.
    pub shared_fraction: f64,
    /// White dwarfs lighter than this are extremely-low-mass objects (common practice: below
    /// about 0.3 M☉, usually in tight binaries, often tidally distorted and still burning
    /// hydrogen): outside the model's domain.
    pub elm_max_msun: f64,
    /// Keep objects outside the domain (ELM, Teff outside the model's table) in the radius test
    /// where a model radius still exists.
    pub include_out_of_domain: bool,
    /// Keep objects whose mass came through a standard-gravity model (`mass_method = model`) in
    /// their tests although that is circular.
    pub include_model_masses: bool,
    /// The prior on each object's true mass where the radius term marginalises over it.
    pub mass_prior: RadiusMassPrior,
    /// Whether the per-object part of the floor keeps its stated size or is scaled to what
    /// the white dwarfs' own scatter about standard gravity allows ([`FloorScale`]).
    pub floor_fit: FloorFit,
}

impl RadiusOptions {
    /// Whether `o` is left out of its tests for a mass from a standard-gravity model
    /// (`mass_method = model`, circular for a test of that model) — the one rule the mass
    /// test, the radius test and the spin test share; `include_model_masses` keeps them.
    pub fn leaves_out_model_mass(&self, o: &CatalogueObject) -> bool {
        o.mass_method == MassMethod::Model && !self.include_model_masses
    }
}

impl Default for RadiusOptions {
    fn default() -> Self {
        Self {
            model: WdRadiusModel::Hot,
            cold_floor_fraction: 0.03,
            hot_floor_fraction: 0.03,
            hot_ramp_extra_fraction: 0.025,
            hot_ramp_start_k: 15_000.0,
            hot_ramp_end_k: 60_000.0,
            helium_core_fraction: 0.04,
            shared_fraction: 0.025,
            elm_max_msun: 0.3,
            include_out_of_domain: false,
            include_model_masses: false,
            mass_prior: RadiusMassPrior::Population,
            floor_fit: FloorFit::Fitted,
        }
    }
}

/// The prior on a white dwarf's true mass in the radius term's marginalisation over it.
///
/// The radius likelihood of an object is Σ_k w_k N(R_obs; R(m_k), σ_k²) over mass nodes m_k. With
/// a flat prior, w_k is the mass measurement's likelihood alone; but white dwarfs' true masses
/// are not flat (the field population peaks near 0.6 M☉ with a spread of about 0.1–0.15 M☉, not
/// much wider than photometric mass errors), and a measured mass away from the peak is more
/// likely an object from near the peak scattered out than one from the sparse wing. Ignoring
/// that predicts, away from the peak, radii of masses that are too extreme: a mass-dependent
/// error in the predicted radii which ϒ and τ, which change the mass–radius relation's shape,
/// then fit. Measured on invented white dwarfs whose radii are this model's own at standard
/// gravity (true masses N(0.62, 0.10) M☉ in 0.45–1.0, errors 0.02 M☉ and 3 % in R, plus the
/// model's own per-object floor as scatter): 5 000 of them exclude standard gravity at
/// Δχ² = 51–57 with the flat prior and give Δχ² = 0 with the population prior (two draws each;
/// DEVELOPERS.md, "The radius term's prior on the true mass").
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RadiusMassPrior {
    /// Flat in the true mass: the weights are the mass measurement's likelihood (earlier
    /// versions; kept to reproduce their likelihood — the radius tensions keep the
    /// predictive-distribution form of [`ObjectRadius::marginal_tension`], with flat weights).
    Flat,
    /// The white dwarfs' own mass function ([`PopulationPrior`]): the default.
    Population,
}

impl RadiusMassPrior {
    /// Name as the command line and the nightly configuration take it.
    pub fn name(self) -> &'static str {
        match self {
            RadiusMassPrior::Flat => "flat",
            RadiusMassPrior::Population => "population",
        }
    }
}

impl std::str::FromStr for RadiusMassPrior {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.to_ascii_lowercase().as_str() {
            "flat" => Ok(RadiusMassPrior::Flat),
            "population" => Ok(RadiusMassPrior::Population),
            other => Err(format!(
                "unknown prior on the white dwarfs' true masses `{other}` (expected population or flat)"
            )),
        }
    }
}

/// Whether the per-object radius floor keeps its stated size or is calibrated on the data.
///
/// The per-object floor (1.66 % of R for a cool carbon–oxygen white dwarf once the shared 2.5 %
/// is taken out of the 3 % floor) is an assumed scatter of real radii about the model. The
/// likelihood's width then depends on the mass–radius relation's slope (the mass error
/// propagates through it), so when the assumed scatter is larger than the real one the fit
/// prefers (ϒ, τ) that flatten the relation and shrink the predicted width: a pull that grows
/// with the number of objects. Measured: 20 000 invented white dwarfs drawn in standard gravity
/// without the floor's scatter excluded it at Δχ² = 7.9 with the stated floor
/// (DEVELOPERS.md, "The radius floor calibrated on the data").
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FloorFit {
    /// The floor as stated in [`RadiusOptions`] (earlier versions).
    Fixed,
    /// Shrunk by [`FloorScale::fit`] when the data exclude the stated size at 2σ (default).
    Fitted,
}

impl FloorFit {
    /// Name as the command line and the nightly configuration take it.
    pub fn name(self) -> &'static str {
        match self {
            FloorFit::Fixed => "fixed",
            FloorFit::Fitted => "fitted",
        }
    }
}

impl std::str::FromStr for FloorFit {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.to_ascii_lowercase().as_str() {
            "fixed" => Ok(FloorFit::Fixed),
            "fitted" => Ok(FloorFit::Fitted),
            other => Err(format!(
                "unknown white-dwarf radius floor `{other}` (expected fitted or fixed)"
            )),
        }
    }
}

/// The scale κ of every object's per-object radius floor, calibrated on the white dwarfs' own
/// scatter about standard gravity.
///
/// κ enters as floor → κ · floor (the shared part, the hydrogen layer, the Teff error and the
/// anchoring error are not scaled). Its profile likelihood −2 ln L(κ) is the radius term at
/// standard gravity (the shared scale eliminated as everywhere else) over ln κ in
/// [ln 0.001, ln 30]; an intrinsic-scatter parameter fitted as in a regression with
/// intrinsic scatter (Hogg, Bovy & Lang 2010, *Data analysis recipes: fitting a model to
/// data*, §7), then held fixed over the grid. The size used is the stated one (κ = 1) unless
/// the data exclude it at 2σ (Δ(−2 ln L) > 4) from above, i.e. the white dwarfs scatter less
/// than the floor says; then the floor shrinks only as far as it must, to the upper end of κ's
/// 2σ interval (the widest floor the data allow). So a handful of objects keep the stated
/// floor, a large catalogue gets the scatter it shows, and no constraint is tightened by more
/// than the data demand at 2σ. The floor is never widened by the data: scatter beyond it is
/// what the tensions and the consistency verdict are for (one white dwarf twice the predicted
/// size would otherwise widen every floor until it fits).
///
/// Why at standard gravity and not at every grid point: it is the null hypothesis the
/// catalogue is tested against. Where the data do depart from it, κ̂ there is larger (the
/// departure reads as scatter), so the floor is shrunk less: conservative.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct FloorScale {
    /// The scale applied to every object's per-object floor.
    pub applied: f64,
    /// The maximum-likelihood κ̂ at standard gravity.
    pub estimate: f64,
    /// κ's 2σ interval (Δ(−2 ln L) = 4 from the minimum), each end clipped to the search's
    /// range [0.001, 30].
    pub interval: (f64, f64),
    /// Δ(−2 ln L) of the stated floor (κ = 1) against κ̂.
    pub delta_chi2_stated: f64,
}

/// Smallest and largest κ searched (an estimate at an end means "at most" or "at least").
pub const FLOOR_SCALE_RANGE: (f64, f64) = (1e-3, 30.0);
/// Points of the coarse scan in ln κ before the golden-section refinement.
const FLOOR_SCALE_SCAN: usize = 33;
/// Δ(−2 ln L) of κ's interval: 2σ for one parameter.
const FLOOR_SCALE_DELTA: f64 = 4.0;

impl FloorScale {
    /// Fits κ on `objects` (their nodes, weights and standard models as the radius term reads
    /// them), with the shared scale `shared` eliminated at every κ; `None` without objects or
    /// without any per-object floor to scale.
    ///
    /// ```
    /// use dwarfbound::confront::wd_radius::FloorScale;
    /// // No objects, nothing to calibrate.
    /// assert!(FloorScale::fit(&[], None).is_none());
    /// ```
    pub fn fit(objects: &[ObjectRadius], shared: Option<&SharedNuisance>) -> Option<Self> {
        if objects.is_empty() || objects.iter().all(|o| o.floor_fraction <= 0.0) {
            return None;
        }
        // Standard gravity: every node's cold radius is the standard one (ratio 1).
        let cold: Vec<Option<f64>> = objects
            .iter()
            .flat_map(|o| o.standard.iter().map(|s| s.map(|s| s.cold_rsun)))
            .collect();
        let f = |u: f64| -> f64 {
            let mix = Mixtures::with_floor_scale(objects, &cold, 0.0, u.exp());
            mix.eliminate(None, shared, 0.0, &|d| mix.local_total(None, 1.0 + d))
                .0
        };
        let (lo, hi) = (FLOOR_SCALE_RANGE.0.ln(), FLOOR_SCALE_RANGE.1.ln());
        let step = (hi - lo) / (FLOOR_SCALE_SCAN - 1) as f64;
        let at = |k: usize| lo + step * k as f64;
        let scan: Vec<f64> = (0..FLOOR_SCALE_SCAN)
            .into_par_iter()
            .map(|k| f(at(k)))
            .collect();
        let best = (0..FLOOR_SCALE_SCAN)
            .filter(|&k| scan[k].is_finite())
            .min_by(|&a, &b| scan[a].total_cmp(&scan[b]))?;
        let (a, b) = (
            at(best.saturating_sub(1)),
            at((best + 1).min(FLOOR_SCALE_SCAN - 1)),
        );
        let (mut u_hat, mut f_min) = super::nuisance::golden_section(&f, a, b, 1e-6);
        if scan[best] < f_min {
            (u_hat, f_min) = (at(best), scan[best]);
        }
        let f_stated = f(0.0);
        let delta_chi2_stated = (f_stated - f_min).max(0.0);
        // The end of the interval on one side: bisection on [inner, outer] for f = f_min + 4
        // (the outer end of the range when f stays below it there).
        let edge = |outer: f64| -> f64 {
            let target = f_min + FLOOR_SCALE_DELTA;
            if f(outer) <= target {
                return outer;
            }
            let (mut inner, mut outer) = (u_hat, outer);
            for _ in 0..40 {
                let mid = 0.5 * (inner + outer);
                if f(mid) <= target {
                    inner = mid;
                } else {
                    outer = mid;
                }
                if (outer - inner).abs() < 1e-5 {
                    break;
                }
            }
            0.5 * (inner + outer)
        };
        let (u_lo, u_hi) = rayon::join(|| edge(lo), || edge(hi));
        let mut scale = Self {
            applied: 1.0,
            estimate: u_hat.exp(),
            interval: (u_lo.exp(), u_hi.exp()),
            delta_chi2_stated,
        };
        if scale.stated_excluded() && u_hat < 0.0 {
            scale.applied = scale.interval.1;
        }
        Some(scale)
    }

    /// Whether the data exclude the stated size (κ = 1) at 2σ, in either direction.
    pub fn stated_excluded(&self) -> bool {
        self.delta_chi2_stated > FLOOR_SCALE_DELTA
    }

    /// Whether κ̂ sits at the search's lower end ([`FLOOR_SCALE_RANGE`]), so that it is an upper
    /// limit: no scatter beyond the terms that are not scaled.
    pub fn estimate_at_lower_end(&self) -> bool {
        self.estimate <= FLOOR_SCALE_RANGE.0 * (1.0 + 1e-9)
    }

    /// Scales every object's per-object floor by [`FloorScale::applied`].
    pub fn apply(&self, objects: &mut [ObjectRadius]) {
        for o in objects {
            o.floor_fraction *= self.applied;
        }
    }
}

/// The population prior on the true masses of the white dwarfs in the radius test: their mass
/// function deconvolved from their measured masses and errors (the smoothed EM of
/// [`super::calibrated::deconvolve`], as the calibrated mass bounds estimate theirs), then
/// smoothed by a Gaussian of Silverman's rule-of-thumb bandwidth,
/// h = 0.9 min(sd, IQR/1.34) N^(−1/5) of the measured masses (Silverman 1986, *Density
/// Estimation for Statistics and Data Analysis*, eq. 3.31).
///
/// Why the second smoothing: with few objects the deconvolved function is a bump at each
/// object, and an object's posterior would then count its own measurement twice (once as the
/// likelihood, once through its bump in the prior) and come out too narrow. A bandwidth that
/// shrinks as N^(−1/5) keeps the prior close to flat over an object's error for a handful of
/// white dwarfs (ten objects spread over 0.4–1.0 M☉: h ≈ 0.08 M☉) and lets it follow the
/// population when there are thousands (5 000 with a spread of 0.1 M☉: h ≈ 0.016 M☉, widening
/// the population's variance by 3 %).
///
/// ```
/// use dwarfbound::confront::wd_radius::PopulationPrior;
/// // 400 white dwarfs spread evenly over 0.5–0.9 M☉ with 0.02 M☉ errors: the prior is flat
/// // inside, so the middle and a point nearer the edge weigh alike.
/// let objs: Vec<(f64, f64, f64)> =
///     (0..400).map(|i| (0.5 + 0.4 * (i as f64 + 0.5) / 400.0, 0.02, 0.02)).collect();
/// let prior = PopulationPrior::estimate(&objs).unwrap();
/// let ratio = prior.density(0.62) / prior.density(0.70);
/// assert!((ratio - 1.0).abs() < 0.05, "{ratio}");
/// ```
#[derive(Debug, Clone)]
pub struct PopulationPrior {
    phi: super::calibrated::MassFunction,
    bandwidth_msun: f64,
    n_objects: usize,
}

impl PopulationPrior {
    /// The prior of `objects` = (measured mass, σ₋, σ₊) in M☉; `None` when fewer than two
    /// objects have a finite positive mass and a positive error (there is nothing to
    /// deconvolve: the flat prior stays).
    pub fn estimate(objects: &[(f64, f64, f64)]) -> Option<Self> {
        let usable: Vec<(f64, f64, f64)> = objects
            .iter()
            .copied()
            .filter(|&(m, a, b)| {
                m.is_finite() && m > 0.0 && a.is_finite() && b.is_finite() && a.max(b) > 0.0
            })
            .map(|(m, a, b)| (m, a.max(0.0), b.max(0.0)))
            .collect();
        if usable.len() < 2 {
            return None;
        }
        let mut masses: Vec<f64> = usable.iter().map(|o| o.0).collect();
        masses.sort_by(f64::total_cmp);
        let n = masses.len() as f64;
        let mean = masses.iter().sum::<f64>() / n;
        let sd = (masses.iter().map(|m| (m - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
        let quantile = |q: f64| {
            let x = q * (n - 1.0);
            let (k, f) = (x.floor() as usize, x - x.floor());
            let next = masses.get(k + 1).copied().unwrap_or(masses[k]);
            masses[k] + f * (next - masses[k])
        };
        let iqr = quantile(0.75) - quantile(0.25);
        let spread = if iqr > 0.0 { sd.min(iqr / 1.34) } else { sd };
        let mut errors: Vec<f64> = usable.iter().map(|o| 0.5 * (o.1 + o.2)).collect();
        errors.sort_by(f64::total_cmp);
        let median_error = errors[errors.len() / 2];
        // All at one mass: no spread to scale by, so the errors set the width.
        let bandwidth_msun = if spread > 0.0 {
            0.9 * spread * n.powf(-0.2)
        } else {
            median_error
        };
        // The grid covers every object's ±7σ (the radius term's nodes reach ±6σ) and the
        // smoothing's reach beyond.
        let lo = usable
            .iter()
            .map(|o| o.0 - 7.0 * o.1)
            .fold(f64::INFINITY, f64::min)
            - 3.0 * bandwidth_msun;
        let hi = usable
            .iter()
            .map(|o| o.0 + 7.0 * o.2)
            .fold(f64::NEG_INFINITY, f64::max)
            + 3.0 * bandwidth_msun;
        let domain = (lo.max(1e-4), hi);
        if domain.1.partial_cmp(&domain.0) != Some(std::cmp::Ordering::Greater) {
            return None;
        }
        let phi = super::calibrated::deconvolve(&usable, domain, &Default::default()).ok()?;
        Some(Self {
            phi: phi.smoothed(bandwidth_msun),
            bandwidth_msun,
            n_objects: usable.len(),
        })
    }

    /// The prior density per M☉ at a true mass (0 outside its grid).
    pub fn density(&self, m_msun: f64) -> f64 {
        self.phi.density_linear(m_msun)
    }

    /// Silverman's bandwidth used, M☉.
    pub fn bandwidth_msun(&self) -> f64 {
        self.bandwidth_msun
    }

    /// Objects the prior was estimated from.
    pub fn n_objects(&self) -> usize {
        self.n_objects
    }

    /// Multiplies the flat-prior weights of an object's mass nodes (mass, weight) by the prior
    /// density there and renormalises them to their former sum, so that with a constant prior
    /// nothing changes but rounding. A single node (an exact mass) and an object whose nodes
    /// all fall where the prior vanishes keep their weights.
    pub fn reweight(&self, nodes: &mut [(f64, f64)]) {
        if nodes.len() < 2 {
            return;
        }
        let before: f64 = nodes.iter().map(|n| n.1).sum();
        let densities: Vec<f64> = nodes.iter().map(|n| self.density(n.0)).collect();
        let after: f64 = nodes.iter().zip(&densities).map(|(n, d)| n.1 * d).sum();
        if !(after > 0.0 && after.is_finite() && before.is_finite()) {
            return;
        }
        let scale = before / after;
        for (n, d) in nodes.iter_mut().zip(densities) {
            n.1 *= d * scale;
        }
    }
}

/// Core composition after the default by mass has been applied.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ResolvedCore {
    /// Helium.
    Helium,
    /// Carbon–oxygen (50:50 by mass).
    CarbonOxygen,
    /// Oxygen–neon.
    OxygenNeon,
}

/// Below this mass a white dwarf without a stated core is taken to have a helium core, M☉
/// (single-star evolution cannot make a lighter carbon–oxygen core within a Hubble time;
/// common practice, no source).
pub const HELIUM_CORE_BELOW_MSUN: f64 = 0.45;
/// Above this mass a white dwarf without a stated core is taken to have an oxygen–neon core,
/// M☉ (common practice, no source).
pub const OXYGEN_NEON_CORE_ABOVE_MSUN: f64 = 1.1;

impl ResolvedCore {
    /// The stated core, or the default by mass.
    pub fn resolve(stated: Option<CoreLabel>, mass_msun: f64) -> ResolvedCore {
        match stated {
            Some(CoreLabel::He) => ResolvedCore::Helium,
            Some(CoreLabel::Co) => ResolvedCore::CarbonOxygen,
            Some(CoreLabel::One) => ResolvedCore::OxygenNeon,
            None if mass_msun < HELIUM_CORE_BELOW_MSUN => ResolvedCore::Helium,
            None if mass_msun > OXYGEN_NEON_CORE_ABOVE_MSUN => ResolvedCore::OxygenNeon,
            None => ResolvedCore::CarbonOxygen,
        }
    }

    /// Label as in the `core` column.
    pub fn label(self) -> &'static str {
        match self {
            ResolvedCore::Helium => "he",
            ResolvedCore::CarbonOxygen => "co",
            ResolvedCore::OxygenNeon => "one",
        }
    }
}

/// What the radius model needs to know about one white dwarf at one trial mass.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WdQuery {
    /// Trial mass, M☉.
    pub mass_msun: f64,
    /// μe of the object.
    pub mu_e: f64,
    /// Effective temperature, K (`None`: the cold model only).
    pub teff_k: Option<f64>,
    /// Core after the default by mass.
    pub core: ResolvedCore,
    /// Hydrogen layer if stated (`None`: thick, with half the thick–thin spread as an error).
    pub envelope: Option<EnvelopeLabel>,
}

/// The standard-gravity radius model at one trial mass, as the theory supplies it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WdStandard {
    /// The model's standard-gravity radius, R☉.
    pub radius_rsun: f64,
    /// The zero-temperature radius of the grid's structure solver at ϒ = τ = 0, R☉ (the
    /// denominator of the anchored ratio; same model as `BoundSurface::wd_radii_rsun`).
    pub cold_rsun: f64,
    /// R_hot/R_cold of the finite-temperature model (1 for the cold model), for the ϒ error.
    pub hot_over_cold: f64,
    /// Fractional 1σ radius error from an unknown hydrogen layer (half of thick − thin).
    pub envelope_fraction: f64,
    /// d ln R / d Teff, 1/K (0 for the cold model): propagates the Teff error.
    pub dln_r_dteff_per_k: f64,
}

/// Fractional radius floor of an object in the hot model (see [`RadiusOptions`]).
pub fn floor_fraction(opts: &RadiusOptions, core: ResolvedCore, teff_k: Option<f64>) -> f64 {
    if opts.model == WdRadiusModel::Cold {
        return opts.cold_floor_fraction;
    }
    let ramp = match teff_k {
        Some(t) if t > opts.hot_ramp_start_k => {
            let x = (t / opts.hot_ramp_start_k).ln()
                / (opts.hot_ramp_end_k / opts.hot_ramp_start_k).ln();
            opts.hot_ramp_extra_fraction * x.min(1.0)
        }
        _ => 0.0,
    };
    let base = opts.hot_floor_fraction + ramp;
    match core {
        ResolvedCore::Helium => base.hypot(opts.helium_core_fraction),
        _ => base,
    }
}

/// The shared radius systematic as a nuisance parameter (σ = [`RadiusOptions::shared_fraction`],
/// eliminated as the mass bounds' shifts are), or `None` with per-object floors.
pub fn shared_nuisance(
    opts: &RadiusOptions,
    mass_terms: &MassTermOptions,
) -> Option<SharedNuisance> {
    (mass_terms.systematics == Systematics::Shared && opts.shared_fraction > 0.0).then_some(
        SharedNuisance {
            sigma: opts.shared_fraction,
            method: mass_terms.method,
            reach_sigma: mass_terms.reach_sigma,
        },
    )
}

/// Splits an object's total fractional floor into (per-object part, shared part): the shared
/// part is `shared` (at most the total), the per-object part the rest in quadrature, so that
/// the two add up to the total.
pub fn split_floor(total: f64, shared: f64) -> (f64, f64) {
    let s = shared.clamp(0.0, total);
    ((total * total - s * s).max(0.0).sqrt(), s)
}

/// Why a white dwarf with a radius is left out of the radius test (or `None`); its
/// [`LeftOut::flag`] is the flag for `objects.csv`.
pub fn radius_domain(o: &CatalogueObject, opts: &RadiusOptions) -> Option<LeftOut> {
    if opts.leaves_out_model_mass(o) {
        return Some(LeftOut::ModelMass);
    }
    if opts.model == WdRadiusModel::Cold || o.radius_model_rsun().is_some() {
        return None;
    }
    if o.teff_k().is_none() {
        return Some(LeftOut::NoTeff);
    }
    if !opts.include_out_of_domain && o.mass_msun < opts.elm_max_msun {
        return Some(LeftOut::Elm);
    }
    None
}

/// Whether an object has what the radius test needs at all.
pub fn has_radius_measurement(o: &CatalogueObject) -> bool {
    o.mass_limit == MassLimit::None && o.radius_rsun().is_some() && o.radius_err_rsun().is_some()
}

/// One object's radius test, prepared once per confrontation.
#[derive(Debug, Clone, PartialEq)]
pub struct ObjectRadius {
    /// Index into the caller's object list.
    pub index: usize,
    /// Measured radius, R☉.
    pub radius_rsun: f64,
    /// 1σ radius error, R☉.
    pub radius_err_rsun: f64,
    /// Mass nodes (M☉) and weights of the marginalisation over the true mass.
    pub nodes: Vec<(f64, f64)>,
    /// The standard model at each node (`None`: no model at that mass).
    pub standard: Vec<Option<WdStandard>>,
    /// Fractional floor of the object: its per-object part (all of it with per-object floors).
    pub floor_fraction: f64,
    /// Fractional part of the floor shared by every object (0 with per-object floors); enters
    /// the likelihood through the shared scale (1 + δ), and each tension in quadrature.
    pub shared_fraction: f64,
    /// 1σ Teff error, K (0 when unknown).
    pub teff_err_k: f64,
    /// The standard model at the nominal mass (what a user's `radius_model` anchors); `None`
    /// where there is no model at that mass, which leaves the object out of the hot model's
    /// radius test.
    pub at_nominal: Option<WdStandard>,
}

/// Smallest log-likelihood a radius term can contribute (keeps −2 ln L finite where the whole
/// mass range of an object lies above the maximum mass).
pub const LN_L_RADIUS_FLOOR: f64 = -1e4;

impl ObjectRadius {
    /// Predicted radius and its theory 1σ at node `k`, given the cold radius of the grid point
    /// at that node and the point's ϒ; `None` where no model exists.
    pub fn predicted(
        &self,
        k: usize,
        cold_at_point: Option<f64>,
        upsilon: f64,
    ) -> Option<(f64, f64)> {
        self.predicted_with_floor(k, cold_at_point, upsilon, self.floor_fraction)
    }

    /// [`ObjectRadius::predicted`] with `floor_fraction` in place of the object's own.
    fn predicted_with_floor(
        &self,
        k: usize,
        cold_at_point: Option<f64>,
        upsilon: f64,
        floor_fraction: f64,
    ) -> Option<(f64, f64)> {
        let s = self.standard.get(k).copied().flatten()?;
        let cold = cold_at_point?;
        if s.cold_rsun.is_nan() || s.cold_rsun <= 0.0 {
            return None;
        }
        let r = s.radius_rsun * cold / s.cold_rsun;
        let anchor = 0.5 * upsilon.abs() * (s.hot_over_cold - 1.0).max(0.0);
        let teff = s.dln_r_dteff_per_k * self.teff_err_k;
        let frac =
            (floor_fraction.powi(2) + s.envelope_fraction.powi(2) + anchor.powi(2) + teff.powi(2))
                .sqrt();
        Some((r, frac * r))
    }

    /// Signed two-sided tension of the measured radius with standard gravity, from the same
    /// marginal predictive distribution as the likelihood ([`ObjectRadius::marginal_tension`] at
    /// the standard cold radii, no anchoring error). Positive: larger than predicted.
    pub fn standard_tension(&self) -> Option<f64> {
        // Standard gravity is the grid point whose cold radius is the standard one (ratio 1).
        let cold: Vec<Option<f64>> = self
            .standard
            .iter()
            .map(|s| s.map(|s| s.cold_rsun))
            .collect();
        self.marginal_tension(&cold, 0.0)
    }

    /// Signed two-sided tension at a grid point (`cold_at_point`: the structure solver's cold
    /// radius at each mass node there, as the likelihood takes them): the measured radius's
    /// place in the predictive distribution the likelihood marginalises, the mixture
    /// F(R) = Σ_k w_k Φ((R − R_k)/s_k) / Σ_k w_k over the nodes with a model (the node weights
    /// carry the prior on the true mass), as a normal deviate, z = Φ⁻¹(F(R_obs)). Each s_k holds
    /// the whole floor (its shared part included: one object alone sees all of it), the
    /// measurement error and the anchoring error at the point's ϒ. The tails are summed in
    /// logarithms, so |z| stays exact far out. `None` where no node has a model.
    ///
    /// This replaces a first-order tension at the measured mass (the mass error through the
    /// local slope dR/dM), which ignored the prior: with a peaked population its mean drifted
    /// with mass (−0.56σ at 0.4 M☉ to +0.30σ at 0.9 M☉ over 5 000 invented white dwarfs drawn in
    /// standard gravity), a trend a reader would take for physics.
    pub fn marginal_tension(&self, cold_at_point: &[Option<f64>], upsilon: f64) -> Option<f64> {
        use super::prob::{ln_normal_cdf, normal_quantile_from_ln};
        let mut below: Vec<f64> = Vec::with_capacity(self.nodes.len());
        let mut above: Vec<f64> = Vec::with_capacity(self.nodes.len());
        let mut weights: Vec<f64> = Vec::with_capacity(self.nodes.len());
        for (k, ((_, w), cold)) in self.nodes.iter().zip(cold_at_point).enumerate() {
            let Some((r, th)) = self.predicted(k, *cold, upsilon) else {
                continue;
            };
            if *w <= 0.0 {
                continue;
            }
            let th2 = th * th + (self.shared_fraction * r).powi(2);
            let d = (self.radius_rsun - r) / (self.radius_err_rsun.powi(2) + th2).sqrt();
            let ln_w = w.ln();
            below.push(ln_w + ln_normal_cdf(d));
            above.push(ln_w + ln_normal_cdf(-d));
            weights.push(ln_w);
        }
        let ln_sum = super::reduce::log_sum_exp;
        let total = ln_sum(&weights);
        if !total.is_finite() {
            return None;
        }
        let (ln_below, ln_above) = (ln_sum(&below) - total, ln_sum(&above) - total);
        let z = if ln_below <= ln_above {
            normal_quantile_from_ln(ln_below.min(0.0))
        } else {
            -normal_quantile_from_ln(ln_above.min(0.0))
        };
        z.is_finite().then_some(z)
    }

    /// ln of the likelihood of the measured radius marginalised over the true mass:
    /// Σ_k w_k N(R_obs; R_k, σ_k), σ_k² = σ_R² + σ_th,k², over the nodes with a model.
    /// `cold_at_point[k]` is the structure solver's cold radius at node k at the grid point.
    pub fn ln_likelihood(&self, cold_at_point: &[Option<f64>], upsilon: f64) -> f64 {
        self.ln_likelihood_scaled(&self.components(cold_at_point, upsilon), 1.0)
    }

    /// (weight, predicted radius, theory 1σ) at each node with a model, at a grid point.
    fn components(&self, cold_at_point: &[Option<f64>], upsilon: f64) -> Vec<(f64, f64, f64)> {
        self.nodes
            .iter()
            .zip(cold_at_point)
            .enumerate()
            .filter_map(|(k, ((_, w), cold))| {
                self.predicted(k, *cold, upsilon).map(|(r, th)| (*w, r, th))
            })
            .collect()
    }

    /// ln L with every predicted radius and its theory error scaled by `scale` (= 1 + δ, the
    /// shared systematic).
    fn ln_likelihood_scaled(&self, components: &[(f64, f64, f64)], scale: f64) -> f64 {
        let mut total = 0.0;
        for &(w, r, th) in components {
            let (r, th) = (r * scale, th * scale);
            let s2 = self.radius_err_rsun.powi(2) + th * th;
            let z = (self.radius_rsun - r) / s2.sqrt();
            total += w * (-0.5 * z * z).exp() / (2.0 * std::f64::consts::PI * s2).sqrt();
        }
        if total > 0.0 {
            total.ln().max(LN_L_RADIUS_FLOOR)
        } else {
            LN_L_RADIUS_FLOOR
        }
    }
}

/// The radius term of all objects at one grid point.
#[derive(Debug, Clone, PartialEq)]
pub struct RadiusTerm {
    /// −2 ln L of the radius test, the shared systematic eliminated (prior included).
    pub minus_two_ln_l: f64,
    /// The profiled shared scale δ̂ (0 with per-object floors).
    pub delta_hat: f64,
    /// Each object's −2 ln L at δ̂, in the order of the objects (their sum plus the prior
    /// (δ̂/σ)², or the marginalisation's remainder, is `minus_two_ln_l`).
    pub per_object: Vec<f64>,
}

/// The radius term at one grid point: `cold_at_point` holds the structure solver's cold radius
/// at every object's mass nodes, object after object (as [`ObjectRadius::ln_likelihood`] takes
/// them one by one), `upsilon` the point's ϒ. With `shared`, every prediction is scaled by one
/// common factor (1 + δ), δ ~ N(0, σ²), eliminated by
/// [`super::nuisance::eliminate_newton_value`] from δ = 0 with the term's exact first and
/// second derivatives in the scale; without, the term is the plain sum over objects. The
/// objects' mixture components are flattened once per point with their constants hoisted, so
/// each of the search's ≈ 5 evaluations is one pass of one exp and one square root per
/// component (which serve the value and both derivatives), and the per-object values at δ̂
/// are those of the search's last evaluation.
pub fn radius_term(
    objects: &[ObjectRadius],
    cold_at_point: &[Option<f64>],
    upsilon: f64,
    shared: Option<&SharedNuisance>,
) -> RadiusTerm {
    radius_term_from(objects, cold_at_point, upsilon, shared, 0.0)
}

/// [`radius_term`] with the shared scale's search started at `start` (a neighbouring point's
/// δ̂, say): the same minimum to rounding, found in fewer steps when the start is close.
/// Callers pass a start only where the order of the points is fixed (not by the thread
/// that happens to run them), so that the outputs do not depend on the number of threads.
pub fn radius_term_from(
    objects: &[ObjectRadius],
    cold_at_point: &[Option<f64>],
    upsilon: f64,
    shared: Option<&SharedNuisance>,
    start: f64,
) -> RadiusTerm {
    let mix = Mixtures::new(objects, cold_at_point, upsilon);
    let (minus_two_ln_l, delta_hat, at_hat) = mix.eliminate_keeping_terms(shared, start);
    RadiusTerm {
        minus_two_ln_l,
        delta_hat,
        per_object: at_hat.iter().map(|l| l.value).collect(),
    }
}

/// [`radius_term`]'s `minus_two_ln_l` alone (bit for bit), without keeping the per-object
/// values that only [`radius_term`] returns: what the grid's map takes.
pub fn radius_total(
    objects: &[ObjectRadius],
    cold_at_point: &[Option<f64>],
    upsilon: f64,
    shared: Option<&SharedNuisance>,
) -> f64 {
    radius_total_from(objects, cold_at_point, upsilon, shared, 0.0).0
}

/// [`radius_total`] with the search started at `start` (see [`radius_term_from`]), and the
/// δ̂ it found (0 without a shared scale), for the next point's start.
pub fn radius_total_from(
    objects: &[ObjectRadius],
    cold_at_point: &[Option<f64>],
    upsilon: f64,
    shared: Option<&SharedNuisance>,
    start: f64,
) -> (f64, f64) {
    let mix = Mixtures::new(objects, cold_at_point, upsilon);
    mix.eliminate(None, shared, start, &|d| mix.local_total(None, 1.0 + d))
}

/// The whole radius term at one point without each object of `leave_out` in turn (positions
/// in `objects`), the shared scale eliminated again each time, at the cost of one flattening
/// for all of them.
///
/// Without a shared scale this is [`radius_total`] of the objects without that one, to the bit.
/// With one, the scale is first profiled for all objects (from δ = 0, as [`radius_total`]
/// does), and each reduced set's search starts at that δ̂ — removing one object moves δ̂ by
/// little, so one or two Newton steps find the reduced set's minimum, the first from the
/// per-object values already in hand. Each evaluation sums the reduced set's own values (and
/// derivatives) in object order, so at any scale it is the reduced set's sum to the bit; "the
/// whole sum minus the object's value" is not (it rounds differently, and loses digits to
/// cancellation when the object's term is large, e.g. floored). Because the search is
/// converged to rounding level, the result agrees with [`radius_total`] of the reduced set to
/// a few ulps, not to the bit (the two searches start from different points).
pub fn radius_totals_leaving_out(
    objects: &[ObjectRadius],
    cold_at_point: &[Option<f64>],
    upsilon: f64,
    shared: Option<&SharedNuisance>,
    leave_out: &[usize],
) -> Vec<f64> {
    let mix = Mixtures::new(objects, cold_at_point, upsilon);
    let Some(n) = shared else {
        return leave_out
            .iter()
            .map(|&skip| mix.total(Some(skip), 1.0))
            .collect();
    };
    // Every object's term at the whole set's δ̂, where each reduced search starts.
    let (_, delta_all, at_start) = mix.eliminate_keeping_terms(Some(n), 0.0);
    leave_out
        .iter()
        .map(|&skip| {
            let at = |d: f64| -> Local {
                if d.to_bits() == delta_all.to_bits() {
                    Mixtures::sum(&at_start, Some(skip))
                } else {
                    mix.local_total(Some(skip), 1.0 + d)
                }
            };
            mix.eliminate(Some(skip), Some(n), delta_all, &at).0
        })
        .collect()
}

/// `point(k, start)` for k in 0..n, each returning (result, δ̂): fixed blocks of `block`
/// consecutive points in parallel, the points of a block in order, each point's shared-scale
/// search starting at the previous point's δ̂ (0 at a block's first; a point without a term
/// returns the start it was given). The blocks do not depend on the thread count, so neither
/// do the results: how the grid's rows of constant τ and the τ = 0 slice's fine axis warm-start
/// [`radius_total_from`] and [`radius_term_from`].
pub fn warm_started<T: Send>(
    n: usize,
    block: usize,
    point: impl Fn(usize, f64) -> (T, f64) + Sync,
) -> Vec<T> {
    let block = block.max(1);
    (0..n.div_ceil(block))
        .into_par_iter()
        .map(|b| {
            let mut start = 0.0;
            (b * block..((b + 1) * block).min(n))
                .map(|k| {
                    let (result, delta_hat) = point(k, start);
                    start = delta_hat;
                    result
                })
                .collect::<Vec<_>>()
        })
        .flatten()
        .collect()
}

/// One mixture component of an object's radius likelihood at a grid point: weight over
/// √(2π), predicted radius r and its theory variance th² at scale 1, so that at scale s the
/// component is c (σ_R² + th² s²)^{−1/2} exp(−(R − r s)² / (2(σ_R² + th² s²))).
#[derive(Debug, Clone, Copy)]
struct Component {
    c: f64,
    r: f64,
    th2: f64,
}

/// Every object's components at one grid point, flattened (constants hoisted out of the
/// evaluations of the shared scale).
struct Mixtures {
    components: Vec<Component>,
    /// (first component, end, measured R, σ_R²) per object.
    objects: Vec<(usize, usize, f64, f64)>,
}

impl Mixtures {
    fn new(objects: &[ObjectRadius], cold_at_point: &[Option<f64>], upsilon: f64) -> Self {
        Self::with_floor_scale(objects, cold_at_point, upsilon, 1.0)
    }

    /// [`Mixtures::new`] with every per-object floor multiplied by `floor_scale` (the same
    /// components to the bit at 1).
    fn with_floor_scale(
        objects: &[ObjectRadius],
        cold_at_point: &[Option<f64>],
        upsilon: f64,
        floor_scale: f64,
    ) -> Self {
        let inv_sqrt_2pi = 1.0 / (2.0 * std::f64::consts::PI).sqrt();
        let mut components = Vec::with_capacity(cold_at_point.len());
        let mut spans = Vec::with_capacity(objects.len());
        let mut at = 0;
        for o in objects {
            let end = (at + o.nodes.len()).min(cold_at_point.len());
            let first = components.len();
            for (k, ((_, w), cold)) in o
                .nodes
                .iter()
                .zip(&cold_at_point[at.min(end)..end])
                .enumerate()
            {
                let floor = o.floor_fraction * floor_scale;
                if let Some((r, th)) = o.predicted_with_floor(k, *cold, upsilon, floor) {
                    components.push(Component {
                        c: w * inv_sqrt_2pi,
                        r,
                        th2: th * th,
                    });
                }
            }
            at = end;
            spans.push((
                first,
                components.len(),
                o.radius_rsun,
                o.radius_err_rsun * o.radius_err_rsun,
            ));
        }
        Self {
            components,
            objects: spans,
        }
    }

    /// −2 ln L of object `i` with every prediction and theory error scaled by `scale`.
    fn minus_two_ln_l(&self, i: usize, scale: f64) -> f64 {
        let (a, b, big_r, e2) = self.objects[i];
        let mut total = 0.0;
        for k in &self.components[a..b] {
            let inv = 1.0 / (e2 + k.th2 * scale * scale);
            let d = big_r - k.r * scale;
            total += k.c * (-0.5 * d * d * inv).exp() * inv.sqrt();
        }
        -2.0 * floored_ln(total)
    }

    /// Object `i`'s −2 ln L at `scale` with its first and second derivatives in the scale: the
    /// value is [`Mixtures::minus_two_ln_l`]'s to the bit (the same operations in the same
    /// order), and each component's one exp serves all three.
    ///
    /// A component is t = c v^{−1/2} exp(−u²/(2v)) with u = R − r s, v = σ_R² + th² s²; with
    /// φ = ln t, a = u/v and w = a² − 1/v:
    /// φ′ = th² s w + r a and
    /// φ″ + φ′² = (th² + r²) w + (th² s)² (w² − 2(w + a²)/v) + 2 r a th² s (w − 2/v)
    /// (checked symbolically, and against finite differences in the tests); t′ = t φ′,
    /// t″ = t (φ″ + φ′²). With L = Σ t: (−2 ln L)′ = −2 L′/L and
    /// (−2 ln L)″ = −2 L″/L + 2 (L′/L)². A floored term is flat (both derivatives 0).
    ///
    /// The components go in blocks: the exponents first, then the exps alone, then the sums
    /// (every floating-point register is caller-saved across a call to `exp`, so a loop that
    /// kept its four sums and the derivative terms live across it spilled them to the stack at
    /// every component — perf: the arithmetic then cost more than the exps).
    fn local(&self, i: usize, scale: f64) -> Local {
        const BLOCK: usize = 32;
        let (a, b, big_r, e2) = self.objects[i];
        let (mut total, mut d1, mut d2, mut mag) = (0.0, 0.0, 0.0, 0.0);
        for block in self.components[a..b].chunks(BLOCK) {
            let n = block.len();
            let (mut inv, mut dev, mut ex) = ([0.0; BLOCK], [0.0; BLOCK], [0.0; BLOCK]);
            for (((k, inv), dev), ex) in block.iter().zip(&mut inv).zip(&mut dev).zip(&mut ex) {
                *inv = 1.0 / (e2 + k.th2 * scale * scale);
                *dev = big_r - k.r * scale;
                *ex = -0.5 * *dev * *dev * *inv;
            }
            for ex in &mut ex[..n] {
                *ex = ex.exp();
            }
            // Each component's term and its two derivative terms, side by side (no running
            // sum, so the processor does several components at once), then the four sums in
            // component order: the same operations on the same operands as one loop, so the
            // same bits (perf on 2 000 white dwarfs with radii: the single loop was half of
            // the drivers, waiting on its sums and one component at a time).
            let (mut t, mut tp1, mut tp2) = ([0.0; BLOCK], [0.0; BLOCK], [0.0; BLOCK]);
            for (((((k, &inv), &dev), &ex), t), (tp1, tp2)) in block
                .iter()
                .zip(&inv)
                .zip(&dev)
                .zip(&ex)
                .zip(&mut t)
                .zip(tp1.iter_mut().zip(&mut tp2))
            {
                *t = k.c * ex * inv.sqrt();
                let th2s = k.th2 * scale;
                let av = dev * inv;
                let w = av * av - inv;
                let p1 = th2s * w + k.r * av;
                let p2 = (k.th2 + k.r * k.r) * w
                    + th2s * th2s * (w * w - 2.0 * inv * (w + av * av))
                    + 2.0 * k.r * av * th2s * (w - 2.0 * inv);
                *tp1 = *t * p1;
                *tp2 = *t * p2;
            }
            for ((&t, &tp1), &tp2) in t[..n].iter().zip(&tp1[..n]).zip(&tp2[..n]) {
                total += t;
                d1 += tp1;
                d2 += tp2;
                mag += tp1.abs();
            }
        }
        let value = -2.0 * floored_ln(total);
        if total > 0.0 && total.ln() > LN_L_RADIUS_FLOOR {
            let (l1, l2) = (d1 / total, d2 / total);
            Local {
                value,
                slope: -2.0 * l1,
                curvature: -2.0 * l2 + 2.0 * l1 * l1,
                slope_magnitude: 2.0 * mag / total,
            }
        } else {
            Local {
                value,
                ..Local::default()
            }
        }
    }

    /// Every object's [`Mixtures::local`] at `scale`, in object order (`skip`'s left at 0).
    fn locals(&self, skip: Option<usize>, scale: f64) -> Vec<Local> {
        (0..self.objects.len())
            .map(|i| {
                if Some(i) == skip {
                    Local::default()
                } else {
                    self.local(i, scale)
                }
            })
            .collect()
    }

    /// The sums over objects (in object order, without `skip`) of per-object terms: the value
    /// is added up as [`Mixtures::total`] adds it, so it is the same to the bit.
    fn sum(locals: &[Local], skip: Option<usize>) -> Local {
        let kept = || {
            locals
                .iter()
                .enumerate()
                .filter(move |&(i, _)| Some(i) != skip)
                .map(|(_, l)| l)
        };
        Local {
            value: kept().map(|l| l.value).sum(),
            slope: kept().map(|l| l.slope).sum(),
            curvature: kept().map(|l| l.curvature).sum(),
            slope_magnitude: kept().map(|l| l.slope_magnitude).sum(),
        }
    }

    /// [`Mixtures::sum`] of the objects without `skip` at `scale`, without keeping the
    /// per-object terms.
    fn local_total(&self, skip: Option<usize>, scale: f64) -> Local {
        let mut out = Local::default();
        let mut values = Vec::with_capacity(self.objects.len());
        for i in (0..self.objects.len()).filter(|&i| Some(i) != skip) {
            let l = self.local(i, scale);
            values.push(l.value);
            out.slope += l.slope;
            out.curvature += l.curvature;
            out.slope_magnitude += l.slope_magnitude;
        }
        out.value = values.into_iter().sum();
        out
    }

    /// Σ_i −2 ln L_i at `scale`, in object order, without object `skip`.
    fn total(&self, skip: Option<usize>, scale: f64) -> f64 {
        (0..self.objects.len())
            .filter(|&i| Some(i) != skip)
            .map(|i| self.minus_two_ln_l(i, scale))
            .sum()
    }

    /// (−2 ln L, δ̂) of all objects from `start` (as [`Mixtures::eliminate`]), with every
    /// object's term and its derivatives at δ̂: the search's last evaluation is usually at δ̂,
    /// so its per-object terms are kept instead of being computed again (their values are
    /// [`Mixtures::minus_two_ln_l`]'s to the bit either way).
    fn eliminate_keeping_terms(
        &self,
        shared: Option<&SharedNuisance>,
        start: f64,
    ) -> (f64, f64, Vec<Local>) {
        // (δ's bits, every object's term there) of the search's last evaluation.
        let last: std::cell::RefCell<Option<(u64, Vec<Local>)>> = std::cell::RefCell::new(None);
        let at = |d: f64| -> Local {
            let locals = self.locals(None, 1.0 + d);
            let sum = Mixtures::sum(&locals, None);
            *last.borrow_mut() = Some((d.to_bits(), locals));
            sum
        };
        let (value, delta_hat) = self.eliminate(None, shared, start, &at);
        let terms = match last.into_inner() {
            Some((bits, locals)) if bits == delta_hat.to_bits() => locals,
            _ => self.locals(None, 1.0 + delta_hat),
        };
        (value, delta_hat, terms)
    }

    /// (−2 ln L, δ̂) of the objects without `skip`: `at(δ)` is their Σ −2 ln L_i at 1 + δ with
    /// its derivatives in δ, the shared scale eliminated when there is one (by
    /// [`eliminate_newton_value`] from `start`; δ ≤ −1 is no radius at all), else the plain
    /// sum at scale 1.
    fn eliminate(
        &self,
        skip: Option<usize>,
        shared: Option<&SharedNuisance>,
        start: f64,
        at: &dyn Fn(f64) -> Local,
    ) -> (f64, f64) {
        match shared {
            None => (self.total(skip, 1.0), 0.0),
            Some(n) => {
                let local = |d: f64| -> Local {
                    if d <= -1.0 {
                        return Local {
                            value: f64::INFINITY,
                            slope: f64::NAN,
                            curvature: f64::NAN,
                            ..Local::default()
                        };
                    }
                    at(d)
                };
                let value = |d: f64| -> f64 {
                    if d <= -1.0 {
                        return f64::INFINITY;
                    }
                    self.total(skip, 1.0 + d)
                };
                eliminate_newton_value(&local, &value, n, start)
            }
        }
    }
}

/// ln of a likelihood, floored at [`LN_L_RADIUS_FLOOR`] (also where it is 0).
fn floored_ln(total: f64) -> f64 {
    if total > 0.0 {
        total.ln().max(LN_L_RADIUS_FLOOR)
    } else {
        LN_L_RADIUS_FLOOR
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    /// The radius term's nodes of a symmetric mass measurement.
    fn simpson_nodes(m0: f64, s: f64) -> Vec<(f64, f64)> {
        crate::confront::engine::split_normal_mass_nodes(m0, s, s)
    }

    fn posterior_mean(nodes: &[(f64, f64)]) -> f64 {
        nodes.iter().map(|n| n.0 * n.1).sum::<f64>() / nodes.iter().map(|n| n.1).sum::<f64>()
    }

    /// Source: the normal–normal conjugate posterior (Gelman et al. 2013, *Bayesian Data
    /// Analysis*, 3rd ed., §2.5): a measurement m_obs ± σ of a true mass drawn from
    /// N(μ, σ_p²) has posterior mean μ + (m_obs − μ) σ_p²/(σ_p² + σ²). 20 000 invented true
    /// masses from N(0.62, 0.10) measured to 0.03 M☉: the prior is their deconvolved mass
    /// function widened by Silverman's bandwidth h (σ_p² = 0.1² + h²), and an object measured at
    /// 0.80 M☉ is shrunk to ≈ 0.786 M☉, where the flat prior leaves it at 0.80.
    #[test]
    fn the_population_prior_shrinks_a_mass_toward_the_peak_as_the_conjugate_normal_does() {
        let mut rng = crate::confront::reduce::SplitMix64::new(7);
        let mut gauss = || {
            let u1 = rng.next_f64().max(1e-300);
            let u2 = rng.next_f64();
            (-2.0 * u1.ln()).sqrt() * (2.0 * PI * u2).cos()
        };
        let (mu, sp, s) = (0.62, 0.10, 0.03);
        let objs: Vec<(f64, f64, f64)> = (0..20_000)
            .map(|_| {
                let m = mu + sp * gauss();
                (m + s * gauss(), s, s)
            })
            .collect();
        let prior = PopulationPrior::estimate(&objs).unwrap();
        let h = prior.bandwidth_msun();
        // Silverman's rule on measured masses of spread √(0.1² + 0.03²).
        let expected_h = 0.9 * (sp * sp + s * s).sqrt() * 20_000f64.powf(-0.2);
        assert!(
            (h / expected_h - 1.0).abs() < 0.03,
            "h = {h}, expected ≈ {expected_h}"
        );
        let var_p = sp * sp + h * h;
        for m_obs in [0.50, 0.62, 0.80] {
            let mut nodes = simpson_nodes(m_obs, s);
            let flat = posterior_mean(&nodes);
            assert!((flat - m_obs).abs() < 1e-6, "{flat}");
            prior.reweight(&mut nodes);
            let got = posterior_mean(&nodes);
            let want = mu + (m_obs - mu) * var_p / (var_p + s * s);
            assert!(
                (got - want).abs() < 1.5e-3,
                "m_obs {m_obs}: {got} against {want}"
            );
        }
        // A weight sum kept (the likelihood's normalisation does not move).
        let mut nodes = simpson_nodes(0.8, s);
        let before: f64 = nodes.iter().map(|n| n.1).sum();
        prior.reweight(&mut nodes);
        let after: f64 = nodes.iter().map(|n| n.1).sum();
        assert!((after / before - 1.0).abs() < 1e-12);
    }

    #[test]
    fn the_prior_needs_two_objects_with_errors_and_reads_its_name() {
        assert!(PopulationPrior::estimate(&[(0.6, 0.02, 0.02)]).is_none());
        assert!(PopulationPrior::estimate(&[(0.6, 0.0, 0.0), (0.7, 0.0, 0.0)]).is_none());
        assert!(PopulationPrior::estimate(&[(0.6, 0.02, 0.02), (0.7, 0.02, 0.03)]).is_some());
        for p in [RadiusMassPrior::Flat, RadiusMassPrior::Population] {
            assert_eq!(p.name().parse::<RadiusMassPrior>(), Ok(p));
        }
        assert!("uniform".parse::<RadiusMassPrior>().is_err());
        // One node (an exact mass) is left alone.
        let prior = PopulationPrior::estimate(&[(0.6, 0.02, 0.02), (0.7, 0.02, 0.03)]).unwrap();
        let mut one = vec![(0.65, 1.0)];
        prior.reweight(&mut one);
        assert_eq!(one, vec![(0.65, 1.0)]);
    }

    #[test]
    fn default_core_by_mass() {
        // Thresholds of the module constants (common practice, no source).
        assert_eq!(ResolvedCore::resolve(None, 0.3), ResolvedCore::Helium);
        assert_eq!(ResolvedCore::resolve(None, 0.6), ResolvedCore::CarbonOxygen);
        assert_eq!(ResolvedCore::resolve(None, 1.2), ResolvedCore::OxygenNeon);
        assert_eq!(
            ResolvedCore::resolve(Some(CoreLabel::Co), 0.3),
            ResolvedCore::CarbonOxygen
        );
    }

    #[test]
    fn floor_ramps_with_teff_and_is_flat_for_cold() {
        let o = RadiusOptions::default();
        let f = |t| floor_fraction(&o, ResolvedCore::CarbonOxygen, Some(t));
        assert_eq!(f(5_000.0), 0.03);
        assert!((f(30_000.0) - 0.0425).abs() < 1e-12); // halfway in log Teff
        assert!((f(100_000.0) - 0.055).abs() < 1e-12);
        let cold = RadiusOptions {
            model: WdRadiusModel::Cold,
            ..Default::default()
        };
        assert_eq!(
            floor_fraction(&cold, ResolvedCore::Helium, Some(50_000.0)),
            0.03
        );
    }

    #[test]
    fn shared_scale_profiles_in_closed_form() {
        // One object, exact mass, no theory error: f(δ) = ((a − rδ)/σ_R)² + const with
        // a = R_obs − r, so the profile is a²/(σ_R² + r²σ²) + const (closed form, as for any
        // linear Gaussian nuisance).
        let std = WdStandard {
            radius_rsun: 0.0125,
            cold_rsun: 0.0120,
            hot_over_cold: 1.0,
            envelope_fraction: 0.0,
            dln_r_dteff_per_k: 0.0,
        };
        let o = ObjectRadius {
            index: 0,
            radius_rsun: 0.0130,
            radius_err_rsun: 0.0001,
            nodes: vec![(0.6, 1.0)],
            standard: vec![Some(std)],
            floor_fraction: 0.0,
            shared_fraction: 0.025,
            teff_err_k: 0.0,
            at_nominal: Some(std),
        };
        let cold = [Some(0.0120)];
        let plain = radius_term(std::slice::from_ref(&o), &cold, 0.0, None);
        assert!((plain.minus_two_ln_l + 2.0 * o.ln_likelihood(&cold, 0.0)).abs() < 1e-12);
        let n = SharedNuisance {
            sigma: 0.025,
            method: crate::confront::nuisance::NuisanceMethod::Profile,
            reach_sigma: 6.0,
        };
        let shared = radius_term(std::slice::from_ref(&o), &cold, 0.0, Some(&n));
        let (a, r, e, s) = (0.0130 - 0.0125, 0.0125, 0.0001, 0.025);
        let norm = (2.0 * std::f64::consts::PI * e * e).ln();
        let exact = a * a / (e * e + r * r * s * s) + norm;
        assert!(
            (shared.minus_two_ln_l - exact).abs() < 1e-8,
            "{shared:?} vs {exact}"
        );
        assert!((shared.delta_hat - a * r * s * s / (e * e + r * r * s * s)).abs() < 1e-6);
        // The split keeps each object's total floor.
        let (p, q) = split_floor(0.03, 0.025);
        assert!((p.hypot(q) - 0.03).abs() < 1e-15);
        assert_eq!(split_floor(0.02, 0.025), (0.0, 0.02));
    }

    /// N objects with exact masses, one standard radius r, measurement error e·r and floor f·r,
    /// whose radii scatter about r by `scatter`·r in normal quantiles (a sample of variance ≈ 1
    /// without randomness). Without a shared scale the profile in κ has a closed form: with
    /// S = mean((R − r)²/r²) and v = e² + κ² f², −2 ln L = N (S/v + ln v) + const, minimal at
    /// v = S (the textbook maximum-likelihood variance of a normal sample).
    fn floor_sample(n: usize, scatter: f64) -> (Vec<ObjectRadius>, f64) {
        use statrs::distribution::{ContinuousCDF, Normal};
        let unit = Normal::new(0.0, 1.0).unwrap();
        let (r, e, f) = (0.0125, 0.02, 0.02);
        let std = WdStandard {
            radius_rsun: r,
            cold_rsun: 0.012,
            hot_over_cold: 1.0,
            envelope_fraction: 0.0,
            dln_r_dteff_per_k: 0.0,
        };
        let total = (e * e + scatter * scatter).sqrt();
        let objects: Vec<ObjectRadius> = (0..n)
            .map(|i| {
                let z = unit.inverse_cdf((i as f64 + 0.5) / n as f64);
                ObjectRadius {
                    index: i,
                    radius_rsun: r * (1.0 + total * z),
                    radius_err_rsun: e * r,
                    nodes: vec![(0.6, 1.0)],
                    standard: vec![Some(std)],
                    floor_fraction: f,
                    shared_fraction: 0.0,
                    teff_err_k: 0.0,
                    at_nominal: Some(std),
                }
            })
            .collect();
        let s_mean = objects
            .iter()
            .map(|o| ((o.radius_rsun - r) / r).powi(2))
            .sum::<f64>()
            / n as f64;
        (objects, s_mean)
    }

    #[test]
    fn the_floor_scale_is_the_maximum_likelihood_variance_and_moves_only_when_excluded() {
        let (e, f) = (0.02_f64, 0.02_f64);
        let profile = |n: usize, s_mean: f64, kappa: f64| {
            let v = e * e + kappa * kappa * f * f;
            n as f64 * (s_mean / v + v.ln())
        };
        // Real scatter twice the floor: κ̂ = √(S − e²)/f ≈ 2, excluded from 1, but the floor is
        // never widened by the data (the excess shows as tensions).
        let (objects, s_mean) = floor_sample(2000, 0.04);
        let k = FloorScale::fit(&objects, None).unwrap();
        let closed = (s_mean - e * e).sqrt() / f;
        assert!(
            (k.estimate - closed).abs() < 1e-4 * closed,
            "{k:?} vs {closed}"
        );
        assert!(k.delta_chi2_stated > 4.0 && k.applied == 1.0, "{k:?}");
        let d1 = profile(2000, s_mean, 1.0) - profile(2000, s_mean, closed);
        assert!(
            (k.delta_chi2_stated - d1).abs() < 1e-6 * d1,
            "{k:?} vs {d1}"
        );
        // The 2σ ends sit at Δ(−2 ln L) = 4 of the closed form.
        for end in [k.interval.0, k.interval.1] {
            let d = profile(2000, s_mean, end) - profile(2000, s_mean, closed);
            assert!((d - 4.0).abs() < 1e-3, "{end}: {d}");
        }
        // Real scatter as stated: κ̂ ≈ 1, the stated floor kept exactly.
        let (objects, _) = floor_sample(2000, 0.02);
        let k = FloorScale::fit(&objects, None).unwrap();
        assert!((k.estimate - 1.0).abs() < 0.1 && k.applied == 1.0, "{k:?}");
        // No scatter beyond the measurement: κ̂ at the search's lower end, and the floor moved
        // only to the upper end of its 2σ interval (the widest the data allow).
        let (objects, s_mean) = floor_sample(2000, 0.0);
        let k = FloorScale::fit(&objects, None).unwrap();
        assert!(k.estimate < 0.01 && k.applied < 1.0, "{k:?}");
        assert_eq!(k.applied, k.interval.1);
        let best = profile(2000, s_mean, k.estimate);
        assert!((profile(2000, s_mean, k.applied) - best - 4.0).abs() < 1e-3);
        // Ten such objects cannot exclude the stated floor: it is kept.
        let (objects, _) = floor_sample(10, 0.0);
        assert_eq!(FloorScale::fit(&objects, None).unwrap().applied, 1.0);
        // Applying scales the per-object floor only.
        let mut objects = objects;
        let scale = FloorScale {
            applied: 0.5,
            estimate: 0.5,
            interval: (0.4, 0.6),
            delta_chi2_stated: 9.0,
        };
        scale.apply(&mut objects);
        assert!(objects
            .iter()
            .all(|o| o.floor_fraction == 0.01 && o.shared_fraction == 0.0));
    }

    #[test]
    fn anchored_prediction_and_likelihood() {
        let std = WdStandard {
            radius_rsun: 0.0130,
            cold_rsun: 0.0120,
            hot_over_cold: 0.0130 / 0.0120,
            envelope_fraction: 0.0,
            dln_r_dteff_per_k: 0.0,
        };
        let o = ObjectRadius {
            index: 0,
            radius_rsun: 0.0130,
            radius_err_rsun: 0.0002,
            nodes: vec![(0.6, 1.0)],
            standard: vec![Some(std)],
            floor_fraction: 0.02,
            shared_fraction: 0.0,
            teff_err_k: 0.0,
            at_nominal: Some(std),
        };
        // At the nominal mass with no slope: the plain z.
        let z = o.standard_tension().unwrap();
        assert_eq!(z, 0.0);
        // At the standard point the anchored radius is the standard one.
        let (r, th) = o.predicted(0, Some(0.0120), 0.0).unwrap();
        assert!((r - 0.0130).abs() < 1e-15);
        assert!((th - 0.02 * 0.0130).abs() < 1e-15);
        // A 5 % larger cold radius moves the prediction by 5 % and adds the anchor error.
        let (r, th) = o.predicted(0, Some(0.0126), 0.1).unwrap();
        assert!((r - 0.01365).abs() < 1e-12);
        let anchor = 0.5 * 0.1 * (0.0130 / 0.0120 - 1.0);
        assert!((th / r - (0.02f64.powi(2) + anchor * anchor).sqrt()).abs() < 1e-12);
        // Exact Gaussian at one node.
        let s2: f64 = 0.0002f64.powi(2) + (0.02 * 0.0130f64).powi(2);
        let ln_l = o.ln_likelihood(&[Some(0.0120)], 0.0);
        assert!((ln_l + 0.5 * (2.0 * std::f64::consts::PI * s2).ln()).abs() < 1e-12);
    }

    /// The tension is the measured radius's place in the likelihood's own predictive mixture:
    /// for an exact mass it is the plain z of the first-order formula; with a mass error it is
    /// Φ⁻¹ of the mixture's CDF (here summed directly with statrs' normal, a reference library),
    /// also far in the tail where the direct sum still has digits.
    #[test]
    fn the_radius_tension_reads_the_predictive_mixture() {
        use statrs::distribution::{ContinuousCDF, Normal};
        let unit = Normal::new(0.0, 1.0).unwrap();
        let std_at = |m: f64| WdStandard {
            radius_rsun: 0.0130 * (0.6 / m).powf(0.6),
            cold_rsun: 0.0120 * (0.6 / m).powf(0.6),
            hot_over_cold: 0.0130 / 0.0120,
            envelope_fraction: 0.0,
            dln_r_dteff_per_k: 0.0,
        };
        let object = |nodes: Vec<(f64, f64)>, radius: f64| ObjectRadius {
            index: 0,
            radius_rsun: radius,
            radius_err_rsun: 0.0002,
            standard: nodes.iter().map(|&(m, _)| Some(std_at(m))).collect(),
            nodes,
            floor_fraction: 0.02,
            shared_fraction: 0.015,
            teff_err_k: 0.0,
            at_nominal: Some(std_at(0.6)),
        };
        // Exact mass: z = (R_obs − R)/√(σ_R² + (floor² + shared²) R²), the first-order formula
        // of earlier versions (its slope term vanishes without a mass error).
        for radius in [0.0125, 0.0131, 0.0150] {
            let o = object(vec![(0.6, 1.0)], radius);
            let z = o.standard_tension().unwrap();
            let r = 0.0130;
            let first_order = (radius - r)
                / (0.0002f64.powi(2) + (0.02f64.powi(2) + 0.015f64.powi(2)) * r * r).sqrt();
            assert!((z - first_order).abs() < 1e-9, "{z} vs {first_order}");
        }
        // A mass error of 0.05 M☉: the mixture over the radius term's nodes.
        let nodes = crate::confront::engine::split_normal_mass_nodes(0.6, 0.05, 0.05);
        for radius in [0.0118, 0.0130, 0.0142, 0.0200] {
            let o = object(nodes.clone(), radius);
            let z = o.standard_tension().unwrap();
            let (mut f, mut q, mut wsum) = (0.0, 0.0, 0.0);
            for &(m, w) in &nodes {
                let r = std_at(m).radius_rsun;
                let s = (0.0002f64.powi(2) + (0.025 * r).powi(2)).sqrt();
                f += w * unit.cdf((radius - r) / s);
                q += w * unit.sf((radius - r) / s);
                wsum += w;
            }
            let want = if f <= q {
                unit.inverse_cdf(f / wsum)
            } else {
                -unit.inverse_cdf(q / wsum)
            };
            assert!((z - want).abs() < 1e-7, "R = {radius}: {z} vs {want}");
        }
    }

    /// The flattened evaluation of the radius term agrees with the object-by-object mixture
    /// (`ObjectRadius::ln_likelihood`, the definition Σ_k w_k N(R_obs; R_k, σ_k)) to rounding,
    /// over objects with several mass nodes, a node without a model and a floored object.
    #[test]
    fn flattened_radius_term_matches_the_definition() {
        let objects: Vec<ObjectRadius> = (0..6)
            .map(|i| {
                let m0 = 0.5 + 0.07 * f64::from(i);
                let nodes: Vec<(f64, f64)> = (0..9)
                    .map(|k| {
                        (
                            m0 + 0.01 * f64::from(k - 4),
                            0.11 - 0.01 * f64::from((k - 4i32).abs()),
                        )
                    })
                    .collect();
                mixture_object(i, nodes, 0.0002 + 0.00005 * f64::from(i), 0.02)
            })
            .collect();
        let cold = mixture_cold(&objects);
        let upsilon = 0.1;
        let plain = radius_term(&objects, &cold, upsilon, None);
        let mut at = 0;
        for (o, got) in objects.iter().zip(&plain.per_object) {
            let reference = -2.0 * o.ln_likelihood(&cold[at..at + o.nodes.len()], upsilon);
            at += o.nodes.len();
            assert!(
                (got - reference).abs() <= 1e-13 * reference.abs(),
                "{got} vs {reference}"
            );
        }
        assert_eq!(plain.per_object[5], -2.0 * LN_L_RADIUS_FLOOR);
        assert!((plain.minus_two_ln_l - plain.per_object.iter().sum::<f64>()).abs() < 1e-9);
    }

    /// Objects with several mass nodes, a node without a model and a floored object (shared by
    /// the tests below), with their cold radii object after object.
    fn mixture_objects() -> (Vec<ObjectRadius>, Vec<Option<f64>>) {
        let objects: Vec<ObjectRadius> = (0..7)
            .map(|i| {
                let m0 = 0.5 + 0.07 * f64::from(i);
                let nodes: Vec<(f64, f64)> = (0..25)
                    .map(|k| {
                        let z = f64::from(k - 12) / 2.0;
                        (m0 + 0.03 * z, (-0.5 * z * z).exp() / 5.0)
                    })
                    .collect();
                mixture_object(i, nodes, 0.00005 + 0.00003 * f64::from(i), 0.005)
            })
            .collect();
        let cold = mixture_cold(&objects);
        (objects, cold)
    }

    /// Test object `i` with mass `nodes` (node 7 without a model), its radius error, floor and
    /// object 5 sits 10⁴ σ off, so its term is floored.
    fn mixture_object(
        i: i32,
        nodes: Vec<(f64, f64)>,
        radius_err_rsun: f64,
        floor_fraction: f64,
    ) -> ObjectRadius {
        let std = |r: f64| WdStandard {
            radius_rsun: r,
            cold_rsun: 0.95 * r,
            hot_over_cold: 1.05,
            envelope_fraction: 0.01,
            dln_r_dteff_per_k: 1e-6,
        };
        let standard = nodes
            .iter()
            .enumerate()
            .map(|(k, &(m, _))| (k != 7).then(|| std(0.0125 - 0.004 * (m - 0.6))))
            .collect();
        ObjectRadius {
            index: i as usize,
            radius_rsun: if i == 5 {
                1.0
            } else {
                0.0126 + 0.0001 * f64::from(i)
            },
            radius_err_rsun,
            nodes,
            standard,
            floor_fraction,
            shared_fraction: 0.025,
            teff_err_k: 300.0,
            at_nominal: None,
        }
    }

    /// Every node's cold radius, object after object (an invented smooth law).
    fn mixture_cold(objects: &[ObjectRadius]) -> Vec<Option<f64>> {
        objects
            .iter()
            .flat_map(|o| {
                o.nodes
                    .iter()
                    .map(|&(m, _)| Some(0.95 * (0.0127 - 0.004 * (m - 0.6))))
            })
            .collect()
    }

    /// The whole term without one object, computed for several objects at once, is the term of
    /// the objects without it (definition: [`radius_total`] of the reduced set): to the bit
    /// without a shared scale; with one, to rounding (the searches start from different δ, both
    /// converge to rounding level), and at any one scale the reduced sum is the reduced set's
    /// sum to the bit. [`radius_total`] is [`radius_term`]'s value to the bit.
    #[test]
    fn leaving_out_matches_the_reduced_set() {
        let (objects, cold) = mixture_objects();
        let n = SharedNuisance {
            sigma: 0.025,
            method: crate::confront::nuisance::NuisanceMethod::Profile,
            reach_sigma: 8.0,
        };
        for shared in [None, Some(&n)] {
            let whole = radius_term(&objects, &cold, 0.1, shared);
            assert_eq!(
                radius_total(&objects, &cold, 0.1, shared).to_bits(),
                whole.minus_two_ln_l.to_bits()
            );
            let leave: Vec<usize> = vec![3, 0, 6, 5];
            let got = radius_totals_leaving_out(&objects, &cold, 0.1, shared, &leave);
            let mix = Mixtures::new(&objects, &cold, 0.1);
            for (&j, got) in leave.iter().zip(&got) {
                let mut at = 0;
                let (mut kept, mut kept_cold) = (Vec::new(), Vec::new());
                for (i, o) in objects.iter().enumerate() {
                    if i != j {
                        kept.push(o.clone());
                        kept_cold.extend_from_slice(&cold[at..at + o.nodes.len()]);
                    }
                    at += o.nodes.len();
                }
                let want = radius_total(&kept, &kept_cold, 0.1, shared);
                if shared.is_none() {
                    assert_eq!(got.to_bits(), want.to_bits(), "without {j}");
                } else {
                    assert!(
                        (got - want).abs() <= 1e-14 * want.abs(),
                        "without {j}: {got} vs {want}"
                    );
                }
                let reduced = Mixtures::new(&kept, &kept_cold, 0.1);
                for scale in [0.97, 1.0, 1.013_7] {
                    let sum = Mixtures::sum(&mix.locals(None, scale), Some(j));
                    assert_eq!(sum.value.to_bits(), reduced.total(None, scale).to_bits());
                    let direct = mix.local_total(Some(j), scale);
                    assert_eq!(sum.value.to_bits(), direct.value.to_bits());
                    assert_eq!(sum.slope.to_bits(), direct.slope.to_bits());
                }
            }
        }
    }

    /// Each object's analytic slope and curvature in the scale against central differences of
    /// its value (Richardson-extrapolated from steps 2e-4 and 1e-4 of the scale; the
    /// tolerances are the differences' own truncation and rounding), and the value against
    /// [`Mixtures::minus_two_ln_l`] to the bit, over several scales, the node without a model
    /// and the floored object (flat: both derivatives 0).
    #[test]
    fn analytic_derivatives_match_finite_differences() {
        let (objects, cold) = mixture_objects();
        let mix = Mixtures::new(&objects, &cold, 0.1);
        for i in 0..objects.len() {
            for scale in [0.9, 0.98, 1.0, 1.02, 1.1] {
                let l = mix.local(i, scale);
                assert_eq!(
                    l.value.to_bits(),
                    mix.minus_two_ln_l(i, scale).to_bits(),
                    "object {i} at {scale}"
                );
                if i == 5 {
                    assert_eq!((l.slope, l.curvature), (0.0, 0.0));
                    continue;
                }
                let f = |s: f64| mix.minus_two_ln_l(i, s);
                // Central differences at h and h/2, combined by Richardson extrapolation
                // ((4 D(h/2) − D(h))/3: the h² error cancels).
                let d1 = |h: f64| (f(scale + h) - f(scale - h)) / (2.0 * h);
                let d2 = |h: f64| (f(scale + h) - 2.0 * f(scale) + f(scale - h)) / (h * h);
                let h = 2e-4;
                let slope = (4.0 * d1(h / 2.0) - d1(h)) / 3.0;
                let curv = (4.0 * d2(h / 2.0) - d2(h)) / 3.0;
                assert!(
                    (l.slope - slope).abs() <= 1e-7 * (1.0 + l.slope.abs()),
                    "object {i} at {scale}: slope {} vs {slope}",
                    l.slope
                );
                assert!(
                    (l.curvature - curv).abs() <= 1e-5 * (1.0 + l.curvature.abs()),
                    "object {i} at {scale}: curvature {} vs {curv}",
                    l.curvature
                );
            }
        }
        // The sum over objects is `total`'s to the bit.
        let sum = Mixtures::sum(&mix.locals(None, 1.01), None);
        assert_eq!(sum.value.to_bits(), mix.total(None, 1.01).to_bits());
    }

    /// The analytic search converges where the scan and a tight bisection of the slope say the
    /// minimum is, and from any start to the same value (to rounding): the result does not
    /// depend on the search's path.
    #[test]
    fn analytic_search_is_path_independent() {
        let (objects, cold) = mixture_objects();
        let mix = Mixtures::new(&objects, &cold, 0.1);
        let n = SharedNuisance {
            sigma: 0.025,
            method: crate::confront::nuisance::NuisanceMethod::Profile,
            reach_sigma: 8.0,
        };
        let at = |d: f64| mix.local_total(None, 1.0 + d);
        let (v0, d0) = mix.eliminate(None, Some(&n), 0.0, &at);
        for start in [-0.1, -0.03, 0.01, 0.05, 0.19] {
            let (v, d) = mix.eliminate(None, Some(&n), start, &at);
            assert!(
                (v - v0).abs() <= 4.0 * f64::EPSILON * v0.abs(),
                "{v} vs {v0}"
            );
            assert!((d - d0).abs() <= 1e-9 * n.sigma, "{d} vs {d0}");
        }
        // Bisection of g′ = f′ + 2δ/σ² (a reference that uses only the slope's sign).
        let slope = |d: f64| at(d).slope + 2.0 * d / (n.sigma * n.sigma);
        let (mut lo, mut hi) = (-0.2, 0.2);
        assert!(slope(lo) < 0.0 && slope(hi) > 0.0);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if mid == lo || mid == hi {
                break;
            }
            if slope(mid) < 0.0 {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        assert!((d0 - lo).abs() <= 1e-12, "{d0} vs bisection {lo}");
        let scan = crate::confront::nuisance::eliminate(&|d| mix.total(None, 1.0 + d), &n);
        assert!((scan.minus_two_ln_l - v0).abs() < 1e-7);
    }
}
