//! Slow rigid rotation to first order in Ω²: how much a polytrope's mass and radius change when
//! it spins, in the modified theory.
//!
//! One job: Chandrasekhar's expansion of rotating polytropes (Chandrasekhar 1933, MNRAS 93, 390),
//! Θ(ξ, μ) = θ(ξ) + v[ψ₀(ξ) + A₂ψ₂(ξ)P₂(μ)], v = Ω²/(2πGρ_c), applied to the modified
//! Lane–Emden equation with the ϒ and τ terms. The derivation is written out in the project's
//! docs (`docs/rotation.md`). In short, with D = 1 + κ(nϒ/4)ξ²θ^{n−1} and (p, c, κ) the
//! coefficients of the modified Lane–Emden system, the variable u = θ + κ(ϒ/4)ξ²θⁿ obeys
//! ξ²u′ = −pμ + eξ³θⁿ + p v ξ³/3 with e = κϒ/2 − pc (τ/3 for the density-squared ansatz,
//! 0 otherwise). Its perturbations χ = Dψ give
//!
//! * spherical part: ξ²χ₀′ = −p m₀ + e n ξ³ θ^{n−1} χ₀/D + p ξ³/3,  m₀′ = n ξ² θ^{n−1} χ₀/D;
//! * P₂ part: χ₂″ + 2χ₂′/ξ − 6χ₂/ξ² = −p n θ^{n−1} χ₂/D, matched to an exterior potential that
//!   falls as ξ⁻³: A₂ = −(5/6) p ξ₁² / (3χ₂(ξ₁) + ξ₁χ₂′(ξ₁)).
//!
//! The bound-relevant changes (mass, volume-equivalent radius) come from ψ₀ alone: the P₂ part
//! averages to zero over angle at first order. The P₂ part (the shape) is given where the ϒ
//! term can be written as a potential (πGϒr²ρ) — every case except the density-squared
//! anisotropy with τ ≠ 0, whose radial force has a curl off spherical symmetry, so that no
//! barotropic rigidly rotating equilibrium exists at first order in its naive extension.
//!
//! ```
//! use dwarfbound::theory::slow_rotation::slow_rotation;
//! use dwarfbound::theory::Anisotropy;
//!
//! // n = 1, standard gravity: ψ₀ = 1 − sin ξ/ξ, so the mass at fixed ρ_c grows by
//! // v(π³/3 − π)/π per unit v (closed form).
//! let s = slow_rotation(1.0, 0.0, 0.0, Anisotropy::None).unwrap();
//! let want = (std::f64::consts::PI.powi(2) / 3.0 - 1.0);
//! assert!((s.mass_coefficient - want).abs() < 1e-8);
//! ```

use crate::theory::error::TheoryError;
use crate::theory::lane_emden::ModifiedLaneEmden;
use crate::theory::ode::{solve, OdeOptions, Stop};
use crate::theory::Anisotropy;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// Start of the integration (central series below it).
const XI0: f64 = 1e-4;
/// Relative tolerance of the integration.
const RTOL: f64 = 1e-11;

/// The largest v trusted at first order, as a fraction of the Roche break-up value
/// v_crit = 2ω/((3/2)³ξ₁³) (Ω² = GM/R_eq³ with R_eq = (3/2)R): 0.1, i.e. Ω ≤ 0.32 Ω_crit. Second
/// order terms are of relative size Ω²/Ω_crit², so about 10 % of the first-order change there;
/// a choice, not a published number.
pub const FIRST_ORDER_MAX_FRACTION_OF_BREAKUP: f64 = 0.1;

/// Why a slow-rotation correction is not available.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SlowRotationError {
    /// The non-rotating structure has no model, or a parameter is out of range.
    #[error(transparent)]
    Structure(#[from] TheoryError),
    /// v is beyond the threshold where first order is trusted: flag the object instead of
    /// correcting it.
    #[error("too fast for first order: v = {v:.4e} > v_max = {v_max:.4e}")]
    TooFastForFirstOrder {
        /// The rotation parameter asked for.
        v: f64,
        /// The threshold (see [`FIRST_ORDER_MAX_FRACTION_OF_BREAKUP`]).
        v_max: f64,
    },
    /// v is negative or not finite.
    #[error("invalid rotation parameter v = {v}: must be finite and ≥ 0")]
    InvalidV {
        /// The value given.
        v: f64,
    },
}

