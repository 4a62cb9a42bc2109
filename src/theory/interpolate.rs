//! Interpolation in (ϒ, τ) between solved nodes of a grid, and its measured error.
//!
//! One job: pick the nodes of an axis (every `stride`-th point and the last), the cubic
//! Lagrange stencil of a fine point, and the tensor-product interpolation of vector values
//! between nodes; then say how good it was, by comparing with exact solves at cell centres
//! ([`InterpolationCheck`]). What is interpolated (break-up correction, SC factor,
//! white-dwarf tables) is the caller's business.
//!
//! ```
//! use dwarfbound::theory::interpolate::lagrange_weights;
//!
//! // Lagrange weights reproduce a straight line exactly (a closed form).
//! let w = lagrange_weights(&[0.0, 1.0, 2.0, 3.0], 1.5);
//! let line: f64 = w.iter().zip([1.0, 3.0, 5.0, 7.0]).map(|(w, y)| w * y).sum();
//! assert!((line - 4.0).abs() < 1e-14);
//! ```

use std::collections::{BTreeMap, BTreeSet};
use std::ops::Range;

use serde::{Deserialize, Serialize};

use crate::theory::outcome::Failure;
use crate::theory::{grid_value, Axis};

/// The measured error of an interpolation in (ϒ, τ) between solved nodes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct InterpolationCheck {
    /// What was compared.
    pub quantity: String,
    /// Number of off-node points compared with an exact solve.
    pub samples: usize,
    /// Largest |interpolated/exact − 1| over the samples (and, for tables, over the test masses).
    pub max_relative_error: f64,
    /// ϒ of the worst sample (absent without samples).
    pub worst_upsilon: Option<f64>,
    /// τ of the worst sample.
    pub worst_tau: Option<f64>,
}

/// Node indices of an axis of `count` points: every `stride`-th and the last; every point when
/// that would leave fewer than four nodes for a longer axis (a cubic stencil needs four).
pub(crate) fn axis_nodes(count: usize, stride: usize) -> Vec<usize> {
    let mut v: Vec<usize> = (0..count).step_by(stride.max(1)).collect();
    if v.last() != Some(&(count - 1)) {
        v.push(count - 1);
    }
    if v.len() < 4 && v.len() < count {
        return (0..count).collect();
    }
    v
}

/// Positions (into `nodes`) of the interpolation stencil of fine index `i`: the node itself, or
/// the four nearest nodes around its interval (shifted inwards at the ends; fewer if the axis
/// has fewer nodes).
pub(crate) fn stencil(nodes: &[usize], i: usize) -> Vec<usize> {
    match nodes.binary_search(&i) {
        Ok(p) => vec![p],
        Err(p) => {
            // nodes[p-1] < i < nodes[p]
            let k = nodes.len().min(4);
            let start = p.saturating_sub(2).min(nodes.len() - k);
            (start..start + k).collect()
        }
    }
}

/// Lagrange weights for the nodes at `xs`, evaluated at x.
pub fn lagrange_weights(xs: &[f64], x: f64) -> Vec<f64> {
    (0..xs.len())
        .map(|j| {
            let mut w = 1.0;
            for (l, xl) in xs.iter().enumerate() {
                if l != j {
                    w *= (x - xl) / (xs[j] - xl);
                }
            }
            w
        })
        .collect()
}

/// Node values on a 2-D node grid, keyed by (τ-node position, ϒ-node position).
pub(crate) type NodeValues<T> = BTreeMap<(usize, usize), Result<T, Failure>>;

/// Tensor-product interpolation of vector values at fine point (iu, it) from node values
/// (`get(τ-node position, ϒ-node position)`). `None` if a stencil node is missing or failed.
pub(crate) fn interpolate_2d<'a>(
    get: impl Fn(usize, usize) -> Option<&'a [f64]>,
    upsilon: &Axis,
    tau: &Axis,
    u_nodes: &[usize],
    t_nodes: &[usize],
    iu: usize,
    it: usize,
) -> Option<Vec<f64>> {
    let su = stencil(u_nodes, iu);
    let st = stencil(t_nodes, it);
    let wu = lagrange_weights(
        &su.iter()
            .map(|&p| grid_value(upsilon, u_nodes[p]))
            .collect::<Vec<_>>(),
        grid_value(upsilon, iu),
    );
    let wt = lagrange_weights(
        &st.iter()
            .map(|&p| grid_value(tau, t_nodes[p]))
            .collect::<Vec<_>>(),
        grid_value(tau, it),
    );
    let mut out: Option<Vec<f64>> = None;
    for (a, &pt) in st.iter().enumerate() {
        for (b, &pu) in su.iter().enumerate() {
            let v = get(pt, pu)?;
            let w = wt[a] * wu[b];
            match &mut out {
                None => out = Some(v.iter().map(|x| w * x).collect()),
                Some(o) => {
                    if o.len() != v.len() {
                        return None;
                    }
                    for (oi, vi) in o.iter_mut().zip(v) {
                        *oi += w * vi;
                    }
                }
            }
        }
    }
    out.filter(|o| o.iter().all(|x| x.is_finite()))
}

