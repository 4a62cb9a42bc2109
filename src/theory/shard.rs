//! A shard of a grid: one contiguous slice of its points, so that a large grid can be computed
//! by several independent jobs and merged (see `TheoryGrid::merge` in [`grid`](super::grid)).
//!
//! One job: name shard `I/N` (1-based), parse it from text, and say which row-major point
//! indices it owns: ⌊(I−1)T/N⌋ .. ⌊IT/N⌋ of the T points, so that the N shards tile the grid.
//!
//! ```
//! use dwarfbound::theory::shard::Shard;
//!
//! let s = Shard::parse("2/4").unwrap();
//! assert_eq!(s.range(10), 2..5);
//! assert_eq!(s.to_string(), "2/4");
//! ```

use std::ops::Range;

use serde::{Deserialize, Serialize};

/// A shard specification that cannot be used.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("invalid shard: {0}")]
pub struct ShardError(pub String);

/// Shard `index` of `count` (1-based), e.g. `2/4`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub struct Shard {
    /// Which shard, 1 ≤ index ≤ count.
    pub index: usize,
    /// How many shards.
    pub count: usize,
}

impl Shard {
    /// Parses `I/N` with 1 ≤ I ≤ N.
    pub fn parse(text: &str) -> Result<Shard, ShardError> {
        let bad = || ShardError(format!("`{text}` is not I/N with 1 ≤ I ≤ N (e.g. 2/4)"));
        let (i, n) = text.split_once('/').ok_or_else(bad)?;
        let index: usize = i.trim().parse().map_err(|_| bad())?;
        let count: usize = n.trim().parse().map_err(|_| bad())?;
        if index == 0 || count == 0 || index > count {
            return Err(bad());
        }
        Ok(Shard { index, count })
    }

    /// The contiguous row-major index range this shard owns out of `total` points.
    pub fn range(&self, total: usize) -> Range<usize> {
        let lo = ((self.index - 1) as u128 * total as u128 / self.count as u128) as usize;
        let hi = (self.index as u128 * total as u128 / self.count as u128) as usize;
        lo..hi
    }
}

impl std::fmt::Display for Shard {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}/{}", self.index, self.count)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shard_ranges_tile() {
        let total = 103;
        let mut next = 0;
        for i in 1..=7 {
            let r = Shard { index: i, count: 7 }.range(total);
            assert_eq!(r.start, next);
            next = r.end;
        }
        assert_eq!(next, total);
        assert!(Shard::parse("0/3").is_err());
        assert!(Shard::parse("4/3").is_err());
        assert_eq!(Shard::parse("2/3").unwrap(), Shard { index: 2, count: 3 });
    }
}
