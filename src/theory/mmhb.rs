//! Minimum hydrogen-burning mass (MMHB) of a fully convective n = 3/2 polytrope, in two models,
//! and the anchored bound that confronts catalogues (`docs/bounds.md` §2–§4).
//!
//! The modified gravity (ϒ) and the anisotropy (τ) reach the MMHB only through three Lane–Emden
//! constants of the n = 3/2 polytrope: ξ1, ω and J_k = ∫ξ²θ^k dξ. They come in as a plain
//! [`PolytropeConstants`] so that every formula here can be tested with injected constants,
//! independently of the structure solver.
//!
//! * Model A, luminosity balance (Burrows & Liebert 1993, Rev. Mod. Phys. 65, 301), the default:
//!   the smallest mass at which pp burning can balance the photospheric luminosity for some
//!   degeneracy ψ. Evaluated by its closed form ([`model_a`]) and, as a cross-check, by root
//!   finding and minimisation ([`model_a_numeric`]).
//! * Model B, ignition temperature (the textbook criterion, e.g. Stevenson 1991, ARA&A 29, 163):
//!   the mass whose peak central temperature reaches T_ign ([`model_b`]).
//! * Anchoring ([`evaluate`]): the analytic model supplies only the ratio Φ = MMHB(ϒ,τ)/MMHB(0,0),
//!   applied to a standard-gravity value from evolutionary models, because the raw analytic
//!   values (0.099 / 0.109 M☉) lie above measured hydrogen-burning stars.
//!
//! ```
//! use dwarfbound::theory::mmhb::{model_a, ModelAParams, PolytropeConstants};
//! let standard = PolytropeConstants::standard_n15_default_k();
//! let a = model_a(&standard, &ModelAParams::default(), 1.0).unwrap();
//! assert!((a.mmhb_msun - 0.09938334).abs() < 1e-7);
//! ```

use crate::constants::{
    msun_kg, G_SI, HBAR_SI, K_B_SI, L_SUN_NOMINAL_W, M_E_KG, M_H_G, R_SUN_NOMINAL_M, SIGMA_SB_SI,
};
use crate::theory::error::TheoryError;
use crate::theory::lane_emden::{LaneEmdenOptions, LaneEmdenSolution, ModifiedLaneEmden};
use crate::theory::roots::{brent_minimize, brent_root};
use crate::theory::Anisotropy;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;
use std::str::FromStr;

/// Why an MMHB could not be evaluated. Every variant names its reason; none is ever a NaN.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum BoundError {
    /// An input (Lane–Emden constant or model parameter) is outside its physical range.
    #[error("invalid input for the bound: {reason}")]
    InvalidInput {
        /// What is wrong, with the offending value.
        reason: String,
    },
    /// A numerical step (root bracket, minimisation, integration) did not converge.
    #[error("bound did not converge: {reason}")]
    NoConvergence {
        /// Which step failed and where.
        reason: String,
    },
    /// The bound is not defined for the requested parameters (e.g. τ ≠ 0 where no anisotropic
    /// model was specified).
    #[error("bound not specified: {reason}")]
    NotSpecified {
        /// Why the bound does not exist for these parameters.
        reason: String,
    },
    /// The structure solve behind the bound has no model (no regular centre, D → 0, …).
    #[error(transparent)]
    Structure(#[from] TheoryError),
}

impl BoundError {
    /// A short, stable tag for tables and JSON: `invalid-input`, `no-convergence`,
    /// `not-specified`, or the structure error's own tag.
    pub fn code(&self) -> &'static str {
        match self {
            BoundError::InvalidInput { .. } => "invalid-input",
            BoundError::NoConvergence { .. } => "no-convergence",
            BoundError::NotSpecified { .. } => "not-specified",
            BoundError::Structure(e) => e.code(),
        }
    }
}

fn invalid(reason: impl Into<String>) -> BoundError {
    BoundError::InvalidInput {
        reason: reason.into(),
    }
}

// cgs versions of the CODATA 2018 / IAU 2015 constants of `crate::constants` (unit conversion only).
fn g_cgs() -> f64 {
    G_SI * 1e3
}
fn hbar_cgs() -> f64 {
    HBAR_SI * 1e7
}
fn m_e_g() -> f64 {
    M_E_KG * 1e3
}
fn k_b_cgs() -> f64 {
    K_B_SI * 1e7
}
fn sigma_sb_cgs() -> f64 {
    SIGMA_SB_SI * 1e3
}
fn msun_g() -> f64 {
    msun_kg() * 1e3
}

/// The degenerate-electron pressure constant C_P = (3π²)^{2/3} ħ² / (5 m_e m_H^{5/3}), cgs
/// (`docs/bounds.md` §2.2 step 1; 9.906181×10¹², which Burrows & Liebert round to 10¹³).
pub fn degenerate_pressure_constant_cgs() -> f64 {
    (3.0 * PI * PI).powf(2.0 / 3.0) * hbar_cgs().powi(2) / (5.0 * m_e_g() * M_H_G.powf(5.0 / 3.0))
}

