//! The modified Lane–Emden problem: polytropes with partly broken Vainshtein screening (ϒ) and
//! pressure anisotropy (τ).
//!
//! One job: solve the first-order system of `docs/structure.md` §3.2,
//!
//!   θ′ = −p [μ + c ξ³ θⁿ] / { ξ² [1 + κ (nϒ/4) ξ² θ^{n−1}] },   μ′ = ξ² θⁿ,
//!
//! with (p, c, κ) = (1, ϒ/2, 1) isotropic, (1, ϒ/2 − τ/3, 1) for the density-squared ansatz (a)
//! and (1 − τ, ϒ/2, 1 − τ) for the gradient ansatz (b), from the central series (§3.3) to the
//! surface θ = 0, reached by a change of variable near the surface or by a terminal event on
//! the dense output plus one Newton step (§3.5; [`SurfaceMethod`]). Results are in the true-G
//! length unit of `docs/bounds.md` §1. Standard gravity (ϒ = τ = 0) is the classical Lane–Emden
//! equation (Chandrasekhar 1939, Ch. IV).
//!
//! Speed (one solve is the unit of every grid): Dormand–Prince 8(5,3) ([`crate::theory::ode`]),
//! θⁿ and θ^{n−1} by products and one square root for n = 3/2 and 3, and one state slot per
//! extra integral; `benches/run.sh` times it against scipy on the same equations.
//!
//! ```
//! use dwarfbound::theory::lane_emden::{LaneEmdenOptions, ModifiedLaneEmden};
//! use dwarfbound::theory::Anisotropy;
//!
//! let le = ModifiedLaneEmden::new(1.5, 0.0, 0.0, Anisotropy::None).unwrap();
//! let sol = le.solve(&LaneEmdenOptions::default()).unwrap();
//! // Chandrasekhar 1939, Table 4: ξ1 = 3.65375, ω = 2.71406 for n = 3/2.
//! assert!((sol.xi1 - 3.65375).abs() < 1e-5);
//! assert!((sol.omega - 2.71406).abs() < 1e-5);
//! ```

use crate::theory::error::TheoryError;
use crate::theory::ode::{self, OdeMethod, OdeOptions, Stop};
use crate::theory::Anisotropy;

/// The denominator D below which the structure equation is treated as singular
/// (`docs/structure.md` §1.3 and §3.5.4).
pub const DENOMINATOR_FLOOR: f64 = 1e-9;

/// Relativistic existence bound ϒ₁ > −4/9 of Babichev, Koyama, Langlois, Saito & Sakstein 2016
/// (arXiv:1606.06627, abstract). Below it a solution is still returned, with a warning flag.
pub const UPSILON_RELATIVISTIC_MIN: f64 = -4.0 / 9.0;

/// At most this many extra integrals J_k can be requested in one solve.
pub const MAX_EXTRA_INTEGRALS: usize = 4;

/// Numerical settings of a Lane–Emden solve.
#[derive(Debug, Clone, PartialEq)]
pub struct LaneEmdenOptions {
    /// Relative tolerance of the integrator.
    pub rtol: f64,
    /// Absolute tolerance of the integrator.
    pub atol: f64,
    /// Where the central series hands over to the integrator (ξ₀ ≈ 1e-4, §3.3).
    pub xi_start: f64,
    /// Give up (`NoSurface`) if θ has not reached 0 by here.
    pub xi_max: f64,
    /// Exponents k of extra integrals J_k = ∫₀^{ξ1} ξ² θ^k dξ, integrated as extra state
    /// components (at most [`MAX_EXTRA_INTEGRALS`]; `docs/bounds.md` model A needs k = 9.73).
    pub extra_powers: Vec<f64>,
    /// How the surface θ = 0 is reached.
    pub surface: SurfaceMethod,
}

