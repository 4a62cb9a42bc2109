//! Schönberg–Chandrasekhar (SC) fraction: the largest fraction of a star's mass that an
//! isothermal core can hold under a lighter envelope, and how ϒ and τ shift it.
//!
//! The classic value q_SC ≈ 0.37 λ², λ = μ_env/μ_core (Schönberg & Chandrasekhar 1942, ApJ 96,
//! 161), came from radiative-envelope models this module does not rebuild. Instead an isothermal
//! core is fitted to an n_env = 3 polytropic envelope (the modified Lane–Emden system started at
//! the interface) and the fit supplies only the ratio q_fit(λ,ϒ,τ)/q_fit(λ,0,0); the tool
//! reports q_SC = 0.37 λ² × that ratio. With ϒ ≠ 0 the density jump at the core edge turns
//! ρ·d²M/dr² into a δ-function, so the pressure itself is discontinuous there and
//! P̃ = P + (πGϒ/2) r² ρ² is what must match.
//!
//! Anisotropy enters the core exactly as it enters the Lane–Emden system (its n → ∞ limit, with
//! the same (p, c, κ) coefficients): φ′[1 + κ(ϒ/4)ζ²e^{−φ}] = p[m/ζ² + cζe^{−φ}]. For the
//! density-squared ansatz σ is finite at the jump and the interface condition is unchanged; for
//! the gradient ansatz G → (1 − τ)G everywhere inside matter, jump included, so the
//! dimensionless fraction does not depend on τ at all (an exact identity the tests check).
//! The derivation is in `docs/schonberg-tau.md`.
//!
//! ```
//! use dwarfbound::theory::schonberg::{sc_fraction, sc_fraction_with, ScParams, ScVariant};
//! use dwarfbound::theory::Anisotropy;
//! let q = sc_fraction(0.0, 0.0, &ScParams::default(), ScVariant::FullFit).unwrap();
//! assert!((q.q_sc - 0.37 * (0.62_f64 / 1.33).powi(2)).abs() < 1e-12);
//! // The gradient ansatz only rescales G: the fraction is the τ = 0 one.
//! let p = ScParams::default();
//! let g = sc_fraction_with(0.0, 0.1, Anisotropy::Gradient, &p, ScVariant::CoreFactorOnly);
//! assert!((g.unwrap().ratio - 1.0).abs() < 1e-10);
//! ```

use super::lane_emden::ModifiedLaneEmden;
use super::mmhb::BoundError;
use super::ode::{solve, OdeError, OdeOptions, Stop};
use super::roots::brent_minimize;
use super::Anisotropy;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// Relative tolerance of the core and envelope integrations.
const RTOL: f64 = 1e-12;
/// Start of the core integration (central series below it).
const ZETA0: f64 = 1e-4;
/// Smallest allowed denominator 1 + (ϒ/4)ζ²e^{−φ} (or its envelope analogue) before the
/// pressure gradient is declared undetermined (`docs/structure.md` §1.3).
const D_MIN: f64 = 1e-9;

fn invalid(reason: impl Into<String>) -> BoundError {
    BoundError::InvalidInput {
        reason: reason.into(),
    }
}

fn ode_failure<E: std::fmt::Display>(what: &str, e: OdeError<E>) -> BoundError {
    BoundError::NoConvergence {
        reason: format!("{what}: {e}"),
    }
}

/// Which quantity is continuous across the core–envelope interface.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum InterfaceCondition {
    /// P̃ = P + (πGϒ/2) r² ρ² continuous (with T): the correct condition (`docs/bounds.md` §7.2).
    #[default]
    ContinuousPTilde,
    /// P continuous, the jump term ignored: wrong for ϒ ≠ 0, kept only as a diagnostic.
    ContinuousPressure,
}

