//! Energy transport in white-dwarf envelopes and cores: a radiative opacity (electron
//! scattering and Kramers free–free and bound–free), degenerate electron conduction, and the
//! adiabatic gradient of an ideal gas with radiation.
//!
//! One job: κ(ρ, T, n_e, composition) and ∇_ad, in SI. The Kramers coefficients are the usual
//! cgs ones (Kippenhahn, Weigert & Weiss, *Stellar Structure and Evolution*, ch. 17 — from
//! memory): free–free 3.68e22 (1+X)(1−Z) ρ T^{-3.5} generalised to Σ X Z²/A, bound–free
//! 4.34e25 Z(1+X) ρ T^{-3.5} with g_bf/t = 0.1 for the metals only. Conduction follows the
//! degenerate-electron form with a collision frequency as in Yakovlev & Urpin (1980, Sov.
//! Astron. 24, 303 — from memory) and Coulomb logarithm 1 (a stated choice).
//!
//! ```
//! use dwarfbound::theory::hot_wd::opacity::{adiabatic_gradient, electron_scattering_m2_kg};
//! use dwarfbound::theory::hot_wd::Composition;
//!
//! // Thomson opacity of hydrogen, 0.0400 m² kg⁻¹ (0.400 cm² g⁻¹).
//! assert!((electron_scattering_m2_kg(&Composition::hydrogen()) - 0.04006).abs() < 1e-4);
//! // Monatomic ideal gas: ∇_ad = 2/5.
//! assert!((adiabatic_gradient(1.0) - 0.4).abs() < 1e-15);
//! ```

use std::f64::consts::PI;

use crate::constants::{HBAR_SI, K_B_SI, M_E_KG, M_U_KG, SIGMA_SB_SI, SIGMA_THOMSON_M2};
use crate::theory::hot_wd::eos::{compton_wavelength_m, coulomb_coupling_j_m};
use crate::theory::hot_wd::Composition;

/// Electron-scattering opacity σ_T/(μ_e m_u), m² kg⁻¹ (no degeneracy or Compton correction).
pub fn electron_scattering_m2_kg(comp: &Composition) -> f64 {
    SIGMA_THOMSON_M2 / (comp.mu_e * M_U_KG)
}

/// Radiative opacity κ_es + κ_ff + κ_bf, m² kg⁻¹.
pub fn radiative_m2_kg(rho_kg_m3: f64, t_k: f64, comp: &Composition) -> f64 {
    let rho_cgs = rho_kg_m3 * 1e-3;
    let kramers = rho_cgs * t_k.powf(-3.5);
    let ff = 7.36e22 * comp.z2_over_a / comp.mu_e * kramers;
    let bf = 4.34e25 * 0.1 * comp.metals * (2.0 / comp.mu_e) * kramers;
    // cm² g⁻¹ → m² kg⁻¹: × 0.1.
    electron_scattering_m2_kg(comp) + 0.1 * (ff + bf)
}

/// Conductive opacity κ_cd = 16σT³/(3ρλ_c), with
/// λ_c = π³ k_B² T n_e ħ³/(4 m*² Z_eff e′⁴ Λ), m* = m_e √(1 + x_F²), Λ = 1.
pub fn conductive_m2_kg(rho_kg_m3: f64, t_k: f64, n_e: f64, comp: &Composition) -> f64 {
    let x_f = compton_wavelength_m() * (3.0 * PI * PI * n_e).cbrt();
    let m_star = M_E_KG * (1.0 + x_f * x_f).sqrt();
    let e4 = coulomb_coupling_j_m().powi(2);
    let lambda_c = PI.powi(3) * K_B_SI * K_B_SI * t_k * n_e * HBAR_SI.powi(3)
        / (4.0 * m_star * m_star * comp.z_eff * e4);
    16.0 * SIGMA_SB_SI * t_k.powi(3) / (3.0 * rho_kg_m3 * lambda_c)
}

/// Total opacity, 1/κ = 1/κ_rad + 1/κ_cd, m² kg⁻¹.
pub fn total_m2_kg(rho_kg_m3: f64, t_k: f64, n_e: f64, comp: &Composition) -> f64 {
    let kr = radiative_m2_kg(rho_kg_m3, t_k, comp);
    let kc = conductive_m2_kg(rho_kg_m3, t_k, n_e, comp);
    1.0 / (1.0 / kr + 1.0 / kc)
}

/// Adiabatic gradient of an ideal gas with radiation (Cox & Giuli 1968): with β_g the gas
/// fraction of the pressure (clipped to [1e-6, 1]) and q = (1−β)(4+β)/β²,
/// ∇_ad = (1 + q)/(5/2 + 4q). Used only where convection occurs (non-degenerate layers).
pub fn adiabatic_gradient(beta_gas: f64) -> f64 {
    let b = beta_gas.clamp(1e-6, 1.0);
    let q = (1.0 - b) * (4.0 + b) / (b * b);
    (1.0 + q) / (2.5 + 4.0 * q)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn limits() {
        // Radiation-dominated gas: ∇_ad → 1/4 (closed form, Cox & Giuli 1968).
        assert!((adiabatic_gradient(1e-6) - 0.25).abs() < 1e-5);
        // Kramers free–free for pure H: 3.68e22 (1 + X) with X = 1 (spec §4: 7.36e22).
        let h = Composition::hydrogen();
        let (rho, t) = (1.0e3, 1e5);
        let ff = (radiative_m2_kg(rho, t, &h) - electron_scattering_m2_kg(&h)) * 10.0;
        assert!((ff / (7.36e22 * 1.0 * t.powf(-3.5)) - 1.0).abs() < 1e-12);
        // Helium has no bound–free term (full ionisation); free–free 3.68e22 (1 + 0).
        let he = Composition::helium();
        let ff = (radiative_m2_kg(rho, t, &he) - electron_scattering_m2_kg(&he)) * 10.0;
        assert!((ff / (3.68e22 * t.powf(-3.5)) - 1.0).abs() < 1e-12);
        // Harmonic sum is below either.
        let k = total_m2_kg(1e9, 1e7, 3e35, &Composition::carbon_oxygen());
        assert!(k < conductive_m2_kg(1e9, 1e7, 3e35, &Composition::carbon_oxygen()));
    }
}