/// How the surface is located (`docs/structure.md` §3.5.3; both agree to ≤ 1e-10).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SurfaceMethod {
    /// Integrate in ξ until θ changes sign, find the root on the dense output, then one Newton
    /// step ξ1 ← ξ_e − θ/θ′ (§3.5.3 method i). Near the surface θ^{n−1} makes θ″ singular for
    /// 1 < n < 2 with ϒ ≠ 0, so the steps that straddle it shrink to ~1e-5; and max(θ, 0)ⁿ is
    /// not smooth at θ = 0, so the last step (which straddles the surface) is integrated again
    /// from its start to the root.
    EventNewton,
    /// Integrate in ξ down to θ = `theta_switch`, then take s = √θ as the independent variable
    /// and integrate dξ/ds = 2s/θ′ (and μ, J_k alike) to s = 0 exactly (a variant of §3.5.3
    /// method ii: in s the half-integer powers θ^{n−1} = s^{2n−2} are smooth, so it needs far
    /// fewer steps). The default.
    SqrtSwap {
        /// θ at which the variable changes (0.05 in the spec's reference).
        theta_switch: f64,
    },
}

impl Default for LaneEmdenOptions {
    /// rtol 1e-12, atol 1e-14 (the reference tolerances of `docs/structure.md` §3.5), ξ₀ = 1e-4,
    /// ξ_max = 1e6, no extra integrals, surface by [`SurfaceMethod::SqrtSwap`] at θ = 0.05.
    fn default() -> Self {
        Self {
            rtol: 1e-12,
            atol: 1e-14,
            xi_start: 1e-4,
            xi_max: 1e6,
            extra_powers: Vec::new(),
            surface: SurfaceMethod::SqrtSwap { theta_switch: 0.05 },
        }
    }
}

impl LaneEmdenOptions {
    /// Default settings plus the extra integrals J_k for the given exponents.
    pub fn with_extra_powers(powers: &[f64]) -> Self {
        Self {
            extra_powers: powers.to_vec(),
            ..Self::default()
        }
    }
}

/// The modified Lane–Emden system at one (n, ϒ, τ, ansatz), validated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ModifiedLaneEmden {
    n: f64,
    upsilon: f64,
    tau: f64,
    anisotropy: Anisotropy,
    p: f64,
    c: f64,
    kappa: f64,
    powers: IndexPowers,
}

/// How θⁿ and θ^{n−1} are formed for this index: the half-integer and integer indices of the
/// theory (3/2 and 3) by products and one square root instead of `powf`, others from one
/// `powf` (θ^{n−1} = θⁿ/θ). All equal max(θ, 0)^k to rounding.
#[derive(Debug, Clone, Copy, PartialEq)]
enum IndexPowers {
    /// n = 0.
    Zero,
    /// n = 1.
    One,
    /// n = 3/2: θ√θ and √θ.
    ThreeHalves,
    /// n = 2, 3 or 4: products.
    Integer(u8),
    /// Any other n.
    General,
}

impl IndexPowers {
    fn for_index(n: f64) -> Self {
        if n == 0.0 {
            Self::Zero
        } else if n == 1.0 {
            Self::One
        } else if n == 1.5 {
            Self::ThreeHalves
        } else if n == 2.0 || n == 3.0 || n == 4.0 {
            Self::Integer(n as u8)
        } else {
            Self::General
        }
    }
}

/// One solved polytrope: the surface and the constants derived from it, in true-G units.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct LaneEmdenSolution {
    /// Polytropic index.
    pub n: f64,
    /// ϒ.
    pub upsilon: f64,
    /// τ.
    pub tau: f64,
    /// The anisotropy ansatz τ refers to.
    pub anisotropy: Anisotropy,
    /// First zero of θ.
    pub xi1: f64,
    /// ω_n = μ(ξ1), the mass integral.
    pub omega: f64,
    /// −ξ1² θ′(ξ1⁻); equals ω only in the cases listed in `docs/structure.md` §3.4.
    pub surface_slope: f64,
    /// (k, J_k) for each requested extra integral, in the order asked.
    pub extra_integrals: Vec<(f64, f64)>,
    /// Warning, not an error: ϒ is below the relativistic existence bound −4/9 of Babichev et
    /// al. 2016 (theoretically disfavoured, `docs/structure.md` §1.4).
    pub below_relativistic_bound: bool,
}

