//! Whole-file errors of catalogue reading (exit code 2). Row-level problems are not errors:
//! they become quarantine entries.

use std::path::PathBuf;

/// A problem that stops a whole catalogue from being read.
#[derive(Debug, thiserror::Error)]
pub enum CatalogueError {
    /// The file could not be opened or read.
    #[error("{path}: cannot read: {reason}")]
    Unreadable {
        /// The file.
        path: PathBuf,
        /// What went wrong.
        reason: String,
    },
    /// The extension names no supported format and `--format` was not given.
    #[error("{path}: unknown file format (use --format csv|parquet|fits|votable|ecsv)")]
    UnknownFormat {
        /// The file.
        path: PathBuf,
    },
    /// The file is not valid in its format (truncated, wrong header, …).
    #[error("{path}: invalid {format} file: {reason}")]
    Invalid {
        /// The file.
        path: PathBuf,
        /// The format it was read as.
        format: &'static str,
        /// What is wrong.
        reason: String,
    },
    /// A column that vetting needs is absent after applying the column map.
    #[error("{path}: missing required column `{column}`")]
    MissingColumn {
        /// The file.
        path: PathBuf,
        /// The canonical column name.
        column: String,
    },
    /// A column's unit cannot be parsed or does not fit the column's dimension.
    #[error("{path}: column `{column}`: unknown or unsuitable unit `{unit}`: {reason}")]
    BadUnit {
        /// The file (or column map).
        path: PathBuf,
        /// The column.
        column: String,
        /// The unit string as given.
        unit: String,
        /// Why it was refused.
        reason: String,
    },
    /// The column map names a file column that the file does not have.
    #[error(
        "{path}: column `{column}` (mapped to `{canonical}` by the column map) is not in the file"
    )]
    MappedColumnAbsent {
        /// The file.
        path: PathBuf,
        /// The canonical column.
        canonical: String,
        /// The file column the map names.
        column: String,
    },
    /// Two columns of the file carry the name vetting needs, so the choice would be a guess.
    #[error("{path}: column `{column}` appears more than once")]
    DuplicateColumn {
        /// The file.
        path: PathBuf,
        /// The repeated column name.
        column: String,
    },
    /// Two canonical columns are mapped to the same column of the file.
    #[error("{path}: canonical columns `{first}` and `{second}` are both mapped to the file's column `{column}`; each needs a column of its own")]
    SharedColumn {
        /// The file.
        path: PathBuf,
        /// The file column.
        column: String,
        /// The first canonical column (in canonical order).
        first: String,
        /// The second canonical column.
        second: String,
    },
    /// Rows in ≠ accepted + quarantined: a bug in vetting, never the user's fault (exit 1).
    #[error("{path}: internal error: {rows_in} rows in but {accepted} accepted + {quarantined} quarantined")]
    Unreconciled {
        /// The file.
        path: PathBuf,
        /// Data rows read.
        rows_in: usize,
        /// Rows accepted.
        accepted: usize,
        /// Rows quarantined.
        quarantined: usize,
    },
    /// The column map is unreadable or has an unknown key.
    #[error("{path}: column map: {reason}")]
    BadMap {
        /// The map file.
        path: PathBuf,
        /// What is wrong (names the key).
        reason: String,
    },
}

impl CatalogueError {
    /// True for errors that are bugs in dwarfbound (exit 1) rather than problems of the input
    /// (exit 2).
    pub fn is_internal(&self) -> bool {
        matches!(self, CatalogueError::Unreconciled { .. })
    }
}
