//! Every bound of the theory at one (Υ, τ) point, from one set of [`TheorySettings`].
//!
//! One job: turn (Υ, τ) and the settings into a [`PointBounds`]: the modified Lane–Emden
//! constants for n = 3/2 and n = 3, the minimum hydrogen-burning mass (raw, anchored, floor,
//! Φ), the Chandrasekhar mass, the Schönberg–Chandrasekhar fraction, the break-up period of a
//! stated reference object, warnings, and (on request) the white-dwarf mass–radius table.
//! Each bound is an [`Outcome`]: its value, or the typed reason why there is no model there —
//! never a NaN, never dropped (`structure.md` §3.7). The physics lives in the sibling modules
//! ([`lane_emden`](super::lane_emden), [`mmhb`](super::mmhb), [`white_dwarf`](super::white_dwarf),
//! [`rotation`](super::rotation), [`schonberg`](super::schonberg)); this module only wires them
//! together and fixes the defaults.
//!
//! ```
//! use dwarfbound::theory::point::{standard_point, TheorySettings};
//!
//! let p = standard_point(&TheorySettings::default()).unwrap();
//! // Anchored MMHB in standard gravity is the anchor itself (bounds.md §4).
//! assert_eq!(p.mmhb.ok().unwrap().value_msun, 0.075);
//! // Chandrasekhar 1939 / structure.md §4.1: 5.82519/μ_e² M☉ for μ_e = 2.
//! assert!((p.chandrasekhar.ok().unwrap().newtonian_mu_e2_msun - 1.456298).abs() < 1e-6);
//! ```

use serde::{Deserialize, Serialize};

use crate::constants::rjup_rsun;
use crate::theory::error::TheoryError;
use crate::theory::lane_emden::{
    LaneEmdenOptions, LaneEmdenSolution, ModifiedLaneEmden, UPSILON_RELATIVISTIC_MIN,
};
use crate::theory::mmhb::{
    self, BoundError, MmhbConfig, MmhbMode, MmhbModel, ModelAParams, ModelBParams,
    PolytropeConstants,
};
use crate::theory::rotation::{breakup_period_h, BreakupModel};
use crate::theory::schonberg::{self, ScParams, ScVariant};
use crate::theory::white_dwarf::{
    chandrasekhar_mass_from_omega3_msun, length_unit_m, mass_unit_msun, ChandrasekharEos,
    WdMassRadius, WdTableOptions, POST_NEWTONIAN_COMPACTNESS,
};
use crate::theory::Anisotropy;

/// Default Chandrasekhar-mass theory floor, M☉: a choice sized to the few-per-cent gap between
/// the Newtonian M_Ch and realistic maximum masses (`structure.md` §4.6, item 7 of §7).
pub const DEFAULT_CHANDRASEKHAR_FLOOR_MSUN: f64 = 0.03;

/// Default fractional theory floor on white-dwarf radii: a choice (`structure.md` §4.6).
pub const DEFAULT_WD_RADIUS_FLOOR_FRACTION: f64 = 0.03;

/// The μ_e for which Chandrasekhar masses are reported; M_Ch ∝ 1/μ_e² exactly, so callers scale
/// to any other μ_e with (2/μ_e)².
pub const CHANDRASEKHAR_REPORT_MU_E: f64 = 2.0;

/// Settings were inconsistent or outside their domain.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("invalid theory setting {name} = {value}: {why}")]
pub struct SettingsError {
    /// The setting's name as in [`TheorySettings`] (dotted for nested fields).
    pub name: &'static str,
    /// Its value, as text.
    pub value: String,
    /// What the domain is.
    pub why: &'static str,
}

/// How the Chandrasekhar mass used against data is built (`structure.md` §4.6).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
#[serde(rename_all = "kebab-case", tag = "mode")]
pub enum ChandrasekharMode {
    /// The Newtonian, pure-EOS value 5.82519/μ_e² M☉ × ω₃(Υ,τ)/ω₃(0,0): conservative for
    /// excluding Υ < 0 (every neglected effect lowers the real maximum). The default.
    #[default]
    Newtonian,
    /// A realistic standard-gravity maximum (for μ_e = 2; it scales as (2/μ_e)²) times the same
    /// ω₃ ratio. There is no default value: the spec has none from a source it could re-read.
    Anchored {
        /// The standard-gravity maximum mass for μ_e = 2, M☉.
        standard_msun: f64,
    },
}

