//! The first-order slow-rotation coefficients over (ϒ, τ, n), solved on a coarse lattice and
//! interpolated, so that every grid point and every polytropic index costs a lookup instead of
//! an ODE.
//!
//! One job: answer [`slow_rotation`] at any (ϒ, τ, n) of a grid's range for one ansatz, cheaply
//! and to a measured accuracy. The lattice has nodes every [`LATTICE_STEP`] (0.05) in ϒ and τ
//! (finer on a narrow axis, so that a cubic stencil fits; ϒ = τ = 0 always among them) and at
//! the indices [`INDEX_NODES`] (1.05 to 3 in steps of 0.15, n = 3/2 exactly among them). Each
//! index is one slab of the lattice, solved (one first-order ODE per node, `docs/rotation.md`
//! §1.2) the first time some lookup needs it; the surface values ξ₁, ω, ψ₀, m₀ and d ln R/dv
//! are interpolated with tensor-product cubic Lagrange stencils and the coefficients assembled
//! from them as the direct solve assembles them.
//!
//! Standard gravity anchors the table: at ϒ = τ = 0 it returns the direct solve at that index
//! (cached per index), and elsewhere each interpolated value is carried by its change from the
//! interpolated standard-gravity value at the same index, q(ϒ, τ, n) = q_direct(0, 0, n) +
//! [q_T(ϒ, τ, n) − q_T(0, 0, n)]. So a correction at standard gravity is exactly the direct one
//! and the table only carries how it moves with ϒ and τ (the anchoring of the white-dwarf radius
//! test, in a difference form). Where a stencil touches a lattice node without a model (beyond
//! the existence bound), or the point lies outside the lattice, the coefficients are solved
//! directly. The interpolation error, measured against direct solves at off-node points, is in
//! `docs/rotation.md` §3 and checked by `tests/theory_rotation.rs`.
//!
//! ```
//! use dwarfbound::theory::slow_rotation::slow_rotation;
//! use dwarfbound::theory::slow_rotation_table::SlowRotationTable;
//! use dwarfbound::theory::Anisotropy;
//!
//! let table = SlowRotationTable::new((-0.2, 0.4), (-0.2, 0.2), Anisotropy::DensitySquared);
//! // Standard gravity is the direct solve itself.
//! let at = table.at(0.0, 0.0, 1.5).unwrap();
//! let direct = slow_rotation(1.5, 0.0, 0.0, Anisotropy::None).unwrap();
//! assert_eq!(at.mass_coefficient, direct.mass_coefficient);
//! // Off the lattice, within the measured error (4e-4, docs/rotation.md §3) of a direct solve.
//! let at = table.at(0.13, -0.07, 2.2).unwrap();
//! let direct = slow_rotation(2.2, 0.13, -0.07, Anisotropy::DensitySquared).unwrap();
//! let got = at.radius_at_fixed_mass_coefficient.unwrap();
//! let want = direct.radius_at_fixed_mass_coefficient.unwrap();
//! assert!((got / want - 1.0).abs() < 4e-4);
//! ```

use std::collections::BTreeMap;
use std::sync::{Mutex, OnceLock};

use crate::theory::error::TheoryError;
use crate::theory::interpolate::lagrange_weights;
use crate::theory::slow_rotation::{slow_rotation, SlowRotation, SurfaceValues};
use crate::theory::Anisotropy;

/// Nodes per unit of ϒ and of τ on an axis spanning at least three steps (a narrower axis takes
/// a step of 1/(20k) so that it still holds four nodes): coarse enough that a slab costs fewer
/// solves than the grid has points (247 against 1426 on the demo's grid), fine enough for the
/// error in `docs/rotation.md` §3 (0.1 left 2e-3 near the existence bound).
pub const LATTICE_PER_UNIT: f64 = 20.0;

/// The lattice spacing in ϒ and τ, 1/[`LATTICE_PER_UNIT`].
pub const LATTICE_STEP: f64 = 1.0 / LATTICE_PER_UNIT;

/// The polytropic indices of the lattice: 1.05 to 3 in steps of 0.15. n = 3/2 (brown dwarfs
/// and stars) is a node, so their coefficients are interpolated in (ϒ, τ) only; 3 closes the
/// white dwarfs' range (their effective index stops at 2.95).
pub const INDEX_NODES: [f64; 14] = [
    1.05, 1.2, 1.35, 1.5, 1.65, 1.8, 1.95, 2.1, 2.25, 2.4, 2.55, 2.7, 2.85, 3.0,
];