/// The Lane–Emden constants of the n = 3/2 polytrope that the MMHB consumes, in the true-G
/// convention of `docs/bounds.md` §1 (an effective rescaling of G is absorbed into them).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PolytropeConstants {
    /// First zero of θ.
    pub xi1: f64,
    /// Mass integral ω = μ(ξ1).
    pub omega: f64,
    /// Burning-core integral J_k = ∫₀^{ξ1} ξ² θ^k dξ.
    pub j_k: f64,
    /// The exponent k of `j_k`; must equal 1.5·u + s of the model-A parameters it is used with.
    pub k: f64,
}

impl PolytropeConstants {
    /// Standard-gravity (ϒ = τ = 0) constants at the default k = 9.73: ξ1 = 3.6537537362,
    /// ω = 2.7140551201 (Chandrasekhar 1939 / Horedt 2004 tables: 3.65375, 2.71406, verified in
    /// `docs/bounds.md` §1), J_9.73 = 0.2096067060 (computed there). For tests and examples; a grid
    /// should take its reference from the same solver as its other points.
    pub fn standard_n15_default_k() -> Self {
        PolytropeConstants {
            xi1: 3.653_753_736_2,
            omega: 2.714_055_120_1,
            j_k: 0.209_606_706_0,
            k: 9.73,
        }
    }

    /// Takes ξ1, ω and J_k from an n = 3/2 solution of the modified Lane–Emden solver; the
    /// solve must have requested the exponent `k` as an extra integral.
    pub fn from_solution(sol: &LaneEmdenSolution, k: f64) -> Result<Self, BoundError> {
        if sol.n != 1.5 {
            return Err(invalid(format!(
                "the MMHB needs the n = 3/2 polytrope, got n = {}",
                sol.n
            )));
        }
        let j_k = sol.extra_integral(k).ok_or_else(|| {
            invalid(format!(
                "the Lane-Emden solve did not compute J_k for k = {k}"
            ))
        })?;
        let c = PolytropeConstants {
            xi1: sol.xi1,
            omega: sol.omega,
            j_k,
            k,
        };
        c.validate()?;
        Ok(c)
    }

    /// Solves the n = 3/2 modified Lane–Emden problem at (ϒ, τ, ansatz) with J_k and returns
    /// its constants (default solver options: rtol 1e-12).
    pub fn solve(
        upsilon: f64,
        tau: f64,
        anisotropy: Anisotropy,
        k: f64,
    ) -> Result<Self, BoundError> {
        let sol = ModifiedLaneEmden::new(1.5, upsilon, tau, anisotropy)?
            .solve(&LaneEmdenOptions::with_extra_powers(&[k]))?;
        Self::from_solution(&sol, k)
    }

    /// Central-to-mean density ratio δ = ξ1³/(3ω).
    pub fn delta(&self) -> f64 {
        self.xi1.powi(3) / (3.0 * self.omega)
    }

    /// Radius coefficient γ = (5ξ1/(8π))(4πω)^{1/3}, so that R = γK/(G M^{1/3}) for n = 3/2.
    pub fn gamma(&self) -> f64 {
        5.0 * self.xi1 / (8.0 * PI) * (4.0 * PI * self.omega).cbrt()
    }

    fn validate(&self) -> Result<(), BoundError> {
        for (name, v) in [
            ("xi1", self.xi1),
            ("omega", self.omega),
            ("j_k", self.j_k),
            ("k", self.k),
        ] {
            if !(v.is_finite() && v > 0.0) {
                return Err(invalid(format!(
                    "Lane-Emden constant {name} = {v} must be finite and > 0"
                )));
            }
        }
        Ok(())
    }
}

/// Composition shared by both models: full ionisation of hydrogen (mass fraction X) and helium.
fn mu_e_of(x: f64) -> f64 {
    2.0 / (1.0 + x)
}
fn mu_of(x: f64) -> f64 {
    4.0 / (3.0 + 5.0 * x)
}

fn validate_x(x: f64) -> Result<(), BoundError> {
    if !(x.is_finite() && x > 0.0 && x <= 1.0) {
        return Err(invalid(format!(
            "hydrogen mass fraction X = {x} must lie in (0, 1]"
        )));
    }
    Ok(())
}

/// Parameters of model A with the defaults of `docs/bounds.md` §2.1. The pp exponents and ε₀ follow
/// Burrows & Liebert 1993 (from memory); a, ν, b₁, κ_R are the photospheric fit as recalled there.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ModelAParams {
    /// Hydrogen mass fraction X (default 0.75, Z = 0).
    pub hydrogen_mass_fraction: f64,
    /// Temperature exponent s of ε = ε₀ T₆^s ρ^{u−1} (default 6.31).
    pub s: f64,
    /// Density exponent u (default 2.28).
    pub u: f64,
    /// Rate normalisation ε₀, erg g⁻¹ s⁻¹ at T₆ = 1, ρ = 1 g cm⁻³ (default 3.4×10⁻⁹, from memory).
    pub eps0_erg_g_s: f64,
    /// Exponent a of ρ_e in the photospheric fit (default 0.40).
    pub a: f64,
    /// Exponent ν of ψ in the photospheric fit (default 1.545, from memory).
    pub nu: f64,
    /// Normalisation b₁ of the photospheric fit, in units of 10⁶ K (default 2.87, from memory).
    pub b1: f64,
    /// Rosseland mean opacity at the photosphere, cm² g⁻¹ (default 0.01, from memory).
    pub kappa_r_cm2_g: f64,
    /// Molecular weight turning photospheric pressure into density; `None` means μ of the
    /// composition (the default, a choice of `docs/bounds.md` §2.1).
    pub mu_photosphere: Option<f64>,
}

