//! Reader for CSV files into a [`RawTable`](super::table::RawTable).
//!
//! Lines starting with `#` before the header are comments (the demo catalogues say there that
//! their data are invented); after the header every line is data, so a row is never lost to a
//! comment rule. A header cell `mass[jupiterMass]` names column `mass` with unit `jupiterMass`.
//! A row with the wrong number of fields is kept (padded or cut) and flagged as malformed, so
//! that vetting quarantines it with its row number. Hand-wired on the `csv` crate rather than
//! polars because vetting needs every cell's raw text and every row, including broken ones.
//!
//! ```text
//! # Invented data for a fictional survey.
//! id,class,mass[jupiterMass],mass_err[jupiterMass]
//! A-1,brown_dwarf,62,4
//! ```

use std::io::{BufRead, Read};
use std::path::Path;

use super::error::CatalogueError;
use super::table::{Cell, ColumnMeta, RawRow, RawTable};

/// Splits `mass[jupiterMass]` into (`mass`, `Some("jupiterMass")`); the unit runs from the first
/// `[` to the last `]`, so that `mass[[solMass]]` carries the CDS log unit `[solMass]`.
fn split_header(cell: &str) -> ColumnMeta {
    let t = cell.trim();
    if let (Some(open), true) = (t.find('['), t.ends_with(']')) {
        if open > 0 {
            return ColumnMeta {
                name: t[..open].trim().to_string(),
                unit: Some(t[open + 1..t.len() - 1].trim().to_string()),
                ucd: None,
            };
        }
    }
    ColumnMeta {
        name: t.to_string(),
        unit: None,
        ucd: None,
    }
}

/// Reads a CSV file, streaming it: only the parsed table is held in memory.
pub fn read(path: &Path) -> Result<RawTable, CatalogueError> {
    let file = std::fs::File::open(path).map_err(|e| CatalogueError::Unreadable {
        path: path.to_path_buf(),
        reason: e.to_string(),
    })?;
    parse_from(path, std::io::BufReader::new(file))
}

/// Parses CSV bytes held in memory (tests).
#[cfg(test)]
fn parse(path: &Path, bytes: &[u8]) -> Result<RawTable, CatalogueError> {
    parse_from(path, bytes)
}

