//! The theory: modified stellar structure and the bounds it predicts over a (Υ, τ) grid.
//!
//! Specified in `../shared/theory/structure.md` and `../shared/theory/bounds.md`. This module
//! knows nothing of catalogues: it maps parameters to bounds (minimum hydrogen-burning mass,
//! Chandrasekhar mass, white-dwarf mass–radius relation, break-up period, Schönberg–Chandrasekhar
//! fraction), with typed errors where no star exists.

pub mod error;
pub mod grid;
pub mod hot_wd;
pub mod interpolate;
pub mod lane_emden;
pub mod mmhb;
pub mod ode;
pub mod outcome;
pub mod point;
mod roots;
pub mod rotation;
pub mod schonberg;
pub mod settings;
pub mod shard;
pub mod slow_rotation;
pub mod wd_grid;
pub mod white_dwarf;

use serde::{Deserialize, Serialize};

/// The pressure-anisotropy ansatz that τ parametrises (`theory/structure.md` §2).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize, clap::ValueEnum)]
#[serde(rename_all = "kebab-case")]
pub enum Anisotropy {
    /// Isotropic pressure; τ must be 0.
    None,
    /// σ = (2π/3) τ G ρ² r², quadratic in density (Bowers & Liang 1974 type), ansatz (a).
    DensitySquared,
    /// σ = −τ/(2(1−τ)) r dP/dr, proportional to the pressure gradient (Cosenza et al. 1981 type),
    /// ansatz (b): an exact rescaling G → (1−τ)G inside matter.
    Gradient,
}

impl Anisotropy {
    /// The name used on the command line and in every output.
    pub fn name(self) -> &'static str {
        match self {
            Anisotropy::None => "none",
            Anisotropy::DensitySquared => "density-squared",
            Anisotropy::Gradient => "gradient",
        }
    }
}

/// One grid axis: `count` equally spaced values from `start` to `stop`, both ends included.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Axis {
    /// First value.
    pub start: f64,
    /// Last value (equal to `start` when `count` is 1).
    pub stop: f64,
    /// Number of values, at least 1.
    pub count: usize,
}

impl Axis {
    /// The i-th value, computed so that both ends are exact.
    pub fn value(&self, i: usize) -> f64 {
        if self.count <= 1 {
            return self.start;
        }
        let t = i as f64 / (self.count - 1) as f64;
        if i + 1 == self.count {
            self.stop
        } else {
            // Round to 12 significant digits so that `-0.3:0.6:46` gives -0.04, not
            // -0.040000000000000036: grid values are meant as the decimals a user would type.
            let v = self.start + t * (self.stop - self.start);
            format!("{v:.11e}").parse().unwrap_or(v)
        }
    }

    /// All values in order.
    pub fn values(&self) -> Vec<f64> {
        (0..self.count).map(|i| self.value(i)).collect()
    }
}

/// The i-th value of a grid axis: [`Axis::value`], except that a value within a few rounding
/// errors of zero is exactly 0 (so that `-0.9:0.3:5` has the standard-gravity point Υ = 0, not
/// −1.1e-16, and a τ = 0 row is recognised). Every point of a grid carries this value.
pub fn grid_value(axis: &Axis, i: usize) -> f64 {
    let v = axis.value(i);
    let span = axis.start.abs().max(axis.stop.abs());
    if v.abs() <= 8.0 * f64::EPSILON * span {
        0.0
    } else {
        v
    }
}
