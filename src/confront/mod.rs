//! Confrontation of vetted objects with the theory's bounds over a (Υ, τ) grid.

pub mod drivers;
pub mod engine;
pub mod prob;
pub mod reduce;
pub mod regions;
pub mod wd_radius;