impl LaneEmdenSolution {
    /// Central over mean density ρ_c/ρ̄ = ξ1³/(3ω).
    pub fn density_contrast(&self) -> f64 {
        self.xi1.powi(3) / (3.0 * self.omega)
    }

    /// N_n of K = N_n G M^{(n−1)/n} R^{(3−n)/n}: [(4π)^{1/n}/(n+1)] ξ1^{(n−3)/n} ω^{−(n−1)/n}
    /// (`docs/structure.md` §3.4). For n = 0 (incompressible: no K relation) it is +∞.
    pub fn n_n(&self) -> f64 {
        let n = self.n;
        if n == 0.0 {
            return f64::INFINITY;
        }
        (4.0 * std::f64::consts::PI).powf(1.0 / n) / (n + 1.0)
            * self.xi1.powf((n - 3.0) / n)
            * self.omega.powf(-(n - 1.0) / n)
    }

    /// W_n of P_c = W_n G M²/R⁴: ξ1⁴/[4π(n+1)ω²].
    pub fn w_n(&self) -> f64 {
        self.xi1.powi(4) / (4.0 * std::f64::consts::PI * (self.n + 1.0) * self.omega.powi(2))
    }

    /// γ = 1/N_n. For n = 3/2 this is (5ξ1/(8π))(4πω)^{1/3}, the γ of `docs/bounds.md` §1 with
    /// R = γK/(G M^{1/3}).
    pub fn gamma(&self) -> f64 {
        1.0 / self.n_n()
    }

    /// J_k for an exponent that was requested (matched to 1e-12), if any.
    pub fn extra_integral(&self, k: f64) -> Option<f64> {
        self.extra_integrals
            .iter()
            .find(|(kk, _)| (kk - k).abs() <= 1e-12 * k.abs().max(1.0))
            .map(|(_, j)| *j)
    }

    /// The gradient-ansatz (b) solution at τ from this τ = 0 solution by the exact rescaling
    /// G → (1 − τ)G of `docs/structure.md` §2.2 (s = 1 − τ): ξ1/√s, ω/s^{3/2}, J_k/s^{3/2},
    /// −ξ1²θ′/√s. Refuses a solution that is not isotropic or τ ≥ 1.
    pub fn rescaled_to_gradient(&self, tau: f64) -> Result<LaneEmdenSolution, TheoryError> {
        if self.tau != 0.0 {
            return Err(TheoryError::InvalidParameter {
                name: "tau",
                value: self.tau,
                why: "the rescaling starts from a τ = 0 solution",
            });
        }
        check_tau(tau, Anisotropy::Gradient)?;
        let s = 1.0 - tau;
        let s32 = s * s.sqrt();
        Ok(LaneEmdenSolution {
            n: self.n,
            upsilon: self.upsilon,
            tau,
            anisotropy: Anisotropy::Gradient,
            xi1: self.xi1 / s.sqrt(),
            omega: self.omega / s32,
            surface_slope: self.surface_slope / s.sqrt(),
            extra_integrals: self
                .extra_integrals
                .iter()
                .map(|(k, j)| (*k, j / s32))
                .collect(),
            below_relativistic_bound: self.below_relativistic_bound,
        })
    }
}

/// One sample of the interior solution.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ProfilePoint {
    /// ξ.
    pub xi: f64,
    /// θ(ξ).
    pub theta: f64,
    /// μ(ξ) = ∫₀^ξ ξ′²θⁿ dξ′.
    pub mu: f64,
}

fn check_tau(tau: f64, anisotropy: Anisotropy) -> Result<(), TheoryError> {
    if !tau.is_finite() {
        return Err(TheoryError::InvalidParameter {
            name: "tau",
            value: tau,
            why: "must be finite",
        });
    }
    match anisotropy {
        Anisotropy::None if tau != 0.0 => Err(TheoryError::InvalidParameter {
            name: "tau",
            value: tau,
            why: "isotropic pressure needs τ = 0 (choose an anisotropy ansatz)",
        }),
        Anisotropy::Gradient if tau >= 1.0 => Err(TheoryError::InvalidParameter {
            name: "tau",
            value: tau,
            why: "the gradient ansatz needs τ < 1",
        }),
        _ => Ok(()),
    }
}

