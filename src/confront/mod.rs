//! Confrontation of vetted objects with the theory's bounds over a (Υ, τ) grid.

pub mod calibrated;
pub mod drivers;
pub mod engine;
pub mod mass_terms;
pub mod nuisance;
pub mod prob;
pub mod reduce;
pub mod regions;
