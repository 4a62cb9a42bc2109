//! Physical constants and nominal astronomical values, each with the standard it comes from.
//!
//! Every other module takes its constants from here, so that a change of standard is one edit
//! and a test can check each value against its published source.
//!
//! ```
//! use dwarfbound::constants::{msun_kg, GM_SUN_NOMINAL_M3_S2, G_SI};
//! assert!((msun_kg() - GM_SUN_NOMINAL_M3_S2 / G_SI).abs() < 1.0);
//! ```

/// Newtonian constant of gravitation, m³ kg⁻¹ s⁻² (CODATA 2018).
pub const G_SI: f64 = 6.674_30e-11;
/// Speed of light in vacuum, m s⁻¹ (exact, SI).
pub const C_SI: f64 = 299_792_458.0;
/// Reduced Planck constant ħ = h/2π, J s (exact h, SI 2019).
pub const HBAR_SI: f64 = 1.054_571_817e-34;
/// Planck constant, J s (exact, SI 2019).
pub const H_SI: f64 = 6.626_070_15e-34;
/// Boltzmann constant, J K⁻¹ (exact, SI 2019).
pub const K_B_SI: f64 = 1.380_649e-23;
/// Stefan–Boltzmann constant, W m⁻² K⁻⁴ (CODATA 2018; exact given the SI 2019 constants).
pub const SIGMA_SB_SI: f64 = 5.670_374_419e-8;
/// Electron mass, kg (CODATA 2018).
pub const M_E_KG: f64 = 9.109_383_701_5e-31;
/// Atomic mass constant m_u, kg (CODATA 2018).
pub const M_U_KG: f64 = 1.660_539_066_60e-27;
/// Mass of the hydrogen atom used as the baryon mass unit by the MMHB model, g
/// (`docs/bounds.md` §2.1: m_H = 1.6735575×10⁻²⁴ g).
pub const M_H_G: f64 = 1.673_557_5e-24;

/// Nominal solar mass parameter (GM)☉, m³ s⁻² (IAU 2015 Resolution B3).
pub const GM_SUN_NOMINAL_M3_S2: f64 = 1.327_124_4e20;
/// Nominal solar luminosity L☉, W (IAU 2015 Resolution B3).
pub const L_SUN_NOMINAL_W: f64 = 3.828e26;
/// Nominal solar radius R☉, m (IAU 2015 Resolution B3).
pub const R_SUN_NOMINAL_M: f64 = 6.957e8;
/// Nominal equatorial Jupiter radius, m (IAU 2015 Resolution B3).
pub const R_JUP_EQ_NOMINAL_M: f64 = 7.149_2e7;
/// Nominal polar Jupiter radius, m (IAU 2015 Resolution B3).
pub const R_JUP_POLAR_NOMINAL_M: f64 = 6.685_4e7;
/// Nominal Jupiter mass parameter (GM)_J, m³ s⁻² (IAU 2015 Resolution B3).
pub const GM_JUP_NOMINAL_M3_S2: f64 = 1.266_865_3e17;
/// Nominal equatorial Earth radius, m (IAU 2015 Resolution B3).
pub const R_EARTH_EQ_NOMINAL_M: f64 = 6.378_1e6;
/// Nominal Earth mass parameter (GM)_E, m³ s⁻² (IAU 2015 Resolution B3).
pub const GM_EARTH_NOMINAL_M3_S2: f64 = 3.986_004e14;

/// Seconds in one Julian year (IAU convention: 365.25 d of 86 400 s).
pub const JULIAN_YEAR_S: f64 = 365.25 * 86_400.0;

/// Solar mass in kg, derived as (GM)☉ / G (IAU 2015 B3 recommends this route; CODATA 2018 G).
pub fn msun_kg() -> f64 {
    GM_SUN_NOMINAL_M3_S2 / G_SI
}

/// Jupiter mass in solar masses: (GM)_J / (GM)☉, independent of G.
pub fn mjup_msun() -> f64 {
    GM_JUP_NOMINAL_M3_S2 / GM_SUN_NOMINAL_M3_S2
}

/// Earth mass in solar masses: (GM)_E / (GM)☉, independent of G.
pub fn mearth_msun() -> f64 {
    GM_EARTH_NOMINAL_M3_S2 / GM_SUN_NOMINAL_M3_S2
}

/// Jupiter equatorial radius in solar radii.
pub fn rjup_rsun() -> f64 {
    R_JUP_EQ_NOMINAL_M / R_SUN_NOMINAL_M
}

/// Earth equatorial radius in solar radii.
pub fn rearth_rsun() -> f64 {
    R_EARTH_EQ_NOMINAL_M / R_SUN_NOMINAL_M
}

/// Elementary charge e, C (exact, SI 2019; CODATA 2018).
pub const E_CHARGE_C: f64 = 1.602_176_634e-19;
/// Vacuum electric permittivity ε₀, F m⁻¹ (CODATA 2018).
pub const EPSILON_0_F_M: f64 = 8.854_187_812_8e-12;
/// Thomson cross-section σ_T, m² (CODATA 2018).
pub const SIGMA_THOMSON_M2: f64 = 6.652_458_732_1e-29;

/// Radiation density constant a = 4σ_SB/c, J m⁻³ K⁻⁴ (derived from the CODATA 2018 σ_SB and
/// the exact c).
pub fn radiation_constant_si() -> f64 {
    4.0 * SIGMA_SB_SI / C_SI
}