/// max(θ, 0)^k, so that overshooting trial stages past the surface stay finite (§3.5.2).
/// General k by exp(k ln θ): two libm calls, measured faster than `powf`, relative error about
/// (|k ln θ| + 2) ulp (≤ 1e-14 where θ^k matters), far below the integrator's tolerances.
/// Not inlined: that keeps the integrator's right-hand side small enough to be inlined itself.
#[inline(never)]
fn pos_pow(theta: f64, k: f64) -> f64 {
    if k == 0.0 {
        1.0
    } else if theta <= 0.0 {
        0.0
    } else if k == 1.0 {
        theta
    } else if k == 1.5 {
        theta * theta.sqrt()
    } else if k == 3.0 {
        theta * theta * theta
    } else if k == 0.5 {
        theta.sqrt()
    } else if k == 2.0 {
        theta * theta
    } else {
        (k * theta.ln()).exp()
    }
}

impl ModifiedLaneEmden {
    /// Validates (n, ϒ, τ, ansatz) and sets up the system.
    ///
    /// Errors: n outside [0, 5) or 0 < n < 1 with ϒ ≠ 0 (`UnsupportedIndex`, §3.5.5; n = 0 with
    /// ϒ ≠ 0 is kept as the closed-form test case of §3.6, interior only); non-finite ϒ or τ,
    /// τ ≠ 0 without an ansatz, τ ≥ 1 for ansatz (b) (`InvalidParameter`); central coefficient
    /// a ≤ 0, i.e. ϒ ≤ −2(1−τ)/3 for (a) and ϒ ≤ −2/3 for (b) (`NoRegularCentre`, §1.4).
    pub fn new(
        n: f64,
        upsilon: f64,
        tau: f64,
        anisotropy: Anisotropy,
    ) -> Result<Self, TheoryError> {
        if !n.is_finite() || !(0.0..5.0).contains(&n) {
            return Err(TheoryError::UnsupportedIndex {
                n,
                why: "the polytropic index must lie in [0, 5) (n ≥ 5 has no finite surface)",
            });
        }
        if !upsilon.is_finite() {
            return Err(TheoryError::InvalidParameter {
                name: "upsilon",
                value: upsilon,
                why: "must be finite",
            });
        }
        check_tau(tau, anisotropy)?;
        if n > 0.0 && n < 1.0 && upsilon != 0.0 {
            return Err(TheoryError::UnsupportedIndex {
                n,
                why: "0 < n < 1 is supported only for ϒ = 0 (for ϒ < 0 the denominator always \
                      vanishes at the surface; docs/structure.md §1.3, §3.5.5)",
            });
        }
        let (p, c, kappa) = match anisotropy {
            Anisotropy::None => (1.0, upsilon / 2.0, 1.0),
            Anisotropy::DensitySquared => (1.0, upsilon / 2.0 - tau / 3.0, 1.0),
            Anisotropy::Gradient => (1.0 - tau, upsilon / 2.0, 1.0 - tau),
        };
        let le = Self {
            n,
            upsilon,
            tau,
            anisotropy,
            p,
            c,
            kappa,
            powers: IndexPowers::for_index(n),
        };
        let a = le.central_coefficient();
        if a.is_nan() || a <= 0.0 {
            let upsilon_min = match anisotropy {
                Anisotropy::DensitySquared => -2.0 * (1.0 - tau) / 3.0,
                _ => -2.0 / 3.0,
            };
            return Err(TheoryError::NoRegularCentre {
                a,
                upsilon,
                tau,
                upsilon_min,
            });
        }
        Ok(le)
    }

    /// Polytropic index n.
    pub fn n(&self) -> f64 {
        self.n
    }

    /// (p, c, κ) of the table in `docs/structure.md` §3.2.
    pub fn coefficients(&self) -> (f64, f64, f64) {
        (self.p, self.c, self.kappa)
    }

    /// a of θ ≈ 1 − aξ²: p(1/3 + c)/2 (§3.3).
    pub fn central_coefficient(&self) -> f64 {
        self.p * (1.0 / 3.0 + self.c) / 2.0
    }

