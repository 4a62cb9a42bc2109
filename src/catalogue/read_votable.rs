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
use std::path::Path;

use votable::data::DataElem;
use votable::field::Field;
use votable::impls::mem::InMemTableDataRows;
use votable::impls::VOTableValue;
use votable::resource::{Resource, ResourceOrTable};
use votable::table::{Table, TableElem};
use votable::votable::VOTableWrapper;

use super::error::CatalogueError;
use super::guard;
use super::table::{Cell, ColumnMeta, RawRow, RawTable};

/// Stack of the parser thread (virtual memory; only the pages used are touched).
const PARSER_STACK_BYTES: usize = 64 << 20;

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
    // reported as invalid instead of taking the program down. It recurses on RESOURCE and
    // GROUP; the depth is bounded above, and it runs on a thread with a generous stack so
    // that the bound holds in unoptimised builds too.
    let table = table.map(str::to_string);
    let outcome = std::thread::Builder::new()
        .name("votable".into())
        .stack_size(PARSER_STACK_BYTES)
        .spawn(move || guard::quietly(|| read_from(reader, table.as_deref())))
        .map_err(|e| CatalogueError::Unreadable {
            path: path.to_path_buf(),
            reason: format!("cannot start the VOTable parser: {e}"),
        })?
        .join();
    let reason = match outcome {
        Ok(Ok(Ok(t))) => return Ok(t),
        Ok(Ok(Err(reason))) => reason,
        _ => "the VOTable parser failed on malformed input".to_string(),
    };
    Err(invalid(reason))
}

/// Deepest element nesting accepted (VOTABLE › RESOURCE › TABLE › DATA › TABLEDATA › TR › TD is
/// 7; nested RESOURCEs and GROUPs add a few). The parser recurses on RESOURCE and GROUP, so a
/// file nested thousands deep would overflow its stack; past this depth the file is refused.
pub const MAX_XML_DEPTH: usize = 32;

/// Largest number of elements one `arraysize` may declare (product of its dimensions). The
/// parser allocates and pads fixed-size cells eagerly, so `arraysize="2147483648"` would
/// allocate gigabytes from a few bytes of file.
pub const MAX_ARRAY_ELEMENTS: u64 = 1 << 20;

/// Largest memory, in bytes, that fixed-size TABLEDATA cells may take once padded to their
/// `arraysize` (rows × fixed row width); beyond it the file is refused before parsing.
pub const MAX_PADDED_BYTES: u64 = 256 << 20;

/// Longest start tag accepted, in bytes.
const MAX_TAG_BYTES: usize = 1 << 16;

/// Streaming UTF-8 validation, one byte at a time.
#[derive(Default)]
struct Utf8Check {
    buf: [u8; 4],
    len: usize,
    need: usize,
}

impl Utf8Check {
    /// Feeds one byte; `false` when the bytes so far cannot be UTF-8.
    fn push(&mut self, b: u8) -> bool {
        if self.need == 0 {
            self.need = match b {
                0x00..=0x7f => return true,
                0xc2..=0xdf => 2,
                0xe0..=0xef => 3,
                0xf0..=0xf4 => 4,
                _ => return false,
            };
            self.buf[0] = b;
            self.len = 1;
            return true;
        }
        self.buf[self.len] = b;
        self.len += 1;
        if self.len < self.need {
            return (0x80..=0xbf).contains(&b);
        }
        self.need = 0;
        // Overlong forms, surrogates and code points above U+10FFFF fail here.
        std::str::from_utf8(&self.buf[..self.len]).is_ok()
    }
}

/// The value of attribute `key` in a start tag's bytes (name included), if present.
fn attribute(tag: &[u8], key: &[u8]) -> Option<String> {
    let mut i = tag.iter().position(|c| c.is_ascii_whitespace())?;
    while i < tag.len() {
        while i < tag.len() && (tag[i].is_ascii_whitespace() || tag[i] == b'/') {
            i += 1;
        }
        let name_start = i;
        while i < tag.len() && tag[i] != b'=' && !tag[i].is_ascii_whitespace() {
            i += 1;
        }
        let name = &tag[name_start..i];
        while i < tag.len() && tag[i].is_ascii_whitespace() {
            i += 1;
        }
        if i >= tag.len() || tag[i] != b'=' {
            return None;
        }
        i += 1;
        while i < tag.len() && tag[i].is_ascii_whitespace() {
            i += 1;
        }
        let quote = *tag.get(i)?;
        if quote != b'"' && quote != b'\'' {
            return None;
        }
        let value_start = i + 1;
        let value_end = value_start + tag[value_start..].iter().position(|&c| c == quote)?;
        if name == key {
            return Some(String::from_utf8_lossy(&tag[value_start..value_end]).into_owned());
        }
        i = value_end + 1;
    }
    None
}

/// Bytes one element of a VOTable datatype takes in memory (at least its binary width).
fn element_bytes(datatype: &str) -> u64 {
    match datatype {
        "short" | "unicodeChar" => 2,
        "int" | "float" => 4,
        "long" | "double" | "floatComplex" => 8,
        "doubleComplex" => 16,
        _ => 1,
    }
}