/// The interpolated surface values: ξ₁, ω, ψ₀(ξ₁), m₀(ξ₁), d ln R/dv at fixed ρ_c.
type Values = [f64; 5];

fn values_of(s: &SlowRotation) -> Values {
    [
        s.xi1,
        s.omega,
        s.psi0_surface,
        s.m0_surface,
        s.mean_radius_coefficient,
    ]
}

/// First-order rotation coefficients over a grid's (ϒ, τ) range for one ansatz, interpolated
/// between lattice nodes (see the module docs). Thread-safe: slabs are solved once, on first
/// use, by whichever thread needs them first.
#[derive(Debug)]
pub struct SlowRotationTable {
    anisotropy: Anisotropy,
    upsilon: Vec<f64>,
    tau: Vec<f64>,
    /// Per index node: the lattice's values, τ outer, ϒ inner (`None`: no model there).
    slabs: Vec<OnceLock<Vec<Option<Values>>>>,
    /// Direct standard-gravity solves, per index (keyed by its bits).
    standard: Mutex<BTreeMap<u64, Option<SlowRotation>>>,
}

/// Lattice nodes covering [lo, hi] and 0: multiples of the step, which is [`LATTICE_STEP`] or,
/// on an axis narrower than three steps, 1/(20k) with k the smallest giving three.
fn lattice_axis(lo: f64, hi: f64) -> Vec<f64> {
    let (lo, hi) = (lo.min(0.0), hi.max(0.0));
    let span = hi - lo;
    // A single value (or NaN): zero alone.
    if span.is_nan() || span <= 0.0 {
        return vec![0.0];
    }
    let k = (3.0 / (span * LATTICE_PER_UNIT)).ceil().max(1.0);
    let per_unit = LATTICE_PER_UNIT * k;
    // Multiples j/per_unit: j/20 is the correctly rounded decimal, unlike j·0.05.
    let first = (lo * per_unit + 1e-9).floor() as i64;
    let last = (hi * per_unit - 1e-9).ceil() as i64;
    (first..=last).map(|j| j as f64 / per_unit).collect()
}

/// The cubic Lagrange stencil of x on sorted nodes: (first node, weights); the node alone when x
/// is one; `None` outside the nodes.
fn stencil(nodes: &[f64], x: f64) -> Option<(usize, Vec<f64>)> {
    if let Some(k) = nodes.iter().position(|&v| v == x) {
        return Some((k, vec![1.0]));
    }
    let (first, last) = (*nodes.first()?, *nodes.last()?);
    if !(x >= first && x <= last) {
        return None;
    }
    let k = nodes.len().min(4);
    let p = nodes.partition_point(|&v| v < x);
    let start = p.saturating_sub(2).min(nodes.len() - k);
    Some((start, lagrange_weights(&nodes[start..start + k], x)))
}

impl SlowRotationTable {
    /// A table covering ϒ ∈ `upsilon_range` and τ ∈ `tau_range` (and ϒ = τ = 0) for `anisotropy`.
    /// Nothing is solved until a lookup needs it.
    pub fn new(upsilon_range: (f64, f64), tau_range: (f64, f64), anisotropy: Anisotropy) -> Self {
        let upsilon = lattice_axis(upsilon_range.0, upsilon_range.1);
        let tau = if anisotropy == Anisotropy::None {
            vec![0.0]
        } else {
            lattice_axis(tau_range.0, tau_range.1)
        };
        Self {
            anisotropy,
            upsilon,
            tau,
            slabs: INDEX_NODES.iter().map(|_| OnceLock::new()).collect(),
            standard: Mutex::new(BTreeMap::new()),
        }
    }

    /// The lattice's ϒ nodes.
    pub fn upsilon_nodes(&self) -> &[f64] {
        &self.upsilon
    }

    /// The lattice's τ nodes.
    pub fn tau_nodes(&self) -> &[f64] {
        &self.tau
    }

    /// How many index slabs have been solved so far (each is one ODE per lattice node): what the
    /// table has cost.
    pub fn slabs_solved(&self) -> usize {
        self.slabs.iter().filter(|s| s.get().is_some()).count()
    }

