//! Every bound of the theory at one (ϒ, τ) point, from one set of [`TheorySettings`].
//!
//! One job: turn (ϒ, τ) and the settings into a [`PointBounds`]: the modified Lane–Emden
//! constants for n = 3/2 and n = 3, the minimum hydrogen-burning mass (raw, anchored, floor,
//! Φ), the Chandrasekhar mass, the Schönberg–Chandrasekhar fraction, the break-up period of a
//! stated reference object, warnings, and (on request) the white-dwarf mass–radius table.
//! Each bound is an [`Outcome`]: its value, or the typed reason why there is no model there —
//! never a NaN, never dropped (`docs/structure.md` §3.7). The physics lives in the sibling modules
//! ([`lane_emden`](super::lane_emden), [`mmhb`](super::mmhb), [`white_dwarf`](super::white_dwarf),
//! [`rotation`](super::rotation), [`schonberg`](super::schonberg)); this module only wires them
//! together. The settings and their defaults live in [`settings`](super::settings), the
//! `Outcome` type in [`outcome`](super::outcome); both are re-exported here.
//!
//! ```
//! use dwarfbound::theory::point::{standard_point, TheorySettings};
//!
//! let p = standard_point(&TheorySettings::default()).unwrap();
//! // Anchored MMHB in standard gravity is the anchor itself (docs/bounds.md §4).
//! assert_eq!(p.mmhb.ok().unwrap().value_msun, 0.075);
//! // Chandrasekhar 1939 / docs/structure.md §4.1: 5.82519/μ_e² M☉ for μ_e = 2.
//! assert!((p.chandrasekhar.ok().unwrap().newtonian_mu_e2_msun - 1.456298).abs() < 1e-6);
//! ```

use serde::{Deserialize, Serialize};

use crate::constants::rjup_rsun;
use crate::theory::error::TheoryError;
use crate::theory::lane_emden::{
    LaneEmdenOptions, LaneEmdenSolution, ModifiedLaneEmden, UPSILON_RELATIVISTIC_MIN,
};
use crate::theory::mmhb::{self, MmhbConfig, PolytropeConstants};
use crate::theory::rotation::breakup_period_h;
use crate::theory::schonberg::{self, ScVariant};
use crate::theory::white_dwarf::{
    chandrasekhar_mass_from_omega3_msun, length_unit_m, mass_unit_msun, ChandrasekharEos,
    WdMassRadius, POST_NEWTONIAN_COMPACTNESS,
};
use crate::theory::Anisotropy;

pub use crate::theory::outcome::{Failure, Outcome};
pub use crate::theory::settings::{
    BreakupReference, ChandrasekharMode, Numerics, PhotosphereGravity, SettingsError,
    TheorySettings, DEFAULT_CHANDRASEKHAR_FLOOR_MSUN, DEFAULT_WD_RADIUS_FLOOR_FRACTION,
};

/// The μ_e for which Chandrasekhar masses are reported; M_Ch ∝ 1/μ_e² exactly, so callers scale
/// to any other μ_e with (2/μ_e)².
pub const CHANDRASEKHAR_REPORT_MU_E: f64 = 2.0;

/// Modified Lane–Emden constants at one point, in the true-G units of `docs/bounds.md` §1.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct LaneEmdenConstants {
    /// First zero of θ.
    pub xi1: f64,
    /// ω_n = μ(ξ1).
    pub omega: f64,
    /// J_k = ∫₀^{ξ1} ξ²θ^k dξ for model A's k = 1.5u + s (n = 3/2 only; 9.73 by default).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub j_k: Option<f64>,
}

impl LaneEmdenConstants {
    fn from_solution(s: &LaneEmdenSolution, k: Option<f64>) -> Self {
        LaneEmdenConstants {
            xi1: s.xi1,
            omega: s.omega,
            j_k: k.and_then(|k| s.extra_integral(k)),
        }
    }

    /// ρ_c/ρ̄ = ξ1³/(3ω).
    pub fn density_contrast(&self) -> f64 {
        self.xi1.powi(3) / (3.0 * self.omega)
    }