impl SlowRotationError {
    /// A short, stable tag: `too-fast-for-first-order`, `invalid-v`, or the structure's own.
    pub fn code(&self) -> &'static str {
        match self {
            SlowRotationError::Structure(e) => e.code(),
            SlowRotationError::TooFastForFirstOrder { .. } => "too-fast-for-first-order",
            SlowRotationError::InvalidV { .. } => "invalid-v",
        }
    }
}

/// The P₂ (shape) part at the surface.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SlowRotationShape {
    /// A₂ψ₂(ξ₁): the P₂ amplitude of the surface perturbation of Θ (per unit v).
    pub a2_psi2: f64,
    /// d ln R_eq/dv at fixed ρ_c and K (equator, P₂ = −1/2).
    pub equatorial_radius_coefficient: f64,
    /// d ln R_pole/dv at fixed ρ_c and K (pole, P₂ = 1).
    pub polar_radius_coefficient: f64,
}

/// First-order rotation coefficients of one polytrope (index n) at (ϒ, τ, ansatz).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SlowRotation {
    /// Polytropic index.
    pub n: f64,
    /// ϒ.
    pub upsilon: f64,
    /// τ.
    pub tau: f64,
    /// The anisotropy ansatz τ belongs to.
    pub anisotropy: Anisotropy,
    /// ξ₁ of the non-rotating star.
    pub xi1: f64,
    /// ω = μ(ξ₁) of the non-rotating star.
    pub omega: f64,
    /// ψ₀(ξ₁).
    pub psi0_surface: f64,
    /// m₀(ξ₁) = δμ/v: the mass perturbation in Lane–Emden units.
    pub m0_surface: f64,
    /// d ln M/dv at fixed central density and K: m₀(ξ₁)/ω.
    pub mass_coefficient: f64,
    /// d ln R/dv of the volume-equivalent radius at fixed central density and K:
    /// ψ₀(ξ₁)/(ξ₁|θ′(ξ₁)|).
    pub mean_radius_coefficient: f64,
    /// d ln R/dv of the volume-equivalent radius at fixed mass and K; `None` for n = 3, where the
    /// mass does not depend on the central density (then the mass coefficient is the change of
    /// the limiting mass).
    pub radius_at_fixed_mass_coefficient: Option<f64>,
    /// The shape; `None` for the density-squared ansatz with τ ≠ 0 (see the module docs).
    pub shape: Option<SlowRotationShape>,
    /// The largest v trusted at first order.
    pub v_max: f64,
}

/// Fractional first-order changes at one v.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SlowRotationChange {
    /// v = Ω²/(2πGρ_c).
    pub v: f64,
    /// ΔM/M at fixed central density and K.
    pub mass: f64,
    /// ΔR/R of the volume-equivalent radius at fixed central density and K.
    pub mean_radius: f64,
    /// ΔR/R of the volume-equivalent radius at fixed mass and K (`None` for n = 3).
    pub radius_at_fixed_mass: Option<f64>,
}

impl SlowRotation {
    /// The fractional changes at v, or [`SlowRotationError::TooFastForFirstOrder`] beyond
    /// [`SlowRotation::v_max`].
    pub fn at(&self, v: f64) -> Result<SlowRotationChange, SlowRotationError> {
        if !(v.is_finite() && v >= 0.0) {
            return Err(SlowRotationError::InvalidV { v });
        }
        if v > self.v_max {
            return Err(SlowRotationError::TooFastForFirstOrder {
                v,
                v_max: self.v_max,
            });
        }
        Ok(SlowRotationChange {
            v,
            mass: v * self.mass_coefficient,
            mean_radius: v * self.mean_radius_coefficient,
            radius_at_fixed_mass: self.radius_at_fixed_mass_coefficient.map(|c| v * c),
        })
    }
}

