//! Equation of state of white-dwarf matter at finite temperature: relativistic Fermi–Dirac
//! electrons, ideal ions, radiation and Salpeter's (1961) electrostatic corrections (lattice,
//! exchange, Thomas–Fermi), with the analytic derivatives the structure equations need.
//!
//! Salpeter's corrections are zero-temperature expansions in the electron density n_e (Fermi
//! momentum x = p_F/(m_e c) = λ_e(3π²n_e)^{1/3}). What is included, per unit volume:
//! - lattice (ion sphere): P_C = −(3/10)(4π/3)^{1/3}⟨Z^{5/3}⟩/⟨Z⟩ e′² n_e^{4/3};
//! - exchange of the relativistic electron gas: ε_x = −(e′²/(4π³λ_e⁴)) x⁴ Φ(x),
//!   Φ = 1 − (3/2)[(x√(1+x²) − asinh x)/x²]², so P_x = −(e′²/(12π³λ_e⁴)) x⁴ (Φ + xΦ′)
//!   (non-relativistically −(3/4)(3/π)^{1/3}e′²n_e^{1/3} per electron, i.e. 0.458 e′²/a_e,
//!   Salpeter's value; the relativistic factor Φ is the Akhiezer–Berestetskii form as quoted by
//!   MacDonald & Vosko 1979 — from memory);
//! - Thomas–Fermi (the electrons' linear response to the ion inside its neutral cell, electron
//!   number conserved): per electron −(162/175)(4/(9π))^{2/3} α² ⟨Z^{7/3}⟩/⟨Z⟩ m_e c² √(1+x²),
//!   i.e. Salpeter's −(324/175)(4/(9π))^{2/3}Z^{4/3} Ry non-relativistically (coefficient from
//!   memory, re-derived here from the ion-sphere potential), so
//!   P_TF = −(54/175)(4/(9π))^{2/3} α² ⟨Z^{7/3}⟩/⟨Z⟩ m_e c² n_e x²/√(1+x²).
//!
//! Left out: the correlation energy of the electron gas (Gell-Mann–Brueckner, per electron
//! 0.0622 ln r_s − 0.096 Ry; its pressure −0.0207 Ry n_e is ≲ 10⁻³ of the exchange pressure at
//! white-dwarf densities, r_s ≲ 0.05) and Salpeter's higher-order terms in Z^{2/3}α/x.
//! The corrections are applied at every temperature as functions of n_e alone (a stated choice,
//! as for the lattice term: in the non-degenerate layers they are negligible against n k_B T).
//!
//! One job: map (η, T, composition) to n_e, ρ, P and ∂/∂η, ∂/∂T of ρ and P. η is the electrons'
//! kinetic chemical potential in units of k_B T (no positrons; fully ionised matter). The
//! electron integrals use the generalised Fermi–Dirac form of Chandrasekhar (1939) as single
//! integrals, by Gauss–Legendre rules that follow η: the √x end point is smoothed by x = t²,
//! and the Fermi edge is resolved by panels of width ≤ 5 around it.
//!
//! ```
//! use dwarfbound::theory::hot_wd::eos::{electrons, matter};
//! use dwarfbound::theory::hot_wd::Composition;
//!
//! // A classical gas (η = −20): P_e = n_e k_B T.
//! let e = electrons(-20.0, 1e6);
//! assert!((e.p / (e.n * 1.380649e-23 * 1e6) - 1.0).abs() < 1e-9);
//! let s = matter(50.0, 1e7, &Composition::carbon_oxygen());
//! assert!(s.p > 0.0 && s.dp_deta > 0.0);
//! ```

use std::sync::OnceLock;

use crate::constants::{
    radiation_constant_si, C_SI, EPSILON_0_F_M, E_CHARGE_C, HBAR_SI, K_B_SI, M_E_KG, M_U_KG,
};
use crate::theory::hot_wd::Composition;

use std::f64::consts::PI;

/// Electron rest energy m_e c², J.
pub fn electron_rest_energy_j() -> f64 {
    M_E_KG * C_SI * C_SI
}

