//! The vetting outputs as CSV bytes: `accepted.csv` and `quarantine.csv`.
//!
//! `accepted.csv` holds the canonical columns in their default units (M☉, R☉, Gyr, h), always
//! with split mass errors (a symmetric error is written on both sides), plus `source_file` and
//! `source_row`; it can be vetted again and gives the same objects. Floats are written with
//! [`crate::output::fmt_f64`] so they round-trip; missing values are empty, never NaN.
//!
//! ```
//! use dwarfbound::catalogue::export::{quarantine_csv, QUARANTINE_COLUMNS};
//! let bytes = quarantine_csv(&[]).unwrap();
//! assert_eq!(String::from_utf8(bytes).unwrap().trim_end(), QUARANTINE_COLUMNS.join(","));
//! ```

use super::vet::{CatalogueObject, QuarantinedRow};
use crate::output::push_f64;

/// Header of `accepted.csv`.
pub const ACCEPTED_COLUMNS: [&str; 22] = [
    "id",
    "class",
    "mass",
    "mass_err_lo",
    "mass_err_hi",
    "mass_limit",
    "radius",
    "radius_err",
    "age",
    "age_err",
    "rotation_period",
    "rotation_period_err",
    "mu_e",
    "teff",
    "teff_err",
    "core",
    "envelope",
    "radius_model",
    "mass_method",
    "ref",
    "source_file",
    "source_row",
];

/// Header of `quarantine.csv` (the README).
pub const QUARANTINE_COLUMNS: [&str; 5] = ["file", "row", "id", "column", "reason"];

/// `accepted.csv` as bytes.
pub fn accepted_csv(objects: &[CatalogueObject]) -> Result<Vec<u8>, csv::Error> {
    let mut bytes = Vec::new();
    write_accepted(&mut bytes, objects)?;
    Ok(bytes)
}

/// Writes `accepted.csv` row by row into `out` (a large catalogue's is never held in memory).
///
/// The rows are formatted by hand (the `csv` crate's writer checked and copied every cell
/// byte by byte, a sixth of `vet` on a million objects, perf), in blocks of
/// [`ROWS_PER_BLOCK`] objects formatted in parallel a few at a time and written in order: the
/// bytes do not depend on the threads, and memory holds a few blocks. The bytes are the
/// crate's (its default `QuoteStyle::Necessary`, see [`push_field`]); a test compares the two
/// on awkward text.
pub fn write_accepted(
    out: &mut impl std::io::Write,
    objects: &[CatalogueObject],
) -> Result<(), csv::Error> {
    let mut w = AcceptedWriter::new(out)?;
    w.write(objects)?;
    w.finish()?;
    Ok(())
}

/// `accepted.csv` written a batch of objects at a time, as they are vetted (`vet` holds no
/// more than a batch; see [`crate::catalogue::vet::ObjectSink`]). Each row depends on its
/// object alone, so the bytes are [`write_accepted`]'s however the objects are cut.
pub struct AcceptedWriter<W: std::io::Write> {
    out: W,
    /// One text buffer per block of a batch, kept from batch to batch: a fresh megabyte per
    /// block was mapped, faulted in and unmapped again every time (perf: page faults).
    buffers: Vec<Vec<u8>>,
}

impl<W: std::io::Write> AcceptedWriter<W> {
    /// Writes the header.
    pub fn new(mut out: W) -> Result<Self, csv::Error> {
        let mut header: Vec<u8> = Vec::new();
        for (i, h) in ACCEPTED_COLUMNS.iter().enumerate() {
            if i > 0 {
                header.push(b',');
            }
            push_field(&mut header, h.as_bytes());
        }
        header.push(b'\n');
        out.write_all(&header)?;
        Ok(Self {
            out,
            buffers: Vec::new(),
        })
    }

    /// Writes the rows of `objects`, formatted in parallel blocks.
    pub fn write(&mut self, objects: &[CatalogueObject]) -> Result<(), csv::Error> {
        use rayon::prelude::*;
        let batch = ROWS_PER_BLOCK * 2 * rayon::current_num_threads().max(1);
        for objects in objects.chunks(batch) {
            let blocks = objects.len().div_ceil(ROWS_PER_BLOCK);
            if self.buffers.len() < blocks {
                self.buffers.resize_with(blocks, Vec::new);
            }
            objects
                .par_chunks(ROWS_PER_BLOCK)
                .zip(self.buffers.par_iter_mut())
                .for_each(|(block, buf)| {
                    buf.clear();
                    buf.reserve(block.len() * 128);
                    push_rows(buf, block);
                });
            for b in &self.buffers[..blocks] {
                self.out.write_all(b)?;
            }
        }
        Ok(())
    }

    /// Flushes and returns the output.
    pub fn finish(mut self) -> Result<W, csv::Error> {
        self.out.flush()?;
        Ok(self.out)
    }
}

/// Objects per block of `accepted.csv` formatted at once (~0.8 MB of text).
const ROWS_PER_BLOCK: usize = 8192;

