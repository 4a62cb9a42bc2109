//! Reader for Apache Parquet files into a [`RawTable`](super::table::RawTable).
//!
//! Uses polars' eager `ParquetReader`. Floating columns become [`Cell::Number`] (a stored NaN
//! stays a number, since Parquet has real nulls; vetting rejects it), nulls become
//! [`Cell::Missing`], strings [`Cell::Text`]. Integers become numbers when an `f64` holds them
//! exactly (|n| ≤ 2⁵³) and exact decimal text otherwise, so that 64-bit survey identifiers
//! survive. Parquet carries no standard unit metadata: units come from the column map or the
//! defaults. Rows are numbered from 1 in file order.
//!
//! [`vet_streaming`] is the path `vet` and `confront` take: it reads a few row groups at a time
//! (about [`CHUNK_ROWS`] rows) through polars' row slice and vets each slice while the next one
//! is decoded, so that the file is never held as a table of cells (two slices at most);
//! [`read`] returns the whole table like every other reader.
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

use super::colmap::ColumnMap;
use super::error::CatalogueError;
use super::guard;
use super::table::{Cell, CellRef, ColumnMeta, RawRow, RawTable};
use super::vet::{
    BlockOutcomes, CatalogueObject, CatalogueTally, ObjectSink, QuarantinedRow, RowVetter,
};

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
        let mut reader = ParquetReader::new(file);
        let columns = select_columns(&mut reader, wanted)?;
        finish(reader.with_columns(columns.clone()), columns.as_deref())
    })
    .map_err(|_| invalid(DECODER_FAILED.into()))?
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

/// The one-line reason of a panic in the decoder.
const DECODER_FAILED: &str =
    "the Parquet decoder failed on this file (corrupt or unsupported content)";

/// Rows read (and vetted) at a time by [`vet_streaming`]: whole row groups are read until at
/// least this many rows are in hand, so a row group is never decoded twice.
pub const CHUNK_ROWS: usize = 65_536;

/// The columns of `wanted` present in the file, in `wanted`'s order without repeats (`None`:
/// all); a container-typed one is an error.
fn select_columns(
    reader: &mut ParquetReader<std::fs::File>,
    wanted: Option<&[String]>,
) -> Result<Option<Vec<String>>, String> {
    let Some(wanted) = wanted else {
        return Ok(None);
    };
    let schema = reader.schema().map_err(|e| one_line(&e.to_string()))?;
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
    Ok(Some(keep))
}

/// Runs a configured reader; the error names the columns read.
fn finish(
    reader: ParquetReader<std::fs::File>,
    columns: Option<&[String]>,
) -> Result<DataFrame, String> {
    reader.finish().map_err(|e| {
        let text = one_line(&e.to_string());
        match columns {
            Some(names) => format!("{text} (reading columns {})", names.join(", ")),
            None => text,
        }
    })
}

/// Rows of a slice vetted as one parallel task.
const PARALLEL_ROWS: usize = 8192;

/// One column of a slice, ready to be viewed cell by cell without allocating per cell.
enum SliceColumn<'a> {
    /// Numbers (and the rare integer beyond 2⁵³ as exact text), as [`column_cells`] gives.
    Cells(Vec<Cell>),
    /// Text borrowed from the decoded column.
    Text(Vec<Option<&'a str>>),
}

impl SliceColumn<'_> {
    fn get(&self, row: usize) -> CellRef<'_> {
        match self {
            SliceColumn::Cells(c) => c.get(row).map_or(CellRef::Missing, Cell::as_ref),
            SliceColumn::Text(t) => match t.get(row) {
                Some(Some(s)) => CellRef::Text(s),
                _ => CellRef::Missing,
            },
        }
    }
}

