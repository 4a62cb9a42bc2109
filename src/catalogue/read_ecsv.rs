//! Reader for Astropy Enhanced CSV (ECSV 1.0, astropy APE 6) files into a
//! [`RawTable`](super::table::RawTable).
//!
//! An ECSV file is a `# %ECSV 1.0` line, a YAML header in `# ` comment lines (column names,
//! datatypes, units, delimiter), then CSV data whose first line repeats the column names. No
//! crate reads ECSV; the YAML goes through `serde_norway` and the data lines through a small
//! tokenizer written here, because astropy's space-delimited output needs runs of spaces read
//! as one delimiter, which the `csv` crate cannot do. Lines are read one at a time.
//!
//! ```no_run
//! use dwarfbound::catalogue::table::{read_table, ReadOptions};
//! let table = read_table(std::path::Path::new("stars.ecsv"), &ReadOptions::default())?;
//! assert!(table.columns.iter().any(|c| c.name == "mass"));
//! # Ok::<(), dwarfbound::catalogue::CatalogueError>(())
//! ```
//!
//! Cells: an empty field (unquoted or `""`, which is how astropy writes masked values) is
//! [`Cell::Missing`]. Integer and float columns give [`Cell::Number`] (`float32` parsed as a
//! 32-bit float, as the file declares; integers beyond ±2⁵³ stay exact as decimal text);
//! `nan` is a NaN number, not a missing value (ECSV has no NaN-as-null rule). A value that does
//! not parse as its declared type stays [`Cell::Text`] with its original text so vetting
//! rejects it where it matters. `bool` columns give text `true`/`false`. `string` columns, and
//! any column with a `subtype` (JSON-encoded arrays or objects), give the text as written.
//! The header line must list exactly the YAML's column names, in order.
//!
//! Each data line is one row, as in the CSV reader: a line whose quotes do not balance (a
//! stray `"`) or that is not UTF-8 is quarantined with its row number and reading resumes at
//! the next line, so one bad quote never swallows the rows after it (quoted values therefore
//! cannot span lines).

use std::fs::File;
use std::io::{BufRead, BufReader};
use std::path::Path;

use serde::Deserialize;

use super::error::CatalogueError;
use super::table::{Cell, ColumnMeta, RawRow, RawTable};

/// Deepest nesting of YAML flow collections (`[…]`, `{…}`) accepted in the header. The YAML
/// parser takes time quadratic in that depth (40 000 levels: 18 s), so a few hundred kilobytes
/// of brackets would hang the reader; astropy's headers nest a handful of levels.
pub const MAX_YAML_FLOW_DEPTH: usize = 256;

/// The deepest nesting of `[` and `{` in YAML text. Quotes are not tracked, so brackets inside
/// quoted strings count too: an over-estimate, which only a pathological header reaches.
fn flow_depth(yaml: &str) -> usize {
    let (mut depth, mut deepest) = (0usize, 0usize);
    for b in yaml.bytes() {
        match b {
            b'[' | b'{' => {
                depth += 1;
                deepest = deepest.max(depth);
            }
            b']' | b'}' => depth = depth.saturating_sub(1),
            _ => {}
        }
    }
    deepest
}

/// Largest integer magnitude every value up to which a double holds exactly (2⁵³).
const EXACT_INT_LIMIT: i128 = 1 << 53;

/// The part of the YAML header this reader uses (other keys such as `meta` are ignored).
#[derive(Deserialize)]
struct Header {
    datatype: Vec<ColumnSpec>,
    #[serde(default)]
    delimiter: Option<String>,
}

#[derive(Deserialize)]
struct ColumnSpec {
    name: String,
    datatype: String,
    #[serde(default)]
    unit: Option<String>,
    #[serde(default)]
    subtype: Option<String>,
}

/// How a column's text becomes a cell.
#[derive(Clone, Copy, PartialEq)]
enum Kind {
    Bool,
    Integer,
    Float32,
    Float64,
    Text,
}

