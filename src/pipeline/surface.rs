//! The theory seen as the comparator needs it: a finished [`TheoryGrid`] as a
//! [`BoundSurface`], and one theory point as a [`ReferencePoint`]. Adapters only; the grid and
//! the comparator each stay ignorant of the other.
//!
//! ```no_run
//! use dwarfbound::confront::engine::BoundSurface;
//! use dwarfbound::pipeline::surface::GridSurface;
//! use dwarfbound::theory::grid::{compute, GridOptions};
//! use dwarfbound::theory::point::TheorySettings;
//! use dwarfbound::theory::Axis;
//! let axis = Axis { start: -0.1, stop: 0.1, count: 3 };
//! let one = Axis { start: 0.0, stop: 0.0, count: 1 };
//! let grid = compute(axis, one, &TheorySettings::default(), &GridOptions::default()).unwrap();
//! let surface = GridSurface::new(&grid);
//! assert_eq!(surface.upsilon().len(), 3);
//! ```

use crate::confront::engine::BoundSurface;
use crate::confront::tension::ReferencePoint;
use crate::theory::grid::{self, TheoryGrid};
use crate::theory::point::{Outcome, PointBounds};

/// The theory grid seen as the comparator's [`BoundSurface`] (same index order: τ outer, Υ
/// inner).
pub struct GridSurface<'a> {
    grid: &'a TheoryGrid,
    upsilon: Vec<f64>,
    tau: Vec<f64>,
}

impl<'a> GridSurface<'a> {
    /// Wraps a complete grid.
    pub fn new(grid: &'a TheoryGrid) -> Self {
        let upsilon = (0..grid.upsilon.count)
            .map(|i| grid::grid_value(&grid.upsilon, i))
            .collect();
        let tau = (0..grid.tau.count)
            .map(|i| grid::grid_value(&grid.tau, i))
            .collect();
        Self { grid, upsilon, tau }
    }
}

impl BoundSurface for GridSurface<'_> {
    fn upsilon(&self) -> &[f64] {
        &self.upsilon
    }
    fn tau(&self) -> &[f64] {
        &self.tau
    }
    fn mmhb_msun(&self, i: usize) -> Option<f64> {
        self.grid.point(i)?.mmhb.ok().map(|m| m.value_msun)
    }
    fn chandrasekhar_mu2_msun(&self, i: usize) -> Option<f64> {
        self.grid.point(i)?.chandrasekhar.ok().map(|c| c.value_msun)
    }
    fn wd_radii_rsun(&self, i: usize, queries: &[(f64, f64)]) -> Vec<Option<f64>> {
        match self.grid.wd_table(i) {
            Some(Outcome::Ok(t)) => queries
                .iter()
                .map(|&(m, mu_e)| t.radius_rsun(m, mu_e).ok())
                .collect(),
            _ => vec![None; queries.len()],
        }
    }
}

/// The class bounds of one theory point (the MMHB and Chandrasekhar mass used against data),
/// without its mass–radius relation: the caller adds one where a verdict needs it.
pub fn class_bounds<'a>(p: &PointBounds) -> ReferencePoint<'a> {
    ReferencePoint {
        mmhb_msun: p.mmhb.ok().map(|m| m.value_msun),
        chandrasekhar_mu2_msun: p.chandrasekhar.ok().map(|c| c.value_msun),
        wd_radius_rsun: None,
    }
}