/// Reads and vets a Parquet file a slice of row groups at a time (about [`CHUNK_ROWS`] rows):
/// memory holds one slice's cells, the accepted objects, the quarantined rows and the ids, not
/// the file. Gives exactly what [`read`] followed by [`vet_table`](super::vet::vet_table) gives,
/// with the same messages.
pub fn vet_streaming(
    path: &Path,
    label: &str,
    map: Option<&ColumnMap>,
    wanted: &[String],
    mut sink: Option<&mut dyn ObjectSink>,
) -> Result<(Vec<CatalogueObject>, Vec<QuarantinedRow>, CatalogueTally), CatalogueError> {
    let unreadable = |e: std::io::Error| CatalogueError::Unreadable {
        path: path.to_path_buf(),
        reason: e.to_string(),
    };
    let file = std::fs::File::open(path).map_err(unreadable)?;
    let invalid = |reason: String| CatalogueError::Invalid {
        path: path.to_path_buf(),
        format: "parquet",
        reason,
    };
    // The file's metadata and the columns to read, once.
    let (metadata, columns) = guard::quietly(|| -> Result<_, String> {
        let mut reader = ParquetReader::new(file.try_clone().map_err(|e| e.to_string())?);
        let metadata = reader
            .get_metadata()
            .map_err(|e| one_line(&e.to_string()))?
            .clone();
        let columns = select_columns(&mut reader, Some(wanted))?;
        Ok((metadata, columns))
    })
    .map_err(|_| invalid(DECODER_FAILED.into()))?
    .map_err(invalid)?;
    // Slices of whole row groups; a file without rows is read once, for its columns.
    let mut slices: Vec<(usize, usize)> = Vec::new();
    let mut start = 0;
    let mut len = 0;
    for rg in &metadata.row_groups {
        len += rg.num_rows();
        if len >= CHUNK_ROWS {
            slices.push((start, len));
            start += len;
            len = 0;
        }
    }
    if len > 0 || slices.is_empty() {
        slices.push((start, len.max(1)));
    }
    let bar = crate::progress::bar(metadata.num_rows as u64, "reading catalogue", false);
    let mut vetter: Option<RowVetter<'_>> = None;
    let mut outcomes: Vec<BlockOutcomes> = Vec::new();
    let mut vet_slice = |df: DataFrame, offset: usize| -> Result<(), CatalogueError> {
        let v = match &mut vetter {
            Some(v) => v,
            None => {
                let metas: Vec<ColumnMeta> = df
                    .columns()
                    .iter()
                    .map(|c| ColumnMeta {
                        name: c.name().as_str().to_string(),
                        unit: None,
                        ucd: None,
                    })
                    .collect();
                let v =
                    vetter.insert(RowVetter::new(label, &metas, map)?.streaming(sink.is_some()));
                // The row count comes from the file: never trusted beyond one row per byte.
                let bytes = file.metadata().map_or(0, |m| m.len());
                v.reserve(metadata.num_rows.min(usize::try_from(bytes).unwrap_or(0)));
                v
            }
        };
        let height = df.height();
        // Text columns are cast first and kept, so that their cells can borrow from them.
        let text: Vec<Option<Column>> = df
            .columns()
            .iter()
            .map(|c| {
                let d = c.dtype();
                if d.is_float() || d.is_integer() {
                    Ok(None)
                } else {
                    c.cast(&DataType::String).map(Some)
                }
            })
            .collect::<PolarsResult<_>>()
            .map_err(|e| invalid(one_line(&e.to_string())))?;
        let mut slice_columns = Vec::with_capacity(df.width());
        for (col, text) in df.columns().iter().zip(&text) {
            let name = col.name().as_str();
            let bad =
                |e: PolarsError| invalid(format!("column `{name}`: {}", one_line(&e.to_string())));
            let c = match text {
                Some(t) => SliceColumn::Text(t.str().map_err(bad)?.iter().collect()),
                None => SliceColumn::Cells(column_cells(col).map_err(bad)?),
            };
            let n = match &c {
                SliceColumn::Cells(v) => v.len(),
                SliceColumn::Text(v) => v.len(),
            };
            if n != height {
                return Err(invalid(format!(
                    "column `{name}` has {n} values for {height} rows"
                )));
            }
            slice_columns.push(c);
        }
        // The slice's rows in parallel runs of PARALLEL_ROWS, accepted in row order (as the
        // CSV reader's blocks).
        let runs = height.div_ceil(PARALLEL_ROWS);
        if outcomes.len() < runs {
            outcomes.resize_with(runs, BlockOutcomes::default);
        }
        {
            use rayon::prelude::*;
            let shared: &RowVetter<'_> = v;
            let slice_columns = &slice_columns;
            outcomes[..runs]
                .par_iter_mut()
                .enumerate()
                .for_each(|(k, out)| {
                    let mut cells: Vec<CellRef<'_>> = Vec::with_capacity(slice_columns.len());
                    for r in k * PARALLEL_ROWS..((k + 1) * PARALLEL_ROWS).min(height) {
                        cells.clear();
                        cells.extend(slice_columns.iter().map(|c| c.get(r)));
                        shared.vet_into(out, offset + r + 1, &cells, None);
                    }
                });
        }
        for out in &mut outcomes[..runs] {
            v.accept_block(out, super::vet::reborrow(&mut sink));
        }
        bar.inc(height as u64);
        Ok(())
    };
    let decode = |(offset, rows): (usize, usize)| -> Result<DataFrame, CatalogueError> {
        guard::quietly(|| -> Result<DataFrame, String> {
            let mut reader = ParquetReader::new(file.try_clone().map_err(|e| e.to_string())?)
                .with_slice(Some((offset, rows)))
                .with_columns(columns.clone());
            reader.set_metadata(metadata.clone());
            finish(reader, columns.as_deref())
        })
        .map_err(|_| invalid(DECODER_FAILED.into()))?
        .map_err(invalid)
    };
    // Each slice is decoded while the one before it is vetted and accepted (both were
    // serial: polars' decoding of a slice and the ids' check of its rows): the same rows in
    // the same order, one more slice's columns in memory.
    let mut pending = match slices.first() {
        Some(&first) => Some(decode(first)?),
        None => None,
    };
    for (i, &(offset, _)) in slices.iter().enumerate() {
        let Some(df) = pending.take() else { break };
        let following = slices.get(i + 1).copied();
        let (decoded, vetted) = rayon::join(|| following.map(decode), || vet_slice(df, offset));
        vetted?;
        pending = decoded.transpose()?;
    }
    bar.finish_and_clear();
    match vetter {
        Some(v) => v.finish_into(sink),
        None => Err(invalid(DECODER_FAILED.into())),
    }
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
    fn streaming_vet_equals_vetting_the_whole_table() {
        // The streaming path must give exactly what reading the table and vetting it gives
        // (common practice, no source): here across slices of several row groups, with a
        // duplicate id, a null mass, a NaN mass and an implausible brown dwarf among the rows.
        let n = 140_000usize;
        let ids: Vec<String> = (0..n)
            .map(|i| {
                if i == 100_001 {
                    "S5".into()
                } else {
                    format!("S{i}")
                }
            })
            .collect();
        let class: Vec<&str> = (0..n)
            .map(|i| {
                if i % 3 == 0 {
                    "brown_dwarf"
                } else {
                    "hburning"
                }
            })
            .collect();
        let mass: Vec<Option<f64>> = (0..n)
            .map(|i| match i {
                7 => None,
                70_000 => Some(f64::NAN),
                99_999 => Some(0.5),
                _ => Some(0.05 + (i % 100) as f64 * 1e-3),
            })
            .collect();
        let err: Vec<f64> = (0..n).map(|i| 0.001 + (i % 7) as f64 * 1e-4).collect();
        let mut df = df!("id" => ids, "class" => class, "mass" => mass, "mass_err" => err).unwrap();
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("s.parquet");
        let mut f = std::fs::File::create(&path).unwrap();
        ParquetWriter::new(&mut f)
            .with_row_group_size(Some(30_000))
            .finish(&mut df)
            .unwrap();
        let wanted: Vec<String> = ["id", "class", "mass", "mass_err"]
            .iter()
            .map(|c| c.to_string())
            .collect();
        let streamed = vet_streaming(&path, "s.parquet", None, &wanted, None).unwrap();
        let table = read(&path, Some(&wanted)).unwrap();
        let whole = crate::catalogue::vet::vet_table("s.parquet", &table, None).unwrap();
        assert_eq!(streamed, whole);
        assert_eq!(streamed.2.rows_in, n);
        assert_eq!(streamed.1.len(), 4);
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
