//! Catalogue reading and vetting: files in, canonical objects and quarantined rows out.
//!
//! Every format is read into a [`table::RawTable`] of raw cells; the column map
//! ([`colmap::ColumnMap`]) renames columns to the canonical names of the README;
//! vetting ([`vet`]) converts units ([`units`]) and validates every row. A row is either accepted
//! or quarantined with a reason, never dropped: rows in = rows accepted + rows quarantined.
//! [`export`] writes `accepted.csv` and `quarantine.csv`, [`summary`] the printed summary.
//!
//! ```no_run
//! use dwarfbound::catalogue::{table::ReadOptions, vet::vet_files};
//! let vetted = vet_files(&["catalogs-demo/survey.csv".into()], None, &ReadOptions::default())?;
//! println!("{} objects accepted", vetted.objects.len());
//! # Ok::<(), dwarfbound::catalogue::CatalogueError>(())
//! ```

pub mod colmap;
pub mod error;
pub mod export;
pub mod guard;
pub mod opt_f64;
pub mod summary;
pub mod table;
pub mod units;
pub mod vet;

mod read_csv;
mod read_ecsv;
mod read_fits;
mod read_parquet;
mod read_votable;

pub use colmap::ColumnMap;
pub use error::CatalogueError;
pub use opt_f64::OptF64;
pub use vet::{
    vet_files, vet_table, CatalogueObject, CatalogueTally, CoreLabel, Details, EnvelopeLabel,
    MassLimit, MassMethod, ObjectClass, ObjectDetails, ObjectId, QuarantinedRow, SourceFile,
    Vetted,
};
