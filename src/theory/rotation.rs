//! The break-up (mass-shedding) spin period: the shortest rotation period a star of given mass
//! and non-rotating radius can have.
//!
//! One job: P_min = 2π κ √(R³/(GM)) (`docs/structure.md` §5) with GM = (M/M☉)(GM)☉ (IAU 2015
//! Resolution B3; known far better than G). κ = (3/2)^{3/2} in the Roche model (rigid
//! rotation, point-mass gravity, equatorial radius 3/2 of the polar one at shedding);
//! κ = 1.8911 for an n = 3/2 polytrope from the self-consistent-field models of `docs/structure.md`
//! §5.2 (computed there with the method of Hachisu 1986, ApJS 61, 479; mass-matched basis).
//! ϒ and τ enter only through R(M): the exterior is screened and the break-up condition is
//! unmodified (§5.3).
//!
//! ```
//! use dwarfbound::theory::rotation::{breakup_period_s, BreakupModel};
//!
//! // 0.07 M☉ with a Jupiter radius: 38.15 min in the Roche model (docs/structure.md §5.4).
//! let p_min = breakup_period_s(0.07, 7.1492e7 / 6.957e8, BreakupModel::Roche).unwrap() / 60.0;
//! assert!((p_min - 38.15).abs() < 0.01);
//! ```

use crate::constants::{GM_SUN_NOMINAL_M3_S2, R_SUN_NOMINAL_M};
use crate::theory::error::TheoryError;

/// Equatorial over polar radius of a Roche-model star at break-up: 3/2 (`docs/structure.md` §5.1,
/// from GM/R_eq² = Ω²R_eq on the equipotential through the pole).
pub const ROCHE_EQUATORIAL_TO_POLAR: f64 = 1.5;

/// κ of the self-consistent-field n = 3/2 polytrope at mass shedding, mass-matched
/// (`docs/structure.md` §5.2 table, 1.8911, computed there; quoted as 1.891 in its prose; ±3 %
/// systematic).
pub const KAPPA_SCF_N32: f64 = 1.8911;

/// Which flattening factor κ to use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum BreakupModel {
    /// Roche model, κ = (3/2)^{3/2} = 1.8371: excellent for centrally condensed stars (n = 3,
    /// massive white dwarfs).
    Roche,
    /// Self-consistent n = 3/2 polytrope, κ = 1.8911: fully convective objects (brown dwarfs,
    /// very-low-mass stars, low-mass white dwarfs).
    ScfN32,
}

impl BreakupModel {
    /// The factor κ in P_min = 2πκ√(R³/GM).
    pub fn kappa(self) -> f64 {
        match self {
            BreakupModel::Roche => ROCHE_EQUATORIAL_TO_POLAR * ROCHE_EQUATORIAL_TO_POLAR.sqrt(),
            BreakupModel::ScfN32 => KAPPA_SCF_N32,
        }
    }
}

/// Break-up period in seconds for a star of `mass_msun` whose non-rotating radius is
/// `radius_rsun`. For the gradient ansatz with the anisotropy assumed to persist in the
/// atmosphere (`docs/structure.md` §5.3), pass (1 − τ)·M: P depends on GM only.
pub fn breakup_period_s(
    mass_msun: f64,
    radius_rsun: f64,
    model: BreakupModel,
) -> Result<f64, TheoryError> {
    if !(mass_msun.is_finite() && mass_msun > 0.0) {
        return Err(TheoryError::InvalidParameter {
            name: "mass_msun",
            value: mass_msun,
            why: "must be finite and > 0",
        });
    }
    if !(radius_rsun.is_finite() && radius_rsun > 0.0) {
        return Err(TheoryError::InvalidParameter {
            name: "radius_rsun",
            value: radius_rsun,
            why: "must be finite and > 0",
        });
    }
    let r_m = radius_rsun * R_SUN_NOMINAL_M;
    let gm = mass_msun * GM_SUN_NOMINAL_M3_S2;
    Ok(2.0 * std::f64::consts::PI * model.kappa() * (r_m * r_m * r_m / gm).sqrt())
}

/// Break-up period in hours (see [`breakup_period_s`]).
pub fn breakup_period_h(
    mass_msun: f64,
    radius_rsun: f64,
    model: BreakupModel,
) -> Result<f64, TheoryError> {
    Ok(breakup_period_s(mass_msun, radius_rsun, model)? / 3600.0)
}

/// One point of a minimum-period curve.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct BreakupCurvePoint {
    /// Mass, M☉.
    pub mass_msun: f64,
    /// Non-rotating radius R(M) of the structure (the polar radius in the Roche model), R☉.
    pub radius_rsun: f64,
    /// Equatorial radius at shedding, κ^{2/3} R (exactly 3/2 R in the Roche model), R☉: the
    /// radius whose Keplerian period is the break-up period, P = 2π√(R_eq³/GM).
    pub equatorial_radius_rsun: f64,
    /// Break-up (minimum) period, s.
    pub period_s: f64,
}

/// The minimum spin period P_break(M) over `masses_msun` for the cold, fully degenerate
/// structure of `table` (built at one grid point (ϒ, τ, ansatz)) with electron molecular weight
/// `mu_e`: μ_e = 2 for white dwarfs, 2/(1 + X) for the cold hydrogen-rich floor of brown dwarfs
/// and very-low-mass stars (the project's theory check values use X = 0.75). ϒ and τ enter only through
/// R(M); the exterior gravity and the break-up condition are standard (the exterior is screened). Each mass gets its
/// own result: a mass at or above the Chandrasekhar mass is a typed error, never NaN.
///
/// ```
/// use dwarfbound::theory::rotation::{breakup_curve, BreakupModel};
/// use dwarfbound::theory::white_dwarf::{WdMassRadius, WdTableOptions};
/// use dwarfbound::theory::Anisotropy;
///
/// let table = WdMassRadius::new(0.0, 0.0, Anisotropy::None, &WdTableOptions::default()).unwrap();
/// let curve = breakup_curve(&table, 8.0 / 7.0, &[0.08, 5.0], BreakupModel::Roche);
/// // The cold 0.08 M☉ object of the theory check values: 22.3 min; 5 M☉ is above M_Ch.
/// assert!((curve[0].as_ref().unwrap().period_s / 60.0 - 22.3).abs() < 0.05);
/// assert!(curve[1].is_err());
/// ```
pub fn breakup_curve(
    table: &crate::theory::white_dwarf::WdMassRadius,
    mu_e: f64,
    masses_msun: &[f64],
    model: BreakupModel,
) -> Vec<Result<BreakupCurvePoint, TheoryError>> {
    masses_msun
        .iter()
        .map(|&m| {
            let radius_rsun = table.radius_rsun(m, mu_e)?;
            let period_s = breakup_period_s(m, radius_rsun, model)?;
            Ok(BreakupCurvePoint {
                mass_msun: m,
                radius_rsun,
                equatorial_radius_rsun: model.kappa().powf(2.0 / 3.0) * radius_rsun,
                period_s,
            })
        })
        .collect()
}