/// Getter over a [`NodeValues`] map for [`interpolate_2d`].
pub(crate) fn from_map<'a>(
    values: &'a NodeValues<Vec<f64>>,
) -> impl Fn(usize, usize) -> Option<&'a [f64]> {
    move |pt, pu| values.get(&(pt, pu))?.as_ref().ok().map(|v| v.as_slice())
}

/// Node positions needed by the stencils of the fine points in `range`.
pub(crate) fn needed_nodes(
    range: &Range<usize>,
    n_u: usize,
    u_nodes: &[usize],
    t_nodes: &[usize],
) -> BTreeSet<(usize, usize)> {
    let mut rows: BTreeSet<usize> = BTreeSet::new();
    let mut cols: BTreeSet<usize> = BTreeSet::new();
    for i in range.clone() {
        rows.insert(i / n_u);
        cols.insert(i % n_u);
    }
    let mut need = BTreeSet::new();
    let t_pos: BTreeSet<usize> = rows.iter().flat_map(|&it| stencil(t_nodes, it)).collect();
    let u_pos: BTreeSet<usize> = cols.iter().flat_map(|&iu| stencil(u_nodes, iu)).collect();
    for &pt in &t_pos {
        for &pu in &u_pos {
            need.insert((pt, pu));
        }
    }
    need
}

/// Fine indices (inside `range`) near the centres of up to `per_axis`² cells of the node grid,
/// spread evenly: the points where interpolation is least accurate.
pub(crate) fn cell_centres(
    u_nodes: &[usize],
    t_nodes: &[usize],
    range: &Range<usize>,
    n_u: usize,
    per_axis: usize,
) -> Vec<usize> {
    let centres = |nodes: &[usize]| -> Vec<usize> {
        let cells: Vec<usize> = nodes
            .windows(2)
            .filter(|w| w[1] - w[0] >= 2)
            .map(|w| (w[0] + w[1]) / 2)
            .collect();
        if cells.is_empty() {
            // An axis without interior cells: sample its nodes (the other axis interpolates).
            return nodes.to_vec();
        }
        let take = per_axis.min(cells.len());
        (0..take)
            .map(|k| cells[k * (cells.len() - 1) / (take - 1).max(1)])
            .collect::<BTreeSet<_>>()
            .into_iter()
            .collect()
    };
    let (cu, ct) = (centres(u_nodes), centres(t_nodes));
    let mut out = Vec::new();
    for &it in &ct {
        for &iu in &cu {
            let i = it * n_u + iu;
            if range.contains(&i) {
                out.push(i);
            }
        }
    }
    out
}

/// The worst of the measured errors `(|interpolated/exact − 1|, fine index)` as an
/// [`InterpolationCheck`]; ties go to the lowest index, so the result does not depend on the
/// order of a parallel collection.
pub(crate) fn summarise(
    quantity: &str,
    results: &[(f64, usize)],
    upsilon: &Axis,
    tau: &Axis,
    n_u: usize,
) -> InterpolationCheck {
    let worst = results
        .iter()
        .copied()
        .fold(None::<(f64, usize)>, |acc, (e, i)| match acc {
            Some((a, j)) if a > e || (a == e && j < i) => Some((a, j)),
            _ => Some((e, i)),
        });
    InterpolationCheck {
        quantity: quantity.to_string(),
        samples: results.len(),
        max_relative_error: worst.map_or(0.0, |w| w.0),
        worst_upsilon: worst.map(|(_, i)| grid_value(upsilon, i % n_u)),
        worst_tau: worst.map(|(_, i)| grid_value(tau, i / n_u)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stencils_and_weights() {
        let nodes = axis_nodes(21, 8); // 0, 8, 16, 20
        assert_eq!(nodes, vec![0, 8, 16, 20]);
        assert_eq!(stencil(&nodes, 8), vec![1]);
        assert_eq!(stencil(&nodes, 3), vec![0, 1, 2, 3]);
        // Lagrange weights reproduce a cubic exactly (a closed form).
        let xs = [0.0, 1.0, 2.5, 4.0];
        let w = lagrange_weights(&xs, 1.7);
        let f = |x: f64| 2.0 - x + 0.5 * x * x - 0.1 * x * x * x;
        let s: f64 = xs.iter().zip(&w).map(|(x, w)| w * f(*x)).sum();
        assert!((s - f(1.7)).abs() < 1e-13);
    }
}