/// Number of elements an `arraysize` declares (`Ok(None)` without one), checked against
/// [`MAX_ARRAY_ELEMENTS`]; and whether the size is fixed (no `*`).
fn array_elements(arraysize: Option<&str>) -> Result<(Option<u64>, bool), String> {
    let Some(a) = arraysize.map(str::trim) else {
        return Ok((None, true));
    };
    let fixed = !a.contains('*');
    let mut product: u64 = 1;
    for dim in a.split('x') {
        let digits = dim.trim().trim_end_matches('*');
        if digits.is_empty() {
            continue;
        }
        // Not a number: left to the parser, which names it. Digits beyond u64 are too many.
        if !digits.bytes().all(|b| b.is_ascii_digit()) {
            return Ok((None, fixed));
        }
        let n = digits.parse::<u64>().unwrap_or(u64::MAX);
        product = product.saturating_mul(n);
    }
    if product > MAX_ARRAY_ELEMENTS {
        return Err(format!(
            "arraysize=\"{a}\" declares {product} elements, more than the limit of \
             {MAX_ARRAY_ELEMENTS}"
        ));
    }
    Ok((Some(product), fixed))
}

/// A FIELD of the TABLE being scanned: enough to check its TABLEDATA cells and to walk its
/// BINARY/BINARY2 rows.
struct ScanField {
    name: String,
    datatype: String,
    scalar: bool,
    arraysize: Option<String>,
}

/// How one FIELD's value is laid out in a BINARY/BINARY2 row (VOTable 1.4 §5.4–5.5).
#[derive(Clone, Copy, Debug, PartialEq)]
enum Layout {
    /// A fixed number of bytes that need no check.
    Skip(u64),
    /// A 4-byte big-endian count, then that many items of `items` elements of this many
    /// bytes each (for `bit`, 0: the count is of bits, stored in whole bytes).
    Variable { element_bytes: u64, items: u64 },
    /// `char` text: `total` bytes (`None`: variable length, a count of items of `items`
    /// bytes), one string per `string` bytes.
    Utf8 {
        total: Option<u64>,
        string: u64,
        items: u64,
    },
    /// `unicodeChar` text: as `Utf8`, in UCS-2 units of two bytes.
    Ucs2 {
        total: Option<u64>,
        string: u64,
        items: u64,
    },
}

/// The layout of a FIELD, or `None` when its datatype or arraysize is not one this walk
/// knows (the parser then reports the FIELD itself).
fn layout(f: &ScanField) -> Option<Layout> {
    let dims: Vec<&str> = match f.arraysize.as_deref().map(str::trim) {
        None => Vec::new(),
        Some(a) => a.split('x').map(str::trim).collect(),
    };
    let variable = dims.last().is_some_and(|d| d.ends_with('*'));
    // Elements of a fixed-size value (the last dimension of a variable one is open).
    let mut fixed: u64 = 1;
    for (i, d) in dims.iter().enumerate() {
        if variable && i + 1 == dims.len() {
            break;
        }
        fixed = fixed.checked_mul(d.parse::<u64>().ok()?)?;
    }
    let first = match dims.first() {
        Some(d) if !d.ends_with('*') => d.parse::<u64>().ok()?,
        _ => 0,
    };
    Some(match f.datatype.as_str() {
        "char" | "unicodeChar" if !dims.is_empty() => {
            // One string per first dimension; a 1-D variable string is one string.
            let total = (!variable).then_some(fixed);
            let string = if first == 0 { u64::MAX } else { first };
            if f.datatype == "char" {
                Layout::Utf8 {
                    total,
                    string,
                    items: fixed,
                }
            } else {
                Layout::Ucs2 {
                    total,
                    string,
                    items: fixed,
                }
            }
        }
        "bit" if variable => Layout::Variable {
            element_bytes: 0,
            items: fixed,
        },
        "bit" => Layout::Skip(fixed.div_ceil(8)),
        other => {
            let width = match other {
                "boolean" | "unsignedByte" | "char" => 1,
                "short" | "unicodeChar" => 2,
                "int" | "float" => 4,
                "long" | "double" | "floatComplex" => 8,
                "doubleComplex" => 16,
                _ => return None,
            };
            if variable {
                Layout::Variable {
                    element_bytes: width * fixed,
                    items: fixed,
                }
            } else {
                Layout::Skip(width * fixed)
            }
        }
    })
}

/// Incremental base64 decoding (RFC 4648 alphabet; the characters are checked by the caller).
#[derive(Default)]
struct Base64 {
    acc: u32,
    n: u8,
    pad: u8,
}

