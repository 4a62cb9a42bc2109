//! The reader interface: every file format is read into one [`RawTable`] of untyped cells.
//!
//! Vetting works on raw cells so that a bad value can be quarantined with its original text,
//! whatever the format. Readers only translate the file's own representation (text, binary
//! numbers, nulls, units from the file's metadata); they never validate or convert units.

use std::path::Path;
use std::str::FromStr;

use super::error::CatalogueError;

/// One cell as the file holds it.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    /// Empty text field, FITS `TNULL`/NaN, VOTable null, ECSV empty or masked value.
    Missing,
    /// A value the file stores as a number (binary formats). NaN is stored as [`Cell::Missing`]
    /// only when the format defines NaN as null; otherwise it stays a number and vetting rejects it.
    Number(f64),
    /// A value the file stores as text (CSV always; string columns elsewhere), untrimmed.
    Text(String),
}

/// A borrowed view of one cell, as vetting reads it: the streaming CSV path hands vetting slices
/// of its line buffer, so no cell is allocated; a [`RawTable`] row is viewed through
/// [`Cell::as_ref`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CellRef<'a> {
    /// See [`Cell::Missing`].
    Missing,
    /// See [`Cell::Number`].
    Number(f64),
    /// See [`Cell::Text`] (untrimmed).
    Text(&'a str),
}

impl Cell {
    /// The borrowed view of this cell.
    pub fn as_ref(&self) -> CellRef<'_> {
        match self {
            Cell::Missing => CellRef::Missing,
            Cell::Number(v) => CellRef::Number(*v),
            Cell::Text(s) => CellRef::Text(s),
        }
    }
}

/// A column's name and the metadata the file itself gives for it.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ColumnMeta {
    /// Name as written in the file (for CSV, without a `[unit]` suffix).
    pub name: String,
    /// Unit string from the file's metadata (FITS `TUNIT`, VOTable `unit`, ECSV `unit`,
    /// CSV header suffix `mass[jupiterMass]`), not yet parsed.
    pub unit: Option<String>,
    /// VOTable `ucd` attribute, if any (informative).
    pub ucd: Option<String>,
}

/// One data row.
#[derive(Debug, Clone, PartialEq)]
pub struct RawRow {
    /// 1-based index of the data row in the file (the first data row is 1, whatever the
    /// format); this is the `row` of `quarantine.csv` and the `source_row` of `accepted.csv`.
    pub row_number: usize,
    /// One cell per column of [`RawTable::columns`].
    pub cells: Vec<Cell>,
}

/// A whole table, read once.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct RawTable {
    /// Columns in file order.
    pub columns: Vec<ColumnMeta>,
    /// Data rows in file order. A row whose field count does not match the header is still
    /// returned (padded with [`Cell::Missing`] or truncated) and flagged in `malformed`.
    pub rows: Vec<RawRow>,
    /// Row numbers of rows the reader could only partly parse, with the reason; vetting
    /// quarantines them.
    pub malformed: Vec<(usize, String)>,
}

/// Supported file formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Format {
    /// Comma-separated text with one header line; `#` lines before it are comments.
    Csv,
    /// Apache Parquet.
    Parquet,
    /// FITS binary table (BINTABLE extension).
    Fits,
    /// IVOA VOTable (TABLEDATA, BINARY, BINARY2).
    VoTable,
    /// Astropy Enhanced CSV 1.0.
    Ecsv,
}

impl Format {
    /// Parses a `--format` value.
    pub fn from_name(name: &str) -> Option<Format> {
        match name.to_ascii_lowercase().as_str() {
            "csv" => Some(Format::Csv),
            "parquet" | "pq" => Some(Format::Parquet),
            "fits" | "fit" | "fts" => Some(Format::Fits),
            "votable" | "vot" | "xml" => Some(Format::VoTable),
            "ecsv" => Some(Format::Ecsv),
            _ => None,
        }
    }

    /// Chooses the format from the file extension (`.csv`, `.parquet`, `.fits`/`.fit`/`.fts`,
    /// `.vot`/`.xml`/`.votable`, `.ecsv`).
    pub fn from_path(path: &Path) -> Option<Format> {
        let ext = path.extension()?.to_str()?;
        Format::from_name(ext)
    }
}

/// A name that is not one of the catalogue formats.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("`{0}` is not one of csv, parquet, fits, votable, ecsv")]
pub struct ParseFormatError(pub String);

impl FromStr for Format {
    type Err = ParseFormatError;

    /// Parses a format name as [`Format::from_name`] does (any case; the extensions' spellings
    /// such as `pq`, `fit`, `vot` too), for `--format` and a config's `format` key.
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Format::from_name(s).ok_or_else(|| ParseFormatError(s.to_string()))
    }
}

/// Options a reader may need beyond the path.
#[derive(Debug, Clone, Default)]
pub struct ReadOptions {
    /// Format override; `None` means choose by extension.
    pub format: Option<Format>,
    /// FITS HDU or VOTable TABLE to read, by name or 0-based index; `None` means the first table.
    pub table: Option<String>,
}

/// Reads one file into a [`RawTable`], choosing the reader by format.
pub fn read_table(path: &Path, opts: &ReadOptions) -> Result<RawTable, CatalogueError> {
    read_table_columns(path, opts, None)
}

/// As [`read_table`], naming the file columns the caller will use (`None`: all). A reader that
/// can skip columns (Parquet) decodes only these, so that an unused column it cannot translate
/// does no harm; the other readers return every column.
pub fn read_table_columns(
    path: &Path,
    opts: &ReadOptions,
    columns: Option<&[String]>,
) -> Result<RawTable, CatalogueError> {
    let format = match opts.format {
        Some(f) => f,
        None => Format::from_path(path).ok_or_else(|| CatalogueError::UnknownFormat {
            path: path.to_path_buf(),
        })?,
    };
    // Last line of defence: a panic in any reader (or the library under it) is an invalid
    // file, reported in one line, never a crash. Readers with a known weak dependency also
    // guard it themselves with a more precise message.
    let name = match format {
        Format::Csv => "csv",
        Format::Parquet => "parquet",
        Format::Fits => "FITS",
        Format::VoTable => "VOTable",
        Format::Ecsv => "ECSV",
    };
    super::guard::quietly(|| match format {
        Format::Csv => super::read_csv::read(path),
        Format::Parquet => super::read_parquet::read(path, columns),
        Format::Fits => super::read_fits::read(path, opts.table.as_deref()),
        Format::VoTable => super::read_votable::read(path, opts.table.as_deref()),
        Format::Ecsv => super::read_ecsv::read(path),
    })
    .unwrap_or_else(|_| {
        Err(CatalogueError::Invalid {
            path: path.to_path_buf(),
            format: name,
            reason: "the decoder failed on this file (corrupt or unsupported content)".into(),
        })
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn format_names_parse_in_any_case() {
        // The names listed for `--format` in the README (common practice, no source).
        assert_eq!("CSV".parse::<Format>(), Ok(Format::Csv));
        assert_eq!("pq".parse::<Format>(), Ok(Format::Parquet));
        assert_eq!("votable".parse::<Format>(), Ok(Format::VoTable));
        assert_eq!(
            "xlsx".parse::<Format>().unwrap_err().to_string(),
            "`xlsx` is not one of csv, parquet, fits, votable, ecsv"
        );
    }
}
