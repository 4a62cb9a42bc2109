//! Reader for FITS binary tables (FITS Standard 4.0, §7.3 `BINTABLE`) into a
//! [`RawTable`](super::table::RawTable).
//!
//! Hand-written rather than through `fitsrs`: that crate applies neither `TNULL` nor
//! `TSCAL`/`TZERO` to every integer width and cannot read one HDU's data twice; FITS itself is
//! 2880-byte blocks of 80-character cards followed by big-endian rows, which this module walks
//! block by block and row by row (one row buffer; the rows read are the only copy of the table).
//!
//! ```no_run
//! use dwarfbound::catalogue::table::{read_table, ReadOptions};
//! let opts = ReadOptions { table: Some("CATALOGUE".into()), ..Default::default() };
//! let table = read_table(std::path::Path::new("stars.fits"), &opts)?;
//! println!("{} rows", table.rows.len());
//! # Ok::<(), dwarfbound::catalogue::CatalogueError>(())
//! ```
//!
//! What the reader returns, cell by cell:
//! * `B`, `I`, `J`, `K` integers: the stored value equal to `TNULLn` is [`Cell::Missing`];
//!   otherwise `TZEROn + TSCALn × stored` as a [`Cell::Number`]. With `TSCALn = 1` and an
//!   integral `TZEROn` (unsigned and signed-byte columns) the sum is exact, and a result beyond
//!   ±2⁵³ (not exactly a double) is returned as decimal [`Cell::Text`] so no digit is lost.
//! * `E`, `D` floats: NaN is [`Cell::Missing`] (FITS 4.0 §7.3.3.1); scaling is applied.
//! * `L` logicals: `T`/`F` → text `true`/`false`, a zero byte → missing.
//! * `A` strings: up to the first NUL, trailing blanks removed (they are padding); an empty
//!   string is missing.
//! * Vector columns (repeat count > 1), bit (`X`) and complex (`C`, `M`) columns: one text cell
//!   such as `[1, 2, null]` or `[(1, 0), (0.5, 2)]` so the data stays visible; vetting rejects
//!   them where it needs a number. Variable-length arrays (`P`, `Q`) are refused with an error
//!   naming the column. `TDIMn` is ignored.
//!
//! The table is chosen with `table`: a 0-based HDU number (the primary HDU is 0, the first
//! extension 1), or an `EXTNAME` compared without regard to ASCII case; by default the first
//! `BINTABLE` extension.

use std::fs::File;
use std::io::{BufReader, ErrorKind, Read, Seek, SeekFrom};
use std::path::Path;

use super::error::CatalogueError;
use super::table::{Cell, ColumnMeta, RawRow, RawTable};

/// FITS logical record length (FITS Standard 4.0, §3.1).
const BLOCK: usize = 2880;
/// Header card length (FITS Standard 4.0, §4.1).
const CARD: usize = 80;
/// Largest integer magnitude every value up to which a double holds exactly (2⁵³).
const EXACT_INT_LIMIT: i128 = 1 << 53;

/// Reads a FITS binary table; `table` selects the HDU by 0-based number or `EXTNAME`.
pub fn read(path: &Path, table: Option<&str>) -> Result<RawTable, CatalogueError> {
    let file = File::open(path).map_err(|e| CatalogueError::Unreadable {
        path: path.to_path_buf(),
        reason: e.to_string(),
    })?;
    let file_len = file
        .metadata()
        .map_err(|e| CatalogueError::Unreadable {
            path: path.to_path_buf(),
            reason: e.to_string(),
        })?
        .len();
    let mut reader = FitsReader {
        inner: BufReader::with_capacity(1 << 16, file),
        pos: 0,
        file_len,
    };
    read_from(&mut reader, table).map_err(|e| match e {
        Failure::Invalid(reason) => CatalogueError::Invalid {
            path: path.to_path_buf(),
            format: "FITS",
            reason,
        },
        Failure::Io(err) => CatalogueError::Unreadable {
            path: path.to_path_buf(),
            reason: err.to_string(),
        },
    })
}

/// Why reading stopped, before the path is attached.
enum Failure {
    Invalid(String),
    Io(std::io::Error),
}

impl From<std::io::Error> for Failure {
    fn from(e: std::io::Error) -> Self {
        Failure::Io(e)
    }
}

fn invalid<T>(reason: impl Into<String>) -> Result<T, Failure> {
    Err(Failure::Invalid(reason.into()))
}