impl Base64 {
    /// Feeds one base64 character (`=` included); returns the decoded bytes (and how many of
    /// the three are data) when a group of four completes.
    fn push(&mut self, c: u8) -> Option<([u8; 3], usize)> {
        let v = match c {
            b'A'..=b'Z' => c - b'A',
            b'a'..=b'z' => c - b'a' + 26,
            b'0'..=b'9' => c - b'0' + 52,
            b'+' => 62,
            b'/' => 63,
            _ => {
                self.pad += 1;
                0
            }
        };
        self.acc = (self.acc << 6) | u32::from(v);
        self.n += 1;
        if self.n < 4 {
            return None;
        }
        let b = self.acc.to_be_bytes();
        let out = (
            [b[1], b[2], b[3]],
            3usize.saturating_sub(usize::from(self.pad)),
        );
        *self = Base64::default();
        Some(out)
    }
}

/// Where a [`BinaryWalk`] is inside a row.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Step {
    /// BINARY2 null flags: bytes left.
    Flags(u64),
    /// Reading a variable value's 4-byte element count.
    Count { got: u8, value: u32 },
    /// Bytes of the current FIELD left to pass.
    Skip(u64),
    /// Text of the current FIELD: bytes left in the value, bytes per string.
    Text { left: u64, string: u64 },
}

/// Walks the decoded bytes of a BINARY or BINARY2 STREAM row by row and checks what the parser
/// trusts: every `char` string is UTF-8, every `unicodeChar` string UCS-2 (no surrogate halves)
/// that votable 0.7's decoder can hold (it sizes its output at two UTF-8 bytes per character
/// and fails on text beyond that), and every variable-length count within
/// [`MAX_ARRAY_ELEMENTS`] (the parser allocates a count's worth of bytes before reading them).
struct BinaryWalk {
    fields: Vec<(String, String, Layout)>,
    binary2: bool,
    /// 1-based row being read.
    row: u64,
    field: usize,
    step: Step,
    /// The current string's bytes (at most [`MAX_ARRAY_ELEMENTS`] elements).
    string: Vec<u8>,
}

impl BinaryWalk {
    /// A walk over the rows of `fields`; `None` when a FIELD's layout is unknown.
    fn new(fields: &[ScanField], binary2: bool) -> Option<BinaryWalk> {
        let fields = fields
            .iter()
            .map(|f| Some((f.name.clone(), f.datatype.clone(), layout(f)?)))
            .collect::<Option<Vec<_>>>()?;
        let empty = |l: &Layout| {
            matches!(
                l,
                Layout::Skip(0)
                    | Layout::Utf8 { total: Some(0), .. }
                    | Layout::Ucs2 { total: Some(0), .. }
            )
        };
        if fields.is_empty() || (!binary2 && fields.iter().all(|f| empty(&f.2))) {
            return None;
        }
        let mut w = BinaryWalk {
            fields,
            binary2,
            row: 1,
            field: 0,
            step: Step::Skip(0),
            string: Vec::new(),
        };
        w.start_row();
        w.advance();
        Some(w)
    }

    /// The step at the start of a row.
    fn row_start(&self) -> Step {
        if self.binary2 {
            Step::Flags(self.fields.len().div_ceil(8) as u64)
        } else {
            self.field_start(0)
        }
    }

    fn start_row(&mut self) {
        self.field = 0;
        self.step = self.row_start();
    }

    /// The step at the start of FIELD `i`.
    fn field_start(&self, i: usize) -> Step {
        match self.fields[i].2 {
            Layout::Skip(n) => Step::Skip(n),
            Layout::Variable { .. }
            | Layout::Utf8 { total: None, .. }
            | Layout::Ucs2 { total: None, .. } => Step::Count { got: 0, value: 0 },
            Layout::Utf8 {
                total: Some(n),
                string,
                ..
            } => Step::Text { left: n, string },
            Layout::Ucs2 {
                total: Some(n),
                string,
                ..
            } => Step::Text {
                left: 2 * n,
                string: string.saturating_mul(2),
            },
        }
    }

    /// Moves past finished FIELDs (and rows), including values of no bytes.
    fn advance(&mut self) {
        // A row of zero bytes would loop forever; such a table has no rows to check.
        for _ in 0..=self.fields.len() + 1 {
            match self.step {
                Step::Flags(0) => self.step = self.field_start(0),
                Step::Skip(0) | Step::Text { left: 0, .. } => {
                    self.field += 1;
                    if self.field == self.fields.len() {
                        self.row += 1;
                        self.start_row();
                    } else {
                        self.step = self.field_start(self.field);
                    }
                }
                _ => return,
            }
        }
    }

    fn place(&self) -> String {
        let (name, datatype, _) = &self.fields[self.field];
        format!(
            "data row {}, column `{name}` (datatype {datatype})",
            self.row
        )
    }