    /// The central series (θ, μ) at small ξ: θ = 1 − aξ² + bξ⁴, μ = ξ³/3 − (na/5)ξ⁵ (§3.3).
    pub fn central_series(&self, xi: f64) -> [f64; 2] {
        let a = self.central_coefficient();
        let b = self.n * a / 4.0 * (self.kappa * self.upsilon / 2.0 + self.p * (0.2 + self.c));
        let x2 = xi * xi;
        [
            1.0 - a * x2 + b * x2 * x2,
            xi * x2 / 3.0 - self.n * a / 5.0 * xi * x2 * x2,
        ]
    }

    /// D = 1 + κ(nϒ/4)ξ²θ^{n−1} (θ clamped at 0; exactly 1 when ϒ = 0).
    pub fn denominator(&self, xi: f64, theta: f64) -> f64 {
        if self.upsilon == 0.0 {
            return 1.0;
        }
        let (_, tn1) = self.index_powers(theta);
        1.0 + self.kappa * self.n * self.upsilon / 4.0 * xi * xi * tn1
    }

    /// (max(θ, 0)ⁿ, max(θ, 0)^{n−1}), the second only meaningful where D uses it (n ≥ 1 when
    /// ϒ ≠ 0). Fast paths of [`IndexPowers`].
    #[inline(always)]
    fn index_powers(&self, theta: f64) -> (f64, f64) {
        match self.powers {
            IndexPowers::Zero => (1.0, 0.0),
            IndexPowers::One => (theta.max(0.0), 1.0),
            _ if theta <= 0.0 => (0.0, 0.0),
            IndexPowers::ThreeHalves => {
                let r = theta.sqrt();
                (theta * r, r)
            }
            IndexPowers::Integer(2) => (theta * theta, theta),
            IndexPowers::Integer(3) => {
                let t2 = theta * theta;
                (t2 * theta, t2)
            }
            IndexPowers::Integer(_) => {
                let t3 = theta * theta * theta;
                (t3 * theta, t3)
            }
            IndexPowers::General => {
                let tn = theta.powf(self.n);
                (tn, tn / theta)
            }
        }
    }

    /// (θ′, μ′) at (ξ, θ, μ); `DenominatorVanishes` when D ≤ [`DENOMINATOR_FLOOR`].
    pub fn derivatives(&self, xi: f64, theta: f64, mu: f64) -> Result<[f64; 2], TheoryError> {
        let (dt, dm, _) = self.rates(xi, theta, mu)?;
        Ok([dt, dm])
    }

    /// θ′, μ′ and max(θ, 0)ⁿ (which the extra integrals reuse when k = n).
    #[inline(always)]
    fn rates(&self, xi: f64, theta: f64, mu: f64) -> Result<(f64, f64, f64), TheoryError> {
        let (tn, tn1) = self.index_powers(theta);
        let x2 = xi * xi;
        // ξ²D is formed as ξ² + (K ξ⁴) θ^{n−1} rather than ξ²·(1 + (K ξ²) θ^{n−1}): one
        // multiplication less between θ and the division (the integrator is latency-bound).
        let (d, x2d) = if self.upsilon == 0.0 {
            (1.0, x2)
        } else {
            let kd = self.kappa * self.n * self.upsilon / 4.0;
            (1.0 + kd * x2 * tn1, x2 + kd * (x2 * x2) * tn1)
        };
        if d.is_nan() || d <= DENOMINATOR_FLOOR {
            return Err(TheoryError::DenominatorVanishes { xi, d });
        }
        let mut num = mu;
        if self.c != 0.0 {
            num += self.c * x2 * xi * tn;
        }
        Ok((-self.p * num / x2d, x2 * tn, tn))
    }

    /// max(θ, 0)^k for an extra integral, reusing θⁿ when k = n.
    #[inline(always)]
    fn extra_power(&self, theta: f64, k: f64, tn: f64) -> f64 {
        if k == self.n {
            tn
        } else {
            pos_pow(theta, k)
        }
    }