/// A buffered file that knows its position and length, so truncation is reported precisely.
struct FitsReader {
    inner: BufReader<File>,
    pos: u64,
    file_len: u64,
}

impl FitsReader {
    /// Fills `buf` completely; `Ok(false)` if the file ends first.
    fn read_full(&mut self, buf: &mut [u8]) -> Result<bool, Failure> {
        match self.inner.read_exact(buf) {
            Ok(()) => {
                self.pos += buf.len() as u64;
                Ok(true)
            }
            Err(e) if e.kind() == ErrorKind::UnexpectedEof => Ok(false),
            Err(e) => Err(Failure::Io(e)),
        }
    }

    fn skip(&mut self, bytes: u64) -> Result<(), Failure> {
        let target = self.pos.saturating_add(bytes);
        self.inner.seek(SeekFrom::Start(target))?;
        self.pos = target;
        Ok(())
    }
}

/// One header card with a value indicator (`= ` in columns 9–10).
struct ValueCard {
    /// 1-based card number within its header (for messages).
    number: usize,
    keyword: String,
    /// Columns 11–80, not yet interpreted.
    raw: String,
}

/// One HDU's header: the value cards, in order.
struct Header {
    hdu: usize,
    cards: Vec<ValueCard>,
}

impl Header {
    fn card(&self, keyword: &str) -> Option<&ValueCard> {
        self.cards.iter().find(|c| c.keyword == keyword)
    }

    fn bad(&self, card: &ValueCard, what: &str) -> Failure {
        Failure::Invalid(format!(
            "HDU {}: card {} `{}`: value `{}` is not {what}",
            self.hdu,
            card.number,
            card.keyword,
            card.raw.trim()
        ))
    }

    fn int(&self, keyword: &str) -> Result<Option<i128>, Failure> {
        match self.card(keyword) {
            None => Ok(None),
            Some(c) => parse_int(&c.raw)
                .map(Some)
                .ok_or_else(|| self.bad(c, "an integer")),
        }
    }

    fn required_int(&self, keyword: &str) -> Result<i128, Failure> {
        self.int(keyword)?.ok_or_else(|| {
            Failure::Invalid(format!(
                "HDU {}: mandatory keyword {keyword} is missing",
                self.hdu
            ))
        })
    }

    fn float(&self, keyword: &str) -> Result<Option<f64>, Failure> {
        match self.card(keyword) {
            None => Ok(None),
            Some(c) => parse_float(&c.raw)
                .map(Some)
                .ok_or_else(|| self.bad(c, "a number")),
        }
    }

    fn string(&self, keyword: &str) -> Result<Option<String>, Failure> {
        match self.card(keyword) {
            None => Ok(None),
            Some(c) => parse_string(&c.raw)
                .map(Some)
                .ok_or_else(|| self.bad(c, "a quoted string")),
        }
    }
}

/// Strips an inline comment (`/ …`) from a non-string value field.
fn bare_value(raw: &str) -> &str {
    raw.split('/').next().unwrap_or("").trim()
}

fn parse_int(raw: &str) -> Option<i128> {
    let v = bare_value(raw);
    let v = v.strip_prefix('+').unwrap_or(v);
    v.parse::<i128>().ok()
}

fn parse_float(raw: &str) -> Option<f64> {
    // FITS allows a `D` exponent (FITS Standard 4.0, §4.2.4).
    let v = bare_value(raw).replace(['D', 'd'], "E");
    v.parse::<f64>().ok().filter(|x| x.is_finite())
}

fn parse_logical(raw: &str) -> Option<bool> {
    match bare_value(raw) {
        "T" => Some(true),
        "F" => Some(false),
        _ => None,
    }
}

/// A quoted string value: `''` is one quote, trailing blanks are insignificant (§4.2.1.1).
fn parse_string(raw: &str) -> Option<String> {
    let rest = raw.trim_start().strip_prefix('\'')?;
    let mut out = String::new();
    let mut chars = rest.chars().peekable();
    loop {
        match chars.next()? {
            '\'' => {
                if chars.peek() == Some(&'\'') {
                    chars.next();
                    out.push('\'');
                } else {
                    break;
                }
            }
            c => out.push(c),
        }
    }
    Some(out.trim_end().to_string())
}

