//! The pipeline: vet → predict → confront → report in one call, shared by `confront` and the
//! nightly `run`, the theory-only `predict`, and what unattended runs need (config, theory
//! cache, run history, lock, shards). It only wires the public APIs of the stages together.

pub mod bounds_csv;
pub mod cache;
pub mod config;
pub mod confront;
pub mod defaults;
pub mod error;
pub mod history;
pub mod lock;
pub mod names;
pub mod nightly;
mod outputs;
pub mod predict;
mod report_figures;
mod report_input;
pub mod settings;
pub mod surface;
pub mod vet_stream;