    /// Checks one whole string of the current FIELD.
    fn check_string(&self) -> Result<(), String> {
        let bytes = &self.string;
        // A string that starts with NUL (a byte, or a UCS-2 unit) is read as empty by the
        // parser.
        if !matches!(self.fields[self.field].2, Layout::Ucs2 { .. }) {
            if bytes.first().is_none_or(|&b| b == 0) {
                return Ok(());
            }
            return match std::str::from_utf8(bytes) {
                Ok(_) => Ok(()),
                Err(_) => Err(format!(
                    "{}: a char value with bytes that are not valid UTF-8",
                    self.place()
                )),
            };
        }
        let units: Vec<u16> = bytes
            .chunks_exact(2)
            .map(|p| u16::from_be_bytes([p[0], p[1]]))
            .collect();
        if units.first().is_none_or(|&u| u == 0) {
            return Ok(());
        }
        if let Some(u) = units.iter().find(|u| (0xd800..=0xdfff).contains(*u)) {
            return Err(format!(
                "{}: a unicodeChar value holding 0x{u:04x}, half of a UTF-16 surrogate pair, \
                 which is not UCS-2",
                self.place()
            ));
        }
        // votable 0.7 decodes into a buffer of two bytes per unit, and ucs2 0.3 fails as soon
        // as the next character's UTF-8 bytes do not fit (`i + len - 1 >= capacity`).
        let capacity = 2 * units.len();
        let mut written = 0;
        for &u in &units {
            let len = match u {
                0..=0x7f => 1,
                0x80..=0x7ff => 2,
                _ => 3,
            };
            if written + len > capacity {
                return Err(format!(
                    "{}: a unicodeChar value with more characters above U+07FF than the VOTable \
                     library can decode (it allows two UTF-8 bytes per character); use datatype \
                     char (UTF-8)",
                    self.place()
                ));
            }
            written += len;
        }
        Ok(())
    }

    /// Feeds one decoded byte.
    fn push(&mut self, b: u8) -> Result<(), String> {
        match self.step {
            Step::Flags(n) => self.step = Step::Flags(n - 1),
            Step::Skip(n) => self.step = Step::Skip(n - 1),
            Step::Count { got, value } => {
                let value = (value << 8) | u32::from(b);
                self.step = Step::Count {
                    got: got + 1,
                    value,
                };
                if got + 1 == 4 {
                    let count = u64::from(value);
                    let items = match self.fields[self.field].2 {
                        Layout::Variable { items, .. }
                        | Layout::Utf8 { items, .. }
                        | Layout::Ucs2 { items, .. } => items,
                        Layout::Skip(_) => 1,
                    };
                    if count.saturating_mul(items) > MAX_ARRAY_ELEMENTS {
                        // The parser reads the count as a signed 32-bit integer.
                        return Err(format!(
                            "{}: a variable-length value declares {} elements, outside 0 to the \
                             limit of {MAX_ARRAY_ELEMENTS}",
                            self.place(),
                            value as i32
                        ));
                    }
                    self.step = match self.fields[self.field].2 {
                        Layout::Variable {
                            element_bytes: 0, ..
                        } => Step::Skip(count.div_ceil(8)),
                        Layout::Variable { element_bytes, .. } => Step::Skip(count * element_bytes),
                        Layout::Utf8 { string, .. } => Step::Text {
                            left: count * items,
                            string,
                        },
                        Layout::Ucs2 { string, .. } => Step::Text {
                            left: 2 * count * items,
                            string: string.saturating_mul(2),
                        },
                        Layout::Skip(n) => Step::Skip(n),
                    };
                }
            }
            Step::Text { left, string } => {
                self.string.push(b);
                self.step = Step::Text {
                    left: left - 1,
                    string,
                };
                if self.string.len() as u64 == string || left == 1 {
                    let checked = self.check_string();
                    self.string.clear();
                    checked?;
                }
            }
        }
        self.advance();
        Ok(())
    }

    /// At the end of the STREAM: the last row must be whole.
    fn finish(&self) -> Result<(), String> {
        if self.field == 0 && self.step == self.row_start() {
            Ok(())
        } else {
            Err(format!(
                "the binary STREAM ends inside {} (truncated, or FIELD datatypes and \
                 arraysizes that do not match the data)",
                self.place()
            ))
        }
    }
}

/// Why a TABLEDATA cell does not parse as its FIELD's scalar numeric datatype, if it does not
/// (the same standard-library parse the VOTable parser applies).
fn bad_scalar(datatype: &str, text: &str) -> Option<&'static str> {
    let t = text.trim();
    if t.is_empty() || t.contains('&') {
        return None;
    }
    let ok = match datatype {
        "unsignedByte" => t.parse::<u8>().is_ok(),
        "short" => t.parse::<i16>().is_ok(),
        "int" => t.parse::<i32>().is_ok(),
        "long" => t.parse::<i64>().is_ok(),
        "float" => t.parse::<f32>().is_ok(),
        "double" => t.parse::<f64>().is_ok(),
        _ => true,
    };
    (!ok).then_some(match datatype {
        "float" | "double" => "is not a number",
        _ => "is not an integer of that size",
    })
}