impl ChandrasekharMode {
    /// `"newtonian"` or `"anchored"`.
    pub fn name(&self) -> &'static str {
        match self {
            ChandrasekharMode::Newtonian => "newtonian",
            ChandrasekharMode::Anchored { .. } => "anchored",
        }
    }
}

/// Which surface gravity model A's photosphere feels (`bounds.md` §2.6).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum PhotosphereGravity {
    /// The exterior GM/R²: right for the density-squared ansatz, whose anisotropy vanishes in
    /// the atmosphere. The default (`bounds.md` §2.6, `structure.md` §5.3).
    #[default]
    Exterior,
    /// (1 − τ)GM/R² for the gradient ansatz, whose anisotropy persists up to the photosphere;
    /// identical to `Exterior` for the other ansätze.
    ScaledByAnisotropy,
}

/// The object whose break-up period is reported at every point (`structure.md` §5.4): by
/// default the most compact object at the hydrogen-burning boundary, a cold, fully degenerate
/// 0.08 M☉ body of hydrogen mass fraction 0.75 (μ_e = 8/7) on the zero-temperature
/// Chandrasekhar EOS (no ion pressure, no Coulomb term), in the Roche model: 22.3 min in
/// standard gravity, the ≈ 22-minute floor quoted in the field.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct BreakupReference {
    /// Mass of the reference object, M☉ (default 0.08).
    pub mass_msun: f64,
    /// Its hydrogen mass fraction X; μ_e = 2/(1 + X) (default 0.75).
    pub hydrogen_mass_fraction: f64,
    /// Flattening factor κ (default Roche, κ = 1.8371).
    pub model: BreakupModel,
}

impl Default for BreakupReference {
    fn default() -> Self {
        Self {
            mass_msun: 0.08,
            hydrogen_mass_fraction: 0.75,
            model: BreakupModel::Roche,
        }
    }
}

impl BreakupReference {
    /// μ_e = 2/(1 + X) of full ionisation.
    pub fn mu_e(&self) -> f64 {
        2.0 / (1.0 + self.hydrogen_mass_fraction)
    }

    /// One line naming the object and the model, for reports and the `predict` output.
    pub fn describe(&self) -> String {
        let model = match self.model {
            BreakupModel::Roche => "Roche model (kappa = 1.8371)",
            BreakupModel::ScfN32 => "self-consistent n = 3/2 polytrope (kappa = 1.891)",
        };
        format!(
            "cold, fully degenerate object of {} M_sun with X = {} (mu_e = {:.6}): \
             zero-temperature Chandrasekhar EOS without ion pressure or Coulomb term \
             (the most compact object of that mass), {model}, exterior gravity at the equator",
            self.mass_msun,
            self.hydrogen_mass_fraction,
            self.mu_e()
        )
    }
}

/// Numerical settings. They change the numbers (slightly), so they are part of the cache key.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Numerics {
    /// Relative tolerance of every Lane–Emden solve (default 1e-10; absolute tolerance 1e-2 of
    /// it). Against rtol 1e-13 the constants ξ1, ω, J_k agree to ≤ 2e-10 over
    /// Υ ∈ [−0.66, 0.6], τ ∈ [−0.3, 0.3].
    pub lane_emden_rtol: f64,
    /// Where the Lane–Emden central series hands over to the integrator (default 1e-4, the
    /// ξ₀ of `structure.md` §3.3).
    pub lane_emden_xi_start: f64,
    /// Relative tolerance of each full-EOS white-dwarf model (tables and the break-up reference;
    /// default 1e-10).
    pub wd_rtol: f64,
    /// log₁₀ x_c of the first white-dwarf table model (default −3).
    pub wd_log10_xc_min: f64,
    /// log₁₀ x_c of the last white-dwarf table model (default 4.5).
    pub wd_log10_xc_max: f64,
    /// White-dwarf table models per decade of x_c (default 12).
    pub wd_points_per_decade: usize,
    /// In a grid, white-dwarf tables are solved at every `wd_grid_stride`-th point of each axis
    /// (and the last) and interpolated in (Υ, τ) in between; 1 solves every point (default 8).
    pub wd_grid_stride: usize,
    /// In a grid, the break-up reference radius correction (full EOS over polytrope, ≈ 0.998) is
    /// solved at every `breakup_grid_stride`-th point and interpolated in between; 1 solves
    /// every point (default 4).
    pub breakup_grid_stride: usize,
    /// In a grid, the Schönberg–Chandrasekhar factor is solved at every `sc_grid_stride`-th Υ
    /// and τ (and on the τ = 0 row) and interpolated in between; 1 solves every point (default
    /// 2: one fit costs tens of milliseconds; 4 left relative errors of 2e-3 at a τ spacing of
    /// 0.05, measured).
    pub sc_grid_stride: usize,
}