/// The structure of the core at one (ϒ, τ, ansatz): the (p, c, κ) coefficients of the
/// modified Lane–Emden system, reused for the isothermal core (its n → ∞ limit).
#[derive(Debug, Clone, Copy, PartialEq)]
struct Core {
    upsilon: f64,
    tau: f64,
    anisotropy: Anisotropy,
    p: f64,
    c: f64,
    kappa: f64,
}

impl Core {
    /// Validates (ϒ, τ, ansatz) through the Lane–Emden system of index `n_env` (regular centre,
    /// τ < 1 for the gradient ansatz, τ = 0 without an ansatz) and takes its coefficients.
    fn new(upsilon: f64, tau: f64, anisotropy: Anisotropy, n_env: f64) -> Result<Self, BoundError> {
        if !upsilon.is_finite() {
            return Err(invalid(format!("Upsilon = {upsilon} must be finite")));
        }
        if !tau.is_finite() {
            return Err(invalid(format!("tau = {tau} must be finite")));
        }
        let le = ModifiedLaneEmden::new(n_env, upsilon, tau, anisotropy)?;
        let (p, c, kappa) = le.coefficients();
        Ok(Core {
            upsilon,
            tau,
            anisotropy,
            p,
            c,
            kappa,
        })
    }

    /// The isotropic core at ϒ (τ = 0).
    fn isotropic(upsilon: f64) -> Result<Self, BoundError> {
        Core::new(upsilon, 0.0, Anisotropy::None, 3.0)
    }

    /// Right-hand side, y = (φ, m): φ′[1 + κ(ϒ/4)ζ²e^{−φ}] = p[m/ζ² + cζe^{−φ}], m′ = ζ²e^{−φ}.
    /// For τ = 0 (p = κ = 1, c = ϒ/2) every operation rounds exactly as the isotropic form
    /// (m/ζ² + (ϒ/2)ζe^{−φ})/(1 + (ϒ/4)ζ²e^{−φ}) did before anisotropy was added.
    fn rhs(&self, zeta: f64, y: &[f64; 2]) -> Result<[f64; 2], String> {
        let w = (-y[0]).exp();
        let d = 1.0 + self.kappa * 0.25 * self.upsilon * zeta * zeta * w;
        if d <= D_MIN {
            return Err(format!(
                "core denominator 1 + kappa (Upsilon/4) zeta^2 e^-phi = {d} vanishes at zeta = {zeta}"
            ));
        }
        Ok([
            self.p * (y[1] / (zeta * zeta) + self.c * zeta * w) / d,
            zeta * zeta * w,
        ])
    }

    /// Central series at ζ₀: φ = Aζ², m = ζ³/3 − Aζ⁵/5, A = p(1 + 3c)/6 (the Lane–Emden
    /// central coefficient; (1 + 3ϒ/2 − τ)/6 for the density-squared ansatz).
    fn start(&self) -> [f64; 2] {
        let a = self.p * (1.0 + 3.0 * self.c) / 6.0;
        let z = ZETA0;
        [a * z * z, z.powi(3) / 3.0 - a * z.powi(5) / 5.0]
    }

    /// (φ, m) at ζ.
    fn at(&self, zeta: f64) -> Result<[f64; 2], BoundError> {
        if !(zeta.is_finite() && zeta > ZETA0) {
            return Err(invalid(format!(
                "core radius zeta = {zeta} must exceed {ZETA0}"
            )));
        }
        let opts = OdeOptions::new(RTOL, 1e-15, ZETA0);
        let sol = solve(
            |z, y: &[f64; 2]| self.rhs(z, y),
            ZETA0,
            self.start(),
            zeta,
            &opts,
            None,
        )
        .map_err(|e| ode_failure("isothermal core", e))?;
        Ok(sol.y)
    }
}

/// The Bonnor–Ebert point of the (modified) isothermal sphere.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct BonnorEbert {
    /// C_BE = max over ζ of e^{−φ} m²/(4π) = P_s M_c² G³/c_s⁸.
    pub c_be: f64,
    /// The ζ of the maximum.
    pub zeta: f64,
}