    /// The exponents of the extra integrals in state slots 2.. (N = 2 + their number).
    fn extra_exponents<const N: usize>(opts: &LaneEmdenOptions) -> [f64; N] {
        std::array::from_fn(|i| {
            if i >= 2 {
                opts.extra_powers.get(i - 2).copied().unwrap_or(0.0)
            } else {
                0.0
            }
        })
    }

    /// Integrator settings: Dormand–Prince 8(5,3), which needs about half the 5(4) pair's
    /// right-hand-side evaluations at rtol ≈ 1e-10 (counts in the `ode` module doc).
    fn ode_options<const N: usize>(opts: &LaneEmdenOptions, first_step: f64) -> OdeOptions<N> {
        let mut oo = OdeOptions::<N>::new(opts.rtol, opts.atol, first_step);
        oo.max_steps = 200_000;
        oo.method = OdeMethod::DormandPrince853;
        oo
    }

    /// The right-hand side in ξ of the state (θ, μ, J_k…).
    #[inline(always)]
    fn rhs_xi<const N: usize>(
        &self,
        powers: &[f64; N],
        xi: f64,
        y: &[f64; N],
    ) -> Result<[f64; N], TheoryError> {
        let (dt, dm, tn) = self.rates(xi, y[0], y[1])?;
        let x2 = xi * xi;
        let mut out = [dt; N];
        out[1] = dm;
        for i in 2..N {
            out[i] = x2 * self.extra_power(y[0], powers[i], tn);
        }
        Ok(out)
    }

    /// From the centre to the first point where θ = `theta_stop` (an event on the dense
    /// output). For `theta_stop` = 0 the step that found the root straddles the surface, where
    /// max(θ, 0)ⁿ is not smooth and the step's accuracy is of low order; that last piece is
    /// therefore integrated again from the step's start to the root, inside the star.
    fn integrate<const N: usize>(
        &self,
        opts: &LaneEmdenOptions,
        theta_stop: f64,
    ) -> Result<(f64, [f64; N], Stop), TheoryError> {
        let powers: [f64; N] = Self::extra_exponents(opts);
        let rhs = |xi: f64, y: &[f64; N]| self.rhs_xi(&powers, xi, y);
        let x0 = opts.xi_start;
        let s = self.central_series(x0);
        let a = self.central_coefficient();
        let y0: [f64; N] = std::array::from_fn(|i| match i {
            0 => s[0],
            1 => s[1],
            _ => x0.powi(3) / 3.0 - powers[i] * a / 5.0 * x0.powi(5),
        });
        // θ is analytic in ξ² with a radius of convergence of order ξ1 ≳ 1, so an eighth-order
        // step of ~rtol^{1/9} is accepted at once from the centre (rather than growing from ξ₀).
        let first_step = (0.5 * opts.rtol.powf(1.0 / 9.0)).clamp(x0, 0.1);
        let oo = Self::ode_options::<N>(opts, first_step);
        let mut g = |_x: f64, y: &[f64; N]| y[0] - theta_stop;
        let sol = ode::solve(rhs, x0, y0, opts.xi_max, &oo, Some(&mut g))?;
        match (sol.stop, sol.last_step) {
            (Stop::Event, Some(step)) if theta_stop <= 0.0 && step.x_start() < sol.x => {
                let xa = step.x_start();
                let ya = step.eval(xa);
                let oo = Self::ode_options::<N>(opts, sol.x - xa);
                let again = ode::solve(rhs, xa, ya, sol.x, &oo, None)?;
                Ok((sol.x, again.y, Stop::Event))
            }
            _ => Ok((sol.x, sol.y, sol.stop)),
        }
    }