impl Default for ModelAParams {
    fn default() -> Self {
        ModelAParams {
            hydrogen_mass_fraction: 0.75,
            s: 6.31,
            u: 2.28,
            eps0_erg_g_s: 3.4e-9,
            a: 0.40,
            nu: 1.545,
            b1: 2.87,
            kappa_r_cm2_g: 0.01,
            mu_photosphere: None,
        }
    }
}

/// The exact exponents of model A (`docs/bounds.md` §2.3). M_A ∝ γ^{E/p} δ^{−D/p} (ω/J_k)^{1/p}.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ModelAExponents {
    /// q = (2 − 6a)/(1 + a).
    pub q: f64,
    /// β = 4ν/(1 + a).
    pub beta: f64,
    /// p = p_HB − p_e, the power of M in L_HB/L_e.
    pub p: f64,
    /// Power of M in the burning luminosity, 1 + 4s/3 + 2(u − 1).
    pub p_hb: f64,
    /// Power of M in the surface luminosity, 4a/(1+a) − q/3.
    pub p_e: f64,
    /// E = 2s + 3(u − 1) + q, the power of γ and of (1 + αψ).
    pub e: f64,
    /// D = 2s/3 + (u − 1), the power of δ.
    pub d: f64,
    /// E/p: exponent of γ/γ₀ in Φ_A.
    pub e_over_p: f64,
    /// D/p: minus the exponent of δ/δ₀ in Φ_A.
    pub d_over_p: f64,
    /// 1/p: exponent of (ω/J_k)/(ω₀/J_k,0) in Φ_A.
    pub one_over_p: f64,
}

impl ModelAParams {
    /// μ_e = 2/(1 + X).
    pub fn mu_e(&self) -> f64 {
        mu_e_of(self.hydrogen_mass_fraction)
    }

    /// μ = 4/(3 + 5X).
    pub fn mu(&self) -> f64 {
        mu_of(self.hydrogen_mass_fraction)
    }

    /// α = 5μ_e/(2μ), the ideal-gas correction of the degenerate pressure.
    pub fn alpha(&self) -> f64 {
        5.0 * self.mu_e() / (2.0 * self.mu())
    }

    /// k = 1.5u + s, the power of θ in ερ; the J_k the model needs.
    pub fn k_index(&self) -> f64 {
        1.5 * self.u + self.s
    }

    /// The photospheric molecular weight actually used.
    pub fn mu_photosphere_value(&self) -> f64 {
        self.mu_photosphere.unwrap_or_else(|| self.mu())
    }

    /// The exponents of the closed form.
    pub fn exponents(&self) -> ModelAExponents {
        let (s, u, a) = (self.s, self.u, self.a);
        let q = (2.0 - 6.0 * a) / (1.0 + a);
        let beta = 4.0 * self.nu / (1.0 + a);
        let p_hb = 1.0 + 4.0 * s / 3.0 + 2.0 * (u - 1.0);
        let p_e = 4.0 * a / (1.0 + a) - q / 3.0;
        let p = p_hb - p_e;
        let e = 2.0 * s + 3.0 * (u - 1.0) + q;
        let d = 2.0 * s / 3.0 + (u - 1.0);
        ModelAExponents {
            q,
            beta,
            p,
            p_hb,
            p_e,
            e,
            d,
            e_over_p: e / p,
            d_over_p: d / p,
            one_over_p: 1.0 / p,
        }
    }

    /// ψ* = (s − β)/[α(E − s + β)], the degeneracy at the minimum; the same at every (ϒ, τ).
    pub fn psi_star(&self) -> f64 {
        let x = self.exponents();
        (self.s - x.beta) / (self.alpha() * (x.e - self.s + x.beta))
    }

    /// Checks that every parameter is finite and in the range where the model has a minimum.
    pub fn validate(&self) -> Result<(), BoundError> {
        validate_x(self.hydrogen_mass_fraction)?;
        for (name, v) in [
            ("s", self.s),
            ("u", self.u),
            ("eps0_erg_g_s", self.eps0_erg_g_s),
            ("a", self.a),
            ("nu", self.nu),
            ("b1", self.b1),
            ("kappa_r_cm2_g", self.kappa_r_cm2_g),
            ("mu_photosphere", self.mu_photosphere_value()),
        ] {
            if !(v.is_finite() && v > 0.0) {
                return Err(invalid(format!(
                    "model-A parameter {name} = {v} must be finite and > 0"
                )));
            }
        }
        let x = self.exponents();
        if !(x.p.is_finite() && x.p > 0.0) {
            return Err(invalid(format!(
                "model A needs p = p_HB - p_e > 0 (burning steeper in M than the surface), got p = {}",
                x.p
            )));
        }
        if !(self.s > x.beta && x.e - self.s + x.beta > 0.0) {
            return Err(invalid(format!(
                "model A has no minimum over psi for s = {}, beta = {}, E = {}: need s > beta and E - s + beta > 0",
                self.s, x.beta, x.e
            )));
        }
        Ok(())
    }