/// v = Ω²/(2πGρ_c) from a spin period and a central density. G is CODATA 2018.
pub fn rotation_parameter_v(period_s: f64, central_density_kg_m3: f64) -> f64 {
    let omega = 2.0 * PI / period_s;
    omega * omega / (2.0 * PI * crate::constants::G_SI * central_density_kg_m3)
}

/// State: θ, μ, χ₀, m₀, χ₂, χ₂′.
type State = [f64; 6];

fn rhs(le: &ModifiedLaneEmden, e: f64, xi: f64, y: &State) -> Result<State, TheoryError> {
    let (p, _, _) = le.coefficients();
    let n = le.n();
    let [theta, mu, chi0, m0, chi2, dchi2] = *y;
    let [dtheta, dmu] = le.derivatives(xi, theta, mu)?;
    let d = le.denominator(xi, theta);
    let t = theta.max(0.0);
    // n θ^{n−1}/D, with θ^{n−1} = 1 for n = 1 and 0 outside the star.
    let tn1 = if t <= 0.0 {
        0.0
    } else if n == 1.0 {
        1.0
    } else {
        t.powf(n - 1.0)
    };
    let w = n * tn1 / d;
    let x2 = xi * xi;
    let dchi0 = (-p * m0 + e * xi * x2 * w * chi0 + p * xi * x2 / 3.0) / x2;
    let dm0 = x2 * w * chi0;
    let d2chi2 = -2.0 * dchi2 / xi + 6.0 * chi2 / x2 - p * w * chi2;
    Ok([dtheta, dmu, dchi0, dm0, dchi2, d2chi2])
}

/// The first-order rotation coefficients of the polytrope of index n at (ϒ, τ, ansatz).
///
/// Supported: 1 < n < 5 for any (ϒ, τ) with a model, and n = 1 at ϒ = 0 (where the surface
/// matching needs a smooth ϒ term, see `docs/rotation.md`). Errors are the structure's typed
/// errors (no regular centre, vanishing denominator, no surface, unsupported index).
pub fn slow_rotation(
    n: f64,
    upsilon: f64,
    tau: f64,
    anisotropy: Anisotropy,
) -> Result<SlowRotation, TheoryError> {
    let le = ModifiedLaneEmden::new(n, upsilon, tau, anisotropy)?;
    if !(n > 1.0 || (n == 1.0 && upsilon == 0.0)) {
        return Err(TheoryError::UnsupportedIndex {
            n,
            why: "slow rotation needs 1 < n < 5 (n = 1 only at ϒ = 0): the surface matching \
                  needs a ϒ term that is smooth across the surface",
        });
    }
    let (p, c, kappa) = le.coefficients();
    let e = kappa * upsilon / 2.0 - p * c;
    let [theta0, mu0] = le.central_series(XI0);
    let x2 = XI0 * XI0;
    let y0: State = [
        theta0,
        mu0,
        p * x2 / 6.0,
        n * p * x2 * x2 * XI0 / 30.0,
        x2,
        2.0 * XI0,
    ];
    let mut opts = OdeOptions::new(RTOL, 1e-14, XI0);
    opts.max_steps = 200_000;
    let mut event = |_x: f64, y: &State| y[0];
    let sol = solve(
        |x, y: &State| rhs(&le, e, x, y),
        XI0,
        y0,
        1e4,
        &opts,
        Some(&mut event),
    )?;
    if sol.stop != Stop::Event {
        return Err(TheoryError::NoSurface { xi_reached: sol.x });
    }
    // One Newton step onto θ = 0 (n ≥ 1: θ′ ≠ 0 at the surface), applied to every component.
    let dy = rhs(&le, e, sol.x, &sol.y)?;
    let dxi = if dy[0] != 0.0 { -sol.y[0] / dy[0] } else { 0.0 };
    let mut y = sol.y;
    for (yi, di) in y.iter_mut().zip(dy.iter()) {
        *yi += di * dxi;
    }
    let xi1 = sol.x + dxi;
    let [_, omega, chi0, m0, chi2, dchi2] = y;
    let d1 = le.denominator(xi1, 0.0);
    let slope = le.derivatives(xi1, 0.0, omega)?[0].abs();
    let psi0 = chi0 / d1;
    let shape = if anisotropy == Anisotropy::DensitySquared && tau != 0.0 {
        None
    } else {
        let a2 = -5.0 / 6.0 * p * xi1 * xi1 / (3.0 * chi2 + xi1 * dchi2);
        let a2_psi2 = a2 * chi2 / d1;
        let per = 1.0 / (xi1 * slope);
        Some(SlowRotationShape {
            a2_psi2,
            equatorial_radius_coefficient: (psi0 - 0.5 * a2_psi2) * per,
            polar_radius_coefficient: (psi0 + a2_psi2) * per,
        })
    };
    SlowRotation::assemble(
        SurfaceValues {
            n,
            upsilon,
            tau,
            anisotropy,
            xi1,
            omega,
            psi0,
            m0,
            mean_radius_coefficient: psi0 / (xi1 * slope),
        },
        shape,
    )
}

