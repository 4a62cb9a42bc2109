//! dwarfbound: confront catalogues of very-low-mass stars, brown dwarfs and white dwarfs with
//! the mass limits predicted by stellar structure in scalar-tensor gravity with broken Vainshtein
//! screening (parameter ϒ) and pressure anisotropy (parameter τ).
//!
//! The modules follow the pipeline:
//!
//! * [`catalogue`] reads and vets catalogues (CSV, Parquet, FITS, VOTable, ECSV) into canonical
//!   objects, quarantining bad rows with a reason;
//! * [`theory`] solves the modified stellar-structure equations and evaluates the bounds over a
//!   (ϒ, τ) grid; it knows nothing of catalogues;
//! * [`confront`] confronts every object with every grid point (likelihoods, allowed regions,
//!   tensions, drivers);
//! * [`report`] writes tables, maps and the human-readable report; it computes no physics;
//! * [`pipeline`] wires the stages together for `confront`, the nightly `run` (config, theory
//!   cache, run history, lock, shards) and `merge`;
//! * [`cli`] is the thin command-line shell on top.
//!
//! [`constants`] holds every physical constant with its standard; [`output`] writes files
//! atomically; [`progress`] draws the progress bars; [`heap`] gives freed memory back between
//! the stages of a large run.

// One `unsafe` call in the whole crate (`heap::release_freed`), allowed where it is made.
#![deny(unsafe_code)]

pub mod catalogue;
pub mod cli;
pub mod confront;
pub mod constants;
pub mod heap;
pub mod output;
pub mod pipeline;
pub mod progress;
pub mod report;
pub mod theory;