impl Default for Numerics {
    fn default() -> Self {
        Self {
            lane_emden_rtol: 1e-10,
            lane_emden_xi_start: 1e-4,
            wd_rtol: 1e-10,
            wd_log10_xc_min: -3.0,
            wd_log10_xc_max: 4.5,
            wd_points_per_decade: 12,
            wd_grid_stride: 8,
            breakup_grid_stride: 4,
            sc_grid_stride: 2,
        }
    }
}

/// Everything that selects the theory's bounds, the same at every grid point. Defaults follow
/// `structure.md` and `bounds.md`; each is documented on its field. The MMHB model-A constants
/// other than X (pp exponents, ε₀, photospheric fit) are those of [`ModelAParams::default`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct TheorySettings {
    /// The anisotropy ansatz τ parametrises (default density-squared, `CONVENTIONS.md`).
    pub anisotropy: Anisotropy,
    /// MMHB model: luminosity balance (model A, the default) or ignition temperature (model B).
    pub mmhb_model: MmhbModel,
    /// MMHB mode: anchored (default, anchor 0.075 M☉, floor 0.005 M☉) or raw (`bounds.md` §4).
    pub mmhb_mode: MmhbMode,
    /// Add |Φ_A − Φ_B| × scale to the MMHB floor in quadrature (default off, `bounds.md` §4).
    pub mmhb_model_difference_in_floor: bool,
    /// Surface gravity of model A's photosphere (default exterior, `bounds.md` §2.6).
    pub photosphere_gravity: PhotosphereGravity,
    /// Hydrogen mass fraction X of the MMHB models (default 0.75, Z = 0); μ_e = 2/(1+X) and
    /// μ = 4/(3+5X) follow (`bounds.md` §2.1).
    pub hydrogen_mass_fraction: f64,
    /// Ignition temperature of model B, K (default 3×10⁶ K, the conventional value).
    pub ignition_temperature_k: f64,
    /// Newtonian (default) or anchored Chandrasekhar mass (`structure.md` §4.6).
    pub chandrasekhar_mode: ChandrasekharMode,
    /// 1σ theory floor of the Chandrasekhar mass, M☉ (default 0.03, a choice; §4.6).
    pub chandrasekhar_floor_msun: f64,
    /// Fractional 1σ floor on white-dwarf radii (default 0.03, a choice; §4.6).
    pub wd_radius_floor_fraction: f64,
    /// Compositions and envelope of the Schönberg–Chandrasekhar fraction (default
    /// μ_env = 0.62, μ_core = 1.33, n_env = 3, coefficient 0.37; `bounds.md` §7).
    pub sc: ScParams,
    /// How the SC modified-gravity factor is obtained (default: the full core–envelope fit).
    pub sc_variant: ScVariant,
    /// The object of the reported break-up period.
    pub breakup: BreakupReference,
    /// Numerical settings.
    pub numerics: Numerics,
}

impl Default for TheorySettings {
    fn default() -> Self {
        Self {
            anisotropy: Anisotropy::DensitySquared,
            mmhb_model: MmhbModel::LuminosityBalance,
            mmhb_mode: MmhbMode::default(),
            mmhb_model_difference_in_floor: false,
            photosphere_gravity: PhotosphereGravity::Exterior,
            hydrogen_mass_fraction: 0.75,
            ignition_temperature_k: 3.0e6,
            chandrasekhar_mode: ChandrasekharMode::Newtonian,
            chandrasekhar_floor_msun: DEFAULT_CHANDRASEKHAR_FLOOR_MSUN,
            wd_radius_floor_fraction: DEFAULT_WD_RADIUS_FLOOR_FRACTION,
            sc: ScParams::default(),
            sc_variant: ScVariant::FullFit,
            breakup: BreakupReference::default(),
            numerics: Numerics::default(),
        }
    }
}