/// Parses CSV from a buffered reader.
fn parse_from(path: &Path, mut input: impl BufRead) -> Result<RawTable, CatalogueError> {
    let invalid = |reason: String| CatalogueError::Invalid {
        path: path.to_path_buf(),
        format: "csv",
        reason,
    };
    let unreadable = |e: std::io::Error| CatalogueError::Unreadable {
        path: path.to_path_buf(),
        reason: e.to_string(),
    };
    // Skip comment and blank lines before the header; keep the header line to hand back.
    let mut first = true;
    let mut header_line = Vec::new();
    loop {
        header_line.clear();
        let n = input
            .read_until(b'\n', &mut header_line)
            .map_err(unreadable)?;
        if n == 0 {
            return Err(invalid(
                "no header line (the file is empty or only comments)".into(),
            ));
        }
        if first {
            first = false;
            if header_line.starts_with(b"\xEF\xBB\xBF") {
                header_line.drain(..3);
            }
        }
        let is_blank = header_line.iter().all(|b| b.is_ascii_whitespace());
        if header_line.first() != Some(&b'#') && !is_blank {
            break;
        }
    }
    let rest = std::io::Cursor::new(header_line).chain(input);
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(rest);
    let mut records = reader.byte_records();
    let header = match records.next() {
        Some(Ok(h)) => h,
        Some(Err(e)) => return Err(invalid(format!("header: {e}"))),
        None => return Err(invalid("no header line".into())),
    };
    let mut columns = Vec::with_capacity(header.len());
    for (i, h) in header.iter().enumerate() {
        let h = std::str::from_utf8(h)
            .map_err(|_| invalid(format!("header field {} is not valid UTF-8", i + 1)))?;
        columns.push(split_header(h));
    }
    let ncols = columns.len();
    let mut table = RawTable {
        columns,
        ..RawTable::default()
    };
    for (i, rec) in records.enumerate() {
        let row_number = i + 1;
        let rec = rec.map_err(|e| {
            if e.is_io_error() {
                CatalogueError::Unreadable {
                    path: path.to_path_buf(),
                    reason: e.to_string(),
                }
            } else {
                invalid(format!("data row {row_number}: {e}"))
            }
        })?;
        let mut problem: Option<String> = None;
        if rec.len() != ncols {
            problem = Some(format!("expected {ncols} fields, found {}", rec.len()));
        }
        let mut cells = Vec::with_capacity(ncols);
        for field in rec.iter().take(ncols) {
            let text = match std::str::from_utf8(field) {
                Ok(t) => t.to_string(),
                Err(_) => {
                    problem.get_or_insert_with(|| "not valid UTF-8".to_string());
                    String::from_utf8_lossy(field).into_owned()
                }
            };
            cells.push(if text.is_empty() {
                Cell::Missing
            } else {
                Cell::Text(text)
            });
        }
        cells.resize(ncols, Cell::Missing);
        if let Some(p) = problem {
            table.malformed.push((row_number, p));
        }
        table.rows.push(RawRow { row_number, cells });
    }
    Ok(table)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn p(s: &str) -> RawTable {
        parse(Path::new("t.csv"), s.as_bytes()).unwrap()
    }

    #[test]
    fn comments_units_and_short_rows() {
        let t = p("# invented\n#\n\nid,mass[jupiterMass], radius \nA,1\nB,2,3\nC,4,5,6\n");
        assert_eq!(t.columns[0].name, "id");
        assert_eq!(t.columns[1].name, "mass");
        assert_eq!(t.columns[1].unit.as_deref(), Some("jupiterMass"));
        assert_eq!(t.columns[2].name, "radius");
        assert_eq!(t.rows.len(), 3);
        assert_eq!(t.rows[0].row_number, 1);
        assert_eq!(t.rows[0].cells[2], Cell::Missing);
        assert_eq!(t.rows[1].cells[2], Cell::Text("3".into()));
        assert_eq!(
            t.malformed,
            vec![
                (1, "expected 3 fields, found 2".to_string()),
                (3, "expected 3 fields, found 4".to_string())
            ]
        );
    }

    #[test]
    fn hash_after_header_is_data() {
        let t = p("id,mass\n#1,0.1\n");
        assert_eq!(t.rows.len(), 1);
        assert_eq!(t.rows[0].cells[0], Cell::Text("#1".into()));
    }

    #[test]
    fn log_unit_in_header_and_bom() {
        let t = p("\u{feff}id,mass[[solMass]],m2[log10(solMass)]\n");
        assert_eq!(t.columns[0].name, "id");
        assert_eq!(t.columns[1].unit.as_deref(), Some("[solMass]"));
        assert_eq!(t.columns[2].unit.as_deref(), Some("log10(solMass)"));
        assert!(t.rows.is_empty());
    }

    proptest::proptest! {
        #![proptest_config(proptest::prelude::ProptestConfig::with_cases(128))]
        /// Arbitrary bytes never panic; every data row keeps the header's width.
        #[test]
        fn arbitrary_bytes_do_not_panic(bytes in proptest::collection::vec(
            proptest::sample::select(b"ab,\"#\n\r \xff1".to_vec()), 0..200)) {
            if let Ok(t) = parse(Path::new("f.csv"), &bytes) {
                for (i, r) in t.rows.iter().enumerate() {
                    proptest::prop_assert_eq!(r.row_number, i + 1);
                    proptest::prop_assert_eq!(r.cells.len(), t.columns.len());
                }
            }
        }
    }

    #[test]
    fn empty_file_is_invalid() {
        for s in ["", "# only a comment\n", "\n\n"] {
            let e = parse(Path::new("e.csv"), s.as_bytes()).unwrap_err();
            assert!(e.to_string().contains("e.csv"), "{e}");
        }
    }
}
