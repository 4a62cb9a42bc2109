//! Reader for votable files into a [`RawTable`](super::table::RawTable).

use std::path::Path;

use super::error::CatalogueError;
use super::table::RawTable;

/// Reads a votable file; `table` selects the table by name or 0-based index.
pub fn read(path: &Path, table: Option<&str>) -> Result<RawTable, CatalogueError> {
    let _ = table;
    Err(CatalogueError::Invalid {
        path: path.to_path_buf(),
        format: "votable",
        reason: "reader not built yet".into(),
    })
}