    /// γ = (5ξ1/(8π))(4πω)^{1/3} of an n = 3/2 polytrope (R = γK/(GM^{1/3})).
    pub fn gamma_n15(&self) -> f64 {
        5.0 * self.xi1 / (8.0 * std::f64::consts::PI)
            * (4.0 * std::f64::consts::PI * self.omega).cbrt()
    }
}

/// The MMHB at one point (`docs/bounds.md` §2–§4).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct MmhbValues {
    /// The bound used against data (anchored or raw), M☉.
    pub value_msun: f64,
    /// Raw analytic MMHB of the selected model, M☉.
    pub raw_msun: f64,
    /// 1σ theory floor, M☉.
    pub floor_msun: f64,
    /// Φ = raw(ϒ,τ)/raw(0,0).
    pub phi: f64,
    /// The anchor, M☉ (anchored mode only).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub anchor_msun: Option<f64>,
    /// Model-difference term included in the floor, M☉ (when asked for).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub model_difference_msun: Option<f64>,
    /// Photospheric gravity factor used by model A (1 = exterior).
    pub photosphere_g_factor: f64,
}

/// The Chandrasekhar mass at one point (`docs/structure.md` §4.1, §4.6), for μ_e = 2; scale to any
/// μ_e with (2/μ_e)², exactly.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ChandrasekharValues {
    /// The bound used against data for μ_e = 2 (Newtonian or anchored), M☉.
    pub value_msun: f64,
    /// Newtonian pure-EOS M_Ch(ϒ, τ) for μ_e = 2, M☉.
    pub newtonian_mu_e2_msun: f64,
    /// ω₃(ϒ,τ)/ω₃(0,0).
    pub omega3_ratio: f64,
    /// 1σ theory floor, M☉.
    pub floor_msun: f64,
}

/// The Schönberg–Chandrasekhar fraction at one point (`docs/bounds.md` §7; τ = 0 only).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ScValues {
    /// q_SC(ϒ) = coefficient × λ² × ratio.
    pub q_sc: f64,
    /// q_SC(ϒ)/q_SC(0).
    pub ratio: f64,
    /// λ = μ_env/μ_core.
    pub lambda: f64,
    /// True when the ratio was interpolated in ϒ between solved grid nodes.
    pub interpolated: bool,
}

/// The break-up period of the reference object (`docs/structure.md` §5).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct BreakupValues {
    /// Shortest rotation period, hours.
    pub period_h: f64,
    /// Non-rotating radius of the reference object, R☉.
    pub radius_rsun: f64,
    /// Full-EOS radius over the n = 3/2 polytrope radius at the same (ϒ, τ, M, μ_e): the
    /// relativistic-electron correction (≈ 0.99).
    pub polytrope_correction: f64,
    /// True when `polytrope_correction` was interpolated in (ϒ, τ) between solved grid nodes.
    pub interpolated: bool,
}

impl BreakupValues {
    /// The reference radius in nominal equatorial Jupiter radii (IAU 2015 B3).
    pub fn radius_rjup(&self) -> f64 {
        self.radius_rsun / rjup_rsun()
    }

    /// The period in minutes.
    pub fn period_min(&self) -> f64 {
        self.period_h * 60.0
    }
}

/// A warning attached to a point: something the result does not cover.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Warning {
    /// −2/3 < ϒ < −4/9: below the relativistic existence bound ϒ₁ > −4/9 of Babichev, Koyama,
    /// Langlois, Saito & Sakstein 2016 (arXiv:1606.06627); theoretically disfavoured.
    BelowRelativisticBound,
    /// The Chandrasekhar mass is Newtonian order: towards M_Ch, GM/(Rc²) grows without bound and
    /// post-Newtonian physics (stronger in this theory class) lowers the real maximum
    /// (`docs/structure.md` §4.5).
    PostNewtonianChandrasekhar,
    /// Gradient ansatz with τ ≠ 0 and exterior photospheric gravity: the anisotropy of this
    /// ansatz persists up to the photosphere, which model A and the break-up balance ignore
    /// (`docs/bounds.md` §2.6, `docs/structure.md` §5.3).
    GradientAnisotropyInAtmosphere,
}