/// Reads one header starting at the current position; `Ok(None)` at a clean end of file.
fn read_header(r: &mut FitsReader, hdu: usize) -> Result<Option<Header>, Failure> {
    let mut block = vec![0u8; BLOCK];
    let mut cards = Vec::new();
    let mut number = 0usize;
    let mut first_block = true;
    loop {
        let start = r.pos;
        if !r.read_full(&mut block)? {
            if first_block && start >= r.file_len {
                return Ok(None);
            }
            if first_block && hdu > 0 {
                // A short tail after the last HDU is not a header (some writers leave one).
                return Ok(None);
            }
            return invalid(format!(
                "HDU {hdu}: header has no END card before the end of the file (truncated?)"
            ));
        }
        for chunk in block.chunks_exact(CARD) {
            number += 1;
            let keyword_bytes = &chunk[..8];
            let keyword = String::from_utf8_lossy(keyword_bytes)
                .trim_end()
                .to_string();
            if number == 1 {
                let expected = if hdu == 0 { "SIMPLE" } else { "XTENSION" };
                let simple_true = &chunk[8..10] == b"= "
                    && parse_logical(&String::from_utf8_lossy(&chunk[10..])) == Some(true);
                if keyword != expected || (hdu == 0 && !simple_true) {
                    if hdu == 0 {
                        return invalid("not a FITS file: the first card is not `SIMPLE = T`");
                    }
                    return invalid(format!(
                        "HDU {hdu}: expected an XTENSION card at byte {start}, found `{}`",
                        printable(&chunk[..chunk.len().min(20)])
                    ));
                }
            }
            if keyword == "END" {
                if chunk[3..].iter().any(|&b| b != b' ') {
                    return invalid(format!("HDU {hdu}: card {number}: malformed END card"));
                }
                return Ok(Some(Header { hdu, cards }));
            }
            let commentary = matches!(keyword.as_str(), "" | "COMMENT" | "HISTORY" | "CONTINUE");
            if commentary {
                continue;
            }
            if let Some(&b) = chunk.iter().find(|&&b| !(0x20..=0x7e).contains(&b)) {
                return invalid(format!(
                    "HDU {hdu}: card {number}: byte 0x{b:02x} is not printable ASCII \
                     (FITS Standard 4.0, §4.1.1; corrupted header?)"
                ));
            }
            if !keyword
                .bytes()
                .all(|b| b.is_ascii_uppercase() || b.is_ascii_digit() || b == b'-' || b == b'_')
            {
                if keyword == "HIERARCH" {
                    continue;
                }
                return invalid(format!(
                    "HDU {hdu}: card {number}: `{keyword}` is not a valid keyword"
                ));
            }
            if &chunk[8..10] == b"= " {
                cards.push(ValueCard {
                    number,
                    keyword,
                    raw: String::from_utf8_lossy(&chunk[10..]).into_owned(),
                });
            }
        }
        first_block = false;
    }
}

fn printable(bytes: &[u8]) -> String {
    bytes
        .iter()
        .map(|&b| {
            if (0x20..=0x7e).contains(&b) {
                b as char
            } else {
                '.'
            }
        })
        .collect()
}

/// Size of an HDU's data in bytes, without and with the padding to whole blocks
/// (FITS Standard 4.0, §4.4.1.1, §7.3.1).
fn data_size(h: &Header) -> Result<(u64, u64), Failure> {
    let bitpix = h.required_int("BITPIX")?;
    if ![8, 16, 32, 64, -32, -64].contains(&bitpix) {
        return invalid(format!("HDU {}: BITPIX = {bitpix} is not allowed", h.hdu));
    }
    let naxis = h.required_int("NAXIS")?;
    if !(0..=999).contains(&naxis) {
        return invalid(format!("HDU {}: NAXIS = {naxis} is out of range", h.hdu));
    }
    if naxis == 0 {
        return Ok((0, 0));
    }
    let mut product: i128 = 1;
    for n in 1..=naxis {
        let len = h.required_int(&format!("NAXIS{n}"))?;
        if len < 0 {
            return invalid(format!("HDU {}: NAXIS{n} = {len} is negative", h.hdu));
        }
        // Random groups (primary HDU with NAXIS1 = 0) leave NAXIS1 out of the product.
        if n == 1 && len == 0 && h.hdu == 0 {
            continue;
        }
        product = product.saturating_mul(len);
    }
    let pcount = h.int("PCOUNT")?.unwrap_or(0);
    let gcount = h.int("GCOUNT")?.unwrap_or(1);
    if pcount < 0 || gcount < 0 {
        return invalid(format!("HDU {}: negative PCOUNT or GCOUNT", h.hdu));
    }
    let bytes = bitpix
        .abs()
        .saturating_mul(gcount)
        .saturating_mul(pcount.saturating_add(product))
        / 8;
    let block = BLOCK as i128;
    let padded = bytes.saturating_add(block - 1) / block * block;
    let too_big = || Failure::Invalid(format!("HDU {}: data size overflows", h.hdu));
    Ok((
        u64::try_from(bytes).map_err(|_| too_big())?,
        u64::try_from(padded).map_err(|_| too_big())?,
    ))
}