    fn check_options(opts: &LaneEmdenOptions) -> Result<(), TheoryError> {
        let bad = |name, value, why| Err(TheoryError::InvalidParameter { name, value, why });
        if opts.extra_powers.len() > MAX_EXTRA_INTEGRALS {
            return bad(
                "extra_powers",
                opts.extra_powers.len() as f64,
                "at most 4 extra integrals",
            );
        }
        if let Some(k) = opts
            .extra_powers
            .iter()
            .find(|k| !(k.is_finite() && **k >= 0.0))
        {
            return bad("extra_powers", *k, "exponents must be finite and ≥ 0");
        }
        if !(opts.xi_start > 0.0 && opts.xi_start <= 1e-2) {
            return bad("xi_start", opts.xi_start, "must lie in (0, 1e-2]");
        }
        if !(opts.xi_max > 1.0 && opts.xi_max.is_finite()) {
            return bad("xi_max", opts.xi_max, "must be finite and > 1");
        }
        if let SurfaceMethod::SqrtSwap { theta_switch } = opts.surface {
            if !(theta_switch > 0.0 && theta_switch <= 0.5) {
                return bad("theta_switch", theta_switch, "must lie in (0, 0.5]");
            }
        }
        if !(opts.rtol > 0.0 && opts.atol > 0.0) {
            return bad("rtol", opts.rtol, "tolerances must be positive");
        }
        Ok(())
    }

    /// Solves to the surface. See [`LaneEmdenSolution`] for the outputs.
    pub fn solve(&self, opts: &LaneEmdenOptions) -> Result<LaneEmdenSolution, TheoryError> {
        Self::check_options(opts)?;
        // One state slot per extra integral: no idle components in the error norm.
        match opts.extra_powers.len() {
            0 => self.solve_n::<2>(opts),
            1 => self.solve_n::<3>(opts),
            2 => self.solve_n::<4>(opts),
            3 => self.solve_n::<5>(opts),
            _ => self.solve_n::<6>(opts),
        }
    }

    fn solve_n<const N: usize>(
        &self,
        opts: &LaneEmdenOptions,
    ) -> Result<LaneEmdenSolution, TheoryError> {
        let theta_stop = match opts.surface {
            SurfaceMethod::EventNewton => 0.0,
            SurfaceMethod::SqrtSwap { theta_switch } => theta_switch,
        };
        let (xe, ye, stop) = self.integrate::<N>(opts, theta_stop)?;
        if stop != Stop::Event {
            return Err(TheoryError::NoSurface { xi_reached: xe });
        }
        let (xi1, y) = if theta_stop > 0.0 {
            self.sqrt_swap::<N>(opts, xe, ye)?
        } else {
            self.newton_step::<N>(opts, xe, ye)?
        };
        let omega = y[1];
        let [dt1, _] = self.derivatives(xi1, 0.0, omega)?;
        Ok(LaneEmdenSolution {
            n: self.n,
            upsilon: self.upsilon,
            tau: self.tau,
            anisotropy: self.anisotropy,
            xi1,
            omega,
            surface_slope: -xi1 * xi1 * dt1,
            extra_integrals: opts
                .extra_powers
                .iter()
                .enumerate()
                .map(|(i, k)| (*k, y[2 + i]))
                .collect(),
            below_relativistic_bound: self.upsilon < UPSILON_RELATIVISTIC_MIN,
        })
    }

    /// One Newton step from the event point (valid for n ≥ 1, §3.5.3): it removes what the
    /// dense-output root leaves of θ and carries μ and J_k along the tangent.
    fn newton_step<const N: usize>(
        &self,
        opts: &LaneEmdenOptions,
        xe: f64,
        ye: [f64; N],
    ) -> Result<(f64, [f64; N]), TheoryError> {
        let mut xi1 = xe;
        let mut y = ye;
        if self.n >= 1.0 {
            let [dt, dm] = self.derivatives(xe, ye[0], ye[1])?;
            if dt < 0.0 && dt.is_finite() {
                let dx = -ye[0] / dt;
                xi1 = xe + dx;
                y[1] += dm * dx;
                for (i, k) in opts.extra_powers.iter().enumerate() {
                    y[2 + i] += xe * xe * pos_pow(ye[0], *k) * dx;
                }
            }
        }
        Ok((xi1, y))
    }