/// Reads an ECSV file.
pub fn read(path: &Path) -> Result<RawTable, CatalogueError> {
    let file = File::open(path).map_err(|e| CatalogueError::Unreadable {
        path: path.to_path_buf(),
        reason: e.to_string(),
    })?;
    let invalid = |reason: String| CatalogueError::Invalid {
        path: path.to_path_buf(),
        format: "ECSV",
        reason,
    };
    let mut lines = Lines {
        reader: BufReader::new(file),
        number: 0,
    };

    let first = lines
        .next()
        .map_err(&invalid)?
        .ok_or_else(|| invalid("empty file".into()))?;
    let version = first
        .strip_prefix("# %ECSV ")
        .ok_or_else(|| invalid("the first line is not `# %ECSV <version>`".into()))?
        .trim();
    if !(version.starts_with("1.") || version == "0.9") {
        return Err(invalid(format!(
            "ECSV version {version} is not supported (1.0 is)"
        )));
    }

    // The YAML header: every `#` line up to the first data line.
    let mut yaml = String::new();
    let header_line = loop {
        let Some(line) = lines.next().map_err(&invalid)? else {
            return Err(invalid(
                "the file ends before the column-name line (header only?)".into(),
            ));
        };
        if let Some(rest) = line.strip_prefix('#') {
            yaml.push_str(rest.strip_prefix(' ').unwrap_or(rest));
            yaml.push('\n');
        } else if !line.trim().is_empty() {
            break line;
        }
    };
    if flow_depth(&yaml) > MAX_YAML_FLOW_DEPTH {
        return Err(invalid(format!(
            "YAML header: `[` and `{{` nested deeper than {MAX_YAML_FLOW_DEPTH} levels (limit of \
             this reader)"
        )));
    }
    let header: Header =
        serde_norway::from_str(&yaml).map_err(|e| invalid(format!("YAML header: {e}")))?;
    let delimiter = match header.delimiter.as_deref() {
        None | Some(" ") => ' ',
        Some(",") => ',',
        Some(other) => {
            return Err(invalid(format!(
                "delimiter {other:?} is not allowed (ECSV 1.0 allows space or comma)"
            )))
        }
    };
    let mut kinds = Vec::with_capacity(header.datatype.len());
    for c in &header.datatype {
        kinds.push(column_kind(c).map_err(&invalid)?);
    }

    let names_line = split_record(&header_line, delimiter)
        .map_err(|e| invalid(format!("line {}: {e}", lines.number)))?;
    let names: Vec<&str> = names_line.iter().map(|f| f.text.as_str()).collect();
    let declared: Vec<&str> = header.datatype.iter().map(|c| c.name.as_str()).collect();
    if names != declared {
        return Err(invalid(format!(
            "line {}: the column-name line lists [{}] but the YAML header declares [{}]",
            lines.number,
            names.join(", "),
            declared.join(", ")
        )));
    }

    let columns: Vec<ColumnMeta> = header
        .datatype
        .iter()
        .map(|c| ColumnMeta {
            name: c.name.clone(),
            unit: c.unit.clone().filter(|u| !u.trim().is_empty()),
            ucd: None,
        })
        .collect();
    let mut rows = Vec::new();
    let mut malformed = Vec::new();
    while let Some(bytes) = lines.next_bytes().map_err(&invalid)? {
        let line_number = lines.number;
        let record = match String::from_utf8(bytes) {
            Ok(r) => Ok(r),
            Err(e) => Err(String::from_utf8_lossy(e.as_bytes()).into_owned()),
        };
        let text = record.as_ref().unwrap_or_else(|lossy| lossy);
        if text.trim().is_empty() || text.trim_start().starts_with('#') {
            continue;
        }
        let row_number = rows.len() + 1;
        // One line, one row: a quoting error or bytes that are not UTF-8 cost this row only.
        let split = match &record {
            Err(_) => Err("not valid UTF-8".to_string()),
            Ok(r) => split_record(r, delimiter)
                .map_err(|e| format!("{e} (the row is skipped; reading resumes at the next line)")),
        };
        let fields = match split {
            Ok(fields) => fields,
            Err(p) => {
                malformed.push((row_number, format!("line {line_number}: {p}")));
                rows.push(RawRow {
                    row_number,
                    cells: vec![Cell::Missing; kinds.len()],
                });
                continue;
            }
        };
        if fields.len() != kinds.len() {
            malformed.push((
                row_number,
                format!(
                    "line {line_number}: {} values for {} columns",
                    fields.len(),
                    kinds.len()
                ),
            ));
        }
        let mut cells: Vec<Cell> = fields
            .into_iter()
            .zip(&kinds)
            .map(|(f, &k)| to_cell(f.text, k))
            .collect();
        cells.resize(kinds.len(), Cell::Missing);
        rows.push(RawRow { row_number, cells });
    }
    Ok(RawTable {
        columns,
        rows,
        malformed,
    })
}

/// Line reader that counts lines and strips the line ending.
struct Lines {
    reader: BufReader<File>,
    number: usize,
}

