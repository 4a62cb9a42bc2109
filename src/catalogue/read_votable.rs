//! Reader for IVOA VOTable 1.4 files into a [`RawTable`](super::table::RawTable).
//!
//! Parsing is the `votable` crate's (TABLEDATA, BINARY and BINARY2). Its in-memory parser is
//! used, not its streaming `VOTableIterator`: in votable 0.7.0 that iterator ends a RESOURCE at
//! the first `</DATA>`, so a second TABLE in the same RESOURCE fails with "Unexpected start tag
//! TABLE in tag VOTABLE" (seen on astropy-written files with two tables). The chosen table is
//! then converted row by row, each parsed row freed once converted, so at most about one copy
//! of it is held; the other tables of the document are dropped before conversion.
//!
//! ```no_run
//! use dwarfbound::catalogue::table::{read_table, ReadOptions};
//! let opts = ReadOptions { table: Some("catalogue".into()), ..Default::default() };
//! let table = read_table(std::path::Path::new("stars.vot"), &opts)?;
//! let mass = table.columns.iter().find(|c| c.name == "mass").unwrap();
//! println!("mass unit {:?}, ucd {:?}", mass.unit, mass.ucd);
//! # Ok::<(), dwarfbound::catalogue::CatalogueError>(())
//! ```
//!
//! The table is chosen with `table`: a 0-based index among all TABLEs of the document (in
//! document order, nested RESOURCEs included), or a TABLE `name` (or else `ID`), compared
//! exactly; by default the first TABLE. A TABLE without DATA gives its columns and no rows; a
//! TABLE serialised as FITS inside the VOTable is refused.
//!
//! Cells: null is [`Cell::Missing`] — an empty `<TD/>`, a value equal to the FIELD's `VALUES
//! null` (integers, and char fields too), a BINARY2 null flag, NaN in a float or double field
//! (VOTable 1.4 §6.1), an empty string. Integer fields give numbers (a `long` beyond ±2⁵³ stays
//! exact as decimal text), `float` fields the exact 32-bit value widened to a double, booleans
//! and bits text `true`/`false`, char/unicodeChar strings their text without NUL padding. Array
//! and complex fields give one text cell such as `[1, 2, 3]` or `(1.0, -2.0)` (bit arrays as
//! the crate renders them, `[0, 1, 1]`).
//! A value that does not parse as its FIELD's datatype makes the whole file invalid (the
//! parser stops there; its message names the problem but not always the row).
//! `FIELD unit` is the column's unit and `FIELD ucd` its UCD, as written.

use std::fs::File;
use std::io::{BufRead, BufReader};
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::Path;

use votable::data::DataElem;
use votable::field::Field;
use votable::impls::mem::InMemTableDataRows;
use votable::impls::VOTableValue;
use votable::resource::{Resource, ResourceOrTable};
use votable::table::{Table, TableElem};
use votable::votable::VOTableWrapper;

use super::error::CatalogueError;
use super::table::{Cell, ColumnMeta, RawRow, RawTable};

/// Largest integer magnitude every value up to which a double holds exactly (2⁵³).
const EXACT_INT_LIMIT: i64 = 1 << 53;

/// Reads a VOTable file; `table` selects the TABLE by 0-based index or by name.
pub fn read(path: &Path, table: Option<&str>) -> Result<RawTable, CatalogueError> {
    let file = File::open(path).map_err(|e| CatalogueError::Unreadable {
        path: path.to_path_buf(),
        reason: e.to_string(),
    })?;
    let invalid = |reason: String| CatalogueError::Invalid {
        path: path.to_path_buf(),
        format: "VOTable",
        reason,
    };
    check_well_formed(BufReader::with_capacity(1 << 16, file)).map_err(invalid)?;
    let file = File::open(path).map_err(|e| CatalogueError::Unreadable {
        path: path.to_path_buf(),
        reason: e.to_string(),
    })?;
    let reader = BufReader::with_capacity(1 << 16, file);
    // The parser is a dependency: should it panic on some malformed input, the file is
    // reported as invalid instead of taking the program down.
    let outcome = catch_unwind(AssertUnwindSafe(|| read_from(reader, table)));
    let reason = match outcome {
        Ok(Ok(t)) => return Ok(t),
        Ok(Err(reason)) => reason,
        Err(_) => "the VOTable parser failed on malformed input".to_string(),
    };
    Err(invalid(reason))
}