/// The Bonnor–Ebert constant C_BE(ϒ) = max_ζ e^{−φ(ζ)} m(ζ)²/(4π) of the modified isothermal
/// core (Bonnor 1956, MNRAS 116, 351; Ebert 1955, Z. Astrophys. 37, 217: 1.40 at ζ = 6.451).
/// The maximum is located as the first zero of d/dζ[e^{−φ}m²] ∝ 2ζ²e^{−φ} − φ′m, found as an
/// integration event, so ζ is accurate to near machine precision rather than to √ε.
pub fn bonnor_ebert(upsilon: f64) -> Result<BonnorEbert, BoundError> {
    bonnor_ebert_of(&Core::isotropic(upsilon)?)
}

/// [`bonnor_ebert`] with anisotropy τ of the given ansatz in the core. For the gradient ansatz
/// G → (1 − τ)G makes C_BE = P_s M_c² G³/c_s⁸ scale exactly as (1 − τ)^{−3} in true-G units.
pub fn bonnor_ebert_with(
    upsilon: f64,
    tau: f64,
    anisotropy: Anisotropy,
) -> Result<BonnorEbert, BoundError> {
    bonnor_ebert_of(&Core::new(upsilon, tau, anisotropy, 3.0)?)
}

fn bonnor_ebert_of(core: &Core) -> Result<BonnorEbert, BoundError> {
    let upsilon = core.upsilon;
    let opts = OdeOptions::new(RTOL, 1e-15, ZETA0);
    let mut g = |z: f64, y: &[f64; 2]| match core.rhs(z, y) {
        Ok(dy) => 2.0 * z * z * (-y[0]).exp() - dy[0] * y[1],
        Err(_) => -1.0,
    };
    let sol = solve(
        |z, y: &[f64; 2]| core.rhs(z, y),
        ZETA0,
        core.start(),
        1e3,
        &opts,
        Some(&mut g),
    )
    .map_err(|e| ode_failure("Bonnor-Ebert core", e))?;
    if sol.stop != Stop::Event {
        return Err(BoundError::NoConvergence {
            reason: format!(
                "no Bonnor-Ebert maximum found below zeta = 1e3 (Upsilon = {upsilon}, tau = {})",
                core.tau
            ),
        });
    }
    let [phi, m] = sol.y;
    Ok(BonnorEbert {
        c_be: (-phi).exp() * m * m / (4.0 * PI),
        zeta: sol.x,
    })
}