/// Which HDU the caller asked for.
enum Selection<'a> {
    FirstTable,
    Index(usize),
    Name(&'a str),
}

fn read_from(r: &mut FitsReader, table: Option<&str>) -> Result<RawTable, Failure> {
    let selection = match table.map(str::trim) {
        None | Some("") => Selection::FirstTable,
        Some(s) => match s.parse::<usize>() {
            Ok(i) => Selection::Index(i),
            Err(_) => Selection::Name(s),
        },
    };
    let mut seen: Vec<String> = Vec::new();
    let mut hdu = 0usize;
    while let Some(header) = read_header(r, hdu)? {
        let data_start = r.pos;
        let kind = if hdu == 0 {
            "primary".to_string()
        } else {
            header
                .string("XTENSION")?
                .unwrap_or_default()
                .trim()
                .to_string()
        };
        let extname = header.string("EXTNAME")?.map(|s| s.trim().to_string());
        let is_bintable = kind == "BINTABLE";
        let chosen = match &selection {
            Selection::FirstTable => is_bintable,
            Selection::Index(i) => *i == hdu,
            Selection::Name(name) => extname
                .as_deref()
                .is_some_and(|e| e.eq_ignore_ascii_case(name)),
        };
        if chosen {
            if !is_bintable {
                return invalid(format!(
                    "HDU {hdu}{} is a {} HDU, not a binary table (BINTABLE)",
                    extname.map(|e| format!(" ({e})")).unwrap_or_default(),
                    if kind.is_empty() { "?" } else { &kind }
                ));
            }
            return read_bintable(r, &header, data_start);
        }
        seen.push(match &extname {
            Some(e) => format!("{hdu}: {kind} `{e}`"),
            None => format!("{hdu}: {kind}"),
        });
        let (size, padded) = data_size(&header)?;
        if data_start.saturating_add(size) > r.file_len {
            return invalid(format!(
                "HDU {hdu}: data truncated ({size} bytes expected after byte {data_start}, \
                 the file has {})",
                r.file_len.saturating_sub(data_start)
            ));
        }
        if data_start.saturating_add(padded) > r.file_len {
            // The last HDU without its final padding: nothing can follow it.
            break;
        }
        r.skip(padded)?;
        hdu += 1;
    }
    let what = match selection {
        Selection::FirstTable => "no binary table (BINTABLE extension)".to_string(),
        Selection::Index(i) => format!("no HDU number {i}"),
        Selection::Name(n) => format!("no HDU named `{n}`"),
    };
    // Bytes left that do not make a whole header block: most often a file cut in transfer.
    let tail = r.file_len.saturating_sub(r.pos);
    let cause = if tail > 0 {
        format!(
            "; the file ends with {tail} bytes after HDU {} that are not a complete header \
             (truncated file?)",
            hdu.saturating_sub(1)
        )
    } else if seen.len() == 1 {
        "; the file holds only the primary HDU (a file cut after its first header looks \
         like this)"
            .to_string()
    } else {
        String::new()
    };
    invalid(format!("{what}; HDUs present: {}{cause}", seen.join(", ")))
}

/// Element type of a column (FITS Standard 4.0, Table 18).
#[derive(Debug, Clone, Copy, PartialEq)]
enum Kind {
    Logical,
    Bits,
    Byte,
    Short,
    Int,
    Long,
    Char,
    Float,
    Double,
    ComplexFloat,
    ComplexDouble,
}

impl Kind {
    fn element_bytes(self) -> usize {
        match self {
            Kind::Logical | Kind::Byte | Kind::Char | Kind::Bits => 1,
            Kind::Short => 2,
            Kind::Int | Kind::Float => 4,
            Kind::Long | Kind::Double | Kind::ComplexFloat => 8,
            Kind::ComplexDouble => 16,
        }
    }

