//! Small, deterministic writers for the machine-readable outputs (`objects.csv`, `grid.csv`,
//! `summary.json`, …).
//!
//! Floats are written so they round-trip (Rust's shortest representation), missing values as an
//! empty CSV cell or JSON `null`; NaN and infinities never reach a file. Every write goes
//! through [`crate::output::write_atomic`].
//!
//! ```
//! use dwarfbound::report::tables::{csv_bytes, Cell};
//! let bytes = csv_bytes(&["id", "mass"], &[vec![Cell::text("a,b"), Cell::float(0.075)]]).unwrap();
//! assert_eq!(String::from_utf8(bytes).unwrap(), "id,mass\n\"a,b\",0.075\n");
//! ```

use std::path::Path;

use serde::Serialize;

use super::ReportError;
use crate::output::{fmt_f64, write_atomic};

/// One CSV cell.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    /// Text, quoted by the CSV writer when needed.
    Text(String),
    /// A float; `None`, NaN and infinities are written as an empty cell.
    Float(Option<f64>),
    /// An integer.
    Int(i64),
    /// `true`/`false`, empty when `None`.
    Bool(Option<bool>),
}

impl Cell {
    /// A text cell.
    pub fn text(s: impl Into<String>) -> Self {
        Cell::Text(s.into())
    }
    /// A float cell.
    pub fn float(x: f64) -> Self {
        Cell::Float(Some(x))
    }
    /// An optional float cell.
    pub fn opt(x: Option<f64>) -> Self {
        Cell::Float(x)
    }
    /// The cell as CSV text (floats round-trip; missing values empty).
    pub fn render(&self) -> String {
        match self {
            Cell::Text(s) => s.clone(),
            Cell::Float(x) => fmt_f64(*x),
            Cell::Int(i) => i.to_string(),
            Cell::Bool(Some(b)) => b.to_string(),
            Cell::Bool(None) => String::new(),
        }
    }
}

/// Serialises a table as CSV (comma-separated, `\n` line ends, header first). Rows must have as
/// many cells as the header.
pub fn csv_bytes(header: &[&str], rows: &[Vec<Cell>]) -> Result<Vec<u8>, ReportError> {
    let fail = |message: String| ReportError::Serialise {
        what: "CSV table".into(),
        message,
    };
    let mut w = csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(Vec::new());
    w.write_record(header).map_err(|e| fail(e.to_string()))?;
    for (k, row) in rows.iter().enumerate() {
        if row.len() != header.len() {
            return Err(fail(format!(
                "row {} has {} cells, the header has {}",
                k + 1,
                row.len(),
                header.len()
            )));
        }
        w.write_record(row.iter().map(Cell::render))
            .map_err(|e| fail(e.to_string()))?;
    }
    w.into_inner().map_err(|e| fail(e.to_string()))
}

/// Appends CSV rows to a text buffer, byte for byte what [`csv_bytes`]'s writer makes of
/// [`Cell::render`] (comma, `\n`, a field quoted only when it holds a comma, a quote or a line
/// end; tested against the `csv` crate), without a `String` per cell. A number equal, to the
/// bit, to the previous one of its column is copied rather than formatted again (its text
/// depends on the bits alone): a class's bound repeats down a million-row `objects.csv`.
#[derive(Debug, Default)]
pub struct CsvRows {
    /// Per column: the last number's bits and its text.
    last: Vec<Option<(u64, String)>>,
}

impl CsvRows {
    /// Appends one row (its cells and the line end) to `buf`.
    pub fn push(&mut self, buf: &mut String, cells: &[Cell]) {
        if let [only] = cells {
            // A lone empty field is written `""` (else the row would be a blank line).
            match only.render() {
                f if f.is_empty() => buf.push_str("\"\""),
                f => push_csv_field(buf, &f),
            }
            buf.push('\n');
            return;
        }
        if self.last.len() < cells.len() {
            self.last.resize(cells.len(), None);
        }
        for (j, cell) in cells.iter().enumerate() {
            if j > 0 {
                buf.push(',');
            }
            match cell {
                Cell::Text(s) => push_csv_field(buf, s),
                Cell::Float(Some(x)) => {
                    let bits = x.to_bits();
                    let slot = &mut self.last[j];
                    if slot.as_ref().is_none_or(|(b, _)| *b != bits) {
                        let mut text = slot.take().map(|(_, t)| t).unwrap_or_default();
                        text.clear();
                        crate::output::push_f64(&mut text, Some(*x));
                        *slot = Some((bits, text));
                    }
                    // Digits, `-` and `.` (or nothing for a non-finite value): never quoted.
                    if let Some((_, text)) = slot {
                        buf.push_str(text);
                    }
                }
                Cell::Float(None) | Cell::Bool(None) => {}
                Cell::Int(i) => buf.push_str(&i.to_string()),
                Cell::Bool(Some(b)) => buf.push_str(if *b { "true" } else { "false" }),
            }
        }
        buf.push('\n');
    }
}