/// Checks that the XML elements are balanced, the document complete and every base64 STREAM
/// clean, in one streaming pass. votable 0.7.0 loops forever when the file ends inside a
/// BINARY/BINARY2 element (its inner loops discard the end-of-file event), and it ends a binary
/// table silently, keeping the rows read so far, at a byte that is not base64; such files must
/// be refused before it sees them. Not a full XML validator: names, nesting, comments, CDATA,
/// processing instructions and quoted attribute values only.
fn check_well_formed<R: BufRead>(reader: R) -> Result<(), String> {
    let mut bytes = reader.bytes().peekable();
    let mut line = 1usize;
    let mut stack: Vec<Vec<u8>> = Vec::new();
    let mut seen_root = false;
    // Next byte, counting lines; `Ok(None)` at end of file.
    let mut next = |line: &mut usize| -> Result<Option<u8>, String> {
        match bytes.next() {
            None => Ok(None),
            Some(Ok(b)) => {
                if b == b'\n' {
                    *line += 1;
                }
                Ok(Some(b))
            }
            Some(Err(e)) => Err(format!("line {line}: {e}")),
        }
    };
    let ended = |line: usize, inside: &str| format!("line {line}: the file ends inside {inside}");
    // Inside a STREAM: count of base64 characters and of `=` padding seen. The crate stops
    // silently at a byte that is not base64 and returns the rows read so far.
    let mut stream: Option<(usize, usize)> = None;
    while let Some(b) = next(&mut line)? {
        if b != b'<' {
            if let Some((count, padding)) = stream.as_mut() {
                match b {
                    b' ' | b'\t' | b'\n' | b'\r' => {}
                    b'=' if *padding < 2 => {
                        *padding += 1;
                        *count += 1;
                    }
                    b'A'..=b'Z' | b'a'..=b'z' | b'0'..=b'9' | b'+' | b'/' if *padding == 0 => {
                        *count += 1
                    }
                    _ => {
                        return Err(format!(
                            "line {line}: byte 0x{b:02x} is not valid base64 inside a STREAM"
                        ))
                    }
                }
            }
            continue;
        }
        let start_line = line;
        let Some(first) = next(&mut line)? else {
            return Err(ended(line, "a tag"));
        };
        match first {
            b'!' | b'?' => {
                // Comment, CDATA, DOCTYPE or processing instruction: skip to its end marker.
                let mut head: Vec<u8> = Vec::new();
                let (end, what): (&[u8], &str) = loop {
                    let Some(c) = next(&mut line)? else {
                        return Err(ended(line, "a markup declaration"));
                    };
                    head.push(c);
                    if first == b'?' {
                        break (b"?>", "a processing instruction");
                    }
                    if head.starts_with(b"--") {
                        break (b"-->", "a comment");
                    }
                    if head.starts_with(b"[CDATA[") {
                        break (b"]]>", "a CDATA section");
                    }
                    if !(b"--".starts_with(&head) || b"[CDATA[".starts_with(&head)) {
                        break (b">", "a declaration");
                    }
                };
                // The end marker must follow the opening one (`<!-->` is no complete comment).
                let mut tail: Vec<u8> = if end == b">" || end == b"?>" {
                    head
                } else {
                    Vec::new()
                };
                while !tail.ends_with(end) {
                    let Some(c) = next(&mut line)? else {
                        return Err(ended(line, what));
                    };
                    tail.push(c);
                    if tail.len() > 3 {
                        tail.remove(0);
                    }
                }
            }
            b'/' => {
                let mut name = Vec::new();
                loop {
                    match next(&mut line)? {
                        None => return Err(ended(line, "an end tag")),
                        Some(b'>') => break,
                        Some(c) if c.is_ascii_whitespace() => {}
                        Some(c) => name.push(c),
                    }
                }
                if name == b"STREAM" {
                    if let Some((count, _)) = stream.take() {
                        if count % 4 != 0 {
                            return Err(format!(
                                "line {start_line}: the base64 STREAM has {count} characters, \
                                 not a multiple of 4 (cut or corrupted)"
                            ));
                        }
                    }
                }
                match stack.pop() {
                    Some(open) if open == name => {}
                    Some(open) => {
                        return Err(format!(
                            "line {start_line}: </{}> closes <{}>",
                            String::from_utf8_lossy(&name),
                            String::from_utf8_lossy(&open)
                        ))
                    }
                    None => {
                        return Err(format!(
                            "line {start_line}: </{}> closes nothing",
                            String::from_utf8_lossy(&name)
                        ))
                    }
                }
            }
            c => {
                if !stack.is_empty() || !seen_root {
                    seen_root = true;
                } else {
                    return Err(format!(
                        "line {start_line}: a second root element after the document's end"
                    ));
                }
                let mut name = vec![c];
                let mut in_name = true;
                let mut quote: Option<u8> = None;
                let mut previous = c;
                loop {
                    let Some(c) = next(&mut line)? else {
                        return Err(ended(line, "a start tag"));
                    };
                    if let Some(q) = quote {
                        if c == q {
                            quote = None;
                        }
                    } else if c == b'"' || c == b'\'' {
                        quote = Some(c);
                    } else if c == b'>' {
                        break;
                    }
                    if in_name && (c.is_ascii_whitespace() || c == b'/' || c == b'>') {
                        in_name = false;
                    }
                    if in_name {
                        name.push(c);
                    }
                    previous = c;
                }
                if previous != b'/' {
                    if name == b"STREAM" {
                        stream = Some((0, 0));
                    }
                    stack.push(name);
                }
            }
        }
    }
    if let Some(open) = stack.last() {
        return Err(format!(
            "the file ends before </{}> (truncated?)",
            String::from_utf8_lossy(open)
        ));
    }
    if !seen_root {
        return Err("no XML element found".into());
    }
    Ok(())
}

