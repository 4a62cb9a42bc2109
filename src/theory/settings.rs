//! The settings that select the theory's bounds, their validation, and the identity a cache
//! keys on.
//!
//! One job: say what a computation of the theory depends on. [`TheorySettings`] holds every
//! choice that is the same at every grid point (ansatz, MMHB model and mode, compositions,
//! floors, numerics); [`TheorySettings::validate`] checks each field's domain; and
//! [`SettingsIdentity`] is everything that fixes the numbers — the settings, the constants they
//! fix implicitly and the crate version — serialised with serde. Because the identity is the
//! derived serialisation of the whole struct, a field added to the settings changes the
//! cache key by construction, so it can never silently reuse an entry computed without it.
//!
//! ```
//! use dwarfbound::theory::settings::TheorySettings;
//!
//! let s = TheorySettings::default();
//! assert!(s.validate().is_ok());
//! let mut t = s;
//! t.numerics.wd_grid_stride = 4;
//! assert_ne!(s.cache_key_text(), t.cache_key_text());
//! ```

use serde::{Deserialize, Serialize};

use crate::theory::mmhb::{MmhbConfig, MmhbMode, MmhbModel, ModelAParams, ModelBParams};
use crate::theory::rotation::BreakupModel;
use crate::theory::schonberg::{ScParams, ScVariant};
use crate::theory::white_dwarf::WdTableOptions;
use crate::theory::Anisotropy;

/// Default Chandrasekhar-mass theory floor, M☉: a choice sized to the few-per-cent gap between
/// the Newtonian M_Ch and realistic maximum masses (`docs/structure.md` §4.6, item 7 of §7).
pub const DEFAULT_CHANDRASEKHAR_FLOOR_MSUN: f64 = 0.03;

/// Default fractional theory floor on white-dwarf radii: a choice (`docs/structure.md` §4.6).
pub const DEFAULT_WD_RADIUS_FLOOR_FRACTION: f64 = 0.03;

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

/// How the Chandrasekhar mass used against data is built (`docs/structure.md` §4.6).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
#[serde(rename_all = "kebab-case", tag = "mode")]
pub enum ChandrasekharMode {
    /// The Newtonian, pure-EOS value 5.82519/μ_e² M☉ × ω₃(ϒ,τ)/ω₃(0,0): conservative for
    /// excluding ϒ < 0 (every neglected effect lowers the real maximum). The default.
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

/// Which surface gravity model A's photosphere feels (`docs/bounds.md` §2.6).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum PhotosphereGravity {
    /// The exterior GM/R²: right for the density-squared ansatz, whose anisotropy vanishes in
    /// the atmosphere. The default (`docs/bounds.md` §2.6, `docs/structure.md` §5.3).
    #[default]
    Exterior,
    /// (1 − τ)GM/R² for the gradient ansatz, whose anisotropy persists up to the photosphere;
    /// identical to `Exterior` for the other ansätze.
    ScaledByAnisotropy,
}

/// The object whose break-up period is reported at every point (`docs/structure.md` §5.4): by
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
    /// ϒ ∈ [−0.66, 0.6], τ ∈ [−0.3, 0.3].
    pub lane_emden_rtol: f64,
    /// Where the Lane–Emden central series hands over to the integrator (default 1e-4, the
    /// ξ₀ of `docs/structure.md` §3.3).
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
    /// (and the last) and interpolated in (ϒ, τ) in between; 1 solves every point (default 8).
    pub wd_grid_stride: usize,
    /// In a grid, the break-up reference radius correction (full EOS over polytrope, ≈ 0.998) is
    /// solved at every `breakup_grid_stride`-th point and interpolated in between; 1 solves
    /// every point (default 4).
    pub breakup_grid_stride: usize,
    /// In a grid, the Schönberg–Chandrasekhar factor is solved at every `sc_grid_stride`-th ϒ
    /// and τ (and on the τ = 0 row, which stays exact) and interpolated in between; 1 solves
    /// every point. Default 8: one fit costs about 30 ms, so a 91 × 61 grid needs ~100 fits
    /// instead of ~1 400 at stride 2; the price is a relative interpolation error of about 3e-3
    /// off the τ = 0 row (measured, and reported with the grid). The fraction enters no
    /// likelihood; it is reported only.
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
            sc_grid_stride: 8,
        }
    }
}

