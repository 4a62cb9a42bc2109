//! Confrontation of vetted objects with the theory's bounds over a (Υ, τ) grid.