/// Which TABLE the caller asked for.
enum Selection<'a> {
    First,
    Index(usize),
    Name(&'a str),
}

type MemTable = Table<InMemTableDataRows>;

/// Moves every TABLE of a RESOURCE (nested RESOURCEs included) into `out`, in document order.
fn collect_tables(resource: Resource<InMemTableDataRows>, out: &mut Vec<MemTable>) {
    for sub in resource.sub_elems {
        match sub.resource_or_table {
            ResourceOrTable::Table(t) => out.push(t),
            ResourceOrTable::Resource(r) => collect_tables(r, out),
        }
    }
}

fn read_from<R: BufRead>(reader: R, table: Option<&str>) -> Result<RawTable, String> {
    let selection = match table.map(str::trim) {
        None | Some("") => Selection::First,
        Some(s) => match s.parse::<usize>() {
            Ok(i) => Selection::Index(i),
            Err(_) => Selection::Name(s),
        },
    };
    let votable = VOTableWrapper::<InMemTableDataRows>::from_ivoa_xml_reader(reader)
        .map_err(|e| format!("XML: {e}"))?
        .unwrap();
    let mut tables = Vec::new();
    for resource in votable.resources {
        collect_tables(resource, &mut tables);
    }
    let label = |t: &MemTable| {
        t.name
            .clone()
            .or_else(|| t.id.clone())
            .unwrap_or_else(|| "(unnamed)".into())
    };
    let position = match &selection {
        Selection::First => (!tables.is_empty()).then_some(0),
        Selection::Index(i) => (*i < tables.len()).then_some(*i),
        Selection::Name(n) => tables
            .iter()
            .position(|t| t.name.as_deref() == Some(*n))
            .or_else(|| tables.iter().position(|t| t.id.as_deref() == Some(*n))),
    };
    let Some(position) = position else {
        let what = match selection {
            Selection::First => "no TABLE".to_string(),
            Selection::Index(i) => format!("no TABLE number {i}"),
            Selection::Name(n) => format!("no TABLE named `{n}`"),
        };
        let seen: Vec<String> = tables
            .iter()
            .enumerate()
            .map(|(i, t)| format!("{i}: `{}`", label(t)))
            .collect();
        return Err(if seen.is_empty() {
            what
        } else {
            format!("{what}; tables present: {}", seen.join(", "))
        });
    };
    let chosen = tables.swap_remove(position);
    drop(tables);
    convert(chosen, &label)
}