    fn check_k(&self, le: &PolytropeConstants) -> Result<(), BoundError> {
        le.validate()?;
        let k = self.k_index();
        if (le.k - k).abs() > 1e-9 * k {
            return Err(invalid(format!(
                "J_k was computed for k = {} but model A needs k = 1.5u + s = {k}",
                le.k
            )));
        }
        Ok(())
    }

    /// The state of the model at mass `mass_msun` and degeneracy `psi` (steps 1–8 of
    /// `docs/bounds.md` §2.2). `photosphere_g_factor` multiplies the surface gravity of step 6
    /// (1 = exterior gravity GM/R², the default; an anisotropy that reaches the photosphere, such
    /// as the gradient ansatz, may pass its effective factor, `docs/bounds.md` §2.6).
    pub fn state(
        &self,
        le: &PolytropeConstants,
        mass_msun: f64,
        psi: f64,
        photosphere_g_factor: f64,
    ) -> ModelAState {
        let m_g = mass_msun * msun_g();
        let g = g_cgs();
        let mu_e = self.mu_e();
        let k_poly =
            degenerate_pressure_constant_cgs() * mu_e.powf(-5.0 / 3.0) * (1.0 + self.alpha() * psi);
        let radius_cm = le.gamma() * k_poly / (g * m_g.cbrt());
        let rho_c = 3.0 * le.delta() * m_g / (4.0 * PI * radius_cm.powi(3));
        let n_e = rho_c / (mu_e * M_H_G);
        let e_fermi = hbar_cgs().powi(2) / (2.0 * m_e_g()) * (3.0 * PI * PI * n_e).powf(2.0 / 3.0);
        let t_c = psi * e_fermi / k_b_cgs();
        let l_hb =
            m_g * self.eps0_erg_g_s * (t_c / 1e6).powf(self.s) * rho_c.powf(self.u - 1.0) * le.j_k
                / le.omega;
        let surface_g = photosphere_g_factor * g * m_g / radius_cm.powi(2);
        let p_ph = 2.0 * surface_g / (3.0 * self.kappa_r_cm2_g);
        let t_eff = (self.b1
            * 1e6
            * psi.powf(self.nu)
            * (p_ph * self.mu_photosphere_value() * M_H_G / k_b_cgs()).powf(self.a))
        .powf(1.0 / (1.0 + self.a));
        let l_e = 4.0 * PI * radius_cm.powi(2) * sigma_sb_cgs() * t_eff.powi(4);
        ModelAState {
            mass_msun,
            psi,
            radius_cm,
            central_density_g_cm3: rho_c,
            central_temperature_k: t_c,
            effective_temperature_k: t_eff,
            burning_luminosity_erg_s: l_hb,
            surface_luminosity_erg_s: l_e,
        }
    }
}

/// The factor by which an anisotropy ansatz rescales gravity at the photosphere, for the
/// optional photospheric-gravity scaling of model A (`docs/bounds.md` §2.6): 1 − τ for the gradient
/// ansatz (b), an exact G → (1 − τ)G everywhere inside matter; 1 for the density-squared ansatz
/// (a), whose anisotropy vanishes at the surface (`docs/structure.md` §2.1), and for isotropy.
/// Pass it to [`model_a`] / [`evaluate`] only when the user asks for the scaled photosphere;
/// the default is exterior gravity (factor 1).
pub fn anisotropy_photosphere_g_factor(anisotropy: Anisotropy, tau: f64) -> f64 {
    match anisotropy {
        Anisotropy::Gradient => 1.0 - tau,
        Anisotropy::None | Anisotropy::DensitySquared => 1.0,
    }
}

/// One state of model A (mass, degeneracy and what follows from them), cgs.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ModelAState {
    /// Mass, M☉.
    pub mass_msun: f64,
    /// Degeneracy parameter ψ = k_B T_c / E_F.
    pub psi: f64,
    /// Radius, cm.
    pub radius_cm: f64,
    /// Central density, g cm⁻³.
    pub central_density_g_cm3: f64,
    /// Central temperature, K.
    pub central_temperature_k: f64,
    /// Effective temperature, K.
    pub effective_temperature_k: f64,
    /// Hydrogen-burning luminosity L_HB, erg s⁻¹.
    pub burning_luminosity_erg_s: f64,
    /// Surface luminosity L_e, erg s⁻¹.
    pub surface_luminosity_erg_s: f64,
}

