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
use crate::output::fmt_f64;

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
    let row = |o: &CatalogueObject| {
        [
            fmt_f64(Some(o.mass_msun)),
            fmt_f64(o.mass_err_lo_msun),
            fmt_f64(o.mass_err_hi_msun),
            fmt_f64(o.radius_rsun),
            fmt_f64(o.radius_err_rsun),
            fmt_f64(o.age_gyr),
            fmt_f64(o.age_err_gyr),
            fmt_f64(o.rotation_period_h),
            fmt_f64(o.rotation_period_err_h),
            fmt_f64(o.mu_e),
            fmt_f64(o.teff_k),
            fmt_f64(o.teff_err_k),
            fmt_f64(o.radius_model_rsun),
            o.source_row.to_string(),
        ]
    };
    for o in objects {
        let [mass, lo, hi, radius, radius_err, age, age_err, period, period_err, mu_e, teff, teff_err, radius_model, source_row] =
            row(o);
        w.write_record([
            o.id.as_str(),
            o.class.label(),
            &mass,
            &lo,
            &hi,
            o.mass_limit.label(),
            &radius,
            &radius_err,
            &age,
            &age_err,
            &period,
            &period_err,
            &mu_e,
            &teff,
            &teff_err,
            o.core.map_or("", |c| c.label()),
            o.envelope.map_or("", |e| e.label()),
            &radius_model,
            o.mass_method.label(),
            o.reference.as_deref().unwrap_or_default(),
            &o.source_file,
            &source_row,
        ])?;
    }
    w.flush()?;
    Ok(())
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