    fn is_integer(self) -> bool {
        matches!(self, Kind::Byte | Kind::Short | Kind::Int | Kind::Long)
    }
}

/// One column's layout and the keywords that change its values.
struct Column {
    kind: Kind,
    repeat: usize,
    offset: usize,
    width: usize,
    scale: f64,
    zero: f64,
    /// `TZEROn` as an exact integer when `TSCALn = 1` and `TZEROn` is integral.
    exact_zero: Option<i128>,
    null: Option<i128>,
}

/// Parses `rTa`: repeat count, type letter, and whatever follows (ignored except for P/Q).
fn parse_tform(tform: &str) -> Option<(usize, char, &str)> {
    let t = tform.trim();
    let digits = t.bytes().take_while(u8::is_ascii_digit).count();
    let repeat = if digits == 0 {
        1
    } else {
        t[..digits].parse().ok()?
    };
    let mut rest = t[digits..].chars();
    let letter = rest.next()?;
    Some((repeat, letter, rest.as_str()))
}

fn read_bintable(r: &mut FitsReader, h: &Header, data_start: u64) -> Result<RawTable, Failure> {
    let hdu = h.hdu;
    let bitpix = h.required_int("BITPIX")?;
    let naxis = h.required_int("NAXIS")?;
    if bitpix != 8 || naxis != 2 {
        return invalid(format!(
            "HDU {hdu}: a BINTABLE needs BITPIX = 8 and NAXIS = 2 (found {bitpix}, {naxis})"
        ));
    }
    let row_bytes = h.required_int("NAXIS1")?;
    let n_rows = h.required_int("NAXIS2")?;
    let gcount = h.int("GCOUNT")?.unwrap_or(1);
    let tfields = h.required_int("TFIELDS")?;
    if gcount != 1 {
        return invalid(format!("HDU {hdu}: GCOUNT = {gcount}, a BINTABLE needs 1"));
    }
    if !(1..=999).contains(&tfields) {
        return invalid(format!(
            "HDU {hdu}: TFIELDS = {tfields} (a table needs 1 to 999 columns)"
        ));
    }
    if row_bytes <= 0 || n_rows < 0 {
        return invalid(format!(
            "HDU {hdu}: NAXIS1 = {row_bytes}, NAXIS2 = {n_rows} do not describe a table"
        ));
    }
    let row_bytes = usize::try_from(row_bytes)
        .map_err(|_| Failure::Invalid(format!("HDU {hdu}: NAXIS1 too large")))?;
    let n_rows = u64::try_from(n_rows).unwrap_or(u64::MAX);

    let mut metas = Vec::new();
    let mut columns = Vec::new();
    let mut offset = 0usize;
    for n in 1..=tfields {
        let tform = h.string(&format!("TFORM{n}"))?.ok_or_else(|| {
            Failure::Invalid(format!("HDU {hdu}: mandatory keyword TFORM{n} is missing"))
        })?;
        let name = h
            .string(&format!("TTYPE{n}"))?
            .map(|s| s.trim().to_string())
            .filter(|s| !s.is_empty())
            .unwrap_or_else(|| format!("col{n}"));
        let (repeat, letter, _) = parse_tform(&tform).ok_or_else(|| {
            Failure::Invalid(format!(
                "HDU {hdu}: TFORM{n} = '{tform}' (column `{name}`) is not a valid format"
            ))
        })?;
        let kind = match letter {
            'L' => Kind::Logical,
            'X' => Kind::Bits,
            'B' => Kind::Byte,
            'I' => Kind::Short,
            'J' => Kind::Int,
            'K' => Kind::Long,
            'A' => Kind::Char,
            'E' => Kind::Float,
            'D' => Kind::Double,
            'C' => Kind::ComplexFloat,
            'M' => Kind::ComplexDouble,
            'P' | 'Q' => {
                return invalid(format!(
                    "HDU {hdu}: column `{name}` (TFORM{n} = '{tform}') is a variable-length \
                     array, which this reader does not support; drop or convert the column"
                ))
            }
            _ => {
                return invalid(format!(
                    "HDU {hdu}: TFORM{n} = '{tform}' (column `{name}`): unknown type `{letter}`"
                ))
            }
        };
        let width = if kind == Kind::Bits {
            repeat.div_ceil(8)
        } else {
            repeat.checked_mul(kind.element_bytes()).ok_or_else(|| {
                Failure::Invalid(format!("HDU {hdu}: TFORM{n} repeat count too large"))
            })?
        };
        let scale = h.float(&format!("TSCAL{n}"))?.unwrap_or(1.0);
        let zero_card = h.card(&format!("TZERO{n}"));
        let zero = h.float(&format!("TZERO{n}"))?.unwrap_or(0.0);
        let null = h.int(&format!("TNULL{n}"))?;
        let exact_zero = if scale == 1.0 {
            match zero_card {
                None => Some(0),
                Some(c) => parse_int(&c.raw)
                    .or_else(|| (zero.fract() == 0.0 && zero.abs() < 1e30).then_some(zero as i128)),
            }
        } else {
            None
        };
        let unit = h
            .string(&format!("TUNIT{n}"))?
            .map(|s| s.trim().to_string())
            .filter(|s| !s.is_empty());
        metas.push(ColumnMeta {
            name,
            unit,
            ucd: None,
        });
        columns.push(Column {
            kind,
            repeat,
            offset,
            width,
            scale,
            zero,
            exact_zero,
            null: if kind.is_integer() { null } else { None },
        });
        offset = offset
            .checked_add(width)
            .ok_or_else(|| Failure::Invalid(format!("HDU {hdu}: row width overflows")))?;
    }
    if offset != row_bytes {
        return invalid(format!(
            "HDU {hdu}: the columns' TFORMs add up to {offset} bytes per row, NAXIS1 says {row_bytes}"
        ));
    }
    let table_bytes = (row_bytes as u64).saturating_mul(n_rows);
    let available = r.file_len.saturating_sub(data_start);
    if table_bytes > available {
        let complete = available / row_bytes as u64;
        return invalid(format!(
            "HDU {hdu}: data truncated: {n_rows} rows of {row_bytes} bytes need {table_bytes} \
             bytes, the file holds {available} after the header ({complete} complete rows)"
        ));
    }

    let mut rows = Vec::with_capacity(usize::try_from(n_rows).unwrap_or(0).min(1 << 20));
    let mut malformed = Vec::new();
    let mut buf = vec![0u8; row_bytes];
    for index in 0..n_rows {
        let row_number = usize::try_from(index + 1).unwrap_or(usize::MAX);
        if !r.read_full(&mut buf)? {
            return invalid(format!(
                "HDU {hdu}: data truncated in row {row_number} of {n_rows}"
            ));
        }
        let mut cells = Vec::with_capacity(columns.len());
        for (col, meta) in columns.iter().zip(&metas) {
            let bytes = &buf[col.offset..col.offset + col.width];
            match decode(col, bytes) {
                Ok(cell) => cells.push(cell),
                Err(reason) => {
                    malformed.push((row_number, format!("column `{}`: {reason}", meta.name)));
                    cells.push(Cell::Missing);
                }
            }
        }
        rows.push(RawRow { row_number, cells });
    }
    Ok(RawTable {
        columns: metas,
        rows,
        malformed,
    })
}