/// The core mass fraction q = μ_f/μ₁ of the fit with the core cut at ζ_f (`docs/bounds.md` §7.1 steps 1–4).
fn q_at(
    lambda: f64,
    core: &Core,
    n_env: f64,
    interface: InterfaceCondition,
    zeta_f: f64,
) -> Result<f64, BoundError> {
    let upsilon = core.upsilon;
    let [phi, m] = core.at(zeta_f)?;
    let w_c = (-phi).exp();
    let w_e = match interface {
        InterfaceCondition::ContinuousPressure => lambda * w_c,
        InterfaceCondition::ContinuousPTilde => {
            // w_c + A w_c² = w_e/λ + A w_e², A = κ(ϒ/8)ζ_f²; the root continuous with ϒ → 0.
            // κ = 1 − τ for the gradient ansatz (its G → (1 − τ)G reaches the δ-function too);
            // the density-squared σ is finite at the jump and adds nothing there.
            let a = core.kappa * upsilon * zeta_f * zeta_f / 8.0;
            let p_tilde = w_c + a * w_c * w_c;
            let disc = 1.0 / (lambda * lambda) + 4.0 * a * p_tilde;
            if disc < 0.0 {
                return Err(BoundError::NoConvergence {
                    reason: format!(
                        "no envelope density matches the core at zeta_f = {zeta_f} (Upsilon = {upsilon})"
                    ),
                });
            }
            2.0 * p_tilde / (1.0 / lambda + disc.sqrt())
        }
    };
    if !(w_e.is_finite() && w_e > 0.0) {
        return Err(BoundError::NoConvergence {
            reason: format!("envelope density {w_e} not positive at zeta_f = {zeta_f}"),
        });
    }
    let p_e = w_e / lambda;
    let r_e = ((n_env + 1.0) * p_e).sqrt() / w_e;
    let xi_f = zeta_f / r_e;
    let mu_f = m / (r_e.powi(3) * w_e);
    // The envelope obeys the modified Lane–Emden system with the core's (ϒ, τ, ansatz), started
    // at the interface instead of the centre.
    let envelope = ModifiedLaneEmden::new(n_env, upsilon, core.tau, core.anisotropy)?;
    let opts = OdeOptions::new(RTOL, 1e-15, 1e-3 * xi_f);
    let mut g = |_x: f64, y: &[f64; 2]| y[0];
    let sol = solve(
        |x, y: &[f64; 2]| envelope.derivatives(x, y[0], y[1]),
        xi_f,
        [1.0, mu_f],
        xi_f * 1e8,
        &opts,
        Some(&mut g),
    )
    .map_err(|e| ode_failure("polytropic envelope", e))?;
    if sol.stop != Stop::Event {
        return Err(BoundError::NoConvergence {
            reason: format!("envelope has no surface (zeta_f = {zeta_f})"),
        });
    }
    // One Newton step on the root found on the dense output (`docs/structure.md` §3.5, n ≥ 1).
    let dy = envelope.derivatives(sol.x, sol.y[0], sol.y[1])?;
    let dxi = if dy[0] != 0.0 { -sol.y[0] / dy[0] } else { 0.0 };
    let mu1 = sol.y[1] + dy[1] * dxi;
    let q = mu_f / mu1;
    if q.is_finite() && q > 0.0 {
        Ok(q)
    } else {
        Err(BoundError::NoConvergence {
            reason: format!("core mass fraction {q} at zeta_f = {zeta_f}"),
        })
    }
}

/// The best core–envelope fit at one (λ, ϒ).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct CoreEnvelopeFit {
    /// Maximum core mass fraction q_fit over the core edge.
    pub q: f64,
    /// The core edge ζ_f of the maximum (isothermal units).
    pub zeta_f: f64,
}

fn validate_fit_inputs(lambda: f64, n_env: f64) -> Result<(), BoundError> {
    if !(lambda.is_finite() && lambda > 0.0 && lambda <= 1.0) {
        return Err(invalid(format!(
            "lambda = mu_env/mu_core = {lambda} must lie in (0, 1]"
        )));
    }
    if !(n_env.is_finite() && (1.0..5.0).contains(&n_env)) {
        return Err(invalid(format!(
            "envelope polytropic index {n_env} must lie in [1, 5)"
        )));
    }
    Ok(())
}

/// The maximum over ζ_f of the core mass fraction q = μ_f/μ₁ of an isothermal core (ϒ-modified)
/// fitted to a polytropic envelope of index `n_env` (`docs/bounds.md` §7.1–7.2). The maximum is
/// bracketed on a log-spaced scan of ζ_f ∈ [0.5, 60] and refined by Brent's method.
pub fn core_envelope_fit(
    lambda: f64,
    upsilon: f64,
    n_env: f64,
    interface: InterfaceCondition,
) -> Result<CoreEnvelopeFit, BoundError> {
    core_envelope_fit_with(lambda, upsilon, 0.0, Anisotropy::None, n_env, interface)
}