fn bad(name: &'static str, value: impl std::fmt::Display, why: &'static str) -> SettingsError {
    SettingsError {
        name,
        value: value.to_string(),
        why,
    }
}

fn positive(name: &'static str, v: f64) -> Result<(), SettingsError> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(bad(name, v, "must be finite and > 0"))
    }
}

impl TheorySettings {
    /// μ_e = 2/(1 + X) of the MMHB composition.
    pub fn mu_e(&self) -> f64 {
        2.0 / (1.0 + self.hydrogen_mass_fraction)
    }

    /// μ = 4/(3 + 5X) of the MMHB composition.
    pub fn mu(&self) -> f64 {
        4.0 / (3.0 + 5.0 * self.hydrogen_mass_fraction)
    }

    /// The MMHB configuration these settings select (model-A constants at their defaults, X and
    /// T_ign from here).
    pub fn mmhb_config(&self) -> MmhbConfig {
        MmhbConfig {
            model: self.mmhb_model,
            mode: self.mmhb_mode,
            model_a: ModelAParams {
                hydrogen_mass_fraction: self.hydrogen_mass_fraction,
                ..ModelAParams::default()
            },
            model_b: ModelBParams {
                hydrogen_mass_fraction: self.hydrogen_mass_fraction,
                ignition_temperature_k: self.ignition_temperature_k,
            },
            model_difference_in_floor: self.mmhb_model_difference_in_floor,
        }
    }

    /// The white-dwarf table options these settings select.
    pub fn wd_table_options(&self) -> WdTableOptions {
        WdTableOptions {
            log10_xc_min: self.numerics.wd_log10_xc_min,
            log10_xc_max: self.numerics.wd_log10_xc_max,
            points_per_decade: self.numerics.wd_points_per_decade,
            rtol: self.numerics.wd_rtol,
        }
    }

    /// Checks every field's domain.
    pub fn validate(&self) -> Result<(), SettingsError> {
        let x = self.hydrogen_mass_fraction;
        if !(x.is_finite() && x > 0.0 && x <= 1.0) {
            return Err(bad("hydrogen_mass_fraction", x, "must lie in (0, 1]"));
        }
        positive("ignition_temperature_k", self.ignition_temperature_k)?;
        if let MmhbMode::Anchored {
            anchor_msun,
            floor_msun,
        } = self.mmhb_mode
        {
            positive("mmhb_mode.anchor_msun", anchor_msun)?;
            if !(floor_msun.is_finite() && floor_msun >= 0.0) {
                return Err(bad(
                    "mmhb_mode.floor_msun",
                    floor_msun,
                    "must be finite and ≥ 0",
                ));
            }
        }
        if let ChandrasekharMode::Anchored { standard_msun } = self.chandrasekhar_mode {
            positive("chandrasekhar_mode.standard_msun", standard_msun)?;
        }
        let f = self.chandrasekhar_floor_msun;
        if !(f.is_finite() && f >= 0.0) {
            return Err(bad("chandrasekhar_floor_msun", f, "must be finite and ≥ 0"));
        }
        let f = self.wd_radius_floor_fraction;
        if !(f.is_finite() && (0.0..1.0).contains(&f)) {
            return Err(bad("wd_radius_floor_fraction", f, "must lie in [0, 1)"));
        }
        positive("sc.mu_env", self.sc.mu_env)?;
        positive("sc.mu_core", self.sc.mu_core)?;
        positive("sc.classic_coefficient", self.sc.classic_coefficient)?;
        if !(self.sc.n_env.is_finite() && self.sc.n_env >= 1.0 && self.sc.n_env < 5.0) {
            return Err(bad("sc.n_env", self.sc.n_env, "must lie in [1, 5)"));
        }
        positive("breakup.mass_msun", self.breakup.mass_msun)?;
        let xb = self.breakup.hydrogen_mass_fraction;
        if !(xb.is_finite() && (0.0..=1.0).contains(&xb)) {
            return Err(bad(
                "breakup.hydrogen_mass_fraction",
                xb,
                "must lie in [0, 1]",
            ));
        }
        let n = &self.numerics;
        for (name, v) in [
            ("numerics.lane_emden_rtol", n.lane_emden_rtol),
            ("numerics.wd_rtol", n.wd_rtol),
        ] {
            if !(1e-14..=1e-6).contains(&v) {
                return Err(bad(name, v, "must lie in [1e-14, 1e-6]"));
            }
        }
        if !(n.lane_emden_xi_start > 0.0 && n.lane_emden_xi_start <= 1e-2) {
            return Err(bad(
                "numerics.lane_emden_xi_start",
                n.lane_emden_xi_start,
                "must lie in (0, 1e-2]",
            ));
        }
        if !(n.wd_log10_xc_min.is_finite()
            && n.wd_log10_xc_max.is_finite()
            && n.wd_log10_xc_min < n.wd_log10_xc_max
            && n.wd_log10_xc_min >= -5.0
            && n.wd_log10_xc_max <= 6.0)
        {
            return Err(bad(
                "numerics.wd_log10_xc_min/max",
                format!("{}..{}", n.wd_log10_xc_min, n.wd_log10_xc_max),
                "need −5 ≤ min < max ≤ 6",
            ));
        }
        if !(2..=200).contains(&n.wd_points_per_decade) {
            return Err(bad(
                "numerics.wd_points_per_decade",
                n.wd_points_per_decade,
                "must lie in [2, 200]",
            ));
        }
        if n.wd_grid_stride == 0 || n.breakup_grid_stride == 0 || n.sc_grid_stride == 0 {
            return Err(bad(
                "numerics.*_grid_stride",
                format!(
                    "{}/{}/{}",
                    n.wd_grid_stride, n.breakup_grid_stride, n.sc_grid_stride
                ),
                "strides must be ≥ 1",
            ));
        }
        Ok(())
    }