impl Lines {
    /// The next line as text (the header must be UTF-8).
    fn next(&mut self) -> Result<Option<String>, String> {
        let number = self.number + 1;
        match self.next_bytes()? {
            None => Ok(None),
            Some(b) => String::from_utf8(b)
                .map(Some)
                .map_err(|_| format!("line {number}: not valid UTF-8")),
        }
    }

    /// The next line's bytes, without its line ending.
    fn next_bytes(&mut self) -> Result<Option<Vec<u8>>, String> {
        let mut line = Vec::new();
        match self.reader.read_until(b'\n', &mut line) {
            Ok(0) => Ok(None),
            Ok(_) => {
                self.number += 1;
                while line.ends_with(b"\n") || line.ends_with(b"\r") {
                    line.pop();
                }
                Ok(Some(line))
            }
            Err(e) => Err(format!("line {}: {e}", self.number + 1)),
        }
    }
}

fn column_kind(c: &ColumnSpec) -> Result<Kind, String> {
    if c.subtype.is_some() {
        return Ok(Kind::Text);
    }
    Ok(match c.datatype.as_str() {
        "bool" => Kind::Bool,
        "int8" | "int16" | "int32" | "int64" | "uint8" | "uint16" | "uint32" | "uint64" => {
            Kind::Integer
        }
        // float16 has no Rust type; it is read as float32 (every float16 is a float32).
        "float16" | "float32" => Kind::Float32,
        "float64" | "float128" => Kind::Float64,
        "string" | "complex64" | "complex128" | "complex256" => Kind::Text,
        other => {
            return Err(format!(
                "column `{}`: datatype `{other}` is not an ECSV 1.0 datatype",
                c.name
            ))
        }
    })
}

fn to_cell(text: String, kind: Kind) -> Cell {
    if text.is_empty() {
        return Cell::Missing;
    }
    match kind {
        Kind::Text => Cell::Text(text),
        Kind::Bool => match text.as_str() {
            "True" | "true" | "TRUE" => Cell::Text("true".into()),
            "False" | "false" | "FALSE" => Cell::Text("false".into()),
            _ => Cell::Text(text),
        },
        Kind::Integer => match text.parse::<i128>() {
            Ok(v) if v.abs() <= EXACT_INT_LIMIT => Cell::Number(v as f64),
            Ok(v) => Cell::Text(v.to_string()),
            Err(_) => Cell::Text(text),
        },
        Kind::Float32 => match text.parse::<f32>() {
            Ok(v) => Cell::Number(f64::from(v)),
            Err(_) => Cell::Text(text),
        },
        Kind::Float64 => match text.parse::<f64>() {
            Ok(v) => Cell::Number(v),
            Err(_) => Cell::Text(text),
        },
    }
}

/// One field of a data line; `text` is unquoted.
struct Field {
    text: String,
}

#[derive(Debug, PartialEq)]
enum RecordError {
    /// The line ends inside a quoted field (it may continue on the next line).
    OpenQuote,
    /// Text follows a closing quote before the next delimiter.
    AfterQuote(usize),
    /// A quote inside a value that does not start with one.
    InsideValue(usize),
}

impl std::fmt::Display for RecordError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            RecordError::OpenQuote => {
                write!(
                    f,
                    "unbalanced or stray quote: a quoted value is never closed"
                )
            }
            RecordError::AfterQuote(at) => write!(
                f,
                "unbalanced or stray quote: text after a closing quote at character {at}"
            ),
            RecordError::InsideValue(at) => write!(
                f,
                "unbalanced or stray quote: a quote inside an unquoted value at character {at}"
            ),
        }
    }
}