impl Warning {
    /// The warning in words.
    pub fn message(self) -> &'static str {
        match self {
            Warning::BelowRelativisticBound => {
                "Upsilon < -4/9: below the relativistic existence bound of Babichev et al. 2016 \
                 (arXiv:1606.06627); theoretically disfavoured"
            }
            Warning::PostNewtonianChandrasekhar => {
                "the Chandrasekhar mass is Newtonian order; towards it GM/(Rc^2) exceeds 5e-4 and \
                 post-Newtonian effects (larger in this theory class) lower the real maximum: the \
                 Chandrasekhar-mass test is model-limited"
            }
            Warning::GradientAnisotropyInAtmosphere => {
                "gradient ansatz: its anisotropy persists to the photosphere, but the MMHB \
                 photosphere and the break-up balance use the exterior gravity (the default)"
            }
        }
    }

    /// The kebab-case code.
    pub fn code(self) -> &'static str {
        match self {
            Warning::BelowRelativisticBound => "below-relativistic-bound",
            Warning::PostNewtonianChandrasekhar => "post-newtonian-chandrasekhar",
            Warning::GradientAnisotropyInAtmosphere => "gradient-anisotropy-in-atmosphere",
        }
    }
}

/// Every bound at one (ϒ, τ).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PointBounds {
    /// ϒ.
    pub upsilon: f64,
    /// τ (of the settings' anisotropy ansatz).
    pub tau: f64,
    /// n = 3/2 Lane–Emden constants (with J_k of model A).
    pub lane_emden_n15: Outcome<LaneEmdenConstants>,
    /// n = 3 Lane–Emden constants.
    pub lane_emden_n3: Outcome<LaneEmdenConstants>,
    /// Minimum hydrogen-burning mass = brown-dwarf ceiling.
    pub mmhb: Outcome<MmhbValues>,
    /// Chandrasekhar mass (μ_e = 2).
    pub chandrasekhar: Outcome<ChandrasekharValues>,
    /// Schönberg–Chandrasekhar fraction (refused for τ ≠ 0).
    pub sc: Outcome<ScValues>,
    /// Break-up period of the settings' reference object.
    pub breakup: Outcome<BreakupValues>,
    /// Warnings, in a fixed order.
    pub warnings: Vec<Warning>,
    /// The white-dwarf mass–radius table, when it was asked for (a grid keeps its tables
    /// separately, see `TheoryGrid::wd_table`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub white_dwarf: Option<Outcome<WdMassRadius>>,
}

impl PointBounds {
    /// The first failure among the bounds that exist at every τ (Lane–Emden, MMHB,
    /// Chandrasekhar, break-up), if any; the SC refusal at τ ≠ 0 is not counted.
    pub fn first_failure(&self) -> Option<&Failure> {
        [
            self.lane_emden_n15.failure(),
            self.lane_emden_n3.failure(),
            self.mmhb.failure(),
            self.chandrasekhar.failure(),
            self.breakup.failure(),
        ]
        .into_iter()
        .flatten()
        .next()
    }
}