/// Everything that selects the theory's bounds, the same at every grid point. Defaults follow
/// `docs/structure.md` and `docs/bounds.md`; each is documented on its field. The MMHB model-A constants
/// other than X (pp exponents, ε₀, photospheric fit) are those of [`ModelAParams::default`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct TheorySettings {
    /// The anisotropy ansatz τ parametrises (default density-squared, the README).
    pub anisotropy: Anisotropy,
    /// MMHB model: luminosity balance (model A, the default) or ignition temperature (model B).
    pub mmhb_model: MmhbModel,
    /// MMHB mode: anchored (default, anchor 0.075 M☉, floor 0.005 M☉) or raw (`docs/bounds.md` §4).
    pub mmhb_mode: MmhbMode,
    /// Add |Φ_A − Φ_B| × scale to the MMHB floor in quadrature (default off, `docs/bounds.md` §4).
    pub mmhb_model_difference_in_floor: bool,
    /// Surface gravity of model A's photosphere (default exterior, `docs/bounds.md` §2.6).
    pub photosphere_gravity: PhotosphereGravity,
    /// Hydrogen mass fraction X of the MMHB models (default 0.75, Z = 0); μ_e = 2/(1+X) and
    /// μ = 4/(3+5X) follow (`docs/bounds.md` §2.1).
    pub hydrogen_mass_fraction: f64,
    /// Ignition temperature of model B, K (default 3×10⁶ K, the conventional value).
    pub ignition_temperature_k: f64,
    /// Newtonian (default) or anchored Chandrasekhar mass (`docs/structure.md` §4.6).
    pub chandrasekhar_mode: ChandrasekharMode,
    /// 1σ theory floor of the Chandrasekhar mass, M☉ (default 0.03, a choice; §4.6).
    pub chandrasekhar_floor_msun: f64,
    /// Fractional 1σ floor on white-dwarf radii (default 0.03, a choice; §4.6).
    pub wd_radius_floor_fraction: f64,
    /// Compositions and envelope of the Schönberg–Chandrasekhar fraction (default
    /// μ_env = 0.62, μ_core = 1.33, n_env = 3, coefficient 0.37; `docs/bounds.md` §7).
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

    /// Everything that fixes the numbers these settings give (see [`SettingsIdentity`]).
    pub fn identity(&self) -> SettingsIdentity {
        SettingsIdentity {
            format: SETTINGS_IDENTITY_FORMAT.to_string(),
            crate_version: env!("CARGO_PKG_VERSION").to_string(),
            settings: *self,
            mmhb: self.mmhb_config(),
            breakup_kappa: self.breakup.model.kappa(),
        }
    }

    /// The canonical text a content-addressed cache hashes: [`TheorySettings::identity`] as
    /// compact JSON (fields in declaration order, floats in shortest round-trip form), so equal
    /// settings give identical text and different settings different text.
    pub fn cache_key_text(&self) -> String {
        self.identity().to_json()
    }
}

/// The format tag of [`SettingsIdentity`]; bumped when its layout changes.
pub const SETTINGS_IDENTITY_FORMAT: &str = "dwarfbound-theory-settings-2";

/// Everything that fixes the numbers of a theory computation: the settings as given, the
/// constants they fix implicitly (the MMHB model parameters, the break-up flattening factor)
/// and the crate version. Built by serde from the whole structs, never field by field by hand,
/// so that no field can be left out of a cache key.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SettingsIdentity {
    /// [`SETTINGS_IDENTITY_FORMAT`].
    pub format: String,
    /// The crate version that computed (or will compute) the numbers.
    pub crate_version: String,
    /// The settings.
    pub settings: TheorySettings,
    /// The MMHB configuration the settings select, with the model constants at their values.
    pub mmhb: MmhbConfig,
    /// Flattening factor κ of the break-up model.
    pub breakup_kappa: f64,
}

impl SettingsIdentity {
    /// Compact JSON. Serialising these plain structs cannot fail (non-finite floats become
    /// `null`, and validated settings have none); the fallback is the `Debug` text, which is
    /// equally deterministic, so the key stays distinct even then.
    pub fn to_json(&self) -> String {
        serde_json::to_string(self).unwrap_or_else(|e| format!("{self:?} ({e})"))
    }
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
    fn key_names_every_settings_field() {
        // The key is the serde serialisation: every field of the settings (and of its nested
        // structs) appears in it under its own name, so a new field cannot be left out.
        let key: serde_json::Value =
            serde_json::from_str(&TheorySettings::default().cache_key_text()).unwrap();
        let settings = serde_json::to_value(TheorySettings::default()).unwrap();
        assert_eq!(key["settings"], settings);
        for field in [
            "numerics",
            "breakup",
            "sc",
            "mmhb_mode",
            "wd_radius_floor_fraction",
        ] {
            assert!(settings.get(field).is_some(), "{field}");
        }
        let back: SettingsIdentity =
            serde_json::from_str(&TheorySettings::default().cache_key_text()).unwrap();
        assert_eq!(back, TheorySettings::default().identity());
    }

    #[test]
    fn invalid_settings_are_named() {
        let s = TheorySettings {
            hydrogen_mass_fraction: 1.5,
            ..TheorySettings::default()
        };
        assert_eq!(s.validate().unwrap_err().name, "hydrogen_mass_fraction");
    }
}
