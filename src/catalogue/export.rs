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
pub fn write_accepted(
    out: &mut impl std::io::Write,
    objects: &[CatalogueObject],
) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(ACCEPTED_COLUMNS)?;
    // One reused buffer for every number: no string is allocated per cell.
    let mut num = String::new();
    let mut row = String::new();
    let mut number = |w: &mut csv::Writer<_>, x: Option<f64>| -> Result<(), csv::Error> {
        num.clear();
        push_f64(&mut num, x);
        w.write_field(&num)
    };
    for o in objects {
        w.write_field(&o.id)?;
        w.write_field(o.class.label())?;
        number(&mut w, Some(o.mass_msun))?;
        number(&mut w, o.mass_err_lo_msun)?;
        number(&mut w, o.mass_err_hi_msun)?;
        w.write_field(o.mass_limit.label())?;
        for x in [
            o.radius_rsun,
            o.radius_err_rsun,
            o.age_gyr,
            o.age_err_gyr,
            o.rotation_period_h,
            o.rotation_period_err_h,
            o.mu_e,
            o.teff_k,
            o.teff_err_k,
        ] {
            number(&mut w, x)?;
        }
        w.write_field(o.core.map_or("", |c| c.label()))?;
        w.write_field(o.envelope.map_or("", |e| e.label()))?;
        number(&mut w, o.radius_model_rsun)?;
        w.write_field(o.mass_method.label())?;
        w.write_field(o.reference.as_deref().unwrap_or_default())?;
        w.write_field(o.source_file.as_bytes())?;
        w.write_field(itoa(o.source_row, &mut row))?;
        w.write_record(None::<&[u8]>)?;
    }
    w.flush()?;
    Ok(())
}

/// `n` in decimal, written into `buf` (reused).
fn itoa(n: usize, buf: &mut String) -> &str {
    use std::fmt::Write;
    buf.clear();
    // Writing into a String cannot fail.
    let _ = write!(buf, "{n}");
    buf
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