impl ModelAState {
    /// Radius in nominal solar radii (IAU 2015 B3).
    pub fn radius_rsun(&self) -> f64 {
        self.radius_cm / (R_SUN_NOMINAL_M * 100.0)
    }
    /// Surface luminosity in nominal solar luminosities (IAU 2015 B3).
    pub fn luminosity_lsun(&self) -> f64 {
        self.surface_luminosity_erg_s / (L_SUN_NOMINAL_W * 1e7)
    }
}

/// Result of model A at one (ϒ, τ): the raw analytic MMHB and the state at the minimum.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ModelAResult {
    /// Raw (unanchored) MMHB, M☉.
    pub mmhb_msun: f64,
    /// Degeneracy at the minimum, ψ*.
    pub psi_star: f64,
    /// The photospheric gravity factor used (1 = exterior gravity).
    pub photosphere_g_factor: f64,
    /// Diagnostics at the minimum (M = MMHB, ψ = ψ*); there L_HB = L_e.
    pub at_minimum: ModelAState,
}

fn validate_g_factor(f: f64) -> Result<(), BoundError> {
    if !(f.is_finite() && f > 0.0) {
        return Err(invalid(format!(
            "photospheric gravity factor {f} must be finite and > 0"
        )));
    }
    Ok(())
}

fn finite_result(what: &str, v: f64) -> Result<f64, BoundError> {
    if v.is_finite() && v > 0.0 {
        Ok(v)
    } else {
        Err(BoundError::NoConvergence {
            reason: format!("{what} evaluated to {v}"),
        })
    }
}

/// Model A by its closed form (`docs/bounds.md` §2.3): ψ* from the exponents, then
/// MMHB = [L_e(M☉, ψ*)/L_HB(M☉, ψ*)]^{1/p} M☉.
pub fn model_a(
    le: &PolytropeConstants,
    params: &ModelAParams,
    photosphere_g_factor: f64,
) -> Result<ModelAResult, BoundError> {
    params.validate()?;
    params.check_k(le)?;
    validate_g_factor(photosphere_g_factor)?;
    let psi = params.psi_star();
    let at_sun = params.state(le, 1.0, psi, photosphere_g_factor);
    let ratio = at_sun.surface_luminosity_erg_s / at_sun.burning_luminosity_erg_s;
    let mmhb = finite_result("model-A MMHB", ratio.powf(1.0 / params.exponents().p))?;
    Ok(ModelAResult {
        mmhb_msun: mmhb,
        psi_star: psi,
        photosphere_g_factor,
        at_minimum: params.state(le, mmhb, psi, photosphere_g_factor),
    })
}

/// Model A by the numeric route of `docs/bounds.md` §2.2 step 9, kept as a cross-check of
/// [`model_a`]: for each ψ, root-find ln L_HB − ln L_e in ln M; then a bounded Brent
/// minimisation of M(ψ) over ln ψ ∈ [ln 10⁻⁴, 0]. Agrees with the closed form to ≲ 1e-12.
pub fn model_a_numeric(
    le: &PolytropeConstants,
    params: &ModelAParams,
    photosphere_g_factor: f64,
) -> Result<ModelAResult, BoundError> {
    params.validate()?;
    params.check_k(le)?;
    validate_g_factor(photosphere_g_factor)?;
    let ln_mass_of_psi = |ln_psi: f64| -> Option<f64> {
        let psi = ln_psi.exp();
        let f = |ln_m: f64| {
            let st = params.state(le, ln_m.exp(), psi, photosphere_g_factor);
            st.burning_luminosity_erg_s.ln() - st.surface_luminosity_erg_s.ln()
        };
        // L_HB/L_e rises with M (p > 0): widen the bracket until the sign changes.
        let (mut lo, mut hi) = (-5.0_f64, 2.0_f64);
        for _ in 0..40 {
            let (flo, fhi) = (f(lo), f(hi));
            if !(flo.is_finite() && fhi.is_finite()) {
                return None;
            }
            if flo <= 0.0 && fhi >= 0.0 {
                return brent_root(f, lo, hi, 1e-14, 200);
            }
            if flo > 0.0 {
                lo -= 5.0;
            }
            if fhi < 0.0 {
                hi += 5.0;
            }
        }
        None
    };
    let failed = std::cell::Cell::new(false);
    let objective = |ln_psi: f64| match ln_mass_of_psi(ln_psi) {
        Some(v) => v,
        None => {
            failed.set(true);
            f64::INFINITY
        }
    };
    let (ln_psi, ln_m) =
        brent_minimize(objective, 1e-4_f64.ln(), 0.0, 1e-11, 500).ok_or_else(|| {
            BoundError::NoConvergence {
                reason: "model-A minimisation over ln psi".into(),
            }
        })?;
    if failed.get() {
        return Err(BoundError::NoConvergence {
            reason: "model-A root in ln M not bracketed for some psi".into(),
        });
    }
    let mmhb = finite_result("model-A MMHB (numeric route)", ln_m.exp())?;
    let psi = ln_psi.exp();
    Ok(ModelAResult {
        mmhb_msun: mmhb,
        psi_star: psi,
        photosphere_g_factor,
        at_minimum: params.state(le, mmhb, psi, photosphere_g_factor),
    })
}

