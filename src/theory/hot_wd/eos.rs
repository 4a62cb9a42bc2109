//! Equation of state of white-dwarf matter at finite temperature: relativistic Fermi–Dirac
//! electrons, ideal ions, radiation and the Salpeter (1961) lattice term, with the analytic
//! derivatives the structure equations need.
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
/// hi = max(η, 0) + 45, [0, lo] (or [0, 6] when lo = 0) in t = √x by 40 (16) Gauss–Legendre
/// points, then panels of width ≤ 5 with 12 points each up to hi.
fn integrate(eta: f64, beta: f64) -> Sums {
    let r = rules();
    let mut s = Sums::default();
    let lo = (eta - 30.0).max(0.0);
    let hi = eta.max(0.0) + 45.0;
    let (first_end, rule) = if lo > 0.0 {
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
/// P = P_e + n_e k_B T/Z̄ + aT⁴/3 + P_C, P_C = −K ⟨Z^{5/3}⟩/⟨Z⟩ n_e^{4/3} (Salpeter 1961 lattice
/// term, applied at every density and temperature — a stated choice; its smaller exchange,
/// Thomas–Fermi and correlation terms are not included).
pub fn matter(eta: f64, t_k: f64, comp: &Composition) -> MatterState {
    let e = electrons(eta, t_k);
    let a = radiation_constant_si();
    let kc = lattice_coefficient() * comp.lattice_factor;
    let p_c = -kc * e.n.powf(4.0 / 3.0);
    let dpc_dn = 4.0 / 3.0 * p_c / e.n;
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

/// η at which the matter pressure (electrons, ions, radiation and the lattice term) equals
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
    fn pressure_inversion() {
        let comp = Composition::helium();
        for (eta, t) in [(-15.0, 2e4), (30.0, 1e7)] {
            let p = matter(eta, t, &comp).p;
            let back = eta_for_pressure(p, t, &comp).unwrap();
            assert!((back - eta).abs() < 1e-8);
        }
    }
}