/// Turns the chosen table into a [`RawTable`], freeing the parser's rows as it goes.
fn convert(table: MemTable, label: &dyn Fn(&MemTable) -> String) -> Result<RawTable, String> {
    let name = label(&table);
    let fields: Vec<&Field> = table
        .elems
        .iter()
        .filter_map(|e| match e {
            TableElem::Field(f) => Some(f),
            _ => None,
        })
        .collect();
    let columns: Vec<ColumnMeta> = fields
        .iter()
        .map(|f| ColumnMeta {
            name: f.name.clone(),
            unit: f.unit.clone().filter(|u| !u.trim().is_empty()),
            ucd: f.ucd.clone().filter(|u| !u.trim().is_empty()),
        })
        .collect();
    let nulls: Vec<Option<String>> = fields
        .iter()
        .map(|f| f.values.as_ref().and_then(|v| v.null.clone()))
        .collect();
    let content = match table.data.map(|d| d.data) {
        None => None,
        Some(DataElem::TableData(td)) => Some(td.content),
        Some(DataElem::Binary(b)) => b.stream.content,
        Some(DataElem::Binary2(b)) => b.stream.content,
        Some(DataElem::Fits(_)) => {
            return Err(format!(
                "table `{name}` is serialised as FITS inside the VOTable, which is not supported"
            ))
        }
    };
    let source_rows = content.map(|c| c.rows).unwrap_or_default();
    let mut rows = Vec::with_capacity(source_rows.len());
    let mut malformed = Vec::new();
    for (i, values) in source_rows.into_iter().enumerate() {
        let row_number = i + 1;
        if values.len() != columns.len() {
            malformed.push((
                row_number,
                format!("{} values for {} fields", values.len(), columns.len()),
            ));
        }
        let mut cells: Vec<Cell> = values
            .into_iter()
            .zip(&nulls)
            .map(|(v, null)| to_cell(v, null.as_deref()))
            .collect();
        cells.resize(columns.len(), Cell::Missing);
        rows.push(RawRow { row_number, cells });
    }
    Ok(RawTable {
        columns,
        rows,
        malformed,
    })
}

fn long_cell(v: i64) -> Cell {
    if v.unsigned_abs() <= EXACT_INT_LIMIT as u64 {
        Cell::Number(v as f64)
    } else {
        Cell::Text(v.to_string())
    }
}

fn float_cell(v: f64) -> Cell {
    if v.is_nan() {
        Cell::Missing
    } else {
        Cell::Number(v)
    }
}

fn text_cell(s: &str, null: Option<&str>) -> Cell {
    let s = s.trim_end_matches('\0');
    if s.is_empty() || Some(s) == null {
        Cell::Missing
    } else {
        Cell::Text(s.to_string())
    }
}

fn join<T>(items: &[T], show: impl Fn(&T) -> String) -> String {
    let parts: Vec<String> = items.iter().map(show).collect();
    format!("[{}]", parts.join(", "))
}