/// One element of a numeric column, after TNULL and scaling; `None` means null.
enum Element {
    Null,
    Number(f64),
    /// An exact integer beyond what a double holds.
    BigInt(i128),
}

fn be_int(kind: Kind, b: &[u8]) -> i128 {
    match kind {
        Kind::Byte => i128::from(b[0]),
        Kind::Short => i128::from(i16::from_be_bytes([b[0], b[1]])),
        Kind::Int => i128::from(i32::from_be_bytes([b[0], b[1], b[2], b[3]])),
        _ => {
            let mut a = [0u8; 8];
            a.copy_from_slice(&b[..8]);
            i128::from(i64::from_be_bytes(a))
        }
    }
}

fn be_float(kind: Kind, b: &[u8]) -> f64 {
    if kind == Kind::Float {
        f64::from(f32::from_be_bytes([b[0], b[1], b[2], b[3]]))
    } else {
        let mut a = [0u8; 8];
        a.copy_from_slice(&b[..8]);
        f64::from_be_bytes(a)
    }
}

fn element(col: &Column, b: &[u8]) -> Element {
    if col.kind.is_integer() {
        let stored = be_int(col.kind, b);
        if col.null == Some(stored) {
            return Element::Null;
        }
        if let Some(zero) = col.exact_zero {
            let v = stored + zero;
            return if v.abs() <= EXACT_INT_LIMIT {
                Element::Number(v as f64)
            } else {
                Element::BigInt(v)
            };
        }
        Element::Number(col.zero + col.scale * stored as f64)
    } else {
        let v = be_float(col.kind, b);
        if v.is_nan() {
            Element::Null
        } else {
            Element::Number(col.zero + col.scale * v)
        }
    }
}

