//! Reader for CSV files into a [`RawTable`](super::table::RawTable).
//!
//! Lines starting with `#` before the header are comments (the demo catalogues say there that
//! their data are invented); after the header every line is data, so a row is never lost to a
//! comment rule. A header cell `mass[jupiterMass]` names column `mass` with unit `jupiterMass`.
//! A row with the wrong number of fields is kept (padded or cut) and flagged as malformed, so
//! that vetting quarantines it with its row number. Each physical line is one row: a line whose
//! quotes do not balance (a stray `"`) is quarantined with its row number and reading resumes
//! at the next line, so quoted fields cannot span lines. A UTF-16 or semicolon-delimited file
//! is refused with a message that says so. Written by hand rather than on the `csv` crate or
//! polars: vetting needs every cell's raw text and every row, and a quoting error must stay
//! inside its line (the `csv` crate lets an open quote run to the end of the file).
//!
//! ```text
//! # Invented data for a fictional survey.
//! id,class,mass[jupiterMass],mass_err[jupiterMass]
//! A-1,brown_dwarf,62,4
//! ```

use std::io::BufRead;
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

/// Splits one physical line into fields (RFC 4180 quoting within the line: a field that starts
/// with `"` runs to its closing `"`, with `""` for a quote inside). `None` when a quote is
/// unbalanced or stray (a quote inside an unquoted field, or text after a closing quote).
fn split_line(line: &[u8]) -> Option<Vec<Vec<u8>>> {
    let mut fields = Vec::new();
    let mut field = Vec::new();
    let mut i = 0;
    loop {
        if line.get(i) == Some(&b'"') {
            i += 1;
            loop {
                match line.get(i) {
                    None => return None,
                    Some(b'"') if line.get(i + 1) == Some(&b'"') => {
                        field.push(b'"');
                        i += 2;
                    }
                    Some(b'"') => {
                        i += 1;
                        break;
                    }
                    Some(&c) => {
                        field.push(c);
                        i += 1;
                    }
                }
            }
            match line.get(i) {
                None | Some(b',') => {}
                Some(_) => return None,
            }
        } else {
            while let Some(&c) = line.get(i) {
                match c {
                    b',' => break,
                    b'"' => return None,
                    _ => field.push(c),
                }
                i += 1;
            }
        }
        fields.push(std::mem::take(&mut field));
        if i >= line.len() {
            return Some(fields);
        }
        i += 1; // the comma
    }
}

/// Removes the line end (`\n` or `\r\n`).
fn trim_line_end(line: &mut Vec<u8>) {
    if line.last() == Some(&b'\n') {
        line.pop();
        if line.last() == Some(&b'\r') {
            line.pop();
        }
    }
}

/// What a file that is not comma-separated UTF-8 looks like, from its header line.
fn diagnose_header(header: &[u8], fields: usize) -> Option<String> {
    if header.starts_with(b"\xFF\xFE") || header.starts_with(b"\xFE\xFF") {
        return Some(
            "the file is UTF-16 text (it starts with a UTF-16 byte-order mark); save it as UTF-8"
                .into(),
        );
    }
    if header.contains(&0) {
        return Some(
            "the header holds NUL bytes: the file is probably UTF-16 text or binary, not UTF-8 CSV"
                .into(),
        );
    }
    if fields == 1 {
        for (sep, what) in [(b';', "semicolon"), (b'\t', "tab"), (b'|', "pipe")] {
            if header.contains(&sep) {
                return Some(format!(
                    "the header has a single column and contains {what}s: the file looks \
                     {what}-delimited; dwarfbound reads comma-separated values only"
                ));
            }
        }
    }
    None
}

/// Parses CSV from a buffered reader, one physical line per row: a row whose quotes do not
/// balance is quarantined with its row number and reading resumes at the next line, so one
/// stray quote never swallows the rest of the file (quoted fields cannot span lines).
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
    // Skip comment and blank lines before the header.
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
    trim_line_end(&mut header_line);
    let header = split_line(&header_line);
    if let Some(why) = diagnose_header(&header_line, header.as_ref().map_or(0, Vec::len)) {
        return Err(invalid(why));
    }
    let Some(header) = header else {
        return Err(invalid("header: unbalanced or stray quote".into()));
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
    let mut line = Vec::new();
    let mut row_number = 0;
    loop {
        line.clear();
        if input.read_until(b'\n', &mut line).map_err(unreadable)? == 0 {
            break;
        }
        trim_line_end(&mut line);
        if line.is_empty() {
            continue;
        }
        row_number += 1;
        let Some(fields) = split_line(&line) else {
            table.malformed.push((
                row_number,
                "unbalanced or stray quote (the row is skipped; reading resumes at the next line)"
                    .to_string(),
            ));
            table.rows.push(RawRow {
                row_number,
                cells: vec![Cell::Missing; ncols],
            });
            continue;
        };
        let mut problem: Option<String> = None;
        if fields.len() != ncols {
            problem = Some(format!("expected {ncols} fields, found {}", fields.len()));
        }
        let mut cells = Vec::with_capacity(ncols);
        for field in fields.into_iter().take(ncols) {
            let text = match String::from_utf8(field) {
                Ok(t) => t,
                Err(e) => {
                    problem.get_or_insert_with(|| "not valid UTF-8".to_string());
                    String::from_utf8_lossy(e.as_bytes()).into_owned()
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

    #[test]
    fn a_stray_quote_costs_one_row() {
        // Issue 13 item 5: one `"` in row 2 used to swallow the rest of the file.
        let mut text = String::from("id,mass\n");
        for k in 1..=300 {
            let q = if k == 2 { "\"" } else { "" };
            text.push_str(&format!("{q}A{k},{k}\n"));
        }
        let t = p(&text);
        assert_eq!(t.rows.len(), 300);
        assert_eq!(t.malformed.len(), 1);
        assert_eq!(t.malformed[0].0, 2);
        assert!(t.malformed[0].1.contains("quote"));
        assert_eq!(t.rows[2].cells[0], Cell::Text("A3".into()));
        // RFC 4180 quoting within a line still works.
        let t = p("id,ref\n\"A,1\",\"say \"\"hi\"\"\"\n");
        assert!(t.malformed.is_empty());
        assert_eq!(t.rows[0].cells[0], Cell::Text("A,1".into()));
        assert_eq!(t.rows[0].cells[1], Cell::Text("say \"hi\"".into()));
    }

    #[test]
    fn files_that_are_not_comma_separated_utf8_say_what_they_are() {
        let e = |bytes: &[u8]| parse(Path::new("x.csv"), bytes).unwrap_err().to_string();
        assert!(e(b"id;class;mass\na;b;1\n").contains("semicolon-delimited"));
        assert!(e(b"id\tclass\tmass\n").contains("tab-delimited"));
        let utf16: Vec<u8> = "id,class\n"
            .encode_utf16()
            .flat_map(|u| u.to_le_bytes())
            .collect();
        assert!(e(&utf16).contains("UTF-16"));
        assert!(e(b"\xff\xfei\0d\0").contains("UTF-16"));
        assert!(e(b"id,\"class\n").contains("quote"));
    }
}
