//! The theory: modified stellar structure and the bounds it predicts over a (ϒ, τ) grid.
//!
//! Specified in `docs/structure.md` and `docs/bounds.md`. This module
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
pub mod slow_rotation_table;
pub mod wd_grid;
pub mod white_dwarf;

use serde::{Deserialize, Serialize};
use std::str::FromStr;

/// The pressure-anisotropy ansatz that τ parametrises (`docs/structure.md` §2).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
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

/// A name that is not one of the anisotropy ansätze.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("`{0}` is not none, density-squared or gradient")]
pub struct ParseAnisotropyError(pub String);

impl FromStr for Anisotropy {
    type Err = ParseAnisotropyError;

    /// Parses the names of [`Anisotropy::name`], the only spellings the command line and the
    /// run config accept.
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s {
            "none" => Ok(Anisotropy::None),
            "density-squared" => Ok(Anisotropy::DensitySquared),
            "gradient" => Ok(Anisotropy::Gradient),
            other => Err(ParseAnisotropyError(other.to_string())),
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
/// errors of zero is exactly 0 (so that `-0.9:0.3:5` has the standard-gravity point ϒ = 0, not
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

/// What was wrong with an axis written as `start:stop:count` or a single value.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ParseAxisError {
    /// A value that does not parse as a number.
    #[error("`{0}` is not a number")]
    NotANumber(String),
    /// A value that parses but is infinite or NaN.
    #[error("`{0}` is not finite")]
    NotFinite(String),
    /// A count that is not a whole number.
    #[error("count `{0}` is not a whole number")]
    CountNotWhole(String),
    /// A count of zero.
    #[error("count must be at least 1")]
    ZeroCount,
    /// A grid whose ends are not in increasing order.
    #[error("start {start} must be below stop {stop}")]
    NotIncreasing {
        /// The first value given.
        start: f64,
        /// The last value given.
        stop: f64,
    },
    /// A one-point grid with two different ends.
    #[error("a one-point grid needs start = stop")]
    OnePointNeedsEqualEnds,
    /// Neither one value nor three fields.
    #[error("`{0}` is neither a value nor start:stop:count (e.g. -0.3:0.6:91)")]
    Shape(String),
}

impl FromStr for Axis {
    type Err = ParseAxisError;

    /// Parses `start:stop:count` (inclusive ends, start below stop) or a single value (a
    /// one-point axis): the syntax of the grid flags and of the run config's `[grid]`.
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let num = |t: &str| -> Result<f64, ParseAxisError> {
            let v: f64 = t
                .trim()
                .parse()
                .map_err(|_| ParseAxisError::NotANumber(t.to_string()))?;
            if v.is_finite() {
                Ok(v)
            } else {
                Err(ParseAxisError::NotFinite(t.to_string()))
            }
        };
        let parts: Vec<&str> = s.split(':').collect();
        match parts.as_slice() {
            [v] => {
                let v = num(v)?;
                Ok(Axis {
                    start: v,
                    stop: v,
                    count: 1,
                })
            }
            [a, b, n] => {
                let count: usize = n
                    .trim()
                    .parse()
                    .map_err(|_| ParseAxisError::CountNotWhole(n.to_string()))?;
                if count == 0 {
                    return Err(ParseAxisError::ZeroCount);
                }
                let (start, stop) = (num(a)?, num(b)?);
                if count > 1 && start >= stop {
                    return Err(ParseAxisError::NotIncreasing { start, stop });
                }
                if count == 1 && start != stop {
                    return Err(ParseAxisError::OnePointNeedsEqualEnds);
                }
                Ok(Axis { start, stop, count })
            }
            _ => Err(ParseAxisError::Shape(s.to_string())),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn axis_parses_grid_and_scalar() {
        // The grid-flag syntax of the README (common practice, no source).
        let a: Axis = "-0.3:0.6:91".parse().unwrap();
        assert_eq!((a.start, a.stop, a.count), (-0.3, 0.6, 91));
        let b: Axis = "0.1".parse().unwrap();
        assert_eq!((b.start, b.stop, b.count), (0.1, 0.1, 1));
        assert_eq!(
            "1:0:3".parse::<Axis>(),
            Err(ParseAxisError::NotIncreasing {
                start: 1.0,
                stop: 0.0
            })
        );
        assert!(matches!(
            "a:b:3".parse::<Axis>(),
            Err(ParseAxisError::NotANumber(_))
        ));
        assert!(matches!(
            "a:b:c".parse::<Axis>(),
            Err(ParseAxisError::CountNotWhole(_))
        ));
        assert_eq!("0:1:0".parse::<Axis>(), Err(ParseAxisError::ZeroCount));
        assert_eq!(
            "0:1".parse::<Axis>().unwrap_err().to_string(),
            "`0:1` is neither a value nor start:stop:count (e.g. -0.3:0.6:91)"
        );
    }

    #[test]
    fn anisotropy_parses_its_own_names() {
        // Every ansatz round-trips through the name the outputs print (common practice).
        for a in [
            Anisotropy::None,
            Anisotropy::DensitySquared,
            Anisotropy::Gradient,
        ] {
            assert_eq!(a.name().parse::<Anisotropy>(), Ok(a));
        }
        assert!("quadratic".parse::<Anisotropy>().is_err());
    }
}