/// Appends `field` to `buf` as the `csv` crate writes it by default: quoted, with each quote
/// doubled, when it holds a comma, a quote, `\r` or `\n`; as it is otherwise.
pub fn push_csv_field(buf: &mut String, field: &str) {
    if !field
        .bytes()
        .any(|b| matches!(b, b',' | b'"' | b'\r' | b'\n'))
    {
        buf.push_str(field);
        return;
    }
    buf.push('"');
    for c in field.chars() {
        if c == '"' {
            buf.push('"');
        }
        buf.push(c);
    }
    buf.push('"');
}

/// Writes a CSV table atomically.
pub fn write_csv(path: &Path, header: &[&str], rows: &[Vec<Cell>]) -> Result<(), ReportError> {
    let bytes = csv_bytes(header, rows)?;
    write_atomic(path, &bytes)?;
    Ok(())
}

/// Serialises a value as pretty JSON with a final newline. Key order follows the struct field
/// order (or sorted order for maps), so the bytes are deterministic. serde_json writes a
/// non-finite float as `null`; a finite one round-trips.
pub fn json_bytes<T: Serialize>(value: &T) -> Result<Vec<u8>, ReportError> {
    let mut bytes = serde_json::to_vec_pretty(value).map_err(|e| ReportError::Serialise {
        what: "JSON document".into(),
        message: e.to_string(),
    })?;
    bytes.push(b'\n');
    Ok(bytes)
}

/// Writes a value as pretty JSON atomically.
pub fn write_json<T: Serialize>(path: &Path, value: &T) -> Result<(), ReportError> {
    let bytes = json_bytes(value)?;
    write_atomic(path, &bytes)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use proptest::strategy::Strategy as _;

    proptest::proptest! {
        /// [`CsvRows`] gives the bytes of the `csv` crate's writer on the rendered cells (the
        /// crate is the source), numbers repeated down a column included.
        #[test]
        fn rows_as_the_csv_crate_writes_them(
            rows in proptest::collection::vec(proptest::collection::vec(
                proptest::prop_oneof![
                    proptest::collection::vec(proptest::sample::select(
                        vec!["a", ",", "\"", "\r", "\n", " ", "é", "#", "", "'"]), 0..4)
                        .prop_map(|v| super::Cell::Text(v.concat())),
                    proptest::sample::select(vec![0.075, -14.323204124494561, 0.1 + 0.2, 1e-7, f64::NAN, f64::INFINITY])
                        .prop_map(|x| super::Cell::Float(Some(x))),
                    proptest::strategy::Just(super::Cell::Float(None)),
                    proptest::num::i64::ANY.prop_map(super::Cell::Int),
                    proptest::option::of(proptest::bool::ANY).prop_map(super::Cell::Bool),
                ],
                1..5), 1..6),
        ) {
            let mut w = csv::WriterBuilder::new()
                .terminator(csv::Terminator::Any(b'\n'))
                .flexible(true)
                .from_writer(Vec::new());
            let mut got = String::new();
            let mut rows_writer = super::CsvRows::default();
            for row in &rows {
                w.write_record(row.iter().map(super::Cell::render)).unwrap();
                rows_writer.push(&mut got, row);
            }
            let want = String::from_utf8(w.into_inner().unwrap()).unwrap();
            proptest::prop_assert_eq!(got, want);
        }
    }

    use super::*;

    #[test]
    fn csv_quotes_and_blanks() {
        let rows = vec![vec![
            Cell::text("x\"y"),
            Cell::Float(Some(f64::NAN)),
            Cell::Int(-3),
            Cell::Bool(Some(true)),
        ]];
        let s = String::from_utf8(csv_bytes(&["a", "b", "c", "d"], &rows).unwrap()).unwrap();
        // RFC 4180 quoting: embedded quotes doubled.
        assert_eq!(s, "a,b,c,d\n\"x\"\"y\",,-3,true\n");
    }

    #[test]
    fn ragged_rows_are_an_error() {
        assert!(csv_bytes(&["a", "b"], &[vec![Cell::Int(1)]]).is_err());
    }

    #[test]
    fn json_nan_becomes_null_and_floats_round_trip() {
        #[derive(Serialize)]
        struct S {
            a: f64,
            b: f64,
        }
        let bytes = json_bytes(&S {
            a: 0.1 + 0.2,
            b: f64::NAN,
        })
        .unwrap();
        let v: serde_json::Value = serde_json::from_slice(&bytes).unwrap();
        assert_eq!(v["a"].as_f64(), Some(0.1 + 0.2));
        assert!(v["b"].is_null());
    }
}
