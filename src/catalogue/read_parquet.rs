//! Reader for Apache Parquet files into a [`RawTable`](super::table::RawTable).
//!
//! Uses polars' eager `ParquetReader`. Floating columns become [`Cell::Number`] (a stored NaN
//! stays a number, since Parquet has real nulls; vetting rejects it), nulls become
//! [`Cell::Missing`], strings [`Cell::Text`]. Integers become numbers when an `f64` holds them
//! exactly (|n| ≤ 2⁵³) and exact decimal text otherwise, so that 64-bit survey identifiers
//! survive. Parquet carries no standard unit metadata: units come from the column map or the
//! defaults. Rows are numbered from 1 in file order.
//!
//! Only the columns the caller names ([`ReadOptions::columns`](super::table::ReadOptions)) are
//! decoded, so an unused column of a type we do not translate (timestamp, struct, list,
//! decimal, float16, map, …) never makes a file unreadable. The decoder runs inside
//! [`guard::quietly`](super::guard::quietly): a panic in it becomes a one-line "invalid
//! parquet file" error naming the file, with no panic message or backtrace.
//!
//! ```no_run
//! use dwarfbound::catalogue::table::{read_table, ReadOptions};
//! let table = read_table("survey.parquet".as_ref(), &ReadOptions::default())?;
//! println!("{} columns, {} rows", table.columns.len(), table.rows.len());
//! # Ok::<(), dwarfbound::catalogue::CatalogueError>(())
//! ```

use std::path::Path;

use polars::prelude::*;

use super::error::CatalogueError;
use super::guard;
use super::table::{Cell, ColumnMeta, RawRow, RawTable};

/// Largest integer magnitude an `f64` holds exactly.
const EXACT_INT_F64: u64 = 1 << 53;

/// Reads a Parquet file; with `wanted`, only those columns (the others present in the file are
/// skipped, names absent from it are left for vetting to report).
pub fn read(path: &Path, wanted: Option<&[String]>) -> Result<RawTable, CatalogueError> {
    let file = std::fs::File::open(path).map_err(|e| CatalogueError::Unreadable {
        path: path.to_path_buf(),
        reason: e.to_string(),
    })?;
    let invalid = |reason: String| CatalogueError::Invalid {
        path: path.to_path_buf(),
        format: "parquet",
        reason,
    };
    // polars may panic on corrupt files; a bad input file must be exit 2, not a crash.
    let df = guard::quietly(|| -> Result<DataFrame, String> {
        let text = |e: PolarsError| one_line(&e.to_string());
        let mut reader = ParquetReader::new(file);
        let columns = match wanted {
            None => None,
            Some(wanted) => {
                let schema = reader.schema().map_err(text)?;
                let mut keep: Vec<String> = Vec::new();
                for name in wanted {
                    let Some(field) = schema.get(name.as_str()) else {
                        continue;
                    };
                    if is_container(field.dtype()) {
                        return Err(format!(
                            "column `{name}` holds {:?} values (a container type), which \
                             cannot be read as a number or text",
                            field.dtype()
                        ));
                    }
                    if !keep.contains(name) {
                        keep.push(name.clone());
                    }
                }
                Some(keep)
            }
        };
        let read = columns.as_ref().map(|c| c.join(", "));
        reader
            .with_columns(columns)
            .finish()
            .map_err(|e| match read {
                Some(names) => format!("{} (reading columns {names})", text(e)),
                None => text(e),
            })
    })
    .map_err(|_| {
        invalid("the Parquet decoder failed on this file (corrupt or unsupported content)".into())
    })?
    .map_err(invalid)?;
    let height = df.height();
    let width = df.width();
    // Column by column into the rows, moving cells, so that at most one column exists twice.
    let mut columns = Vec::with_capacity(width);
    let mut rows: Vec<RawRow> = (0..height)
        .map(|r| RawRow {
            row_number: r + 1,
            cells: Vec::with_capacity(width),
        })
        .collect();
    for col in df.columns() {
        let name = col.name().as_str().to_string();
        let cells = column_cells(col)
            .map_err(|e| invalid(format!("column `{name}`: {}", one_line(&e.to_string()))))?;
        if cells.len() != height {
            return Err(invalid(format!(
                "column `{name}` has {} values for {height} rows",
                cells.len()
            )));
        }
        for (row, cell) in rows.iter_mut().zip(cells) {
            row.cells.push(cell);
        }
        columns.push(ColumnMeta {
            name,
            unit: None,
            ucd: None,
        });
    }
    Ok(RawTable {
        columns,
        rows,
        malformed: Vec::new(),
    })
}