/// Reduced Compton wavelength λ_e = ħ/(m_e c), m.
pub fn compton_wavelength_m() -> f64 {
    HBAR_SI / (M_E_KG * C_SI)
}

/// e′² = e²/(4πε₀), J m: the Coulomb coupling in SI.
pub fn coulomb_coupling_j_m() -> f64 {
    E_CHARGE_C * E_CHARGE_C / (4.0 * PI * EPSILON_0_F_M)
}

/// Coefficient K of the Salpeter lattice pressure P_C = −K ⟨Z^{5/3}⟩/⟨Z⟩ n_e^{4/3}:
/// (3/10)(4π/3)^{1/3} e′² (ion-sphere energy −(9/10)Z²e′²/a per ion, Salpeter 1961, ApJ 134, 669).
pub fn lattice_coefficient() -> f64 {
    0.3 * (4.0 * PI / 3.0).cbrt() * coulomb_coupling_j_m()
}

/// Fine-structure constant α = e′²/(ħc), from the CODATA 2018 constants.
pub fn fine_structure() -> f64 {
    coulomb_coupling_j_m() / (HBAR_SI * C_SI)
}

/// g(x) = (x√(1+x²) − asinh x)/x² and its first two derivatives (series below x = 0.1, where
/// the closed form cancels).
fn exchange_g(x: f64) -> (f64, f64, f64) {
    if x < 0.1 {
        let x2 = x * x;
        let g = x * (2.0 / 3.0 + x2 * (-0.2 + x2 * (3.0 / 28.0 - x2 * 5.0 / 72.0)));
        let g1 = 2.0 / 3.0 + x2 * (-0.6 + x2 * (15.0 / 28.0 - x2 * 35.0 / 72.0));
        let g2 = x * (-1.2 + x2 * (15.0 / 7.0 - x2 * 35.0 / 12.0));
        (g, g1, g2)
    } else {
        let gam = (1.0 + x * x).sqrt();
        let g = (x * gam - x.asinh()) / (x * x);
        let g1 = 2.0 / gam - 2.0 * g / x;
        let g2 = -2.0 * x / (gam * gam * gam) - 2.0 * g1 / x + 2.0 * g / (x * x);
        (g, g1, g2)
    }
}

/// Fermi momentum x = p_F/(m_e c) of electrons at density `n_e` (m⁻³) at T = 0.
pub fn fermi_momentum(n_e: f64) -> f64 {
    compton_wavelength_m() * (3.0 * PI * PI * n_e).cbrt()
}

/// One electrostatic correction at density n_e: pressure, dP/dn_e and energy density (SI).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Correction {
    /// Pressure, Pa.
    pub p: f64,
    /// dP/dn_e, J.
    pub dp_dn: f64,
    /// Energy density, J m⁻³.
    pub e: f64,
}

impl std::ops::Add for Correction {
    type Output = Correction;
    fn add(self, o: Correction) -> Correction {
        Correction {
            p: self.p + o.p,
            dp_dn: self.dp_dn + o.dp_dn,
            e: self.e + o.e,
        }
    }
}

/// Salpeter's lattice term −K⟨Z^{5/3}⟩/⟨Z⟩ n_e^{4/3} (`factor` = ⟨Z^{5/3}⟩/⟨Z⟩; energy 3P).
pub fn lattice_correction(n_e: f64, factor: f64) -> Correction {
    if factor == 0.0 || n_e <= 0.0 {
        return Correction::default();
    }
    let p = -lattice_coefficient() * factor * n_e.powf(4.0 / 3.0);
    Correction {
        p,
        dp_dn: 4.0 / 3.0 * p / n_e,
        e: 3.0 * p,
    }
}

