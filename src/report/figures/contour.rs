//! Closed outlines of the region {f ≤ t} of a gridded function (marching squares).
//!
//! Its one job is geometry for the allowed-region map: given values on a rectilinear grid
//! (`None` = no model, always outside) and a threshold, return closed loops around the region,
//! oriented counter-clockwise around the inside (outer boundaries) and clockwise around holes.
//! The grid is padded with a zero-width ring of outside nodes, so every loop closes and a
//! region touching the grid edge follows the edge exactly. Crossings are placed by linear
//! interpolation, or at the midpoint of an edge to a point without a model. Saddle cells are
//! resolved by the mean of the four corners. Hand-written: the method is ~150 lines and the
//! plotting crates offer none.
//!
//! ```ignore
//! let loops = region_loops(&[0.0, 1.0], &[0.0, 1.0], &[Some(0.0); 4], 1.0);
//! assert_eq!(loops.len(), 1); // the whole square
//! ```

use std::collections::BTreeMap;

/// One closed boundary of the region.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Loop {
    /// Vertices (x, y), not repeating the first at the end.
    pub points: Vec<(f64, f64)>,
    /// Per vertex: true when it lies on the outer edge of the grid (then the piece between two
    /// such vertices follows the grid edge, not a level crossing).
    pub on_grid_edge: Vec<bool>,
    /// Signed area (positive = counter-clockwise = outer boundary; negative = hole).
    pub signed_area: f64,
}

impl Loop {
    /// True for the boundary of a hole in the region.
    pub fn is_hole(&self) -> bool {
        self.signed_area < 0.0
    }
}

/// Key of a grid edge on the padded grid: (vertical?, i, j) where the edge starts at node (i, j)
/// and runs to (i+1, j) (horizontal) or (i, j+1) (vertical).
type EdgeKey = (bool, usize, usize);

struct Padded<'a> {
    xs: Vec<f64>,
    ys: Vec<f64>,
    nx: usize,
    ny: usize,
    raw: &'a [Option<f64>],
    raw_nx: usize,
}

impl Padded<'_> {
    fn value(&self, i: usize, j: usize) -> Option<f64> {
        if i == 0 || j == 0 || i == self.nx - 1 || j == self.ny - 1 {
            None
        } else {
            self.raw[(j - 1) * self.raw_nx + (i - 1)]
        }
    }
    fn inside(&self, i: usize, j: usize, t: f64) -> bool {
        matches!(self.value(i, j), Some(v) if v <= t)
    }
    fn is_border(&self, i: usize, j: usize) -> bool {
        i == 0 || j == 0 || i == self.nx - 1 || j == self.ny - 1
    }
    /// The crossing point on an edge and whether it lies on the grid edge.
    fn crossing(&self, key: EdgeKey, t: f64) -> ((f64, f64), bool) {
        let (vertical, i, j) = key;
        let (i2, j2) = if vertical { (i, j + 1) } else { (i + 1, j) };
        let (a, b) = (self.value(i, j), self.value(i2, j2));
        let frac = match (a, b) {
            (Some(fa), Some(fb)) if fb != fa => ((t - fa) / (fb - fa)).clamp(0.0, 1.0),
            _ => 0.5,
        };
        let (x0, y0) = (self.xs[i], self.ys[j]);
        let (x1, y1) = (self.xs[i2], self.ys[j2]);
        let p = (x0 + frac * (x1 - x0), y0 + frac * (y1 - y0));
        (p, self.is_border(i, j) || self.is_border(i2, j2))
    }
}

/// Closed loops around {f ≤ threshold}; `values` is row-major `[y][x]` with `xs.len()` columns.
/// Loops come in a deterministic order (by their first cell in scan order).
pub(crate) fn region_loops(
    xs: &[f64],
    ys: &[f64],
    values: &[Option<f64>],
    threshold: f64,
) -> Vec<Loop> {
    if xs.is_empty() || ys.is_empty() || values.len() != xs.len() * ys.len() {
        return Vec::new();
    }
    let pad = |v: &[f64]| {
        let mut out = Vec::with_capacity(v.len() + 2);
        out.push(v[0]);
        out.extend_from_slice(v);
        out.push(v[v.len() - 1]);
        out
    };
    let g = Padded {
        xs: pad(xs),
        ys: pad(ys),
        nx: xs.len() + 2,
        ny: ys.len() + 2,
        raw: values,
        raw_nx: xs.len(),
    };
    let t = threshold;

    // Segments oriented with the inside on their left, keyed by their start edge.
    let mut next: BTreeMap<EdgeKey, EdgeKey> = BTreeMap::new();
    let mut order: Vec<EdgeKey> = Vec::new();
    for j in 0..g.ny - 1 {
        for i in 0..g.nx - 1 {
            // Corners counter-clockwise: bl, br, tr, tl; edges between them in the same order.
            let corners = [(i, j), (i + 1, j), (i + 1, j + 1), (i, j + 1)];
            let inside = corners.map(|(a, b)| g.inside(a, b, t));
            let edges: [EdgeKey; 4] = [
                (false, i, j),
                (true, i + 1, j),
                (false, i, j + 1),
                (true, i, j),
            ];
            // Crossings in counter-clockwise order: (edge, goes from inside to outside?).
            let mut cross: Vec<(EdgeKey, bool)> = Vec::with_capacity(4);
            for k in 0..4 {
                let (a, b) = (inside[k], inside[(k + 1) % 4]);
                if a != b {
                    cross.push((edges[k], a));
                }
            }
            let mut link = |from: EdgeKey, to: EdgeKey| {
                next.insert(from, to);
                order.push(from);
            };
            match cross.len() {
                2 => {
                    let (from, to) = if cross[0].1 {
                        (cross[0].0, cross[1].0)
                    } else {
                        (cross[1].0, cross[0].0)
                    };
                    link(from, to);
                }
                4 => {
                    let centre = corners
                        .iter()
                        .map(|&(a, b)| g.value(a, b))
                        .try_fold(0.0, |acc, v| v.map(|x| acc + x / 4.0));
                    let connected = matches!(centre, Some(c) if c <= t);
                    for k in 0..4 {
                        if cross[k].1 {
                            // In→out edge: pair with the next out→in edge counter-clockwise when
                            // the inside corners connect through the centre, else the previous.
                            let partner = if connected { (k + 1) % 4 } else { (k + 3) % 4 };
                            link(cross[k].0, cross[partner].0);
                        }
                    }
                }
                _ => {}
            }
        }
    }

    let mut used: BTreeMap<EdgeKey, bool> = BTreeMap::new();
    let mut loops = Vec::new();
    for start in order {
        if used.contains_key(&start) {
            continue;
        }
        let mut points = Vec::new();
        let mut border = Vec::new();
        let mut key = start;
        loop {
            used.insert(key, true);
            let (p, b) = g.crossing(key, t);
            if points.last() != Some(&p) {
                points.push(p);
                border.push(b);
            } else if let Some(last) = border.last_mut() {
                *last = *last && b;
            }
            match next.get(&key) {
                Some(&k) if k == start => break,
                Some(&k) if !used.contains_key(&k) => key = k,
                // A broken chain cannot happen on a padded grid; stop rather than loop forever.
                _ => break,
            }
        }
        while points.len() > 1 && points.first() == points.last() {
            points.pop();
            border.pop();
        }
        if points.len() < 3 {
            continue;
        }
        let signed_area = shoelace(&points);
        if signed_area == 0.0 {
            continue;
        }
        loops.push(Loop {
            points,
            on_grid_edge: border,
            signed_area,
        });
    }
    loops
}

