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
//! The parser hands each row to a [`RowSink`] as borrowed cells of its reused line buffers, so
//! reading allocates nothing per cell: [`vet_streaming`] vets rows as they are read (the large-
//! catalogue path), [`read`] collects them into a [`RawTable`] like every other reader.
//!
//! ```text
//! # Invented data for a fictional survey.
//! id,class,mass[jupiterMass],mass_err[jupiterMass]
//! A-1,brown_dwarf,62,4
//! ```

use std::io::BufRead;
use std::path::Path;

use super::colmap::ColumnMap;
use super::error::CatalogueError;
use super::table::{Cell, CellRef, ColumnMeta, RawRow, RawTable};
use super::vet::{
    BlockOutcomes, CatalogueObject, CatalogueTally, ObjectSink, QuarantinedRow, RowVetter,
};

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

/// Where the parser sends the header and each data row.
trait RowSink {
    /// The columns of the header line.
    fn header(&mut self, columns: Vec<ColumnMeta>) -> Result<(), CatalogueError>;
    /// One data row (cells padded or cut to the header's width), with the reader's reason when
    /// it could only partly parse it.
    fn row(&mut self, row_number: usize, cells: &[CellRef<'_>], malformed: Option<&str>);
}

/// Collects rows into a [`RawTable`].
#[derive(Default)]
struct TableSink {
    table: RawTable,
}

impl RowSink for TableSink {
    fn header(&mut self, columns: Vec<ColumnMeta>) -> Result<(), CatalogueError> {
        self.table.columns = columns;
        Ok(())
    }

    fn row(&mut self, row_number: usize, cells: &[CellRef<'_>], malformed: Option<&str>) {
        if let Some(why) = malformed {
            self.table.malformed.push((row_number, why.to_string()));
        }
        self.table.rows.push(RawRow {
            row_number,
            cells: cells
                .iter()
                .map(|c| match *c {
                    CellRef::Missing => Cell::Missing,
                    CellRef::Number(v) => Cell::Number(v),
                    CellRef::Text(t) => Cell::Text(t.to_string()),
                })
                .collect(),
        });
    }
}

/// Reads a CSV file into a [`RawTable`].
pub fn read(path: &Path) -> Result<RawTable, CatalogueError> {
    let mut sink = TableSink::default();
    parse_from(path, open(path)?, &mut sink)?;
    Ok(sink.table)
}

/// Reads and vets a CSV file in one pass, without building a table of cells: memory holds the
/// accepted objects, the quarantined rows and the ids, not the file. Gives exactly what
/// [`read`] followed by [`vet_table`](super::vet::vet_table) gives; the rows are vetted in
/// parallel blocks ([`vet_blocks`]). With a `sink`, the accepted objects go there block by
/// block instead (see [`RowVetter::with_sink`]).
pub fn vet_streaming(
    path: &Path,
    label: &str,
    map: Option<&ColumnMap>,
    mut sink: Option<&mut dyn ObjectSink>,
) -> Result<(Vec<CatalogueObject>, Vec<QuarantinedRow>, CatalogueTally), CatalogueError> {
    let len = std::fs::metadata(path).map(|m| m.len()).unwrap_or(0);
    let bar = crate::progress::bar(len, "reading catalogue", true);
    let mut input = open(path)?;
    let (columns, consumed) = read_header(path, &mut input)?;
    let mut vetter = RowVetter::new(label, &columns, map)?.streaming(sink.is_some());
    vet_blocks(
        path,
        &mut input,
        &mut vetter,
        super::vet::reborrow(&mut sink),
        columns.len(),
        (consumed, len),
        &bar,
    )?;
    bar.finish_and_clear();
    vetter.finish_into(sink)
}

fn open(path: &Path) -> Result<std::io::BufReader<std::fs::File>, CatalogueError> {
    let file = std::fs::File::open(path).map_err(|e| CatalogueError::Unreadable {
        path: path.to_path_buf(),
        reason: e.to_string(),
    })?;
    Ok(std::io::BufReader::with_capacity(1 << 20, file))
}

/// Parses CSV bytes held in memory (tests).
#[cfg(test)]
fn parse(path: &Path, bytes: &[u8]) -> Result<RawTable, CatalogueError> {
    let mut sink = TableSink::default();
    parse_from(path, bytes, &mut sink)?;
    Ok(sink.table)
}

/// Splits one physical line into fields (RFC 4180 quoting within the line: a field that starts
/// with `"` runs to its closing `"`, with `""` for a quote inside). `None` when a quote is
/// unbalanced or stray (a quote inside an unquoted field, or text after a closing quote).
fn split_line(line: &[u8]) -> Option<Vec<Vec<u8>>> {
    let mut data = Vec::new();
    let mut ends = Vec::new();
    if !split_into(line, &mut data, &mut ends) {
        return None;
    }
    let mut start = 0;
    Some(
        ends.iter()
            .map(|&e| {
                let f = data[start..e].to_vec();
                start = e;
                f
            })
            .collect(),
    )
}

/// [`split_line`] into reused buffers: the fields' bytes (quotes resolved) one after another in
/// `data`, the end of each in `ends`. `false` when a quote is unbalanced or stray.
fn split_into(line: &[u8], data: &mut Vec<u8>, ends: &mut Vec<usize>) -> bool {
    data.clear();
    ends.clear();
    let mut i = 0;
    loop {
        if line.get(i) == Some(&b'"') {
            i += 1;
            loop {
                match line.get(i) {
                    None => return false,
                    Some(b'"') if line.get(i + 1) == Some(&b'"') => {
                        data.push(b'"');
                        i += 2;
                    }
                    Some(b'"') => {
                        i += 1;
                        break;
                    }
                    Some(&c) => {
                        data.push(c);
                        i += 1;
                    }
                }
            }
            match line.get(i) {
                None | Some(b',') => {}
                Some(_) => return false,
            }
        } else {
            let rest = &line[i.min(line.len())..];
            let n = rest
                .iter()
                .position(|&c| c == b',' || c == b'"')
                .unwrap_or(rest.len());
            if rest.get(n) == Some(&b'"') {
                return false;
            }
            data.extend_from_slice(&rest[..n]);
            i += n;
        }
        ends.push(data.len());
        if i >= line.len() {
            return true;
        }
        i += 1; // the comma
    }
}

/// The first `ncols` fields of a row split by [`split_into`].
fn fields<'b>(data: &'b [u8], ends: &'b [usize], ncols: usize) -> impl Iterator<Item = &'b [u8]> {
    let mut start = 0;
    ends.iter().take(ncols).map(move |&e| {
        let f = &data[start..e];
        start = e;
        f
    })
}

/// A text cell, or missing when empty.
fn text_cell(t: &str) -> CellRef<'_> {
    if t.is_empty() {
        CellRef::Missing
    } else {
        CellRef::Text(t)
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

/// Reads the header line (after comment and blank lines, a UTF-8 BOM removed): its columns and
/// the bytes consumed up to its end.
fn read_header(
    path: &Path,
    input: &mut impl BufRead,
) -> Result<(Vec<ColumnMeta>, u64), CatalogueError> {
    let invalid = |reason: String| CatalogueError::Invalid {
        path: path.to_path_buf(),
        format: "csv",
        reason,
    };
    // Skip comment and blank lines before the header.
    let mut first = true;
    let mut consumed: u64 = 0;
    let mut header_line = Vec::new();
    loop {
        header_line.clear();
        let n = input
            .read_until(b'\n', &mut header_line)
            .map_err(|e| unreadable(path, e))?;
        consumed += n as u64;
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
    Ok((columns, consumed))
}

fn unreadable(path: &Path, e: std::io::Error) -> CatalogueError {
    CatalogueError::Unreadable {
        path: path.to_path_buf(),
        reason: e.to_string(),
    }
}

/// Reused buffers for splitting rows.
struct Splitter<'s> {
    ncols: usize,
    data: Vec<u8>,
    ends: Vec<usize>,
    missing: Vec<CellRef<'s>>,
}

impl Splitter<'_> {
    fn new(ncols: usize) -> Self {
        Self {
            ncols,
            data: Vec::new(),
            ends: Vec::new(),
            missing: vec![CellRef::Missing; ncols],
        }
    }

    /// Splits one non-empty line (line end removed) and hands its cells, padded or cut to the
    /// header's width, to `f` with the reader's reason when it could only partly parse it.
    fn row(&mut self, line: &[u8], f: impl FnOnce(&[CellRef<'_>], Option<&str>)) {
        let ncols = self.ncols;
        if !split_into(line, &mut self.data, &mut self.ends) {
            f(
                &self.missing,
                Some("unbalanced or stray quote (the row is skipped; reading resumes at the next line)"),
            );
            return;
        }
        let (data, ends) = (&self.data, &self.ends);
        let count_problem =
            (ends.len() != ncols).then(|| format!("expected {ncols} fields, found {}", ends.len()));
        // One small vector per row: the cells borrow this row's buffer.
        let mut cells: Vec<CellRef<'_>> = Vec::with_capacity(ncols);
        let mut utf8 = true;
        for field in fields(data, ends, ncols) {
            match std::str::from_utf8(field) {
                Ok(t) => cells.push(text_cell(t)),
                Err(_) => {
                    utf8 = false;
                    break;
                }
            }
        }
        if utf8 {
            cells.resize(ncols, CellRef::Missing);
            f(&cells, count_problem.as_deref());
        } else {
            // Rare: the text is kept as read, lossily, and the row flagged.
            let owned: Vec<String> = fields(data, ends, ncols)
                .map(|field| String::from_utf8_lossy(field).into_owned())
                .collect();
            let mut lossy: Vec<CellRef<'_>> = owned.iter().map(|t| text_cell(t)).collect();
            lossy.resize(ncols, CellRef::Missing);
            let problem = count_problem.as_deref().unwrap_or("not valid UTF-8");
            f(&lossy, Some(problem));
        }
    }
}

/// Parses CSV from a buffered reader, one physical line per row: a row whose quotes do not
/// balance is quarantined with its row number and reading resumes at the next line, so one
/// stray quote never swallows the rest of the file (quoted fields cannot span lines).
fn parse_from(
    path: &Path,
    mut input: impl BufRead,
    sink: &mut dyn RowSink,
) -> Result<(), CatalogueError> {
    let (columns, _) = read_header(path, &mut input)?;
    let mut splitter = Splitter::new(columns.len());
    sink.header(columns)?;
    let mut line = Vec::new();
    let mut row_number: usize = 0;
    loop {
        line.clear();
        let n = input
            .read_until(b'\n', &mut line)
            .map_err(|e| unreadable(path, e))?;
        if n == 0 {
            break;
        }
        trim_line_end(&mut line);
        if line.is_empty() {
            continue;
        }
        row_number += 1;
        splitter.row(&line, |cells, malformed| {
            sink.row(row_number, cells, malformed)
        });
    }
    Ok(())
}

/// Bytes of a block of whole lines vetted as one task by [`vet_blocks`] (a line longer than
/// this makes its block longer). Small in tests, so that arbitrary inputs cross blocks.
#[cfg(not(test))]
const BLOCK_BYTES: usize = 256 * 1024;
#[cfg(test)]
const BLOCK_BYTES: usize = 16;

/// Each line after the header, split at `\n` with the line end (`\n` or `\r\n`) removed,
/// as [`parse_from`] reads them; `None` for a line that is empty once trimmed (not a row).
fn lines(block: &[u8]) -> impl Iterator<Item = Option<&[u8]>> {
    block.split_inclusive(|&b| b == b'\n').map(|line| {
        let line = match line.strip_suffix(b"\n") {
            Some(l) => l.strip_suffix(b"\r").unwrap_or(l),
            None => line,
        };
        (!line.is_empty()).then_some(line)
    })
}

/// The data rows after the header, vetted in parallel blocks of whole lines: each physical line
/// is one row (quoted fields cannot span lines), so a block boundary after a `\n` is always a
/// row boundary. The rows of a few blocks go through [`RowVetter::vet_one`] in parallel, each
/// block numbering its rows from the count of the blocks before it; their outcomes then reach
/// [`RowVetter::accept`] (the ids' check) in file order, so the result is the one-row-at-a-time
/// result, row numbers, duplicates and lookalikes included. `(consumed, len)`: the bytes read
/// before the first row and the file's length; after each few blocks the accepted objects go
/// to `sink`, if any.
fn vet_blocks(
    path: &Path,
    input: &mut impl std::io::Read,
    vetter: &mut RowVetter<'_>,
    mut sink: Option<&mut dyn ObjectSink>,
    ncols: usize,
    (mut consumed, len): (u64, u64),
    bar: &indicatif::ProgressBar,
) -> Result<(), CatalogueError> {
    use rayon::prelude::*;
    let batch = 2 * rayon::current_num_threads().max(1);
    let mut rows_before: usize = 0;
    let mut carry: Vec<u8> = Vec::new();
    let mut eof = false;
    let mut first_row_seen = false;
    // Each block's outcomes, kept from round to round (their capacity is reused): `outcomes`
    // is being filled, `ready` (its first `ready_blocks`) waits for the ids' check.
    let mut outcomes: Vec<BlockOutcomes> = Vec::new();
    let mut ready: Vec<BlockOutcomes> = Vec::new();
    let mut ready_blocks = 0;
    let checker = vetter.checker();
    while !eof {
        // A few blocks of whole lines, each with the number of rows before it.
        let mut blocks: Vec<(usize, Vec<u8>)> = Vec::with_capacity(batch);
        while blocks.len() < batch && !eof {
            let mut block = std::mem::take(&mut carry);
            let mut filled = block.len();
            block.resize(filled.max(BLOCK_BYTES), 0);
            loop {
                if filled == block.len() {
                    // A line longer than the block so far: room for more of it.
                    if block[..filled].contains(&b'\n') {
                        break;
                    }
                    block.resize(block.len() * 2, 0);
                }
                let n = loop {
                    match input.read(&mut block[filled..]) {
                        Ok(n) => break n,
                        Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
                        Err(e) => return Err(unreadable(path, e)),
                    }
                };
                if n == 0 {
                    eof = true;
                    break;
                }
                filled += n;
            }
            block.truncate(filled);
            if !eof {
                // Whole lines only; the rest starts the next block.
                match block.iter().rposition(|&b| b == b'\n') {
                    Some(end) => carry = block.split_off(end + 1),
                    None => {
                        // Not reached (the block was filled until it held a line end);
                        // kept whole for the next round rather than cut.
                        carry = block;
                        continue;
                    }
                }
            }
            consumed += block.len() as u64;
            let rows = lines(&block).flatten().count();
            if !first_row_seen && rows > 0 {
                first_row_seen = true;
                // The id table sized once from the first row, as the line-by-line reader does.
                if let Some(first) = block
                    .split_inclusive(|&b| b == b'\n')
                    .find(|l| lines(l).next().flatten().is_some())
                {
                    let rest = len.saturating_sub(consumed - block.len() as u64);
                    let rows = (rest / (first.len() as u64).max(16) + 1).min(MAX_RESERVED_ROWS);
                    vetter.reserve_ids(usize::try_from(rows).unwrap_or(0));
                }
            }
            blocks.push((rows_before, block));
            rows_before += rows;
        }
        if outcomes.len() < blocks.len() {
            outcomes.resize_with(blocks.len(), BlockOutcomes::default);
        }
        // The ids of the previous round's rows are checked (and its objects handed over)
        // while this round's rows are vetted: the ids' check is serial, and the other core
        // would otherwise wait for it.
        let (checking, vetting) = (&mut ready[..ready_blocks], &mut outcomes[..]);
        let (vetter_ids, sink_now) = (&mut *vetter, &mut sink);
        rayon::join(
            || {
                for out in checking {
                    vetter_ids.accept_block(out, super::vet::reborrow(sink_now));
                }
            },
            || {
                blocks
                    .par_iter()
                    .zip(vetting.par_iter_mut())
                    .for_each(|((before, block), out)| {
                        let mut splitter = Splitter::new(ncols);
                        for (row_number, line) in (*before + 1..).zip(lines(block).flatten()) {
                            splitter.row(line, |cells, malformed| {
                                checker.vet_into(out, row_number, cells, malformed)
                            });
                        }
                    })
            },
        );
        std::mem::swap(&mut ready, &mut outcomes);
        ready_blocks = blocks.len();
        bar.set_position(consumed);
    }
    for out in &mut ready[..ready_blocks] {
        vetter.accept_block(out, super::vet::reborrow(&mut sink));
    }
    Ok(())
}

/// At most this many rows' room is reserved in the id table from the first row's length
/// (at most ~120 MB, whatever the file says).
const MAX_RESERVED_ROWS: u64 = 1 << 21;

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
        #![proptest_config(proptest::prelude::ProptestConfig::with_cases(256))]
        /// Vetting while reading gives what reading the table and then vetting it gives, on
        /// arbitrary bodies under a valid header: accepted objects, quarantined rows (reasons,
        /// order) and the tally (the two paths must not be told apart). In tests the streaming
        /// path's blocks are 16 bytes, so rows, long lines and line ends cross block edges.
        #[test]
        fn streaming_vet_equals_table_vet(body in proptest::collection::vec(
            proptest::sample::select(vec![
                "A", "a", "B", "\u{200b}", "e\u{301}", "\u{e9}", ",", "\"", "\n", " ", "0.05",
                "0.6", "nan", "x", "hburning", "brown_dwarf", "white_dwarf", "\u{ff}", "1e9",
                "\r\n", "\r", "A,hburning,0.3,0.01\n", "0123456789012345678901234567890123456789",
            ]), 0..160)) {
            let text = format!("id,class,mass,mass_err\n{}", body.concat());
            let dir = tempfile::tempdir().unwrap();
            let path = dir.path().join("s.csv");
            std::fs::write(&path, &text).unwrap();
            let table = read(&path).unwrap();
            let expected = super::super::vet::vet_table("s.csv", &table, None).unwrap();
            let got = vet_streaming(&path, "s.csv", None, None).unwrap();
            proptest::prop_assert_eq!(got, expected);
        }
    }

    #[test]
    fn a_lookalike_after_an_accepted_row_quarantines_both() {
        // The single pass accepts the first spelling before it sees the second (issue 13's
        // lookalike rule: both rows are quarantined, in row order).
        let text = "id,class,mass,mass_err\nGl 1,hburning,0.3,0.01\nX,hburning,0.3,0.01\nGl\u{200b} 1,hburning,0.3,0.01\nGl 1,hburning,0.3,0.01\n";
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("l.csv");
        std::fs::write(&path, text).unwrap();
        let (objects, q, tally) = vet_streaming(&path, "l.csv", None, None).unwrap();
        assert_eq!(objects.len(), 1);
        assert_eq!(&*objects[0].id, "X");
        let rows: Vec<(usize, &str)> = q.iter().map(|q| (q.row, q.reason.as_str())).collect();
        let why = super::super::vet::reason::LOOKALIKE_ID;
        assert_eq!(rows, vec![(1, why), (3, why), (4, why)]);
        assert_eq!(
            (tally.rows_in, tally.rows_accepted, tally.rows_quarantined),
            (4, 1, 3)
        );
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