fn element_text(e: &Element) -> String {
    match e {
        Element::Null => "null".into(),
        Element::Number(v) => format!("{v:?}"),
        Element::BigInt(v) => v.to_string(),
    }
}

/// Decodes one cell; `Err` for a value the format forbids (the row is flagged malformed).
fn decode(col: &Column, bytes: &[u8]) -> Result<Cell, String> {
    if col.repeat == 0 {
        return Ok(Cell::Missing);
    }
    match col.kind {
        Kind::Char => {
            let end = bytes.iter().position(|&b| b == 0).unwrap_or(bytes.len());
            let s = String::from_utf8_lossy(&bytes[..end]);
            let s = s.trim_end_matches(' ');
            Ok(if s.is_empty() {
                Cell::Missing
            } else {
                Cell::Text(s.to_string())
            })
        }
        Kind::Logical => {
            let decode_one = |b: u8| match b {
                b'T' => Ok(Some(true)),
                b'F' => Ok(Some(false)),
                0 => Ok(None),
                other => Err(format!("logical byte 0x{other:02x} is neither T, F nor 0")),
            };
            if col.repeat == 1 {
                return Ok(match decode_one(bytes[0])? {
                    Some(v) => Cell::Text(v.to_string()),
                    None => Cell::Missing,
                });
            }
            let parts: Result<Vec<String>, String> = bytes
                .iter()
                .map(|&b| decode_one(b).map(|v| v.map_or("null".to_string(), |v| v.to_string())))
                .collect();
            Ok(Cell::Text(format!("[{}]", parts?.join(", "))))
        }
        Kind::Bits => {
            let bits: String = (0..col.repeat)
                .map(|i| {
                    if bytes[i / 8] & (0x80 >> (i % 8)) != 0 {
                        '1'
                    } else {
                        '0'
                    }
                })
                .collect();
            Ok(Cell::Text(bits))
        }
        Kind::ComplexFloat | Kind::ComplexDouble => {
            let part = if col.kind == Kind::ComplexFloat {
                Kind::Float
            } else {
                Kind::Double
            };
            let step = part.element_bytes();
            let parts: Vec<String> = bytes
                .chunks_exact(2 * step)
                .map(|c| {
                    format!(
                        "({:?}, {:?})",
                        be_float(part, &c[..step]),
                        be_float(part, &c[step..])
                    )
                })
                .collect();
            Ok(Cell::Text(if col.repeat == 1 {
                parts.concat()
            } else {
                format!("[{}]", parts.join(", "))
            }))
        }
        _ => {
            let step = col.kind.element_bytes();
            if col.repeat == 1 {
                return Ok(match element(col, bytes) {
                    Element::Null => Cell::Missing,
                    Element::Number(v) => Cell::Number(v),
                    Element::BigInt(v) => Cell::Text(v.to_string()),
                });
            }
            let parts: Vec<String> = bytes
                .chunks_exact(step)
                .map(|c| element_text(&element(col, c)))
                .collect();
            Ok(Cell::Text(format!("[{}]", parts.join(", "))))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn strings_follow_fits_quoting() {
        // FITS Standard 4.0, §4.2.1.1: '' is a quote, trailing blanks are not significant.
        assert_eq!(parse_string("'O''HARA '  / c").as_deref(), Some("O'HARA"));
        assert_eq!(parse_string("'unterminated"), None);
        assert_eq!(parse_string("42"), None);
    }

    #[test]
    fn numbers_accept_fits_exponents_and_comments() {
        // FITS Standard 4.0, §4.2.4: a D exponent is allowed.
        assert_eq!(parse_float("   1.5D2 / comment"), Some(150.0));
        assert_eq!(parse_int("  +12 / n"), Some(12));
        assert_eq!(parse_int("'twelve'"), None);
        assert_eq!(parse_logical("                   T"), Some(true));
    }

    #[test]
    fn tform_repeat_and_letter() {
        assert_eq!(parse_tform("D"), Some((1, 'D', "")));
        assert_eq!(parse_tform("12A"), Some((12, 'A', "")));
        assert_eq!(parse_tform("1PE(5)"), Some((1, 'P', "E(5)")));
        assert_eq!(parse_tform(""), None);
    }
}