/// Exchange energy of the relativistic degenerate electron gas (see the module paragraph):
/// ε_x = −A x⁴Φ, P_x = −(A/3)x⁴(Φ + xΦ′), A = e′²/(4π³λ_e⁴).
pub fn exchange_correction(n_e: f64) -> Correction {
    if n_e <= 0.0 {
        return Correction::default();
    }
    let lam = compton_wavelength_m();
    let a = coulomb_coupling_j_m() / (4.0 * PI * PI * PI * lam.powi(4));
    let x = fermi_momentum(n_e);
    let (g, g1, g2) = exchange_g(x);
    let phi = 1.0 - 1.5 * g * g;
    let phi1 = -3.0 * g * g1;
    let phi2 = -3.0 * (g1 * g1 + g * g2);
    let psi = phi + x * phi1;
    let psi1 = 2.0 * phi1 + x * phi2;
    let x3 = x * x * x;
    let p = -a / 3.0 * x3 * x * psi;
    let dp_dx = -a / 3.0 * (4.0 * x3 * psi + x3 * x * psi1);
    Correction {
        p,
        // dx/dn = x/(3n).
        dp_dn: dp_dx * x / (3.0 * n_e),
        e: -a * x3 * x * phi,
    }
}

/// Thomas–Fermi correction (see the module paragraph), `factor` = ⟨Z^{7/3}⟩/⟨Z⟩:
/// P_TF = −B n_e x²/γ, dP/dn = −B (x²/γ)(5/3 − x²/(3γ²)), ε_TF = −3B n_e γ, γ = √(1+x²).
pub fn thomas_fermi_correction(n_e: f64, factor: f64) -> Correction {
    if factor == 0.0 || n_e <= 0.0 {
        return Correction::default();
    }
    let alpha = fine_structure();
    let b = 54.0 / 175.0
        * (4.0 / (9.0 * PI)).powf(2.0 / 3.0)
        * alpha
        * alpha
        * factor
        * electron_rest_energy_j();
    let x = fermi_momentum(n_e);
    let g2 = 1.0 + x * x;
    let gam = g2.sqrt();
    let w = x * x / gam;
    Correction {
        p: -b * n_e * w,
        dp_dn: -b * w * (5.0 / 3.0 - x * x / (3.0 * g2)),
        e: -3.0 * b * n_e * gam,
    }
}

/// All of `comp`'s electrostatic corrections at n_e (each weighted by its factor in `comp`, so a
/// composition from [`Composition::with_electrostatics`] switches them).
pub fn electrostatic_correction(n_e: f64, comp: &Composition) -> Correction {
    let mut c = lattice_correction(n_e, comp.lattice_factor);
    if comp.exchange_factor != 0.0 {
        let x = exchange_correction(n_e);
        c = c + Correction {
            p: x.p * comp.exchange_factor,
            dp_dn: x.dp_dn * comp.exchange_factor,
            e: x.e * comp.exchange_factor,
        };
    }
    c + thomas_fermi_correction(n_e, comp.thomas_fermi_factor)
}

/// The electron gas alone: number density, pressure and their derivatives (SI units).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ElectronGas {
    /// n_e, m⁻³.
    pub n: f64,
    /// P_e, Pa.
    pub p: f64,
    /// (∂n_e/∂η)_T.
    pub dn_deta: f64,
    /// (∂P_e/∂η)_T.
    pub dp_deta: f64,
    /// (∂n_e/∂T)_η.
    pub dn_dt: f64,
    /// (∂P_e/∂T)_η.
    pub dp_dt: f64,
}

/// Full matter state at (η, T): what the structure equations use.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MatterState {
    /// n_e, m⁻³.
    pub n_e: f64,
    /// ρ = μ_e m_u n_e, kg m⁻³.
    pub rho: f64,
    /// Total pressure (electrons + ions + radiation + lattice term), Pa.
    pub p: f64,
    /// Radiation pressure aT⁴/3, Pa (needed for ∇_ad and the photosphere).
    pub p_rad: f64,
    /// (∂P/∂η)_T.
    pub dp_deta: f64,
    /// (∂P/∂T)_η.
    pub dp_dt: f64,
    /// (∂ρ/∂η)_T.
    pub drho_deta: f64,
    /// (∂ρ/∂T)_η.
    pub drho_dt: f64,
}