/// Φ_A = MMHB_A(ϒ,τ)/MMHB_A(0,0) from the exact exponents (`docs/bounds.md` §2.4):
/// (γ/γ₀)^{E/p} (δ/δ₀)^{−D/p} [(ω/J_k)/(ω₀/J_k,0)]^{1/p} × g_factor^{4a/((1+a)p)}.
/// `reference` holds the ϒ = τ = 0 constants (always with exterior gravity). Independent of
/// ε₀, b₁, κ_R, ν and μ_ph.
pub fn phi_a(
    le: &PolytropeConstants,
    reference: &PolytropeConstants,
    params: &ModelAParams,
    photosphere_g_factor: f64,
) -> Result<f64, BoundError> {
    params.validate()?;
    params.check_k(le)?;
    params.check_k(reference)?;
    validate_g_factor(photosphere_g_factor)?;
    let x = params.exponents();
    let phi = (le.gamma() / reference.gamma()).powf(x.e_over_p)
        * (le.delta() / reference.delta()).powf(-x.d_over_p)
        * ((le.omega / le.j_k) / (reference.omega / reference.j_k)).powf(x.one_over_p)
        * photosphere_g_factor.powf(4.0 * params.a / ((1.0 + params.a) * x.p));
    finite_result("Phi_A", phi)
}

/// Parameters of model B (`docs/bounds.md` §3).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ModelBParams {
    /// Hydrogen mass fraction X (default 0.75).
    pub hydrogen_mass_fraction: f64,
    /// Ignition temperature T_ign, K (default 3×10⁶ K, the conventional value; common practice).
    pub ignition_temperature_k: f64,
}

impl Default for ModelBParams {
    fn default() -> Self {
        ModelBParams {
            hydrogen_mass_fraction: 0.75,
            ignition_temperature_k: 3.0e6,
        }
    }
}

impl ModelBParams {
    /// α = 5μ_e/(2μ); the central temperature peaks at ψ = 1/α.
    pub fn alpha(&self) -> f64 {
        5.0 * mu_e_of(self.hydrogen_mass_fraction) / (2.0 * mu_of(self.hydrogen_mass_fraction))
    }

    fn validate(&self) -> Result<(), BoundError> {
        validate_x(self.hydrogen_mass_fraction)?;
        let t = self.ignition_temperature_k;
        if !(t.is_finite() && t > 0.0) {
            return Err(invalid(format!(
                "ignition temperature {t} K must be finite and > 0"
            )));
        }
        Ok(())
    }
}

/// Result of model B at one (ϒ, τ).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ModelBResult {
    /// Raw MMHB = (T_ign/C_T)^{3/4}, M☉.
    pub mmhb_msun: f64,
    /// C_T, the peak central temperature of a 1 M☉ object, K (T_c,max = C_T m^{4/3}).
    pub c_t_k: f64,
    /// Degeneracy at the temperature peak, 1/α.
    pub psi_peak: f64,
}

/// Model B: the mass whose peak central temperature equals T_ign (`docs/bounds.md` §3). C_T uses
/// steps 1–4 of §2.2 at M = M☉, ψ = 1/α. Needs only ξ1 and ω of `le` (J_k is not used).
pub fn model_b(le: &PolytropeConstants, params: &ModelBParams) -> Result<ModelBResult, BoundError> {
    params.validate()?;
    for (name, v) in [("xi1", le.xi1), ("omega", le.omega)] {
        if !(v.is_finite() && v > 0.0) {
            return Err(invalid(format!(
                "Lane-Emden constant {name} = {v} must be finite and > 0"
            )));
        }
    }
    // Reuse model A's steps 1–4 with the composition of model B (the rate and surface
    // parameters do not enter T_c).
    let a_params = ModelAParams {
        hydrogen_mass_fraction: params.hydrogen_mass_fraction,
        ..ModelAParams::default()
    };
    let psi_peak = 1.0 / params.alpha();
    let le_t = PolytropeConstants {
        j_k: 1.0,
        k: a_params.k_index(),
        ..*le
    };
    let c_t = a_params
        .state(&le_t, 1.0, psi_peak, 1.0)
        .central_temperature_k;
    let mmhb = finite_result(
        "model-B MMHB",
        (params.ignition_temperature_k / c_t).powf(0.75),
    )?;
    Ok(ModelBResult {
        mmhb_msun: mmhb,
        c_t_k: c_t,
        psi_peak,
    })
}

/// Φ_B = MMHB_B(ϒ,τ)/MMHB_B(0,0); identically ω/ω₀ (`docs/bounds.md` §3).
pub fn phi_b(le: &PolytropeConstants, reference: &PolytropeConstants) -> Result<f64, BoundError> {
    let p = ModelBParams::default();
    finite_result(
        "Phi_B",
        model_b(le, &p)?.mmhb_msun / model_b(reference, &p)?.mmhb_msun,
    )
}