/// The mass at which a white dwarf of composition μ_e reaches the post-Newtonian threshold
/// GM/(Rc²) = 5e-4 on this table (bisection on the monotone compactness), M☉.
pub fn post_newtonian_mass_msun(table: &WdMassRadius, mu_e: f64) -> Option<f64> {
    let m_ch = table.max_mass_msun(mu_e);
    let compact = |m: f64| table.radius(m, mu_e).ok().map(|r| r.compactness);
    let (mut lo, mut hi) = (1e-3 * m_ch, m_ch * (1.0 - 1e-12));
    if compact(lo)? >= POST_NEWTONIAN_COMPACTNESS || compact(hi)? < POST_NEWTONIAN_COMPACTNESS {
        return None;
    }
    for _ in 0..100 {
        let mid = 0.5 * (lo + hi);
        if compact(mid)? < POST_NEWTONIAN_COMPACTNESS {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo < 1e-12 * m_ch {
            break;
        }
    }
    Some(0.5 * (lo + hi))
}

/// The two Lane–Emden solutions at one point.
#[derive(Debug, Clone)]
pub struct LaneEmdenPair {
    /// n = 3/2 with J_k.
    pub n15: Result<LaneEmdenSolution, TheoryError>,
    /// n = 3.
    pub n3: Result<LaneEmdenSolution, TheoryError>,
}

/// Evaluates bounds at points for one set of settings; holds the standard-gravity references
/// that every Φ and ω₃ ratio divides by (solved with the same tolerances, so that solver errors
/// cancel in the ratios).
#[derive(Debug, Clone)]
pub struct PointEvaluator {
    settings: TheorySettings,
    mmhb_config: MmhbConfig,
    le_options_n15: LaneEmdenOptions,
    le_options_n3: LaneEmdenOptions,
    reference_n15: PolytropeConstants,
    reference_omega3: f64,
    sc_reference_q: Option<f64>,
}

impl PointEvaluator {
    /// Validates the settings and solves the standard-gravity references.
    pub fn new(settings: &TheorySettings) -> Result<Self, SettingsError> {
        settings.validate()?;
        let mmhb_config = settings.mmhb_config();
        let k = mmhb_config.model_a.k_index();
        let base = LaneEmdenOptions {
            rtol: settings.numerics.lane_emden_rtol,
            atol: 1e-2 * settings.numerics.lane_emden_rtol,
            xi_start: settings.numerics.lane_emden_xi_start,
            ..LaneEmdenOptions::default()
        };
        let le_options_n15 = LaneEmdenOptions {
            extra_powers: vec![k],
            ..base.clone()
        };
        let le_options_n3 = base;
        let internal = |e: TheoryError| SettingsError {
            name: "numerics",
            value: e.to_string(),
            why: "the standard-gravity reference solve failed with these settings",
        };
        let r15 = ModifiedLaneEmden::new(1.5, 0.0, 0.0, Anisotropy::None)
            .and_then(|le| le.solve(&le_options_n15))
            .map_err(internal)?;
        let r3 = ModifiedLaneEmden::new(3.0, 0.0, 0.0, Anisotropy::None)
            .and_then(|le| le.solve(&le_options_n3))
            .map_err(internal)?;
        let reference_n15 =
            PolytropeConstants::from_solution(&r15, k).map_err(|e| SettingsError {
                name: "mmhb model A",
                value: e.to_string(),
                why: "the standard-gravity reference constants are unusable",
            })?;
        Ok(Self {
            settings: *settings,
            mmhb_config,
            le_options_n15,
            le_options_n3,
            reference_n15,
            reference_omega3: r3.omega,
            sc_reference_q: None,
        })
    }

    /// The settings.
    pub fn settings(&self) -> &TheorySettings {
        &self.settings
    }

    /// Solves both Lane–Emden problems at (ϒ, τ). For the gradient ansatz only τ = 0 is solved
    /// and τ follows by the exact rescaling G → (1 − τ)G (`docs/structure.md` §2.2).
    pub fn lane_emden(&self, upsilon: f64, tau: f64) -> LaneEmdenPair {
        if self.settings.anisotropy == Anisotropy::Gradient {
            let base = self.lane_emden_tau0(upsilon);
            return Self::rescale_gradient(&base, tau);
        }
        let solve = |n: f64, opts: &LaneEmdenOptions| {
            ModifiedLaneEmden::new(n, upsilon, tau, self.settings.anisotropy)
                .and_then(|le| le.solve(opts))
        };
        LaneEmdenPair {
            n15: solve(1.5, &self.le_options_n15),
            n3: solve(3.0, &self.le_options_n3),
        }
    }

    /// The τ = 0 solutions at ϒ (for the gradient ansatz, to be rescaled).
    pub fn lane_emden_tau0(&self, upsilon: f64) -> LaneEmdenPair {
        let solve = |n: f64, opts: &LaneEmdenOptions| {
            ModifiedLaneEmden::new(n, upsilon, 0.0, Anisotropy::Gradient)
                .and_then(|le| le.solve(opts))
        };
        LaneEmdenPair {
            n15: solve(1.5, &self.le_options_n15),
            n3: solve(3.0, &self.le_options_n3),
        }
    }

    /// Gradient-ansatz solutions at τ from τ = 0 ones.
    pub fn rescale_gradient(base: &LaneEmdenPair, tau: f64) -> LaneEmdenPair {
        let r = |s: &Result<LaneEmdenSolution, TheoryError>| {
            s.as_ref()
                .map_err(Clone::clone)
                .and_then(|s| s.rescaled_to_gradient(tau))
        };
        LaneEmdenPair {
            n15: r(&base.n15),
            n3: r(&base.n3),
        }
    }

    /// The SC fraction at (ϒ, τ) for the settings' ansatz. The standard-gravity fit is solved
    /// once per evaluator (see [`PointEvaluator::with_sc_reference`]).
    pub fn sc(&self, upsilon: f64, tau: f64) -> Outcome<ScValues> {
        self.sc_ratio(upsilon, tau)
            .map(|ratio| self.sc_values(ratio, false))
    }

    /// Solves and keeps the standard-gravity SC fit, so that [`PointEvaluator::sc`] needs one fit
    /// per ϒ instead of two. Harmless if the fit fails (each point then reports why).
    pub fn with_sc_reference(mut self) -> Self {
        if self.settings.sc_variant == ScVariant::FullFit {
            let p = &self.settings.sc;
            self.sc_reference_q = schonberg::core_envelope_fit(
                p.lambda(),
                0.0,
                p.n_env,
                schonberg::InterfaceCondition::ContinuousPTilde,
            )
            .ok()
            .map(|f| f.q);
        }
        self
    }

    /// q_SC(ϒ, τ)/q_SC(0, 0) at (ϒ, τ), or why not.
    pub fn sc_ratio(&self, upsilon: f64, tau: f64) -> Outcome<f64> {
        let p = &self.settings.sc;
        let a = self.settings.anisotropy;
        // `sc_fraction_with` validates everything; at ϒ = τ = 0 it fits nothing.
        let (u_check, t_check) = if self.sc_reference_q.is_some() {
            (0.0, 0.0)
        } else {
            (upsilon, tau)
        };
        let checked = schonberg::sc_fraction_with(u_check, t_check, a, p, self.settings.sc_variant)
            .and_then(|q| {
                // Validates (ϒ, τ, ansatz) when the fit itself is skipped above.
                ModifiedLaneEmden::new(p.n_env, upsilon, tau, a)?;
                Ok(q)
            });
        match (checked, self.sc_reference_q) {
            (Err(e), _) => Outcome::Failed(e.into()),
            (Ok(q), None) => Outcome::Ok(q.ratio),
            (Ok(_), Some(_)) if upsilon == 0.0 && tau == 0.0 => Outcome::Ok(1.0),
            // The same arithmetic as `sc_fraction_with`, with the ϒ = τ = 0 fit solved once. The
            // gradient ansatz's factor is its τ = 0 value exactly (G-rescaling; checked in the
            // Schönberg–Chandrasekhar tests), so grids solve one row of it.
            (Ok(_), Some(q0)) => schonberg::core_envelope_fit_with(
                p.lambda(),
                upsilon,
                if a == Anisotropy::Gradient { 0.0 } else { tau },
                a,
                p.n_env,
                schonberg::InterfaceCondition::ContinuousPTilde,
            )
            .map(|f| f.q / q0)
            .into(),
        }
    }

    /// SC values from a ratio.
    pub fn sc_values(&self, ratio: f64, interpolated: bool) -> ScValues {
        let p = &self.settings.sc;
        let lambda = p.lambda();
        ScValues {
            q_sc: p.classic_coefficient * lambda * lambda * ratio,
            ratio,
            lambda,
            interpolated,
        }
    }

    /// The reference object's full-EOS radius over its n = 3/2 polytrope radius at (ϒ, τ),
    /// solved exactly (a secant search on ln x_c started from the polytrope, 3–4 full-EOS
    /// models). `le15` is the n = 3/2 solution at (ϒ, τ).
    pub fn breakup_correction(
        &self,
        upsilon: f64,
        tau: f64,
        le15: &LaneEmdenSolution,
    ) -> Result<f64, TheoryError> {
        let r = &self.settings.breakup;
        let mu_e = r.mu_e();
        let m_target = r.mass_msun / mass_unit_msun(mu_e);
        let (eos, m_eos, scale_eta, omega_0) = match self.settings.anisotropy {
            Anisotropy::Gradient => {
                // R_b(M) = R_0(M s^{3/2})/√s (docs/structure.md §2.2).
                let s = 1.0 - tau;
                if s.is_nan() || s <= 0.0 {
                    return Err(TheoryError::InvalidParameter {
                        name: "tau",
                        value: tau,
                        why: "the gradient ansatz needs τ < 1",
                    });
                }
                let eos = ChandrasekharEos::new(upsilon, 0.0, Anisotropy::Gradient)?;
                (
                    eos,
                    m_target * s * s.sqrt(),
                    1.0 / s.sqrt(),
                    le15.omega * s * s.sqrt(),
                )
            }
            a => (
                ChandrasekharEos::new(upsilon, tau, a)?,
                m_target,
                1.0,
                le15.omega,
            ),
        };
        let eta = radius_at_mass_dimless(&eos, m_eos, omega_0, self.settings.numerics.wd_rtol)?;
        Ok(eta * scale_eta / polytrope_radius_dimless(m_target, le15.xi1, le15.omega))
    }

    /// Break-up values from the polytrope correction factor and the n = 3/2 solution.
    pub fn breakup_values(
        &self,
        le15: &LaneEmdenSolution,
        correction: f64,
        interpolated: bool,
    ) -> Result<BreakupValues, TheoryError> {
        let r = &self.settings.breakup;
        let mu_e = r.mu_e();
        let m_target = r.mass_msun / mass_unit_msun(mu_e);
        let eta = correction * polytrope_radius_dimless(m_target, le15.xi1, le15.omega);
        let radius_rsun = length_unit_m(mu_e) * eta / crate::constants::R_SUN_NOMINAL_M;
        let period_h = breakup_period_h(r.mass_msun, radius_rsun, r.model)?;
        Ok(BreakupValues {
            period_h,
            radius_rsun,
            polytrope_correction: correction,
            interpolated,
        })
    }

    /// The white-dwarf table at (ϒ, τ) (gradient ansatz: the τ = 0 table rescaled).
    pub fn wd_table(&self, upsilon: f64, tau: f64) -> Result<WdMassRadius, TheoryError> {
        let opts = self.settings.wd_table_options();
        match self.settings.anisotropy {
            Anisotropy::Gradient => WdMassRadius::new(upsilon, 0.0, Anisotropy::Gradient, &opts)?
                .rescaled_to_gradient(tau),
            a => WdMassRadius::new(upsilon, tau, a, &opts),
        }
    }

    /// Assembles a point from its solved parts. `breakup` and `sc` are passed in so that a grid
    /// can supply interpolated or shared values.
    pub fn assemble(
        &self,
        upsilon: f64,
        tau: f64,
        le: &LaneEmdenPair,
        sc: Outcome<ScValues>,
        breakup: Outcome<BreakupValues>,
        white_dwarf: Option<Outcome<WdMassRadius>>,
    ) -> PointBounds {
        let k = self.mmhb_config.model_a.k_index();
        let lane_emden_n15: Outcome<LaneEmdenConstants> = le
            .n15
            .as_ref()
            .map(|s| LaneEmdenConstants::from_solution(s, Some(k)))
            .map_err(Clone::clone)
            .into();
        let lane_emden_n3: Outcome<LaneEmdenConstants> = le
            .n3
            .as_ref()
            .map(|s| LaneEmdenConstants::from_solution(s, None))
            .map_err(Clone::clone)
            .into();
        let mmhb = match &le.n15 {
            Err(e) => Outcome::Failed(e.into()),
            Ok(s) => self.mmhb(s, tau),
        };
        let chandrasekhar = match &le.n3 {
            Err(e) => Outcome::Failed(e.into()),
            Ok(s) => Outcome::Ok(self.chandrasekhar(s.omega)),
        };
        let mut warnings = Vec::new();
        if upsilon < UPSILON_RELATIVISTIC_MIN {
            warnings.push(Warning::BelowRelativisticBound);
        }
        if chandrasekhar.is_ok() {
            warnings.push(Warning::PostNewtonianChandrasekhar);
        }
        if self.settings.anisotropy == Anisotropy::Gradient
            && tau != 0.0
            && self.settings.photosphere_gravity == PhotosphereGravity::Exterior
        {
            warnings.push(Warning::GradientAnisotropyInAtmosphere);
        }
        PointBounds {
            upsilon,
            tau,
            lane_emden_n15,
            lane_emden_n3,
            mmhb,
            chandrasekhar,
            sc,
            breakup,
            warnings,
            white_dwarf,
        }
    }

    fn mmhb(&self, s: &LaneEmdenSolution, tau: f64) -> Outcome<MmhbValues> {
        let k = self.mmhb_config.model_a.k_index();
        let Some(j_k) = s.extra_integral(k) else {
            return Outcome::Failed(Failure {
                code: "internal".into(),
                reason: format!("J_k for k = {k} was not integrated"),
            });
        };
        let le = PolytropeConstants {
            xi1: s.xi1,
            omega: s.omega,
            j_k,
            k,
        };
        let g_factor = match self.settings.photosphere_gravity {
            PhotosphereGravity::ScaledByAnisotropy => {
                mmhb::anisotropy_photosphere_g_factor(self.settings.anisotropy, tau)
            }
            PhotosphereGravity::Exterior => 1.0,
        };
        mmhb::evaluate(&self.mmhb_config, &le, &self.reference_n15, g_factor)
            .map(|b| MmhbValues {
                value_msun: b.value_msun,
                raw_msun: b.raw_msun,
                floor_msun: b.floor_msun,
                phi: b.phi,
                anchor_msun: b.anchor_msun,
                model_difference_msun: b.model_difference_msun,
                photosphere_g_factor: b.photosphere_g_factor,
            })
            .into()
    }

    fn chandrasekhar(&self, omega3: f64) -> ChandrasekharValues {
        let ratio = omega3 / self.reference_omega3;
        let newtonian = chandrasekhar_mass_from_omega3_msun(omega3, CHANDRASEKHAR_REPORT_MU_E);
        let value = match self.settings.chandrasekhar_mode {
            ChandrasekharMode::Newtonian => newtonian,
            ChandrasekharMode::Anchored { standard_msun } => standard_msun * ratio,
        };
        ChandrasekharValues {
            value_msun: value,
            newtonian_mu_e2_msun: newtonian,
            omega3_ratio: ratio,
            floor_msun: self.settings.chandrasekhar_floor_msun,
        }
    }

    /// Every bound at (ϒ, τ), each solved exactly; with the white-dwarf table when asked.
    pub fn evaluate(&self, upsilon: f64, tau: f64, with_wd_table: bool) -> PointBounds {
        let le = self.lane_emden(upsilon, tau);
        let sc = self.sc(upsilon, tau);
        let breakup = match &le.n15 {
            Err(e) => Outcome::Failed(e.into()),
            Ok(s) => self
                .breakup_correction(upsilon, tau, s)
                .and_then(|c| self.breakup_values(s, c, false))
                .into(),
        };
        let wd = with_wd_table.then(|| self.wd_table(upsilon, tau).into());
        self.assemble(upsilon, tau, &le, sc, breakup, wd)
    }
}

/// The n = 3/2 polytrope radius η = (ξ1/2)(ω/m)^{1/3} in white-dwarf units for dimensionless
/// mass m: the low-density limit of the full EOS, u ≈ x²/2, where the structure equations of
/// `docs/structure.md` §4.3 become the n = 3/2 Lane–Emden system with u = u_c θ and
/// η = 2^{−3/4}u_c^{−1/4}ξ, m = 2^{−3/4}u_c^{3/4}ω.
pub fn polytrope_radius_dimless(m: f64, xi1: f64, omega: f64) -> f64 {
    0.5 * xi1 * (omega / m).cbrt()
}

/// η_s of the full-EOS model of dimensionless mass `m`: a secant search on ln x_c started from
/// the n = 3/2 polytrope with ω of the same (ϒ, τ), ending with a linear interpolation of
/// ln η in ln m between the last two models (error ≲ curvature × the two last mass residuals).
fn radius_at_mass_dimless(
    eos: &ChandrasekharEos,
    m: f64,
    omega: f64,
    rtol: f64,
) -> Result<f64, TheoryError> {
    if !(m.is_finite() && m > 0.0) {
        return Err(TheoryError::InvalidParameter {
            name: "mass",
            value: m,
            why: "must be finite and > 0",
        });
    }
    // Polytrope start: m = 2^{−3/4} u_c^{3/4} ω, x_c² = u_c(u_c + 2).
    let u_c = (2f64.powf(0.75) * m / omega).powf(4.0 / 3.0);
    let mut t = (u_c * (u_c + 2.0)).sqrt().ln();
    let target = m.ln();
    let eval = |t: f64| -> Result<(f64, f64), TheoryError> {
        let model = eos.model_with_rtol(t.exp(), rtol)?;
        Ok((model.mass_dimless.ln() - target, model.radius_dimless.ln()))
    };
    let (mut f_prev, mut e_prev) = eval(t)?;
    let mut t_prev = t;
    // First step with the polytropic slope d ln m/d ln x_c = 3/2 (smaller at higher x_c).
    t -= f_prev / 1.5;
    for _ in 0..40 {
        let (f, e) = eval(t)?;
        let df = f - f_prev;
        let converged = f == 0.0 || (f * f_prev).abs() < 1e-20 || f.abs() < 1e-14;
        if converged {
            // Linear interpolation of ln η at f = 0 between the last two models.
            let ln_eta = if df != 0.0 && df.is_finite() {
                e - f * (e - e_prev) / df
            } else {
                e
            };
            return Ok(ln_eta.exp());
        }
        let slope = df / (t - t_prev);
        let step = if slope.is_finite() && slope > 0.0 {
            -f / slope
        } else {
            -f / 1.5
        };
        t_prev = t;
        f_prev = f;
        e_prev = e;
        t += step.clamp(-1.0, 1.0);
    }
    Err(TheoryError::NumericalFailure {
        xi: t.exp(),
        why: "the reference-object mass was not reached by the central-density search",
    })
}

/// All bounds at one point with these settings, solved exactly (with the white-dwarf table when
/// asked).
pub fn point_bounds(
    upsilon: f64,
    tau: f64,
    settings: &TheorySettings,
    with_wd_table: bool,
) -> Result<PointBounds, SettingsError> {
    Ok(PointEvaluator::new(settings)?.evaluate(upsilon, tau, with_wd_table))
}

/// All bounds in standard gravity (ϒ = τ = 0) with these settings, white-dwarf table included.
pub fn standard_point(settings: &TheorySettings) -> Result<PointBounds, SettingsError> {
    point_bounds(0.0, 0.0, settings, true)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn polytrope_start_matches_low_density_full_eos() {
        // docs/structure.md §4.4: at low x_c the full EOS is an n = 3/2 polytrope (to ~x_c²).
        let eos = ChandrasekharEos::new(0.0, 0.0, Anisotropy::None).unwrap();
        let model = eos.model(1e-3).unwrap();
        let eta = polytrope_radius_dimless(model.mass_dimless, 3.6537537362, 2.7140551201);
        assert!((model.radius_dimless / eta - 1.0).abs() < 1e-5);
    }
}