/// [`core_envelope_fit`] with anisotropy τ of the given ansatz in core and envelope. Errors
/// (typed, never NaN): no regular centre, τ ≥ 1 for the gradient ansatz, a vanishing
/// denominator, or a maximum that is not inside the scanned core edges.
pub fn core_envelope_fit_with(
    lambda: f64,
    upsilon: f64,
    tau: f64,
    anisotropy: Anisotropy,
    n_env: f64,
    interface: InterfaceCondition,
) -> Result<CoreEnvelopeFit, BoundError> {
    validate_fit_inputs(lambda, n_env)?;
    let core = Core::new(upsilon, tau, anisotropy, n_env)?;
    let q = |z: f64| q_at(lambda, &core, n_env, interface, z);
    const SCAN: usize = 48;
    let (z_lo, z_hi) = (0.5_f64, 60.0_f64);
    let zs: Vec<f64> = (0..SCAN)
        .map(|i| z_lo * (z_hi / z_lo).powf(i as f64 / (SCAN - 1) as f64))
        .collect();
    let mut best: Option<(usize, f64)> = None;
    let mut last_err = None;
    for (i, z) in zs.iter().enumerate() {
        match q(*z) {
            Ok(v) => {
                if best.is_none_or(|(_, b)| v > b) {
                    best = Some((i, v));
                }
            }
            Err(e) => last_err = Some(e),
        }
    }
    let Some((i_best, _)) = best else {
        return Err(last_err.unwrap_or(BoundError::NoConvergence {
            reason: "no core edge gave a fit".into(),
        }));
    };
    if i_best == 0 || i_best == SCAN - 1 {
        return Err(BoundError::NoConvergence {
            reason: format!(
                "the core mass fraction has no maximum inside zeta_f in [{z_lo}, {z_hi}] \
                 (Upsilon = {upsilon}, tau = {tau})"
            ),
        });
    }
    let lo = zs[i_best.saturating_sub(1)];
    let hi = zs[(i_best + 1).min(SCAN - 1)];
    let failed = std::cell::Cell::new(None);
    let objective = |ln_z: f64| match q(ln_z.exp()) {
        Ok(v) => -v,
        Err(e) => {
            failed.set(Some(e));
            f64::INFINITY
        }
    };
    let (ln_z, neg_q) =
        brent_minimize(objective, lo.ln(), hi.ln(), 1e-10, 300).ok_or_else(|| {
            BoundError::NoConvergence {
                reason: format!("maximisation of the core mass fraction (Upsilon = {upsilon})"),
            }
        })?;
    if let Some(e) = failed.take() {
        return Err(e);
    }
    Ok(CoreEnvelopeFit {
        q: -neg_q,
        zeta_f: ln_z.exp(),
    })
}

/// Composition and conventions of the SC fraction.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ScParams {
    /// Mean molecular weight of the envelope (default 0.62, common practice, no source).
    pub mu_env: f64,
    /// Mean molecular weight of the isothermal core (default 1.33, ionised helium; common practice).
    pub mu_core: f64,
    /// Polytropic index of the fitted envelope (default 3).
    pub n_env: f64,
    /// Coefficient of λ² in the standard-gravity fraction (default 0.37, Schönberg &
    /// Chandrasekhar 1942).
    pub classic_coefficient: f64,
}

impl Default for ScParams {
    fn default() -> Self {
        ScParams {
            mu_env: 0.62,
            mu_core: 1.33,
            n_env: 3.0,
            classic_coefficient: 0.37,
        }
    }
}

impl ScParams {
    /// λ = μ_env/μ_core.
    pub fn lambda(&self) -> f64 {
        self.mu_env / self.mu_core
    }
}

/// How the modified-gravity factor is obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum ScVariant {
    /// q_fit(λ,ϒ)/q_fit(λ,0) from the full core–envelope fit (the default).
    #[default]
    FullFit,
    /// √(C_BE(ϒ)/C_BE(0)) from the core alone; the difference to the full fit is the SC theory
    /// uncertainty (`docs/bounds.md` §7.2).
    CoreFactorOnly,
}