/// Gauss–Legendre nodes and weights on [−1, 1] (Newton on P_n from the Tricomi guess;
/// Golub–Welsch would give the same to rounding).
fn gauss_legendre(n: usize) -> Vec<(f64, f64)> {
    let mut out = vec![(0.0, 0.0); n];
    let m = n.div_ceil(2);
    for i in 0..m {
        let mut z = (PI * (i as f64 + 0.75) / (n as f64 + 0.5)).cos();
        let mut pp = 1.0;
        for _ in 0..100 {
            let (mut p1, mut p2) = (1.0, 0.0);
            for j in 0..n {
                let p3 = p2;
                p2 = p1;
                p1 = ((2 * j + 1) as f64 * z * p2 - j as f64 * p3) / (j + 1) as f64;
            }
            pp = n as f64 * (z * p1 - p2) / (z * z - 1.0);
            let z1 = z;
            z = z1 - p1 / pp;
            if (z - z1).abs() < 1e-15 {
                break;
            }
        }
        let w = 2.0 / ((1.0 - z * z) * pp * pp);
        out[i] = (-z, w);
        out[n - 1 - i] = (z, w);
    }
    out
}

struct Rules {
    g40: Vec<(f64, f64)>,
    g16: Vec<(f64, f64)>,
    g12: Vec<(f64, f64)>,
}

fn rules() -> &'static Rules {
    static R: OnceLock<Rules> = OnceLock::new();
    R.get_or_init(|| Rules {
        g40: gauss_legendre(40),
        g16: gauss_legendre(16),
        g12: gauss_legendre(12),
    })
}

/// The six integrals, accumulated at one abscissa x with weight w.
#[derive(Default, Clone, Copy)]
struct Sums {
    n: f64,
    p: f64,
    n_eta: f64,
    p_eta: f64,
    n_beta: f64,
    p_beta: f64,
}

impl Sums {
    #[inline(always)]
    fn add(&mut self, x: f64, w: f64, eta: f64, beta: f64) {
        // f = 1/(e^{x−η}+1) evaluated without overflow for either sign of x − η.
        let d = x - eta;
        let (f, g) = if d > 0.0 {
            let e = (-d).exp();
            (e / (1.0 + e), 1.0 / (1.0 + e))
        } else {
            let e = d.exp();
            (1.0 / (1.0 + e), e / (1.0 + e))
        };
        let ff = f * g; // f(1 − f) = −∂f/∂x = ∂f/∂η
        let s = (1.0 + 0.5 * beta * x).sqrt();
        let sx = x.sqrt();
        let wn = sx * (1.0 + beta * x) * s; // n-weight
        let wp = x * sx * s * s * s; // P-weight x^{3/2}(1+βx/2)^{3/2}
        let wn_b = sx * (x * s + (1.0 + beta * x) * 0.25 * x / s);
        let wp_b = 0.75 * x * x * sx * s;
        self.n += w * wn * f;
        self.p += w * wp * f;
        self.n_eta += w * wn * ff;
        self.p_eta += w * wp * ff;
        self.n_beta += w * wn_b * f;
        self.p_beta += w * wp_b * f;
    }
}

/// The quadrature rule that follows η (see the module paragraph): with lo = max(0, η − 30),
/// hi = max(η, 0) + 45, [0, max(lo, 6)] in t = √x by 40 Gauss–Legendre points (16 while
/// lo ≤ 6), then panels of width ≤ 5 with 12 points each up to hi. The first segment always
/// holds the √x end point: a plain panel starting just above x = 0 (as when lo was allowed to
/// be small but positive, 30 < η < 36) integrates √x to only ~1e-5.
fn integrate(eta: f64, beta: f64) -> Sums {
    let r = rules();
    let mut s = Sums::default();
    let lo = (eta - 30.0).max(0.0);
    let hi = eta.max(0.0) + 45.0;
    let (first_end, rule) = if lo > 6.0 {
        (lo, &r.g40)
    } else {
        (6.0, &r.g16)
    };
    let tmax = first_end.sqrt();
    for &(z, w) in rule {
        let t = 0.5 * tmax * (z + 1.0);
        s.add(t * t, w * 0.5 * tmax * 2.0 * t, eta, beta);
    }
    let panels = ((hi - first_end) / 5.0).ceil().max(1.0) as usize;
    let width = (hi - first_end) / panels as f64;
    for k in 0..panels {
        let a = first_end + k as f64 * width;
        for &(z, w) in &r.g12 {
            s.add(a + 0.5 * width * (z + 1.0), w * 0.5 * width, eta, beta);
        }
    }
    s
}

