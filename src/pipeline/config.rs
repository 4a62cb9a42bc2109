//! The nightly configuration file (TOML): what to read, which grid, which models, where to
//! write, and when to raise the alarm.
//!
//! Unknown keys are errors, so that a typo never silently falls back to a default. Relative
//! paths are resolved against the folder that holds the config file, so a job runs the same
//! from any working directory.
//!
//! ```
//! let text = r#"
//! output = "reports/nightly"
//! [[catalogue]]
//! path = "stars.csv"
//! [grid]
//! upsilon = "-0.3:0.6:10"
//! tau = "0"
//! "#;
//! let cfg = dwarfbound::pipeline::config::Config::from_toml_str(text).unwrap();
//! assert_eq!(cfg.grid.tau, "0");
//! ```

use serde::Deserialize;
use std::path::{Path, PathBuf};

/// A configuration problem: exit code 2, naming the file and key.
#[derive(Debug, thiserror::Error)]
pub enum ConfigError {
    /// The file could not be read.
    #[error("{path}: cannot read config: {source}")]
    Unreadable {
        /// The config file.
        path: PathBuf,
        /// The I/O error.
        #[source]
        source: std::io::Error,
    },
    /// Not valid TOML, an unknown key, or a value of the wrong type.
    #[error("{path}: {message}")]
    Invalid {
        /// The config file.
        path: PathBuf,
        /// The parser's message, which names the key and line.
        message: String,
    },
}

/// The whole configuration.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct Config {
    /// Folder that receives dated run folders and the `latest` link.
    pub output: String,
    /// Folder of the theory cache (default `<output>/cache`).
    #[serde(default)]
    pub cache: Option<String>,
    /// Retention: keep this many runs in `<output>/runs/` (the current one included) and this
    /// many theory cache entries (the current run's included), removing the oldest; `None`
    /// keeps everything. `run --keep N` overrides it.
    #[serde(default)]
    pub keep: Option<usize>,
    /// Catalogues to read.
    #[serde(rename = "catalogue", default)]
    pub catalogues: Vec<CatalogueEntry>,
    /// The (ϒ, τ) grid.
    pub grid: GridConfig,
    /// Model choices.
    #[serde(default)]
    pub theory: TheoryConfig,
    /// Statistics choices.
    #[serde(default)]
    pub statistics: StatisticsConfig,
    /// When `run` exits with code 3.
    #[serde(default)]
    pub alarms: AlarmConfig,
}

/// One catalogue (a path or a glob) with its optional column map and format.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct CatalogueEntry {
    /// Path or glob pattern (`catalogs/*.csv`), relative to the config file.
    pub path: String,
    /// Column map (TOML), relative to the config file.
    #[serde(default)]
    pub map: Option<String>,
    /// Format override (csv, parquet, fits, votable, ecsv).
    #[serde(default)]
    pub format: Option<String>,
    /// FITS HDU or VOTable TABLE to read (name or 0-based index).
    #[serde(default)]
    pub table: Option<String>,
}

/// Grid axes as `start:stop:count` strings (or a single value), as on the command line.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct GridConfig {
    /// ϒ axis.
    pub upsilon: String,
    /// τ axis.
    pub tau: String,
}

/// Model choices of the theory.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields, default)]
pub struct TheoryConfig {
    /// Anisotropy ansatz: `none`, `density-squared` (default) or `gradient`.
    pub anisotropy: String,
    /// MMHB model: `luminosity` (default) or `ignition`, with the other spellings of
    /// [`MmhbModel`](crate::theory::mmhb::MmhbModel)'s parser (`luminosity-balance`, `a`;
    /// `ignition-temperature`, `b`; any case).
    pub mmhb_model: String,
    /// `anchored` (default) or `raw`.
    pub mmhb_mode: String,
    /// Standard-gravity MMHB the analytic shift is applied to, M☉.
    pub mmhb_anchor_msun: f64,
    /// Theory floor of the MMHB, M☉ (1σ); `None` means the default of the mode and model.
    pub mmhb_floor_msun: Option<f64>,
    /// Hydrogen mass fraction X of very-low-mass stars and brown dwarfs.
    pub hydrogen_fraction: f64,
    /// Ignition temperature of the ignition model, K.
    pub ignition_temperature_k: f64,
    /// Theory floor of the Chandrasekhar mass, M☉ (1σ).
    pub chandrasekhar_floor_msun: f64,
    /// Fractional theory floor of white-dwarf radii.
    pub wd_radius_floor_fraction: f64,
}

impl Default for TheoryConfig {
    fn default() -> Self {
        Self {
            anisotropy: "density-squared".into(),
            mmhb_model: "luminosity".into(),
            mmhb_mode: "anchored".into(),
            mmhb_anchor_msun: 0.075,
            mmhb_floor_msun: None,
            hydrogen_fraction: 0.75,
            ignition_temperature_k: 3.0e6,
            chandrasekhar_floor_msun: 0.03,
            wd_radius_floor_fraction: 0.03,
        }
    }
}