    /// A canonical, line-per-field description of every setting (and every derived constant that
    /// the settings fix implicitly, such as the model-A parameters) with the crate version: the
    /// text a content-addressed cache hashes. Floats are written in Rust's shortest round-trip
    /// form, so equal settings give identical text and different settings different text.
    pub fn cache_key_text(&self) -> String {
        let mut s = String::new();
        let mut line = |k: &str, v: String| {
            s.push_str(k);
            s.push_str(" = ");
            s.push_str(&v);
            s.push('\n');
        };
        line(
            "dwarfbound theory settings",
            format!("v1 crate {}", env!("CARGO_PKG_VERSION")),
        );
        line("anisotropy", self.anisotropy.name().into());
        line("mmhb.model", self.mmhb_model.name().into());
        match self.mmhb_mode {
            MmhbMode::Anchored {
                anchor_msun,
                floor_msun,
            } => {
                line("mmhb.mode", "anchored".into());
                line("mmhb.anchor_msun", format!("{anchor_msun:?}"));
                line("mmhb.floor_msun", format!("{floor_msun:?}"));
            }
            MmhbMode::Raw => line("mmhb.mode", "raw".into()),
        }
        line(
            "mmhb.model_difference_in_floor",
            self.mmhb_model_difference_in_floor.to_string(),
        );
        line(
            "mmhb.photosphere_gravity",
            match self.photosphere_gravity {
                PhotosphereGravity::Exterior => "exterior",
                PhotosphereGravity::ScaledByAnisotropy => "scaled-by-anisotropy",
            }
            .into(),
        );
        line(
            "composition.hydrogen_mass_fraction",
            format!("{:?}", self.hydrogen_mass_fraction),
        );
        line("composition.mu_e", format!("{:?}", self.mu_e()));
        line("composition.mu", format!("{:?}", self.mu()));
        line(
            "mmhb.ignition_temperature_k",
            format!("{:?}", self.ignition_temperature_k),
        );
        let a = self.mmhb_config().model_a;
        line(
            "mmhb.model_a",
            format!(
                "s={:?} u={:?} eps0_erg_g_s={:?} a={:?} nu={:?} b1={:?} kappa_r_cm2_g={:?} mu_photosphere={:?} k={:?}",
                a.s,
                a.u,
                a.eps0_erg_g_s,
                a.a,
                a.nu,
                a.b1,
                a.kappa_r_cm2_g,
                a.mu_photosphere_value(),
                a.k_index()
            ),
        );
        match self.chandrasekhar_mode {
            ChandrasekharMode::Newtonian => line("chandrasekhar.mode", "newtonian".into()),
            ChandrasekharMode::Anchored { standard_msun } => {
                line("chandrasekhar.mode", "anchored".into());
                line("chandrasekhar.standard_msun", format!("{standard_msun:?}"));
            }
        }
        line(
            "chandrasekhar.floor_msun",
            format!("{:?}", self.chandrasekhar_floor_msun),
        );
        line(
            "white_dwarf.radius_floor_fraction",
            format!("{:?}", self.wd_radius_floor_fraction),
        );
        line(
            "sc",
            format!(
                "mu_env={:?} mu_core={:?} n_env={:?} classic_coefficient={:?} variant={}",
                self.sc.mu_env,
                self.sc.mu_core,
                self.sc.n_env,
                self.sc.classic_coefficient,
                self.sc_variant.name()
            ),
        );
        line(
            "breakup",
            format!(
                "mass_msun={:?} hydrogen_mass_fraction={:?} kappa={:?}",
                self.breakup.mass_msun,
                self.breakup.hydrogen_mass_fraction,
                self.breakup.model.kappa()
            ),
        );
        let n = &self.numerics;
        line(
            "numerics",
            format!(
                "lane_emden_rtol={:?} lane_emden_xi_start={:?} wd_rtol={:?} wd_log10_xc={:?}..{:?} wd_points_per_decade={} wd_grid_stride={} breakup_grid_stride={} sc_grid_stride={}",
                n.lane_emden_rtol,
                n.lane_emden_xi_start,
                n.wd_rtol,
                n.wd_log10_xc_min,
                n.wd_log10_xc_max,
                n.wd_points_per_decade,
                n.wd_grid_stride,
                n.breakup_grid_stride,
                n.sc_grid_stride
            ),
        );
        s
    }
}

