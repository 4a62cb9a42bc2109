//! What one confrontation is asked to do: the catalogues to read, the grid, the theory and the
//! statistics choices. Plain data, filled by the command line or a run config and read by
//! [`crate::pipeline::confront::run_confrontation`].
//!
//! ```
//! use dwarfbound::pipeline::confront::StatisticsSettings;
//! // Objects above 3σ at standard gravity are listed as tensions unless told otherwise.
//! assert_eq!(StatisticsSettings::default().tension_sigma, 3.0);
//! ```

use std::path::PathBuf;

use crate::catalogue::table::Format;
use crate::confront::engine::EngineOptions;
use crate::theory::point::TheorySettings;
use crate::theory::Axis;

/// One catalogue to read, with its own column map and format.
#[derive(Debug, Clone)]
pub struct CatalogueInput {
    /// The file.
    pub path: PathBuf,
    /// Its column map, if any.
    pub map: Option<PathBuf>,
    /// Format override.
    pub format: Option<Format>,
    /// FITS HDU / VOTable TABLE (name or index); `None`: the map's choice or the first table.
    pub table: Option<String>,
}

/// Statistics choices of a confrontation.
#[derive(Debug, Clone)]
pub struct StatisticsSettings {
    /// Objects above this tension (σ) at standard gravity are listed as tensions.
    pub tension_sigma: f64,
    /// Age rule and tabulation of the comparison.
    pub engine: EngineOptions,
}

impl Default for StatisticsSettings {
    fn default() -> Self {
        Self {
            tension_sigma: 3.0,
            engine: EngineOptions::default(),
        }
    }
}

/// Everything a confrontation needs.
#[derive(Debug, Clone)]
pub struct ConfrontSettings {
    /// Catalogues in order.
    pub catalogues: Vec<CatalogueInput>,
    /// ϒ axis.
    pub upsilon: Axis,
    /// τ axis.
    pub tau: Axis,
    /// Theory settings.
    pub theory: TheorySettings,
    /// Statistics settings.
    pub statistics: StatisticsSettings,
    /// File format of the per-object table (`objects.csv` or `objects.parquet`).
    pub objects_format: ObjectsFormat,
}

/// File format of the per-object table. Both are written row group by row group, never held
/// whole in memory.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ObjectsFormat {
    /// `objects.csv` (the default; nightly runs compare it with the previous run's).
    #[default]
    Csv,
    /// `objects.parquet`: the same columns, typed (text, integers, floats, booleans; empty
    /// cells are nulls), for catalogues whose CSV would be hundreds of megabytes.
    Parquet,
}

impl ObjectsFormat {
    /// The file name in the output folder.
    pub fn file_name(self) -> &'static str {
        match self {
            ObjectsFormat::Csv => "objects.csv",
            ObjectsFormat::Parquet => "objects.parquet",
        }
    }

    /// The file name of the other format, which a run in this one removes from its folder (an
    /// older per-object table beside the new one would be read as this run's).
    pub fn other_file_name(self) -> &'static str {
        match self {
            ObjectsFormat::Csv => ObjectsFormat::Parquet.file_name(),
            ObjectsFormat::Parquet => ObjectsFormat::Csv.file_name(),
        }
    }
}