/// Appends the rows of `objects` to `buf`.
fn push_rows(buf: &mut Vec<u8>, objects: &[CatalogueObject]) {
    // One reused buffer for every number: no string is allocated per cell. It keeps the last
    // value's text, so a value written again (a symmetric error is written on both sides) is
    // copied, not formatted again: the text depends on the bits alone.
    let mut num = String::new();
    let mut last: Option<u64> = None;
    let mut number = |buf: &mut Vec<u8>, x: Option<f64>| {
        let bits = x.map(f64::to_bits);
        if bits != last {
            num.clear();
            push_f64(&mut num, x);
            last = bits;
        }
        // A formatted number holds digits, `-` and `.` only: never quoted.
        buf.extend_from_slice(num.as_bytes());
        buf.push(b',');
    };
    // Labels are fixed words without a delimiter or quote: never quoted.
    let label = |buf: &mut Vec<u8>, l: &str| {
        buf.extend_from_slice(l.as_bytes());
        buf.push(b',');
    };
    for o in objects {
        push_field(buf, o.id.as_bytes());
        buf.push(b',');
        label(buf, o.class.label());
        number(buf, Some(o.mass_msun));
        number(buf, o.mass_err_lo_msun.get());
        number(buf, o.mass_err_hi_msun.get());
        label(buf, o.mass_limit.label());
        for x in [
            o.radius_rsun(),
            o.radius_err_rsun(),
            o.age_gyr(),
            o.age_err_gyr(),
            o.rotation_period_h(),
            o.rotation_period_err_h(),
            o.mu_e(),
            o.teff_k(),
            o.teff_err_k(),
        ] {
            number(buf, x.get());
        }
        label(buf, o.core().map_or("", |c| c.label()));
        label(buf, o.envelope().map_or("", |e| e.label()));
        number(buf, o.radius_model_rsun().get());
        label(buf, o.mass_method.label());
        push_field(buf, o.reference().unwrap_or_default().as_bytes());
        buf.push(b',');
        push_field(buf, o.source_file.as_bytes());
        buf.push(b',');
        push_usize(buf, o.source_row as usize);
        buf.push(b'\n');
    }
}

/// Appends one CSV field as the `csv` crate's default writer does: quoted when it holds a
/// comma, a quote, `\r` or `\n` (its `QuoteStyle::Necessary` with `\n` records), a quote
/// inside doubled; otherwise as is. (The crate also quotes an empty field that is a record's
/// only field; `accepted.csv` has 22.)
fn push_field(buf: &mut Vec<u8>, field: &[u8]) {
    if !field
        .iter()
        .any(|&b| matches!(b, b',' | b'"' | b'\r' | b'\n'))
    {
        buf.extend_from_slice(field);
        return;
    }
    buf.push(b'"');
    for &b in field {
        if b == b'"' {
            buf.push(b'"');
        }
        buf.push(b);
    }
    buf.push(b'"');
}

/// `n` in decimal.
fn push_usize(buf: &mut Vec<u8>, mut n: usize) {
    let mut digits = [0u8; 20];
    let mut i = digits.len();
    loop {
        i -= 1;
        digits[i] = b'0' + (n % 10) as u8;
        n /= 10;
        if n == 0 {
            break;
        }
    }
    buf.extend_from_slice(&digits[i..]);
}

/// `quarantine.csv` as bytes.
pub fn quarantine_csv(rows: &[QuarantinedRow]) -> Result<Vec<u8>, csv::Error> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(QUARANTINE_COLUMNS)?;
    for q in rows {
        w.write_record([
            q.file.as_str(),
            &q.row.to_string(),
            q.id.as_deref().unwrap_or(""),
            &q.column,
            &q.reason,
        ])?;
    }
    w.into_inner().map_err(|e| e.into_error().into())
}

#[cfg(test)]
mod tests {
    use super::*;

    proptest::proptest! {
        /// The hand-made fields and numbers are the bytes the `csv` crate's default writer
        /// gives (the writer `accepted.csv` was written with before; the crate is the source).
        #[test]
        fn fields_as_the_csv_crate_writes_them(
            fields in proptest::collection::vec(proptest::collection::vec(
                proptest::sample::select(vec!["a", ",", "\"", "\r", "\n", " ", "é", "#", "", "'", "x\"\"y"]),
                0..6), 2..6),
            n in proptest::num::usize::ANY,
        ) {
            let fields: Vec<String> = fields.iter().map(|f| f.concat()).collect();
            let mut w = csv::Writer::from_writer(Vec::new());
            let n_text = n.to_string();
            for f in &fields {
                w.write_field(f).unwrap();
            }
            w.write_field(&n_text).unwrap();
            w.write_record(None::<&[u8]>).unwrap();
            let want = w.into_inner().unwrap();
            let mut got = Vec::new();
            for f in &fields {
                push_field(&mut got, f.as_bytes());
                got.push(b',');
            }
            push_usize(&mut got, n);
            got.push(b'\n');
            proptest::prop_assert_eq!(got, want);
        }
    }
}