/// Which analytic model supplies the MMHB (and its ϒ, τ dependence).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum MmhbModel {
    /// Model A, luminosity balance (Burrows & Liebert 1993); the default.
    #[default]
    LuminosityBalance,
    /// Model B, peak central temperature against an ignition temperature.
    IgnitionTemperature,
}

impl MmhbModel {
    /// The name used in every output.
    pub fn name(self) -> &'static str {
        match self {
            MmhbModel::LuminosityBalance => "luminosity-balance",
            MmhbModel::IgnitionTemperature => "ignition-temperature",
        }
    }

    /// The recommended 1σ theory floor of the raw (unanchored) model, M☉ (`docs/bounds.md` §4):
    /// 0.012 for model A (spread of surface treatments and the 8 % offset from Olmo et al. 2019),
    /// 0.014 for model B (T_ign between 2.5 and 3.5 ×10⁶ K).
    pub fn raw_floor_msun(self) -> f64 {
        match self {
            MmhbModel::LuminosityBalance => RAW_FLOOR_MODEL_A_MSUN,
            MmhbModel::IgnitionTemperature => RAW_FLOOR_MODEL_B_MSUN,
        }
    }
}

/// A name that is not one of the MMHB models.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error(
    "`{0}` is neither `luminosity` (model A, the default; also `luminosity-balance`, `a`) nor \
     `ignition` (model B; also `ignition-temperature`, `b`)"
)]
pub struct ParseMmhbModelError(pub String);

impl FromStr for MmhbModel {
    type Err = ParseMmhbModelError;

    /// The one parser of a model name, for the command line and the run config alike: `luminosity`,
    /// `luminosity-balance` or `a` for model A; `ignition`, `ignition-temperature` or `b` for model
    /// B; any case, surrounding blanks ignored. ([`MmhbModel::name`] is what outputs print.)
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.trim().to_ascii_lowercase().as_str() {
            "luminosity" | "luminosity-balance" | "a" => Ok(MmhbModel::LuminosityBalance),
            "ignition" | "ignition-temperature" | "b" => Ok(MmhbModel::IgnitionTemperature),
            other => Err(ParseMmhbModelError(other.to_string())),
        }
    }
}

/// Default standard-gravity MMHB of the anchored mode, M☉. Detailed evolutionary models put the
/// limit at ≈ 0.072–0.075 M☉ for solar metallicity (Chabrier & Baraffe 1997: ≈ 0.072; Chabrier
/// et al. 2023: ≈ 0.075 — both from memory, as recorded in `docs/bounds.md` §4).
pub const DEFAULT_ANCHOR_MSUN: f64 = 0.075;
/// Default 1σ theory floor of the anchored mode, M☉: spread of the evolutionary-model values
/// (≈ 0.070–0.080) and of metallicity (`docs/bounds.md` §4; a choice, not a published number).
pub const DEFAULT_ANCHORED_FLOOR_MSUN: f64 = 0.005;
/// 1σ floor of raw model A, M☉ (`docs/bounds.md` §4; a choice).
pub const RAW_FLOOR_MODEL_A_MSUN: f64 = 0.012;
/// 1σ floor of raw model B, M☉ (`docs/bounds.md` §4; a choice).
pub const RAW_FLOOR_MODEL_B_MSUN: f64 = 0.014;

/// How the MMHB bound is built from the analytic model.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case", tag = "mode")]
pub enum MmhbMode {
    /// Bound = anchor × Φ(ϒ,τ): the model supplies only the fractional shift (the default).
    Anchored {
        /// Standard-gravity MMHB, M☉.
        anchor_msun: f64,
        /// 1σ theory floor added in quadrature to each object's error, M☉.
        floor_msun: f64,
    },
    /// Bound = the raw analytic value; floor = [`MmhbModel::raw_floor_msun`].
    Raw,
}

impl Default for MmhbMode {
    fn default() -> Self {
        MmhbMode::Anchored {
            anchor_msun: DEFAULT_ANCHOR_MSUN,
            floor_msun: DEFAULT_ANCHORED_FLOOR_MSUN,
        }
    }
}

impl MmhbMode {
    /// The name used in every output.
    pub fn name(&self) -> &'static str {
        match self {
            MmhbMode::Anchored { .. } => "anchored",
            MmhbMode::Raw => "raw",
        }
    }
}

/// Everything that selects an MMHB bound; the same at every grid point.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
pub struct MmhbConfig {
    /// Which model supplies the bound and its ϒ, τ dependence.
    pub model: MmhbModel,
    /// Anchored (default) or raw.
    pub mode: MmhbMode,
    /// Parameters of model A.
    pub model_a: ModelAParams,
    /// Parameters of model B.
    pub model_b: ModelBParams,
    /// Add the model difference |Φ_A − Φ_B| × (anchor, or the raw standard-gravity value) to the
    /// floor in quadrature (optional in `docs/bounds.md` §4, for ϒ far from zero; default off).
    pub model_difference_in_floor: bool,
}