/// Checks, in one streaming pass and before the VOTable parser sees the file, everything the
/// parser trusts: the bytes are UTF-8 (the parser decodes TABLEDATA text without checking, and
/// invalid bytes in a `unicodeChar` or `char` cell reach unchecked code), the XML elements are
/// balanced and at most [`MAX_XML_DEPTH`] deep, the document is complete, every `arraysize`
/// within [`MAX_ARRAY_ELEMENTS`] and the padded TABLEDATA within [`MAX_PADDED_BYTES`], every
/// base64 STREAM clean, and every scalar numeric TABLEDATA cell a number of its datatype (so
/// that the message names the row and column). votable 0.7.0 also loops forever when the file
/// ends inside a BINARY/BINARY2 element and ends a binary table silently at a byte that is not
/// base64. Not a full XML validator: names, nesting, comments, CDATA, processing instructions
/// and quoted attribute values only.
fn check_well_formed<R: BufRead>(reader: R) -> Result<(), String> {
    let mut bytes = reader.bytes().peekable();
    let mut line = 1usize;
    let mut stack: Vec<Vec<u8>> = Vec::new();
    let mut seen_root = false;
    let mut utf8 = Utf8Check::default();
    let mut position = 0u64;
    // Next byte, counting lines and checking UTF-8; `Ok(None)` at end of file.
    let mut next = |line: &mut usize| -> Result<Option<u8>, String> {
        match bytes.next() {
            None => {
                if utf8.need != 0 {
                    return Err(format!(
                        "line {line}: the file ends inside a UTF-8 character"
                    ));
                }
                Ok(None)
            }
            Some(Ok(b)) => {
                if position == 0 && (b == 0xff || b == 0xfe) {
                    return Err(
                        "the file starts with a UTF-16 byte-order mark: it is UTF-16 \
                                text; convert it to UTF-8"
                            .into(),
                    );
                }
                if position < 2 && b == 0 {
                    return Err(
                        "the file holds NUL bytes at its start: it is probably UTF-16 \
                                text without a byte-order mark; convert it to UTF-8"
                            .into(),
                    );
                }
                position += 1;
                if !utf8.push(b) {
                    return Err(format!(
                        "line {line}: bytes that are not valid UTF-8 (VOTable text must be \
                         UTF-8; a string cell with such bytes cannot be decoded safely)"
                    ));
                }
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
    // Inside a BINARY/BINARY2 STREAM: its rows, walked as the base64 is decoded.
    let mut walk: Option<(BinaryWalk, Base64)> = None;
    // The TABLE being scanned: its FIELDs, fixed bytes per row, rows seen.
    let mut fields: Vec<ScanField> = Vec::new();
    let mut table_name = String::new();
    let mut row_bytes: u64 = 0;
    // Whether every FIELD has a fixed binary width (no `*`, no bit field), so that a BINARY
    // STREAM must hold a whole number of rows.
    let mut fixed_width = true;
    let mut rows: u64 = 0;
    let mut cell: Option<(usize, Vec<u8>)> = None;
    let mut cell_index = 0usize;
    while let Some(b) = next(&mut line)? {
        if b != b'<' {
            if let Some((count, padding)) = stream.as_mut() {
                match b {
                    b' ' | b'\t' | b'\n' | b'\r' => {}
                    b'=' if *padding < 2 => {
                        *padding += 1;
                        *count += 1;
                        if let Some((w, b64)) = walk.as_mut() {
                            if let Some((bytes, n)) = b64.push(b) {
                                for &x in &bytes[..n] {
                                    w.push(x).map_err(|e| {
                                        format!("line {line}: TABLE `{table_name}`, {e}")
                                    })?;
                                }
                            }
                        }
                    }
                    b'A'..=b'Z' | b'a'..=b'z' | b'0'..=b'9' | b'+' | b'/' if *padding == 0 => {
                        *count += 1;
                        if let Some((w, b64)) = walk.as_mut() {
                            if let Some((bytes, n)) = b64.push(b) {
                                for &x in &bytes[..n] {
                                    w.push(x).map_err(|e| {
                                        format!("line {line}: TABLE `{table_name}`, {e}")
                                    })?;
                                }
                            }
                        }
                    }
                    _ => {
                        return Err(format!(
                            "line {line}: byte 0x{b:02x} is not valid base64 inside a STREAM"
                        ))
                    }
                }
            }
            if let Some((_, text)) = cell.as_mut() {
                if text.len() < 1024 {
                    text.push(b);
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
                if head.starts_with(b"[CDATA[") {
                    // A CDATA cell is not checked as a number.
                    cell = None;
                }
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
                        Some(c) => {
                            if name.len() >= MAX_TAG_BYTES {
                                return Err(format!("line {start_line}: an end tag too long"));
                            }
                            name.push(c)
                        }
                    }
                }
                if name == b"STREAM" {
                    let walked = walk.take();
                    if let Some((count, padding)) = stream.take() {
                        if count % 4 != 0 {
                            return Err(format!(
                                "line {start_line}: the base64 STREAM has {count} characters, \
                                 not a multiple of 4 (cut or corrupted)"
                            ));
                        }
                        // BINARY2 rows start with one null flag bit per FIELD.
                        let binary2 = stack.iter().any(|e| e == b"BINARY2");
                        let flags = if binary2 {
                            fields.len().div_ceil(8) as u64
                        } else {
                            0
                        };
                        let width = row_bytes + flags;
                        let decoded = (count / 4 * 3).saturating_sub(padding) as u64;
                        if fixed_width
                            && !fields.is_empty()
                            && width > 0
                            && !decoded.is_multiple_of(width)
                        {
                            return Err(format!(
                                "line {start_line}: TABLE `{table_name}`: the binary STREAM holds \
                                 {decoded} bytes: {} complete rows of {width} bytes and {} bytes \
                                 of row {} (truncated, or FIELD datatypes and arraysizes that do \
                                 not match the data)",
                                decoded / width,
                                decoded % width,
                                decoded / width + 1
                            ));
                        }
                        if let Some((w, _)) = walked {
                            w.finish().map_err(|e| {
                                format!("line {start_line}: TABLE `{table_name}`: {e}")
                            })?;
                        }
                    }
                }
                if name == b"TD" {
                    if let Some((index, text)) = cell.take() {
                        if let Some(f) = fields.get(index).filter(|f| f.scalar) {
                            let text = String::from_utf8_lossy(&text);
                            if let Some(why) = bad_scalar(&f.datatype, &text) {
                                return Err(format!(
                                    "line {start_line}: TABLE `{table_name}`, data row {rows}, \
                                     column `{}` (datatype {}): `{}` {why}",
                                    f.name,
                                    f.datatype,
                                    text.trim()
                                ));
                            }
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
                let mut tag = vec![c];
                let mut name_len = 1usize;
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
                        name_len += 1;
                    }
                    if tag.len() >= MAX_TAG_BYTES {
                        return Err(format!(
                            "line {start_line}: a start tag longer than {MAX_TAG_BYTES} bytes"
                        ));
                    }
                    tag.push(c);
                    previous = c;
                }
                let name = tag[..name_len].to_vec();
                let self_closing = previous == b'/';
                match name.as_slice() {
                    b"TABLE" => {
                        fields.clear();
                        row_bytes = 0;
                        fixed_width = true;
                        rows = 0;
                        table_name = attribute(&tag, b"name")
                            .or_else(|| attribute(&tag, b"ID"))
                            .unwrap_or_else(|| "(unnamed)".into());
                    }
                    b"FIELD" | b"PARAM" => {
                        let datatype = attribute(&tag, b"datatype").unwrap_or_default();
                        let arraysize = attribute(&tag, b"arraysize");
                        let (elements, fixed) = array_elements(arraysize.as_deref())
                            .map_err(|e| format!("line {start_line}: {e}"))?;
                        if name == b"FIELD" {
                            if !fixed || datatype == "bit" {
                                fixed_width = false;
                            }
                            if fixed {
                                row_bytes = row_bytes.saturating_add(
                                    elements.unwrap_or(1) * element_bytes(&datatype),
                                );
                            }
                            fields.push(ScanField {
                                name: attribute(&tag, b"name").unwrap_or_default(),
                                scalar: arraysize.is_none(),
                                datatype,
                                arraysize,
                            });
                        }
                    }
                    b"TR" => {
                        rows += 1;
                        cell_index = 0;
                        if rows.saturating_mul(row_bytes) > MAX_PADDED_BYTES {
                            return Err(format!(
                                "line {start_line}: TABLE `{table_name}`: {rows} rows of \
                                 {row_bytes} fixed bytes exceed the limit of {MAX_PADDED_BYTES} \
                                 bytes once cells are padded to their arraysize"
                            ));
                        }
                    }
                    b"TD" => {
                        if !self_closing {
                            cell = Some((cell_index, Vec::new()));
                        }
                        cell_index += 1;
                    }
                    _ => {}
                }
                if !self_closing {
                    if name == b"STREAM" {
                        stream = Some((0, 0));
                        let binary2 = stack.iter().any(|e| e == b"BINARY2");
                        let binary = binary2 || stack.iter().any(|e| e == b"BINARY");
                        let base64 =
                            attribute(&tag, b"encoding").is_none_or(|e| e.trim() == "base64");
                        walk = (binary && base64)
                            .then(|| BinaryWalk::new(&fields, binary2))
                            .flatten()
                            .map(|w| (w, Base64::default()));
                    }
                    if stack.len() >= MAX_XML_DEPTH {
                        return Err(format!(
                            "line {start_line}: elements nested deeper than {MAX_XML_DEPTH} \
                             levels (limit of this reader)"
                        ));
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

/// Says in the user's terms what a VOTable parser error means, keeping the parser's words.
fn explain(raw: &str) -> String {
    let raw = raw.split_whitespace().collect::<Vec<_>>().join(" ");
    let meaning = if raw.contains("failed to fill whole buffer") {
        "a binary STREAM ends inside a row: the data are shorter than the FIELDs declare"
    } else if raw.contains("MultiByte") {
        "a unicodeChar value holds a character outside the Basic Multilingual Plane, which \
         unicodeChar (UCS-2) cannot store; use datatype char (UTF-8)"
    } else if raw.contains("BufferOverflow") {
        // The same limit the pre-scan checks in BINARY cells (`BinaryWalk::check_string`).
        "a unicodeChar value with more characters above U+07FF than the VOTable library can \
         decode (it allows two UTF-8 bytes per character); use datatype char (UTF-8)"
    } else if raw.contains("tf8") || raw.contains("utf-8") || raw.contains("UCS2") {
        "a char or unicodeChar cell holds bytes that are not valid text (UTF-8 or UCS-2)"
    } else if raw.contains("invalid digit") || raw.contains("invalid float") {
        "a value is not a number of its FIELD's datatype"
    } else if raw.contains("Unexpected empty tag") || raw.contains("Unexpected start tag") {
        "an element the VOTable 1.4 schema does not allow there"
    } else {
        return format!("XML: {raw}");
    };
    format!("{meaning} (parser: {raw})")
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
        .map_err(|e| explain(&e.to_string()))?
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
    // votable 0.7.0 cuts an over-long fixed `char` value at a byte count and can leave half a
    // UTF-8 character; re-check the bytes rather than trust the `str`.
    let s = String::from_utf8_lossy(s.as_bytes());
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

    #[test]
    fn hostile_votables_are_refused_before_the_parser() {
        let ok = |s: &[u8]| check_well_formed(s);
        // Issue 13 item 1: bytes that are not UTF-8 (an incomplete sequence, an encoded
        // surrogate, a lone 0xff), RFC 3629.
        for bad in [
            &b"<A>\xe2\x82</A>"[..],
            b"<A>\xed\xa0\x80</A>",
            b"<A>\xff</A>",
            b"<A>\xc3",
        ] {
            assert!(ok(bad).unwrap_err().contains("UTF-8"), "{bad:?}");
        }
        assert!(ok("<A>\u{e9}\u{20ac}\u{1f600}</A>".as_bytes()).is_ok());
        assert!(ok(b"\xff\xfe<\0A\0").unwrap_err().contains("UTF-16"));
        // Item 2: depth.
        let deep = "<R>".repeat(MAX_XML_DEPTH + 1) + &"</R>".repeat(MAX_XML_DEPTH + 1);
        assert!(ok(deep.as_bytes()).unwrap_err().contains("nested deeper"));
        let fine = "<R>".repeat(MAX_XML_DEPTH) + &"</R>".repeat(MAX_XML_DEPTH);
        assert!(ok(fine.as_bytes()).is_ok());
        // Item 3: arraysize, alone and as a product; padded TABLEDATA.
        for a in [
            "2147483648",
            "1025x1025",
            "99999999999999999999x2",
            "4294967296*",
        ] {
            let f = format!("<T><FIELD name='s' datatype='char' arraysize='{a}'/></T>");
            assert!(ok(f.as_bytes()).unwrap_err().contains("arraysize"), "{a}");
        }
        let f = "<T><FIELD name='s' datatype='char' arraysize='1024x1024'/></T>";
        assert!(ok(f.as_bytes()).is_ok());
        let rows = "<TR><TD/></TR>".repeat(300);
        let f = format!(
            "<TABLE><FIELD name='s' datatype='char' arraysize='1000000'/><DATA><TABLEDATA>\
             {rows}</TABLEDATA></DATA></TABLE>"
        );
        assert!(ok(f.as_bytes()).unwrap_err().contains("padded"));
        // Item 9: a bad number names its row and column.
        let f = "<TABLE name='t'><FIELD name='m' datatype='double'/><DATA><TABLEDATA>\
                 <TR><TD>1</TD></TR><TR><TD>1.2.3</TD></TR></TABLEDATA></DATA></TABLE>";
        let e = ok(f.as_bytes()).unwrap_err();
        assert!(
            e.contains("row 2") && e.contains("`m`") && e.contains("1.2.3"),
            "{e}"
        );
    }

    /// Base64 (RFC 4648 §4) of bytes, for building BINARY streams.
    fn b64(bytes: &[u8]) -> String {
        const A: &[u8] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
        let mut out = String::new();
        for c in bytes.chunks(3) {
            let n = c.len();
            let v = (u32::from(c[0]) << 16)
                | (u32::from(*c.get(1).unwrap_or(&0)) << 8)
                | u32::from(*c.get(2).unwrap_or(&0));
            for k in 0..4 {
                out.push(if k <= n {
                    A[(v >> (18 - 6 * k)) as usize & 63] as char
                } else {
                    '='
                });
            }
        }
        out
    }

    /// A one-TABLE VOTable with these FIELDs and a BINARY (or BINARY2) stream of `data`.
    fn binary_votable(fields: &str, data: &[u8], binary2: bool) -> String {
        let tag = if binary2 { "BINARY2" } else { "BINARY" };
        format!(
            "<VOTABLE><RESOURCE><TABLE name='t'>{fields}<DATA><{tag}><STREAM encoding='base64'>\
             {}</STREAM></{tag}></DATA></TABLE></RESOURCE></VOTABLE>",
            b64(data)
        )
    }

    #[test]
    fn base64_round_trip_matches_rfc_4648() {
        // RFC 4648 §10 test vectors.
        assert_eq!(b64(b"foob"), "Zm9vYg==");
        assert_eq!(b64(b"fooba"), "Zm9vYmE=");
        let mut d = Base64::default();
        let out: Vec<u8> = "Zm9vYmE="
            .bytes()
            .filter_map(|c| d.push(c))
            .flat_map(|(b, n)| b[..n].to_vec())
            .collect();
        assert_eq!(out, b"fooba");
    }

    #[test]
    fn binary_string_cells_are_checked_before_the_parser() {
        let ok = |s: String| check_well_formed(s.as_bytes());
        let ch = "<FIELD name='id' datatype='char' arraysize='4'/>\
                  <FIELD name='m' datatype='double'/>";
        let row = |id: &[u8]| [id, &1.5f64.to_be_bytes()[..]].concat();
        // Valid rows (UTF-8 text; NUL padding; a string starting with NUL is empty).
        let good = [
            row(b"ab\0\0"),
            row("\u{e9}x\0".as_bytes()),
            row(b"\0\xff\xff\xff"),
        ]
        .concat();
        assert!(ok(binary_votable(ch, &good, false)).is_ok());
        // RFC 3629: 0xff never occurs in UTF-8. Row 2, column `id`.
        let bad = [row(b"ab\0\0"), row(b"a\xff\0\0")].concat();
        let e = ok(binary_votable(ch, &bad, false)).unwrap_err();
        assert!(
            e.contains("data row 2, column `id`") && e.contains("UTF-8"),
            "{e}"
        );
        // BINARY2: one null-flag byte leads each row.
        let bad2 = [&[0u8][..], &row(b"\xc3(\0\0")].concat();
        let e = ok(binary_votable(ch, &bad2, true)).unwrap_err();
        assert!(e.contains("data row 1, column `id`"), "{e}");

        // unicodeChar: a surrogate half is not UCS-2 (ISO/IEC 10646).
        let uc = "<FIELD name='name' datatype='unicodeChar' arraysize='2'/>";
        let e = ok(binary_votable(uc, &[0, 0x41, 0xd8, 0x00], false)).unwrap_err();
        assert!(
            e.contains("surrogate") && e.contains("column `name`"),
            "{e}"
        );
        assert!(ok(binary_votable(uc, &[0, 0x41, 0, 0xe9], false)).is_ok());
        // Two characters above U+07FF need 6 UTF-8 bytes; the parser allows 4. The parser
        // itself refuses that cell (so the check refuses nothing it could read), and reads one
        // such character beside an ASCII one.
        let wide = binary_votable(uc, &[0x20, 0xac, 0x20, 0xac], false);
        let e = ok(wide.clone()).unwrap_err();
        assert!(e.contains("above U+07FF"), "{e}");
        assert!(read_from(wide.as_bytes(), None).is_err());
        let one = binary_votable(uc, &[0x20, 0xac, 0, 0x41], false);
        assert!(ok(one.clone()).is_ok());
        let t = read_from(one.as_bytes(), None).unwrap();
        assert_eq!(t.rows[0].cells[0], Cell::Text("\u{20ac}A".into()));

        // Variable length: a count of 2^31 - 1 elements is refused before any allocation.
        let var = "<FIELD name='s' datatype='char' arraysize='*'/>";
        let e = ok(binary_votable(var, &[0x7f, 0xff, 0xff, 0xff, b'a'], false)).unwrap_err();
        assert!(
            e.contains("variable-length") && e.contains("2147483647"),
            "{e}"
        );
        let fine = [
            &[0u8, 0, 0, 2][..],
            b"hi",
            &[0, 0, 0, 0],
            &[0, 0, 0, 1],
            b"x",
        ]
        .concat();
        assert!(ok(binary_votable(var, &fine, false)).is_ok());
        let e = ok(binary_votable(var, &[0, 0, 0, 3, b'a'], false)).unwrap_err();
        assert!(e.contains("ends inside data row 1"), "{e}");
        let e = ok(binary_votable(var, &[0, 0, 0, 2, b'a', 0xff], false)).unwrap_err();
        assert!(e.contains("UTF-8"), "{e}");
    }

    #[test]
    fn attributes_are_read_with_either_quote() {
        let tag = br#"FIELD name="mass" datatype='double'  arraysize = "3x2""#;
        assert_eq!(attribute(tag, b"name").as_deref(), Some("mass"));
        assert_eq!(attribute(tag, b"datatype").as_deref(), Some("double"));
        assert_eq!(attribute(tag, b"arraysize").as_deref(), Some("3x2"));
        assert_eq!(attribute(tag, b"unit"), None);
        assert_eq!(array_elements(Some("3x2")), Ok((Some(6), true)));
        assert_eq!(array_elements(Some("8*")), Ok((Some(8), false)));
    }
}