/// What the first-order solution gives at the surface, from which every coefficient of
/// [`SlowRotation`] follows: the one place where they are combined, shared by the direct solve
/// and the interpolated table ([`crate::theory::slow_rotation_table`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct SurfaceValues {
    pub n: f64,
    pub upsilon: f64,
    pub tau: f64,
    pub anisotropy: Anisotropy,
    pub xi1: f64,
    pub omega: f64,
    pub psi0: f64,
    pub m0: f64,
    /// ψ₀(ξ₁)/(ξ₁|θ′(ξ₁)|).
    pub mean_radius_coefficient: f64,
}

impl SlowRotation {
    /// The coefficients from the surface values (derived quantities computed here only).
    pub(crate) fn assemble(
        s: SurfaceValues,
        shape: Option<SlowRotationShape>,
    ) -> Result<SlowRotation, TheoryError> {
        let SurfaceValues {
            n,
            upsilon,
            tau,
            anisotropy,
            xi1,
            omega,
            psi0,
            m0,
            mean_radius_coefficient,
        } = s;
        let mass_coefficient = m0 / omega;
        let radius_at_fixed_mass_coefficient = if (n - 3.0).abs() < 1e-12 {
            None
        } else {
            // R ∝ ρ_c^{(1−n)/(2n)} ξ_R and M ∝ ρ_c^{(3−n)/(2n)} μ at fixed K: at fixed M,
            // δ ln ρ_c = −(2n/(3−n)) δ ln μ, so δ ln R = −((1−n)/(3−n)) δ ln μ + δ ln ξ_R.
            Some(mean_radius_coefficient - (1.0 - n) / (3.0 - n) * mass_coefficient)
        };
        let v_crit = 2.0 * omega / (1.5_f64.powi(3) * xi1.powi(3));
        let out = SlowRotation {
            n,
            upsilon,
            tau,
            anisotropy,
            xi1,
            omega,
            psi0_surface: psi0,
            m0_surface: m0,
            mass_coefficient,
            mean_radius_coefficient,
            radius_at_fixed_mass_coefficient,
            shape,
            v_max: FIRST_ORDER_MAX_FRACTION_OF_BREAKUP * v_crit,
        };
        let finite = [
            out.xi1,
            out.omega,
            out.mass_coefficient,
            out.mean_radius_coefficient,
            out.v_max,
        ]
        .iter()
        .all(|x| x.is_finite())
            && out.shape.is_none_or(|s| s.a2_psi2.is_finite());
        if !finite {
            return Err(TheoryError::NumericalFailure {
                xi: xi1,
                why: "non-finite first-order rotation coefficient",
            });
        }
        Ok(out)
    }
}