fn to_cell(v: VOTableValue, null: Option<&str>) -> Cell {
    match v {
        VOTableValue::Null => Cell::Missing,
        VOTableValue::Bool(b) => Cell::Text(b.to_string()),
        VOTableValue::Byte(x) => Cell::Number(f64::from(x)),
        VOTableValue::Short(x) => Cell::Number(f64::from(x)),
        VOTableValue::Int(x) => Cell::Number(f64::from(x)),
        VOTableValue::Long(x) => long_cell(x),
        VOTableValue::Double(x) => float_cell(x),
        VOTableValue::Float(x) => float_cell(f64::from(x)),
        VOTableValue::ComplexDouble((re, im)) => Cell::Text(format!("({re:?}, {im:?})")),
        VOTableValue::ComplexFloat((re, im)) => Cell::Text(format!("({re:?}, {im:?})")),
        VOTableValue::CharASCII(c) | VOTableValue::CharUnicode(c) => {
            text_cell(&c.to_string(), null)
        }
        VOTableValue::String(s) => text_cell(&s, null),
        // The crate keeps the bits private; its own rendering is `[0, 1, …]`.
        bits @ VOTableValue::BitArray(_) => Cell::Text(bits.to_string()),
        VOTableValue::BooleanArray(v) => Cell::Text(join(&v, |b| {
            b.map_or("null".to_string(), |b| b.to_string())
        })),
        VOTableValue::ByteArray(v) => Cell::Text(join(&v, u8::to_string)),
        VOTableValue::ShortArray(v) => Cell::Text(join(&v, i16::to_string)),
        VOTableValue::IntArray(v) => Cell::Text(join(&v, i32::to_string)),
        VOTableValue::LongArray(v) => Cell::Text(join(&v, i64::to_string)),
        VOTableValue::DoubleArray(v) => Cell::Text(join(&v, |x| format!("{x:?}"))),
        VOTableValue::FloatArray(v) => Cell::Text(join(&v, |x| format!("{x:?}"))),
        VOTableValue::ComplexDoubleArray(v) => {
            Cell::Text(join(&v, |(re, im)| format!("({re:?}, {im:?})")))
        }
        VOTableValue::ComplexFloatArray(v) => {
            Cell::Text(join(&v, |(re, im)| format!("({re:?}, {im:?})")))
        }
        VOTableValue::StringArray(v) => Cell::Text(join(&v, |s| s.trim_end_matches('\0').into())),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn well_formedness_prescan() {
        let ok = |s: &str| check_well_formed(s.as_bytes());
        assert!(ok("<?xml version=\"1.0\"?><!-- c > --><A x='>'><B/><![CDATA[<C>]]></A>").is_ok());
        assert!(ok("<!DOCTYPE x><A><!----></A>\n").is_ok());
        assert!(ok("<A><B></A>").unwrap_err().contains("</A> closes <B>"));
        assert!(ok("<A><B>").unwrap_err().contains("ends before </B>"));
        assert!(ok("<A><!-- open").unwrap_err().contains("inside a comment"));
        assert!(ok("<A attr=\"x")
            .unwrap_err()
            .contains("inside a start tag"));
        assert!(ok("").unwrap_err().contains("no XML element"));
        assert!(ok("<A/><B/>").is_err());
        assert!(ok("<S><STREAM encoding='base64'>AAEC\n AA==</STREAM></S>").is_ok());
        assert!(ok("<STREAM>AA\u{b3}C</STREAM>")
            .unwrap_err()
            .contains("base64"));
        assert!(ok("<STREAM>AAE</STREAM>")
            .unwrap_err()
            .contains("multiple of 4"));
        assert!(ok("<STREAM>AA=A</STREAM>").is_err());
    }

    #[test]
    fn nulls_and_exact_longs() {
        // VOTable 1.4 §6.1: NaN is the null of floating-point fields.
        assert_eq!(to_cell(VOTableValue::Double(f64::NAN), None), Cell::Missing);
        assert_eq!(to_cell(VOTableValue::Float(0.5), None), Cell::Number(0.5));
        assert_eq!(
            to_cell(VOTableValue::Long((1 << 53) + 1), None),
            Cell::Text("9007199254740993".into())
        );
        assert_eq!(
            to_cell(VOTableValue::String("N/A\0\0".into()), Some("N/A")),
            Cell::Missing
        );
        assert_eq!(
            to_cell(VOTableValue::String("ab\0".into()), None),
            Cell::Text("ab".into())
        );
    }
}