/// Statistics choices.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields, default)]
pub struct StatisticsConfig {
    /// Objects above this tension (σ) at standard gravity are listed as tensions.
    pub tension_sigma: f64,
    /// Objects younger than this (Gyr) are left out of the MMHB test.
    pub age_min_mmhb_gyr: f64,
    /// Include young objects in the MMHB test anyway.
    pub include_young: bool,
    /// Leave objects without an age out of the MMHB test.
    pub exclude_age_unknown: bool,
    /// Standard-gravity white-dwarf radius model: `hot` (default) or `cold`.
    pub wd_radius_model: String,
    /// Prior on the white dwarfs' true masses in the radius test: `population` (default) or
    /// `flat`.
    pub wd_mass_prior: String,
    /// Size of the radius test's per-object floor: `fitted` (default) or `fixed`.
    pub wd_floor_size: String,
    /// Keep objects with model-derived masses in their tests.
    pub include_model_masses: bool,
    /// Keep white dwarfs outside the radius model's domain in the radius test.
    pub include_out_of_domain: bool,
    /// `shared` (default: one shift per bound, a nuisance parameter) or `per-object` theory
    /// floor.
    pub floor: String,
    /// How a shared shift is eliminated: `profile` (default) or `marginalise`.
    pub nuisance: String,
    /// Likelihood of the class labels: `auto` (default), `product` or `calibrated`.
    pub likelihood: String,
    /// The calibrated likelihood's mass-function fit: `auto` (default; exact up to 16 384
    /// objects in one fit, grouped above), `exact` or `grouped` (docs/bounds.md §8.9).
    pub mass_function_fit: String,
    /// Add the population-aware term of docs/bounds.md §8.7.
    pub population_aware: bool,
    /// Its mass window [lo, hi] around the MMHB, M☉ (must contain every MMHB of the grid).
    pub population_window_msun: [f64; 2],
}

impl Default for StatisticsConfig {
    fn default() -> Self {
        Self {
            tension_sigma: 3.0,
            age_min_mmhb_gyr: 1.0,
            include_young: false,
            exclude_age_unknown: false,
            wd_radius_model: "hot".into(),
            wd_mass_prior: "population".into(),
            wd_floor_size: "fitted".into(),
            include_model_masses: false,
            include_out_of_domain: false,
            floor: "shared".into(),
            nuisance: "profile".into(),
            likelihood: "auto".into(),
            mass_function_fit: "auto".into(),
            population_aware: false,
            population_window_msun: [0.04, 0.11],
        }
    }
}

/// Alarm rules: any that fires makes `run` exit with code 3.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields, default)]
pub struct AlarmConfig {
    /// Fire when an object is in tension now that was not in the previous run.
    pub new_tension: bool,
    /// Fire when an end of the 95.45 % ϒ interval at τ = 0 moved by more than this.
    pub interval_shift: f64,
    /// Fire when the 95.45 % allowed fraction of the grid changed by more than this (absolute).
    pub area_change: f64,
}

impl Default for AlarmConfig {
    fn default() -> Self {
        Self {
            new_tension: true,
            interval_shift: 0.02,
            area_change: 0.05,
        }
    }
}

impl Config {
    /// Parses a config from TOML text.
    pub fn from_toml_str(text: &str) -> Result<Config, String> {
        toml::from_str(text).map_err(|e| e.to_string().trim().replace('\n', " "))
    }

    /// Reads and parses a config file.
    pub fn load(path: &Path) -> Result<Config, ConfigError> {
        let text = std::fs::read_to_string(path).map_err(|source| ConfigError::Unreadable {
            path: path.to_path_buf(),
            source,
        })?;
        Config::from_toml_str(&text).map_err(|message| ConfigError::Invalid {
            path: path.to_path_buf(),
            message,
        })
    }
}

/// Applies the statistics choices named in a config or on the command line (`floor`,
/// `nuisance`, `likelihood`, `mass_function_fit`) to the engine options; on a bad value
/// returns (key, message).
pub fn apply_statistics_choices(
    engine: &mut crate::confront::engine::EngineOptions,
    floor: &str,
    nuisance: &str,
    likelihood: &str,
    mass_function_fit: &str,
) -> Result<(), (&'static str, String)> {
    use crate::confront::mass_terms::{LikelihoodChoice, Systematics};
    use crate::confront::nuisance::NuisanceMethod;
    engine.mass_terms.systematics = Systematics::from_name(floor).ok_or((
        "floor",
        format!("`{floor}` is not `shared` or `per-object`"),
    ))?;
    engine.mass_terms.method = NuisanceMethod::from_name(nuisance).ok_or((
        "nuisance",
        format!("`{nuisance}` is not `profile` or `marginalise`"),
    ))?;
    engine.mass_terms.likelihood = LikelihoodChoice::from_name(likelihood).ok_or((
        "likelihood",
        format!("`{likelihood}` is not `auto`, `product` or `calibrated`"),
    ))?;
    engine.mass_terms.calibrated.deconvolve.grouping =
        crate::confront::calibrated::Grouping::from_name(mass_function_fit).ok_or((
            "mass_function_fit",
            format!("`{mass_function_fit}` is not `auto`, `exact` or `grouped`"),
        ))?;
    Ok(())
}

/// Resolves a path from the config against the config file's folder.
pub fn resolve(config_path: &Path, p: &str) -> PathBuf {
    let p = Path::new(p);
    if p.is_absolute() {
        return p.to_path_buf();
    }
    match config_path.parent() {
        Some(dir) if !dir.as_os_str().is_empty() => dir.join(p),
        _ => p.to_path_buf(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unknown_key_is_named() {
        let err = Config::from_toml_str(
            "output = \"x\"\nbogus = 1\n[grid]\nupsilon = \"0\"\ntau = \"0\"\n",
        )
        .unwrap_err();
        assert!(err.contains("bogus"), "{err}");
    }

    #[test]
    fn nested_unknown_key_is_named() {
        let err = Config::from_toml_str(
            "output = \"x\"\n[grid]\nupsilon = \"0\"\ntau = \"0\"\n[theory]\nanchor = 1\n",
        )
        .unwrap_err();
        assert!(err.contains("anchor"), "{err}");
    }
}