/// Splits one record: `"` quotes with `""` for a quote inside; with the space delimiter runs
/// of spaces separate fields and an empty value must be written `""`; with the comma, spaces
/// after a comma and around unquoted values are dropped (as astropy's reader does).
fn split_record(line: &str, delimiter: char) -> Result<Vec<Field>, RecordError> {
    let chars: Vec<char> = line.chars().collect();
    let mut fields = Vec::new();
    let mut i = 0;
    let blank = |c: char| c == ' ' || c == '\t';
    loop {
        while i < chars.len() && blank(chars[i]) {
            i += 1;
        }
        if i >= chars.len() {
            if delimiter == ',' && !fields.is_empty() {
                // A trailing comma ends with an empty field.
                fields.push(Field {
                    text: String::new(),
                });
            }
            return Ok(fields);
        }
        let mut text = String::new();
        if chars[i] == '"' {
            i += 1;
            loop {
                match chars.get(i) {
                    None => return Err(RecordError::OpenQuote),
                    Some('"') if chars.get(i + 1) == Some(&'"') => {
                        text.push('"');
                        i += 2;
                    }
                    Some('"') => {
                        i += 1;
                        break;
                    }
                    Some(&c) => {
                        text.push(c);
                        i += 1;
                    }
                }
            }
            while i < chars.len() && blank(chars[i]) && delimiter == ',' {
                i += 1;
            }
            if i < chars.len() && chars[i] != delimiter {
                return Err(RecordError::AfterQuote(i + 1));
            }
        } else {
            while i < chars.len() && chars[i] != delimiter {
                if chars[i] == '"' {
                    return Err(RecordError::InsideValue(i + 1));
                }
                text.push(chars[i]);
                i += 1;
            }
            let trimmed = text.trim_end_matches(blank).len();
            text.truncate(trimmed);
        }
        fields.push(Field { text });
        if i >= chars.len() {
            return Ok(fields);
        }
        // Consume the delimiter.
        i += 1;
        if delimiter == ',' && i >= chars.len() {
            fields.push(Field {
                text: String::new(),
            });
            return Ok(fields);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn texts(line: &str, d: char) -> Vec<String> {
        split_record(line, d)
            .unwrap()
            .into_iter()
            .map(|f| f.text)
            .collect()
    }

    #[test]
    fn space_delimited_records() {
        // ECSV 1.0 (astropy APE 6): quoted "" is an empty value; runs of spaces separate.
        assert_eq!(
            texts(r#"a  "b c" "" "x""y""#, ' '),
            ["a", "b c", "", "x\"y"]
        );
        assert_eq!(texts("  a b  ", ' '), ["a", "b"]);
    }

    #[test]
    fn comma_delimited_records() {
        assert_eq!(texts("a,,b", ','), ["a", "", "b"]);
        assert_eq!(texts("a, b ,", ','), ["a", "b", ""]);
        assert_eq!(texts(r#""x,y", z"#, ','), ["x,y", "z"]);
    }

    #[test]
    fn bad_quotes() {
        assert_eq!(
            split_record(r#"a "open"#, ' ').err(),
            Some(RecordError::OpenQuote)
        );
        assert!(matches!(
            split_record(r#""a"b c"#, ' '),
            Err(RecordError::AfterQuote(_))
        ));
    }

    #[test]
    fn a_stray_quote_costs_one_row() {
        // Issue 13 item 5, for ECSV: the row with the stray quote is quarantined and the
        // rows after it are read.
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("t.ecsv");
        std::fs::write(
            &path,
            b"# %ECSV 1.0\n# ---\n# datatype:\n# - {name: id, datatype: string}\n\
             # - {name: m, datatype: float64}\nid m\na 1\n\"b 2\nc 3\nd\" 4\ne \xff 5\nf 6\n",
        )
        .unwrap();
        let t = read(&path).unwrap();
        assert_eq!(t.rows.len(), 6);
        let bad: Vec<usize> = t.malformed.iter().map(|m| m.0).collect();
        assert_eq!(bad, [2, 4, 5]);
        assert!(t.malformed[0].1.contains("line 8") && t.malformed[0].1.contains("quote"));
        assert!(t.malformed[2].1.contains("UTF-8"));
        assert_eq!(t.rows[2].cells[1], Cell::Number(3.0));
        assert_eq!(t.rows[5].cells[0], Cell::Text("f".into()));
    }

    #[test]
    fn deep_flow_nesting_is_refused_before_the_yaml_parser() {
        assert_eq!(flow_depth("a: [1, {b: [2]}]\nc: [3]"), 3);
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("t.ecsv");
        let deep = "[".repeat(100_000) + &"]".repeat(100_000);
        std::fs::write(
            &path,
            format!(
                "# %ECSV 1.0\n# ---\n# meta: {deep}\n# datatype:\n\
                 # - {{name: id, datatype: string}}\nid\na\n"
            ),
        )
        .unwrap();
        let e = read(&path).unwrap_err().to_string();
        assert!(e.contains("nested deeper than 256"), "{e}");
    }

    #[test]
    fn cells_follow_the_declared_type() {
        assert_eq!(
            to_cell("0.1".into(), Kind::Float32),
            Cell::Number(f64::from(0.1f32))
        );
        assert_eq!(
            to_cell("9007199254740993".into(), Kind::Integer),
            Cell::Text("9007199254740993".into())
        );
        assert_eq!(
            to_cell("abc".into(), Kind::Float64),
            Cell::Text("abc".into())
        );
        assert_eq!(to_cell(String::new(), Kind::Text), Cell::Missing);
        assert_eq!(
            to_cell("True".into(), Kind::Bool),
            Cell::Text("true".into())
        );
    }
}