/// Why a bound has no value at a point: a short stable code and a full sentence.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Failure {
    /// Short stable tag (`no-regular-centre`, `not-specified`, …; see [`TheoryError::code`]).
    pub code: String,
    /// The reason in words.
    pub reason: String,
}

impl From<&TheoryError> for Failure {
    fn from(e: &TheoryError) -> Self {
        Failure {
            code: e.code().to_string(),
            reason: e.to_string(),
        }
    }
}

impl From<TheoryError> for Failure {
    fn from(e: TheoryError) -> Self {
        Failure::from(&e)
    }
}

impl From<BoundError> for Failure {
    fn from(e: BoundError) -> Self {
        Failure {
            code: e.code().to_string(),
            reason: e.to_string(),
        }
    }
}

impl std::fmt::Display for Failure {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {}", self.code, self.reason)
    }
}

/// A bound's value or the reason it has none (a serialisable `Result`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Outcome<T> {
    /// The value.
    Ok(T),
    /// No model here, and why.
    Failed(Failure),
}

impl<T> Outcome<T> {
    /// The value, if any.
    pub fn ok(&self) -> Option<&T> {
        match self {
            Outcome::Ok(v) => Some(v),
            Outcome::Failed(_) => None,
        }
    }

    /// The failure, if any.
    pub fn failure(&self) -> Option<&Failure> {
        match self {
            Outcome::Ok(_) => None,
            Outcome::Failed(f) => Some(f),
        }
    }

    /// True for a value.
    pub fn is_ok(&self) -> bool {
        matches!(self, Outcome::Ok(_))
    }

    /// Maps the value.
    pub fn map<U>(self, f: impl FnOnce(T) -> U) -> Outcome<U> {
        match self {
            Outcome::Ok(v) => Outcome::Ok(f(v)),
            Outcome::Failed(e) => Outcome::Failed(e),
        }
    }

    /// As a borrowed `Result`.
    pub fn as_result(&self) -> Result<&T, &Failure> {
        match self {
            Outcome::Ok(v) => Ok(v),
            Outcome::Failed(e) => Err(e),
        }
    }
}

impl<T, E: Into<Failure>> From<Result<T, E>> for Outcome<T> {
    fn from(r: Result<T, E>) -> Self {
        match r {
            Ok(v) => Outcome::Ok(v),
            Err(e) => Outcome::Failed(e.into()),
        }
    }
}

/// Modified Lane–Emden constants at one point, in the true-G units of `bounds.md` §1.
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