/// The relativistic Fermi–Dirac electron gas at kinetic chemical potential η (in k_B T) and
/// temperature T (Chandrasekhar 1939; Cox & Giuli 1968 ch. 24):
/// n_e = (√2/π²) λ_e⁻³ β^{3/2} [F_{1/2} + βF_{3/2}],
/// P_e = (2√2/(3π²)) λ_e⁻³ m_e c² β^{5/2} [F_{3/2} + (β/2)F_{5/2}], β = k_B T/(m_e c²).
pub fn electrons(eta: f64, t_k: f64) -> ElectronGas {
    let mc2 = electron_rest_energy_j();
    let lam = compton_wavelength_m();
    let l3 = 1.0 / (lam * lam * lam);
    let beta = K_B_SI * t_k / mc2;
    let s = integrate(eta, beta);
    let cn = std::f64::consts::SQRT_2 / (PI * PI) * l3;
    let cp = 2.0 * std::f64::consts::SQRT_2 / (3.0 * PI * PI) * l3 * mc2;
    let b12 = beta.sqrt();
    let b32 = beta * b12;
    let b52 = beta * b32;
    let n = cn * b32 * s.n;
    let p = cp * b52 * s.p;
    let dn_dbeta = cn * (1.5 * b12 * s.n + b32 * s.n_beta);
    let dp_dbeta = cp * (2.5 * b32 * s.p + b52 * s.p_beta);
    // ∂/∂T at fixed η = (β/T) ∂/∂β.
    let bt = beta / t_k;
    ElectronGas {
        n,
        p,
        dn_deta: cn * b32 * s.n_eta,
        dp_deta: cp * b52 * s.p_eta,
        dn_dt: bt * dn_dbeta,
        dp_dt: bt * dp_dbeta,
    }
}

/// The full matter state of [`MatterState`]:
/// P = P_e + n_e k_B T/Z̄ + aT⁴/3 + P_C + P_x + P_TF, the last three Salpeter's (1961) lattice,
/// exchange and Thomas–Fermi terms of the module paragraph as `comp` carries them, applied at
/// every density and temperature (a stated choice).
pub fn matter(eta: f64, t_k: f64, comp: &Composition) -> MatterState {
    let e = electrons(eta, t_k);
    let a = radiation_constant_si();
    let corr = electrostatic_correction(e.n, comp);
    let p_c = corr.p;
    let dpc_dn = corr.dp_dn;
    let ion_per_e = K_B_SI * t_k / comp.zbar;
    let p_rad = a * t_k.powi(4) / 3.0;
    let p = e.p + e.n * ion_per_e + p_rad + p_c;
    let dp_dn = ion_per_e + dpc_dn;
    let rho_per_n = comp.mu_e * M_U_KG;
    MatterState {
        n_e: e.n,
        rho: rho_per_n * e.n,
        p,
        p_rad,
        dp_deta: e.dp_deta + dp_dn * e.dn_deta,
        dp_dt: e.dp_dt + e.n * K_B_SI / comp.zbar + dp_dn * e.dn_dt + 4.0 * p_rad / t_k,
        drho_deta: rho_per_n * e.dn_deta,
        drho_dt: rho_per_n * e.dn_dt,
    }
}

/// Zero-temperature Chandrasekhar electron pressure P(x) (Chandrasekhar 1935), with the series
/// (m_e c²/(8π²λ_e³)) x⁵(8/15 − 4x²/21 + x⁴/9 − 5x⁶/66) below x = 0.1 where the closed form
/// cancels catastrophically.
pub fn chandrasekhar_pressure_pa(x: f64) -> f64 {
    let lam = compton_wavelength_m();
    let k = electron_rest_energy_j() / (8.0 * PI * PI * lam * lam * lam);
    if x < 0.1 {
        let x2 = x * x;
        k * x2 * x2 * x * (8.0 / 15.0 - 4.0 * x2 / 21.0 + x2 * x2 / 9.0 - 5.0 * x2 * x2 * x2 / 66.0)
    } else {
        k * (x * (2.0 * x * x / 3.0 - 1.0) * (1.0 + x * x).sqrt() + x.asinh())
    }
}