fn shoelace(p: &[(f64, f64)]) -> f64 {
    let n = p.len();
    let mut s = 0.0;
    for k in 0..n {
        let (x0, y0) = p[k];
        let (x1, y1) = p[(k + 1) % n];
        s += x0 * y1 - x1 * y0;
    }
    s / 2.0
}

#[cfg(test)]
mod tests {
    use super::*;

    fn grid(n: usize) -> Vec<f64> {
        (0..n)
            .map(|k| k as f64 / (n - 1) as f64 * 2.0 - 1.0)
            .collect()
    }

    #[test]
    fn whole_grid_inside_gives_the_grid_rectangle() {
        let xs = grid(5);
        let ys = grid(4);
        let v = vec![Some(0.0); 20];
        let loops = region_loops(&xs, &ys, &v, 1.0);
        assert_eq!(loops.len(), 1);
        // Area of [-1, 1]² (source: the definition).
        assert!((loops[0].signed_area - 4.0).abs() < 1e-12);
        assert!(loops[0].on_grid_edge.iter().all(|&b| b));
    }

    #[test]
    fn circle_area_converges() {
        // f = x² + y², region f ≤ 0.25 is the disc of radius 0.5, area π/4 (closed form).
        let xs = grid(201);
        let ys = grid(201);
        let v: Vec<Option<f64>> = ys
            .iter()
            .flat_map(|&y| xs.iter().map(move |&x| Some(x * x + y * y)))
            .collect();
        let loops = region_loops(&xs, &ys, &v, 0.25);
        assert_eq!(loops.len(), 1);
        let a = loops[0].signed_area;
        assert!((a - std::f64::consts::PI / 4.0).abs() < 1e-3, "area {a}");
        assert!(!loops[0].is_hole());
    }

    #[test]
    fn annulus_has_an_outer_loop_and_a_hole() {
        // Region 0.09 ≤ r² … inverted: f = |r² − 0.36|, f ≤ 0.2 is the annulus 0.16 ≤ r² ≤ 0.56.
        let xs = grid(161);
        let ys = grid(161);
        let v: Vec<Option<f64>> = ys
            .iter()
            .flat_map(|&y| xs.iter().map(move |&x| Some((x * x + y * y - 0.36).abs())))
            .collect();
        let loops = region_loops(&xs, &ys, &v, 0.2);
        assert_eq!(loops.len(), 2);
        let outer: Vec<_> = loops.iter().filter(|l| !l.is_hole()).collect();
        let holes: Vec<_> = loops.iter().filter(|l| l.is_hole()).collect();
        assert_eq!((outer.len(), holes.len()), (1, 1));
        let pi = std::f64::consts::PI;
        assert!((outer[0].signed_area - pi * 0.56).abs() < 5e-3);
        assert!((holes[0].signed_area + pi * 0.16).abs() < 5e-3);
    }

    #[test]
    fn missing_point_cuts_a_hole_at_half_spacing() {
        let xs = grid(5);
        let ys = grid(5);
        let mut v = vec![Some(0.0); 25];
        v[12] = None; // centre
        let loops = region_loops(&xs, &ys, &v, 1.0);
        assert_eq!(loops.len(), 2);
        let hole = loops.iter().find(|l| l.is_hole()).unwrap();
        // Diamond through the four edge midpoints around the centre: half-diagonals 0.25, area
        // 2 × 0.25² = 0.125 (geometry).
        assert!((hole.signed_area + 0.125).abs() < 1e-12);
    }

    #[test]
    fn empty_region_gives_no_loops() {
        let xs = grid(3);
        let v = vec![Some(5.0); 9];
        assert!(region_loops(&xs, &xs, &v, 1.0).is_empty());
    }
}