/// The MMHB at one point (`bounds.md` §2–§4).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct MmhbValues {
    /// The bound used against data (anchored or raw), M☉.
    pub value_msun: f64,
    /// Raw analytic MMHB of the selected model, M☉.
    pub raw_msun: f64,
    /// 1σ theory floor, M☉.
    pub floor_msun: f64,
    /// Φ = raw(Υ,τ)/raw(0,0).
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

/// The Chandrasekhar mass at one point (`structure.md` §4.1, §4.6), for μ_e = 2; scale to any
/// μ_e with (2/μ_e)², exactly.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ChandrasekharValues {
    /// The bound used against data for μ_e = 2 (Newtonian or anchored), M☉.
    pub value_msun: f64,
    /// Newtonian pure-EOS M_Ch(Υ, τ) for μ_e = 2, M☉.
    pub newtonian_mu_e2_msun: f64,
    /// ω₃(Υ,τ)/ω₃(0,0).
    pub omega3_ratio: f64,
    /// 1σ theory floor, M☉.
    pub floor_msun: f64,
}

/// The Schönberg–Chandrasekhar fraction at one point (`bounds.md` §7; τ = 0 only).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ScValues {
    /// q_SC(Υ) = coefficient × λ² × ratio.
    pub q_sc: f64,
    /// q_SC(Υ)/q_SC(0).
    pub ratio: f64,
    /// λ = μ_env/μ_core.
    pub lambda: f64,
    /// True when the ratio was interpolated in Υ between solved grid nodes.
    pub interpolated: bool,
}

/// The break-up period of the reference object (`structure.md` §5).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct BreakupValues {
    /// Shortest rotation period, hours.
    pub period_h: f64,
    /// Non-rotating radius of the reference object, R☉.
    pub radius_rsun: f64,
    /// Full-EOS radius over the n = 3/2 polytrope radius at the same (Υ, τ, M, μ_e): the
    /// relativistic-electron correction (≈ 0.99).
    pub polytrope_correction: f64,
    /// True when `polytrope_correction` was interpolated in (Υ, τ) between solved grid nodes.
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
    /// −2/3 < Υ < −4/9: below the relativistic existence bound Υ₁ > −4/9 of Babichev, Koyama,
    /// Langlois, Saito & Sakstein 2016 (arXiv:1606.06627); theoretically disfavoured.
    BelowRelativisticBound,
    /// The Chandrasekhar mass is Newtonian order: towards M_Ch, GM/(Rc²) grows without bound and
    /// post-Newtonian physics (stronger in this theory class) lowers the real maximum
    /// (`structure.md` §4.5).
    PostNewtonianChandrasekhar,
    /// Gradient ansatz with τ ≠ 0 and exterior photospheric gravity: the anisotropy of this
    /// ansatz persists up to the photosphere, which model A and the break-up balance ignore
    /// (`bounds.md` §2.6, `structure.md` §5.3).
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

