//! Confrontation of vetted objects with the theory's bounds over a (ϒ, τ) grid.
//!
//! Every grid vector in this module (and in the whole program) is indexed τ outer, ϒ inner:
//! `j_tau · n_upsilon + i_upsilon` (see [`engine::BoundSurface`]).

pub mod calibrated;
pub mod drivers;
pub mod engine;
pub mod mass_terms;
pub mod nuisance;
pub mod prob;
pub mod profile;
pub mod reduce;
pub mod regions;
pub mod slice;
pub mod spin;
pub mod tension;
pub mod wd_radius;