/// Electron density at T = 0 for Fermi momentum x = p_F/(m_e c): x³/(3π²λ_e³), m⁻³.
pub fn zero_t_density_m3(x: f64) -> f64 {
    let lam = compton_wavelength_m();
    x * x * x / (3.0 * PI * PI * lam * lam * lam)
}

/// η at which the matter pressure (electrons, ions, radiation and the electrostatic terms) equals
/// `p_pa` at temperature `t_k`: the first upward crossing in a scan from η = −200 (steps of 4
/// up to η = 10, then factors of 1.5 up to 1e7), polished by Brent's method; `None` without
/// one. The first crossing matters: with the lattice term, cool non-degenerate gas can have
/// P(η) rise, fall (even below zero) and rise again, and the low-density branch is the gas.
pub fn eta_for_pressure(p_pa: f64, t_k: f64, comp: &Composition) -> Option<f64> {
    if !(p_pa > 0.0 && t_k > 0.0) {
        return None;
    }
    let f = |eta: f64| matter(eta, t_k, comp).p / p_pa - 1.0;
    let mut lo = -200.0;
    let mut flo = f(lo);
    if flo.is_nan() || flo >= 0.0 {
        return None;
    }
    loop {
        let hi = if lo < 10.0 { lo + 4.0 } else { lo * 1.5 };
        if hi > 1e7 {
            return None;
        }
        let fhi = f(hi);
        if fhi >= 0.0 {
            let (x, ok) = crate::theory::roots::brent_root_bracketed(
                f,
                lo,
                flo,
                hi,
                fhi,
                1e-13 * hi.abs().max(1.0),
                200,
            );
            return ok.then_some(x);
        }
        if fhi.is_nan() {
            return None;
        }
        lo = hi;
        flo = fhi;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// η of a T → 0 gas with Fermi momentum x: (√(1+x²) − 1) m_e c²/(k_B T).
    fn eta_of_x(x: f64, t: f64) -> f64 {
        x * x / ((1.0 + x * x).sqrt() + 1.0) * electron_rest_energy_j() / (K_B_SI * t)
    }

    #[test]
    fn zero_temperature_limit_is_chandrasekhar() {
        // Closed form: Chandrasekhar 1935, MNRAS 95, 207 (P(x), n(x)); tolerances as in the
        // hot-WD specification §11 (≤ 1e-6 at x ≥ 0.1, T = 1e4 K: the thermal term).
        for (x, tol) in [(0.1, 1e-6), (1.0, 1e-9), (3.0, 1e-10)] {
            let e = electrons(eta_of_x(x, 1e4), 1e4);
            let p0 = chandrasekhar_pressure_pa(x);
            let n0 = zero_t_density_m3(x);
            assert!((e.p / p0 - 1.0).abs() < tol, "x = {x}: {}", e.p / p0 - 1.0);
            assert!(
                (e.n / n0 - 1.0).abs() < tol * 10.0,
                "x = {x}: {}",
                e.n / n0 - 1.0
            );
        }
        // Series and closed form meet at x = 0.1 (continuity, closed form).
        let k = electron_rest_energy_j() / (8.0 * PI * PI * compton_wavelength_m().powi(3));
        let closed =
            |x: f64| k * (x * (2.0 * x * x / 3.0 - 1.0) * (1.0 + x * x).sqrt() + x.asinh());
        assert!((chandrasekhar_pressure_pa(0.0999999) / closed(0.0999999) - 1.0).abs() < 1e-8);
    }

    #[test]
    fn classical_limit() {
        // Ideal classical gas, P = n k_B T for any (also relativistic) Boltzmann gas; the
        // Fermi correction at η = −20 is 2^{-5/2} e^{−20} ≈ 4e-10 (closed form).
        for t in [1e4, 1e7, 1e9] {
            let e = electrons(-20.0, t);
            assert!((e.p / (e.n * K_B_SI * t) - 1.0).abs() < 1e-9, "T = {t}");
        }
        // Non-relativistic Maxwell–Boltzmann density n = 2 (m_e k T/(2πħ²))^{3/2} e^η (textbook
        // closed form), to the first relativistic correction (15/8)β.
        let t = 1e4;
        let e = electrons(-20.0, t);
        let beta = K_B_SI * t / electron_rest_energy_j();
        let nmb = 2.0
            * (M_E_KG * K_B_SI * t / (2.0 * PI * HBAR_SI * HBAR_SI)).powf(1.5)
            * (-20.0f64).exp()
            * (1.0 + 15.0 / 8.0 * beta);
        assert!((e.n / nmb - 1.0).abs() < 1e-6);
    }

    #[test]
    fn derivatives_match_finite_differences() {
        // Central differences (closed form of the truncation error ~h²): common practice.
        let comp = Composition::carbon_oxygen();
        for (eta, t) in [(-5.0, 3e4), (2.0, 1e6), (80.0, 1e7), (2000.0, 3e6)] {
            let s = matter(eta, t, &comp);
            let he = 1e-5 * eta.abs().max(1.0);
            let (a, b) = (matter(eta + he, t, &comp), matter(eta - he, t, &comp));
            let ht = 1e-5 * t;
            let (c, d) = (matter(eta, t + ht, &comp), matter(eta, t - ht, &comp));
            let rel = |num: f64, ana: f64| ((num - ana) / ana).abs();
            assert!(
                rel((a.p - b.p) / (2.0 * he), s.dp_deta) < 1e-6,
                "dP/dη at {eta}"
            );
            assert!(rel((a.rho - b.rho) / (2.0 * he), s.drho_deta) < 1e-6);
            assert!(
                rel((c.p - d.p) / (2.0 * ht), s.dp_dt) < 1e-6,
                "dP/dT at {eta}"
            );
            assert!(rel((c.rho - d.rho) / (2.0 * ht), s.drho_dt) < 1e-6);
        }
    }

    #[test]
    fn lattice_term_ultrarelativistic_ratio() {
        // Closed form (spec §3.3): P_C/P_e → 1.2 (4/(9π))^{1/3} ⟨Z^{5/3}⟩/⟨Z⟩ α; α from the
        // CODATA 2018 constants (1/137.035999084).
        let x = 1e4;
        let n = zero_t_density_m3(x);
        let pc = lattice_coefficient() * n.powf(4.0 / 3.0);
        let alpha = 1.0 / 137.035_999_084;
        let expected = 1.2 * (4.0 / (9.0 * PI)).cbrt() * alpha;
        assert!((pc / chandrasekhar_pressure_pa(x) / expected - 1.0).abs() < 1e-6);
        // 50:50 C/O factor 3.6510 (spec §3.3).
        assert!((Composition::carbon_oxygen().lattice_factor - 3.6510).abs() < 1e-4);
    }

    #[test]
    fn exchange_and_thomas_fermi_limits() {
        // Non-relativistic exchange: −(3/4)(3/π)^{1/3} e′² n^{1/3} per electron, so
        // P_x = ε_x/3 and P_x/P_C = 0.25(3/π)^{1/3}/(0.3(4π/3)^{1/3}) = 0.509073 (Z = 1; the
        // "0.458/0.9" of Salpeter 1961, closed form).
        let n = zero_t_density_m3(1e-4);
        let x = exchange_correction(n);
        let per_e = -0.75 * (3.0 / PI).cbrt() * coulomb_coupling_j_m() * n.cbrt();
        assert!((x.e / n / per_e - 1.0).abs() < 1e-6);
        assert!((x.p / (x.e / 3.0) - 1.0).abs() < 1e-6);
        let ratio = x.p / lattice_correction(n, 1.0).p;
        assert!((ratio - 0.509_073).abs() < 1e-5, "{ratio}");
        // Ultra-relativistic: Φ → −1/2 (closed form of the Akhiezer–Berestetskii factor), so
        // ε_x → −½ of its non-relativistic form and P_x = ε_x/3 again.
        let n = zero_t_density_m3(1e4);
        let x = exchange_correction(n);
        let nonrel = -0.75 * (3.0 / PI).cbrt() * coulomb_coupling_j_m() * n.cbrt() * n;
        assert!((x.e / nonrel + 0.5).abs() < 1e-6, "{}", x.e / nonrel);
        // Thomas–Fermi, non-relativistic: −(324/175)(4/(9π))^{2/3} Z^{4/3} Ry per electron
        // (Salpeter 1961, from memory; Ry = α²m_ec²/2), density-independent, hence no pressure
        // at this order.
        let n = zero_t_density_m3(1e-3);
        let z = 6.0f64;
        let tf = thomas_fermi_correction(n, z.powf(7.0 / 3.0) / z);
        let ry = 0.5 * fine_structure().powi(2) * electron_rest_energy_j();
        let want = -324.0 / 175.0 * (4.0 / (9.0 * PI)).powf(2.0 / 3.0) * z.powf(4.0 / 3.0) * ry;
        assert!((tf.e / n / want - 1.0).abs() < 1e-6);
        assert!(tf.p.abs() < 1e-5 * tf.e.abs());
        // 50:50 C/O: ⟨Z^{7/3}⟩/⟨Z⟩ = (6^{4/3} + 8^{4/3})/2 = 13.4515 (equal electrons per mass).
        let f = Composition::carbon_oxygen().thomas_fermi_factor;
        assert!(
            (f - 0.5 * (6f64.powf(4.0 / 3.0) + 16.0)).abs() < 1e-9,
            "{f}"
        );
    }

    #[test]
    fn correction_derivatives_match_finite_differences() {
        // dP/dn and the T = 0 relation dε/dn = (ε + P)/n (Gibbs–Duhem), by central differences
        // (common practice), across the series/closed-form switch of the exchange factor.
        let comp = Composition::carbon_oxygen();
        for x in [0.02, 0.0999, 0.1001, 0.5, 3.0, 40.0] {
            let n = zero_t_density_m3(x);
            let h = 1e-5 * n;
            let (a, b, c) = (
                electrostatic_correction(n + h, &comp),
                electrostatic_correction(n - h, &comp),
                electrostatic_correction(n, &comp),
            );
            let dp = (a.p - b.p) / (2.0 * h);
            let de = (a.e - b.e) / (2.0 * h);
            assert!(
                (dp / c.dp_dn - 1.0).abs() < 1e-6,
                "x = {x}: {dp} {}",
                c.dp_dn
            );
            assert!((de / ((c.e + c.p) / n) - 1.0).abs() < 1e-6, "x = {x}");
        }
    }

    #[test]
    fn quadrature_is_continuous_in_eta() {
        // Across the rule's switches (η = 30, 36) n_e and P_e move smoothly: over a step of
        // 2e-6 in η they change as their analytic η-derivatives say, to 1e-10 (first-order
        // Taylor; common practice for checking a piecewise rule). Before the first segment
        // was kept to [0, ≥ 6], n_e jumped by 5e-6 just above η = 30.
        for eta in [30.0, 36.0] {
            let (a, b, c) = (
                electrons(eta - 1e-6, 1e7),
                electrons(eta + 1e-6, 1e7),
                electrons(eta, 1e7),
            );
            let dn = (b.n - a.n) / c.n - 2e-6 * c.dn_deta / c.n;
            let dp = (b.p - a.p) / c.p - 2e-6 * c.dp_deta / c.p;
            assert!(dn.abs() < 1e-10 && dp.abs() < 1e-10, "η = {eta}: {dn} {dp}");
        }
    }

    #[test]
    fn pressure_inversion() {
        let comp = Composition::helium();
        for (eta, t) in [(-15.0, 2e4), (30.0, 1e7)] {
            let p = matter(eta, t, &comp).p;
            let back = eta_for_pressure(p, t, &comp).unwrap();
            assert!((back - eta).abs() < 1e-8);
        }
    }
}