/// Every bound at one (Υ, τ).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PointBounds {
    /// Υ.
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

    /// Solves both Lane–Emden problems at (Υ, τ). For the gradient ansatz only τ = 0 is solved
    /// and τ follows by the exact rescaling G → (1 − τ)G (`structure.md` §2.2).
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

    /// The τ = 0 solutions at Υ (for the gradient ansatz, to be rescaled).
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

    /// The SC fraction at (Υ, τ) for the settings' ansatz. The standard-gravity fit is solved
    /// once per evaluator (see [`PointEvaluator::with_sc_reference`]).
    pub fn sc(&self, upsilon: f64, tau: f64) -> Outcome<ScValues> {
        self.sc_ratio(upsilon, tau)
            .map(|ratio| self.sc_values(ratio, false))
    }

    /// Solves and keeps the standard-gravity SC fit, so that [`PointEvaluator::sc`] needs one fit
    /// per Υ instead of two. Harmless if the fit fails (each point then reports why).
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

    /// q_SC(Υ, τ)/q_SC(0, 0) at (Υ, τ), or why not.
    pub fn sc_ratio(&self, upsilon: f64, tau: f64) -> Outcome<f64> {
        let p = &self.settings.sc;
        let a = self.settings.anisotropy;
        // `sc_fraction_with` validates everything; at Υ = τ = 0 it fits nothing.
        let (u_check, t_check) = if self.sc_reference_q.is_some() {
            (0.0, 0.0)
        } else {
            (upsilon, tau)
        };
        let checked = schonberg::sc_fraction_with(u_check, t_check, a, p, self.settings.sc_variant)
            .and_then(|q| {
                // Validates (Υ, τ, ansatz) when the fit itself is skipped above.
                ModifiedLaneEmden::new(p.n_env, upsilon, tau, a)?;
                Ok(q)
            });
        match (checked, self.sc_reference_q) {
            (Err(e), _) => Outcome::Failed(e.into()),
            (Ok(q), None) => Outcome::Ok(q.ratio),
            (Ok(_), Some(_)) if upsilon == 0.0 && tau == 0.0 => Outcome::Ok(1.0),
            // The same arithmetic as `sc_fraction_with`, with the Υ = τ = 0 fit solved once. The
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

    /// The reference object's full-EOS radius over its n = 3/2 polytrope radius at (Υ, τ),
    /// solved exactly (a secant search on ln x_c started from the polytrope, 3–4 full-EOS
    /// models). `le15` is the n = 3/2 solution at (Υ, τ).
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
                // R_b(M) = R_0(M s^{3/2})/√s (structure.md §2.2).
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

    /// The white-dwarf table at (Υ, τ) (gradient ansatz: the τ = 0 table rescaled).
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

    /// Every bound at (Υ, τ), each solved exactly; with the white-dwarf table when asked.
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
/// `structure.md` §4.3 become the n = 3/2 Lane–Emden system with u = u_c θ and
/// η = 2^{−3/4}u_c^{−1/4}ξ, m = 2^{−3/4}u_c^{3/4}ω.
pub fn polytrope_radius_dimless(m: f64, xi1: f64, omega: f64) -> f64 {
    0.5 * xi1 * (omega / m).cbrt()
}

/// η_s of the full-EOS model of dimensionless mass `m`: a secant search on ln x_c started from
/// the n = 3/2 polytrope with ω of the same (Υ, τ), ending with a linear interpolation of
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

/// All bounds in standard gravity (Υ = τ = 0) with these settings, white-dwarf table included.
pub fn standard_point(settings: &TheorySettings) -> Result<PointBounds, SettingsError> {
    point_bounds(0.0, 0.0, settings, true)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn settings_round_trip_and_key_changes_with_every_field() {
        let s = TheorySettings::default();
        let json = serde_json::to_string(&s).unwrap();
        let back: TheorySettings = serde_json::from_str(&json).unwrap();
        assert_eq!(s, back);
        // Missing fields take defaults; unknown ones are refused.
        let partial: TheorySettings =
            serde_json::from_str(r#"{"hydrogen_mass_fraction": 0.7}"#).unwrap();
        assert_eq!(partial.hydrogen_mass_fraction, 0.7);
        assert!(serde_json::from_str::<TheorySettings>(r#"{"bogus": 1}"#).is_err());
        let k0 = s.cache_key_text();
        let mut t = s;
        t.ignition_temperature_k = 3.0e6 + 1.0;
        assert_ne!(k0, t.cache_key_text());
        let mut t = s;
        t.numerics.wd_grid_stride = 4;
        assert_ne!(k0, t.cache_key_text());
        let mut t = s;
        t.breakup.model = BreakupModel::ScfN32;
        assert_ne!(k0, t.cache_key_text());
        assert!(k0.contains(env!("CARGO_PKG_VERSION")));
    }

    #[test]
    fn invalid_settings_are_named() {
        let s = TheorySettings {
            hydrogen_mass_fraction: 1.5,
            ..TheorySettings::default()
        };
        assert_eq!(s.validate().unwrap_err().name, "hydrogen_mass_fraction");
    }

    #[test]
    fn polytrope_start_matches_low_density_full_eos() {
        // structure.md §4.4: at low x_c the full EOS is an n = 3/2 polytrope (to ~x_c²).
        let eos = ChandrasekharEos::new(0.0, 0.0, Anisotropy::None).unwrap();
        let model = eos.model(1e-3).unwrap();
        let eta = polytrope_radius_dimless(model.mass_dimless, 3.6537537362, 2.7140551201);
        assert!((model.radius_dimless / eta - 1.0).abs() < 1e-5);
    }
}