/// Types whose values are containers of other values (struct, list, map, union): no cell text.
fn is_container(dtype: &ArrowDataType) -> bool {
    matches!(
        dtype,
        ArrowDataType::List(_)
            | ArrowDataType::LargeList(_)
            | ArrowDataType::FixedSizeList(_, _)
            | ArrowDataType::Struct(_)
            | ArrowDataType::Union(_)
            | ArrowDataType::Map(_, _)
    )
}

fn one_line(s: &str) -> String {
    s.split_whitespace().collect::<Vec<_>>().join(" ")
}

fn int_cell(v: Option<i128>) -> Cell {
    match v {
        None => Cell::Missing,
        Some(n) if n.unsigned_abs() <= EXACT_INT_F64 as u128 => Cell::Number(n as f64),
        Some(n) => Cell::Text(n.to_string()),
    }
}

/// Translates one column into cells.
fn column_cells(col: &Column) -> PolarsResult<Vec<Cell>> {
    let dtype = col.dtype();
    if dtype.is_float() {
        let c = col.cast(&DataType::Float64)?;
        Ok(c.f64()?
            .iter()
            .map(|v| v.map_or(Cell::Missing, Cell::Number))
            .collect())
    } else if dtype.is_unsigned_integer() {
        let c = col.cast(&DataType::UInt64)?;
        Ok(c.u64()?
            .iter()
            .map(|v| int_cell(v.map(i128::from)))
            .collect())
    } else if dtype.is_signed_integer() {
        let c = col.cast(&DataType::Int64)?;
        Ok(c.i64()?
            .iter()
            .map(|v| int_cell(v.map(i128::from)))
            .collect())
    } else {
        // Strings, booleans, and anything else polars can render as text.
        let c = col.cast(&DataType::String)?;
        Ok(c.str()?
            .iter()
            .map(|v| v.map_or(Cell::Missing, |s| Cell::Text(s.to_string())))
            .collect())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trip_numbers_strings_nulls_big_ints() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("t.parquet");
        let mut df = df!(
            "id" => [Some("a"), None, Some("c")],
            "mass" => [Some(0.5f64), Some(f64::NAN), None],
            "n" => [Some(3i64), Some(9_007_199_254_740_993i64), None],
            "f32" => [Some(0.25f32), None, Some(1.5f32)],
        )
        .unwrap();
        let mut f = std::fs::File::create(&path).unwrap();
        ParquetWriter::new(&mut f).finish(&mut df).unwrap();
        let t = read(&path, None).unwrap();
        let names: Vec<_> = t.columns.iter().map(|c| c.name.as_str()).collect();
        assert_eq!(names, ["id", "mass", "n", "f32"]);
        assert_eq!(t.rows.len(), 3);
        assert_eq!(t.rows[0].row_number, 1);
        assert_eq!(t.rows[0].cells[0], Cell::Text("a".into()));
        assert_eq!(t.rows[1].cells[0], Cell::Missing);
        assert_eq!(t.rows[0].cells[1], Cell::Number(0.5));
        assert!(matches!(t.rows[1].cells[1], Cell::Number(x) if x.is_nan()));
        assert_eq!(t.rows[2].cells[1], Cell::Missing);
        assert_eq!(t.rows[0].cells[2], Cell::Number(3.0));
        assert_eq!(t.rows[1].cells[2], Cell::Text("9007199254740993".into()));
        assert_eq!(t.rows[2].cells[3], Cell::Number(1.5));
    }

    #[test]
    fn garbage_is_invalid_not_a_panic() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("bad.parquet");
        std::fs::write(&path, b"PAR1 this is not parquet").unwrap();
        let e = read(&path, None).unwrap_err();
        assert!(e.to_string().contains("bad.parquet"), "{e}");
    }
}