    /// The coefficients at (ϒ, τ, n): the direct solve at ϒ = τ = 0, the anchored interpolation
    /// elsewhere inside the lattice, a direct solve where the interpolation cannot answer.
    pub fn at(&self, upsilon: f64, tau: f64, n: f64) -> Result<SlowRotation, TheoryError> {
        if upsilon == 0.0 && tau == 0.0 {
            return self.standard(n);
        }
        let direct = || slow_rotation(n, upsilon, tau, self.anisotropy);
        let (Some(here), Some(zero)) = (
            self.interpolate(upsilon, tau, n),
            self.interpolate(0.0, 0.0, n),
        ) else {
            return direct();
        };
        let std = self.standard(n)?;
        let anchored: Vec<f64> = values_of(&std)
            .iter()
            .zip(here.iter().zip(&zero))
            .map(|(d, (h, z))| d + (h - z))
            .collect();
        SlowRotation::assemble(
            SurfaceValues {
                n,
                upsilon,
                tau,
                anisotropy: self.anisotropy,
                xi1: anchored[0],
                omega: anchored[1],
                psi0: anchored[2],
                m0: anchored[3],
                mean_radius_coefficient: anchored[4],
            },
            // The table carries no shape (the bounds use the spherical part only).
            None,
        )
    }

    /// The direct solve at standard gravity (isotropic: every ansatz is standard at τ = 0),
    /// cached per index.
    fn standard(&self, n: f64) -> Result<SlowRotation, TheoryError> {
        let key = n.to_bits();
        let mut cache = match self.standard.lock() {
            Ok(c) => c,
            Err(poisoned) => poisoned.into_inner(),
        };
        if let Some(hit) = cache.get(&key) {
            return hit.ok_or(TheoryError::NumericalFailure {
                xi: 0.0,
                why: "no first-order rotation coefficients at standard gravity",
            });
        }
        let solved = slow_rotation(n, 0.0, 0.0, Anisotropy::None);
        cache.insert(key, solved.as_ref().ok().copied());
        solved
    }

    /// The slab of index node `k`, solved on first use (sequentially: lookups run inside the
    /// callers' parallel loops, and a nested parallel solve there could re-enter this lock).
    fn slab(&self, k: usize) -> &[Option<Values>] {
        self.slabs[k].get_or_init(|| {
            let n = INDEX_NODES[k];
            self.tau
                .iter()
                .flat_map(|&t| self.upsilon.iter().map(move |&u| (u, t)))
                .map(|(u, t)| {
                    slow_rotation(n, u, t, self.anisotropy)
                        .ok()
                        .map(|s| values_of(&s))
                })
                .collect()
        })
    }

    /// Tensor-product cubic interpolation of the surface values at (ϒ, τ, n); `None` outside the
    /// lattice or where a stencil node has no model.
    fn interpolate(&self, upsilon: f64, tau: f64, n: f64) -> Option<Values> {
        let (iu, wu) = stencil(&self.upsilon, upsilon)?;
        let (it, wt) = stencil(&self.tau, tau)?;
        let (ik, wk) = stencil(&INDEX_NODES, n)?;
        let nu = self.upsilon.len();
        let mut out = [0.0; 5];
        for (dk, w_n) in wk.iter().enumerate() {
            let slab = self.slab(ik + dk);
            for (dt, w_t) in wt.iter().enumerate() {
                for (du, w_u) in wu.iter().enumerate() {
                    let v = slab.get((it + dt) * nu + iu + du).copied().flatten()?;
                    let w = w_n * w_t * w_u;
                    for (o, x) in out.iter_mut().zip(v) {
                        *o += w * x;
                    }
                }
            }
        }
        Some(out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lattice_covers_the_range_and_zero() {
        // Multiples of 0.05 from −0.3 to 0.6, decimal values exact as written.
        let a = lattice_axis(-0.3, 0.6);
        assert_eq!(a.len(), 19);
        assert_eq!(a[0], -0.3);
        assert_eq!(a[6], 0.0);
        assert_eq!(a[18], 0.6);
        // A narrow axis gets a finer step (1/60 here: three steps) and zero.
        let b = lattice_axis(0.02, 0.05);
        assert_eq!(b.len(), 4);
        assert_eq!((b[0], b[3]), (0.0, 0.05));
        assert_eq!(
            lattice_axis(-0.05, 0.05),
            vec![-0.05, -0.025, 0.0, 0.025, 0.05]
        );
        assert_eq!(lattice_axis(0.0, 0.0), vec![0.0]);
        // 1.5 is an index node: the stencil is that node alone.
        assert_eq!(stencil(&INDEX_NODES, 1.5), Some((3, vec![1.0])));
        assert_eq!(stencil(&INDEX_NODES, 3.1), None);
    }
}