impl ScVariant {
    /// The name used in every output.
    pub fn name(self) -> &'static str {
        match self {
            ScVariant::FullFit => "full-fit",
            ScVariant::CoreFactorOnly => "core-factor-only",
        }
    }
}

/// The SC fraction at one ϒ.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ScFraction {
    /// q_SC(ϒ) = classic coefficient × λ² × ratio.
    pub q_sc: f64,
    /// The modified-gravity factor q_SC(ϒ)/q_SC(0).
    pub ratio: f64,
    /// λ = μ_env/μ_core used.
    pub lambda: f64,
    /// The variant that produced `ratio`.
    pub variant: ScVariant,
}

/// The Schönberg–Chandrasekhar fraction q_SC(ϒ, τ) = 0.37 λ² × [modified-gravity factor]
/// with τ the strength of the density-squared ansatz (the project's
/// default meaning of τ). See [`sc_fraction_with`] for another ansatz.
pub fn sc_fraction(
    upsilon: f64,
    tau: f64,
    params: &ScParams,
    variant: ScVariant,
) -> Result<ScFraction, BoundError> {
    sc_fraction_with(upsilon, tau, Anisotropy::DensitySquared, params, variant)
}

/// The Schönberg–Chandrasekhar fraction at (ϒ, τ) for the given anisotropy ansatz: 0.37 λ² ×
/// q_fit(λ,ϒ,τ)/q_fit(λ,0,0) (full fit) or × √(C_BE(ϒ,τ)/C_BE(0,0)) (core factor only).
///
/// For the gradient ansatz the whole problem is the τ = 0 one with G → (1 − τ)G; the mass
/// fraction is dimensionless and so exactly independent of τ. The full fit is nevertheless
/// solved with the anisotropy in place (true-G units), so that the identity checks the code
/// path; the core factor is taken in the rescaled units ((1 − τ)³ C_BE), the ones in which the
/// envelope's pressure–mass relation is the τ = 0 one. A typed error, never NaN, where no
/// model exists (no regular centre, τ ≥ 1 for the gradient ansatz, no fit maximum).
pub fn sc_fraction_with(
    upsilon: f64,
    tau: f64,
    anisotropy: Anisotropy,
    params: &ScParams,
    variant: ScVariant,
) -> Result<ScFraction, BoundError> {
    let lambda = params.lambda();
    if !(params.classic_coefficient.is_finite() && params.classic_coefficient > 0.0) {
        return Err(invalid(format!(
            "classic SC coefficient {} must be finite and > 0",
            params.classic_coefficient
        )));
    }
    validate_fit_inputs(lambda, params.n_env)?;
    // Validates (ϒ, τ, ansatz) even where nothing is fitted below.
    Core::new(upsilon, tau, anisotropy, params.n_env)?;
    let ratio = if upsilon == 0.0 && tau == 0.0 {
        1.0
    } else {
        match variant {
            ScVariant::FullFit => {
                let c = InterfaceCondition::ContinuousPTilde;
                core_envelope_fit_with(lambda, upsilon, tau, anisotropy, params.n_env, c)?.q
                    / core_envelope_fit(lambda, 0.0, params.n_env, c)?.q
            }
            ScVariant::CoreFactorOnly => {
                let c_be = bonnor_ebert_with(upsilon, tau, anisotropy)?.c_be;
                let rescaled = match anisotropy {
                    Anisotropy::Gradient => c_be * (1.0 - tau).powi(3),
                    _ => c_be,
                };
                (rescaled / bonnor_ebert(0.0)?.c_be).sqrt()
            }
        }
    };
    if !(ratio.is_finite() && ratio > 0.0) {
        return Err(BoundError::NoConvergence {
            reason: format!("SC factor {ratio} at Upsilon = {upsilon}, tau = {tau}"),
        });
    }
    Ok(ScFraction {
        q_sc: params.classic_coefficient * lambda * lambda * ratio,
        ratio,
        lambda,
        variant,
    })
}