/// The MMHB bound at one (ϒ, τ), with what a report must state about it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct MmhbBound {
    /// The bound used against data (anchored or raw), M☉.
    pub value_msun: f64,
    /// 1σ theory floor, M☉ (the mode's floor, with the model difference in quadrature when
    /// asked for).
    pub floor_msun: f64,
    /// The model.
    pub model: MmhbModel,
    /// `"anchored"` or `"raw"`.
    pub mode_name: &'static str,
    /// The anchor, M☉ (anchored mode only).
    pub anchor_msun: Option<f64>,
    /// Raw analytic MMHB of the selected model at this point, M☉.
    pub raw_msun: f64,
    /// Φ = raw(ϒ,τ)/raw(0,0) of the selected model.
    pub phi: f64,
    /// The model-difference term included in `floor_msun`, M☉ (when asked for).
    pub model_difference_msun: Option<f64>,
    /// Photospheric gravity factor used by model A (1 = exterior gravity).
    pub photosphere_g_factor: f64,
}

/// The MMHB bound at one grid point. `le` and `reference` are the n = 3/2 constants at (ϒ, τ)
/// and at ϒ = τ = 0 (from the same solver, so that its errors cancel in Φ);
/// `photosphere_g_factor` is 1 for exterior gravity, or the effective factor of an anisotropy
/// that reaches the photosphere when the user asks for it (model A only, `docs/bounds.md` §2.6).
pub fn evaluate(
    config: &MmhbConfig,
    le: &PolytropeConstants,
    reference: &PolytropeConstants,
    photosphere_g_factor: f64,
) -> Result<MmhbBound, BoundError> {
    let (raw, raw0) = match config.model {
        MmhbModel::LuminosityBalance => (
            model_a(le, &config.model_a, photosphere_g_factor)?.mmhb_msun,
            model_a(reference, &config.model_a, 1.0)?.mmhb_msun,
        ),
        MmhbModel::IgnitionTemperature => (
            model_b(le, &config.model_b)?.mmhb_msun,
            model_b(reference, &config.model_b)?.mmhb_msun,
        ),
    };
    let phi = finite_result("Phi", raw / raw0)?;
    let phi_other = if config.model_difference_in_floor {
        Some(match config.model {
            MmhbModel::LuminosityBalance => phi_b(le, reference)?,
            MmhbModel::IgnitionTemperature => {
                model_a(le, &config.model_a, photosphere_g_factor)?.mmhb_msun
                    / model_a(reference, &config.model_a, 1.0)?.mmhb_msun
            }
        })
    } else {
        None
    };
    let (value, floor, anchor) = match config.mode {
        MmhbMode::Anchored {
            anchor_msun,
            floor_msun,
        } => {
            if !(anchor_msun.is_finite() && anchor_msun > 0.0) {
                return Err(invalid(format!(
                    "anchor {anchor_msun} M_sun must be finite and > 0"
                )));
            }
            if !(floor_msun.is_finite() && floor_msun >= 0.0) {
                return Err(invalid(format!(
                    "theory floor {floor_msun} M_sun must be finite and >= 0"
                )));
            }
            (anchor_msun * phi, floor_msun, Some(anchor_msun))
        }
        MmhbMode::Raw => (raw, config.model.raw_floor_msun(), None),
    };
    let scale_msun = anchor.unwrap_or(raw0);
    let model_difference_msun = phi_other.map(|o| (phi - o).abs() * scale_msun);
    let floor = match model_difference_msun {
        Some(d) => floor.hypot(d),
        None => floor,
    };
    Ok(MmhbBound {
        value_msun: value,
        floor_msun: floor,
        model: config.model,
        mode_name: config.mode.name(),
        anchor_msun: anchor,
        raw_msun: raw,
        phi,
        model_difference_msun,
        photosphere_g_factor,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn mismatched_k_is_refused() {
        let mut le = PolytropeConstants::standard_n15_default_k();
        le.k = 9.0;
        assert!(matches!(
            model_a(&le, &ModelAParams::default(), 1.0),
            Err(BoundError::InvalidInput { .. })
        ));
    }

    #[test]
    fn model_names_accepted_by_the_command_line_and_the_config() {
        // The spellings listed in the README and `--help` (common practice, no source): every
        // one any earlier parser accepted, in any case.
        for (text, model) in [
            ("luminosity", MmhbModel::LuminosityBalance),
            ("luminosity-balance", MmhbModel::LuminosityBalance),
            ("A", MmhbModel::LuminosityBalance),
            (" ignition ", MmhbModel::IgnitionTemperature),
            ("Ignition-Temperature", MmhbModel::IgnitionTemperature),
            ("b", MmhbModel::IgnitionTemperature),
        ] {
            assert_eq!(text.parse::<MmhbModel>(), Ok(model), "{text}");
        }
        for m in [MmhbModel::LuminosityBalance, MmhbModel::IgnitionTemperature] {
            assert_eq!(m.name().parse::<MmhbModel>(), Ok(m));
        }
        let e = "fancy".parse::<MmhbModel>().unwrap_err().to_string();
        assert!(e.contains("`fancy`") && e.contains("luminosity") && e.contains("ignition"));
    }
}
