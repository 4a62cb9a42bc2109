//! Reader for parquet files into a [`RawTable`](super::table::RawTable).

use std::path::Path;

use super::error::CatalogueError;
use super::table::RawTable;

/// Reads a parquet file.
pub fn read(path: &Path) -> Result<RawTable, CatalogueError> {
    Err(CatalogueError::Invalid {
        path: path.to_path_buf(),
        format: "parquet",
        reason: "reader not built yet".into(),
    })
}