    /// From θ = θ_switch at ξ_e to the surface with s = √θ as the independent variable; the
    /// state becomes (ξ, μ, J_k…). θ′ < 0 there for every supported case (μ dominates the
    /// numerator near the surface); a non-negative θ′ is refused rather than divided by.
    fn sqrt_swap<const N: usize>(
        &self,
        opts: &LaneEmdenOptions,
        xe: f64,
        ye: [f64; N],
    ) -> Result<(f64, [f64; N]), TheoryError> {
        let powers: [f64; N] = Self::extra_exponents(opts);
        let rhs = |s: f64, z: &[f64; N]| -> Result<[f64; N], TheoryError> {
            let theta = s * s;
            let xi = z[0];
            if xi.is_nan() || xi > opts.xi_max {
                // θ creeping towards 0 without reaching it (e.g. θ ∝ ξ^{−4/3} at very large ϒ).
                return Err(TheoryError::NoSurface { xi_reached: xi });
            }
            let (dt, dm, tn) = self.rates(xi, theta, z[1])?;
            if dt.is_nan() || dt >= 0.0 {
                return Err(TheoryError::NumericalFailure {
                    xi,
                    why: "θ′ ≥ 0 near the surface",
                });
            }
            let dxi = 2.0 * s / dt;
            let x2 = xi * xi;
            let mut out = [dxi; N];
            out[1] = dm * dxi;
            for i in 2..N {
                out[i] = x2 * self.extra_power(theta, powers[i], tn) * dxi;
            }
            Ok(out)
        };
        let s0 = ye[0].max(0.0).sqrt();
        let mut z0 = ye;
        z0[0] = xe;
        let oo = Self::ode_options::<N>(opts, s0 / 16.0);
        let sol = ode::solve(rhs, s0, z0, 0.0, &oo, None)?;
        let mut y = sol.y;
        let xi1 = y[0];
        y[0] = 0.0;
        Ok((xi1, y))
    }

    /// θ and μ at `count` equally spaced ξ in (0, ξ1] (the last point is the surface, θ = 0),
    /// by continuing one integration from point to point. For plots and property tests.
    pub fn profile(
        &self,
        opts: &LaneEmdenOptions,
        count: usize,
    ) -> Result<Vec<ProfilePoint>, TheoryError> {
        let base = LaneEmdenOptions {
            extra_powers: Vec::new(),
            ..opts.clone()
        };
        let sol = self.solve(&base)?;
        let mut out = Vec::with_capacity(count);
        let mut x = base.xi_start;
        let mut y = self.central_series(x);
        let mut oo = Self::ode_options::<2>(&base, x);
        for i in 1..=count {
            let xt = sol.xi1 * i as f64 / count as f64;
            if i == count {
                out.push(ProfilePoint {
                    xi: sol.xi1,
                    theta: 0.0,
                    mu: sol.omega,
                });
                break;
            }
            if xt <= x {
                let s = self.central_series(xt);
                out.push(ProfilePoint {
                    xi: xt,
                    theta: s[0],
                    mu: s[1],
                });
                continue;
            }
            let r = ode::solve(
                |xi, y: &[f64; 2]| self.derivatives(xi, y[0], y[1]),
                x,
                y,
                xt,
                &oo,
                None,
            )?;
            oo.first_step = r
                .last_step
                .map(|d| (d.x_end() - d.x_start()).abs())
                .unwrap_or(oo.first_step);
            x = r.x;
            y = r.y;
            out.push(ProfilePoint {
                xi: x,
                theta: y[0],
                mu: y[1],
            });
        }
        Ok(out)
    }
}

/// Convenience: solve (n, ϒ, τ, ansatz) with default options.
pub fn solve_lane_emden(
    n: f64,
    upsilon: f64,
    tau: f64,
    anisotropy: Anisotropy,
) -> Result<LaneEmdenSolution, TheoryError> {
    ModifiedLaneEmden::new(n, upsilon, tau, anisotropy)?.solve(&LaneEmdenOptions::default())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn standard_n3_matches_measured_reference() {
        // ξ1 = 6.89684861937696 for n = 3 (Chandrasekhar 1939
        // Table 4 prints 6.89685).
        let s = solve_lane_emden(3.0, 0.0, 0.0, Anisotropy::None).unwrap();
        assert!((s.xi1 / 6.89684861937696 - 1.0).abs() < 1e-10, "{}", s.xi1);
        assert!(
            (s.omega / 2.018235950966228 - 1.0).abs() < 1e-10,
            "{}",
            s.omega
        );
    }
}
