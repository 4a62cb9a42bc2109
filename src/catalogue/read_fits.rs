//! Reader for fits files into a [`RawTable`](super::table::RawTable).

use std::path::Path;

use super::error::CatalogueError;
use super::table::RawTable;

/// Reads a fits file; `table` selects the table by name or 0-based index.
pub fn read(path: &Path, table: Option<&str>) -> Result<RawTable, CatalogueError> {
    let _ = table;
    Err(CatalogueError::Invalid {
        path: path.to_path_buf(),
        format: "fits",
        reason: "reader not built yet".into(),
    })
}
