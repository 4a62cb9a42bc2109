//! Catalogue reading and vetting: files in, canonical objects and quarantined rows out.
//!
//! Every format is read into a [`table::RawTable`] of raw cells; the column map renames columns
//! to the canonical names of `../shared/CONVENTIONS.md`; vetting converts units and validates
//! every row. A row is either accepted or quarantined with a reason, never dropped:
//! rows in = rows accepted + rows quarantined.

pub mod error;
pub mod table;

mod read_csv;
mod read_ecsv;
mod read_fits;
mod read_parquet;
mod read_votable;

pub use error::CatalogueError;
